"""Bend-angle calibration with the simulator as model: round trips, coverage, identifiability, bad input.

The reference for the confidence intervals is their definition: a 95 % interval built by the
linearised least-squares theory (D. M. Bates and D. G. Watts, *Nonlinear Regression Analysis
and Its Applications*, Wiley, 1988, ch. 2) contains the true parameter in about 95 % of repeated
experiments when the model is close to linear over the interval. The coverage study below
repeats the synthetic experiment with 20 noise seeds and counts.
"""

from __future__ import annotations

import numpy as np
import pytest

from actsim.calibrate.bend import (
    BendCurve,
    default_parameters,
    fit_bend,
    load_fit_plan,
    make_parameter,
)
from actsim.calibrate.settings import calibration_settings, parse_calibration, write_fitted_scenario
from actsim.errors import ActsimInputError
from actsim.scenario import apply_overrides, load_scenario, parse_scenario
from actsim.solver import simulate

from conftest import film_toml

PROTOCOL = """
[[protocol]]
duration = "20 s"
light = { lamp = "20 mW/cm^2" }
[[protocol]]
duration = "20 s"
"""
TRUE = {"materials.film.photo_strain": -0.01, "materials.film.forward_quantum_yield": 0.3,
        "materials.film.thermal_back_rate": 0.05}
IRRADIANCES = ("10 mW/cm^2", "40 mW/cm^2", "100 mW/cm^2")
NOISE = 0.01  # rad


def small_text(**kw):
    """A fast scenario: 8 + 3 cells, 0.25 s steps, 20 s light then 20 s dark (true parameters)."""
    args = dict(cells=8, output="1 s", step="0.25 s", k_th="0.05 1/s", phi_f=0.3, photo_strain=-0.01,
                protocol=PROTOCOL, substrate={"modulus": "2 GPa", "thickness": "30 um", "cells": 3},
                eps_a="2000 L/(mol*cm)")
    args.update(kw)
    return film_toml(**args)


@pytest.fixture(scope="module")
def truth_scenario():
    return parse_scenario(small_text())


@pytest.fixture(scope="module")
def clean_curves(truth_scenario):
    out = []
    for irr in IRRADIANCES:
        ov = {"protocol[0].light.lamp": irr}
        ds = simulate(apply_overrides(truth_scenario, ov))
        out.append((ov, ds["time"].values[::2], ds["bend_angle"].values[::2]))
    return out


def noisy(clean, seed):
    rng = np.random.default_rng(seed)
    return [BendCurve(data=(t, a + rng.normal(0.0, NOISE, a.size)), overrides=ov, label=ov["protocol[0].light.lamp"])
            for ov, t, a in clean]


@pytest.fixture(scope="module")
def start_scenario(truth_scenario):
    # starting values 10-30 % away from the truth
    return apply_overrides(truth_scenario, {"materials.film.photo_strain": -0.009,
                                            "materials.film.forward_quantum_yield": 0.36,
                                            "materials.film.thermal_back_rate": "0.06 1/s"})


def test_default_parameters_name_the_active_material(truth_scenario):
    params = default_parameters(truth_scenario)
    assert [p.path for p in params] == list(TRUE)
    assert params[0].upper == 0.0 and params[0].lower == -0.5  # keeps the sign of the contraction
    assert params[2].unit == "1/s"


def test_round_trip_recovers_parameters_within_ci(start_scenario, clean_curves):
    fit = fit_bend(start_scenario, noisy(clean_curves, 1234))
    r = fit.result
    assert r.success
    for p in fit.parameters:
        lo, hi = r.ci(p.label)
        assert lo <= TRUE[p.path] <= hi, (p.label, lo, TRUE[p.path], hi)
    # residual std estimates the noise put in (s^2 is unbiased for the noise variance, Bates & Watts 1988)
    assert r.residual_std == pytest.approx(NOISE, rel=0.25)
    assert fit.n_simulations < 300  # modest number of simulations


