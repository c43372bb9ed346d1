"""Scenario sections of the design checks: ``[checks]``, ``[safety]`` and ``[joint]``.

The scenario keeps these sections as raw tables (``scenario.sections``); the checks read
them with :func:`checks_settings`, :func:`safety_settings` and :func:`joint_settings`
(parsed once per scenario object). Each ``parse_*`` function takes
``(data, field=name, base_dir=Path, scenario_info=dict)`` and returns a frozen dataclass in SI units.
Every problem is one line naming the field, the value, the unit and the
allowed range (:class:`~actsim.errors.ActsimInputError`). The fields are
documented in ``docs/checks.md``.

Example (all three sections)::

    [checks]
    required_safety_factor = 2.0
    target_cycles = 1e5            # actuation cycles the strip must survive
    cycles_per_protocol = 1        # one run of the protocol is one cycle
    [checks.materials.passive]
    limits = "generic_semicrystalline_film"   # group of actsim/data/material_limits.toml
    [checks.materials.film]
    yield_strength = "40 MPa"
    ultimate_strength = "55 MPa"
    fatigue_strength_coefficient = "70 MPa"
    fatigue_strength_exponent = -0.09
    source = "our tensile and fatigue tests, lot 7"

    [safety]
    exposure_distance_factor = 0.02   # irradiance at the operator / at the strip
    exposure_duration = "8 h"
    skin_contact = false

    [joint]
    mounting = "hinge"
    strips = "solve"
    angle_start = "-30 deg"
    angle_end = "30 deg"
    payload = [ { kind = "point", mass = "5 g", distance = "20 mm" } ]
"""

from __future__ import annotations

import difflib
import math
from dataclasses import dataclass, field
from pathlib import Path

from ..errors import ActsimInputError
from ..scenario import section_settings
from ..schema import Table
from .verdict import Limit, load_material_limits

__all__ = [
    "MaterialLimits",
    "CheckSettings",
    "SafetySettings",
    "JointSettings",
    "parse_checks",
    "parse_safety",
    "parse_joint",
    "checks_settings",
    "safety_settings",
    "joint_settings",
    "MEAN_STRESS_METHODS_DEFAULT",
]

#: Mean-stress corrections evaluated by default (the most conservative governs).
MEAN_STRESS_METHODS_DEFAULT = ("goodman", "gerber", "morrow", "swt")

_USER_SOURCE = "value given in the scenario file"
_PROPS = {
    "yield_strength": ("pressure", "Pa"),
    "ultimate_strength": ("pressure", "Pa"),
    "fatigue_strength_coefficient": ("pressure", "Pa"),
    "fatigue_strength_exponent": ("dimensionless", "1"),
}


# ---------------------------------------------------------------------------
# [checks]


@dataclass(frozen=True)
class MaterialLimits:
    """Strength and fatigue limits of one scenario material, each a :class:`Limit` or None.

    Attributes
    ----------
    material : str
        Scenario material name.
    yield_strength, ultimate_strength, fatigue_strength_coefficient : Limit or None
        [Pa], with source and validity.
    fatigue_strength_exponent : Limit or None
        Basquin exponent b < 0 [-].
    group : str
        Group of the limits file the values came from ("" if none).
    """

    material: str
    yield_strength: Limit | None = None
    ultimate_strength: Limit | None = None
    fatigue_strength_coefficient: Limit | None = None
    fatigue_strength_exponent: Limit | None = None
    group: str = ""


@dataclass(frozen=True)
class CheckSettings:
    """Parsed ``[checks]`` section (SI).

    Attributes
    ----------
    required_safety_factor : float
        Safety factor against yield (and on the joint moment) the design must reach [-], >= 1.
    target_cycles : float or None
        Actuation cycles the strip must survive; None: fatigue not assessed [-].
    cycles_per_protocol : float
        Actuation cycles in one run of the protocol [-], > 0 (default 1).
    damage_limit : float
        Miner damage sum taken as failure [-], (0, 1].
    mean_stress_methods : tuple of str
        Mean-stress corrections evaluated.
    credit_compressive_mean : bool
        Whether a compressive mean stress is credited (default False).
    tip_force : float or None
        A dead tip force normal to the strip that the strip must carry at peak bend [N].
    materials : dict
        Material name -> :class:`MaterialLimits`.
    """

    required_safety_factor: float = 1.0
    target_cycles: float | None = None
    cycles_per_protocol: float = 1.0
    damage_limit: float = 1.0
    mean_stress_methods: tuple = MEAN_STRESS_METHODS_DEFAULT
    credit_compressive_mean: bool = False
    tip_force: float | None = None
    materials: dict = field(default_factory=dict)

    @property
    def target_passes(self) -> float | None:
        """Runs of the protocol over the service life [-]."""
        if self.target_cycles is None:
            return None
        return self.target_cycles / self.cycles_per_protocol


