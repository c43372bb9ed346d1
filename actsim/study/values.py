"""Values of a swept field: ranges, number-and-unit strings, command-line specs, SI values and names.

A swept field's values are written as in a scenario file (``"5 um"``, ``"10 mW/cm^2"``,
plain numbers for dimensionless fields, words for categorical fields). This module
reads them: :class:`Range` (:func:`lin`, :func:`log`) and its points
(:func:`range_values`), :func:`split_number_unit` and :func:`format_value` (the
override value of a number in a unit), :func:`parse_values` and
:func:`parse_vary_option` (``--vary FIELD=VALUES``), :func:`si_of` (SI number and
unit of a value as written), :func:`dim_name` (a NetCDF name of a field path) and
:func:`json_value` (a value as stored in a manifest or attribute). Nothing here runs
a design.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from ..errors import ActsimInputError

#: Most values of one swept field and most designs of one sweep, even with ``--yes`` (checked before any
#: value is made: a million designs already take hours and gigabytes of results).
MAX_SWEEP_DESIGNS = 1_000_000

_NUMBER_UNIT = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*$")


@dataclass(frozen=True)
class Range:
    """A linear or logarithmic range of a field: ``lin(a, b, n)`` or ``log(a, b, n)``.

    ``a`` and ``b`` are values as in a scenario file (``"5 um"``) or plain
    numbers for dimensionless fields; ``n`` may be omitted for sampled sweeps
    (the range is then the sampling interval).
    """

    kind: str  # "lin" or "log"
    start: object
    stop: object
    num: int | None = None


def lin(start, stop, num=None) -> Range:
    """Linear range from ``start`` to ``stop`` (``num`` points, ends included)."""
    return Range("lin", start, stop, num)


def log(start, stop, num=None) -> Range:
    """Logarithmic range from ``start`` to ``stop`` (``num`` points, ends included)."""
    return Range("log", start, stop, num)


def split_number_unit(value, field_path):
    """Number and unit of a value as written: ``"5 um"`` -> ``(5.0, "um")``; ``0.3`` -> ``(0.3, "")``.

    ``field_path`` names the field in the one-line error when ``value`` is not a
    number followed by an optional unit.
    """
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return float(value), ""
    m = _NUMBER_UNIT.match(str(value))
    if not m:
        raise ActsimInputError(f"{field_path}: cannot read range end {value!r} as a number with a unit, e.g. \"5 um\"")
    return float(m.group(1)), m.group(2)


def range_values(r: Range, field_path: str, num=None):
    """Values of a range as override values (strings with the unit of ``start``)."""
    from ..units import Q_

    a, unit = split_number_unit(r.start, field_path)
    b_num, b_unit = split_number_unit(r.stop, field_path)
    if unit or b_unit:
        try:
            b = float(Q_(b_num, b_unit or "dimensionless").to(unit or "dimensionless").magnitude)
        except Exception:
            raise ActsimInputError(
                f"{field_path}: range ends {r.start!r} and {r.stop!r} do not have compatible units"
            ) from None
    else:
        b = b_num
    n = num if num is not None else r.num
    if n is None:
        raise ActsimInputError(f"{field_path}: {r.kind}({r.start}, {r.stop}) needs a number of points for a grid, "
                               f"e.g. {r.kind}({r.start}, {r.stop}, 10)")
    if n < 1 or n > MAX_SWEEP_DESIGNS:
        raise ActsimInputError(f"{field_path}: {n} points is outside the allowed range (>= 1 and <= {MAX_SWEEP_DESIGNS})")
    if not (np.isfinite(a) and np.isfinite(b)):
        raise ActsimInputError(f"{field_path}: range ends {r.start!r} and {r.stop!r} must be finite numbers")
    if r.kind == "log" and (a <= 0 or b <= 0):
        raise ActsimInputError(f"{field_path}: log({r.start}, {r.stop}) needs both ends > 0")
    try:
        with np.errstate(over="raise", invalid="raise"):  # a range too wide for floats: one line, no warning
            vals = np.geomspace(a, b, n) if r.kind == "log" else np.linspace(a, b, n)
    except FloatingPointError:
        vals = np.array([np.nan])
    if not np.all(np.isfinite(vals)):
        raise ActsimInputError(f"{field_path}: {r.kind}({r.start}, {r.stop}) spans more than floating point numbers "
                               "can hold; use a narrower range")
    return [format_value(v, unit) for v in vals]


def format_value(v: float, unit: str):
    """An override value from a number and a unit: ``(5.0, "um")`` -> ``"5.0 um"``; no unit -> the float."""
    v = float(v)
    return f"{v!r} {unit}" if unit else v


def _scalar_value(text):
    """A list entry as written: int, float, or the string (quantity or word)."""
    if not isinstance(text, str):
        return text.item() if isinstance(text, np.generic) else text
    t = text.strip()
    if re.fullmatch(r"[-+]?\d+", t):
        return int(t)
    try:
        return float(t)
    except ValueError:
        pass
    if t.lower() in ("true", "false"):
        return t.lower() == "true"
    return t


_RANGE_CALL = re.compile(r"^\s*(lin|log)\s*\((.*)\)\s*$", re.IGNORECASE)


def parse_values(spec, field_path: str = "value"):
    """Field values from a command-line spec: ``lin(a, b, n)``, ``log(a, b, n)`` or ``v1,v2,...``.

    Returns a :class:`Range` for a range, else a list of values as written.
    """
    if isinstance(spec, Range):
        return spec
    if not isinstance(spec, str):
        return [_scalar_value(v) for v in spec]
    m = _RANGE_CALL.match(spec)
    if m:
        parts = [p.strip() for p in m.group(2).split(",")]
        if len(parts) not in (2, 3) or not all(parts):
            raise ActsimInputError(f"{field_path}: '{spec}' must be {m.group(1)}(start, stop, n) or {m.group(1)}(start, stop)")
        num = None
        if len(parts) == 3:
            try:
                num = int(parts[2])
            except ValueError:
                raise ActsimInputError(f"{field_path}: number of points '{parts[2]}' in '{spec}' is not an integer") from None
            if not 1 <= num <= MAX_SWEEP_DESIGNS:
                raise ActsimInputError(f"{field_path}: {num} points in '{spec}' is outside the allowed range "
                                       f"(>= 1 and <= {MAX_SWEEP_DESIGNS})")
        a, b = (_scalar_value(p) for p in parts[:2])
        if len(parts) == 2 and isinstance(a, str) != isinstance(b, str) and isinstance(a if isinstance(b, str) else b, int):
            # "lin(5 um, 200)": one end has a unit and the other is a whole number: the count, not an end
            kind = m.group(1).lower()
            raise ActsimInputError(f"{field_path}: {kind}(start, stop, count) needs three values, start and stop "
                                   f"with the same unit, then the count; got '{spec}' (e.g. {kind}(5 um, 200 um, 40))")
        return Range(m.group(1).lower(), a, b, num)
    if spec.count(",") >= MAX_SWEEP_DESIGNS:
        raise ActsimInputError(f"{field_path}: {spec.count(',') + 1} values is more than the {MAX_SWEEP_DESIGNS} allowed")
    vals = [_scalar_value(v) for v in spec.split(",")]
    if any(v == "" for v in vals):
        raise ActsimInputError(f"{field_path}: empty value in '{spec}'")
    return vals


def parse_vary_option(text: str):
    """``"FIELD=VALUES"`` -> (field path, values)."""
    if "=" not in text:
        raise ActsimInputError(f"--vary: '{text}' must be FIELD=VALUES, e.g. \"layers[film].thickness=lin(5 um, 200 um, 40)\"")
    path, spec = text.split("=", 1)
    path = path.strip()
    if not path:
        raise ActsimInputError(f"--vary: '{text}' has no field before '='")
    return path, parse_values(spec.strip(), path)


def si_of(value):
    """SI number and unit of a field value as written (``"10 mW/cm^2"`` -> (100.0, "W/m^2")).

    Plain numbers are dimensionless ("1"); words (not quantities) are returned as
    they are with unit "" (a categorical field).
    """
    from ..units import Q_, SI_UNITS

    if isinstance(value, bool):
        return value, ""
    if isinstance(value, (int, float)):
        return float(value), "1"
    try:
        q = Q_(value)
    except Exception:
        return str(value), ""
    if not hasattr(q, "units"):
        return float(q), "1"
    if q.dimensionless:
        if str(q.units) in ("degree", "radian", "arcminute", "arcsecond"):
            return float(q.to("rad").magnitude), "rad"
        return float(q.to("dimensionless").magnitude), "1"
    for _, (unit, _) in SI_UNITS.items():
        u = Q_(1.0, unit)
        if u.dimensionality == q.dimensionality:
            return float(q.to(unit).magnitude), unit
    return float(q.to_base_units().magnitude), f"{q.to_base_units().units:~}"


#: A number, white space and a unit (``"5.0 um"``, ``"10 mW/cm^2"``): group 1 the number, group 2 the unit.
NUMBER_WITH_UNIT = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s+([A-Za-z%][^\s].*?|[A-Za-z%])\s*$")

#: unit as written -> (SI factor, SI unit) of :func:`si_of`, or None where values are read one by one.
_SI_FACTORS: dict = {}


def _si_factor(unit):
    if unit not in _SI_FACTORS:
        found = None
        factor, si_unit = si_of(f"1 {unit}")
        if isinstance(factor, float) and si_unit:
            found = (factor, si_unit)
            # si_of converts (number * 1 unit) with this same factor: check it on a few numbers (an offset
            # scale such as degC fails here and is read value by value)
            for probe in ("3.7", "0.1", "123.456e-3", "7"):
                if si_of(f"{probe} {unit}") != (float(probe) * factor, si_unit):
                    found = None
                    break
        _SI_FACTORS[unit] = found
    return _SI_FACTORS[unit]


def si_values(values) -> list:
    """:func:`si_of` of many values as written, each distinct unit string parsed once.

    A value ``"<number> <unit>"`` is the number times the SI factor of its unit (what the
    unit library computes for the whole string, so the result is bitwise that of
    :func:`si_of`); anything else (plain numbers, words, offset temperatures) goes
    through :func:`si_of`.
    """
    out = []
    for v in values:
        if isinstance(v, str):
            m = NUMBER_WITH_UNIT.match(v)
            fu = _si_factor(m.group(2)) if m else None
            if fu is not None:
                out.append((float(m.group(1)) * fu[0], fu[1]))
                continue
        out.append(si_of(v))
    return out


def dim_name(path: str) -> str:
    """A NetCDF-friendly name of a field path: ``layers[active film].thickness`` -> ``layers_active_film_thickness``."""
    from ..scenario import split_field_path

    parts = []
    for tok in split_field_path(path):
        parts.append(tok[1] if isinstance(tok, tuple) else tok)
    name = re.sub(r"[^0-9A-Za-z]+", "_", "_".join(parts)).strip("_").lower()
    return name or "field"


def json_value(v):
    """A field value as stored in a manifest or a NetCDF attribute (str, int, float, bool; else its text)."""
    return v if isinstance(v, (str, int, float, bool)) else str(v)


__all__ = ["MAX_SWEEP_DESIGNS", "Range", "lin", "log", "split_number_unit", "range_values", "format_value", "parse_values",
           "parse_vary_option", "si_of", "si_values", "NUMBER_WITH_UNIT", "dim_name", "json_value"]
