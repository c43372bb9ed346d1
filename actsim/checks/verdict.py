"""Shared result and limit structures for every actsim design check.

A design check compares one modelled quantity (a stress, a damage sum, an
exposure, a skin temperature ...) with one limit. The limit, its source and its
range of validity travel together (:class:`Limit`), and so does the outcome
(:class:`CheckResult`). Verdicts never call a design "safe": they say whether
the modelled value is within the modelled limit, and name the limit's source.

Every check is phrased as an upper bound, "value must not exceed limit"; a
lower bound is rephrased (a fatigue life target becomes a damage sum that must
stay at or below the damage limit).

Limits are read from data files (TOML) such as ``actsim/data/material_limits.toml``
with :func:`load_limits`; values there carry units and are converted to SI here,
at the edge, by :mod:`actsim.units`.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import asdict, dataclass, field
from importlib import resources
from pathlib import Path
from types import MappingProxyType
from typing import Iterable, Mapping

from ..errors import ActsimInputError
from ..units import SI_UNITS, parse_dimensionless, parse_quantity

__all__ = [
    "CheckResult",
    "NotAssessed",
    "Limit",
    "format_table",
    "format_quantity",
    "format_margin",
    "to_records",
    "load_limits",
    "load_material_limits",
    "material_limits",
    "MATERIAL_LIMITS_FILE",
]

#: Name of the packaged data file of illustrative material limits.
MATERIAL_LIMITS_FILE = "material_limits.toml"

_MARGIN_KINDS = ("ratio", "difference")


def _finite_or_inf(x, *, field_name: str) -> float:
    try:
        v = float(x)
    except (TypeError, ValueError):
        raise ActsimInputError(f"{field_name}: {x!r} is not a number") from None
    if math.isnan(v):
        raise ActsimInputError(f"{field_name}: value is NaN; a finite number (or inf) is required")
    return v


@dataclass(frozen=True)
class CheckResult:
    """Outcome of one design check: a modelled value against one limit.

    Attributes
    ----------
    check : str
        What was checked, e.g. ``"yield strength, layer 0 (active)"``.
    value : float
        Modelled value in ``unit`` (SI) [unit].
    limit : float
        Limit the value must not exceed, in ``unit`` (SI) [unit].
    unit : str
        SI unit of ``value`` and ``limit`` (``"1"`` for dimensionless).
    margin : float
        For ``margin_kind="ratio"``: limit / value (a safety factor, > 1 means
        below the limit) [-]. For ``margin_kind="difference"``: limit - value
        [unit].
    passed : bool
        Whether the check's own acceptance rule was met (for example a safety
        factor of at least the required one).
    source : str
        Where the limit comes from (standard, handbook, data file entry).
    validity : str
        Range of validity of the limit and of the model behind the value.
    note : str
        Anything the reader must know (assumptions, extrapolation, location of
        the maximum).
    margin_kind : str
        ``"ratio"`` or ``"difference"``, see ``margin``.
    """

    check: str
    value: float
    limit: float
    unit: str
    margin: float
    passed: bool
    source: str
    validity: str
    note: str = ""
    margin_kind: str = "ratio"

    def __post_init__(self):
        for name in ("value", "limit", "margin"):
            object.__setattr__(self, name, _finite_or_inf(getattr(self, name), field_name=f"CheckResult.{name}"))
        if self.margin_kind not in _MARGIN_KINDS:
            raise ActsimInputError(f"CheckResult.margin_kind: {self.margin_kind!r} is not one of {_MARGIN_KINDS}")
        object.__setattr__(self, "passed", bool(self.passed))

    @classmethod
    def upper_bound(
        cls,
        *,
        check: str,
        value: float,
        limit: float,
        unit: str,
        source: str,
        validity: str,
        note: str = "",
        margin_kind: str = "ratio",
        required_margin: float | None = None,
    ) -> "CheckResult":
        """Build a result for "value must not exceed limit", computing margin and pass.

        Parameters
        ----------
        value, limit : float
            Modelled value and limit, both in ``unit`` [unit].
        margin_kind : str
            ``"ratio"`` gives margin = limit / value (inf when value is 0);
            ``"difference"`` gives margin = limit - value.
        required_margin : float, optional
            The check passes when margin >= required_margin. Default 1 for a
            ratio, 0 for a difference (i.e. value <= limit).
        """
        value = _finite_or_inf(value, field_name="CheckResult.value")
        limit = _finite_or_inf(limit, field_name="CheckResult.limit")
        if margin_kind == "ratio":
            if value < 0 or limit < 0:
                raise ActsimInputError(
                    f"{check}: a ratio margin needs a value >= 0 and a limit >= 0 (got value {value:g}, limit {limit:g} {unit})"
                )
            margin = math.inf if value == 0 else limit / value
            req = 1.0 if required_margin is None else float(required_margin)
        elif margin_kind == "difference":
            margin = limit - value
            req = 0.0 if required_margin is None else float(required_margin)
        else:
            raise ActsimInputError(f"CheckResult.margin_kind: {margin_kind!r} is not one of {_MARGIN_KINDS}")
        return cls(
            check=check,
            value=value,
            limit=limit,
            unit=unit,
            margin=margin,
            passed=margin >= req,
            source=source,
            validity=validity,
            note=note,
            margin_kind=margin_kind,
        )

    @property
    def exceeds_limit(self) -> bool:
        """True when the modelled value is above the limit itself."""
        return self.value > self.limit

    @property
    def verdict_short(self) -> str:
        """Verdict without the source, for tables."""
        if self.passed:
            return "within the modelled limit"
        if self.exceeds_limit:
            return "exceeds the modelled limit"
        return "within the modelled limit but short of the required margin"

    @property
    def verdict(self) -> str:
        """Verdict text naming the limit's source. Never claims that a design is safe."""
        return f"{self.verdict_short} ({self.source})"


