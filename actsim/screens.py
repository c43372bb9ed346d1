"""What the verbs print: the width of the screen, tables that fit it, values in the units a person reads.

Every verb's summary fits the terminal: at most :data:`DEFAULT_WIDTH` columns, or the width the
``COLUMNS`` environment variable gives (:func:`screen_width`). Tables (:func:`table`) shrink one
column, the one holding words, and wrap its cells onto further lines; any other long line is wrapped
with a hanging indent (:func:`wrap`, :func:`fit_text`). Values are shown in engineering units
(:func:`display_quantity`: deg, degC, mN, um, nm, mW/cm^2, J/cm^2), never in SI base units.

Nothing here imports numpy or any other heavy library, so a verb module may import it at its top.
"""

from __future__ import annotations

import math
import os
import shutil
import textwrap

__all__ = ["DEFAULT_WIDTH", "MIN_WIDTH", "screen_width", "wrap", "fit_text", "table", "display_quantity",
           "row_ranges"]

#: Widest line a verb prints when the terminal does not say otherwise [characters].
DEFAULT_WIDTH = 100
#: Narrowest width honoured (a smaller ``COLUMNS`` is raised to this) [characters].
MIN_WIDTH = 40


def screen_width() -> int:
    """Width the verbs print to: ``COLUMNS`` when set, else the terminal's width, never more than 100.

    ``COLUMNS`` is obeyed as given (between :data:`MIN_WIDTH` and 1000); without it the width is
    that of the terminal (``shutil.get_terminal_size``) up to :data:`DEFAULT_WIDTH`, and
    :data:`DEFAULT_WIDTH` when the output is not a terminal.

    Returns
    -------
    int
        Width [characters].
    """
    text = os.environ.get("COLUMNS", "").strip()
    if text.isdigit() and int(text) > 0:
        return max(MIN_WIDTH, min(int(text), 1000))
    cols = shutil.get_terminal_size((DEFAULT_WIDTH, 24)).columns
    return max(MIN_WIDTH, min(cols, DEFAULT_WIDTH))


def wrap(text: str, width: int | None = None, *, indent: str = "", hang: str = "    ") -> list[str]:
    """One line of text wrapped to ``width``, the first line indented by ``indent``, the rest by ``indent + hang``.

    Parameters
    ----------
    text : str
        The text (no line breaks).
    width : int, optional
        Width [characters] (default :func:`screen_width`).
    indent, hang : str
        Indent of the first line, and the extra indent of the lines after it.

    Returns
    -------
    list of str
        Lines of at most ``width`` characters (a single word longer than that is broken).
    """
    width = width or screen_width()
    lines = textwrap.wrap(text, width=width, initial_indent=indent, subsequent_indent=indent + hang,
                          break_on_hyphens=False)
    return lines or [indent.rstrip()]


def fit_text(text: str, width: int | None = None) -> str:
    """Every line of ``text`` that is wider than ``width`` wrapped onto further lines, keeping its indent.

    Parameters
    ----------
    text : str
        Several lines.
    width : int, optional
        Width [characters] (default :func:`screen_width`).

    Returns
    -------
    str
    """
    width = width or screen_width()
    out = []
    for line in text.splitlines():
        if len(line) <= width:
            out.append(line)
        else:
            body = line.lstrip(" ")
            out += wrap(body, width, indent=line[: len(line) - len(body)])
    return "\n".join(out)


