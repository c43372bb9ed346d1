"""The project's CSV reader: tables with a header that names each column's unit, read into SI arrays.

:func:`read_csv_table` reads any such table (comments, header, rows with their line numbers);
:func:`read_xy_csv` takes two of its columns into SI (measured data, spectra, modulus tables);
:meth:`CSVTable.column` takes one column in a unit the caller names (packaged limit tables).

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

from .errors import ActsimInputError
from .sentfiles import sent_file
from .units import SI_UNITS, registry

__all__ = ["XYData", "KINDS", "CSVTable", "read_csv_table", "read_xy_csv", "as_xy", "data_file"]

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
    "molar_absorptivity": "molar_absorptivity",
    "absorption_coefficient": "absorption_coefficient",
    "relative": None,
}

_UNIT_ALIASES = {"%": "percent", "1": "dimensionless", "-": "dimensionless", "": "dimensionless",
                 "relative": "dimensionless", "a.u.": "dimensionless",
                 "°C": "degC", "ºC": "degC", "°": "deg", "°F": "degF", "µm": "um", "μm": "um"}
_HEADER_RE = re.compile(r"^\s*(?P<name>.*?)\s*(?:\[(?P<unit>[^\]]*)\]|\((?P<round>[^)]*)\))?\s*$")


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
    """A data file shipped with actsim in ``actsim/data``, for :func:`read_csv_table` / :func:`read_xy_csv`.

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
        return registry().parse_units(u)
    except Exception:
        raise ActsimInputError(f"{where}: unit {unit!r} is not a unit actsim can read (e.g. MPa, degC, nm, %, 1)") from None


def _to_si(values, unit: str, kind: str, *, where: str):
    si_key = KINDS[kind]
    si_unit = "dimensionless" if si_key is None else SI_UNITS[si_key][0]
    import pint

    u = _parse_unit(unit, where=where)
    try:
        return np.asarray(registry().Quantity(values, u).to(si_unit).magnitude, dtype=float)
    except pint.DimensionalityError:
        ex = "1 or %" if si_key is None else SI_UNITS[si_key][1].split(" ", 1)[1]
        raise ActsimInputError(f"{where}: unit {unit!r} is not a unit of {kind} (expected e.g. {ex})") from None


@dataclass
class CSVTable:
    """A CSV table as written: header, units, rows of text cells with their line numbers.

    Attributes
    ----------
    header : list of str
        The header cells as written (``"stress [MPa]"``).
    names : list of str
        Column names without units.
    units : list of str or None
        The unit of each column as written in brackets, None where the header gives none.
    rows : list of (int, list of str)
        Line number (1-based) and cells of each data line.
    source : str
        File name, used in every message.
    comments : list of str
        Comment lines without the leading ``#``.
    """

    header: list
    names: list
    units: list
    rows: list
    source: str = ""
    comments: list = field(default_factory=list)

    @property
    def synthetic(self) -> bool:
        """True if a comment says "synthetic" (invented data)."""
        return any("synthetic" in c.lower() for c in self.comments)

    def index(self, col, label: str = "column") -> int:
        """Index of a column given by index or by name (without unit, case-insensitive)."""
        if isinstance(col, (int, np.integer)):
            if not (0 <= col < len(self.header)):
                raise ActsimInputError(f"{self.source}: {label} {col} is outside the {len(self.header)} header columns")
            return int(col)
        low = [n.lower() for n in self.names]
        if str(col).lower() in low:
            return low.index(str(col).lower())
        raise ActsimInputError(f"{self.source}: no column named {col!r} in the header ({', '.join(self.names)})")

    def numbers(self, indices, *, allow_infinite: bool = False) -> np.ndarray:
        """The numbers of some columns, as written, shape (rows, len(indices)).

        Parameters
        ----------
        indices : sequence of int
            Column indices (:meth:`index`).
        allow_infinite : bool
            Accept ``inf`` (e.g. an open upper end of a band); NaN is always refused.

        Returns
        -------
        numpy.ndarray
            Values in the units of the header [as written].
        """
        need = max(indices) + 1
        out = []
        for no, cells in self.rows:
            if len(cells) < need:
                raise ActsimInputError(f"{self.source} line {no}: {len(cells)} columns, expected at least {need} as in the header")
            vals = []
            for i in indices:
                try:
                    v = float(cells[i])
                except ValueError:
                    raise ActsimInputError(
                        f"{self.source} line {no}: column '{self.header[i]}' value {cells[i]!r} is not a number "
                        "(use '.' as decimal point and ',' between columns)"
                    ) from None
                if not (np.isfinite(v) or (allow_infinite and np.isinf(v))):
                    raise ActsimInputError(f"{self.source} line {no}: column '{self.header[i]}' value {cells[i]!r} is not finite")
                vals.append(v)
            out.append(vals)
        return np.array(out, dtype=float).reshape(len(out), len(indices))

    def column(self, col, *, unit: str, allow_infinite: bool = False) -> np.ndarray:
        """One column converted from the unit its header gives to ``unit``.

        Parameters
        ----------
        col : int or str
            Column index or name (without unit).
        unit : str
            The unit wanted (``"s"``, ``"degC"``, ``"1"``); the header must give a unit of the
            same dimension.
        allow_infinite : bool
            Accept ``inf`` values.

        Returns
        -------
        numpy.ndarray
            The values [unit]; unchanged when the header's unit is ``unit``.
        """
        i = self.index(col)
        given = self.units[i]
        if given is None:
            raise ActsimInputError(f"{self.source}: column '{self.header[i]}' has no unit; write it in the header, "
                                   f"e.g. '{self.names[i]} [{unit}]'")
        values = self.numbers((i,), allow_infinite=allow_infinite)[:, 0]
        if given == unit:
            return values
        import pint

        want = _parse_unit(unit, where=f"{self.source} column '{self.header[i]}'")
        try:
            return np.asarray(registry().Quantity(values, _parse_unit(given, where=f"{self.source} column '{self.header[i]}'")).to(want).magnitude,
                              dtype=float)
        except pint.DimensionalityError:
            raise ActsimInputError(f"{self.source}: column '{self.header[i]}' unit {given!r} cannot be converted to "
                                   f"{unit!r}") from None


