"""Tests of the photobiological checks (actsim.checks.weighting, exposure_limits, light_spectrum,
exposure) against the published weighting tables and limits.

Sources (all values from memory of the documents, as in the data files):
[ICNIRP04] ICNIRP, Guidelines on limits of exposure to ultraviolet radiation of wavelengths between
           180 nm and 400 nm, Health Physics 87 (2004) 171-186.
[ICNIRP13] ICNIRP, Guidelines on limits of exposure to incoherent visible and infrared radiation,
           Health Physics 105 (2013) 74-96.
[IEC62471] IEC 62471:2006, Photobiological safety of lamps and lamp systems.
"""

import math
import warnings

import numpy as np
import pytest

from actsim.cautions import CAUTION, caution_lines
from actsim.checks import exposure as ex
from actsim.checks import exposure_limits as lim
from actsim.checks import light_spectrum as ls
from actsim.checks import weighting as wt
from actsim.errors import ActsimInputError, ActsimWarning

NM = 1e-9


# --- weighting functions --------------------------------------------------------------------------


@pytest.mark.parametrize(
    "wl_nm, s_table",
    [
        (254, 0.5),  # [ICNIRP04] Table / [IEC62471] Table 4.1, from memory
        (270, 1.0),  # [ICNIRP04] peak of S(lambda), from memory
        (280, 0.88),  # [ICNIRP04], from memory
        (300, 0.30),  # [ICNIRP04], from memory
        (313, 0.006),  # [ICNIRP04], from memory
        (365, 0.00011),  # [ICNIRP04], from memory
    ],
)
def test_actinic_weighting_at_tabulated_points(wl_nm, s_table):
    assert wt.actinic_weighting(wl_nm * NM) == pytest.approx(s_table, rel=1e-12)


def test_actinic_weighting_log_linear_between_points():
    # [ICNIRP04] tabulates 300 nm 0.30 and 303 nm 0.12 (from memory); log-linear interpolation at
    # 302 nm by hand: 10**(log10(0.3) + (2/3)*(log10(0.12) - log10(0.3))) = 0.3 * 0.4**(2/3)
    assert wt.actinic_weighting(302 * NM) == pytest.approx(0.3 * 0.4 ** (2 / 3), rel=1e-12)


def test_blue_light_weighting_values():
    # [ICNIRP13] Table / [IEC62471] Table 4.2 (from memory): B = 1.0 at 435 and 440 nm,
    # 0.01 over 300-380 nm, 10**((450 - lambda)/50) over 500-600 nm, 0.001 over 600-700 nm.
    assert wt.blue_light_weighting(435 * NM) == pytest.approx(1.0)
    assert wt.blue_light_weighting(440 * NM) == pytest.approx(1.0)
    assert wt.blue_light_weighting(437.5 * NM) == pytest.approx(1.0)
    assert wt.blue_light_weighting(350 * NM) == pytest.approx(0.01)
    assert wt.blue_light_weighting(650 * NM) == pytest.approx(0.001)
    for wl in (505, 550, 575.5, 598):
        assert wt.blue_light_weighting(wl * NM) == pytest.approx(10 ** ((450 - wl) / 50), rel=1e-5)


def test_weighting_outside_table_is_an_error_not_zero():
    with pytest.raises(ActsimInputError, match="outside the tabulated range"):
        wt.actinic_weighting(190 * NM)
    with pytest.raises(ActsimInputError, match="outside the tabulated range"):
        wt.blue_light_weighting(720 * NM)


# --- weighted integrals ---------------------------------------------------------------------------


def test_continuous_spectrum_integral_closed_form():
    # Flat 1 W/m^2/nm from 300 to 303 nm; S log-linear between 0.30 and 0.12 ([ICNIRP04], from memory).
    # Closed form for an exponential weighting: int S dl = dl * (S0 - S1) / ln(S0/S1) = 3 nm * 0.18 / ln 2.5.
    wl = np.array([300.0, 303.0]) * NM
    e = np.array([1e9, 1e9])  # W/m^2/m
    expected = 3.0 * 0.18 / math.log(2.5)
    got = ex.effective_actinic_irradiance(wavelength=wl, spectral_irradiance=e)
    assert got == pytest.approx(expected, rel=1e-4)


