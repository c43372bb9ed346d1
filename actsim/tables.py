"""Read measured x–y data (CSV with a header) into SI arrays.

File format
-----------
::

    # synthetic tensile test of an invented film (comment lines start with '#')
    strain [%], stress [MPa]
    0.00, 0.0
    0.05, 1.1
    ...

* Lines starting with ``#`` are comments; a comment containing the word "synthetic" marks the
  file as invented data (``XYData.synthetic``), which plots and reports then say.
* The first other line is the header. Units go in square (or round) brackets after the
  column name, e.g. ``"strain [1]"``, ``"stress [MPa]"``, ``"temperature [degC]"``,
  ``"wavelength [nm]"``; or they are passed as ``x_unit``/``y_unit``.
* Columns are separated by commas (semicolons or tabs are accepted when the header has no comma).
* Further columns can be read as text alongside (``text_columns``), e.g. a per-row origin note.
* Data files shipped with actsim (``actsim/data``) are read with :func:`data_file`.

Every problem becomes one :class:`~actsim.errors.ActsimInputError` line that names the file
and the line.
"""

from __future__ import annotations

import os
import re
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

import numpy as np
import pint

from .errors import ActsimInputError
from .units import Q_, SI_UNITS, ureg

__all__ = ["XYData", "KINDS", "read_xy_csv", "as_xy", "data_file"]

#: Physical kind of a column -> key of :data:`actsim.units.SI_UNITS`, or None for dimensionless.
KINDS = {
    "strain": None,
    "absorbance": None,
    "dimensionless": None,
    "conversion": None,
    "stress": "pressure",
    "modulus": "pressure",
    "pressure": "pressure",
    "temperature": "temperature",
    "wavelength": "wavelength",
    "time": "time",
    "angle": "angle",
    "length": "length",
    "force": "force",
    "irradiance": "irradiance",
    "curvature": "curvature",
}

_UNIT_ALIASES = {"%": "percent", "1": "dimensionless", "-": "dimensionless", "": "dimensionless",
                 "°C": "degC", "ºC": "degC", "°": "deg", "°F": "degF", "µm": "um", "μm": "um"}
_HEADER_RE = re.compile(r"^\s*(?P<name>.*?)\s*(?:[\[(](?P<unit>[^\])]*)[\])])?\s*$")


@dataclass
class XYData:
    """Two columns read from a file, in SI.

    Attributes
    ----------
    x, y : numpy.ndarray
        Values in SI [unit of the kind: m, K, Pa, s, rad, or 1].
    x_name, y_name : str
        Column names without units.
    x_unit, y_unit : str
        The unit as written (header or argument); ``""`` if none was given.
    source : str
        File name (or ``"arrays"``).
    comments : list of str
        Comment lines without the leading ``#``.
    synthetic : bool
        True if a comment says "synthetic".
    text : dict of str to tuple of str
        Columns read as text (``text_columns``), by column name, one entry per row.
    """

    x: np.ndarray
    y: np.ndarray
    x_name: str = "x"
    y_name: str = "y"
    x_unit: str = ""
    y_unit: str = ""
    source: str = "arrays"
    comments: list = field(default_factory=list)
    synthetic: bool = False
    text: dict = field(default_factory=dict)


def data_file(name: str):
    """A data file shipped with actsim in ``actsim/data``, for :func:`read_xy_csv`.

    Parameters
    ----------
    name : str
        File name inside ``actsim/data``, e.g. ``"blue_light_hazard_b.csv"``.

    Returns
    -------
    importlib.resources.abc.Traversable
        The packaged file (readable whether actsim is installed as files or as an archive).
    """
    return resources.files("actsim").joinpath("data", name)


def _split(line: str, delim: str):
    return [c.strip() for c in line.split(delim)]


def _parse_unit(unit: str, *, where: str):
    u = _UNIT_ALIASES.get(unit.strip(), unit.strip())
    try:
        return ureg.parse_units(u)
    except Exception:
        raise ActsimInputError(f"{where}: unit {unit!r} is not a unit actsim can read (e.g. MPa, degC, nm, %, 1)") from None


