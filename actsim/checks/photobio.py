"""Photobiological hazards of the light at an exposure position.

Three hazards of incoherent optical radiation are modelled, each with the
weighting function, exposure limit and risk-group times of the published
guidelines:

* actinic UV (eye and skin), 200-400 nm, weighted with S(lambda):
  30 J/m^2 effective in a day (8 h);
* unweighted UV-A (eye lens), 315-400 nm: 10 kJ/m^2 for exposures up to
  1000 s, 10 W/m^2 for longer ones;
* blue light (retina, photochemical), 300-700 nm, weighted with B(lambda):
  for small sources (< 0.011 rad) 100 J/m^2 up to 100 s and 1 W/m^2 beyond;
  in radiance form 1e6 J/(m^2 sr) up to 1e4 s and 100 W/(m^2 sr) beyond.

A spectrum at the exposure position is a :class:`Spectrum`: any number of
tabulated continua (wavelength [m], spectral irradiance [W/m^2/m]) plus
discrete lines (wavelength [m], band irradiance [W/m^2]). Gaussian LED bands
are built with :func:`gaussian_band`.

Not modelled: the retinal thermal hazard, infrared hazards to cornea and lens,
the skin thermal hazard, and 180-200 nm (not entered in the S(lambda) table).
Irradiance outside every modelled range is reported as "not assessed", never
silently counted as zero.

All weighting values, limits and risk-group times here were entered from
memory of the cited documents; check them against the published texts.
"""

from __future__ import annotations

import csv
import dataclasses
import math
import warnings
from dataclasses import dataclass, field
from functools import lru_cache
from importlib import resources

import numpy as np

from ..cautions import caution_lines
from ..errors import ActsimInputError, ActsimWarning
from .verdict import CheckResult, format_table

__all__ = [
    "Spectrum",
    "WeightingFunction",
    "line_spectrum",
    "table_spectrum",
    "spectrum_from_light_source",
    "gaussian_band",
    "actinic_weighting",
    "blue_light_weighting",
    "actinic_uv_function",
    "blue_light_function",
    "effective_actinic_irradiance",
    "uva_irradiance",
    "blue_light_weighted",
    "actinic_permissible_time",
    "uva_permissible_time",
    "blue_light_permissible_time",
    "risk_group",
    "worst_risk_group",
    "exposure_spectrum",
    "protocol_dose",
    "protocol_check",
    "photobio_check",
    "format_photobio",
    "ACTINIC_DAILY_LIMIT",
    "ACTINIC_DAY",
    "UVA_DOSE_LIMIT",
    "UVA_WINDOW",
    "UVA_IRRADIANCE_LIMIT",
    "BLUE_DOSE_LIMIT",
    "BLUE_WINDOW",
    "BLUE_IRRADIANCE_LIMIT",
    "BLUE_RADIANCE_DOSE_LIMIT",
    "BLUE_RADIANCE_WINDOW",
    "BLUE_RADIANCE_LIMIT",
    "RISK_GROUP_TIMES",
    "RISK_GROUPS",
]

# ---------------------------------------------------------------------------
# Limits (all from memory of the cited texts)

#: Actinic UV: effective radiant exposure limit for one day [J/m^2]
#: (ICNIRP 2004; IEC 62471:2006 §4.3.1; from memory).
ACTINIC_DAILY_LIMIT = 30.0
#: Period over which the actinic limit applies: 8 h [s] (ICNIRP 2004; from memory).
ACTINIC_DAY = 8.0 * 3600.0
#: UV-A radiant exposure limit for exposures up to :data:`UVA_WINDOW` [J/m^2]
#: (ICNIRP 2004; IEC 62471:2006 §4.3.2; from memory).
UVA_DOSE_LIMIT = 1.0e4
#: UV-A: longest exposure to which the dose form applies [s] (from memory).
UVA_WINDOW = 1000.0
#: UV-A irradiance limit for longer exposures [W/m^2] (from memory).
UVA_IRRADIANCE_LIMIT = 10.0
#: Blue light, small source, irradiance form: dose limit up to :data:`BLUE_WINDOW` [J/m^2]
#: (ICNIRP 2013; IEC 62471:2006 §4.3.4; from memory).
BLUE_DOSE_LIMIT = 100.0
#: Blue light, small source: longest exposure of the dose form [s] (from memory).
BLUE_WINDOW = 100.0
#: Blue light, small source: irradiance limit for longer exposures [W/m^2] (from memory).
BLUE_IRRADIANCE_LIMIT = 1.0
#: Blue light, radiance form: dose limit up to :data:`BLUE_RADIANCE_WINDOW` [J/(m^2 sr)]
#: (ICNIRP 2013; IEC 62471:2006 §4.3.3; from memory).
BLUE_RADIANCE_DOSE_LIMIT = 1.0e6
#: Blue light, radiance form: longest exposure of the dose form [s] (from memory).
BLUE_RADIANCE_WINDOW = 1.0e4
#: Blue light, radiance form: radiance limit for longer exposures [W/(m^2 sr)] (from memory).
BLUE_RADIANCE_LIMIT = 100.0

#: Risk groups in order of increasing hazard (IEC 62471:2006 §6).
RISK_GROUPS = ("Exempt", "RG1", "RG2", "RG3")
#: Shortest permissible exposure time [s] for Exempt, RG1 and RG2, per hazard
#: (IEC 62471:2006 §6.1, Table 6.1; from memory). Below the RG2 time: RG3.
RISK_GROUP_TIMES = {
    "actinic_uv": (30000.0, 10000.0, 1000.0),
    "uva": (1000.0, 300.0, 100.0),
    "blue_light": (10000.0, 100.0, 0.25),
    "blue_light_radiance": (10000.0, 100.0, 0.25),
}

