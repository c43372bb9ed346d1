"""Units at the edges: parse user strings such as ``"0.2 mm"`` into SI floats.

Inside actsim every number is SI (m, s, K, Pa, W m-2, mol m-3). This module is
the only place where unit strings are read; it turns every failure into a
one-line :class:`~actsim.errors.ActsimInputError` that names the field.
"""

from __future__ import annotations

import functools
import math
import os
import re
import threading

import numpy as np

from .errors import ActsimInputError

#: Environment variable naming the folder of actsim's caches (the unit registry's is ``units/`` in it);
#: empty: no cache. Default: the user's cache folder (``~/.cache/actsim`` on Linux).
CACHE_ENV = "ACTSIM_CACHE_DIR"

_registry = None
_registry_lock = threading.Lock()


def unit_cache_folder():
    """Folder of the unit registry's cache, or None when caching is off or the folder cannot be written."""
    root = os.environ.get(CACHE_ENV)
    if root is None:
        try:
            import platformdirs  # a dependency of pint

            root = str(platformdirs.user_cache_path("actsim", appauthor=False))
        except Exception:
            return None
    if not root:
        return None
    folder = os.path.join(root, "units")
    try:
        os.makedirs(folder, exist_ok=True)
    except OSError:
        return None
    return folder if os.access(folder, os.W_OK | os.X_OK) else None


def _build_registry(cache_folder):
    import pint

    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True, cache_folder=cache_folder)
    ureg.define("percent = 0.01 = %")
    return ureg


def registry():
    """The unit registry (pint), built on first use.

    Building it from pint's definition files takes about 0.2 s; pint keeps the parsed definitions in
    :func:`unit_cache_folder` (keyed by the pint and Python versions and the files' contents), which
    cuts that to a few milliseconds on later runs. A cache that cannot be read or written is ignored
    and the registry is built from the files.
    """
    global _registry
    if _registry is None:
        with _registry_lock:
            if _registry is None:
                folder = unit_cache_folder()
                try:
                    ureg = _build_registry(folder)
                except Exception:
                    if folder is None:
                        raise
                    ureg = _build_registry(None)  # unreadable or unwritable cache: the slow, sure way
                _registry = ureg
    return _registry


def __getattr__(name):
    # ``ureg`` and ``Q_`` are built on first use, so that importing this module (every stage
    # module does, for check_range) does not import pint.
    if name == "ureg":
        return registry()
    if name == "Q_":
        return registry().Quantity
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")

#: SI unit used inside the code for each physical kind, with a typical example
#: shown in error messages.
SI_UNITS = {
    "length": ("m", "0.2 mm"),
    "time": ("s", "30 s"),
    "temperature": ("K", "25 degC"),
    "temperature_difference": ("K", "8 K"),
    "pressure": ("Pa", "2 GPa"),
    "irradiance": ("W/m^2", "50 mW/cm^2"),
    "concentration": ("mol/m^3", "0.5 mol/L"),
    "molar_absorptivity": ("m^2/mol", "1500 L/(mol*cm)"),
    "absorption_coefficient": ("1/m", "10 1/cm"),
    "rate": ("1/s", "0.01 1/s"),
    "wavelength": ("m", "365 nm"),
    "force": ("N", "5 mN"),
    "mass": ("kg", "5 g"),
    "energy_per_mol": ("J/mol", "80 kJ/mol"),
    "conductivity": ("W/(m*K)", "0.2 W/(m*K)"),
    "heat_capacity": ("J/(kg*K)", "1500 J/(kg*K)"),
    "density": ("kg/m^3", "1200 kg/m^3"),
    "heat_transfer_coefficient": ("W/(m^2*K)", "10 W/(m^2*K)"),
    "thermal_expansion": ("1/K", "1e-4 1/K"),
    "dose": ("J/m^2", "30 J/m^2"),
    "curvature": ("1/m", "50 1/m"),
    "angle": ("rad", "45 deg"),
    "moment": ("N*m", "1 mN*m"),
}