def test_uva_is_unweighted_band_integral():
    # IEC 62471 section 4.3.2 (from memory): E_UVA is the plain integral over 315-400 nm.
    # Flat 1 W/m^2/nm from 300 to 420 nm -> 85 W/m^2 in UV-A, by hand.
    wl = np.array([300.0, 420.0]) * NM
    assert ex.uva_irradiance(wavelength=wl, spectral_irradiance=[1e9, 1e9]) == pytest.approx(85.0, rel=1e-12)
    # lines at the band ends count, a 310 nm line does not
    lines = ls.line_spectrum(wavelength=[310 * NM, 315 * NM, 400 * NM], irradiance=[1.0, 2.0, 3.0])
    assert ex.uva_irradiance(lines) == pytest.approx(5.0)


def test_gaussian_band_total_and_narrow_band_limit():
    g = ls.gaussian_band(centre=365 * NM, fwhm=10 * NM, irradiance=7.0)
    assert g.total_irradiance() == pytest.approx(7.0, rel=1e-12)  # normalisation by construction
    assert ex.uva_irradiance(g) == pytest.approx(7.0, rel=1e-9)  # band lies inside 315-400 nm
    # a 0.2 nm wide band at 254 nm tends to the line value S(254) = 0.5 ([ICNIRP04], from memory)
    narrow = ls.gaussian_band(centre=254 * NM, fwhm=0.2 * NM, irradiance=1.0)
    assert ex.effective_actinic_irradiance(narrow) == pytest.approx(0.5, rel=2e-3)


def test_line_and_combined_spectra():
    a = ls.line_spectrum(wavelength=254 * NM, irradiance=0.2)
    b = ls.gaussian_band(centre=365 * NM, fwhm=10 * NM, irradiance=1.0)
    both = a + b
    assert ex.effective_actinic_irradiance(both) == pytest.approx(
        ex.effective_actinic_irradiance(a) + ex.effective_actinic_irradiance(b), rel=1e-12
    )


# --- permissible times ----------------------------------------------------------------------------


def test_permissible_time_254nm_line():
    # [ICNIRP04]/[IEC62471] 4.3.1 (from memory): t_max = 30 J/m^2 / E_s, E_s = S(254) E = 0.5 * 0.2 W/m^2.
    # By hand: 30 / (0.5 * 0.2) = 300 s.
    src = ls.line_spectrum(wavelength=254 * NM, irradiance=0.2)
    e_s = ex.effective_actinic_irradiance(src)
    assert e_s == pytest.approx(0.1, rel=1e-12)
    assert lim.actinic_permissible_time(effective_irradiance=e_s) == pytest.approx(300.0, rel=1e-12)
    results, summary = ex.photobio_check(src, exposure_duration=300.0)
    assert summary["permissible_time"]["actinic_uv"] == pytest.approx(300.0)
    assert results[0].value == pytest.approx(30.0) and results[0].passed  # exactly at the limit
    results, _ = ex.photobio_check(src, exposure_duration=301.0)
    assert not results[0].passed


def test_uva_limit_governs_at_365nm_high_irradiance():
    # 365 nm line, 50 W/m^2. [ICNIRP04] S(365) = 0.00011 (from memory): E_s = 0.0055 W/m^2,
    # actinic t_max = 30/0.0055 = 5454.5 s. UV-A [IEC62471] 4.3.2 (from memory): t_max = 1e4/50 = 200 s.
    src = ls.line_spectrum(wavelength=365 * NM, irradiance=50.0)
    t_act = lim.actinic_permissible_time(effective_irradiance=ex.effective_actinic_irradiance(src))
    t_uva = lim.uva_permissible_time(uva_irradiance=ex.uva_irradiance(src))
    assert t_act == pytest.approx(30 / 0.0055, rel=1e-9)
    assert t_uva == pytest.approx(200.0, rel=1e-12)
    assert t_uva < t_act
    results, summary = ex.photobio_check(src, exposure_duration=600.0)
    by = {r.check.split(" ")[0]: r for r in results}
    assert by["actinic"].passed  # 3.3 J/m^2 of 30
    assert not by["UV-A"].passed  # 3e4 J/m^2 of 1e4
    assert by["UV-A"].value == pytest.approx(3.0e4)
    # below 10 W/m^2 the UV-A irradiance form is met for any duration
    assert lim.uva_permissible_time(uva_irradiance=10.0) == math.inf