def _limit_from_value(t: Table, key: str, *, source: str, validity: str) -> Limit | None:
    if not t.has(key):
        return None
    kind, unit = _PROPS[key]
    if kind == "pressure":
        v = t.quantity(key, "pressure", lo=0.0, lo_open=True)
    else:
        v = t.number(key, hi=0.0, hi_open=True)
        if not v > -1.0:
            raise ActsimInputError(f"{t.field_path(key)}: {v:g} is outside the allowed range (> -1 and < 0)")
    return Limit(name=key, value=v, unit=unit, source=source, validity=validity)


def _parse_material_limits(name: str, data, *, where: str, base_dir: Path) -> MaterialLimits:
    t = Table(data, where)
    group = ""
    values: dict[str, Limit | None] = {k: None for k in _PROPS}
    if t.has("limits"):
        group = t.string("limits")
        path = None
        if t.has("limits_file"):
            from ..inputfiles import check_data_file, resolve_data_path

            name = t.string("limits_file")
            path = resolve_data_path(name, base_dir=base_dir, field=f"{where}.limits_file")
            check_data_file(path, field=f"{where}.limits_file", shown=name)
        table = load_material_limits(path)
        if group not in table:
            hint = difflib.get_close_matches(group, list(table), n=1)
            extra = f"; did you mean '{hint[0]}'?" if hint else f"; groups are: {', '.join(sorted(table))}"
            raise ActsimInputError(f"{where}.limits: '{group}' is not a group of the limits file{extra}")
        for key in _PROPS:
            values[key] = table[group].get(key)
    elif t.has("limits_file"):
        raise ActsimInputError(f"{where}.limits_file: given without 'limits' (the group name in that file)")
    source = t.string("source", default=_USER_SOURCE)
    validity = t.string("validity", default="as stated by the user")
    for key in _PROPS:
        lim = _limit_from_value(t, key, source=source, validity=validity)
        if lim is not None:
            values[key] = lim
    t.finish()
    ys, us = values["yield_strength"], values["ultimate_strength"]
    if ys is not None and us is not None and us.value < ys.value:
        raise ActsimInputError(
            f"{where}.ultimate_strength: {us.value / 1e6:g} MPa is below the yield strength {ys.value / 1e6:g} MPa "
            f"(allowed: ultimate >= yield)"
        )
    sf, b = values["fatigue_strength_coefficient"], values["fatigue_strength_exponent"]
    if (sf is None) != (b is None):
        missing = "fatigue_strength_exponent" if b is None else "fatigue_strength_coefficient"
        raise ActsimInputError(f"{where}.{missing}: required with the other Basquin constant (give both or neither)")
    if b is not None and not b.value < 0.0:
        raise ActsimInputError(f"{where}.fatigue_strength_exponent: {b.value:g} is outside the allowed range (< 0)")
    if not any(values.values()):
        raise ActsimInputError(
            f"{where}: no limits given; set 'limits' (a group of the limits file) or yield_strength and the others"
        )
    return MaterialLimits(material=name, group=group, **values)


