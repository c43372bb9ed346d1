"""Error-controlled time stepping: the global error follows ``[time] tolerance``.

The controller (Hairer, Nørsett and Wanner, Solving Ordinary Differential Equations I, 2nd ed., Springer
1993, sec. II.4) keeps the estimated local error of a step -- predicted against corrected conversion and
network strain, TR-BDF2's embedded estimate for the temperature (Hosea and Shampine, Appl. Numer. Math.
20 (1996) 21-37) -- below the tolerance and keeps the corrected (second-order) state. The estimate is of
the first-order predictor's error, so the second-order result is more accurate than the tolerance and its
global error scales like the tolerance itself (steps ~ tol^-1/2, global error ~ steps x dt^3 ~ tol).
"""

from __future__ import annotations

import dataclasses
import math
import re
from pathlib import Path

import numpy as np
import pytest

import actsim
from actsim import thermal as th
from actsim.errors import ActsimInputError
from actsim.scenario import parse_scenario
from actsim.solver import build_problem, fixed_step_equivalent, grid_error_estimate, run_kernel

from test_heat_coupled import heated
from test_photokinetics import bleach_cell_average
from actsim.optics import LN10
from actsim.spectra import photon_flux

SCENARIOS = Path(__file__).resolve().parents[1] / "scenarios"


def _bleaching_errors(make_scenario, **kw):
    # Bleaching front, closed form (Wegscheider; Corbett, van Oosten and Warner, Phys. Rev. A 78 (2008) 013823):
    # on 400 cells the grid error is ~1e-8, so the error against the closed form is the time error.
    eps10, conc, h, cells = 1.2e4 * 0.1, 500.0, 20e-6, 400
    alpha0 = LN10 * eps10 * conc
    k0 = 0.3 * LN10 * eps10 * float(photon_flux(irradiance=500.0, wavelength=365e-9))
    zeta = alpha0 * (h - np.linspace(0, h, cells + 1))
    errs, steps = [], []
    for tol in (1e-3, 1e-4, 1e-5):
        sc = make_scenario(cells=cells, tolerance=tol, duration="8 s", output="2 s", phi_f=0.3, **kw)
        ds = actsim.simulate(sc)
        err = max(float(np.max(np.abs((1 - ds.conversion.values[i]) - bleach_cell_average(zeta[1:], zeta[:-1], k0 * t))))
                  for i, t in enumerate(ds.time.values))
        errs.append(err)
        steps.append(ds.attrs["time_steps_accepted"])
        print(f"tol {tol:.0e}: max conversion error {err:.2e} ({err / tol:.2g} x tol), {steps[-1]} steps")
    return errs, steps


def test_global_error_follows_tolerance_two_stage_step(make_scenario):
    # A (negligible, 1e-9 1/s) thermal back rate selects the general two-stage step: its global error is
    # proportional to the tolerance, steps grow like tol^-1/2 (second-order step, first-order error estimate).
    errs, steps = _bleaching_errors(make_scenario, k_th="1e-9 1/s")
    for tol, err in zip((1e-3, 1e-4, 1e-5), errs):
        assert err < tol  # measured 0.38 x tol
    assert 7 < errs[0] / errs[1] < 14 and 7 < errs[1] / errs[2] < 14  # measured 10.1, 10.0
    assert 2.5 < steps[1] / steps[0] < 4.0 and 2.5 < steps[2] / steps[1] < 4.0  # sqrt(10) = 3.16


def test_one_way_reaction_four_stage_step_is_fourth_order(make_scenario):
    # Without back reaction the four-stage step is classical RK4 in ln(1 - x) (the exact update with RK4-averaged
    # rates), so fourth order: errors fall like steps^-4. Its estimate (against the embedded trapezoid-rate step)
    # is O(dt^3), so steps grow like tol^-1/3 and the error like tol^(4/3).
    errs, steps = _bleaching_errors(make_scenario)
    for tol, err in zip((1e-3, 1e-4, 1e-5), errs):
        assert err < 0.05 * tol  # measured 4.3e-6, 2.4e-7, 1.2e-8
    orders = [math.log(errs[i] / errs[i + 1]) / math.log(steps[i + 1] / steps[i]) for i in range(2)]
    print("observed orders", orders)  # measured 3.98, 4.20
    assert all(3.5 < p < 4.6 for p in orders)
    assert all(1.8 < steps[i + 1] / steps[i] < 2.5 for i in range(2))  # 10^(1/3) = 2.15