def test_blue_light_narrow_band_at_peak():
    # B = 1.0 at 435-440 nm ([ICNIRP13]/[IEC62471] Table 4.2, from memory): E_B = E.
    line = ls.line_spectrum(wavelength=437 * NM, irradiance=2.0)
    assert ex.blue_light_weighted(line) == pytest.approx(2.0, rel=1e-12)
    # small source, [IEC62471] 4.3.4 (from memory): t_max = 100 J/m^2 / E_B = 50 s above 1 W/m^2
    assert lim.blue_light_permissible_time(weighted_irradiance=2.0) == pytest.approx(50.0)
    assert lim.blue_light_permissible_time(weighted_irradiance=1.0) == math.inf
    # radiance form, [IEC62471] 4.3.3 (from memory): 1e6 J/(m^2 sr) / L_B
    assert lim.blue_light_permissible_time(weighted_radiance=1e3) == pytest.approx(1e3)
    # a 1 nm wide band centred at 437.5 nm spans +/- 1.5 FWHM = 436-439 nm (the span of a Gaussian source in
    # actsim.spectra), all on the B = 1 plateau of 435-440 nm: E_B = E to round-off
    band = ls.gaussian_band(centre=437.5 * NM, fwhm=1 * NM, irradiance=2.0)
    assert ex.blue_light_weighted(band) == pytest.approx(2.0, rel=1e-12)


# --- risk groups ----------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "hazard, times",
    [
        ("actinic_uv", (30000.0, 10000.0, 1000.0)),  # [IEC62471] 6.1 Table 6.1, from memory
        ("uva", (1000.0, 300.0, 100.0)),  # [IEC62471] Table 6.1, from memory
        ("blue_light", (10000.0, 100.0, 0.25)),  # [IEC62471] Table 6.1, from memory
    ],
)
def test_risk_group_boundaries(hazard, times):
    groups = ("Exempt", "RG1", "RG2")
    for g, t in zip(groups, times):
        assert lim.risk_group(hazard=hazard, permissible_time=t) == g
        below = np.nextafter(t, 0.0)
        assert lim.risk_group(hazard=hazard, permissible_time=below) == ("RG1", "RG2", "RG3")[groups.index(g)]
    assert lim.risk_group(hazard=hazard, permissible_time=math.inf) == "Exempt"


def test_risk_group_from_irradiance_emission_limits():
    # [IEC62471] Table 6.1 emission limits (from memory): actinic E_s 0.001 / 0.003 / 0.03 W/m^2
    # (= 30 J/m^2 over 30000 / 10000 / 1000 s). Just inside and just outside each boundary.
    for e_lim, inside, outside in ((0.001, "Exempt", "RG1"), (0.003, "RG1", "RG2"), (0.03, "RG2", "RG3")):
        t_in = lim.actinic_permissible_time(effective_irradiance=e_lim * (1 - 1e-9))
        t_out = lim.actinic_permissible_time(effective_irradiance=e_lim * (1 + 1e-9))
        assert lim.risk_group(hazard="actinic_uv", permissible_time=t_in) == inside
        assert lim.risk_group(hazard="actinic_uv", permissible_time=t_out) == outside
    # small-source blue light: Exempt up to 1 W/m^2, RG2 up to 400 W/m^2 (100 J/m^2 in 0.25 s), RG3 beyond
    rg = lambda e: lim.risk_group(hazard="blue_light", permissible_time=lim.blue_light_permissible_time(weighted_irradiance=e))  # noqa: E731
    assert rg(1.0) == "Exempt"
    assert rg(1.0 + 1e-9) == "RG2"
    assert rg(400.0) == "RG2"
    assert rg(400.0 * (1 + 1e-9)) == "RG3"


def test_overall_group_is_the_worst():
    assert lim.worst_risk_group(["Exempt", "RG2", "RG1"]) == "RG2"
    # 254 nm 0.2 W/m^2: actinic t_max 300 s -> RG3 (< 1000 s); UV-A and blue light Exempt
    _, summary = ex.photobio_check(ls.line_spectrum(wavelength=254 * NM, irradiance=0.2), exposure_duration=60.0)
    assert summary["risk_groups"] == {"actinic_uv": "RG3", "uva": "Exempt", "blue_light": "Exempt"}
    assert summary["risk_group"] == "RG3"