def parse_checks(data, *, field: str = "checks", base_dir=Path("."), scenario_info=None) -> CheckSettings:
    """Parse the ``[checks]`` section.

    Parameters
    ----------
    data : dict
        The TOML table.
    field : str
        Section name for messages.
    base_dir : pathlib.Path
        Folder for relative ``limits_file`` paths.
    scenario_info : dict
        ``materials`` (names) and the other scenario facts (see actsim.scenario.scenario_info).

    Returns
    -------
    CheckSettings
    """
    info = scenario_info or {}
    t = Table(data, field)
    sf = t.number("required_safety_factor", default=1.0, lo=1.0, hi=100.0)
    target = None
    if t.has("target_cycles"):
        target = t.number("target_cycles", lo=0.0, lo_open=True, hi=1e15)
    cpp = t.number("cycles_per_protocol", default=1.0, lo=0.0, lo_open=True, hi=1e9)
    dlim = t.number("damage_limit", default=1.0, lo=0.0, lo_open=True, hi=1.0)
    methods = t.raw("mean_stress_methods", default=list(MEAN_STRESS_METHODS_DEFAULT))
    allowed = ("none", "goodman", "gerber", "morrow", "swt")
    if isinstance(methods, str):
        methods = [methods]
    if not isinstance(methods, list) or not methods:
        raise ActsimInputError(f"{field}.mean_stress_methods: must be a list of {', '.join(allowed)}")
    for m in methods:
        if m not in allowed:
            raise ActsimInputError(f"{field}.mean_stress_methods: '{m}' is not one of {', '.join(allowed)}")
    if len(set(methods)) != len(methods):
        raise ActsimInputError(f"{field}.mean_stress_methods: {methods} lists a method twice")
    credit = t.boolean("credit_compressive_mean", default=False)
    tip_force = None
    if t.has("tip_force"):
        tip_force = t.quantity("tip_force", "force")
        if tip_force == 0.0:
            tip_force = None
    known = list(info.get("materials", []))
    mats = {}
    mt = t.raw("materials", default={})
    if not isinstance(mt, dict):
        raise ActsimInputError(f"{field}.materials: must be a table of [{field}.materials.<material name>] sections")
    for name, sub in mt.items():
        if known and name not in known:
            hint = difflib.get_close_matches(name, known, n=1)
            extra = f"; did you mean '{hint[0]}'?" if hint else f"; scenario materials are: {', '.join(known)}"
            raise ActsimInputError(f"{field}.materials.{name}: no material '{name}' in the scenario{extra}")
        mats[name] = _parse_material_limits(name, sub, where=f"{field}.materials.{name}", base_dir=Path(base_dir))
    t.finish()
    return CheckSettings(
        required_safety_factor=sf, target_cycles=target, cycles_per_protocol=cpp, damage_limit=dlim,
        mean_stress_methods=tuple(methods), credit_compressive_mean=credit, tip_force=tip_force, materials=mats,
    )


# ---------------------------------------------------------------------------
# [safety]


@dataclass(frozen=True)
class SafetySettings:
    """Parsed ``[safety]`` section (SI).

    Attributes
    ----------
    exposure_distance_factor : float or None
        Irradiance at the exposed person / irradiance at the strip, (0, 1] [-].
    exposure_irradiance : float or None
        Total irradiance at the person while the sources are as bright as their brightest step [W/m^2].
    exposure_duration : float or None
        Time the person is exposed; the protocol repeats to fill it. None: 8 h of repeated use
        (the daily reference of the ICNIRP / IEC 62471 limits) [s].
    skin_contact : bool
        Whether a face of the strip touches the skin.
    skin_face : str
        ``"top"`` or ``"bottom"``: the face that touches the skin.
    contact_duration : float or None
        Duration of continuous skin contact; None: the exposure duration (or one run) [s].
    skin_material_class : str
        Material class of the contacting face for the skin limits.
    skin_standard : str
        ``"governing"``, ``"IEC 60601-1"`` or ``"ISO 13732-1"``.
    """

    exposure_distance_factor: float | None = None
    exposure_irradiance: float | None = None
    exposure_duration: float | None = None
    skin_contact: bool = False
    skin_face: str = "bottom"
    contact_duration: float | None = None
    skin_material_class: str = "plastic"
    skin_standard: str = "governing"


def parse_safety(data, *, field: str = "safety", base_dir=Path("."), scenario_info=None) -> SafetySettings:
    """Parse the ``[safety]`` section.

    Parameters
    ----------
    data : dict
        The TOML table.
    field : str
        Section name for messages.
    base_dir : pathlib.Path
        Unused (no files).
    scenario_info : dict
        Scenario facts (unused).

    Returns
    -------
    SafetySettings
    """
    from .skin import MATERIAL_CLASSES, STANDARDS

    t = Table(data, field)
    f = None
    e = None
    if t.has("exposure_distance_factor") and t.has("exposure_irradiance"):
        raise ActsimInputError(f"{field}: give exposure_distance_factor or exposure_irradiance, not both")
    if t.has("exposure_distance_factor"):
        f = t.number("exposure_distance_factor", lo=0.0, lo_open=True, hi=1.0)
    if t.has("exposure_irradiance"):
        e = t.quantity("exposure_irradiance", "irradiance", lo=0.0, lo_open=True)
    dur = t.quantity("exposure_duration", "time", default=None, lo=0.0, lo_open=True, hi=365 * 86400.0)
    skin = t.boolean("skin_contact", default=False)
    face = t.string("skin_face", default="bottom", choices=("top", "bottom"))
    cdur = t.quantity("contact_duration", "time", default=None, lo=0.0, lo_open=True, hi=365 * 86400.0)
    mat = t.string("skin_material_class", default="plastic", choices=MATERIAL_CLASSES)
    std = t.string("skin_standard", default="governing", choices=STANDARDS)
    t.finish()
    return SafetySettings(
        exposure_distance_factor=f, exposure_irradiance=e, exposure_duration=dur, skin_contact=skin, skin_face=face,
        contact_duration=cdur, skin_material_class=mat, skin_standard=std,
    )


