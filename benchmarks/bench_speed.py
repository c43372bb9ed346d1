"""Speed of actsim against plain scipy at equal accuracy, and its fixed costs (run: python3 benchmarks/bench_speed.py).

Prints, side by side in one run (timings interleaved, medians):

(a) The bleaching problem -- one active layer, only the reactant absorbs, optical depth 2, surface rate x 5 s = 2 --
    at a pointwise accuracy of 1e-5 and 1e-6: the largest |conversion - closed form| at the cell centres over 11
    output times. For each solver the cheapest (cells, tolerance) pair that reaches the accuracy is searched:
    ``actsim.solve`` and ``actsim.simulate`` (error-controlled steps, ``[time] tolerance``) against scipy's
    ``solve_ivp`` RK45, LSODA and BDF on the same method-of-lines right-hand side (the same exact per-cell
    Beer-Lambert light) at the loosest rtol that reaches it. Timings are interleaved rounds (REPEATS); every
    timed call follows an untimed call of the same solver and setting (warm caches for all solvers alike) and
    runs with the garbage collector off, as timeit does.
(b) ``actsim sweep`` of 20,000 thicknesses of scenarios/thickness_study.toml, end to end (benchmarks/bench_sweep_cli.py).
(c) ``actsim demo``, warm (numba cache present) and cold (cache cleared into a scratch copy).
(d) Nanoseconds per cell-step of the kernel with fixed steps (100 cells, 1000 steps).

Speed claims live here, never in timed tests.
"""

from __future__ import annotations

import functools
import gc
import math
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))

from conftest import film_toml  # noqa: E402

import actsim  # noqa: E402
from actsim.optics import LN10  # noqa: E402
from actsim.scenario import parse_scenario  # noqa: E402
from actsim.solver import build_problem, run_kernel  # noqa: E402
from actsim.spectra import photon_flux  # noqa: E402

# bleaching problem: optical depth alpha0 h = 2, surface rate k0 = 0.4 1/s over 5 s (k0 T = 2)
H, T_END, PHI, EPS10_LMOLCM = 20e-6, 5.0, 0.3, 1.0e4
EPS10 = EPS10_LMOLCM * 0.1  # m^2/mol
CONC = 2.0 / (LN10 * EPS10 * H)  # mol/m^3: optical depth 2
Q0 = float(photon_flux(irradiance=1.0, wavelength=365e-9))  # mol m-2 s-1 per W m-2
IRRADIANCE = 0.4 / (PHI * LN10 * EPS10 * Q0)  # W/m^2: k0 = 0.4 1/s
K0 = PHI * LN10 * EPS10 * Q0 * IRRADIANCE
ALPHA0 = LN10 * EPS10 * CONC
TIMES = np.linspace(0.0, T_END, 11)


def exact_conversion(cells):
    """Closed form at the cell centres, all 11 times: x = 1 - e^zeta / (e^tau + e^zeta - 1) (Wegscheider)."""
    zc = ALPHA0 * (H - (np.arange(cells) + 0.5) * H / cells)
    tau = K0 * TIMES[:, None]
    return 1.0 - np.exp(zc) / (np.exp(tau) + np.exp(zc) - 1.0)


@functools.lru_cache(maxsize=None)
def scenario(cells, tol):
    """The scenario, parsed once (reading the file is not part of the solve, as scipy's set-up is not)."""
    text = film_toml(cells=cells, tolerance=tol, duration=f"{T_END} s", output=f"{T_END / 10} s", phi_f=PHI,
                     conc=f"{CONC} mol/m^3", eps_a=f"{EPS10_LMOLCM} L/(mol*cm)", irradiance=f"{IRRADIANCE} W/m^2",
                     thickness=f"{H} m")
    return parse_scenario(text)


def mol_rhs(cells):
    dz = H / cells
    rate = PHI * LN10 * EPS10 * Q0 * IRRADIANCE

    def rhs(t, u):  # u = 1 - x, top cell first; the same exact per-cell light as actsim.optics
        tau = ALPHA0 * u * dz
        q_in = np.exp(-np.concatenate([[0.0], np.cumsum(tau)[:-1]]))
        with np.errstate(invalid="ignore", divide="ignore"):
            qbar = np.where(tau > 1e-12, q_in * -np.expm1(-tau) / tau, q_in)
        return -rate * qbar * u

    return rhs


def scipy_solve(cells, rtol, method):
    sol = solve_ivp(mol_rhs(cells), (0.0, T_END), np.ones(cells), method=method, rtol=rtol, atol=rtol * 1e-3,
                    t_eval=TIMES)
    return 1.0 - sol.y.T[:, ::-1]  # bottom cell first, like actsim


def actsim_error(cells, tol):
    s = actsim.solve(scenario(cells, tol))
    return float(np.max(np.abs(s.conversion - exact_conversion(cells))))


def scipy_error(cells, rtol, method):
    return float(np.max(np.abs(scipy_solve(cells, rtol, method) - exact_conversion(cells))))


CELLS = (25, 50, 100, 200, 400, 800, 1600)
#: Interleaved rounds of timing in (a); each solver's time is the median of its rounds.
REPEATS = 11
TOLS = tuple(10.0 ** (-k / 2) for k in range(4, 19))  # 1e-2 .. 1e-9 in half decades


