"""Cost of the dichroic, polarised light pass against the plain Beer–Lambert pass (run: python
benchmarks/bench_polarised.py).

Prints nanoseconds per cell and beam of ``optics.light_pass`` and of ``polarised.polarised_light_pass`` on the
same 200-cell, 4-beam twisted film (median of 15 rounds of 200 calls each, after a warm-up call), their ratio,
and the kernel time of the bundled twisted-nematic demo against the same stack with the order model removed
(plain pass). Speed claims live here, never in timed tests.
"""

from __future__ import annotations

import re
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from actsim import optics  # noqa: E402
from actsim.polarised import polar_params, polarised_light_pass  # noqa: E402
from actsim.scenario import parse_scenario  # noqa: E402
from actsim.solver import build_problem, run_kernel  # noqa: E402

N_CELL, N_BEAM, CALLS, ROUNDS = 200, 4, 200, 15


def median_ns(call, per):
    call()
    rounds = []
    for _ in range(ROUNDS):
        t0 = time.perf_counter()
        for _ in range(CALLS):
            call()
        rounds.append((time.perf_counter() - t0) / CALLS / per * 1e9)
    return float(np.median(rounds))


def film():
    rng = np.random.default_rng(1)
    n, nb = N_CELL, N_BEAM
    light = optics.LightParams(
        c0=np.full(n, 100.0), eps_a=rng.uniform(100, 2000, (n, nb)), eps_b=rng.uniform(10, 200, (n, nb)),
        alpha_bg=np.full((n, nb), 50.0), from_top=np.ones(nb, np.bool_), entry=np.full(nb, 0.95),
        beam_emol=np.ones(nb), beam_source=np.zeros(nb, np.int64), beam_wavelength=np.linspace(355e-9, 375e-9, nb),
        beam_fraction=np.full(nb, 1.0 / nb))
    pol = polar_params(n_cell=n, n_beam=nb, director_angle=np.linspace(-np.pi / 4, np.pi / 4, n), birefringence=0.15,
                       order_reference=0.7, refractive_index=1.6, order_factor_a=1.0,
                       polarised=np.ones(nb, np.bool_), polarisation_angle=0.3)
    return light, pol


def demo_kernels():
    text = (ROOT / "scenarios" / "lc_twisted_ribbon.toml").read_text(encoding="utf-8")
    plain = re.sub(r"\[materials\.twisted_network\.liquid_crystal\][^\[]*", "", text)
    plain = plain.replace('director = { kind = "twisted", angle = "-45 deg", angle_top = "45 deg" }\n', "")
    out = {}
    for name, t in (("liquid-crystal", text), ("order model removed", plain)):
        p = build_problem(parse_scenario(t))
        run_kernel(p)
        times = []
        for _ in range(7):
            t0 = time.perf_counter()
            run_kernel(p)
            times.append(time.perf_counter() - t0)
        out[name] = float(np.median(times)) * 1e3
    return out


def main():
    light, pol = film()
    n, nb = N_CELL, N_BEAM
    x = np.linspace(0.0, 0.5, n)
    q_order = np.full(n, 0.65)
    q = np.full(nb, 1e-3)
    mf, ab, fa, fb = (np.empty((n, nb)) for _ in range(4))
    plain = median_ns(lambda: optics.light_pass(x, np.ones(n) * 1e-7, light, q, mf, ab), n * nb)
    dichroic = median_ns(lambda: polarised_light_pass(x, q_order, np.ones(n) * 1e-7, light, pol, q, mf, ab, fa, fb),
                         n * nb)
    print(f"plain Beer-Lambert pass   {plain:7.1f} ns per cell and beam")
    print(f"dichroic polarised pass   {dichroic:7.1f} ns per cell and beam   ({dichroic / plain:.1f}x)")
    for name, ms in demo_kernels().items():
        print(f"twisted-ribbon demo kernel, {name:<20s} {ms:7.2f} ms")


if __name__ == "__main__":
    main()
