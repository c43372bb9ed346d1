"""Optics: Beer–Lambert attenuation, Fresnel reflection and photon conservation."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import constants

import actsim
from actsim import optics
from actsim.spectra import gaussian_bands, photon_flux


def test_fresnel_glass():
    # Normal-incidence reflectance of n = 1.5 glass in air is 0.04 (Born and Wolf, Principles of Optics, sec. 1.5).
    assert optics.fresnel_reflectance(n_outside=1.0, n_inside=1.5) == pytest.approx(0.04)


def test_beer_lambert_uniform_absorber():
    # Beer–Lambert law T = exp(-alpha d) for a uniform absorber (Swinehart, J. Chem. Educ. 39 (1962) 333),
    # independent of the number of cells because each cell's attenuation is exact.
    alpha, d = 3.0e4, 100e-6
    for n in (1, 7, 50):
        dz = np.full(n, d / n)
        mf, ab, tr = optics.attenuate(alpha=np.full(n, alpha), dz=dz, flux_in=2.0, from_top=True)
        assert tr == pytest.approx(2.0 * math.exp(-alpha * d), rel=1e-13)
        assert ab.sum() + tr == pytest.approx(2.0, rel=1e-15)
        # mean flux times alpha dz equals the absorbed photons in each cell
        np.testing.assert_allclose(mf * alpha * dz, ab, rtol=1e-13)


def test_photon_flux_codata():
    # q = E lambda / (h c N_A) with CODATA 2018 constants (scipy.constants): 50 mW/cm^2 at 365 nm.
    q = photon_flux(irradiance=500.0, wavelength=365e-9)
    assert q == pytest.approx(500.0 * 365e-9 / (constants.h * constants.c * constants.N_A), rel=1e-15)
    assert q == pytest.approx(1.5257e-3, rel=1e-4)  # hand calculation, rounded to 5 digits


def test_gaussian_bands_conserve_power_and_mean():
    # The band fractions sum to one and their energy-weighted mean wavelength equals the centre (symmetry).
    wl, fr = gaussian_bands(centre=405e-9, fwhm=15e-9, n_bands=11)
    assert fr.sum() == pytest.approx(1.0, abs=1e-15)
    assert np.dot(wl, fr) == pytest.approx(405e-9, rel=1e-12)
    # the middle bin of an odd count is centred
    assert wl[5] == pytest.approx(405e-9, rel=1e-12)


def test_photon_conservation_every_step(make_scenario):
    # Conservation: incident = reflected + absorbed + transmitted photons to round-off at every output step,
    # with a reflecting front face, a substrate with background absorption and a second source from below.
    extra = """
    [[sources]]
    name = "back"
    kind = "gaussian"
    wavelength = "420 nm"
    fwhm = "20 nm"
    irradiance = "20 mW/cm^2"
    face = "bottom"
    """
    protocol = """
    [[protocol]]
    duration = "5 s"
    light = { lamp = "50 mW/cm^2", back = "on" }
    [[protocol]]
    duration = "5 s"
    light = ["back"]
    """
    sc = make_scenario(reflection="true", extra_sources=extra, protocol=protocol, eps_b="3000 L/(mol*cm)",
                       substrate={"modulus": "3 GPa", "thickness": "30 um", "background": "50 1/cm"})
    ds = actsim.simulate(sc)
    inc = ds.photon_flux_incident.values
    balance = inc - ds.photon_flux_reflected - ds.photon_flux_absorbed - ds.photon_flux_transmitted
    assert np.all(inc > 0)
    assert float(np.max(np.abs(balance.values) / inc)) < 1e-13


def test_lighting_from_below_mirrors_lighting_from_above(make_scenario):
    # Mirror symmetry of a homogeneous film: lighting the bottom face instead of the top gives the mirrored
    # conversion profile and the opposite curvature (DESIGN.md sign convention: kappa > 0 bends toward +z).
    top = actsim.simulate(make_scenario(face="top"))
    bottom = actsim.simulate(make_scenario(face="bottom"))
    np.testing.assert_allclose(bottom.conversion.values, top.conversion.values[:, ::-1], rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(bottom.curvature.values, -top.curvature.values, rtol=1e-9, atol=1e-12)
    assert float(top.curvature[-1]) > 0  # a contracting top layer bends the strip toward the light
