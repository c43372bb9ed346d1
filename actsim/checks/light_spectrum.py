"""The spectrum of the light at an exposure position.

A :class:`Spectrum` holds any number of tabulated continua (wavelength [m],
spectral irradiance [W/m^2/m]) plus discrete lines (wavelength [m], band
irradiance [W/m^2]); the same container holds spectral radiance for the
radiance form of the blue-light check. Sources are built from their one
definition in :mod:`actsim.spectra`: a scenario's light source from its bands
(:func:`spectrum_from_light_source`), a Gaussian band from
:func:`actsim.spectra.gaussian_spectrum` (:func:`gaussian_band`), so the
exposure checks and the simulation cannot disagree on a source.
:func:`exposure_spectrum` scales a spectrum at the strip to the person.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..errors import ActsimInputError
from ..spectra import gaussian_spectrum
from ..units import nonnegative_float

__all__ = [
    "Spectrum",
    "line_spectrum",
    "table_spectrum",
    "gaussian_band",
    "spectrum_from_light_source",
    "as_spectrum",
    "exposure_spectrum",
]

# Wavelength sanity range for inputs [m]: catches values given in nm.
_WL_MIN, _WL_MAX = 1.0e-8, 1.0e-4


def _wavelength_array(x, *, field_name: str) -> np.ndarray:
    try:
        a = np.atleast_1d(np.asarray(x, dtype=float))
    except (TypeError, ValueError):
        raise ActsimInputError(f"{field_name}: {x!r} is not a number or an array of numbers (wavelength in m)") from None
    if a.ndim != 1:
        raise ActsimInputError(f"{field_name}: must be a 1-D array of wavelengths in m, got shape {a.shape}")
    if not np.all(np.isfinite(a)):
        raise ActsimInputError(f"{field_name}: contains a non-finite value; wavelengths in m are required")
    bad = a[(a < _WL_MIN) | (a > _WL_MAX)]
    if bad.size:
        raise ActsimInputError(
            f"{field_name}: {bad[0]:g} m is outside the allowed range (>= {_WL_MIN:g} and <= {_WL_MAX:g} m); "
            f"give wavelengths in m, e.g. 365e-9"
        )
    return a


def _nonneg_array(x, *, field_name: str, unit: str, n: int) -> np.ndarray:
    try:
        a = np.atleast_1d(np.asarray(x, dtype=float))
    except (TypeError, ValueError):
        raise ActsimInputError(f"{field_name}: {x!r} is not a number or an array of numbers ({unit})") from None
    if a.ndim != 1 or a.size != n:
        raise ActsimInputError(f"{field_name}: needs {n} values (one per wavelength), got shape {a.shape}")
    if not np.all(np.isfinite(a)):
        raise ActsimInputError(f"{field_name}: contains a non-finite value ({unit})")
    if np.any(a < 0):
        raise ActsimInputError(f"{field_name}: {a[a < 0][0]:g} {unit} is outside the allowed range (>= 0 {unit})")
    return a


@dataclass(frozen=True, eq=False)
class Spectrum:
    """Spectrum at one position: tabulated continua plus discrete lines.

    Build it with :func:`table_spectrum`, :func:`line_spectrum` or
    :func:`gaussian_band`, combine with ``+`` and scale with :meth:`scaled`.
    The same container can hold spectral radiance [W/(m^2 sr m)] and line
    radiance [W/(m^2 sr)] for the radiance form of the blue-light check.

    Attributes
    ----------
    tables : tuple of (numpy.ndarray, numpy.ndarray)
        Continua, each (wavelength [m] strictly increasing, spectral
        irradiance [W/m^2/m]); linear between points, zero outside.
    line_wavelength : numpy.ndarray
        Wavelengths of discrete lines [m].
    line_irradiance : numpy.ndarray
        Irradiance of each line (band-integrated) [W/m^2].
    """

    tables: tuple = ()
    line_wavelength: np.ndarray = field(default_factory=lambda: np.zeros(0))
    line_irradiance: np.ndarray = field(default_factory=lambda: np.zeros(0))

    def __post_init__(self):
        lw = np.zeros(0) if np.size(self.line_wavelength) == 0 else _wavelength_array(self.line_wavelength, field_name="Spectrum.line_wavelength")
        le = _nonneg_array(self.line_irradiance, field_name="Spectrum.line_irradiance", unit="W/m^2", n=lw.size) if lw.size else np.zeros(0)
        if lw.size == 0 and np.size(self.line_irradiance) != 0:
            raise ActsimInputError("Spectrum.line_irradiance: given without line_wavelength [m]")
        tabs = []
        for i, tab in enumerate(self.tables):
            try:
                wl, e = tab
            except (TypeError, ValueError):
                raise ActsimInputError(f"Spectrum.tables[{i}]: must be a (wavelength [m], spectral_irradiance [W/m^2/m]) pair") from None
            wl = _wavelength_array(wl, field_name=f"Spectrum.tables[{i}].wavelength")
            if wl.size < 2 or np.any(np.diff(wl) <= 0):
                raise ActsimInputError(f"Spectrum.tables[{i}].wavelength: needs at least two strictly increasing wavelengths (m)")
            tabs.append((wl, _nonneg_array(e, field_name=f"Spectrum.tables[{i}].spectral_irradiance", unit="W/m^2/m", n=wl.size)))
        object.__setattr__(self, "line_wavelength", lw)
        object.__setattr__(self, "line_irradiance", le)
        object.__setattr__(self, "tables", tuple(tabs))

    def total_irradiance(self) -> float:
        """Unweighted irradiance, all wavelengths [W/m^2]."""
        tot = float(np.sum(self.line_irradiance))
        for wl, e in self.tables:
            tot += float(np.trapezoid(e, wl))
        return tot

    def scaled(self, factor: float) -> "Spectrum":
        """The same spectrum multiplied by ``factor`` [-]."""
        f = float(factor)
        return Spectrum(
            tables=tuple((wl, e * f) for wl, e in self.tables),
            line_wavelength=self.line_wavelength,
            line_irradiance=self.line_irradiance * f,
        )

    def __add__(self, other: "Spectrum") -> "Spectrum":
        if not isinstance(other, Spectrum):
            return NotImplemented
        return Spectrum(
            tables=self.tables + other.tables,
            line_wavelength=np.concatenate([self.line_wavelength, other.line_wavelength]),
            line_irradiance=np.concatenate([self.line_irradiance, other.line_irradiance]),
        )


def line_spectrum(*, wavelength, irradiance) -> Spectrum:
    """Discrete lines (narrow bands) with their band irradiances.

    Parameters
    ----------
    wavelength : float or array_like
        Line wavelengths [m].
    irradiance : float or array_like
        Irradiance of each line at the exposure position [W/m^2].

    Returns
    -------
    Spectrum
    """
    wl = _wavelength_array(wavelength, field_name="line_spectrum.wavelength")
    e = _nonneg_array(irradiance, field_name="line_spectrum.irradiance", unit="W/m^2", n=wl.size)
    return Spectrum(line_wavelength=wl, line_irradiance=e)


def spectrum_from_light_source(source, *, irradiance: float | None = None) -> Spectrum:
    """Lines from a light source already cut into bands (band wavelengths and fractions).

    Parameters
    ----------
    source : object
        Anything with ``band_wavelength`` [m], ``band_fraction`` [-] and
        ``irradiance`` [W/m^2] attributes, such as :class:`actsim.spectra.LightSource`.
    irradiance : float, optional
        Irradiance to use instead of ``source.irradiance`` [W/m^2].

    Returns
    -------
    Spectrum
        One line per band at the band's mean wavelength.

    Notes
    -----
    Bands stand in for the spectrum at their energy-weighted mean wavelength.
    Where the weighting is steep (S(lambda) falls 50-fold from 300 to 313 nm)
    wide bands misplace weight; prefer :func:`gaussian_band` or
    :func:`table_spectrum` when the spectral shape is known.

    .. math::

        E_k = w_k E

    References
    ----------
    .. [1] IEC 62471:2006, §4.3 (spectral weighting of sources; from memory).
    """
    try:
        wl = np.asarray(source.band_wavelength, dtype=float)
        frac = np.asarray(source.band_fraction, dtype=float)
        e = float(source.irradiance if irradiance is None else irradiance)
    except (AttributeError, TypeError, ValueError):
        raise ActsimInputError("spectrum_from_light_source: source needs band_wavelength [m], band_fraction [-] and irradiance [W/m^2]") from None
    return line_spectrum(wavelength=wl, irradiance=frac * e)


def table_spectrum(*, wavelength, spectral_irradiance) -> Spectrum:
    """A tabulated continuous spectrum, linear between points and zero outside.

    Parameters
    ----------
    wavelength : array_like
        Wavelengths, strictly increasing, at least two [m].
    spectral_irradiance : array_like
        Spectral irradiance at those wavelengths [W/m^2/m] (1 W/m^2/nm = 1e9 W/m^2/m).

    Returns
    -------
    Spectrum
    """
    wl = _wavelength_array(wavelength, field_name="table_spectrum.wavelength")
    if wl.size < 2 or np.any(np.diff(wl) <= 0):
        raise ActsimInputError("table_spectrum.wavelength: needs at least two strictly increasing wavelengths (m)")
    e = _nonneg_array(spectral_irradiance, field_name="table_spectrum.spectral_irradiance", unit="W/m^2/m", n=wl.size)
    return Spectrum(tables=((wl, e),))


def gaussian_band(*, centre, fwhm, irradiance, points: int = 241) -> Spectrum:
    """A Gaussian band (e.g. an LED) of given centre, FWHM and total irradiance.

    The same source as a scenario's ``kind = "gaussian"`` light source: the
    spectrum of :func:`actsim.spectra.gaussian_spectrum`, i.e. the Gaussian
    truncated at centre +/- 1.5 FWHM (the span :func:`actsim.spectra.gaussian_bands`
    cuts into bands), scaled so that its trapezoidal integral equals
    ``irradiance`` exactly.

    Parameters
    ----------
    centre : float
        Peak wavelength [m].
    fwhm : float
        Full width at half maximum, > 0 and <= centre/4 [m].
    irradiance : float
        Total irradiance of the band, >= 0 [W/m^2].
    points : int
        Number of tabulated wavelengths (odd keeps the peak on the grid).

    Returns
    -------
    Spectrum

    Notes
    -----
    .. math::

        E_\\lambda(\\lambda) \\propto
        \\exp\\left(-\\frac{(\\lambda - \\lambda_c)^2}{2\\sigma^2}\\right),
        \\quad |\\lambda - \\lambda_c| \\le 1.5\\,\\mathrm{FWHM},
        \\qquad \\sigma = \\frac{\\mathrm{FWHM}}{2\\sqrt{2\\ln 2}}

    References
    ----------
    .. [1] M. Born and E. Wolf, Principles of Optics, 7th ed., Cambridge
       University Press, 1999 (Gaussian line profile).
    """
    c = float(_wavelength_array(centre, field_name="gaussian_band.centre")[0])
    try:
        w = float(fwhm)
        e_tot = float(irradiance)
    except (TypeError, ValueError):
        raise ActsimInputError("gaussian_band: fwhm [m] and irradiance [W/m^2] must be numbers") from None
    if not (math.isfinite(w) and 0 < w <= c / 4):
        raise ActsimInputError(f"gaussian_band.fwhm: {w:g} m is outside the allowed range (> 0 and <= centre/4 = {c / 4:g} m)")
    if not (math.isfinite(e_tot) and e_tot >= 0):
        raise ActsimInputError(f"gaussian_band.irradiance: {e_tot:g} W/m^2 is outside the allowed range (>= 0 W/m^2)")
    wl, spec = gaussian_spectrum(centre=c, fwhm=w, irradiance=e_tot, points=points)
    return Spectrum(tables=((wl, spec),))


def as_spectrum(spectrum=None, wavelength=None, spectral_irradiance=None, band_irradiance=None, *, where: str) -> Spectrum:
    """A :class:`Spectrum` from either a Spectrum or arrays (continuous or lines).

    Parameters
    ----------
    spectrum : Spectrum, optional
        Returned as is.
    wavelength : array_like, optional
        Wavelengths [m].
    spectral_irradiance : array_like, optional
        Continuous spectrum at ``wavelength`` [W/m^2/m].
    band_irradiance : array_like, optional
        Line irradiances at ``wavelength`` [W/m^2].
    where : str
        Caller named in error messages.

    Returns
    -------
    Spectrum
    """
    given = [spectral_irradiance is not None, band_irradiance is not None]
    if spectrum is not None:
        if any(given) or wavelength is not None:
            raise ActsimInputError(f"{where}: give either a Spectrum or wavelength with spectral_irradiance/band_irradiance, not both")
        if not isinstance(spectrum, Spectrum):
            raise ActsimInputError(f"{where}: spectrum must be an actsim Spectrum, got {type(spectrum).__name__}")
        return spectrum
    if wavelength is None or sum(given) != 1:
        raise ActsimInputError(
            f"{where}: give wavelength [m] with exactly one of spectral_irradiance [W/m^2/m] (continuous) "
            f"or band_irradiance [W/m^2] (lines)"
        )
    if spectral_irradiance is not None:
        return table_spectrum(wavelength=wavelength, spectral_irradiance=spectral_irradiance)
    return line_spectrum(wavelength=wavelength, irradiance=band_irradiance)


def exposure_spectrum(spectrum: Spectrum, *, distance_factor: float | None = None, exposure_irradiance: float | None = None):
    """The spectrum at the person, from the spectrum at the strip.

    Parameters
    ----------
    spectrum : Spectrum
        Spectrum at the strip [W/m^2/m and W/m^2].
    distance_factor : float, optional
        Irradiance at the person divided by irradiance at the strip, in (0, 1]
        [-]. A person cannot receive more than the source delivers at the strip
        this way; if they are nearer the lamp, give ``exposure_irradiance``.
    exposure_irradiance : float, optional
        Total irradiance at the person, > 0 [W/m^2]; the spectral shape is kept.

    Returns
    -------
    Spectrum
        Scaled spectrum. With neither argument the person is taken to be at the
        strip (factor 1, the conservative case).

    Notes
    -----
    .. math::

        E_{\\lambda,\\mathrm{person}} = f\\, E_{\\lambda,\\mathrm{strip}}, \\qquad
        f = \\frac{E_\\mathrm{person}}{\\int E_{\\lambda,\\mathrm{strip}}\\, d\\lambda}

    References
    ----------
    .. [1] IEC 62471:2006, §5.1 (measurement at the exposure distance; from memory).
    """
    if not isinstance(spectrum, Spectrum):
        raise ActsimInputError(f"exposure_spectrum: spectrum must be an actsim Spectrum, got {type(spectrum).__name__}")
    if distance_factor is not None and exposure_irradiance is not None:
        raise ActsimInputError("exposure: give either distance_factor [-] or exposure_irradiance [W/m^2], not both")
    if exposure_irradiance is not None:
        e = nonnegative_float(exposure_irradiance, field_name="exposure_irradiance", unit="W/m^2")
        if e == 0:
            raise ActsimInputError("exposure_irradiance: 0 W/m^2 is outside the allowed range (> 0 W/m^2)")
        tot = spectrum.total_irradiance()
        if tot <= 0:
            raise ActsimInputError("exposure_irradiance: the source spectrum has zero irradiance, so it cannot be scaled")
        return spectrum.scaled(e / tot)
    if distance_factor is None:
        return spectrum
    try:
        f = float(distance_factor)
    except (TypeError, ValueError):
        raise ActsimInputError(f"distance_factor: {distance_factor!r} is not a number (dimensionless, in (0, 1])") from None
    if not (math.isfinite(f) and 0 < f <= 1):
        raise ActsimInputError(
            f"distance_factor: {f:g} is outside the allowed range (> 0 and <= 1): an exposure position cannot receive "
            f"more than the source delivers at the strip; give exposure_irradiance [W/m^2] explicitly instead"
        )
    return spectrum.scaled(f)