@dataclass(frozen=True)
class NotAssessed:
    """A check that could not be made, with the reason (never counted as a pass).

    Attributes
    ----------
    check : str
        What would have been checked.
    reason : str
        Why it was not assessed, and what would make it possible.
    source : str
        The limit's source, when known.
    validity : str
        Range of validity, when known.
    """

    check: str
    reason: str
    source: str = ""
    validity: str = ""

    passed = None  # neither pass nor fail

    @property
    def verdict(self) -> str:
        return f"not assessed: {self.reason}"


_PREFIXED_UNITS = ("Pa", "N", "W", "J", "N m")
_PREFIXES = ((1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "µ"))
_LENGTHS = ((1.0, 1.0, "m"), (1e-3, 1e3, "mm"), (1e-6, 1e6, "um"), (0.0, 1e9, "nm"))


def format_quantity(x: float, unit: str, *, difference: bool = False) -> str:
    """A value for a check table in the units a person reads: 4 significant digits.

    An SI prefix for Pa, N, N m, W and J; a length in m, mm, um or nm; a temperature (K) in degC, a
    temperature difference in K.

    Parameters
    ----------
    x : float
        The value [unit].
    unit : str
        Its SI unit (``""`` or ``"1"``: dimensionless, printed bare).
    difference : bool, optional
        ``x`` is a difference (a margin): a temperature difference stays in K.

    Returns
    -------
    str

    Examples
    --------
    >>> format_quantity(2.5e7, "Pa")
    '25 MPa'
    >>> format_quantity(0.0125, "1")
    '0.0125'
    >>> format_quantity(310.15, "K")
    '37 degC'
    >>> format_quantity(0.0015, "m")
    '1.5 mm'
    """
    if not math.isfinite(x):
        return f"{x} {unit}".rstrip() if unit not in ("", "1") else f"{x}"
    if unit in ("", "1"):
        return f"{x:.4g}"
    if unit == "K" and not difference:
        return f"{x - 273.15:.4g} degC"
    if unit == "m" and x != 0:
        for lim, scale, u in _LENGTHS:
            if abs(x) >= lim:
                return f"{x * scale:.4g} {u}"
    if unit in _PREFIXED_UNITS and x != 0:
        ax = abs(x)
        for scale, p in _PREFIXES:
            if ax >= scale:
                return f"{x / scale:.4g} {p}{unit}"
        return f"{x:.4g} {unit}"
    return f"{x:.4g} {unit}"


def format_margin(r: CheckResult) -> str:
    """The margin of a result for a table: a ratio to 3 digits (``inf`` when unbounded), a difference with its unit."""
    if r.margin_kind == "ratio":
        return "inf" if math.isinf(r.margin) else f"{r.margin:.3g}"
    return format_quantity(r.margin, r.unit, difference=True)


