"""Benchmark of the batch kernel (run: python benchmarks/bench_sweep.py).

Prints, in one run on this machine:
- designs per second for a 64-cell, 500-step bleaching design (output every 10 steps) through
  actsim.study.batch.run_batch (numba parallel over designs, metrics included; Problems built beforehand);
- the ratio against calling actsim.simulate() per design in a loop, and against a plain scipy
  solve_ivp (RK45) method-of-lines solve of the same equations per design;
- the cost exponent: the slope of log(time per design) against log(cells x steps) over a few sizes.

Speed claims live here, never in timed tests.
"""

from __future__ import annotations

import math
import sys
import time
from pathlib import Path

import numpy as np
from scipy.integrate import solve_ivp

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "tests"))

from conftest import film_toml  # noqa: E402

import actsim  # noqa: E402
from actsim.optics import LN10  # noqa: E402
from actsim.scenario import apply_overrides, parse_scenario  # noqa: E402
from actsim.solver import build_problem  # noqa: E402
from actsim.spectra import photon_flux  # noqa: E402
from actsim.study.batch import run_batch  # noqa: E402

T_END = 8.0
EPS10, CONC, H, PHI = 1.2e3, 500.0, 20e-6, 0.3


def scenario(cells, steps, irradiance=50.0):
    return parse_scenario(film_toml(cells=cells, step=f"{T_END / steps!r} s", duration=f"{T_END} s",
                                    output=f"{T_END * 10 / steps!r} s", irradiance=f"{irradiance!r} mW/cm^2",
                                    eps_a="1.2e3 L/(mol*cm)"))


def designs(cells, steps, n):
    base = scenario(cells, steps)
    irr = np.linspace(20.0, 80.0, n)
    return [build_problem(apply_overrides(base, {"protocol[0].light.lamp": f"{float(v)!r} mW/cm^2"})) for v in irr], base


def batch_time(problems, base, repeat=3):
    run_batch(problems[:4], free_length=base.strip.free_length, width=base.strip.width)  # warm-up
    best = math.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        run_batch(problems, free_length=base.strip.free_length, width=base.strip.width, target_bend_angle=0.1)
        best = min(best, time.perf_counter() - t0)
    return best


def mol_reference(cells, irradiance_w_m2, rtol=1e-6):
    """Method of lines with scipy: du/dt = -k0 (qbar/q0) u per cell (u = 1 - x), same exact per-cell optics."""
    alpha0 = LN10 * EPS10 * CONC
    q0 = float(photon_flux(irradiance=irradiance_w_m2, wavelength=365e-9))
    dz = H / cells

    def rhs(t, u):
        tau = alpha0 * u[::-1] * dz
        q_in = q0 * np.exp(-np.concatenate([[0.0], np.cumsum(tau)[:-1]]))
        with np.errstate(invalid="ignore", divide="ignore"):
            qbar = np.where(tau > 1e-12, q_in * -np.expm1(-tau) / tau, q_in)
        return -(PHI * LN10 * EPS10) * qbar[::-1] * u

    return solve_ivp(rhs, (0, T_END), np.ones(cells), method="RK45", rtol=rtol, atol=rtol * 1e-2,
                     t_eval=np.linspace(0, T_END, 51)).y


def main():
    import numba

    cells, steps, n = 64, 500, 2000
    problems, base = designs(cells, steps, n)
    t_b = batch_time(problems, base)
    rate = n / t_b
    print(f"design: {cells} cells, {steps} steps, output every 10 steps, one 365 nm line; {numba.get_num_threads()} numba threads")
    print(f"  batch kernel + metrics  {rate:9.0f} designs/s  ({t_b / n * 1e6:.0f} us per design; target >= 1000)")
    scs = [apply_overrides(base, {"protocol[0].light.lamp": f"{float(v)!r} mW/cm^2"}) for v in np.linspace(20, 80, 40)]
    actsim.simulate(scs[0])
    t0 = time.perf_counter()
    for s in scs:
        actsim.simulate(s)
    t_sim = (time.perf_counter() - t0) / len(scs)
    print(f"  simulate() in a loop    {1 / t_sim:9.0f} designs/s  -> batch is {t_sim * rate:6.1f} x faster")
    t0 = time.perf_counter()
    for v in np.linspace(200.0, 800.0, 10):
        mol_reference(cells, v)
    t_mol = (time.perf_counter() - t0) / 10
    print(f"  scipy RK45 method of lines (rtol 1e-6) {1 / t_mol:9.0f} designs/s  -> batch is {t_mol * rate:6.1f} x faster")
    sizes = [(16, 125), (32, 250), (64, 500), (128, 1000)]
    work, cost = [], []
    for c, s in sizes:
        nn = max(32, int(200 * 64 * 500 / (c * s)))
        pr, b = designs(c, s, nn)
        t = batch_time(pr, b, repeat=2) / nn
        work.append(c * s)
        cost.append(t)
        print(f"    {c:4d} cells x {s:5d} steps: {t * 1e6:9.1f} us per design")
    slope = np.polyfit(np.log(work), np.log(cost), 1)[0]
    print(f"  cost exponent d log(time) / d log(cells x steps) = {slope:.2f}")


if __name__ == "__main__":
    main()