def test_global_error_follows_tolerance_with_heat():
    # Coupled optics + kinetics + heat (Arrhenius back reaction, light switched off at 4 s): the reference is the
    # same scheme with 40,000 fixed steps (its own error ~1e-9 by the second-order convergence measured in
    # tests/test_heat_coupled.py), so the difference is the error of the error-controlled run.
    protocol = '[[protocol]]\nduration = "4 s"\nlight = ["lamp"]\n[[protocol]]\nduration = "2 s"\n'
    kw = dict(conc="0.3 mol/L", absorber="10 1/cm", thickness="20 um", cells=12, k="0.2 W/(m*K)",
              protocol=protocol, output="0.5 s", irradiance="300 mW/cm^2", h_top="5 W/(m^2*K)", h_bot="5 W/(m^2*K)")
    ref = actsim.simulate(heated(step="0.00015 s", **kw))
    errs = []
    for tol in (1e-3, 1e-4, 1e-5):
        text = heated(step="1 s", **kw).text.replace('step = "1 s"', f"tolerance = {tol}")
        ds = actsim.simulate(parse_scenario(text))
        ex = float(np.abs(ds.conversion.values - ref.conversion.values).max())
        eT = float(np.abs(ds.temperature.values - ref.temperature.values).max())
        errs.append((ex, eT))
        print(f"tol {tol:.0e}: conversion error {ex:.2e}, temperature error {eT:.2e} K, "
              f"{ds.attrs['time_steps_accepted']} + {ds.attrs['time_steps_rejected']} rejected steps")
    # The tolerance bounds the local error per step. The conversion's global error stays below it (measured 0.35,
    # 0.27, 0.19 x tol). The temperature here rises by 259 K and its slow mode (rho c h / (h_top + h_bot) = 2 s)
    # keeps every step's error, all of one sign, so its global error is the sum: measured 8.0e-3, 1.7e-3, 3.5e-4 K,
    # i.e. 8 to 35 x tol in kelvin, falling like tol^(2/3) (TR-BDF2's estimate is of its third-order local error).
    for tol, (ex, eT) in zip((1e-3, 1e-4, 1e-5), errs):
        assert ex < tol and eT < 50 * tol
    assert errs[0][0] / errs[2][0] > 50  # two decades of tolerance: measured 190x
    assert errs[0][1] / errs[2][1] > 15  # measured 23x = 100^(0.68)


def test_trbdf2_error_estimate_matches_local_error():
    # Hosea and Shampine (1996): k dt^3 T''' is TR-BDF2's local error; the embedded estimate must reproduce it to
    # leading order. Reference: the same step cut into 2000 substeps (local error 2000 x (dt/2000)^3, negligible).
    n = 20
    dz, k, rc = np.full(n, 1e-4), np.full(n, 0.2), np.full(n, 1.5e6)
    cap = rc * dz
    g_int = np.empty(n - 1)
    th.interior_conductances(dz, k, g_int)
    gb, gt = th.face_conductance(10.0, dz[0], k[0]), th.face_conductance(50.0, dz[-1], k[-1])
    T0 = 300 + np.cos(np.arange(n) / n * 3)
    q = 1e7 * np.exp(-np.arange(n) / 5.0)

    def step(T, dt):
        fac, work, out, est, rhs = np.empty((3, n)), np.empty((6, n)), np.empty(n), np.empty(n), np.empty(n)
        th.factor_conduction(cap, g_int, gb, gt, 0.5 * th.TRBDF2_GAMMA * dt, fac)
        th.conduction_trbdf2_factored(T, cap, dz, g_int, gb, gt, q, q, dt, 290.0, 295.0, fac, work, out)
        th.trbdf2_error(T, work[5].copy(), out, cap, dz, g_int, gb, gt, q, work[4].copy(), q, dt, 290.0, 295.0,
                        fac, rhs, est)
        return out, est

    ratios = []
    for dt in (1e-3, 5e-4, 2.5e-4):
        T1, est = step(T0, dt)
        T = T0.copy()
        for _ in range(2000):
            T, _ = step(T, dt / 2000)
        ratios.append(np.abs(est).max() / np.abs(T1 - T).max())
    print("estimate / actual local error", ratios)  # measured 0.99, 0.90, 1.11
    assert all(0.7 < r < 1.4 for r in ratios)