# --- protocols ------------------------------------------------------------------------------------


def test_protocol_dose_sums_lit_steps():
    # H = sum E_k dt_k (IEC 62471 4.3, from memory): two 100 s steps at E_s = 0.1 W/m^2 around a dark step.
    src = ls.line_spectrum(wavelength=254 * NM, irradiance=0.2)
    d = ex.protocol_dose([(100.0, src), (200.0, None), (100.0, src)])
    assert d["actinic_dose"] == pytest.approx(20.0)
    assert d["duration"] == pytest.approx(400.0)
    assert d["actinic_peak_day_dose"] == pytest.approx(20.0)


def test_protocol_short_burst_caught_by_window():
    # UV-A 1e4 J/m^2 up to 1000 s, 10 W/m^2 beyond ([IEC62471] 4.3.2, from memory), applied to every
    # sub-interval of the protocol (common practice, no source). 30 W/m^2 for 500 s then 10000 s dark:
    # the protocol average is only 15000/10500 = 1.43 W/m^2, but the 1000 s window holds 1.5e4 J/m^2.
    src = ls.line_spectrum(wavelength=365 * NM, irradiance=30.0)
    results, summary = ex.protocol_check([(500.0, src), (10000.0, None)])
    uva = results[1]
    assert summary["uva_peak_window_dose"] == pytest.approx(1.5e4)
    assert uva.value == pytest.approx(15.0)  # W/m^2 over the worst window of >= 1000 s
    assert not uva.passed
    # 20 W/m^2 for 400 s: 8000 J/m^2 in the worst window, passes
    results, _ = ex.protocol_check([(400.0, ls.line_spectrum(wavelength=365 * NM, irradiance=20.0)), (2000.0, None)])
    assert results[1].passed and results[1].value == pytest.approx(8.0)


# --- exposure position ----------------------------------------------------------------------------


def test_distance_factor_above_one_rejected():
    src = ls.line_spectrum(wavelength=365 * NM, irradiance=10.0)
    with pytest.raises(ActsimInputError) as exc:
        ex.photobio_check(src, distance_factor=1.5)
    msg = str(exc.value)
    assert "\n" not in msg and "distance_factor" in msg and "1.5" in msg and "<= 1" in msg
    for bad in (0.0, -0.2, float("nan")):
        with pytest.raises(ActsimInputError):
            ls.exposure_spectrum(src, distance_factor=bad)
    with pytest.raises(ActsimInputError, match="not both"):
        ls.exposure_spectrum(src, distance_factor=0.5, exposure_irradiance=3.0)


def test_distance_factor_and_explicit_exposure_irradiance_scale():
    src = ls.line_spectrum(wavelength=365 * NM, irradiance=10.0)
    assert ex.uva_irradiance(ls.exposure_spectrum(src, distance_factor=0.25)) == pytest.approx(2.5)
    # an explicit exposure irradiance may exceed the strip's (the person is nearer the lamp)
    assert ex.uva_irradiance(ls.exposure_spectrum(src, exposure_irradiance=25.0)) == pytest.approx(25.0)


# --- out-of-range spectra -------------------------------------------------------------------------


def test_out_of_range_part_reported_not_silently_zero():
    src = ls.line_spectrum(wavelength=[190 * NM, 254 * NM], irradiance=[1.0, 0.2])
    with pytest.warns(ActsimWarning, match=r"below 200 nm"):
        e_s = ex.effective_actinic_irradiance(src)
    assert e_s == pytest.approx(0.1)
    with pytest.raises(ActsimInputError, match="not assessed"):
        ex.effective_actinic_irradiance(src, out_of_range="raise")
    with pytest.warns(ActsimWarning, match="not assessed"):
        results, summary = ex.photobio_check(src, exposure_duration=10.0)
    assert any("below 200 nm" in t for t in summary["not_assessed"])
    assert "below 200 nm" in results[0].note
    ir = ls.line_spectrum(wavelength=[450 * NM, 850 * NM], irradiance=[0.5, 3.0])
    with pytest.warns(ActsimWarning, match="above 700 nm"):
        _, summary = ex.photobio_check(ir, exposure_duration=10.0)
    assert any("infrared" in t for t in summary["not_assessed"])