_SRC_UV = "ICNIRP 2004 / IEC 62471"
_SRC_BLUE = "ICNIRP 2013 / IEC 62471"
_NOT_MODELLED = (
    "retinal thermal, infrared (cornea, lens) and skin thermal hazards are not modelled"
)

# Wavelength sanity range for inputs [m]: catches values given in nm.
_WL_MIN, _WL_MAX = 1.0e-8, 1.0e-4


# ---------------------------------------------------------------------------
# Weighting functions as data


@dataclass(frozen=True, eq=False)
class WeightingFunction:
    """A tabulated hazard weighting function with its source.

    Attributes
    ----------
    name : str
        Short name, e.g. ``"S(lambda)"``.
    wavelength : numpy.ndarray
        Tabulated wavelengths, strictly increasing [m].
    value : numpy.ndarray
        Relative spectral effectiveness at those wavelengths, > 0 [-].
    source : str
        Published source of the table.
    origin : tuple of str
        Per-row origin ("from memory", or the formula used).
    """

    name: str
    wavelength: np.ndarray
    value: np.ndarray
    source: str
    origin: tuple

    @property
    def lo(self) -> float:
        """Shortest tabulated wavelength [m]."""
        return float(self.wavelength[0])

    @property
    def hi(self) -> float:
        """Longest tabulated wavelength [m]."""
        return float(self.wavelength[-1])

    def __call__(self, wavelength):
        """Weighting at ``wavelength`` [m], log-linear between tabulated points.

        .. math::

            \\log_{10} W(\\lambda) = \\log_{10} W_i + \\frac{\\lambda - \\lambda_i}
            {\\lambda_{i+1} - \\lambda_i} \\left(\\log_{10} W_{i+1} - \\log_{10} W_i\\right)

        Raises :class:`~actsim.errors.ActsimInputError` outside the table.
        """
        wl = np.asarray(wavelength, dtype=float)
        if not np.all(np.isfinite(wl)):
            raise ActsimInputError(f"{self.name}: wavelength must be finite (in m, e.g. 365e-9)")
        tol = 1e-12 * self.hi
        if np.any(wl < self.lo - tol) or np.any(wl > self.hi + tol):
            bad = wl[(wl < self.lo - tol) | (wl > self.hi + tol)].ravel()[0]
            raise ActsimInputError(
                f"{self.name}: wavelength {bad:.6g} m is outside the tabulated range "
                f"({self.lo:.4g} to {self.hi:.4g} m, i.e. {self.lo * 1e9:g}-{self.hi * 1e9:g} nm)"
            )
        return self._eval(wl)

    def _eval(self, wl):
        # no range check; callers have clipped to [lo, hi]
        return np.power(10.0, np.interp(wl, self.wavelength, np.log10(self.value)))


def _load_weighting(filename: str, column: str, name: str, source: str) -> WeightingFunction:
    path = resources.files("actsim").joinpath("data", filename)
    text = path.read_text(encoding="utf-8")
    rows = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    reader = csv.DictReader(rows)
    wl, val, origin = [], [], []
    for r in reader:
        wl.append(float(r["wavelength_nm"]) * 1e-9)
        val.append(float(r[column]))
        origin.append(r.get("origin", ""))
    wl, val = np.asarray(wl), np.asarray(val)
    if wl.size < 2 or np.any(np.diff(wl) <= 0) or np.any(val <= 0):
        raise ActsimInputError(f"data file {filename}: wavelengths must increase and values must be > 0")
    return WeightingFunction(name=name, wavelength=wl, value=val, source=source, origin=tuple(origin))


@lru_cache(maxsize=None)
def actinic_uv_function() -> WeightingFunction:
    """The actinic UV hazard weighting S(lambda), 200-400 nm, from the packaged table.

    References
    ----------
    .. [1] ICNIRP, "Guidelines on limits of exposure to ultraviolet radiation of
       wavelengths between 180 nm and 400 nm (incoherent optical radiation)",
       Health Physics 87(2), 171-186, 2004.
    .. [2] IEC 62471:2006, "Photobiological safety of lamps and lamp systems",
       Table 4.1.
    """
    return _load_weighting(
        "actinic_uv_hazard_s.csv",
        "S",
        "S(lambda)",
        "ICNIRP 2004, Health Physics 87:171-186; IEC 62471:2006 Table 4.1 (values from memory)",
    )


@lru_cache(maxsize=None)
def blue_light_function() -> WeightingFunction:
    """The blue-light hazard weighting B(lambda), 300-700 nm, from the packaged table.

    References
    ----------
    .. [1] ICNIRP, "ICNIRP guidelines on limits of exposure to incoherent
       visible and infrared radiation", Health Physics 105(1), 74-96, 2013.
    .. [2] IEC 62471:2006, "Photobiological safety of lamps and lamp systems",
       Table 4.2.
    """
    return _load_weighting(
        "blue_light_hazard_b.csv",
        "B",
        "B(lambda)",
        "ICNIRP 2013, Health Physics 105:74-96; IEC 62471:2006 Table 4.2 (values from memory)",
    )


def actinic_weighting(wavelength):
    """Actinic UV hazard weighting S(lambda), log-linear between tabulated points.

    Parameters
    ----------
    wavelength : float or array_like
        Wavelength, 200e-9 to 400e-9 [m].

    Returns
    -------
    float or numpy.ndarray
        Relative spectral effectiveness, 1.0 at 270 nm [-].

    Notes
    -----
    .. math::

        \\log_{10} S(\\lambda) \\text{ linear in } \\lambda
        \\text{ between tabulated } \\lambda_i

    References
    ----------
    .. [1] ICNIRP, "Guidelines on limits of exposure to ultraviolet radiation of
       wavelengths between 180 nm and 400 nm", Health Physics 87, 171-186, 2004.
    """
    out = actinic_uv_function()(wavelength)
    return float(out) if np.ndim(out) == 0 else out