def parse_quantity(value, *, field: str, kind: str):
    """Parse a unit string (or a pint quantity) into an SI float.

    Parameters
    ----------
    value : str or pint.Quantity
        For example ``"50 mW/cm^2"``. A bare number is refused: the unit is
        required for every dimensional field.
    field : str
        Dotted field name used in error messages.
    kind : str
        A key of :data:`SI_UNITS`, naming the physical kind expected.

    Returns
    -------
    float
        The value in the SI unit of ``kind``.
    """
    si_unit, example = SI_UNITS[kind]
    if isinstance(value, bool) or value is None:
        raise ActsimInputError(f"{field}: {value!r} is not a quantity; give a number with a unit, e.g. \"{example}\"")
    if isinstance(value, (int, float)):
        if kind == "angle":
            raise ActsimInputError(f"{field}: bare number {value!r} has no unit; write e.g. \"{example}\" (deg or rad)")
        raise ActsimInputError(
            f"{field}: bare number {value!r} has no unit; write it with a unit of {kind.replace('_', ' ')}, e.g. \"{example}\""
        )
    if isinstance(value, str):
        _check_length(value, field)
        status, payload = _string_to_si(value, si_unit, kind == "temperature")
    else:
        status, payload = _quantity_to_si(value, si_unit)
    if status == "parse":
        raise ActsimInputError(f"{field}: cannot read {value!r} as a quantity ({payload}); e.g. \"{example}\"")
    if status == "bare":
        raise ActsimInputError(
            f"{field}: {value!r} has no unit; write it with a unit of {kind.replace('_', ' ')}, e.g. \"{example}\""
        )
    if status == "offset":
        raise ActsimInputError(
            f"{field}: {value!r} uses degC/degF, an offset temperature scale; for a temperature difference "
            f"or inside a compound unit write K (or delta_degC), e.g. \"{example}\""
        )
    if status == "dimension":
        raise ActsimInputError(
            f"{field}: {value!r} has unit {payload} but a {kind.replace('_', ' ')} is required (in {si_unit}, e.g. \"{example}\")"
        )
    si = float(payload)
    if not math.isfinite(si):
        raise ActsimInputError(f"{field}: {value!r} is not finite")
    return si


_OFFSET_UNIT = re.compile(r"((?<!delta_)deg\s*[CF]\b|°\s*[CF]|(?<!delta_)celsius|(?<!delta_)fahrenheit|(?<!delta_)degree_[CF])",
                          re.IGNORECASE)


def _quantity_to_si(q, si_unit):
    """("ok", SI float) or ("bare" | "dimension" | "parse", detail) for a parsed value."""
    import pint

    if not isinstance(q, pint.Quantity) or q.unitless or (q.dimensionless and si_unit not in ("1", "rad")):
        return "bare", None
    try:
        return "ok", float(q.to(si_unit).magnitude)
    except pint.DimensionalityError:
        return "dimension", f"{q.units:~}"


#: Longest quantity text accepted: a number and a unit fit in far fewer (common practice, no source); longer
#: texts are refused before the unit parser sees them (its time grows with the length).
MAX_QUANTITY_CHARS = 100


def _check_length(text: str, field: str):
    if len(text) > MAX_QUANTITY_CHARS:
        raise ActsimInputError(f"{field}: a quantity of {len(text)} characters is too long (allowed <= "
                               f"{MAX_QUANTITY_CHARS}: a number and a unit, e.g. \"50 mW/cm^2\")")


@functools.lru_cache(maxsize=8192)
def _string_to_si(text: str, si_unit: str, absolute_temperature: bool = False):
    """Cached pint conversion of a unit string (scenario files and sweeps repeat the same strings)."""
    if not absolute_temperature and _OFFSET_UNIT.search(text):
        # degC / degF are offset scales: right for a temperature, silently wrong inside a
        # difference or a compound unit (1/degC, W/(m^2*degC)), so they are refused there
        return "offset", None
    try:
        q = registry().Quantity(text)
    except Exception as exc:  # pint raises many kinds
        return "parse", exc.__class__.__name__
    return _quantity_to_si(q, si_unit)


def parse_dimensionless(value, *, field: str) -> float:
    """Parse a dimensionless number (a float, or a string such as ``"15 %"``)."""
    if isinstance(value, bool) or value is None:
        raise ActsimInputError(f"{field}: {value!r} is not a number")
    if isinstance(value, (int, float)):
        v = float(value)
    else:
        import pint

        if isinstance(value, str):
            _check_length(value, field)
        try:
            q = registry().Quantity(value) if isinstance(value, str) else value
            v = float(q.to("dimensionless").magnitude) if isinstance(q, pint.Quantity) else float(q)
        except pint.DimensionalityError:
            raise ActsimInputError(f"{field}: {value!r} must be dimensionless (a plain number or a percentage)") from None
        except Exception:
            raise ActsimInputError(f"{field}: cannot read {value!r} as a number") from None
    if not math.isfinite(v):
        raise ActsimInputError(f"{field}: {value!r} is not finite")
    return v


