"""Monte Carlo prediction bands from a scenario's [calibration] covariance.

References for the checks: JCGM 101:2008 (Propagation of distributions using a Monte Carlo
method) for the procedure; the scaling of a band with the covariance is linear propagation of
uncertainty (JCGM 100:2008, GUM, section 5.1: the standard uncertainty of a linear function
scales with the square root of the input variance).
"""

from __future__ import annotations

import numpy as np
import pytest
import xarray as xr

from actsim.calibrate.settings import calibration_settings, parse_calibration
from actsim.calibrate.uncertainty import draw_parameters, prediction_bands, run_uncertainty
from actsim.errors import ActsimInputError
from actsim.scenario import parse_scenario

from conftest import film_toml

PROTOCOL = """
[[protocol]]
duration = "10 s"
light = { lamp = "40 mW/cm^2" }
[[protocol]]
duration = "10 s"
"""


def calibrated_text(cov_scale=1.0, data_file=None):
    """A small scenario with a [calibration] section (photo strain and back rate, 2 % and 5 % std)."""
    base = film_toml(cells=6, output="1 s", step="0.25 s", k_th="0.05 1/s", phi_f=0.3, photo_strain=-0.01,
                     protocol=PROTOCOL, substrate={"modulus": "2 GPa", "thickness": "30 um", "cells": 3},
                     eps_a="2000 L/(mol*cm)")
    s1, s2, rho = 2e-4 * np.sqrt(cov_scale), 2.5e-3 * np.sqrt(cov_scale), 0.3
    cov = [[float(s1 * s1), float(rho * s1 * s2)], [float(rho * s1 * s2), float(s2 * s2)]]
    data = ""
    if data_file:
        data = f"""
    [[calibration.data]]
    file = "{data_file}"
    label = "40 mW/cm^2"
    overrides = {{ "protocol[0].light.lamp" = "40 mW/cm^2" }}
    synthetic = true
    """
    return base + f"""
[calibration]
parameters = ["materials.film.photo_strain", "materials.film.thermal_back_rate"]
units = ["1", "1/s"]
values = [-0.01, 0.05]
lower = [-0.5, 0.0]
upper = [0.0, 1.0]
covariance = [[{cov[0][0]!r}, {cov[0][1]!r}], [{cov[1][0]!r}, {cov[1][1]!r}]]
confidence = 0.95
residual_std = "0.01 rad"
""" + data


def test_without_calibration_one_line_error(make_scenario, tmp_path):
    sc = make_scenario()
    with pytest.raises(ActsimInputError, match=r"no \[calibration\] section") as exc:
        run_uncertainty(sc, n_draws=5, out_dir=tmp_path)
    assert "\n" not in str(exc.value) and "actsim fit bend" in str(exc.value)
    assert not (tmp_path / "uncertainty.nc").exists()


def test_draws_follow_the_covariance_and_respect_bounds():
    # moments of the multivariate normal (definition); tolerances ~4 standard errors of the sample
    cal = parse_calibration({"parameters": ["a.x", "a.y"], "units": ["1", "1"], "values": [1.0, 2.0],
                             "covariance": [[0.04, 0.012], [0.012, 0.09]]})
    d, rej, clip = draw_parameters(cal, n_draws=20000, seed=1)
    assert rej == 0 and clip == 0
    se = np.sqrt(np.array([0.04, 0.09]) / 20000.0)
    assert np.all(np.abs(d.mean(axis=0) - [1.0, 2.0]) < 4 * se)
    np.testing.assert_allclose(np.cov(d.T), [[0.04, 0.012], [0.012, 0.09]], atol=0.004)
    # a bound at the mean rejects about half of the draws (symmetric normal); all kept draws within bounds
    cal2 = parse_calibration({"parameters": ["a.x"], "units": ["1"], "values": [1.0], "lower": [1.0],
                              "upper": [5.0], "covariance": [[0.01]]})
    d2, rej2, clip2 = draw_parameters(cal2, n_draws=2000, seed=2)
    assert np.all(d2 >= 1.0) and d2.shape == (2000, 1)
    assert 0.4 < rej2 / (2000 + rej2) < 0.6 and clip2 == 0
    # same seed, same draws
    np.testing.assert_array_equal(draw_parameters(cal, n_draws=10, seed=3)[0], draw_parameters(cal, n_draws=10, seed=3)[0])
    with pytest.raises(ActsimInputError, match="n_draws"):
        draw_parameters(cal, n_draws=1)