def blue_light_weighting(wavelength):
    """Blue-light hazard weighting B(lambda), log-linear between tabulated points.

    Parameters
    ----------
    wavelength : float or array_like
        Wavelength, 300e-9 to 700e-9 [m].

    Returns
    -------
    float or numpy.ndarray
        Relative spectral effectiveness, 1.0 at 435-440 nm [-].

    Notes
    -----
    .. math::

        B(\\lambda) = 10^{(450 - \\lambda/\\mathrm{nm})/50}, \\quad 500 \\le \\lambda \\le 600\\ \\mathrm{nm}

    References
    ----------
    .. [1] ICNIRP, "ICNIRP guidelines on limits of exposure to incoherent
       visible and infrared radiation", Health Physics 105, 74-96, 2013.
    """
    out = blue_light_function()(wavelength)
    return float(out) if np.ndim(out) == 0 else out


# ---------------------------------------------------------------------------
# Spectra at the exposure position


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

    The band is tabulated over centre +/- 3 FWHM (the Gaussian there is
    1.5e-11 of its peak) and scaled so that its trapezoidal integral equals
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

        E_\\lambda(\\lambda) = \\frac{E}{\\sigma\\sqrt{2\\pi}}
        \\exp\\left(-\\frac{(\\lambda - \\lambda_c)^2}{2\\sigma^2}\\right),
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
    n = max(int(points), 21)
    sigma = w / (2.0 * math.sqrt(2.0 * math.log(2.0)))
    wl = np.linspace(c - 3 * w, c + 3 * w, n)
    shape = np.exp(-0.5 * ((wl - c) / sigma) ** 2)
    spec = shape * (e_tot / np.trapezoid(shape, wl))
    return Spectrum(tables=((wl, spec),))


def _resolve_spectrum(spectrum, wavelength, spectral_irradiance, band_irradiance, *, where: str) -> Spectrum:
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


# ---------------------------------------------------------------------------
# Weighted integrals

_FINE_STEP = 0.05e-9  # integration sub-step [m]


@dataclass(frozen=True)
class _Weighted:
    value: float  # weighted (or band) integral inside [lo, hi]
    below: float  # unweighted irradiance below lo
    above: float  # unweighted irradiance above hi
    total: float


def _integral_pw_linear(wl, e, a, b) -> float:
    """Exact integral of the piecewise-linear (zero outside) table over [a, b]."""
    a = max(a, wl[0])
    b = min(b, wl[-1])
    if b <= a:
        return 0.0
    inner = wl[(wl > a) & (wl < b)]
    grid = np.concatenate([[a], inner, [b]])
    return float(np.trapezoid(np.interp(grid, wl, e), grid))


def _weighted(spectrum: Spectrum, lo: float, hi: float, weight) -> _Weighted:
    """Integrate ``spectrum`` times ``weight`` (None: unweighted) over [lo, hi]."""
    value = below = above = 0.0
    total = 0.0
    wfun = weight
    for wl, e in spectrum.tables:
        tot = float(np.trapezoid(e, wl))
        total += tot
        inside_unw = _integral_pw_linear(wl, e, lo, hi)
        b_part = _integral_pw_linear(wl, e, -np.inf, lo)
        below += b_part
        above += max(tot - inside_unw - b_part, 0.0)
        a, b = max(lo, wl[0]), min(hi, wl[-1])
        if b <= a:
            continue
        if wfun is None:
            value += inside_unw
            continue
        n = int(math.ceil((b - a) / _FINE_STEP)) + 1
        nodes = [np.linspace(a, b, n), wl[(wl > a) & (wl < b)], wfun.wavelength[(wfun.wavelength > a) & (wfun.wavelength < b)]]
        grid = np.unique(np.concatenate(nodes))
        value += float(np.trapezoid(np.interp(grid, wl, e) * wfun._eval(grid), grid))
    lw, le = spectrum.line_wavelength, spectrum.line_irradiance
    if lw.size:
        total += float(np.sum(le))
        # band ends inclusive, to round-off (400 * 1e-9 != 400e-9 in binary)
        lo_t, hi_t = lo * (1 - 1e-12), hi * (1 + 1e-12)
        inside = (lw >= lo_t) & (lw <= hi_t)
        below += float(np.sum(le[lw < lo_t]))
        above += float(np.sum(le[lw > hi_t]))
        if np.any(inside):
            w = 1.0 if wfun is None else wfun._eval(lw[inside])
            value += float(np.sum(le[inside] * w))
    return _Weighted(value=value, below=below, above=above, total=total)


def _outside_message(name: str, res: _Weighted, lo: float, hi: float, unit: str) -> str:
    parts = []
    if res.below > 0:
        parts.append(f"{res.below:.3g} {unit} below {lo * 1e9:g} nm")
    if res.above > 0:
        parts.append(f"{res.above:.3g} {unit} above {hi * 1e9:g} nm")
    return (
        f"{name}: {' and '.join(parts)} (of {res.total:.3g} {unit} in total) lie outside "
        f"{lo * 1e9:g}-{hi * 1e9:g} nm and are not assessed by this weighting"
    )


def _maybe_warn(name, res: _Weighted, lo, hi, unit, out_of_range: str):
    if out_of_range not in ("warn", "ignore", "raise"):
        raise ActsimInputError(f"out_of_range: {out_of_range!r} is not one of 'warn', 'ignore', 'raise'")
    tiny = 1e-12 * max(res.total, 0.0)
    if out_of_range == "ignore" or (res.below <= tiny and res.above <= tiny):
        return
    msg = _outside_message(name, res, lo, hi, unit)
    if out_of_range == "raise":
        raise ActsimInputError(msg)
    warnings.warn(msg, ActsimWarning, stacklevel=3)