def _to_si(values, unit: str, kind: str, *, where: str):
    si_key = KINDS[kind]
    si_unit = "dimensionless" if si_key is None else SI_UNITS[si_key][0]
    u = _parse_unit(unit, where=where)
    try:
        return np.asarray(Q_(values, u).to(si_unit).magnitude, dtype=float)
    except pint.DimensionalityError:
        ex = "1 or %" if si_key is None else SI_UNITS[si_key][1].split(" ", 1)[1]
        raise ActsimInputError(f"{where}: unit {unit!r} is not a unit of {kind} (expected e.g. {ex})") from None


def read_xy_csv(path, *, x_kind, y_kind, x_unit=None, y_unit=None, x_column=0, y_column=1, min_points=2,
                text_columns=()):
    """Read two columns of a CSV file with a header and convert them to SI.

    Parameters
    ----------
    path : str, os.PathLike or importlib.resources.abc.Traversable
        The CSV file (a packaged one from :func:`data_file`).
    x_kind, y_kind : str
        Physical kind of each column, a key of :data:`KINDS` (``"strain"``, ``"stress"``,
        ``"temperature"``, ``"wavelength"``, ``"absorbance"``, ``"modulus"``, ``"time"``,
        ``"angle"``, ...).
    x_unit, y_unit : str, optional
        Unit of the column if the header gives none (e.g. ``"MPa"``). If both are given they
        must agree.
    x_column, y_column : int or str
        Column index or column name (without unit). Defaults: first and second column.
    min_points : int
        Minimum number of data rows.
    text_columns : sequence of int or str
        Further columns to keep as text (stripped), e.g. ``("origin",)``; returned in
        ``XYData.text`` under their header names.

    Returns
    -------
    XYData
        The two columns in SI (m, K, Pa, s, rad; dimensionless kinds as fractions, so
        ``"strain [%]"`` becomes a fraction), and the text columns.

    Raises
    ------
    ActsimInputError
        File missing or empty, no header, a non-numeric or non-finite value (the line is named),
        a unit missing for a dimensional column, an unknown or wrong-kind unit, fewer than
        ``min_points`` rows.

    Notes
    -----
    Conversion to SI (pint), e.g. for a temperature column

    .. math::

        T\\,[\\mathrm{K}] = T\\,[^\\circ\\mathrm{C}] + 273.15

    References
    ----------
    .. [1] Bureau International des Poids et Mesures, *The International System of Units (SI)*,
       9th edition, 2019.
    """
    for kind, label in ((x_kind, "x_kind"), (y_kind, "y_kind")):
        if kind not in KINDS:
            raise ActsimInputError(f"{label}: {kind!r} is not a known column kind ({', '.join(sorted(KINDS))})")
    p = Path(path) if isinstance(path, (str, os.PathLike)) else path
    name = p.name
    if not p.is_file():
        raise ActsimInputError(f"data file: {str(path)!r} does not exist or is not a file")
    try:
        text = p.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        raise ActsimInputError(f"{name}: not a UTF-8 text file (save it as CSV text)") from None
    except OSError as exc:
        raise ActsimInputError(f"{name}: cannot be read ({exc.strerror})") from None
    comments, header, header_no, rows = [], None, 0, []
    delim = ","
    for no, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip()
        if not line:
            continue
        if line.startswith("#"):
            comments.append(line[1:].strip())
            continue
        if header is None:
            if "," not in line:
                delim = ";" if ";" in line else ("\t" if "\t" in raw else ",")
            header, header_no = _split(line, delim), no
            continue
        rows.append((no, _split(line, delim)))
    if header is None:
        raise ActsimInputError(f"{name}: no header line (expected e.g. 'strain [1], stress [MPa]')")
    names, units = [], []
    for h in header:
        m = _HEADER_RE.match(h)
        names.append(m.group("name").strip())
        units.append((m.group("unit") or "").strip() if m.group("unit") is not None else None)

    def col_index(col, label):
        if isinstance(col, (int, np.integer)):
            if not (0 <= col < len(header)):
                raise ActsimInputError(f"{name}: {label} {col} is outside the {len(header)} header columns")
            return int(col)
        low = [n.lower() for n in names]
        if str(col).lower() in low:
            return low.index(str(col).lower())
        raise ActsimInputError(f"{name}: no column named {col!r} in the header ({', '.join(names)})")

    ix, iy = col_index(x_column, "x_column"), col_index(y_column, "y_column")
    it = [col_index(c, "text column") for c in text_columns]
    need = max([ix, iy, *it]) + 1
    xs, ys, texts = [], [], []
    for no, cells in rows:
        if len(cells) < need:
            raise ActsimInputError(f"{name} line {no}: {len(cells)} columns, expected at least {need} as in the header")
        vals = []
        for i in (ix, iy):
            try:
                v = float(cells[i])
            except ValueError:
                raise ActsimInputError(
                    f"{name} line {no}: column '{header[i]}' value {cells[i]!r} is not a number "
                    "(use '.' as decimal point and ',' between columns)"
                ) from None
            if not np.isfinite(v):
                raise ActsimInputError(f"{name} line {no}: column '{header[i]}' value {cells[i]!r} is not finite")
            vals.append(v)
        xs.append(vals[0])
        ys.append(vals[1])
        texts.append([cells[i] for i in it])
    if len(xs) < min_points:
        raise ActsimInputError(f"{name}: {len(xs)} data rows, at least {min_points} are needed")

    def unit_of(i, given, kind, label):
        hdr = units[i]
        if hdr is not None and given is not None:
            if _parse_unit(hdr, where=f"{name} header") != _parse_unit(given, where=label):
                raise ActsimInputError(f"{name}: header says '{header[i]}' but {label}={given!r}; remove one of them")
        u = hdr if hdr is not None else given
        if u is None:
            if KINDS[kind] is None:
                return ""
            ex = SI_UNITS[KINDS[kind]][1].split(" ", 1)[1]
            raise ActsimInputError(f"{name}: column '{header[i]}' ({kind}) has no unit; write it in the header, "
                                   f"e.g. '{names[i] or kind} [{ex}]', or pass {label}=\"{ex}\"")
        return u

    xu = unit_of(ix, x_unit, x_kind, "x_unit")
    yu = unit_of(iy, y_unit, y_kind, "y_unit")
    x = _to_si(np.array(xs), xu, x_kind, where=f"{name} column '{header[ix]}'")
    y = _to_si(np.array(ys), yu, y_kind, where=f"{name} column '{header[iy]}'")
    text = {names[i]: tuple(row[k] for row in texts) for k, i in enumerate(it)}
    return XYData(x=x, y=y, x_name=names[ix], y_name=names[iy], x_unit=xu, y_unit=yu, source=name,
                  comments=comments, synthetic=any("synthetic" in c.lower() for c in comments), text=text)