def test_coverage_study_over_seeds(start_scenario, clean_curves):
    # 20 seeds x 3 parameters = 60 intervals at 95 %. Measured when written: 55 / 60 = 0.917 (seeds 0-19);
    # binomial(60, 0.95) gives 57 +- 1.7, so >= 51 (0.85) is the check (common practice, no source).
    hits = n = 0
    for seed in range(20):
        fit = fit_bend(start_scenario, noisy(clean_curves, seed))
        for p in fit.parameters:
            lo, hi = fit.result.ci(p.label)
            hits += int(lo <= TRUE[p.path] <= hi)
            n += 1
    coverage = hits / n
    print(f"observed coverage of the 95 % intervals: {hits}/{n} = {coverage:.3f}")
    assert 0.85 <= coverage <= 1.0


def test_non_identifiable_parameter_is_warned(clean_curves):
    # the product does not absorb (product_absorptivity 0), so the backward quantum yield has no effect
    sc = parse_scenario(small_text(phi_b=0.1))
    params = default_parameters(sc)[:1] + [make_parameter("materials.film.backward_quantum_yield", unit="1",
                                                          lower=0.0, upper=1.0, initial=0.1)]
    fit = fit_bend(sc, noisy(clean_curves, 3)[:1], parameters=params)
    assert any("not identifiable" in w and "backward_quantum_yield" in w for w in fit.result.warnings)
    assert np.isinf(fit.result.stderr("backward_quantum_yield"))
    assert "warning:" in fit.to_table()


def test_fitted_scenario_round_trip(tmp_path, start_scenario, clean_curves):
    fit = fit_bend(start_scenario, noisy(clean_curves, 7))
    path = write_fitted_scenario(fit, tmp_path / "fitted.toml")
    sc = load_scenario(path)
    cal = calibration_settings(sc)
    np.testing.assert_allclose(cal.values, fit.result.values, rtol=1e-12)
    np.testing.assert_allclose(cal.covariance, fit.result.covariance, rtol=1e-9)
    assert [p.path for p in cal.parameters] == list(TRUE)
    assert sc.layers[-1].material.photo_strain == pytest.approx(fit.result.value("photo_strain"), rel=1e-12)
    # the fitted scenario reproduces the fitted curve at the base conditions
    ds = simulate(sc)
    ds_fit = simulate(fit.fitted_scenario())
    np.testing.assert_allclose(ds["bend_angle"].values, ds_fit["bend_angle"].values, rtol=1e-12)
    assert len(cal.data) == 3 and cal.data[0].overrides == {"protocol[0].light.lamp": "10 mW/cm^2"}


def test_curve_from_csv_and_plot(tmp_path, truth_scenario, clean_curves):
    # noise-free curve, thermal back rate at its true value: the fit must land on the truth
    start = apply_overrides(truth_scenario, {"materials.film.photo_strain": -0.009,
                                             "materials.film.forward_quantum_yield": 0.36})
    ov, t, a = clean_curves[1]
    f = tmp_path / "b40.csv"
    rows = "\n".join(f"{ti:g}, {np.degrees(ai):.8f}" for ti, ai in zip(t, a))
    f.write_text("# synthetic test curve\ntime [s], bend angle [deg]\n" + rows + "\n")
    fit = fit_bend(start, [BendCurve(data=f, overrides=ov)], parameters=default_parameters(start)[:2])
    assert fit.curves[0].synthetic and fit.curves[0].sha256
    assert fit.result.value("photo_strain") == pytest.approx(-0.01, rel=1e-4)
    assert fit.result.value("forward_quantum_yield") == pytest.approx(0.3, rel=1e-4)
    png = fit.plot(tmp_path / "figures" / "fit.png")
    assert png.read_bytes()[:4] == b"\x89PNG"
    assert fit.to_dict()["curves"][0]["n_points"] == t.size


# -- bad input --------------------------------------------------------------------------------

def test_unreadable_file(truth_scenario, tmp_path):
    with pytest.raises(ActsimInputError, match="does not exist"):
        fit_bend(truth_scenario, [BendCurve(data=tmp_path / "missing.csv")])
    bad = tmp_path / "binary.csv"
    bad.write_bytes(b"\xff\xfe\x00\x01garbage")
    with pytest.raises(ActsimInputError, match="UTF-8"):
        fit_bend(truth_scenario, [BendCurve(data=bad)])