def effective_actinic_irradiance(
    spectrum=None, *, wavelength=None, spectral_irradiance=None, band_irradiance=None, out_of_range="warn"
) -> float:
    """Actinic-UV effective irradiance E_s, weighted with S(lambda) over 200-400 nm.

    Parameters
    ----------
    spectrum : Spectrum, optional
        The spectrum at the exposure position; or give the arrays below.
    wavelength : array_like, optional
        Wavelengths [m].
    spectral_irradiance : array_like, optional
        Continuous spectrum at ``wavelength`` [W/m^2/m].
    band_irradiance : array_like, optional
        Line (band-integrated) irradiances at ``wavelength`` [W/m^2].
    out_of_range : {"warn", "ignore", "raise"}
        What to do when part of the irradiance lies outside 200-400 nm: an
        :class:`~actsim.errors.ActsimWarning` naming that part (default),
        nothing, or an :class:`~actsim.errors.ActsimInputError`.

    Returns
    -------
    float
        Effective irradiance E_s [W/m^2].

    Notes
    -----
    Continuous spectra are linear between their points; S is log-linear
    between its tabulated points; the product is integrated on a 0.05 nm grid
    that contains every node of both. Lines contribute :math:`E_i S(\\lambda_i)`.

    .. math::

        E_s = \\int_{200\\,\\mathrm{nm}}^{400\\,\\mathrm{nm}} E_\\lambda S(\\lambda)\\, d\\lambda
        + \\sum_i E_i S(\\lambda_i)

    References
    ----------
    .. [1] ICNIRP, "Guidelines on limits of exposure to ultraviolet radiation of
       wavelengths between 180 nm and 400 nm", Health Physics 87, 171-186, 2004.
    .. [2] IEC 62471:2006, "Photobiological safety of lamps and lamp systems", §4.3.1.
    """
    s = _resolve_spectrum(spectrum, wavelength, spectral_irradiance, band_irradiance, where="effective_actinic_irradiance")
    f = actinic_uv_function()
    res = _weighted(s, f.lo, f.hi, f)
    _maybe_warn("actinic UV S(lambda)", res, f.lo, f.hi, "W/m^2", out_of_range)
    return res.value


def uva_irradiance(spectrum=None, *, wavelength=None, spectral_irradiance=None, band_irradiance=None) -> float:
    """Unweighted UV-A irradiance over 315-400 nm (lines at either end included).

    Parameters
    ----------
    spectrum : Spectrum, optional
        The spectrum at the exposure position; or give the arrays below.
    wavelength : array_like, optional
        Wavelengths [m].
    spectral_irradiance : array_like, optional
        Continuous spectrum [W/m^2/m].
    band_irradiance : array_like, optional
        Line irradiances [W/m^2].

    Returns
    -------
    float
        E_UVA [W/m^2].

    Notes
    -----
    UV-A is a band definition, not a tabulated weighting, so irradiance outside
    315-400 nm is simply not UV-A (it is covered by the other hazards).

    .. math::

        E_\\mathrm{UVA} = \\int_{315\\,\\mathrm{nm}}^{400\\,\\mathrm{nm}} E_\\lambda\\, d\\lambda

    References
    ----------
    .. [1] IEC 62471:2006, "Photobiological safety of lamps and lamp systems", §4.3.2.
    """
    s = _resolve_spectrum(spectrum, wavelength, spectral_irradiance, band_irradiance, where="uva_irradiance")
    return _weighted(s, 315e-9, 400e-9, None).value


def blue_light_weighted(
    spectrum=None, *, wavelength=None, spectral_irradiance=None, band_irradiance=None, out_of_range="warn"
) -> float:
    """Blue-light weighted irradiance E_B (or radiance L_B), weighted with B(lambda) over 300-700 nm.

    The integral is linear, so a spectral radiance [W/(m^2 sr m)] in gives the
    weighted radiance L_B [W/(m^2 sr)] out.

    Parameters
    ----------
    spectrum : Spectrum, optional
        The spectrum at the eye; or give the arrays below.
    wavelength : array_like, optional
        Wavelengths [m].
    spectral_irradiance : array_like, optional
        Continuous spectrum [W/m^2/m] (or spectral radiance [W/(m^2 sr m)]).
    band_irradiance : array_like, optional
        Line irradiances [W/m^2] (or line radiances [W/(m^2 sr)]).
    out_of_range : {"warn", "ignore", "raise"}
        Handling of irradiance outside 300-700 nm, as in
        :func:`effective_actinic_irradiance`.

    Returns
    -------
    float
        E_B [W/m^2] (or L_B [W/(m^2 sr)]).

    Notes
    -----
    .. math::

        E_B = \\int_{300\\,\\mathrm{nm}}^{700\\,\\mathrm{nm}} E_\\lambda B(\\lambda)\\, d\\lambda

    References
    ----------
    .. [1] ICNIRP, "ICNIRP guidelines on limits of exposure to incoherent
       visible and infrared radiation", Health Physics 105, 74-96, 2013.
    .. [2] IEC 62471:2006, "Photobiological safety of lamps and lamp systems", §4.3.3-4.3.4.
    """
    s = _resolve_spectrum(spectrum, wavelength, spectral_irradiance, band_irradiance, where="blue_light_weighted")
    f = blue_light_function()
    res = _weighted(s, f.lo, f.hi, f)
    _maybe_warn("blue light B(lambda)", res, f.lo, f.hi, "W/m^2", out_of_range)
    return res.value


# ---------------------------------------------------------------------------
# Permissible exposure times and risk groups


def _nonneg_float(x, *, field_name: str, unit: str) -> float:
    try:
        v = float(x)
    except (TypeError, ValueError):
        raise ActsimInputError(f"{field_name}: {x!r} is not a number ({unit})") from None
    if not math.isfinite(v) or v < 0:
        raise ActsimInputError(f"{field_name}: {v:g} {unit} is outside the allowed range (>= 0 and finite)")
    return v


