"""Hazard weighting functions of optical radiation, as data.

Two tabulated action spectra, read from the CSV files shipped in
``actsim/data`` with the project's CSV reader (:mod:`actsim.tables`):

* actinic UV S(lambda), 200-400 nm (eye and skin), ``actinic_uv_hazard_s.csv``;
* blue-light B(lambda), 300-700 nm (retina, photochemical), ``blue_light_hazard_b.csv``.

Each row carries its origin ("from memory", or the formula used, and which
library tabulates the same value); see :attr:`WeightingFunction.origin`.
Between rows the functions are log-linear. The limits they are used with are
in :mod:`actsim.checks.exposure_limits`; the weighted integrals of a spectrum
in :mod:`actsim.checks.exposure`.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from ..errors import ActsimInputError
from ..tables import data_file, read_xy_csv

__all__ = [
    "WeightingFunction",
    "actinic_uv_function",
    "blue_light_function",
    "actinic_weighting",
    "blue_light_weighting",
]


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
        return self.evaluate_clipped(wl)

    def evaluate_clipped(self, wl):
        """Weighting at wavelengths [m] already clipped to the table's range (no range check) [1]."""
        return np.power(10.0, np.interp(wl, self.wavelength, np.log10(self.value)))


def _load_weighting(filename: str, column: str, name: str, source: str) -> WeightingFunction:
    data = read_xy_csv(data_file(filename), x_kind="wavelength", y_kind="dimensionless", y_column=column,
                       text_columns=("origin",))
    wl, val = data.x, data.y
    if wl.size < 2 or np.any(np.diff(wl) <= 0) or np.any(val <= 0):
        raise ActsimInputError(f"data file {filename}: wavelengths must increase and values must be > 0")
    return WeightingFunction(name=name, wavelength=wl, value=val, source=source, origin=data.text["origin"])


@lru_cache(maxsize=None)
def actinic_uv_function() -> WeightingFunction:
    """The actinic UV hazard weighting S(lambda), 200-400 nm, from the packaged table.

    Returns
    -------
    WeightingFunction
        S(lambda) [-] at its tabulated wavelengths [m].

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

    Returns
    -------
    WeightingFunction
        B(lambda) [-] at its tabulated wavelengths [m].

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