def test_bands_contain_nominal_and_widen_with_covariance():
    sc1 = parse_scenario(calibrated_text(1.0))
    sc4 = parse_scenario(calibrated_text(4.0))
    r1 = prediction_bands(sc1, n_draws=40, seed=0).dataset
    r4 = prediction_bands(sc4, n_draws=40, seed=0).dataset
    lit = r1["time"].values > 0
    for ds in (r1, r4):
        lo, mid, hi, nom = (ds[f"bend_angle_{k}"].values for k in ("p05", "p50", "p95", "nominal"))
        assert np.all(lo <= mid + 1e-15) and np.all(mid <= hi + 1e-15)
        assert np.all(lo[lit] < nom[lit]) and np.all(nom[lit] < hi[lit])
        assert ds["bend_angle_p05"].attrs["units"] == "rad" and ds["blocked_force_p95"].attrs["units"] == "N"
    w1 = (r1["bend_angle_p95"] - r1["bend_angle_p05"]).values[lit]
    w4 = (r4["bend_angle_p95"] - r4["bend_angle_p05"]).values[lit]
    # four times the variance: twice the width (linear propagation, GUM 5.1); the same seed gives the same
    # standard-normal draws, so only the nonlinearity of the model moves the ratio off 2
    np.testing.assert_allclose(w4 / w1, 2.0, rtol=0.1)


def test_run_uncertainty_writes_files(tmp_path):
    t = np.arange(0.0, 21.0, 2.0)
    data = tmp_path / "meas.csv"
    data.write_text("# synthetic\ntime [s], bend angle [deg]\n" + "\n".join(f"{x:g}, {x:g}" for x in t) + "\n")
    sc = parse_scenario(calibrated_text(1.0, data_file="meas.csv"), path=tmp_path / "cal.toml")
    assert calibration_settings(sc).data[0].file == tmp_path / "meas.csv"
    res = run_uncertainty(sc, n_draws=6, out_dir=tmp_path / "out", seed=4, quiet=True)
    for name in ("uncertainty.nc", "uncertainty.csv", "figures/uncertainty_bend_angle.png"):
        assert (tmp_path / "out" / name).is_file()
    ds = xr.load_dataset(tmp_path / "out" / "uncertainty.nc")
    assert ds["bend_angle_p50"].attrs["units"] == "rad" and ds.attrs["n_draws"] == 6
    assert ds["parameter_draws"].shape == (6, 2)
    header = (tmp_path / "out" / "uncertainty.csv").read_text().splitlines()[0]
    assert header.startswith("time [s],bend_angle_p05 [rad]")
    assert any("temperature is not modelled" in m for m in res.messages) or "peak_temperature_p50" in ds


def test_cli_run_fitted_scenario_with_uncertainty(tmp_path, capsys):
    """fit -> fitted.toml -> `actsim run fitted.toml --uncertainty 5` through actsim.cli.main."""
    from actsim.calibrate.bend import BendCurve, default_parameters, fit_bend
    from actsim.calibrate.settings import write_fitted_scenario
    from actsim.cli import main
    from actsim.scenario import apply_overrides
    from actsim.solver import simulate

    base_text = calibrated_text(1.0).split("[calibration]")[0]
    base = parse_scenario(base_text)
    ds = simulate(base)
    rng = np.random.default_rng(0)
    f = tmp_path / "b40.csv"
    f.write_text("# synthetic\ntime [s], bend angle [rad]\n" + "\n".join(
        f"{t:g}, {a + rng.normal(0, 0.01):.8f}" for t, a in zip(ds["time"].values, ds["bend_angle"].values)) + "\n")
    start = apply_overrides(base, {"materials.film.photo_strain": -0.012})
    fit = fit_bend(start, [BendCurve(data=f)], parameters=default_parameters(start)[::2])
    fitted = write_fitted_scenario(fit, tmp_path / "fit" / "fitted.toml")
    out = tmp_path / "run"
    assert main(["run", str(fitted), "--uncertainty", "5", "-o", str(out), "--no-figures"]) == 0
    text = capsys.readouterr().out
    assert "uncertainty bands written to" in text and "5 draws simulated" in text
    for name in ("result.nc", "uncertainty.nc", "uncertainty.csv", "figures/uncertainty_bend_angle.png"):
        assert (out / name).is_file()
    from actsim.folders import verify_folder

    manifest = verify_folder(out)  # the bands are part of the run's folder, written in the same transaction
    assert manifest["parts"] == ["uncertainty"] and "uncertainty.nc" in [e["path"] for e in manifest["files"]]
    assert f"uncertainty bands written to {out}/" in text
    # a scenario without [calibration] fails with one line and status 2
    plain = tmp_path / "plain.toml"
    plain.write_text(base_text)
    assert main(["run", str(plain), "--uncertainty", "5", "-o", str(tmp_path / "run2")]) == 2
    assert "no [calibration] section" in capsys.readouterr().err