def check_range(value: float, *, field: str, unit: str, lo=None, hi=None, lo_open=False, hi_open=False, shown=None):
    """Raise the standard one-line error if ``value`` is outside [lo, hi].

    ``shown`` is the value as the user wrote it (defaults to ``value``).
    """
    bad = False
    if lo is not None and (value < lo or (lo_open and value == lo)):
        bad = True
    if hi is not None and (value > hi or (hi_open and value == hi)):
        bad = True
    if bad:
        parts = []
        if lo is not None:
            parts.append(("> " if lo_open else ">= ") + f"{lo:g}")
        if hi is not None:
            parts.append(("< " if hi_open else "<= ") + f"{hi:g}")
        allowed = " and ".join(parts)
        shown_value = shown if shown is not None else _shown_number(value)
        unit_txt = "" if unit in ("", "1") else f" {unit}"
        raise ActsimInputError(f"{field}: {shown_value} is outside the allowed range ({allowed}{unit_txt})")
    return value


def _shown_number(value) -> str:
    """A number as an error shows it: ``%g`` (an integer too large for a float shown by its digit count)."""
    try:
        return f"{value:g}"
    except OverflowError:
        return f"an integer of {len(str(abs(value)))} digits"


def finite_array(value, *, field, unit, lo=None, lo_open=False):
    """``value`` as a float64 array, refusing non-finite entries and (optionally) entries below ``lo``.

    Parameters
    ----------
    value : float or array_like
        In SI units.
    field : str
        Name shown in the one-line error.
    unit : str
        SI unit shown in the error.
    lo : float, optional
        Lowest allowed value (excluded when ``lo_open``).
    lo_open : bool
        Whether ``lo`` itself is refused.
    """
    arr = np.asarray(value, dtype=np.float64)
    flat = arr.reshape(-1)
    bad = ~np.isfinite(flat)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ActsimInputError(f"{field}: {flat[i]!r} is not finite (unit {unit})")
    if lo is not None and flat.size:
        viol = flat <= lo if lo_open else flat < lo
        if viol.any():
            i = int(np.flatnonzero(viol)[0])
            check_range(float(flat[i]), field=field, unit=unit, lo=lo, lo_open=lo_open)
    return arr


def scalar_or_array(arr):
    """A Python float for a 0-d result, else the array unchanged."""
    return float(arr) if np.ndim(arr) == 0 else arr


#: Unit strings that mean "dimensionless" where a unit is asked for.
DIMENSIONLESS_UNITS = ("", "1", "-", "dimensionless")


def unit_kind(unit: str, *, field: str):
    """The SI unit and the physical kind of a unit string.

    Parameters
    ----------
    unit : str
        A unit as written, e.g. ``"mW/cm^2"``, ``"1/min"`` or ``"1"``.
    field : str
        Field name used in error messages.

    Returns
    -------
    (str, str or None)
        The SI unit of the first kind of :data:`SI_UNITS` with the same dimensions
        (``"W/m^2"``, ``"1/s"``) and that kind; ``("1", None)`` if dimensionless.

    Raises
    ------
    ActsimInputError
        A unit pint cannot read, or one whose dimensions match no scenario quantity.

    Examples
    --------
    >>> unit_kind("mW/cm^2", field="x")
    ('W/m^2', 'irradiance')
    >>> unit_kind("%", field="x")
    ('1', None)
    """
    u = str(unit).strip()
    if u in DIMENSIONLESS_UNITS:
        return "1", None
    ureg = registry()
    try:
        dim = ureg.Quantity(1.0, ureg.parse_units(u)).dimensionality
    except Exception:
        raise ActsimInputError(f"{field}: unit {unit!r} is not a unit actsim can read (e.g. 1, 1/s, W/m^2)") from None
    if not dim:
        return "1", None
    for kind, (si, _ex) in SI_UNITS.items():
        if ureg.Quantity(1.0, si).dimensionality == dim:
            return si, kind
    raise ActsimInputError(f"{field}: unit {unit!r} is not the unit of any scenario quantity (e.g. 1, 1/s, W/m^2, m)")


def nonnegative_float(x, *, field_name: str, unit: str) -> float:
    """``x`` as a finite float >= 0, or a one-line :class:`ActsimInputError` naming the field and unit.

    Parameters
    ----------
    x : float or str
        The value, in ``unit``.
    field_name : str
        Name shown in the error.
    unit : str
        Unit shown in the error.
    """
    try:
        v = float(x)
    except (TypeError, ValueError):
        raise ActsimInputError(f"{field_name}: {x!r} is not a number ({unit})") from None
    if not math.isfinite(v) or v < 0:
        raise ActsimInputError(f"{field_name}: {v:g} {unit} is outside the allowed range (>= 0 and finite)")
    return v
