"""Tests of actsim.calibrate.tensile and the CSV reader it uses (closed forms, scipy, standards)."""

import numpy as np
import pytest
from scipy import stats

from actsim.calibrate.readers import read_xy_csv
from actsim.calibrate.tensile import (
    chord_modulus,
    fit_tensile,
    offset_yield_strength,
    plot_tensile,
    regression_modulus,
    toe_compensation,
    ultimate_strength,
)
from actsim.errors import ActsimInputError

E_RO, S0_RO, N_RO = 2.0e9, 40.0e6, 10.0  # invented material


def ramberg_osgood(n_points=20001, smax=60e6):
    # Ramberg and Osgood, "Description of stress-strain curves by three parameters", NACA TN 902 (1943):
    # eps = sigma/E + 0.002 (sigma/sigma_0)^n, so the 0.2 % offset line meets the curve at sigma_0 exactly.
    s = np.linspace(0.0, smax, n_points)
    e = s / E_RO + 0.002 * (s / S0_RO) ** N_RO
    return e, s


def write_csv(path, header, rows, comments=("synthetic tensile test of an invented film",)):
    lines = [f"# {c}" for c in comments] + [header] + [", ".join(f"{v:.10g}" for v in r) for r in rows]
    path.write_text("\n".join(lines) + "\n")
    return path


def test_offset_yield_of_ramberg_osgood_is_sigma0():
    # Source: Ramberg & Osgood, NACA TN 902, 1943 (construction of the law); tolerance from linear
    # interpolation on a 3 kPa stress grid.
    e, s = ramberg_osgood()
    ys, ye = offset_yield_strength(e, s, modulus=E_RO, offset=0.002)
    assert ys == pytest.approx(S0_RO, rel=1e-7)
    assert ye == pytest.approx(S0_RO / E_RO + 0.002, rel=1e-7)


def test_chord_modulus_of_linear_curve_is_its_slope():
    # ISO 527-1:2019 chord modulus between 0.05 % and 0.25 %; for a straight line it is the slope (closed form).
    e = np.linspace(0.0, 0.01, 37)  # grid does not hit 0.0005/0.0025 exactly: interpolation is exercised
    s = 3.1e9 * e + 0.4e6
    assert chord_modulus(e, s) == pytest.approx(3.1e9, rel=1e-12)


def test_regression_modulus_matches_linregress():
    # ASTM E111-17 least-squares modulus; reference library scipy.stats.linregress.
    rng = np.random.default_rng(7)
    e = np.linspace(0.0, 0.004, 60)
    s = 2.5e9 * e + 0.2e6 + rng.normal(0, 0.15e6, e.size)
    fr = regression_modulus(e, s, strain_range=(0.0005, 0.0035))
    sel = (e >= 0.0005) & (e <= 0.0035)
    lr = stats.linregress(e[sel], s[sel])
    assert fr.value("modulus") == pytest.approx(lr.slope, rel=1e-10)
    assert fr.value("intercept") == pytest.approx(lr.intercept, rel=1e-8, abs=1e-3)
    assert fr.stderr("modulus") == pytest.approx(lr.stderr, rel=1e-8)
    assert fr.stderr("intercept") == pytest.approx(lr.intercept_stderr, rel=1e-8)
    assert fr.n_points == int(sel.sum())


def test_toe_compensation_recovers_known_shift():
    # Closed-form toe: sigma = E eps^2/(4 e0) for eps <= 2 e0, then E (eps - e0); C1-smooth at 2 e0, and the
    # linear part extended meets zero stress at e0 (ASTM D638-14 Appendix X1 construction).
    E, e0 = 1.8e9, 0.0015
    e = np.linspace(0.0, 0.02, 801)
    s = np.where(e <= 2 * e0, E * e ** 2 / (4 * e0), E * (e - e0))
    tc = toe_compensation(e, s, strain_range=(0.004, 0.012))
    assert tc.shift == pytest.approx(e0, rel=1e-10)
    assert tc.fit.value("modulus") == pytest.approx(E, rel=1e-10)
    # the compensated curve starts at the origin and is linear with slope E from there
    assert tc.strain[0] == 0.0 and tc.stress[0] == 0.0
    assert chord_modulus(tc.strain, tc.stress) == pytest.approx(E, rel=1e-9)
    # automatic range (10-40 % of max stress) lies in the linear part here
    assert toe_compensation(e, s).shift == pytest.approx(e0, rel=1e-9)


def test_ultimate_strength():
    e = np.array([0.0, 0.01, 0.02, 0.03, 0.04])
    s = np.array([0.0, 20e6, 35e6, 33e6, 30e6])
    assert ultimate_strength(e, s) == (35e6, 0.02)