def read_csv_table(path) -> CSVTable:
    """Read a CSV file with a header line: comments, header (names and units), data rows.

    Parameters
    ----------
    path : str or os.PathLike
        The file. Lines starting with ``#`` are comments; empty lines are skipped; the first
        other line is the header, units in square (or round) brackets after each column name.
        Columns are separated by commas (semicolons or tabs when the header has no comma).

    Returns
    -------
    CSVTable
        The cells as text; convert columns with :meth:`CSVTable.numbers` or :meth:`CSVTable.column`.

    Raises
    ------
    ActsimInputError
        File missing, not UTF-8 text, unreadable, or without a header line.
    """
    p = Path(path) if isinstance(path, (str, os.PathLike)) else path
    name = p.name
    sent = sent_file(p) if isinstance(p, Path) else None  # a task's data (preread_files), never the disk
    if sent is None and not p.is_file():
        raise ActsimInputError(f"data file: {str(path)!r} does not exist or is not a file")
    try:
        text = sent.decode("utf-8-sig") if sent is not None else p.read_text(encoding="utf-8-sig")
    except UnicodeDecodeError:
        raise ActsimInputError(f"{name}: not a UTF-8 text file (save it as CSV text)") from None
    except OSError as exc:
        raise ActsimInputError(f"{name}: cannot be read ({exc.strerror})") from None
    comments, header, rows = [], None, []
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
            header = _split(line, delim)
            continue
        rows.append((no, _split(line, delim)))
    if header is None:
        raise ActsimInputError(f"{name}: no header line (expected e.g. 'strain [1], stress [MPa]')")
    names, units = [], []
    for h in header:
        m = _HEADER_RE.match(h)
        names.append(m.group("name").strip())
        unit = m.group("unit") if m.group("unit") is not None else m.group("round")
        units.append(unit.strip() if unit is not None else None)
    return CSVTable(header=header, names=names, units=units, rows=rows, source=name, comments=comments)


def read_xy_csv(path, *, x_kind, y_kind, x_unit=None, y_unit=None, x_column=0, y_column=1, min_points=2,
                text_columns=()):
    """Read two columns of a CSV file with a header and convert them to SI.

    Parameters
    ----------
    path : str, os.PathLike or CSVTable
        The CSV file (or the table :func:`read_csv_table` read from it).
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
    tab = path if isinstance(path, CSVTable) else read_csv_table(path)
    name, header, units = tab.source, tab.header, tab.units
    ix, iy = tab.index(x_column, "x_column"), tab.index(y_column, "y_column")
    xy = tab.numbers((ix, iy))
    xs, ys = xy[:, 0], xy[:, 1]
    if len(xs) < min_points:
        raise ActsimInputError(f"{name}: {len(xs)} data rows, at least {min_points} are needed")
    names = tab.names

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
    x = _to_si(xs, xu, x_kind, where=f"{name} column '{header[ix]}'")
    y = _to_si(ys, yu, y_kind, where=f"{name} column '{header[iy]}'")
    it = [tab.index(c, "text column") for c in text_columns]
    need = max([ix, iy, *it]) + 1
    for no, cells in tab.rows:
        if len(cells) < need:
            raise ActsimInputError(f"{name} line {no}: {len(cells)} columns, expected at least {need} as in the header")
    text = {names[i]: tuple(cells[i].strip() for _, cells in tab.rows) for i in it}
    return XYData(x=x, y=y, x_name=names[ix], y_name=names[iy], x_unit=xu, y_unit=yu, source=name,
                  comments=tab.comments, synthetic=tab.synthetic, text=text)


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