def table(header, rows, *, width: int | None = None, flex: int = 0, align=None, indent: str = "",
          groups=None) -> list[str]:
    """A plain-text table that fits ``width``: the ``flex`` column shrinks and wraps its cells.

    Parameters
    ----------
    header : sequence of str
        Column titles.
    rows : sequence of sequence of str
        Cells (already formatted).
    width : int, optional
        Width [characters] (default :func:`screen_width`).
    flex : int
        Index of the column that shrinks to make the table fit (its cells wrap onto further lines).
    align : str, optional
        One letter per column, ``"l"`` or ``"r"`` (default all left).
    indent : str
        Printed before every line.
    groups : sequence of str or None, optional
        A heading per row (None or ""); a heading line is printed where it changes.

    Returns
    -------
    list of str
        Lines of at most ``width`` characters (a column other than ``flex`` wider than the whole
        width is cut with "...").
    """
    width = width or screen_width()
    n = len(header)
    align = align or "l" * n
    rows = [[str(c) for c in r] for r in rows]
    widths = [max([len(header[i])] + [len(r[i]) for r in rows]) for i in range(n)]
    fixed = sum(w for i, w in enumerate(widths) if i != flex) + 2 * (n - 1) + len(indent)
    room = width - fixed
    if room < widths[flex]:
        widths[flex] = max(room, min(12, widths[flex]))

    def cell(text, i):
        return text.rjust(widths[i]) if align[i] == "r" else text.ljust(widths[i])

    def lines_of(cells):
        parts = [textwrap.wrap(c, widths[i], break_on_hyphens=False) or [""] if i == flex else [c]
                 for i, c in enumerate(cells)]
        out = []
        for k in range(max(len(p) for p in parts)):
            line = indent + "  ".join(cell(p[k] if k < len(p) else "", i) for i, p in enumerate(parts))
            line = line.rstrip()
            out.append(line if len(line) <= width else line[: width - 3] + "...")
        return out

    out = lines_of(header)
    out.append((indent + "  ".join("-" * w for w in widths))[:width])
    last = None
    for k, r in enumerate(rows):
        g = groups[k] if groups is not None else None
        if g and g != last:
            out += wrap(g, width, indent=indent)
        last = g or last
        out += lines_of(r)
    return out


def row_ranges(numbers) -> str:
    """Row numbers as short ranges: ``[1, 2, 3, 5]`` -> ``"1-3,5"``."""
    nums = sorted(set(int(x) for x in numbers))
    parts, start = [], None
    for i, x in enumerate(nums):
        if start is None:
            start = x
        if i + 1 == len(nums) or nums[i + 1] != x + 1:
            parts.append(str(start) if start == x else f"{start}-{x}")
            start = None
    return ",".join(parts)


def _prefixed(v: float, unit: str, steps) -> str:
    a = abs(v)
    for lim, k, u in steps:
        if 0 < a < lim:
            return f"{v * k:.4g} {u}"
    return f"{v:.4g} {unit}"


def display_quantity(value, unit: str, *, field: str = "") -> str:
    """A value in SI shown in the units a person reads: rad -> deg, K -> degC, N -> mN or uN, m -> um or nm ...

    Parameters
    ----------
    value : float, str or None
        Value in SI [``unit``]; words (categorical values) are returned as they are; None -> "-".
    unit : str
        SI unit of ``value`` ("m", "N", "N m", "rad", "K", "s", "W/m^2", "J/m^2", "J", "1", ...).
    field : str, optional
        The field or metric name: a wavelength is always in nm, a temperature (K) in degC.

    Returns
    -------
    str
        Four significant digits and the display unit, e.g. ``display_quantity(4.05e-07, "m",
        field="wavelength")`` -> ``"405 nm"``.
    """
    if value is None:
        return "-"
    if isinstance(value, (str, bool)):
        return str(value)
    v = float(value)
    if math.isnan(v):
        return "-"
    if not math.isfinite(v):
        return f"{v} {unit}".strip()
    unit = unit.strip()
    if unit == "m":
        if "wavelength" in field:
            return f"{v * 1e9:.4g} nm"
        return _prefixed(v, "m", ((1e-6, 1e9, "nm"), (1e-3, 1e6, "um"), (1.0, 1e3, "mm")))
    if unit == "N":
        return _prefixed(v, "N", ((1e-3, 1e6, "uN"), (1.0, 1e3, "mN")))
    if unit in ("N m", "N*m"):
        return _prefixed(v, "N m", ((1e-3, 1e6, "uN m"), (1.0, 1e3, "mN m")))
    if unit == "J":
        return _prefixed(v, "J", ((1e-3, 1e6, "uJ"), (1.0, 1e3, "mJ")))
    if unit == "rad":
        return f"{math.degrees(v):.4g} deg"
    if unit == "K":
        if "difference" in field or "width" in field or "rise" in field:
            return f"{v:.4g} K"
        return f"{v - 273.15:.4g} degC"
    if unit in ("W/m^2", "W m-2"):
        return f"{v * 0.1:.4g} mW/cm^2"
    if unit in ("J/m^2", "J m-2"):
        return f"{v * 1e-4:.4g} J/cm^2"
    if unit == "Pa":
        return _prefixed(v, "Pa", ((1e3, 1.0, "Pa"), (1e6, 1e-3, "kPa"), (1e9, 1e-6, "MPa"))) if abs(v) < 1e9 \
            else f"{v * 1e-9:.4g} GPa"
    if unit in ("", "1"):
        return f"{v:.4g}"
    return f"{v:.4g} {unit}"