# ---------------------------------------------------------------------------
# [joint]


@dataclass(frozen=True)
class JointSettings:
    """Parsed ``[joint]`` section (SI).

    Attributes
    ----------
    mounting : str
        ``"hinge"``: the strips are the flexure hinge between two links;
        ``"lever"``: the strips' tips push a lever arm of the joint.
    strips : int or None
        Number of strips in parallel; None: solve for the number needed.
    lever_arm : float or None
        Joint axis to the strip's contact point (``"lever"`` only) [m].
    hinge_length : float
        Free length of the strip acting as the hinge (``"hinge"``; default the strip's free length) [m].
    angle_start, angle_end : float
        Link angle from the horizontal at the start and end of the lift; the
        strips are flat at ``angle_start`` [rad].
    angle_points : int
        Angles at which the joint is checked [-].
    gravity_direction : str
        ``"down"``: the strips lift the link against gravity; ``"up"``: the
        joint is mounted so that the strips bend with gravity.
    extra_moment : float
        Further moment the joint must deliver at every angle (e.g. a grip) [N m].
    payload : tuple of actsim.joint.MassItem
        Link and payload items.
    """

    mounting: str
    strips: int | None
    lever_arm: float | None
    hinge_length: float
    angle_start: float
    angle_end: float
    angle_points: int
    gravity_direction: str
    extra_moment: float
    payload: tuple


_ITEM_KINDS = ("point", "rod", "tube", "tapered_tube")


def _payload_item(i: int, data, field: str):
    from .. import joint

    t = Table(data, f"{field}.payload[{i}]")
    kind = t.string("kind", choices=_ITEM_KINDS)
    name = t.string("name", default=f"{kind} {i + 1}")
    ao = t.quantity("angle_offset", "angle", default=0.0)
    if kind == "point":
        item = joint.point_mass(mass=t.quantity("mass", "mass", lo=0.0), distance=t.quantity("distance", "length", lo=0.0),
                                angle_offset=ao, name=name)
    elif kind == "rod":
        length = t.quantity("length", "length", lo=0.0, lo_open=True)
        offset = t.quantity("offset", "length", default=0.0, lo=0.0)
        if t.has("mass"):
            if t.has("density") or t.has("diameter"):
                raise ActsimInputError(f"{field}.payload[{i}]: give mass, or density and diameter, not both")
            item = joint.rod(length=length, mass=t.quantity("mass", "mass", lo=0.0), offset=offset, angle_offset=ao, name=name)
        else:
            item = joint.rod(length=length, density=t.quantity("density", "density", lo=0.0, lo_open=True),
                             diameter=t.quantity("diameter", "length", lo=0.0, lo_open=True), offset=offset,
                             angle_offset=ao, name=name)
    elif kind == "tube":
        item = joint.tube(
            length=t.quantity("length", "length", lo=0.0, lo_open=True),
            outer_diameter=t.quantity("outer_diameter", "length", lo=0.0, lo_open=True),
            inner_diameter=t.quantity("inner_diameter", "length", lo=0.0),
            density=t.quantity("density", "density", lo=0.0, lo_open=True),
            offset=t.quantity("offset", "length", default=0.0, lo=0.0), angle_offset=ao, name=name,
        )
    else:
        item = joint.tapered_tube(
            length=t.quantity("length", "length", lo=0.0, lo_open=True),
            outer_diameter_near=t.quantity("outer_diameter_near", "length", lo=0.0),
            outer_diameter_far=t.quantity("outer_diameter_far", "length", lo=0.0),
            inner_diameter=t.quantity("inner_diameter", "length", default=0.0, lo=0.0),
            density=t.quantity("density", "density", lo=0.0, lo_open=True),
            offset=t.quantity("offset", "length", default=0.0, lo=0.0), angle_offset=ao, name=name,
        )
    t.finish()
    return item


