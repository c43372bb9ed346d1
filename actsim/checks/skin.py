"""Skin-contact temperature check for a strip touching the skin.

Two published limits are held as data (``actsim/data``), each with its source
and validity:

* IEC 60601-1 (3rd ed.) Table 24: maximum temperature of applied parts in
  contact with the patient, by band of contact duration and material. The
  standard writes bands ("t < 1 min", "1 min <= t < 10 min", "10 min <= t"),
  so the limit is a step function of duration and is not interpolated.
* ISO 13732-1:2006: burn thresholds of the skin in contact with hot surfaces,
  for contact periods of 1 min and longer, tabulated at points; interpolated
  linearly in log10(contact duration).

By default the check uses the lower (governing) of the two. All values were
entered from memory of the cited standards; check them before relying on them.
Neither limit covers infants, people with impaired sensation or circulation,
pressure on the skin, or long-term low-temperature burns in full.
"""

from __future__ import annotations

import math
from functools import lru_cache
from importlib import resources

import numpy as np

from ..cautions import caution_lines
from ..errors import ActsimInputError
from ..tables import read_csv_table
from .verdict import CheckResult, Limit, format_table

__all__ = [
    "MATERIAL_CLASSES",
    "STANDARDS",
    "skin_contact_limit",
    "skin_contact_check",
    "format_skin",
]

#: Material classes known to the skin-contact limits.
MATERIAL_CLASSES = ("metal", "glass", "plastic", "wood")
#: Limit choices: one standard, or the lower of both.
STANDARDS = ("IEC 60601-1", "ISO 13732-1", "governing")

_ZERO_C = 273.15
_IEC_FILE = "skin_contact_iec60601_1.csv"
_ISO_FILE = "skin_burn_threshold_iso13732_1.csv"
_IEC_SOURCE = "IEC 60601-1:2005 Table 24 (from memory)"
_ISO_SOURCE = "ISO 13732-1:2006 burn thresholds (from memory)"
_IEC_VALIDITY = (
    "applied parts in contact with the patient, healthy adult skin, parts not intended to supply heat; "
    "not for infants, impaired sensation, or contact over 10 % of the body surface or of the head"
)
_ISO_VALIDITY = (
    "smooth hot surface on healthy adult skin, threshold of a superficial partial-thickness burn "
    "(not a comfort limit), contact 1 min to 8 h"
)
#: IEC 60601-1 asks that applied parts above this temperature be disclosed and risk-assessed [K] (from memory).
IEC_DISCLOSURE_TEMPERATURE = 41.0 + _ZERO_C


def _table(filename: str):
    """A packaged limit table, read by the project's CSV reader (:func:`actsim.tables.read_csv_table`)."""
    with resources.as_file(resources.files("actsim").joinpath("data", filename)) as path:
        return read_csv_table(path)


@lru_cache(maxsize=None)
def _iec_table():
    tab = _table(_IEC_FILE)
    lo = tab.column("duration_from", unit="s")
    hi = tab.column("duration_to", unit="s", allow_infinite=True)  # the last band is open ("10 min and longer")
    lim = {m: tab.column(m, unit="degC") for m in ("metal", "glass", "plastic")}
    return lo, hi, lim


@lru_cache(maxsize=None)
def _iso_table():
    tab = _table(_ISO_FILE)
    t = tab.column("contact_duration", unit="s")
    lim = {m: tab.column(m, unit="degC") for m in MATERIAL_CLASSES}
    return t, lim


def _duration(x) -> float:
    try:
        t = float(x)
    except (TypeError, ValueError):
        raise ActsimInputError(f"contact_duration: {x!r} is not a number (s)") from None
    if not (math.isfinite(t) and t > 0):
        raise ActsimInputError(f"contact_duration: {t:g} s is outside the allowed range (> 0 s and finite)")
    return t


def _material(m) -> str:
    if m not in MATERIAL_CLASSES:
        raise ActsimInputError(f"material_class: {m!r} is not one of {', '.join(MATERIAL_CLASSES)}")
    return m


def _iec_limit(t: float, material: str) -> Limit:
    lo, hi, lim = _iec_table()
    col = "plastic" if material == "wood" else material  # the standard groups wood with plastics
    i = int(np.nonzero((t >= lo) & (t < hi))[0][0])
    value_c = float(lim[col][i])
    band = f"{lo[i]:g} s <= t < {hi[i]:g} s" if math.isfinite(hi[i]) else f"t >= {lo[i]:g} s"
    return Limit(
        name="skin contact temperature",
        value=value_c + _ZERO_C,
        unit="K",
        source=_IEC_SOURCE,
        valid_range={"time": (float(lo[i]), float(hi[i]))},
        validity=_IEC_VALIDITY,
        note=f"band {band}, {col} column: {value_c:g} degC",
    )


def _iso_limit(t: float, material: str) -> Limit:
    ts, lim = _iso_table()
    col = lim[material]
    if t <= ts[0]:
        value_c = float(col[0])
        note = f"{ts[0]:g} s value used for the shorter contact of {t:g} s (conservative: thresholds rise at shorter contact)"
    elif t >= ts[-1]:
        value_c = float(col[-1])
        note = f"{ts[-1]:g} s value used ('8 h and longer')"
    else:
        value_c = float(np.interp(math.log10(t), np.log10(ts), col))
        note = f"interpolated in log10(time) between tabulated durations: {value_c:.4g} degC"
    return Limit(
        name="skin burn threshold",
        value=value_c + _ZERO_C,
        unit="K",
        source=_ISO_SOURCE,
        valid_range={"time": (float(ts[0]), float(ts[-1]))},
        validity=_ISO_VALIDITY,
        note=f"{material}: {note}",
    )


