"""Exposure limits of optical radiation, with their validity, as data.

Each limit is a frozen :class:`ExposureLimit`: its value and unit, the
exposure durations it applies to (the averaging window), the wavelength range
and weighting it applies to, where it comes from and whether it was entered
from memory. The limits of one hazard, its label and its IEC 62471 risk-group
times form a :class:`Hazard`; :data:`HAZARDS` holds the four modelled ones:

* ``"actinic_uv"`` (eye and skin), 200-400 nm, weighted with S(lambda):
  30 J/m^2 effective in a day (8 h);
* ``"uva"`` (eye lens), 315-400 nm, unweighted: 10 kJ/m^2 for exposures up to
  1000 s, 10 W/m^2 for longer ones;
* ``"blue_light"`` (retina, photochemical), 300-700 nm, weighted with
  B(lambda), small sources (< 0.011 rad): 100 J/m^2 up to 100 s, 1 W/m^2 beyond;
* ``"blue_light_radiance"``, the same in radiance form, any source size:
  1e6 J/(m^2 sr) up to 1e4 s, 100 W/(m^2 sr) beyond.

Ask which apply to a wavelength range with :func:`limits_for` or
:func:`hazards_for`. The permissible exposure time under each limit and the
risk group it gives are here too. All values were entered from memory of the
cited documents; check them against the published texts.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ..errors import ActsimInputError
from ..units import nonnegative_float

__all__ = [
    "ExposureLimit",
    "Hazard",
    "HAZARDS",
    "RISK_GROUPS",
    "NOT_MODELLED",
    "limits_for",
    "hazards_for",
    "actinic_permissible_time",
    "uva_permissible_time",
    "blue_light_permissible_time",
    "risk_group",
    "worst_risk_group",
]

#: Risk groups in order of increasing hazard (IEC 62471:2006 §6).
RISK_GROUPS = ("Exempt", "RG1", "RG2", "RG3")

#: Hazards of optical radiation that no limit here covers.
NOT_MODELLED = "retinal thermal, infrared (cornea, lens) and skin thermal hazards are not modelled"

@dataclass(frozen=True)
class ExposureLimit:
    """One exposure limit and where it is valid.

    Attributes
    ----------
    hazard : str
        Key of the hazard in :data:`HAZARDS` (``"actinic_uv"``, ...).
    form : str
        ``"dose"`` (radiant exposure, summed over the window) or ``"rate"``
        (irradiance or radiance, averaged over windows longer than ``window``).
    value : float
        The limit [J/m^2, J/(m^2 sr), W/m^2 or W/(m^2 sr), see ``unit``].
    unit : str
        Unit of ``value`` as printed.
    window : float
        Averaging window [s]: the dose form applies to exposures up to this
        long (the dose in any window of this length); the rate form to longer
        exposures (the mean over any window at least this long).
    wavelength_min, wavelength_max : float
        Wavelength range the limit covers [m].
    weighting : str
        ``"S(lambda)"``, ``"B(lambda)"`` or ``"none"`` (unweighted band).
    source : str
        Published source, with section.
    from_memory : bool
        True if the value was entered from memory of the source.
    """

    hazard: str
    form: str
    value: float
    unit: str
    window: float
    wavelength_min: float
    wavelength_max: float
    weighting: str
    source: str
    from_memory: bool = True

    def applies_to_wavelengths(self, wavelength_min: float, wavelength_max: float) -> bool:
        """True if [wavelength_min, wavelength_max] [m] overlaps the limit's range (ends included, to round-off)."""
        return (wavelength_min <= self.wavelength_max * (1 + 1e-12)
                and wavelength_max >= self.wavelength_min * (1 - 1e-12))

    def applies_to_duration(self, duration: float) -> bool:
        """True if the limit governs an exposure of ``duration`` [s]."""
        return duration <= self.window if self.form == "dose" else duration > self.window


@dataclass(frozen=True)
class Hazard:
    """The exposure limits of one hazard and its risk-group times.

    Attributes
    ----------
    key : str
        Name of the hazard (key of :data:`HAZARDS`).
    label : str
        Words used in check tables.
    dose : ExposureLimit
        Dose limit (exposures up to ``dose.window``).
    rate : ExposureLimit or None
        Irradiance (or radiance) limit for longer exposures; None if the dose
        limit applies to any window of ``dose.window`` whatever the duration.
    risk_group_times : tuple of float
        Shortest permissible exposure time for Exempt, RG1 and RG2 [s]; below
        the RG2 time: RG3.
    risk_group_source : str
        Source of ``risk_group_times``.
    source : str
        Short source named in verdicts.
    validity : str
        Tissue, wavelengths and conditions the limits hold for, in words.
    """

    key: str
    label: str
    dose: ExposureLimit
    rate: ExposureLimit | None
    risk_group_times: tuple
    risk_group_source: str
    source: str
    validity: str

    @property
    def limits(self) -> tuple:
        """The dose limit and, if any, the rate limit."""
        return (self.dose,) if self.rate is None else (self.dose, self.rate)

    @property
    def window(self) -> float:
        """Averaging window of the dose limit [s]."""
        return self.dose.window