def test_missing_unit(truth_scenario, tmp_path):
    f = tmp_path / "nounit.csv"
    f.write_text("time, bend angle\n0, 0\n1, 2\n2, 3\n")
    with pytest.raises(ActsimInputError, match="has no unit") as exc:
        fit_bend(truth_scenario, [BendCurve(data=f)])
    assert "\n" not in str(exc.value)


def test_no_convergence_is_reported(start_scenario, clean_curves):
    with pytest.raises(ActsimInputError, match="did not converge within 1 iterations"):
        fit_bend(start_scenario, noisy(clean_curves, 0), max_iterations=1)
    fit = fit_bend(start_scenario, noisy(clean_curves, 0), max_iterations=1, allow_unconverged=True)
    assert not fit.result.success and any("did not converge" in w for w in fit.result.warnings)


def test_data_beyond_protocol_and_bad_parameters(truth_scenario):
    with pytest.raises(ActsimInputError, match="protocol of this curve lasts 40 s"):
        fit_bend(truth_scenario, [BendCurve(data=([0.0, 50.0, 60.0], [0.0, 0.1, 0.2]))])
    with pytest.raises(ActsimInputError, match="outside its bounds"):
        make_parameter("materials.film.photo_strain", lower=-0.1, upper=0.0, initial=0.05)
    with pytest.raises(ActsimInputError, match="not a unit"):
        make_parameter("materials.film.thermal_back_rate", unit="furlongs/fortnightx", lower=0, upper=1)
    with pytest.raises(ActsimInputError, match="parameters: materials.film.photo_strian: unknown field; did you mean 'photo_strain'"):
        fit_bend(truth_scenario, [BendCurve(data=([0.0, 1.0, 2.0], [0.0, 0.1, 0.2]))],
                 parameters=[make_parameter("materials.film.photo_strian", lower=-0.1, upper=0.0, initial=-0.01)])
    with pytest.raises(ActsimInputError, match="overrides"):
        fit_bend(truth_scenario, [BendCurve(data=([0.0, 1.0, 2.0], [0.0, 0.1, 0.2]),
                                            overrides={"protocol[0].light.lamp": "20 furlongs"})])


def test_bad_calibration_section():
    good = {"parameters": ["materials.film.photo_strain"], "units": ["1"], "values": [-0.01],
            "covariance": [[1e-8]]}
    cal = parse_calibration(good, scenario_info={"materials": ["film"]})
    assert cal.standard_errors[0] == pytest.approx(1e-4)
    with pytest.raises(ActsimInputError, match="positive semi-definite"):
        parse_calibration({**good, "parameters": ["a.b", "a.c"], "units": ["1", "1"], "values": [0.0, 0.0],
                           "covariance": [[1.0, 2.0], [2.0, 1.0]]})
    with pytest.raises(ActsimInputError, match="not symmetric"):
        parse_calibration({**good, "parameters": ["a.b", "a.c"], "units": ["1", "1"], "values": [0.0, 0.0],
                           "covariance": [[1.0, 0.5], [0.2, 1.0]]})
    with pytest.raises(ActsimInputError, match="1 x 1"):
        parse_calibration({**good, "covariance": [1e-8]})
    with pytest.raises(ActsimInputError, match="SI unit '1/s'"):
        parse_calibration({**good, "units": ["1/min"]})
    with pytest.raises(ActsimInputError, match="does not have"):
        parse_calibration(good, scenario_info={"materials": ["backing"]})
    with pytest.raises(ActsimInputError, match="unknown field"):
        parse_calibration({**good, "covarience": 1})


def test_bundled_fit_plan_parses():
    from actsim.cli import scenarios_folder

    plan = load_fit_plan(scenarios_folder() / "calibration" / "bend_fit_plan.toml")
    assert len(plan.curves) == 3 and len(plan.parameters) == 3
    assert plan.curves[2].overrides == {"protocol[0].light.uv_lamp": "40 mW/cm^2"}