def cheapest(error_of, target):
    """(cells, tolerance) pairs reaching the target: for each cell count the loosest tolerance that does."""
    out = []
    for cells in CELLS:
        for tol in TOLS:
            try:
                err = error_of(cells, tol)
            except Exception:  # noqa: BLE001 - a solver that fails at a setting just does not qualify there
                continue
            if err <= target:
                out.append((cells, tol, err))
                break
    return out


def median_time(fn, repeat):
    ts = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        ts.append(time.perf_counter() - t0)
    return float(np.median(ts))


def part_a():
    print("(a) bleaching problem (optical depth 2, k0 T = 2), pointwise error at the cell centres over 11 times")
    for target in (1e-5, 1e-6):
        entries = {}
        cands = {
            "actsim.solve": (lambda c, t: actsim_error(c, t), lambda c, t: (lambda: actsim.solve(scenario(c, t)))),
            "simulate()": (lambda c, t: actsim_error(c, t), lambda c, t: (lambda: actsim.simulate(scenario(c, t)))),
        }
        for method in ("RK45", "LSODA", "BDF"):
            cands[f"scipy {method}"] = ((lambda m: lambda c, t: scipy_error(c, t, m))(method),
                                        (lambda m: lambda c, t: (lambda: scipy_solve(c, t, m)))(method))
        settings = {name: cheapest(err_fn, target) for name, (err_fn, _) in cands.items()}
        # time every qualifying setting, interleaved (one round over all solvers, repeated), and keep the cheapest
        # each timed call follows an untimed call of the same solver and setting (warm caches for every solver
        # alike: otherwise the call after scipy's BDF, whose LU work evicts the caches, pays ~0.3 ms more), and,
        # as timeit does, the garbage collector is off while a call is timed
        timings = {name: [[] for _ in s] for name, s in settings.items()}
        for _ in range(REPEATS):
            for name, (_, make) in cands.items():
                for k, (cells, tol, _) in enumerate(settings[name]):
                    fn = make(cells, tol)
                    fn()
                    gc.disable()
                    try:
                        t0 = time.perf_counter()
                        fn()
                        timings[name][k].append(time.perf_counter() - t0)
                    finally:
                        gc.enable()
        for name, s in settings.items():
            if not s:
                entries[name] = None
                continue
            meds = [float(np.median(ts)) for ts in timings[name]]
            k = int(np.argmin(meds))
            entries[name] = (meds[k], *s[k])
        fastest_scipy = min((v[0] for n, v in entries.items() if n.startswith("scipy") and v), default=math.nan)
        print(f"  target {target:.0e}:")
        for name, v in entries.items():
            if v is None:
                print(f"    {name:<14} does not reach it within {CELLS[-1]} cells")
                continue
            t, cells, tol, err = v
            ratio = fastest_scipy / t
            print(f"    {name:<14} {t * 1e3:9.2f} ms  {cells:5d} cells, tolerance {tol:.1e}, error {err:.2e}"
                  f"   fastest scipy / this = {ratio:5.2f} x")


def part_b():
    bench = ROOT / "benchmarks" / "bench_sweep_cli.py"
    print("(b) actsim sweep of 20,000 designs, end to end")
    if not bench.exists():
        print("    benchmarks/bench_sweep_cli.py not found")
        return
    r = subprocess.run([sys.executable, str(bench)], capture_output=True, text=True, cwd=ROOT)
    print("    " + (r.stdout.strip() or r.stderr.strip()).replace("\n", "\n    "))


def part_c():
    print("(c) actsim demo, wall clock (median of 3)")
    with tempfile.TemporaryDirectory() as tmp:
        def run_demo(env=None):
            t0 = time.perf_counter()
            subprocess.run([sys.executable, "-m", "actsim.cli", "demo", "-o", str(Path(tmp) / "demo")], check=True,
                           capture_output=True, env=env)
            return time.perf_counter() - t0

        run_demo()  # fill the cache
        warm = float(np.median([run_demo() for _ in range(3)]))
        cold = []
        for _ in range(2):
            cache = Path(tmp) / "numba-cache"
            shutil.rmtree(cache, ignore_errors=True)
            cold.append(run_demo(dict(os.environ, NUMBA_CACHE_DIR=str(cache))))
        print(f"    warm {warm:6.2f} s (target <= 2 s, floor 3 s)    cold {float(np.median(cold)):6.2f} s "
              "(numba compiles the solver once)")


def part_d():
    print("(d) kernel cost with fixed steps (bleaching, 100 cells, 1000 steps)")
    text = film_toml(cells=100, step="0.008 s", duration="8 s", output="8 s")
    p = build_problem(parse_scenario(text))
    run_kernel(p)
    n = p.grid.dz.size * int(p.schedule.seg_n.sum())
    t = median_time(lambda: run_kernel(p), 21)
    print(f"    {t / n * 1e9:6.1f} ns per cell-step (target <= 25, floor 40)")


def main(argv):
    parts = {"a": part_a, "b": part_b, "c": part_c, "d": part_d}
    for key in (argv or list(parts)):
        parts[key]()


if __name__ == "__main__":
    main(sys.argv[1:])