def actinic_permissible_time(*, effective_irradiance: float) -> float:
    """Permissible daily exposure time for the actinic UV hazard.

    Parameters
    ----------
    effective_irradiance : float
        E_s, S(lambda)-weighted irradiance [W/m^2].

    Returns
    -------
    float
        t_max [s]; ``inf`` for E_s = 0. A value above 8 h (28800 s) means the
        limit is not reached within one day.

    Notes
    -----
    .. math::

        t_\\max = \\frac{30\\ \\mathrm{J\\,m^{-2}}}{E_s}

    References
    ----------
    .. [1] ICNIRP, Health Physics 87, 171-186, 2004 (limit from memory).
    .. [2] IEC 62471:2006, §4.3.1 (from memory).
    """
    e = _nonneg_float(effective_irradiance, field_name="effective_irradiance", unit="W/m^2")
    return math.inf if e == 0 else ACTINIC_DAILY_LIMIT / e


def uva_permissible_time(*, uva_irradiance: float) -> float:
    """Permissible exposure time for the UV-A (eye lens) hazard.

    Parameters
    ----------
    uva_irradiance : float
        Unweighted E_UVA, 315-400 nm [W/m^2].

    Returns
    -------
    float
        t_max [s]: 1e4 J/m^2 / E_UVA when E_UVA > 10 W/m^2 (so t_max < 1000 s),
        otherwise ``inf`` (the irradiance form governs and is met).

    Notes
    -----
    .. math::

        E_\\mathrm{UVA}\\, t \\le 10^4\\ \\mathrm{J\\,m^{-2}}\\ (t \\le 1000\\ \\mathrm{s}), \\qquad
        E_\\mathrm{UVA} \\le 10\\ \\mathrm{W\\,m^{-2}}\\ (t > 1000\\ \\mathrm{s})

    References
    ----------
    .. [1] IEC 62471:2006, §4.3.2 (from memory).
    .. [2] ICNIRP, Health Physics 87, 171-186, 2004 (from memory).
    """
    e = _nonneg_float(uva_irradiance, field_name="uva_irradiance", unit="W/m^2")
    return math.inf if e <= UVA_IRRADIANCE_LIMIT else UVA_DOSE_LIMIT / e


def blue_light_permissible_time(*, weighted_irradiance: float | None = None, weighted_radiance: float | None = None) -> float:
    """Permissible exposure time for the retinal blue-light hazard.

    Give exactly one of the two forms.

    Parameters
    ----------
    weighted_irradiance : float, optional
        E_B at the eye, small sources (< 0.011 rad) only [W/m^2].
    weighted_radiance : float, optional
        L_B of the source [W/(m^2 sr)].

    Returns
    -------
    float
        t_max [s]; ``inf`` when the long-exposure form (1 W/m^2, or
        100 W/(m^2 sr)) is met.

    Notes
    -----
    .. math::

        E_B t \\le 100\\ \\mathrm{J\\,m^{-2}}\\ (t \\le 100\\ \\mathrm{s}),\\quad E_B \\le 1\\ \\mathrm{W\\,m^{-2}}\\ (t > 100\\ \\mathrm{s})

        L_B t \\le 10^6\\ \\mathrm{J\\,m^{-2}\\,sr^{-1}}\\ (t \\le 10^4\\ \\mathrm{s}),\\quad
        L_B \\le 100\\ \\mathrm{W\\,m^{-2}\\,sr^{-1}}\\ (t > 10^4\\ \\mathrm{s})

    References
    ----------
    .. [1] IEC 62471:2006, §4.3.3 and §4.3.4 (from memory).
    .. [2] ICNIRP, Health Physics 105, 74-96, 2013 (from memory).
    """
    if (weighted_irradiance is None) == (weighted_radiance is None):
        raise ActsimInputError("blue_light_permissible_time: give exactly one of weighted_irradiance [W/m^2] or weighted_radiance [W/(m^2 sr)]")
    if weighted_irradiance is not None:
        e = _nonneg_float(weighted_irradiance, field_name="weighted_irradiance", unit="W/m^2")
        return math.inf if e <= BLUE_IRRADIANCE_LIMIT else BLUE_DOSE_LIMIT / e
    lb = _nonneg_float(weighted_radiance, field_name="weighted_radiance", unit="W/(m^2 sr)")
    return math.inf if lb <= BLUE_RADIANCE_LIMIT else BLUE_RADIANCE_DOSE_LIMIT / lb


def risk_group(*, hazard: str, permissible_time: float) -> str:
    """IEC 62471 risk group of one hazard from its permissible exposure time.

    Parameters
    ----------
    hazard : str
        ``"actinic_uv"``, ``"uva"``, ``"blue_light"`` (small source, irradiance
        form) or ``"blue_light_radiance"``.
    permissible_time : float
        t_max for the exposure in question [s] (``inf`` allowed).

    Returns
    -------
    str
        ``"Exempt"``, ``"RG1"``, ``"RG2"`` or ``"RG3"``.

    Notes
    -----
    Group boundaries (t_max at or above the time puts the source in the group;
    from memory of IEC 62471:2006 Table 6.1): actinic UV 30000 / 10000 / 1000 s;
    UV-A 1000 / 300 / 100 s; blue light 10000 / 100 / 0.25 s.

    .. math::

        \\text{group} = \\min\\{g : t_\\max \\ge t_g\\}

    References
    ----------
    .. [1] IEC 62471:2006, "Photobiological safety of lamps and lamp systems", §6.
    """
    if hazard not in RISK_GROUP_TIMES:
        raise ActsimInputError(f"risk_group.hazard: {hazard!r} is not one of {', '.join(RISK_GROUP_TIMES)}")
    t = float(permissible_time)
    if math.isnan(t) or t < 0:
        raise ActsimInputError(f"risk_group.permissible_time: {t:g} s is outside the allowed range (>= 0 s)")
    for name, t_g in zip(RISK_GROUPS, RISK_GROUP_TIMES[hazard]):
        if t >= t_g:
            return name
    return RISK_GROUPS[-1]