_SRC_UV = "ICNIRP 2004 / IEC 62471"
_SRC_BLUE = "ICNIRP 2013 / IEC 62471"
_RG_SRC = "IEC 62471:2006 §6.1, Table 6.1 (from memory)"


def _limit(hazard, form, value, unit, window, lo, hi, weighting, source):
    return ExposureLimit(hazard=hazard, form=form, value=value, unit=unit, window=window, wavelength_min=lo,
                         wavelength_max=hi, weighting=weighting, source=source, from_memory=True)


#: The modelled hazards, each with its limits (all from memory of the cited texts).
HAZARDS = {
    "actinic_uv": Hazard(
        key="actinic_uv",
        label="actinic UV effective dose (S(lambda))",
        dose=_limit("actinic_uv", "dose", 30.0, "J/m^2", 8.0 * 3600.0, 200e-9, 400e-9, "S(lambda)",
                    "ICNIRP 2004, Health Physics 87:171-186; IEC 62471:2006 §4.3.1"),
        rate=None,
        risk_group_times=(30000.0, 10000.0, 1000.0),
        risk_group_source=_RG_SRC,
        source=_SRC_UV,
        validity="eye and skin, 200-400 nm, daily (8 h) exposure; S(lambda) and limit from memory",
    ),
    "uva": Hazard(
        key="uva",
        label="UV-A (315-400 nm, unweighted)",
        dose=_limit("uva", "dose", 1.0e4, "J/m^2", 1000.0, 315e-9, 400e-9, "none",
                    "ICNIRP 2004; IEC 62471:2006 §4.3.2"),
        rate=_limit("uva", "rate", 10.0, "W/m^2", 1000.0, 315e-9, 400e-9, "none",
                    "ICNIRP 2004; IEC 62471:2006 §4.3.2"),
        risk_group_times=(1000.0, 300.0, 100.0),
        risk_group_source=_RG_SRC,
        source=_SRC_UV,
        validity="eye (lens), 315-400 nm; limit from memory",
    ),
    "blue_light": Hazard(
        key="blue_light",
        label="blue light E_B (B(lambda), small source)",
        dose=_limit("blue_light", "dose", 100.0, "J/m^2", 100.0, 300e-9, 700e-9, "B(lambda)",
                    "ICNIRP 2013, Health Physics 105:74-96; IEC 62471:2006 §4.3.4"),
        rate=_limit("blue_light", "rate", 1.0, "W/m^2", 100.0, 300e-9, 700e-9, "B(lambda)",
                    "ICNIRP 2013, Health Physics 105:74-96; IEC 62471:2006 §4.3.4"),
        risk_group_times=(10000.0, 100.0, 0.25),
        risk_group_source=_RG_SRC,
        source=_SRC_BLUE,
        validity="retina, 300-700 nm, irradiance form valid only for sources subtending < 0.011 rad; "
                 "B(lambda) and limit from memory",
    ),
    "blue_light_radiance": Hazard(
        key="blue_light_radiance",
        label="blue light L_B (B(lambda), radiance form)",
        dose=_limit("blue_light_radiance", "dose", 1.0e6, "J/(m^2 sr)", 1.0e4, 300e-9, 700e-9, "B(lambda)",
                    "ICNIRP 2013, Health Physics 105:74-96; IEC 62471:2006 §4.3.3"),
        rate=_limit("blue_light_radiance", "rate", 100.0, "W/(m^2 sr)", 1.0e4, 300e-9, 700e-9, "B(lambda)",
                    "ICNIRP 2013, Health Physics 105:74-96; IEC 62471:2006 §4.3.3"),
        risk_group_times=(10000.0, 100.0, 0.25),
        risk_group_source=_RG_SRC,
        source=_SRC_BLUE,
        validity="retina, 300-700 nm, any source size; B(lambda) and limit from memory",
    ),
}