def format_table(results: Iterable[CheckResult]) -> str:
    """Plain-text table of check results: check, value, limit, margin, verdict, source.

    Parameters
    ----------
    results : iterable of CheckResult

    Returns
    -------
    str
        One header line, a rule, and one line per result; notes follow the
        table, numbered by row.
    """
    results = list(results)
    header = ("check", "value", "limit", "margin", "verdict", "source")
    rows = [
        (r.check, format_quantity(r.value, r.unit), format_quantity(r.limit, r.unit), format_margin(r), r.verdict_short, r.source)
        for r in results
    ]
    widths = [max(len(h), *(len(row[i]) for row in rows)) if rows else len(h) for i, h in enumerate(header)]
    line = lambda cells: "  ".join(c.ljust(w) for c, w in zip(cells, widths)).rstrip()  # noqa: E731
    out = [line(header), line(tuple("-" * w for w in widths))]
    out += [line(row) for row in rows]
    notes = [(i + 1, r.note) for i, r in enumerate(results) if r.note]
    if notes:
        out.append("")
        out += [f"[{i}] {n}" for i, n in notes]
    return "\n".join(out)


def to_records(results: Iterable[CheckResult]) -> list[dict]:
    """Check results as a list of plain dicts (JSON-ready), each with its verdict text.

    Infinite margins are kept as ``float('inf')``; a JSON writer should map
    them (Python's ``json`` writes ``Infinity``).
    """
    recs = []
    for r in results:
        d = asdict(r)
        d["verdict"] = r.verdict
        recs.append(d)
    return recs


# ---------------------------------------------------------------------------
# Limits as data


@dataclass(frozen=True)
class Limit:
    """One limit value with its unit, source and range of validity.

    Attributes
    ----------
    name : str
        Property name, e.g. ``"yield_strength"``.
    value : float
        Value in SI [unit].
    unit : str
        SI unit (``"1"`` for dimensionless).
    source : str
        Where the number comes from.
    valid_range : Mapping[str, tuple[float, float]]
        Conditions under which the value applies, as data: condition name ->
        (low, high) in SI, e.g. ``{"temperature": (273.15, 313.15)}`` [K].
    validity : str
        The same range in words, plus any other condition.
    note : str
        Free text (for example "illustrative, not design data").
    """

    name: str
    value: float
    unit: str
    source: str
    valid_range: Mapping[str, tuple[float, float]] = field(default_factory=dict, hash=False)
    validity: str = ""
    note: str = ""

    def __post_init__(self):
        object.__setattr__(self, "valid_range", MappingProxyType(dict(self.valid_range)))
        if not math.isfinite(float(self.value)):
            raise ActsimInputError(f"limit {self.name}: value {self.value!r} is not finite")

    def out_of_range(self, **conditions: float) -> list[str]:
        """Messages for each given condition that lies outside ``valid_range``.

        Conditions not listed in ``valid_range`` are ignored (nothing is known
        about them); an empty list means no listed condition is violated.
        """
        msgs = []
        for key, x in conditions.items():
            if key not in self.valid_range:
                continue
            lo, hi = self.valid_range[key]
            x = float(x)
            if not (lo <= x <= hi):
                msgs.append(f"{self.name}: {key} {x:g} outside the range of validity [{lo:g}, {hi:g}]")
        return msgs


def _parse_value(raw, *, kind: str, field_name: str) -> float:
    if kind == "dimensionless":
        return parse_dimensionless(raw, field=field_name)
    if kind not in SI_UNITS:
        allowed = ", ".join(["dimensionless", *SI_UNITS])
        raise ActsimInputError(f"{field_name}: kind {kind!r} is unknown; allowed kinds: {allowed}")
    return parse_quantity(raw, field=field_name, kind=kind)


#: Validity conditions whose names are not kinds of SI_UNITS but carry units.
_RANGE_ALIASES = {"frequency": "rate", "strain_rate": "rate", "stress": "pressure", "mean_stress": "pressure"}


def _range_kind(key: str) -> str:
    # A validity condition named after a physical kind ("temperature", "rate" ...) or an alias
    # ("frequency") carries units; any other name ("cycles", "stress_ratio" ...) is a plain number.
    if key in SI_UNITS:
        return key
    return _RANGE_ALIASES.get(key, "dimensionless")