def worst_risk_group(groups) -> str:
    """The highest (worst) of several risk groups."""
    groups = list(groups)
    if not groups:
        return RISK_GROUPS[0]
    return max(groups, key=RISK_GROUPS.index)


# ---------------------------------------------------------------------------
# Exposure position


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
        e = _nonneg_float(exposure_irradiance, field_name="exposure_irradiance", unit="W/m^2")
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


# ---------------------------------------------------------------------------
# Protocols: doses over time


def _window_stats(durations: np.ndarray, rates: np.ndarray, window: float):
    """Peak dose over any window of length min(window, T), and the highest mean
    rate over any window of length >= window (None if T <= window).

    For piecewise-constant rates the extremes occur with window ends on step
    boundaries (or a length-``window`` window anchored at one), so only those
    candidates are evaluated.
    """
    tb = np.concatenate([[0.0], np.cumsum(durations)])
    hb = np.concatenate([[0.0], np.cumsum(durations * rates)])
    total_t = float(tb[-1])
    if total_t <= window:
        return float(hb[-1]), None
    H = lambda t: np.interp(t, tb, hb)  # noqa: E731
    s = tb[tb + window <= total_t]
    e = tb[tb - window >= 0]
    peak = max(float(np.max(H(s + window) - H(s))) if s.size else 0.0, float(np.max(H(e) - H(e - window))) if e.size else 0.0)
    mean = peak / window
    # all pairs of step boundaries at least one window apart, one row at a time (O(n) memory)
    for i in range(tb.size - 1):
        dt = tb[i + 1 :] - tb[i]
        ok = dt >= window
        if np.any(ok):
            mean = max(mean, float(np.max((hb[i + 1 :][ok] - hb[i]) / dt[ok])))
    return peak, mean


def _parse_protocol(protocol, distance_factor):
    steps = list(protocol)
    if not steps:
        raise ActsimInputError("protocol: needs at least one (duration [s], Spectrum) step")
    durations, spectra = [], []
    for i, step in enumerate(steps):
        try:
            d, spec = step
        except (TypeError, ValueError):
            raise ActsimInputError(f"protocol[{i}]: each step must be a (duration [s], Spectrum or None) pair") from None
        d = _nonneg_float(d, field_name=f"protocol[{i}].duration", unit="s")
        if d == 0:
            raise ActsimInputError(f"protocol[{i}].duration: 0 s is outside the allowed range (> 0 s)")
        spec = Spectrum() if spec is None else spec
        if not isinstance(spec, Spectrum):
            raise ActsimInputError(f"protocol[{i}]: the spectrum must be an actsim Spectrum or None, got {type(spec).__name__}")
        durations.append(d)
        spectra.append(exposure_spectrum(spec, distance_factor=distance_factor))
    return np.asarray(durations), spectra


def _not_assessed(below: float, above: float, total: float) -> list[str]:
    out = []
    tiny = 1e-12 * max(total, 0.0)
    if below > tiny:
        out.append(f"{below:.3g} W/m^2 below 200 nm (S(lambda) is entered from 200 nm only): not assessed")
    if above > tiny:
        out.append(f"{above:.3g} W/m^2 above 700 nm (infrared): not assessed; {_NOT_MODELLED}")
    return out


def protocol_dose(protocol, *, distance_factor: float | None = None) -> dict:
    """Weighted irradiances per step and doses accumulated over a protocol.

    Parameters
    ----------
    protocol : sequence of (float, Spectrum or None)
        Steps of (duration [s], spectrum at the exposure position); ``None``
        for a dark step.
    distance_factor : float, optional
        Applied to every step, in (0, 1] [-] (see :func:`exposure_spectrum`).

    Returns
    -------
    dict
        ``duration`` (total, s); per step arrays ``step_duration`` [s],
        ``step_actinic_irradiance``, ``step_uva_irradiance``,
        ``step_blue_light_irradiance`` [W/m^2] and ``step_lit`` (bool); doses
        ``actinic_dose``, ``uva_dose``, ``blue_light_dose`` [J/m^2]; window
        statistics ``actinic_peak_day_dose`` [J/m^2], ``uva_peak_window_dose``,
        ``uva_peak_mean_irradiance``, ``blue_light_peak_window_dose``,
        ``blue_light_peak_mean_irradiance`` (the means are ``None`` when the
        protocol is no longer than the window); ``not_assessed`` (list of str).

    Notes
    -----
    .. math::

        H = \\sum_k E_k\\, \\Delta t_k

    References
    ----------
    .. [1] IEC 62471:2006, §4.3 (exposure limits as doses; from memory).
    """
    durations, spectra = _parse_protocol(protocol, distance_factor)
    fs, fb = actinic_uv_function(), blue_light_function()
    es, eu, eb, lit = [], [], [], []
    below = above = total = 0.0
    for d, sp in zip(durations, spectra):
        lit.append(sp.total_irradiance() > 0)
        rs = _weighted(sp, fs.lo, fs.hi, fs)
        rb = _weighted(sp, fb.lo, fb.hi, fb)
        es.append(rs.value)
        eu.append(_weighted(sp, 315e-9, 400e-9, None).value)
        eb.append(rb.value)
        below = max(below, rs.below)
        above = max(above, rb.above)
        total = max(total, rs.total)
    es, eu, eb = np.asarray(es), np.asarray(eu), np.asarray(eb)
    a_peak, _ = _window_stats(durations, es, ACTINIC_DAY)
    u_peak, u_mean = _window_stats(durations, eu, UVA_WINDOW)
    b_peak, b_mean = _window_stats(durations, eb, BLUE_WINDOW)
    return {
        "duration": float(np.sum(durations)),
        "step_duration": durations,
        "step_actinic_irradiance": es,
        "step_uva_irradiance": eu,
        "step_blue_light_irradiance": eb,
        "step_lit": np.asarray(lit, dtype=bool),
        "actinic_dose": float(np.sum(es * durations)),
        "uva_dose": float(np.sum(eu * durations)),
        "blue_light_dose": float(np.sum(eb * durations)),
        "actinic_peak_day_dose": a_peak,
        "uva_peak_window_dose": u_peak,
        "uva_peak_mean_irradiance": u_mean,
        "blue_light_peak_window_dose": b_peak,
        "blue_light_peak_mean_irradiance": b_mean,
        "not_assessed": _not_assessed(below, above, total),
    }