def _wavelength_range(wavelength_min, wavelength_max, where):
    hi = wavelength_min if wavelength_max is None else wavelength_max
    try:
        lo, hi = float(wavelength_min), float(hi)
    except (TypeError, ValueError):
        raise ActsimInputError(f"{where}: wavelengths must be numbers in m, e.g. 365e-9") from None
    if not (math.isfinite(lo) and math.isfinite(hi) and 1e-8 <= lo <= hi <= 1e-4):
        raise ActsimInputError(
            f"{where}: wavelength range {lo:g}-{hi:g} m is outside the allowed range (1e-08 <= min <= max <= 0.0001 m); "
            "give wavelengths in m, e.g. 365e-9"
        )
    return lo, hi


def limits_for(wavelength_min: float, wavelength_max: float | None = None) -> tuple:
    """The exposure limits that apply to light in a wavelength range.

    Parameters
    ----------
    wavelength_min : float
        Shortest wavelength of the light [m].
    wavelength_max : float, optional
        Longest wavelength [m]; default ``wavelength_min`` (a line).

    Returns
    -------
    tuple of ExposureLimit
        Every limit whose wavelength range overlaps [min, max], in the order
        of :data:`HAZARDS`; empty if none does (e.g. infrared, not modelled).

    Notes
    -----
    A limit applies when the ranges overlap:

    .. math:: \\lambda_{\\min} \\le \\lambda_{2} \\quad\\text{and}\\quad \\lambda_{\\max} \\ge \\lambda_{1}
    """
    lo, hi = _wavelength_range(wavelength_min, wavelength_max, "limits_for")
    return tuple(lim for h in HAZARDS.values() for lim in h.limits if lim.applies_to_wavelengths(lo, hi))


def hazards_for(wavelength_min: float, wavelength_max: float | None = None) -> tuple:
    """The hazards (with all their limits) that light in a wavelength range falls under.

    Parameters
    ----------
    wavelength_min : float
        Shortest wavelength of the light [m].
    wavelength_max : float, optional
        Longest wavelength [m]; default ``wavelength_min``.

    Returns
    -------
    tuple of Hazard
        In the order of :data:`HAZARDS`.
    """
    lo, hi = _wavelength_range(wavelength_min, wavelength_max, "hazards_for")
    return tuple(h for h in HAZARDS.values() if h.dose.applies_to_wavelengths(lo, hi))


# ---------------------------------------------------------------------------
# Permissible exposure times and risk groups


def _dose_then_rate(h: Hazard, rate: float) -> float:
    # the rate form governs and is met at or below the rate limit; above it the dose limit sets the time
    return math.inf if rate <= h.rate.value else h.dose.value / rate


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
    e = nonnegative_float(effective_irradiance, field_name="effective_irradiance", unit="W/m^2")
    return math.inf if e == 0 else HAZARDS["actinic_uv"].dose.value / e


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
    e = nonnegative_float(uva_irradiance, field_name="uva_irradiance", unit="W/m^2")
    return _dose_then_rate(HAZARDS["uva"], e)


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
        e = nonnegative_float(weighted_irradiance, field_name="weighted_irradiance", unit="W/m^2")
        return _dose_then_rate(HAZARDS["blue_light"], e)
    lb = nonnegative_float(weighted_radiance, field_name="weighted_radiance", unit="W/(m^2 sr)")
    return _dose_then_rate(HAZARDS["blue_light_radiance"], lb)


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
    :attr:`Hazard.risk_group_times`, from memory of IEC 62471:2006 Table 6.1):
    actinic UV 30000 / 10000 / 1000 s; UV-A 1000 / 300 / 100 s; blue light
    10000 / 100 / 0.25 s.

    .. math::

        \\text{group} = \\min\\{g : t_\\max \\ge t_g\\}

    References
    ----------
    .. [1] IEC 62471:2006, "Photobiological safety of lamps and lamp systems", §6.
    """
    if hazard not in HAZARDS:
        raise ActsimInputError(f"risk_group.hazard: {hazard!r} is not one of {', '.join(HAZARDS)}")
    t = float(permissible_time)
    if math.isnan(t) or t < 0:
        raise ActsimInputError(f"risk_group.permissible_time: {t:g} s is outside the allowed range (>= 0 s)")
    for name, t_g in zip(RISK_GROUPS, HAZARDS[hazard].risk_group_times):
        if t >= t_g:
            return name
    return RISK_GROUPS[-1]


def worst_risk_group(groups) -> str:
    """The highest (worst) of several risk groups.

    Parameters
    ----------
    groups : iterable of str
        Risk group names from :data:`RISK_GROUPS`.

    Returns
    -------
    str
        The worst of them; ``"Exempt"`` for none.
    """
    groups = list(groups)
    if not groups:
        return RISK_GROUPS[0]
    return max(groups, key=RISK_GROUPS.index)