def test_fit_tensile_from_file_percent_header_and_plot(tmp_path):
    e, s = ramberg_osgood(n_points=4001)
    f = write_csv(tmp_path / "ro.csv", "strain [%], stress [MPa]", np.column_stack([100 * e, s / 1e6]))
    res = fit_tensile(f)
    assert res.synthetic and res.source == "ro.csv"
    # small-strain part of the RO curve: plastic term at 0.25 % is (5/40)^10*0.002 ~ 1e-12, so E is exact
    assert res.chord_modulus == pytest.approx(E_RO, rel=1e-6)
    assert res.modulus == pytest.approx(E_RO, rel=1e-6)
    assert res.yield_strength == pytest.approx(S0_RO, rel=1e-5)  # Ramberg & Osgood 1943, as above
    assert res.ultimate_strength == pytest.approx(60e6, rel=1e-9)
    assert "MPa" in res.to_table()
    out = plot_tensile(res, tmp_path / "ro.png")
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["ro.csv", "ro.png"]  # no temporary file left


def test_fit_tensile_with_toe_from_arrays():
    E, e0 = 1.8e9, 0.0015
    e = np.linspace(0.0, 0.02, 801)
    s = np.where(e <= 2 * e0, E * e ** 2 / (4 * e0), E * (e - e0))
    res = fit_tensile((e, s), toe=True, linear_range=(0.004, 0.012))
    assert res.toe_shift == pytest.approx(e0, rel=1e-9)
    assert res.modulus == pytest.approx(E, rel=1e-9)
    assert res.yield_strength is None and any("never meets" in w for w in res.warnings)


# --- bad input ---------------------------------------------------------------------------------

def test_percent_strain_in_fraction_column_is_detected(tmp_path):
    # Rule: max strain > 1.5 without a percent unit is taken as percent (common practice, no source).
    e, s = ramberg_osgood(n_points=500)
    f = write_csv(tmp_path / "pct.csv", "strain [1], stress [MPa]", np.column_stack([100 * e, s / 1e6]))
    with pytest.raises(ActsimInputError, match=r"looks like percent; write 'strain \[%\]'") as ei:
        fit_tensile(f)
    assert "\n" not in str(ei.value)
    with pytest.raises(ActsimInputError, match="looks like percent"):
        fit_tensile((100 * e, s))
    assert fit_tensile((100 * e, s), strain_unit="%").yield_strength == pytest.approx(S0_RO, rel=1e-3)


def test_unreadable_column_names_the_line(tmp_path):
    f = tmp_path / "bad.csv"
    f.write_text("# synthetic\nstrain [1], stress [MPa]\n0.0, 0.0\n0.001, abc\n")
    with pytest.raises(ActsimInputError, match=r"bad.csv line 4: column 'stress \[MPa\]' is not a number"):
        fit_tensile(f)


def test_too_few_points_in_linear_range():
    e = np.linspace(0.0, 0.05, 30)  # ~1.7e-3 spacing: only 1-2 points between 0.05 % and 0.25 %
    s = 2e9 * e
    with pytest.raises(ActsimInputError, match="holds 1 points, at least 5 are needed"):
        fit_tensile((e, s))


def test_reader_errors_missing_file_missing_unit_too_few_rows(tmp_path):
    with pytest.raises(ActsimInputError, match="does not exist"):
        read_xy_csv(tmp_path / "nope.csv", x_kind="strain", y_kind="stress")
    f = tmp_path / "nounit.csv"
    f.write_text("strain, stress\n0, 0\n0.001, 2\n0.002, 4\n")
    with pytest.raises(ActsimInputError, match=r"column 2 \(stress\) has no unit"):
        read_xy_csv(f, x_kind="strain", y_kind="stress")
    d = read_xy_csv(f, x_kind="strain", y_kind="stress", y_unit="MPa")
    np.testing.assert_allclose(d.y, [0, 2e6, 4e6])
    with pytest.raises(ActsimInputError, match="3 data rows, at least 10 are needed"):
        read_xy_csv(f, x_kind="strain", y_kind="stress", y_unit="MPa", min_points=10)
    g = tmp_path / "wrongkind.csv"
    g.write_text("strain [1], stress [mm]\n0, 0\n0.001, 2\n")
    with pytest.raises(ActsimInputError, match="is not a unit of stress"):
        read_xy_csv(g, x_kind="strain", y_kind="stress")


def test_reader_units_to_si(tmp_path):
    # SI conversions (BIPM SI Brochure, 9th ed., 2019): 25 degC = 298.15 K, 365 nm = 3.65e-7 m.
    f = tmp_path / "t.csv"
    f.write_text("# measured nothing: synthetic\ntemperature [degC]; wavelength [nm]\n25; 365\n100; 405\n")
    d = read_xy_csv(f, x_kind="temperature", y_kind="wavelength")
    np.testing.assert_allclose(d.x, [298.15, 373.15])
    np.testing.assert_allclose(d.y, [365e-9, 405e-9])
    assert d.synthetic and d.x_unit == "degC"


def test_percent_header_with_fraction_values_gets_a_hint(tmp_path):
    e, s = ramberg_osgood(n_points=500)
    f = write_csv(tmp_path / "frac.csv", "strain [%], stress [MPa]", np.column_stack([e, s / 1e6]))
    res = fit_tensile(f)
    assert any("says % but reaches only" in w for w in res.warnings)
    # if the regression range itself is empty, the error carries the hint
    with pytest.raises(ActsimInputError, match="says % but reaches only"):
        fit_tensile(f, linear_range=(0.002, 0.004))