def _fmt_t(t: float) -> str:
    return "no limit within the model" if math.isinf(t) else f"{t:.4g} s"


@dataclass(frozen=True)
class _Hazard:
    """One hazard's exposure limit: dose up to ``window``, mean rate beyond (if any)."""

    label: str
    window: float  # [s]
    dose_limit: float  # [J/m^2] or [J/(m^2 sr)]
    rate_limit: float | None  # [W/m^2] or [W/(m^2 sr)]; None: dose in any window only
    unit_dose: str
    unit_rate: str
    source: str
    validity: str


_HAZARDS = {
    "actinic_uv": _Hazard(
        "actinic UV effective dose (S(lambda))", ACTINIC_DAY, ACTINIC_DAILY_LIMIT, None, "J/m^2", "W/m^2", _SRC_UV,
        "eye and skin, 200-400 nm, daily (8 h) exposure; S(lambda) and limit from memory",
    ),
    "uva": _Hazard(
        "UV-A (315-400 nm, unweighted)", UVA_WINDOW, UVA_DOSE_LIMIT, UVA_IRRADIANCE_LIMIT, "J/m^2", "W/m^2", _SRC_UV,
        "eye (lens), 315-400 nm; limit from memory",
    ),
    "blue_light": _Hazard(
        "blue light E_B (B(lambda), small source)", BLUE_WINDOW, BLUE_DOSE_LIMIT, BLUE_IRRADIANCE_LIMIT, "J/m^2", "W/m^2",
        _SRC_BLUE,
        "retina, 300-700 nm, irradiance form valid only for sources subtending < 0.011 rad; B(lambda) and limit from memory",
    ),
    "blue_light_radiance": _Hazard(
        "blue light L_B (B(lambda), radiance form)", BLUE_RADIANCE_WINDOW, BLUE_RADIANCE_DOSE_LIMIT, BLUE_RADIANCE_LIMIT,
        "J/(m^2 sr)", "W/(m^2 sr)", _SRC_BLUE, "retina, 300-700 nm, any source size; B(lambda) and limit from memory",
    ),
}


def _hazard_result(h: _Hazard, *, peak, mean, total_t, permissible_time, extra_note="") -> CheckResult:
    """Dose against the dose limit (total time within the window, or no rate
    limit), else the highest mean rate over windows >= the window against the
    rate limit; the note starts with the verdict wording."""
    notes = [f"permissible time at the most intense step {_fmt_t(permissible_time)}"]
    if mean is None or h.rate_limit is None:
        span = f"{total_t:.4g} s" if total_t <= h.window else f"any {h.window:g} s"
        r = CheckResult.upper_bound(
            check=f"{h.label}, dose over {span}", value=peak, limit=h.dose_limit, unit=h.unit_dose,
            source=h.source, validity=h.validity,
        )
    else:
        r = CheckResult.upper_bound(
            check=f"{h.label}, highest mean over any window >= {h.window:g} s", value=mean, limit=h.rate_limit,
            unit=h.unit_rate, source=h.source, validity=h.validity,
        )
        notes.append(f"peak dose in any {h.window:g} s window {peak:.4g} {h.unit_dose} (limit {h.dose_limit:g})")
    if extra_note:
        notes.append(extra_note)
    words = ("within" if r.passed else "exceeds") + f" the modelled limit of {h.source}"
    return dataclasses.replace(r, note="; ".join([words, *notes]))