def test_kernel_matches_reference_error_controlled():
    # the readable loop (actsim.reference) runs the same controller with numpy/scipy steps; same accepted steps,
    # states equal to round-off (heat, network and held steps included)
    for name in ("vent_flap", "shape_memory_two_colour", "photothermal_hinge"):
        sc = actsim.load_scenario(SCENARIOS / f"{name}.toml")
        assert sc.time_tolerance > 0
        fast, slow = actsim.simulate(sc), actsim.simulate(sc, engine="reference")
        assert fast.attrs["time_steps_accepted"] == slow.attrs["time_steps_accepted"]
        assert fast.attrs["time_steps_rejected"] == slow.attrs["time_steps_rejected"]
        for v in ("conversion", "curvature", "modulus"):
            np.testing.assert_allclose(fast[v].values, slow[v].values, rtol=1e-10, atol=1e-12 * np.abs(slow[v].values).max(),
                                       err_msg=f"{name} {v}")


def test_kernel_matches_reference_four_stage(make_scenario):
    # one-way reaction with a substrate, two sources from both faces and a conversion cap: the readable loop
    # averages per-molecule rates and caps the update, the kernel averages the equivalent capped rates
    extra = """
    [[sources]]
    name = "blue"
    wavelength = "405 nm"
    irradiance = "30 mW/cm^2"
    face = "bottom"
    """
    protocol = '[[protocol]]\nduration = "3 s"\nlight = ["lamp", "blue"]\n[[protocol]]\nduration = "2 s"\nlight = ["blue"]\n'
    sc = make_scenario(tolerance=1e-5, cells=15, extra_sources=extra, protocol=protocol, output="0.5 s",
                       substrate={"modulus": "3 GPa", "thickness": "30 um", "background": "40 1/cm", "cells": 5})
    capped = dataclasses.replace(sc.layers[-1].material, reactive_fraction=0.6)
    sc = sc.replace(layers=sc.layers[:-1] + (dataclasses.replace(sc.layers[-1], material=capped),))
    fast, slow = actsim.simulate(sc), actsim.simulate(sc, engine="reference")
    assert fast.attrs["time_steps_accepted"] == slow.attrs["time_steps_accepted"]
    np.testing.assert_allclose(fast.conversion.values, slow.conversion.values, rtol=1e-12, atol=1e-14)
    assert float(fast.conversion.max()) <= 0.6 + 1e-12 and float(fast.conversion.max()) > 0.3


def test_steps_land_on_boundaries_and_outputs(make_scenario):
    # A protocol boundary at 3.3 s between output times: the light goes off exactly there. After it the
    # conversion only relaxes thermally, x(t) = x(3.3) exp(-k_th (t - 3.3)) (first-order decay, exact), so a step
    # across the boundary would show at once.
    protocol = '[[protocol]]\nduration = "3.3 s"\nlight = ["lamp"]\n[[protocol]]\nduration = "4.7 s"\n'
    sc = make_scenario(tolerance=1e-6, protocol=protocol, output="1 s", k_th="0.3 1/s", cells=10, thickness="2 um",
                       conc="0.05 mol/L")
    ds = actsim.simulate(sc)
    t = ds.time.values
    assert 3.3 in t and np.allclose(np.diff(t[t < 3.3]), 1.0) and t[-1] == 8.0
    i = int(np.nonzero(t == 3.3)[0][0])
    x33 = ds.conversion.values[i]
    for j in range(i + 1, t.size):
        np.testing.assert_allclose(ds.conversion.values[j], x33 * np.exp(-0.3 * (t[j] - 3.3)), rtol=1e-9)


def test_bundled_scenarios_stay_within_their_tolerance():
    # Each bundled scenario against itself with tolerance 1e-8 (same grid): the time error of the default run.
    results = []
    for path in sorted(SCENARIOS.glob("*.toml")):
        text = path.read_text()
        sc = parse_scenario(text, path=path)
        tol = sc.time_tolerance
        ref = actsim.simulate(parse_scenario(re.sub(r"^tolerance = \S+", "tolerance = 1e-8", text, flags=re.M),
                                             path=path))
        ds = actsim.simulate(sc)
        ex = float(np.abs(ds.conversion.values - ref.conversion.values).max())
        eb = float(np.abs(ds.bend_angle.values - ref.bend_angle.values).max() / np.abs(ref.bend_angle.values).max())
        eT = float(np.abs(ds.temperature.values - ref.temperature.values).max()) if "temperature" in ds else 0.0
        print(f"{path.stem}: tol {tol:g}: conversion {ex:.1e}, bend angle {eb:.1e} (relative), temperature {eT:.1e} K")
        results.append((ex / tol, eb / tol, eT / tol))
    assert all(ex < 1 and eb < 1 and eT < 20 for ex, eb, eT in results), results  # temperature: a sum of local errors


