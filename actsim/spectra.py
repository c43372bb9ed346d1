"""Light sources and spectral functions: spectra -> photon flux per wavelength band.

A source is a single line, a Gaussian band (centre, FWHM) or a tabulated
spectrum. Each is cut into wavelength bands; each band carries a fraction of
the source's irradiance and the *energy-weighted mean wavelength* of its part
of the spectrum, so the photon flux of the band,

.. math:: q_k = \\frac{w_k E \\bar\\lambda_k}{h c N_A}
   \\quad [\\mathrm{mol\\,m^{-2}\\,s^{-1}}],

is exactly the photon flux of that part of the spectrum
(:math:`\\int E_\\lambda \\lambda / (h c)\\, d\\lambda`).

Spectral *material* properties (absorptivity, quantum yield, background
absorption) are :class:`SpectralFunction` objects: a constant, a table or a sum
of Gaussian bands, evaluated at the band wavelengths.

References
----------
.. [1] CODATA 2018 recommended values of the fundamental physical constants,
   via :mod:`scipy.constants`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from scipy import constants
from scipy.special import erf

from .errors import ActsimInputError

#: Energy of one mole of photons times the wavelength, N_A h c [J m mol-1].
MOLAR_PHOTON_ENERGY_TIMES_WAVELENGTH = constants.Avogadro * constants.h * constants.c

#: FWHM of a Gaussian in units of its standard deviation, 2 sqrt(2 ln 2).
FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))

#: A Gaussian source spans centre +- GAUSSIAN_HALF_SPAN * FWHM (+- 3.53 sigma, 99.96 % of the
#: power); its bands (:func:`gaussian_bands`) and its spectrum (:func:`gaussian_spectrum`) both.
GAUSSIAN_HALF_SPAN = 1.5


def photon_flux(*, irradiance, wavelength):
    """Photon flux of monochromatic light.

    .. math:: q = \\frac{E \\lambda}{h c N_A}

    Parameters
    ----------
    irradiance : float or array_like
        Irradiance E [W m-2].
    wavelength : float or array_like
        Wavelength in vacuum [m].

    Returns
    -------
    numpy.ndarray or float
        Photon flux [mol m-2 s-1] (einstein m-2 s-1).
    """
    return np.asarray(irradiance) * np.asarray(wavelength) / MOLAR_PHOTON_ENERGY_TIMES_WAVELENGTH


def molar_photon_energy(wavelength):
    """Energy of one mole of photons, N_A h c / lambda [J mol-1].

    .. math:: E_{mol} = \\frac{N_A h c}{\\lambda}

    Parameters
    ----------
    wavelength : float or array_like
        Wavelength in vacuum [m].

    Returns
    -------
    numpy.ndarray or float
        Molar photon energy [J mol-1].
    """
    return MOLAR_PHOTON_ENERGY_TIMES_WAVELENGTH / np.asarray(wavelength)


@dataclass(frozen=True, eq=False)
class SpectralFunction:
    """A material property as a function of wavelength.

    Exactly one form is used: ``constant``; a ``table`` (``wavelength`` [m] and
    ``values``, linear interpolation, evaluating outside the table is an error);
    or Gaussian ``bands`` (centre [m], FWHM [m], peak value) summed.
    """

    field: str
    kind: str  # "constant" | "table" | "bands"
    constant: float = 0.0
    wavelength: np.ndarray = field(default_factory=lambda: np.zeros(0))
    values: np.ndarray = field(default_factory=lambda: np.zeros(0))
    bands: tuple = ()
    unit: str = "1"

    def __call__(self, wavelength):
        lam = np.atleast_1d(np.asarray(wavelength, dtype=float))
        if self.kind == "constant":
            return np.full(lam.shape, self.constant)
        if self.kind == "table":
            lo, hi = self.wavelength[0], self.wavelength[-1]
            outside = (lam < lo * (1 - 1e-12)) | (lam > hi * (1 + 1e-12))
            if np.any(outside):
                bad = lam[outside][0]
                raise ActsimInputError(
                    f"{self.field}: the table covers {lo * 1e9:g} to {hi * 1e9:g} nm but light at "
                    f"{bad * 1e9:.4g} nm reaches this material; extend the table to cover every source band"
                )
            return np.interp(lam, self.wavelength, self.values)
        total = np.zeros(lam.shape)
        for centre, fwhm, peak in self.bands:
            sigma = fwhm / FWHM_PER_SIGMA
            total += peak * np.exp(-0.5 * ((lam - centre) / sigma) ** 2)
        return total

    def is_zero(self) -> bool:
        if self.kind == "constant":
            return self.constant == 0.0
        if self.kind == "table":
            return not np.any(self.values)
        return all(b[2] == 0.0 for b in self.bands)


@dataclass(frozen=True, eq=False)
class LightSource:
    """A light source cut into wavelength bands.

    Attributes
    ----------
    name : str
    face : str
        ``"top"`` (light travels toward -z) or ``"bottom"``.
    irradiance : float
        Default irradiance at the entry face, before reflection [W m-2].
    band_wavelength : numpy.ndarray
        Energy-weighted mean wavelength of each band [m].
    band_fraction : numpy.ndarray
        Fraction of the irradiance in each band [1], summing to 1.
    description : str
        Plain-words description (``"line at 365 nm"``).
    polarisation : float or None
        Angle of the electric field of linearly polarised light from the strip axis [rad]; None: unpolarised.
    """

    name: str
    face: str
    irradiance: float
    band_wavelength: np.ndarray
    band_fraction: np.ndarray
    description: str
    polarisation: float | None = None


def line_bands(*, wavelength):
    """A single spectral line: one band carrying all the irradiance.

    Parameters
    ----------
    wavelength : float
        Wavelength [m].

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Band wavelengths [m] and fractions [1].
    """
    return np.array([float(wavelength)]), np.array([1.0])


def gaussian_bands(*, centre, fwhm, n_bands):
    """Cut a Gaussian emission band into ``n_bands`` equal-width bins.

    The bins span centre +- 1.5 FWHM (+- 3.53 sigma, 99.96 % of the power);
    the truncated tails are renormalised so the fractions sum to one. Each
    bin's wavelength is its energy-weighted mean, so photon fluxes are exact
    for the truncated Gaussian.

    .. math:: w_k = \\frac{\\Phi(b_{k+1}) - \\Phi(b_k)}{\\Phi(b_n) - \\Phi(b_0)}, \\qquad
       \\bar\\lambda_k = \\mu + \\sigma^2 \\frac{\\phi(b_k) - \\phi(b_{k+1})}{\\Phi(b_{k+1}) - \\Phi(b_k)}

    Parameters
    ----------
    centre : float
        Peak wavelength [m].
    fwhm : float
        Full width at half maximum [m].
    n_bands : int
        Number of bins (odd keeps a bin on the centre).

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Band wavelengths [m] and fractions [1].

    References
    ----------
    .. [1] Johnson, Kotz and Balakrishnan, Continuous Univariate Distributions,
       vol. 1, 2nd ed., Wiley 1994, ch. 13 (moments of the truncated normal).
    """
    sigma = fwhm / FWHM_PER_SIGMA
    edges = np.linspace(centre - GAUSSIAN_HALF_SPAN * fwhm, centre + GAUSSIAN_HALF_SPAN * fwhm, n_bands + 1)
    u = (edges - centre) / sigma
    cdf = 0.5 * (1.0 + erf(u / math.sqrt(2.0)))
    pdf = np.exp(-0.5 * u**2) / math.sqrt(2.0 * math.pi)
    mass = np.diff(cdf)
    mean = centre + sigma * (pdf[:-1] - pdf[1:]) / mass
    return mean, mass / mass.sum()


def gaussian_spectrum(*, centre, fwhm, irradiance, points=241):
    """Spectral irradiance of a Gaussian source on a fine grid, over the span of its bands.

    The same source as :func:`gaussian_bands` cuts into bands: the Gaussian
    truncated at centre +- 1.5 FWHM (:data:`GAUSSIAN_HALF_SPAN`), here
    tabulated at ``points`` equally spaced wavelengths and scaled so that the
    piecewise-linear table carries exactly ``irradiance`` (trapezoidal
    integral). Integrated over a band of :func:`gaussian_bands` it gives that
    band's fraction to the accuracy of the grid.

    .. math:: E_\\lambda(\\lambda) = \\frac{E}{Z}
       \\exp\\left(-\\frac{(\\lambda - \\mu)^2}{2\\sigma^2}\\right), \\qquad
       |\\lambda - \\mu| \\le 1.5\\,\\mathrm{FWHM}, \\qquad
       \\sigma = \\frac{\\mathrm{FWHM}}{2\\sqrt{2\\ln 2}}

    with Z the trapezoidal integral of the exponential over the grid.

    Parameters
    ----------
    centre : float
        Peak wavelength [m].
    fwhm : float
        Full width at half maximum, > 0 [m].
    irradiance : float
        Total irradiance of the source, >= 0 [W m-2].
    points : int
        Number of wavelengths, at least 21 (odd keeps the peak on the grid) [1].

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Wavelengths [m], strictly increasing, and spectral irradiance [W m-2 m-1],
        zero outside the span.

    References
    ----------
    .. [1] M. Born and E. Wolf, Principles of Optics, 7th ed., Cambridge
       University Press, 1999 (Gaussian line profile).
    """
    n = max(int(points), 21)
    sigma = fwhm / FWHM_PER_SIGMA
    lam = np.linspace(centre - GAUSSIAN_HALF_SPAN * fwhm, centre + GAUSSIAN_HALF_SPAN * fwhm, n)
    shape = np.exp(-0.5 * ((lam - centre) / sigma) ** 2)
    return lam, shape * (irradiance / np.trapezoid(shape, lam))


def tabulated_bands(*, wavelength, spectral_irradiance, n_bands, field_name="spectrum"):
    """Cut a tabulated spectrum into ``n_bands`` equal-width bins.

    The table is taken as piecewise linear; each bin's fraction and
    energy-weighted mean wavelength are integrated exactly on a fine
    resampling (trapezoid on 64 sub-points per bin, second-order accurate).

    Parameters
    ----------
    wavelength : array_like
        Strictly increasing wavelengths [m].
    spectral_irradiance : array_like
        Relative spectral irradiance (any scale; only the shape is used) [1].
    n_bands : int
        Number of bins.
    field_name : str
        Scenario field named in error messages.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Band wavelengths [m] and fractions [1]; bins with no power are dropped.
    """
    lam = np.asarray(wavelength, float)
    val = np.asarray(spectral_irradiance, float)
    edges = np.linspace(lam[0], lam[-1], n_bands + 1)
    centres, powers = [], []
    for a, b in zip(edges[:-1], edges[1:]):
        sub = np.linspace(a, b, 65)
        e = np.interp(sub, lam, val)
        p = np.trapezoid(e, sub)
        if p > 0:
            centres.append(np.trapezoid(e * sub, sub) / p)
            powers.append(p)
    if not powers:
        raise ActsimInputError(f"{field_name}: the spectrum has no power (all values zero)")
    powers = np.array(powers)
    return np.array(centres), powers / powers.sum()


def read_table_csv(path, *, field_name, value_unit_kind=None):
    """Read a two-column CSV table (wavelength, value) with units in the header.

    The header names the units in brackets, e.g. ``wavelength [nm], epsilon10 [L/(mol*cm)]``.
    Lines starting with ``#`` are comments. Wavelengths must be strictly
    increasing and values non-negative. The file is read by :func:`actsim.tables.read_xy_csv`.

    Parameters
    ----------
    path : str or pathlib.Path
        The file.
    field_name : str
        Scenario field that named the file (for error messages).
    value_unit_kind : str or None
        Physical kind of the value column (a key of :data:`actsim.units.SI_UNITS`:
        ``"molar_absorptivity"``, ``"absorption_coefficient"``), or None for a dimensionless
        column (unit ``[1]``, ``[%]``, ``[relative]``, ``[a.u.]`` or none).

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Wavelengths [m] and values in SI.
    """
    from .tables import read_csv_table, read_xy_csv
    from .units import SI_UNITS

    from .inputfiles import check_data_file

    path = Path(path)
    check_data_file(path, field=field_name, shown=path.name)
    try:
        table = read_csv_table(path)
        if table.units[0] is None:
            raise ActsimInputError(f"'{path.name}' {table.label(0)} gives no unit in its header; write e.g. 'wavelength [nm]'")
        if value_unit_kind is not None and len(table.header) > 1 and table.units[1] is None:
            example = SI_UNITS[value_unit_kind][1].split(" ", 1)[1]
            raise ActsimInputError(f"'{path.name}' {table.label(1)} gives no unit in its header; write e.g. 'value [{example}]'")
        data = read_xy_csv(table, x_kind="wavelength", y_kind=value_unit_kind or "relative")
    except ActsimInputError as exc:
        raise ActsimInputError(f"{field_name}: {exc}") from None
    lam, values = data.x, data.y  # finite: the reader refuses nan and inf, naming the line
    if np.any(np.diff(lam) <= 0):
        i = int(np.argmax(np.diff(lam) <= 0))
        raise ActsimInputError(
            f"{field_name}: '{path.name}' wavelengths must be strictly increasing (row {i + 2} is {lam[i + 1] * 1e9:g} nm after {lam[i] * 1e9:g} nm)"
        )
    if np.any(values < 0) or not np.all(np.isfinite(values)):
        i = int(np.argmax((values < 0) | ~np.isfinite(values)))
        raise ActsimInputError(
            f"{field_name}: '{path.name}' has a negative or non-finite value {values[i]:g} at {lam[i] * 1e9:g} nm (allowed >= 0)"
        )
    return lam, values
