"""Cost of the strip dynamics for an invented demo-like strip (run: python benchmarks/bench_strip_dynamics.py).

Strip: L = 10 mm, width 2 mm, thickness 50 um, E = 2 GPa, density 1200 kg/m^3 (invented). Prints, at N = 20
and 40 segments: the first three natural frequencies; the wall time, steps and step sizes of scipy's Radau
(analytic Jacobian, rtol 1e-6) for 1 s of free vibration (undamped, first mode, tip angle 0.01 rad; and a
released tip-loaded pluck with polymer-like damping eta_s = 7.6e-5 s and air drag c_quad = 2.4e-3 kg/m^2)
and for 10 s of a slow natural-curvature ramp (0 -> 200 1/m, smoothstep, same damping); and the energy drift
of the undamped strip over 50 periods against rtol. Speed claims live here, never in timed tests.
"""

from __future__ import annotations

import math
import time

import numpy as np

import actsim.strip_dynamics as sd

L = 10e-3
EI, RHO_A = sd.strip_section(width=2e-3, thickness=50e-6, modulus=2e9, density=1200.0)
DAMPING = {"kv_time": 7.6e-5, "drag_quadratic": 2.4e-3}  # loss tangent ~0.05 at w1; 0.5 rho_air C_d b, C_d = 2


def ramp(t):
    u = min(t / 10.0, 1.0)
    return 200.0 * u * u * (3 - 2 * u)


def run(label, p, k0, t_end, y0, **kw):
    t0 = time.perf_counter()
    sol = sd.integrate_strip(p, k0, (0.0, t_end), y0, **kw)
    wall = time.perf_counter() - t0
    dt = np.diff(sol.t)
    print(f"  {label:34s} {wall:6.2f} s  steps {sol.t.size - 1:6d}  fev {sol.nfev:7d}  jac {sol.njev:4d}  "
          f"lu {sol.nlu:5d}  step min/median/max {dt.min():.2e} / {np.median(dt):.2e} / {dt.max():.2e} s")
    return sol


def main():
    w_exact = np.array([1.87510407, 4.69409113, 7.85475744]) ** 2 * math.sqrt(EI / (RHO_A * L**4))
    print(f"EI = {EI:.4g} N m^2, rho_A = {RHO_A:.4g} kg/m; Blevins f1..f3 = {np.round(w_exact / 2 / math.pi, 2)} Hz")
    for n in (20, 40):
        p0 = sd.strip_params(length=L, n_segments=n, bending_stiffness=EI, mass_per_length=RHO_A)
        pd = sd.strip_params(length=L, n_segments=n, bending_stiffness=EI, mass_per_length=RHO_A, **DAMPING)
        w, v = sd.natural_frequencies(p0, 3)
        print(f"N = {n}: f1..f3 = {np.round(w / 2 / math.pi, 2)} Hz (error {np.round(1e2 * (w / w_exact - 1), 3)} %)")
        th = v[:, 0] / sd.tip_angle(v[:, 0]) * 0.01
        run("1 s free vibration, undamped", p0, 0.0, 1.0, np.concatenate([th, 0 * th]), rtol=1e-6, atol=1e-9)
        pl = sd.strip_params(length=L, n_segments=n, bending_stiffness=EI, mass_per_length=RHO_A,
                             tip_force=(0.0, 0.1 * EI / L**2))
        th = sd.static_shape(pl, 0.0)
        run("1 s pluck, damped", pd, 0.0, 1.0, np.concatenate([th, 0 * th]), rtol=1e-6, atol=1e-9)
        sol = run("10 s slow ramp, damped", pd, ramp, 10.0, np.zeros(2 * n), rtol=1e-6, atol=1e-9)
        print(f"  ramp end: largest angle error against the static shape "
              f"{np.max(np.abs(sol.y[:n, -1] - sd.static_shape(pd, ramp(10.0)))):.2e} rad")
    n = 3
    p = sd.strip_params(length=L, n_segments=n, bending_stiffness=EI, mass_per_length=RHO_A)
    w, v = sd.natural_frequencies(p, 1)
    th = v[:, 0] / sd.tip_angle(v[:, 0]) * 0.8
    e0 = sd.elastic_energy(p, th, 0.0)
    t = np.linspace(0.0, 50 * 2 * math.pi / w[0], 401)
    print("energy drift, N = 3, tip angle 0.8 rad, 50 periods:")
    for method in ("DOP853", "Radau"):
        for rtol in (1e-5, 1e-6, 1e-7, 1e-8):
            t0 = time.perf_counter()
            sol = sd.integrate_strip(p, 0.0, (0.0, t[-1]), np.concatenate([th, 0 * th]), rtol=rtol, atol=rtol * 1e-3,
                                     method=method, t_eval=t)
            e = [sd.kinetic_energy(p, y[:n], y[n:]) + sd.elastic_energy(p, y[:n], 0.0) for y in sol.y.T]
            print(f"  {method:6s} rtol {rtol:.0e}: max |E/E0 - 1| = {np.max(np.abs(np.array(e) / e0 - 1)):.2e} "
                  f"({time.perf_counter() - t0:.2f} s, {sol.nfev} fev)")


if __name__ == "__main__":
    main()