@pytest.mark.slow
def test_bundled_scenarios_within_a_tenth_of_a_percent():
    # Default tolerance and grid against a converged run (common practice: the grid error is estimated by
    # Richardson's extrapolation from 2x and 4x the cells at tolerance 1e-7, second order measured (ratio 5.0 of
    # the differences 1x-4x and 2x-4x); the time error by the tolerance 1e-7 run).
    worst = []
    for path in sorted(SCENARIOS.glob("*.toml")):
        text = path.read_text()
        base = parse_scenario(text, path=path)
        theta = actsim.simulate(base).bend_angle.values
        fine = [actsim.simulate(parse_scenario(re.sub(r"^cells = (\d+)", lambda m: f"cells = {int(m.group(1)) * k}",
                                                      re.sub(r"^tolerance = \S+", "tolerance = 1e-7", text, flags=re.M),
                                                      flags=re.M), path=path)).bend_angle.values for k in (2, 4)]
        converged = fine[1] + (fine[1] - fine[0]) / 3.0
        err = float(np.max(np.abs(theta - converged)) / np.max(np.abs(converged)))
        worst.append((err, path.stem))
        print(f"{path.stem}: bend angle {100 * err:.3f} % off converged")
    assert max(worst)[0] < 1e-3, max(worst)


def test_grid_error_estimate_matches_the_grid_error():
    # Richardson (1911): with half the cells, (theta_N - theta_N/2)/3 estimates theta_N's grid error for a
    # second-order scheme; the true error here from 4x the cells (see the test above).
    text = (SCENARIOS / "thickness_study.toml").read_text().replace("cells = 48", "cells = 24")
    sc = parse_scenario(text)
    est = grid_error_estimate(sc)
    theta = actsim.simulate(sc).bend_angle.values
    th2, th4 = (actsim.simulate(parse_scenario(text.replace("cells = 24", f"cells = {24 * k}"))).bend_angle.values
                for k in (2, 4))
    true = float(np.max(np.abs(theta - (th4 + (th4 - th2) / 3))) / np.max(np.abs(th4)))
    print(f"grid error: estimated {est:.3e}, measured {true:.3e}")  # measured 1.575e-3 and 1.57e-3
    assert est == pytest.approx(true, rel=0.15)


def test_fixed_step_equivalent_is_smooth_and_as_accurate():
    sc = actsim.load_scenario(SCENARIOS / "vent_flap.toml")
    fixed = fixed_step_equivalent(sc)
    assert fixed.time_tolerance == 0 and math.isfinite(fixed.time_step)
    a, b = actsim.simulate(sc).bend_angle.values, actsim.simulate(fixed).bend_angle.values
    assert np.max(np.abs(a - b)) / np.max(np.abs(a)) < 1e-3
    assert fixed_step_equivalent(fixed) is fixed


def test_fewer_steps_than_fixed_at_equal_accuracy():
    # Vent flap (light, then dark relaxation): the error-controlled run needs fewer steps than the fixed step that
    # reaches the same bend-angle error (the bundled 0.05 s step).
    sc = actsim.load_scenario(SCENARIOS / "vent_flap.toml")
    p = build_problem(sc)
    o = run_kernel(p)
    fixed = sc.replace(time_step=0.05, time_tolerance=0.0)
    n_fixed = int(run_kernel(build_problem(fixed)).steps[-1, 0])
    assert o.steps[-1, 0] < n_fixed / 3  # measured 756 against 3600


@pytest.mark.parametrize("time_table, field", [
    ('step = "0.1 s"\ntolerance = 1e-4', "time"),
    ("tolerance = 0.5", "time.tolerance"),
    ("tolerance = 0", "time.tolerance"),
])
def test_bad_time_settings_one_line(make_scenario, time_table, field):
    text = make_scenario(tolerance=1e-4).text
    text = re.sub(r"^tolerance = \S+", time_table, text, flags=re.M)
    with pytest.raises(ActsimInputError) as e:
        parse_scenario(text)
    msg = str(e.value)
    assert "\n" not in msg and msg.startswith(field)


def test_crank_nicolson_needs_fixed_steps():
    text = heated(step="0.01 s", scheme="crank-nicolson").text.replace('step = "0.01 s"', "tolerance = 1e-4")
    with pytest.raises(ActsimInputError, match="heat.scheme"):
        parse_scenario(text)