def test_cli_fit_bend_with_curve_option(tmp_path, truth_scenario, clean_curves, capsys):
    from actsim.cli import main

    base = tmp_path / "base.toml"
    base.write_text(small_text(phi_f=0.36, photo_strain=-0.009, k_th="0.06 1/s"))
    args = ["fit", "bend", "--scenario", str(base), "-o", str(tmp_path / "out")]
    for ov, t, a in clean_curves:
        irr = ov["protocol[0].light.lamp"]
        f = tmp_path / f"b{irr.split()[0]}.csv"
        rng = np.random.default_rng(5)
        rows = "\n".join(f"{ti:g}, {ai + rng.normal(0, NOISE):.8f}" for ti, ai in zip(t, a))
        f.write_text("# synthetic\ntime [s], bend angle [rad]\n" + rows + "\n")
        args += ["--curve", f"{f}:protocol[0].light.lamp={irr}"]
    assert main(args) == 0
    out = capsys.readouterr().out
    assert "forward_quantum_yield" in out and "fitted scenario" in out
    for name in ("fit.json", "fitted.toml", "figures/bend_fit.png"):
        assert (tmp_path / "out" / name).is_file()
    assert main(["fit", "bend", "--scenario", str(base), "--curve", "nofile.csv:x=1"]) == 2
    assert "no existing data file" in capsys.readouterr().err


def test_cli_fit_tensile_and_bad_kind_options(tmp_path, capsys):
    from actsim.cli import main, scenarios_folder

    f = scenarios_folder() / "calibration" / "tensile_flap_film.csv"
    assert main(["fit", "tensile", str(f), "-o", str(tmp_path / "t")]) == 0
    assert "chord modulus" in capsys.readouterr().out
    assert (tmp_path / "t" / "fit.json").is_file() and (tmp_path / "t" / "figures" / "tensile_fit.png").is_file()
    assert main(["fit", "spectra", str(f), str(f), "-o", str(tmp_path / "s")]) == 2
    assert "--concentration" in capsys.readouterr().err


def test_docstrings_document_every_parameter():
    # Project style rule (common practice, no source), as in test_fitstats: numpydoc parameters match the
    # signature; computational functions carry a math block and references (file and lookup helpers exempt).
    import importlib
    import inspect
    import re

    exempt = {"active_material", "scenario_value", "load_fit_plan", "calibration_table", "calibration_settings",
              "fitted_scenario_text", "write_fitted_scenario"}
    for m in ("bend", "settings", "uncertainty"):
        mod = importlib.import_module(f"actsim.calibrate.{m}")
        for name in mod.__all__:
            obj = getattr(mod, name)
            if not inspect.isfunction(obj):
                continue
            doc = obj.__doc__ or ""
            for p in inspect.signature(obj).parameters:
                assert re.search(rf"(^|[\s,*]){re.escape(p)}\b[^\n]*:", doc, re.M) or f"*{p}" in doc, (m, name, p)
            if name not in exempt:
                assert ".. math::" in doc and "References" in doc, (m, name)


def test_sigma_on_some_curves_only_is_refused_and_equal_sigma_matches_unweighted(start_scenario, clean_curves):
    # A bare residual is in rad (sigma = 1 rad in effect) while a residual divided by sigma = 0.5 deg is
    # dimensionless: mixing them weights curves by (1 rad / 0.5 deg)^2 ~ 1.3e4 for no reason. Refused, naming
    # the curves without sigma.
    curves = noisy(clean_curves, 7)
    curves[1].sigma = np.radians(0.5)
    with pytest.raises(ActsimInputError, match=r"curves sigma: missing on curve 1, curve 3 but given"):
        fit_bend(start_scenario, curves)
    # Weighted least squares with s estimated is invariant to one common factor on all weights: the same
    # sigma on every curve gives the unweighted estimates and standard errors (N. R. Draper and H. Smith,
    # Applied Regression Analysis, 3rd ed., Wiley, 1998, sec. 9.2: only relative weights matter when
    # s^2 is estimated from the residuals).
    plain = fit_bend(start_scenario, noisy(clean_curves, 7))
    weighted = noisy(clean_curves, 7)
    for c in weighted:
        c.sigma = np.radians(0.5)
    same = fit_bend(start_scenario, weighted)
    np.testing.assert_allclose(same.result.values, plain.result.values, rtol=1e-4)
    np.testing.assert_allclose(same.result.standard_errors, plain.result.standard_errors, rtol=1e-3)
