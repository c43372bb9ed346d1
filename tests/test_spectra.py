"""A Gaussian source has one definition (actsim.spectra): its bands and its fine-grid spectrum agree,
and the exposure checks build their Gaussian band from it."""

import math

import numpy as np
import pytest
from scipy import stats

from actsim import spectra
from actsim.checks import exposure as ex
from actsim.checks import light_spectrum as ls
from actsim.spectra import GAUSSIAN_HALF_SPAN, LightSource, gaussian_bands, gaussian_spectrum

NM = 1e-9


def test_gaussian_spectrum_shape_span_and_total():
    c, w = 405 * NM, 15 * NM
    lam, e = gaussian_spectrum(centre=c, fwhm=w, irradiance=3.0, points=241)
    # span: centre +- 1.5 FWHM, the span gaussian_bands cuts into bins
    assert lam[0] == pytest.approx(c - 1.5 * w, rel=1e-15) and lam[-1] == pytest.approx(c + 1.5 * w, rel=1e-15)
    assert GAUSSIAN_HALF_SPAN == 1.5
    # the table carries exactly the irradiance (trapezoid = the piecewise-linear integral)
    assert np.trapezoid(e, lam) == pytest.approx(3.0, rel=1e-13)
    # FWHM by definition: half the peak at centre +- FWHM/2 (241 points over 3 FWHM: FWHM/2 = 40 steps)
    peak = e[120]
    assert lam[120] == pytest.approx(c, rel=1e-15)
    assert e[80] == pytest.approx(peak / 2, rel=1e-12) and e[160] == pytest.approx(peak / 2, rel=1e-12)
    # truncated normal of scipy: the peak density of the Gaussian truncated at +-3.53 sigma, times 3 W/m^2,
    # within the trapezoid rule's error on this grid
    sigma = w / (2 * math.sqrt(2 * math.log(2)))
    a = 1.5 * w / sigma
    assert peak == pytest.approx(3.0 * stats.truncnorm(-a, a, loc=c, scale=sigma).pdf(c), rel=1e-4)


def test_bands_are_the_spectrum_cut_into_bins():
    # gaussian_bands' fractions and energy-weighted mean wavelengths (closed forms with erf) equal the
    # integrals of the fine-grid spectrum over each bin: the table is piecewise linear, so the trapezoid
    # rule on its own nodes plus the bin edges is its exact integral; the only difference is the table's
    # interpolation error (2001 points: ~1e-5 in the outer bins' power)
    c, w, n = 365 * NM, 10 * NM, 7
    wl, frac = gaussian_bands(centre=c, fwhm=w, n_bands=n)
    lam, e = gaussian_spectrum(centre=c, fwhm=w, irradiance=1.0, points=2001)
    edges = np.linspace(lam[0], lam[-1], n + 1)
    for k in range(n):
        g = np.concatenate([[edges[k]], lam[(lam > edges[k]) & (lam < edges[k + 1])], [edges[k + 1]]])
        v = np.interp(g, lam, e)
        p = np.trapezoid(v, g)
        assert p == pytest.approx(frac[k], rel=2e-5)
        assert np.trapezoid(v * g, g) / p == pytest.approx(wl[k], rel=1e-6)


def test_exposure_gaussian_band_is_the_spectra_definition():
    band = ls.gaussian_band(centre=365 * NM, fwhm=10 * NM, irradiance=4.0)
    lam, e = spectra.gaussian_spectrum(centre=365 * NM, fwhm=10 * NM, irradiance=4.0)
    (tw, te), = band.tables
    np.testing.assert_array_equal(tw, lam)
    np.testing.assert_array_equal(te, e)


def test_band_lines_and_continuous_band_agree_where_the_weighting_is_flat():
    # the same 365 nm source, as a scenario sees it (7 bands -> lines) and as a continuous band:
    # UV-A is unweighted over 315-400 nm, so both give the full irradiance
    wl, frac = gaussian_bands(centre=365 * NM, fwhm=10 * NM, n_bands=7)
    src = LightSource(name="led", face="top", irradiance=4.0, band_wavelength=wl, band_fraction=frac, description="")
    lines = ls.spectrum_from_light_source(src)
    cont = ls.gaussian_band(centre=365 * NM, fwhm=10 * NM, irradiance=4.0)
    assert ex.uva_irradiance(lines) == pytest.approx(4.0, rel=1e-12)
    assert ex.uva_irradiance(cont) == pytest.approx(4.0, rel=1e-12)
    # S(lambda) is log-linear, convex: lines at the bins' mean wavelengths weigh a little less (Jensen);
    # with 7 bands the two differ by well under 1 %
    s_lines, s_cont = ex.effective_actinic_irradiance(lines), ex.effective_actinic_irradiance(cont)
    print(f"\nE_s of a 365 nm / 10 nm source, 4 W/m^2: 7 band lines {s_lines:.6g}, continuous {s_cont:.6g} W/m^2")
    assert s_lines <= s_cont
    assert s_lines == pytest.approx(s_cont, rel=1e-2)