def protocol_check(protocol, *, distance_factor: float | None = None, radiance_spectrum: Spectrum | None = None):
    """Actinic UV, UV-A and blue-light checks of an exposure protocol.

    Parameters
    ----------
    protocol : sequence of (float, Spectrum or None)
        Steps of (duration [s], spectrum at the exposure position [W/m^2/m, W/m^2]).
    distance_factor : float, optional
        Applied to every step, in (0, 1] [-].
    radiance_spectrum : Spectrum, optional
        Spectral radiance of the source seen from the exposure position
        [W/(m^2 sr m), W/(m^2 sr)], taken as on during every lit step; adds the
        radiance form of the blue-light check (required for sources larger
        than 0.011 rad).

    Returns
    -------
    results : list of CheckResult
        One per hazard: the dose over the protocol against the dose limit
        (protocols no longer than the hazard's window), or the highest mean
        irradiance over any window at least that long against the irradiance
        limit (longer protocols; the peak window dose is in the note).
    summary : dict
        ``protocol_dose`` output plus permissible times and risk groups of the
        most intense step per hazard, ``risk_group`` (worst), ``verdicts``
        (hazard -> wording) and ``not_assessed``.

    Notes
    -----
    The actinic limit is applied to the dose in any 8 h window (daily limit).
    For the UV-A and blue-light limits, which change form at a window length
    W (1000 s, 100 s), every sub-interval of the protocol must meet
    "dose <= limit" (length <= W) and "mean irradiance <= limit" (length > W);
    the two coincide at length W. This reading of the limits for time-varying
    exposure is common practice, no source.

    .. math::

        \\max_{[t_1, t_2]} \\frac{\\int_{t_1}^{t_2} E\\,dt}{H_0 \\max(1, (t_2 - t_1)/W)} \\le 1

    References
    ----------
    .. [1] ICNIRP, Health Physics 87, 171-186, 2004.
    .. [2] ICNIRP, Health Physics 105, 74-96, 2013.
    .. [3] IEC 62471:2006, "Photobiological safety of lamps and lamp systems".
    """
    dose = protocol_dose(protocol, distance_factor=distance_factor)
    T = dose["duration"]
    lit = dose["step_lit"]
    times = {
        "actinic_uv": actinic_permissible_time(effective_irradiance=float(np.max(dose["step_actinic_irradiance"]))),
        "uva": uva_permissible_time(uva_irradiance=float(np.max(dose["step_uva_irradiance"]))),
        "blue_light": blue_light_permissible_time(weighted_irradiance=float(np.max(dose["step_blue_light_irradiance"]))),
    }
    windows = {
        "actinic_uv": (dose["actinic_peak_day_dose"], None),
        "uva": (dose["uva_peak_window_dose"], dose["uva_peak_mean_irradiance"]),
        "blue_light": (dose["blue_light_peak_window_dose"], dose["blue_light_peak_mean_irradiance"]),
    }
    extra = {"actinic_uv": "; ".join(dose["not_assessed"])}
    if radiance_spectrum is not None:
        if not isinstance(radiance_spectrum, Spectrum):
            raise ActsimInputError(f"radiance_spectrum: must be an actsim Spectrum, got {type(radiance_spectrum).__name__}")
        fb = blue_light_function()
        lb = _weighted(radiance_spectrum, fb.lo, fb.hi, fb).value
        times["blue_light_radiance"] = blue_light_permissible_time(weighted_radiance=lb)
        # the source is seen (radiance lb) during the lit steps only
        windows["blue_light_radiance"] = _window_stats(dose["step_duration"], np.where(lit, lb, 0.0), BLUE_RADIANCE_WINDOW)
        extra["blue_light_radiance"] = f"L_B = {lb:.4g} W/(m^2 sr)"
    results = [
        _hazard_result(_HAZARDS[k], peak=peak, mean=mean, total_t=T, permissible_time=times[k], extra_note=extra.get(k, ""))
        for k, (peak, mean) in windows.items()
    ]
    groups = {k: risk_group(hazard=k, permissible_time=t) for k, t in times.items()}
    summary = dict(dose)
    summary.update(
        {
            "lit_duration": float(np.sum(dose["step_duration"][lit])),
            "permissible_time": times,
            "risk_groups": groups,
            "risk_group": worst_risk_group(groups.values()),
            "verdicts": {k: r.note.split(";")[0] for k, r in zip(windows, results)},
            "not_modelled": _NOT_MODELLED,
        }
    )
    if dose["not_assessed"]:
        warnings.warn("photobiological check: " + "; ".join(dose["not_assessed"]), ActsimWarning, stacklevel=2)
    return results, summary


def photobio_check(
    spectrum: Spectrum,
    *,
    exposure_duration: float = ACTINIC_DAY,
    distance_factor: float | None = None,
    exposure_irradiance: float | None = None,
    radiance_spectrum: Spectrum | None = None,
):
    """Photobiological checks of a constant exposure.

    Parameters
    ----------
    spectrum : Spectrum
        Spectrum at the strip (or at the person if neither ``distance_factor``
        nor ``exposure_irradiance`` is given) [W/m^2/m, W/m^2].
    exposure_duration : float
        Duration of the exposure, > 0 [s]. Default 8 h: a full working day.
    distance_factor : float, optional
        Irradiance at the person / irradiance at the strip, in (0, 1] [-].
    exposure_irradiance : float, optional
        Total irradiance at the person, > 0 [W/m^2] (spectral shape kept).
    radiance_spectrum : Spectrum, optional
        Source spectral radiance for the radiance form of the blue-light check
        [W/(m^2 sr m), W/(m^2 sr)].

    Returns
    -------
    results : list of CheckResult
    summary : dict
        As :func:`protocol_check`, plus the scalars ``actinic_irradiance``
        (E_s), ``uva_irradiance`` and ``blue_light_irradiance`` (E_B) at the
        person [W/m^2].

    Notes
    -----
    .. math::

        H_s = E_s t \\le 30\\ \\mathrm{J\\,m^{-2}}

    References
    ----------
    .. [1] ICNIRP, Health Physics 87, 171-186, 2004.
    .. [2] IEC 62471:2006, "Photobiological safety of lamps and lamp systems".
    """
    person = exposure_spectrum(spectrum, distance_factor=distance_factor, exposure_irradiance=exposure_irradiance)
    t = _nonneg_float(exposure_duration, field_name="exposure_duration", unit="s")
    if t == 0:
        raise ActsimInputError("exposure_duration: 0 s is outside the allowed range (> 0 s)")
    results, summary = protocol_check([(t, person)], radiance_spectrum=radiance_spectrum)
    summary["actinic_irradiance"] = float(summary["step_actinic_irradiance"][0])
    summary["uva_irradiance"] = float(summary["step_uva_irradiance"][0])
    summary["blue_light_irradiance"] = float(summary["step_blue_light_irradiance"][0])
    return results, summary


def format_photobio(results, summary: dict | None = None, width: int = 100) -> str:
    """Check table, risk groups, parts not assessed, and the caution.

    Parameters
    ----------
    results : list of CheckResult
    summary : dict, optional
        From :func:`photobio_check` or :func:`protocol_check`.
    width : int
        Caution line width [characters].

    Returns
    -------
    str
    """
    out = [format_table(results)]
    if summary:
        g = summary.get("risk_groups", {})
        if g:
            out.append("")
            out.append(
                "IEC 62471 risk group (modelled, limits from memory): "
                + ", ".join(f"{k} {v}" for k, v in g.items())
                + f"; overall {summary.get('risk_group', worst_risk_group(g.values()))}"
            )
        for txt in summary.get("not_assessed", []):
            out.append(f"not assessed: {txt}")
        if summary.get("not_modelled"):
            out.append(f"not modelled: {summary['not_modelled']}")
    out.append("")
    out += caution_lines(width)
    return "\n".join(out)
