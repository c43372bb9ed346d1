"""Consumed-key TOML tables: read scenario sections field by field with one-line errors.

:class:`Table` wraps one TOML table (a ``dict``). Each reader (``quantity``, ``number``,
``integer``, ``string``, ``boolean``, ``table``, ``raw``) marks its key as used, converts the
value to SI through :mod:`actsim.units` and checks its range; :meth:`Table.finish` then refuses
any key nobody read, suggesting the closest known one. Every problem is one
:class:`~actsim.errors.ActsimInputError` line naming the field, the value, the unit and the
allowed range. The scenario stage and the jobs that own a scenario section (checks, safety,
joint, mask, calibration) and the fit plans all read their tables with it.
"""

from __future__ import annotations

import difflib

from .errors import ActsimInputError
from .units import SI_UNITS, check_range, parse_dimensionless, parse_quantity

__all__ = ["Table"]


class Table:
    """A TOML table whose keys are consumed; unknown keys raise with a suggestion.

    Parameters
    ----------
    data : dict
        The TOML table (anything else is refused with one line).
    name : str
        Its dotted name in the file (``"checks"``, ``"materials.film"``, ``""`` for the top level),
        used in every message.

    Notes
    -----
    Readers, each taking ``default`` (``...``: required) and marking the key as used:

    - ``quantity(key, kind, default, lo=, hi=, lo_open=, hi_open=)``: a unit string -> SI float of
      ``kind`` (a key of :data:`actsim.units.SI_UNITS`), range-checked in SI;
    - ``number``, ``integer``, ``string(choices=)``, ``boolean``: dimensionless values;
    - ``table(key)``: a nested :class:`Table`; ``raw(key)``: the value as read;
    - ``has(key)`` tests for a key without using it; ``finish(allowed_extra=())`` refuses keys
      nobody read.

    Examples
    --------
    >>> t = Table({"thickness": "0.25 mm"}, "layers[0]")
    >>> t.quantity("thickness", "length", lo=0.0, lo_open=True)
    0.00025
    >>> t.finish()
    """

    def __init__(self, data, name: str):
        if not isinstance(data, dict):
            raise ActsimInputError(f"{name}: expected a table (section), got {type(data).__name__} {data!r}")
        self.data = data
        self.name = name
        self.used: set[str] = set()

    def field_path(self, key) -> str:
        """The dotted name of ``key`` in this table, for messages."""
        return f"{self.name}.{key}" if self.name else key

    def has(self, key) -> bool:
        return key in self.data

    def raw(self, key, default=...):
        self.used.add(key)
        if key in self.data:
            return self.data[key]
        if default is ...:
            # a misspelt key is what usually hides a required one: name it
            others = [k for k in self.data if isinstance(k, str) and k not in self.used]
            hint = difflib.get_close_matches(key, others, n=1, cutoff=0.75)
            extra = f"; did you mean '{key}' for '{hint[0]}'?" if hint else ""
            raise ActsimInputError(f"{self.field_path(key)}: required field is missing{extra}")
        return default

    def quantity(self, key, kind, default=..., *, lo=None, hi=None, lo_open=False, hi_open=False):
        value = self.raw(key, default)
        if value is None:
            return None
        if value is default and not isinstance(value, str):
            return value
        si = parse_quantity(value, field=self.field_path(key), kind=kind)
        check_range(si, field=self.field_path(key), unit=SI_UNITS[kind][0], lo=lo, hi=hi, lo_open=lo_open,
                    hi_open=hi_open, shown=f"{value!r} (= {si:g} {SI_UNITS[kind][0]})")
        return si

    def number(self, key, default=..., *, lo=None, hi=None, lo_open=False, hi_open=False):
        value = self.raw(key, default)
        v = parse_dimensionless(value, field=self.field_path(key))
        check_range(v, field=self.field_path(key), unit="1", lo=lo, hi=hi, lo_open=lo_open, hi_open=hi_open)
        return v

    def integer(self, key, default=..., *, lo=None, hi=None):
        value = self.raw(key, default)
        if isinstance(value, bool) or not isinstance(value, int):
            raise ActsimInputError(f"{self.field_path(key)}: {value!r} must be a whole number")
        check_range(value, field=self.field_path(key), unit="1", lo=lo, hi=hi)
        return int(value)

    def string(self, key, default=..., *, choices=None):
        value = self.raw(key, default)
        if not isinstance(value, str):
            raise ActsimInputError(f"{self.field_path(key)}: {value!r} must be a text string")
        if choices is not None and value not in choices:
            hint = difflib.get_close_matches(value, choices, n=1)
            extra = f"; did you mean '{hint[0]}'?" if hint else ""
            raise ActsimInputError(
                f"{self.field_path(key)}: '{value}' is not one of {', '.join(repr(c) for c in choices)}{extra}"
            )
        return value

    def boolean(self, key, default=...):
        value = self.raw(key, default)
        if not isinstance(value, bool):
            raise ActsimInputError(f"{self.field_path(key)}: {value!r} must be true or false")
        return value

    def table(self, key, default=...):
        value = self.raw(key, default)
        return Table(value, self.field_path(key))

    def finish(self, allowed_extra=()):
        unknown = [k for k in self.data if k not in self.used and k not in allowed_extra]
        if unknown:
            key = unknown[0]
            known = sorted(self.used | set(allowed_extra))
            hint = difflib.get_close_matches(key, known, n=1)
            extra = f"; did you mean '{hint[0]}'?" if hint else f"; known fields: {', '.join(known)}"
            raise ActsimInputError(f"{self.field_path(key)}: unknown field{extra}")