def skin_contact_limit(*, contact_duration: float, material_class: str = "plastic", standard: str = "governing") -> Limit:
    """Maximum skin-contact surface temperature for a contact duration and material.

    Parameters
    ----------
    contact_duration : float
        Duration of continuous contact with the skin, > 0 [s].
    material_class : str
        ``"metal"``, ``"glass"`` (glass, ceramics, stone), ``"plastic"``
        (moulded material, plastic, rubber) or ``"wood"``.
    standard : str
        ``"IEC 60601-1"`` (step bands), ``"ISO 13732-1"`` (log-time
        interpolation) or ``"governing"`` (the lower of the two).

    Returns
    -------
    Limit
        ``value`` is the limit temperature [K]; ``source``, ``validity`` and
        ``note`` say where it comes from and how it was read.

    Notes
    -----
    ISO 13732-1 points (t_i, T_i) are interpolated as

    .. math::

        T(t) = T_i + (T_{i+1} - T_i)\\,
        \\frac{\\log_{10} t - \\log_{10} t_i}{\\log_{10} t_{i+1} - \\log_{10} t_i}

    and IEC 60601-1 gives :math:`T(t) = T_k` for :math:`t_k \\le t < t_{k+1}`.
    The IEC bands are not interpolated: inside a band the standard's value
    applies as written, and interpolating would exceed it.

    References
    ----------
    .. [1] IEC 60601-1:2005, "Medical electrical equipment - Part 1: General
       requirements for basic safety and essential performance", Table 24.
    .. [2] ISO 13732-1:2006, "Ergonomics of the thermal environment - Methods
       for the assessment of human responses to contact with surfaces - Part 1:
       Hot surfaces".
    """
    t = _duration(contact_duration)
    m = _material(material_class)
    if standard not in STANDARDS:
        raise ActsimInputError(f"standard: {standard!r} is not one of {', '.join(STANDARDS)}")
    if standard == "IEC 60601-1":
        return _iec_limit(t, m)
    if standard == "ISO 13732-1":
        return _iso_limit(t, m)
    a, b = _iec_limit(t, m), _iso_limit(t, m)
    return a if a.value <= b.value else b


def skin_contact_check(
    *,
    peak_surface_temperature: float,
    contact_duration: float,
    material_class: str = "plastic",
    standard: str = "governing",
) -> CheckResult:
    """Check the peak surface temperature of a strip touching the skin.

    Parameters
    ----------
    peak_surface_temperature : float
        Highest modelled temperature of the face touching the skin, 200-1000 [K].
    contact_duration : float
        Duration of continuous contact, > 0 [s].
    material_class : str
        Material of the contacting face, see :func:`skin_contact_limit`.
    standard : str
        See :func:`skin_contact_limit`.

    Returns
    -------
    CheckResult
        ``value`` and ``limit`` in K; ``margin`` = limit - value [K]
        (``margin_kind="difference"``); passes when value <= limit.

    Notes
    -----
    .. math::

        \\Delta T = T_\\mathrm{limit}(t, \\mathrm{material}) - T_\\mathrm{surface,max} \\ge 0

    References
    ----------
    .. [1] IEC 60601-1:2005, Table 24.
    .. [2] ISO 13732-1:2006, "Ergonomics of the thermal environment - ... -
       Part 1: Hot surfaces".
    """
    try:
        temp = float(peak_surface_temperature)
    except (TypeError, ValueError):
        raise ActsimInputError(f"peak_surface_temperature: {peak_surface_temperature!r} is not a number (K)") from None
    if not (math.isfinite(temp) and 200.0 <= temp <= 1000.0):
        raise ActsimInputError(
            f"peak_surface_temperature: {temp:g} K is outside the allowed range (>= 200 and <= 1000 K); "
            f"give it in K, e.g. 318.15 for 45 degC"
        )
    lim = skin_contact_limit(contact_duration=contact_duration, material_class=material_class, standard=standard)
    t = float(contact_duration)
    notes = [lim.note]
    if temp > IEC_DISCLOSURE_TEMPERATURE:
        notes.append(
            "above 41 degC: IEC 60601-1 asks that the temperature be disclosed in the instructions for use and its "
            "clinical effects assessed in risk management (from memory)"
        )
    res = CheckResult.upper_bound(
        check=f"skin contact temperature, {material_class}, {t:.4g} s contact",
        value=temp,
        limit=lim.value,
        unit="K",
        source=lim.source,
        validity=lim.validity,
        margin_kind="difference",
        note="",
    )
    words = ("within" if res.passed else "exceeds") + f" the modelled limit of {lim.source.replace(' (from memory)', '')}"
    notes.insert(0, f"{words}: {temp - _ZERO_C:.2f} degC against {lim.value - _ZERO_C:.2f} degC")
    return CheckResult(
        check=res.check,
        value=res.value,
        limit=res.limit,
        unit=res.unit,
        margin=res.margin,
        passed=res.passed,
        source=res.source,
        validity=res.validity,
        note="; ".join(notes),
        margin_kind=res.margin_kind,
    )


def format_skin(results, width: int = 100) -> str:
    """Table of skin-contact results followed by the caution.

    Parameters
    ----------
    results : CheckResult or list of CheckResult
    width : int
        Caution line width [characters].

    Returns
    -------
    str
    """
    if isinstance(results, CheckResult):
        results = [results]
    return "\n".join([format_table(results), "", *caution_lines(width)])