def _unit_of(kind: str) -> str:
    return "1" if kind == "dimensionless" else SI_UNITS[kind][0]


def _range_text(valid_range: Mapping[str, tuple[float, float]]) -> str:
    parts = []
    for key, (lo, hi) in valid_range.items():
        u = _unit_of(_range_kind(key))
        parts.append(f"{key} {lo:g}..{hi:g}" + ("" if u == "1" else f" {u}"))
    return "; ".join(parts)


def load_limits(path) -> dict[str, dict[str, Limit]]:
    """Read a TOML file of limits into ``{group: {property: Limit}}`` (SI values).

    File layout (one table per group, one sub-table per property)::

        [groups.my_group]
        description = "..."
        [groups.my_group.yield_strength]
        kind = "pressure"            # a kind of actsim.units.SI_UNITS, or "dimensionless"
        value = "50 MPa"             # with a unit (a plain number for dimensionless)
        source = "..."
        validity = "..."             # words; the ranges below are data
        valid = { temperature = ["0 degC", "40 degC"], cycles = [1e3, 1e7] }
        note = "..."

    Parameters
    ----------
    path : str or os.PathLike
        The TOML file.

    Returns
    -------
    dict
        Group name -> property name -> :class:`Limit`.
    """
    from ..inputfiles import read_text_file

    p = Path(path)
    text = read_text_file(p, field="limits file", shown=p.name, what="TOML")
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ActsimInputError(f"limits file {p.name}: not valid TOML ({exc})") from None
    groups = data.get("groups")
    if not isinstance(groups, dict) or not groups:
        raise ActsimInputError(f"limits file {p.name}: no [groups.<name>] tables found")
    out: dict[str, dict[str, Limit]] = {}
    for gname, gtab in groups.items():
        if not isinstance(gtab, dict):
            raise ActsimInputError(f"limits file {p.name}: groups.{gname} must be a table")
        props = {}
        for pname, ptab in gtab.items():
            if not isinstance(ptab, dict):
                continue  # description and other plain keys
            fname = f"groups.{gname}.{pname}"
            for key in ("kind", "value", "source"):
                if key not in ptab:
                    raise ActsimInputError(f"limits file {p.name}: {fname}.{key} is missing")
            kind = ptab["kind"]
            value = _parse_value(ptab["value"], kind=kind, field_name=f"{fname}.value")
            vr = {}
            for key, pair in dict(ptab.get("valid", {})).items():
                if not isinstance(pair, list) or len(pair) != 2:
                    raise ActsimInputError(f"limits file {p.name}: {fname}.valid.{key} must be a [low, high] pair")
                rk = _range_kind(key)
                lo = _parse_value(pair[0], kind=rk, field_name=f"{fname}.valid.{key}[0]")
                hi = _parse_value(pair[1], kind=rk, field_name=f"{fname}.valid.{key}[1]")
                if lo > hi:
                    raise ActsimInputError(f"limits file {p.name}: {fname}.valid.{key}: low {lo:g} > high {hi:g}")
                vr[key] = (lo, hi)
            words = str(ptab.get("validity", ""))
            rng = _range_text(vr)
            validity = "; ".join(s for s in (rng, words) if s)
            props[pname] = Limit(
                name=pname,
                value=value,
                unit=_unit_of(kind),
                source=str(ptab["source"]),
                valid_range=vr,
                validity=validity,
                note=str(ptab.get("note", "")),
            )
        out[gname] = props
    return out


def load_material_limits(path=None) -> dict[str, dict[str, Limit]]:
    """Read the material limits file (default: the packaged illustrative one).

    The packaged file holds illustrative typical values, from memory, for
    invented generic polymer classes. They are not design data: use measured
    values for the real material.
    """
    if path is None:
        path = resources.files("actsim").joinpath("data", MATERIAL_LIMITS_FILE)
        with resources.as_file(path) as real:
            return load_limits(real)
    return load_limits(path)


def material_limits(name: str, path=None) -> dict[str, Limit]:
    """Limits of one material class by name, e.g. ``material_limits("generic_glassy_network")``."""
    table = load_material_limits(path)
    if name not in table:
        raise ActsimInputError(f"material: {name!r} is not in the limits file; available: {', '.join(sorted(table))}")
    return table[name]