def parse_joint(data, *, field: str = "joint", base_dir=Path("."), scenario_info=None) -> JointSettings:
    """Parse the ``[joint]`` section.

    Parameters
    ----------
    data : dict
        The TOML table.
    field : str
        Section name for messages.
    base_dir : pathlib.Path
        Unused (no files).
    scenario_info : dict
        ``free_length`` [m] of the strip (the default hinge length).

    Returns
    -------
    JointSettings
    """
    info = scenario_info or {}
    t = Table(data, field)
    mounting = t.string("mounting", default="hinge", choices=("hinge", "lever"))
    raw = t.raw("strips", default="solve")
    if raw == "solve":
        strips = None
    elif isinstance(raw, bool) or not isinstance(raw, int):
        raise ActsimInputError(f"{field}.strips: {raw!r} must be a whole number >= 1 or \"solve\"")
    else:
        if not 1 <= raw <= 100000:
            raise ActsimInputError(f"{field}.strips: {raw} is outside the allowed range (>= 1 and <= 100000, or \"solve\")")
        strips = int(raw)
    lever_arm = None
    if mounting == "lever":
        lever_arm = t.quantity("lever_arm", "length", lo=0.0, lo_open=True)
    elif t.has("lever_arm"):
        raise ActsimInputError(f"{field}.lever_arm: only used with mounting = \"lever\" (mounting is \"{mounting}\")")
    default_len = info.get("free_length")
    if mounting == "hinge":
        if t.has("hinge_length") or default_len is None:
            hinge_length = t.quantity("hinge_length", "length", lo=0.0, lo_open=True)
        else:
            hinge_length = float(default_len)
    else:
        if t.has("hinge_length"):
            raise ActsimInputError(f"{field}.hinge_length: only used with mounting = \"hinge\"")
        hinge_length = float(default_len) if default_len is not None else math.nan
    a0 = t.quantity("angle_start", "angle", default="0 deg", lo=-math.pi, hi=math.pi)
    a1 = t.quantity("angle_end", "angle", lo=-math.pi, hi=math.pi)
    if not a1 > a0:
        raise ActsimInputError(
            f"{field}.angle_end: {math.degrees(a1):g} deg is outside the allowed range (> angle_start = {math.degrees(a0):g} deg)"
        )
    n = t.integer("angle_points", default=61, lo=2, hi=10001)
    gdir = t.string("gravity_direction", default="down", choices=("down", "up"))
    extra = t.quantity("extra_moment", "moment", default=0.0)
    items_raw = t.raw("payload", default=[])
    if not isinstance(items_raw, list):
        raise ActsimInputError(f"{field}.payload: must be a list of tables, e.g. [ {{ kind = \"point\", mass = \"5 g\", distance = \"20 mm\" }} ]")
    items = tuple(_payload_item(i, d, field) for i, d in enumerate(items_raw))
    if not items and extra == 0.0:
        raise ActsimInputError(f"{field}.payload: empty and extra_moment is 0; the joint has nothing to lift")
    t.finish()
    return JointSettings(
        mounting=mounting, strips=strips, lever_arm=lever_arm, hinge_length=hinge_length, angle_start=a0, angle_end=a1,
        angle_points=n, gravity_direction=gdir, extra_moment=extra, payload=items,
    )


# ---------------------------------------------------------------------------
# the sections of a scenario


def checks_settings(scenario) -> CheckSettings | None:
    """The scenario's ``[checks]`` section parsed by :func:`parse_checks`, or None without one.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario

    Returns
    -------
    CheckSettings or None
        Parsed once per scenario object.

    Raises
    ------
    ActsimInputError
        A bad field of the section (one line).
    """
    return section_settings(scenario, "checks", parse_checks)


def safety_settings(scenario) -> SafetySettings | None:
    """The scenario's ``[safety]`` section parsed by :func:`parse_safety`, or None without one.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario

    Returns
    -------
    SafetySettings or None
    """
    return section_settings(scenario, "safety", parse_safety)


def joint_settings(scenario) -> JointSettings | None:
    """The scenario's ``[joint]`` section parsed by :func:`parse_joint`, or None without one.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario

    Returns
    -------
    JointSettings or None
    """
    return section_settings(scenario, "joint", parse_joint)