def as_xy(data, *, x_kind, y_kind, x_unit=None, y_unit=None, min_points=2, x_name="x", y_name="y") -> XYData:
    """Accept a path (read with :func:`read_xy_csv`), an :class:`XYData`, or a pair of arrays.

    Arrays are taken as SI unless ``x_unit``/``y_unit`` are given, in which case they are
    converted. Non-finite values and fewer than ``min_points`` points are refused.

    Parameters
    ----------
    data : str, os.PathLike, XYData or (array_like, array_like)
        The data.
    x_kind, y_kind : str
        Keys of :data:`KINDS`.
    x_unit, y_unit : str, optional
        Units of array input [as written].
    min_points : int
        Minimum number of points.
    x_name, y_name : str
        Names used in error messages for array input.

    Returns
    -------
    XYData
    """
    if isinstance(data, XYData):
        return data
    if isinstance(data, (str, os.PathLike)):
        return read_xy_csv(data, x_kind=x_kind, y_kind=y_kind, x_unit=x_unit, y_unit=y_unit, min_points=min_points)
    try:
        x, y = data
        x = np.asarray(x, dtype=float).ravel()
        y = np.asarray(y, dtype=float).ravel()
    except (TypeError, ValueError):
        raise ActsimInputError(f"data: expected a file path or a pair of numeric arrays ({x_name}, {y_name})") from None
    if x.size != y.size:
        raise ActsimInputError(f"data: {x_name} has {x.size} values but {y_name} has {y.size}")
    for arr, nm in ((x, x_name), (y, y_name)):
        bad = np.flatnonzero(~np.isfinite(arr))
        if bad.size:
            raise ActsimInputError(f"{nm}: value at index {bad[0]} is {arr[bad[0]]!r}; all values must be finite")
    if x.size < min_points:
        raise ActsimInputError(f"data: {x.size} points, at least {min_points} are needed")
    if x_unit is not None:
        x = _to_si(x, x_unit, x_kind, where=x_name)
    if y_unit is not None:
        y = _to_si(y, y_unit, y_kind, where=y_name)
    return XYData(x=x, y=y, x_name=x_name, y_name=y_name, x_unit=x_unit or "", y_unit=y_unit or "")