def test_in_range_spectrum_gives_no_warning():
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        ex.photobio_check(ls.gaussian_band(centre=405 * NM, fwhm=12 * NM, irradiance=5.0), exposure_duration=60.0)


def test_wavelength_in_nm_rejected_with_hint():
    with pytest.raises(ActsimInputError, match="in m"):
        ls.line_spectrum(wavelength=365.0, irradiance=1.0)


# --- wording and caution --------------------------------------------------------------------------


def test_verdict_wording_and_caution_in_output():
    src = ls.gaussian_band(centre=365 * NM, fwhm=10 * NM, irradiance=5.0)
    results, summary = ex.photobio_check(src, exposure_duration=600.0)
    for r in results:
        assert "safe" not in r.verdict.lower()
    assert results[0].note.startswith("within the modelled limit of ICNIRP 2004 / IEC 62471")
    text = ex.format_photobio(results, summary)
    assert "\n".join(caution_lines()) in text
    assert "measure" in CAUTION and "eye protection" in CAUTION.replace("eye and skin protection", "eye protection")
    assert "risk group" in text


# --- other inputs ---------------------------------------------------------------------------------


def test_radiance_form_of_blue_light():
    # [IEC62471] 4.3.3 (from memory): L_B t <= 1e6 J/(m^2 sr) for t <= 1e4 s. L_B = 1e3 W/(m^2 sr) at 437 nm
    # (B = 1): t_max = 1000 s by hand; a 2000 s exposure gives 2e6 J/(m^2 sr), over the limit; RG1 (>= 100 s).
    irr = ls.line_spectrum(wavelength=437 * NM, irradiance=0.5)
    rad = ls.line_spectrum(wavelength=437 * NM, irradiance=1e3)
    results, summary = ex.photobio_check(irr, exposure_duration=2000.0, radiance_spectrum=rad)
    r = results[-1]
    assert r.unit == "J/(m^2 sr)" and r.value == pytest.approx(2e6) and not r.passed
    assert summary["permissible_time"]["blue_light_radiance"] == pytest.approx(1000.0)
    assert summary["risk_groups"]["blue_light_radiance"] == "RG1"


def test_light_source_bands_become_lines():
    # band fractions times irradiance, IEC 62471 4.3 weighting applied per band (from memory)
    from actsim.spectra import LightSource, gaussian_bands

    wl, frac = gaussian_bands(centre=365 * NM, fwhm=10 * NM, n_bands=9)
    src = LightSource(name="lamp", face="top", irradiance=4.0, band_wavelength=wl, band_fraction=frac, description="band")
    sp = ls.spectrum_from_light_source(src)
    assert sp.total_irradiance() == pytest.approx(4.0)
    assert ex.uva_irradiance(sp) == pytest.approx(4.0)
    assert ex.effective_actinic_irradiance(ls.spectrum_from_light_source(src, irradiance=8.0)) == pytest.approx(
        8.0 * float(np.sum(frac * wt.actinic_weighting(wl)))
    )


def test_spectrum_validates_direct_construction():
    with pytest.raises(ActsimInputError, match="line_irradiance"):
        ls.Spectrum(line_wavelength=[365 * NM], line_irradiance=[-1.0])
    with pytest.raises(ActsimInputError, match="strictly increasing"):
        ls.Spectrum(tables=(([400 * NM, 300 * NM], [1.0, 1.0]),))


def test_long_protocol_is_fast():
    # 2000 alternating steps; the window search stays well under a second
    on = ls.line_spectrum(wavelength=365 * NM, irradiance=12.0)
    steps = [(5.0, on if k % 2 == 0 else None) for k in range(2000)]
    results, summary = ex.protocol_check(steps)
    # mean over any window of >= 1000 s is about half of 12 W/m^2 (duty cycle 50 %); by hand, the highest is the
    # window of 1005 s from the start of a lit step, 101 lit steps of 5 s: 12 * 505 / 1005 = 6.0299 W/m^2 (a window
    # from a lit start gains 12 W/m^2 against a mean of 6 while lit, and loses while dark)
    assert results[1].value == pytest.approx(12.0 * 505.0 / 1005.0, rel=1e-12) and results[1].passed
