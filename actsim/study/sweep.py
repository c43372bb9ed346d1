"""Design sweeps: many variants of one scenario, their strip metrics, on local processes or a dask cluster.

A sweep changes scenario fields by their dotted path (as
:func:`actsim.scenario.apply_overrides`), on a full grid or on a space-filling
sample (Latin hypercube or Sobol, :mod:`scipy.stats.qmc`). Designs run in
chunks; each chunk goes through the batch kernel (:mod:`actsim.study.batch`) in
one numba call. With a ``store`` folder every finished chunk is written at once
(one NetCDF file per chunk, atomic), beside a manifest holding the hash of the
sweep definition (including the contents of every data file the scenario names), so an interrupted sweep started again with the same
definition skips the finished chunks and loses at most the chunks that were
running.

Where the work runs
-------------------
``scheduler=None`` (default): when more than one chunk is left, a
``dask.distributed.LocalCluster`` of worker processes (one per core, one thread
each, numba single-threaded inside) runs the chunks. Processes, not threads:
building a design (parsing its scenario, the optical tables) is Python code that
holds the GIL and costs several milliseconds per design, as much as the time
loop itself, so only processes run it in parallel; the distributed scheduler
(rather than dask's multiprocessing ``get``) hands back each chunk as it
finishes, which is what lets the main process write chunks as they come, and it
is the same code path as a remote cluster. A single chunk runs in this process.
``scheduler="inprocess"``: every chunk in this process, numba parallel over the
designs of the chunk (no start-up cost; best for small sweeps).
``scheduler="tcp://host:port"``: an existing dask cluster; the connection
gives up after ``connect_timeout`` seconds with a one-line error.

Data files a scenario names (spectra, modulus tables) must be readable by the
workers at the same path.
"""

from __future__ import annotations

import hashlib
import itertools
import json
import math
import os
import re
import sys
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import xarray as xr

from ..errors import ActsimInputError

#: A grid with more designs than this needs ``yes=True`` (``--yes``).
MAX_GRID_WITHOUT_YES = 20_000

#: Memory budget for the raw output arrays of one chunk [bytes] (sets the default chunk size).
CHUNK_MEMORY = 256 * 2**20

#: Version of the chunk/manifest layout (part of the sweep hash).
STORE_FORMAT = 1

METRIC_INFO = {
    "final_bend_angle": ("rad", "bend angle at the end of the protocol"),
    "peak_bend_angle": ("rad", "bend angle of largest magnitude"),
    "time_of_peak_bend": ("s", "time of the peak bend angle"),
    "time_to_target": ("s", "first time the bend angle reaches the target (missing: never)"),
    "reached_target": ("1", "the target bend angle is reached"),
    "blocked_force_at_target": ("N", "blocked tip force when the target angle is reached (missing: never)"),
    "peak_blocked_force": ("N", "blocked tip force of largest magnitude (free rotation, small deflection)"),
    "time_of_peak_force": ("s", "time of the peak blocked force"),
    "peak_blocked_moment": ("N m", "blocked moment of largest magnitude"),
    "peak_tip_deflection": ("m", "tip travel of largest magnitude"),
    "peak_temperature": ("K", "highest cell temperature (missing: heat not modelled)"),
    "optical_dose": ("J m-2", "incident radiant exposure over the protocol"),
    "optical_energy": ("J", "incident optical energy on the strip area over the protocol"),
    "peak_optical_power": ("W", "largest incident optical power on the strip area (protocol step)"),
    "mechanical_work": ("J", "0.5 x peak blocked force x free tip deflection at that time"),
    "efficiency": ("1", "mechanical work / optical energy incident on the strip area up to the peak force"),
}

EFFICIENCY_DEFINITION = (
    "efficiency = W / (H(t*) L b), W = 0.5 |F_block(t*)| |y_free(t*)|: t* the output time of the peak blocked force, "
    "y_free the tip deflection of the free strip at that state, H(t*) the incident radiant exposure up to t*, L b the "
    "strip area"
)

SERIES_INFO = {
    "bend_angle": ("rad", "tip rotation of the free length"),
    "blocked_force": ("N", "tip force that holds the tip in place"),
    "blocked_moment": ("N m", "moment that holds the strip flat"),
    "tip_deflection": ("m", "tip travel normal to the clamped tangent"),
    "peak_temperature": ("K", "highest cell temperature (missing: heat not modelled)"),
}

STATUS_INFO = "0 finished, 1 non-finite state, 2 invalid design (see attribute design_errors)"


# ----------------------------------------------------------------------------
# Values of a swept field
# ----------------------------------------------------------------------------

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


def _split_number_unit(value, field_path):
    """('5 um') -> (5.0, 'um'); (0.3) -> (0.3, '')."""
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return float(value), ""
    m = _NUMBER_UNIT.match(str(value))
    if not m:
        raise ActsimInputError(f"{field_path}: cannot read range end {value!r} as a number with a unit, e.g. \"5 um\"")
    return float(m.group(1)), m.group(2)


def _range_values(r: Range, field_path: str, num=None):
    """Values of a range as override values (strings with the unit of ``start``)."""
    from ..units import Q_

    a, unit = _split_number_unit(r.start, field_path)
    b_num, b_unit = _split_number_unit(r.stop, field_path)
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
    if n < 1:
        raise ActsimInputError(f"{field_path}: {n} points is outside the allowed range (>= 1)")
    if r.kind == "log":
        if a <= 0 or b <= 0:
            raise ActsimInputError(f"{field_path}: log({r.start}, {r.stop}) needs both ends > 0")
        vals = np.geomspace(a, b, n)
    else:
        vals = np.linspace(a, b, n)
    return [_format_value(v, unit) for v in vals]


def _format_value(v: float, unit: str):
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
        a, b = (_scalar_value(p) for p in parts[:2])
        return Range(m.group(1).lower(), a, b, num)
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


def dim_name(path: str) -> str:
    """A NetCDF-friendly name of a field path: ``layers[active film].thickness`` -> ``layers_active_film_thickness``."""
    from ..scenario import split_field_path

    parts = []
    for tok in split_field_path(path):
        parts.append(tok[1] if isinstance(tok, tuple) else tok)
    name = re.sub(r"[^0-9A-Za-z]+", "_", "_".join(parts)).strip("_").lower()
    return name or "field"


# ----------------------------------------------------------------------------
# The sweep definition
# ----------------------------------------------------------------------------


@dataclass
class Axis:
    """One swept dimension: one field, or several fields linked value by value."""

    paths: tuple
    specs: tuple  # Range or list per path
    name: str = ""
    values: list = field(default_factory=list)  # per path: override values (grid) or None


def _normalise_vary(vary) -> list[Axis]:
    if not isinstance(vary, dict) or not vary:
        raise ActsimInputError("vary: give at least one field to sweep, e.g. {\"layers[film].thickness\": lin(\"5 um\", \"200 um\", 10)}")
    axes = []
    for key, spec in vary.items():
        if isinstance(key, tuple):
            if not isinstance(spec, (tuple, list)) or len(spec) != len(key):
                raise ActsimInputError(f"vary[{key!r}]: linked fields need one value set per field ({len(key)})")
            paths, specs = key, tuple(parse_values(s, p) for p, s in zip(key, spec))
        else:
            paths, specs = (key,), (parse_values(spec, key),)
        for p in paths:
            if not isinstance(p, str) or not p.strip():
                raise ActsimInputError(f"vary: field path {p!r} is not a string")
        axes.append(Axis(paths=tuple(paths), specs=specs))
    names = set()
    for ax in axes:
        n = dim_name(ax.paths[0])
        while n in names:
            n += "_"
        names.add(n)
        ax.name = n
    seen = [p for ax in axes for p in ax.paths]
    dup = {p for p in seen if seen.count(p) > 1}
    if dup:
        raise ActsimInputError(f"vary: field '{sorted(dup)[0]}' is swept twice")
    return axes


def _grid_values(axes):
    for ax in axes:
        vals = []
        for p, s in zip(ax.paths, ax.specs):
            vals.append(_range_values(s, p) if isinstance(s, Range) else list(s))
        lens = {len(v) for v in vals}
        if len(lens) != 1:
            raise ActsimInputError(
                f"--link: linked fields {', '.join(ax.paths)} have different numbers of values "
                f"({', '.join(str(len(v)) for v in vals)}); give each the same number"
            )
        ax.values = vals


def _sample_values(axes, sampling, n_samples, seed):
    """Override values of each design for a sampled sweep; returns list per axis per path of values."""
    from scipy.stats import qmc

    if n_samples is None or n_samples < 1:
        raise ActsimInputError(f"samples: {n_samples} is outside the allowed range (>= 1); give --samples N")
    d = len(axes)
    if sampling == "lhs":
        u = qmc.LatinHypercube(d=d, seed=seed).random(n_samples)
    else:
        m = max(0, math.ceil(math.log2(n_samples)))
        u = qmc.Sobol(d=d, scramble=True, seed=seed).random_base2(m)[:n_samples]
    for j, ax in enumerate(axes):
        vals = []
        for p, s in zip(ax.paths, ax.specs):
            if isinstance(s, Range):
                a, unit = _split_number_unit(s.start, p)
                grid = _range_values(Range(s.kind, s.start, s.stop, 2), p)
                b = _split_number_unit(grid[1], p)[0]
                if s.kind == "log":
                    v = np.exp(np.log(a) + u[:, j] * (np.log(b) - np.log(a)))
                else:
                    v = a + u[:, j] * (b - a)
                vals.append([_format_value(x, unit) for x in v])
            else:
                k = np.minimum((u[:, j] * len(s)).astype(int), len(s) - 1)
                vals.append([s[i] for i in k])
        ax.values = vals
    return u


@dataclass
class SweepPlan:
    """Everything that defines a sweep (its hash decides whether a store can be resumed)."""

    scenario: object
    axes: list
    sampling: str
    n_designs: int
    shape: tuple
    target: float | None
    keep_series: bool
    chunk_size: int
    seed: int | None
    definition: dict
    hash: str

    def overrides(self, i: int) -> dict:
        """Field path -> value of design ``i``."""
        out = {}
        if self.sampling == "grid":
            idx = np.unravel_index(i, self.shape)
            for ax, k in zip(self.axes, idx):
                for p, vals in zip(ax.paths, ax.values):
                    out[p] = vals[int(k)]
        else:
            for ax in self.axes:
                for p, vals in zip(ax.paths, ax.values):
                    out[p] = vals[i]
        return out

    @property
    def n_chunks(self) -> int:
        return max(1, math.ceil(self.n_designs / self.chunk_size))

    def chunk_designs(self, c: int) -> range:
        return range(c * self.chunk_size, min(self.n_designs, (c + 1) * self.chunk_size))


def _json_value(v):
    return v if isinstance(v, (str, int, float, bool)) else str(v)


def _file_names(node, out):
    """Collect the strings under keys named ``file`` anywhere in a parsed TOML tree."""
    if isinstance(node, dict):
        for k, v in node.items():
            if k == "file" and isinstance(v, str):
                out.append(v)
            else:
                _file_names(v, out)
    elif isinstance(node, list):
        for v in node:
            _file_names(v, out)
    return out


def data_file_digests(scenario, extra_names=()) -> dict:
    """SHA-256 of every data file a scenario names (``file = "..."`` at any depth of its TOML).

    Parameters
    ----------
    scenario : Scenario
        The base scenario; relative names resolve against its folder (``base_dir``).
    extra_names : iterable of str
        Further file names (e.g. swept values of a ``.file`` field).

    Returns
    -------
    dict
        File name as written -> hex digest of its bytes (``"missing"`` when it cannot be read),
        so that a sweep definition hash changes when a data file's contents change.
    """
    import tomllib

    try:
        tree = tomllib.loads(scenario.text)
    except Exception:
        tree = {}
    base = Path(scenario.base_dir or (Path(scenario.path).parent if scenario.path else Path.cwd()))
    out = {}
    for name in _file_names(tree, []) + [str(n) for n in extra_names]:
        path = Path(name) if Path(name).is_absolute() else base / name
        try:
            out[name] = hashlib.sha256(path.read_bytes()).hexdigest()
        except OSError:
            out[name] = "missing"
    return out


def plan_sweep(scenario, vary, *, sampling="grid", n_samples=None, seed=0, target_bend_angle=None,
               keep_series=False, chunk_size=None, yes=False) -> SweepPlan:
    """Check a sweep definition and lay out its designs and chunks (nothing runs).

    Every value of every field is applied to the base scenario once (the other
    fields at their base values) and built, so a bad field, value or unit fails
    here with the one-line error of the scenario parser.
    """
    from .. import __version__
    from ..scenario import apply_overrides
    from ..solver import build_problem

    if sampling not in ("grid", "lhs", "sobol"):
        raise ActsimInputError(f"sampling: '{sampling}' is not one of 'grid', 'lhs', 'sobol'")
    axes = _normalise_vary(vary)
    if sampling == "grid":
        _grid_values(axes)
        shape = tuple(len(ax.values[0]) for ax in axes)
        n = int(np.prod(shape))
        if n > MAX_GRID_WITHOUT_YES and not yes:
            dims = " x ".join(str(s) for s in shape)
            raise ActsimInputError(
                f"--vary: the grid has {n} designs ({dims}), more than {MAX_GRID_WITHOUT_YES}; pass --yes "
                "(yes=True) to run it, or sample it with --sample lhs --samples N"
            )
        checks = []
        for j, ax in enumerate(axes):
            k_all = range(shape[j])
            if shape[j] > 60:
                k_all = sorted(set(np.linspace(0, shape[j] - 1, 60).round().astype(int)))
            for k in k_all:
                checks.append({p: vals[k] for p, vals in zip(ax.paths, ax.values)})
    else:
        if n_samples is None:
            raise ActsimInputError(f"samples: --sample {sampling} needs --samples N (the number of designs)")
        if n_samples > MAX_GRID_WITHOUT_YES and not yes:
            raise ActsimInputError(f"--samples: {n_samples} designs is more than {MAX_GRID_WITHOUT_YES}; pass --yes to run them")
        for ax in axes:
            for p, s in zip(ax.paths, ax.specs):
                if not isinstance(s, Range) and len(s) == 0:
                    raise ActsimInputError(f"{p}: no values")
        _sample_values(axes, sampling, n_samples, seed)
        shape = (n_samples,)
        n = n_samples
        checks = []
        for ax in axes:
            for p, s in zip(ax.paths, ax.specs):
                if isinstance(s, Range):
                    for v in _range_values(Range(s.kind, s.start, s.stop, 2), p):
                        checks.append({p: v})
                else:
                    checks.extend({p: v} for v in s)
    for ov in checks:
        build_problem(apply_overrides(scenario, ov))
    tgt = target_bend_angle if target_bend_angle is not None else scenario.target_bend_angle
    if chunk_size is None:
        n_cell = sum(layer.cells for layer in scenario.layers)
        n_out = int(math.floor(scenario.duration / scenario.output_interval + 1e-9)) + len(scenario.protocol) + 1
        per_design = 8 * n_cell * n_out * 3 + 1
        chunk_size = int(min(max(1, CHUNK_MEMORY // per_design), 256, max(8, math.ceil(n / 8))))
    if chunk_size < 1:
        raise ActsimInputError(f"chunk_size: {chunk_size} is outside the allowed range (>= 1)")
    definition = {
        "format": STORE_FORMAT,
        "actsim_version": __version__,
        "scenario": scenario.text,
        # contents of the data files the scenario (or a swept .file field) names: editing a spectrum CSV
        # is a different sweep, so a resume does not mix chunks of the old and the new data
        "data_files": data_file_digests(scenario, [v for ax in axes for p, vals in zip(ax.paths, ax.values)
                                                   if p.endswith(".file") for v in vals if isinstance(v, str)]),
        "sampling": sampling,
        "n_samples": n_samples if sampling != "grid" else None,
        "seed": seed if sampling != "grid" else None,
        "axes": [{"name": ax.name, "fields": list(ax.paths),
                  "values": [[_json_value(v) for v in vals] for vals in ax.values]} for ax in axes],
        "target_bend_angle": tgt,
        "keep_series": bool(keep_series),
        "chunk_size": int(chunk_size),
    }
    digest = hashlib.sha256(json.dumps(definition, sort_keys=True).encode()).hexdigest()
    return SweepPlan(scenario=scenario, axes=axes, sampling=sampling, n_designs=n, shape=shape, target=tgt,
                     keep_series=bool(keep_series), chunk_size=int(chunk_size), seed=seed, definition=definition,
                     hash=digest)


# ----------------------------------------------------------------------------
# One chunk (runs on a worker)
# ----------------------------------------------------------------------------


def run_chunk(base_text, base_path, overrides, design_ids, target, keep_series, numba_threads=None):
    """Build and run the designs of one chunk through the batch kernel; returns plain arrays.

    Parameters
    ----------
    base_text, base_path : str
        The base scenario's TOML text and file path (data files resolve beside it).
    overrides : list of dict
        Field path -> value of each design.
    design_ids : list of int
        Global design numbers.
    target : float or None
        Target bend angle [rad].
    keep_series : bool
        Keep the (design, time) series.
    numba_threads : int, optional
        Threads of numba's parallel loop in this process.

    Returns
    -------
    dict
        ``design``, ``status``, ``metrics`` (name -> array), ``series``, ``times``, ``errors``.
    """
    import numba

    from ..errors import ActsimError
    from ..scenario import apply_overrides, parse_scenario
    from ..solver import build_problem
    from .batch import run_batch

    if numba_threads:
        numba.set_num_threads(max(1, min(int(numba_threads), numba.config.NUMBA_NUM_THREADS)))
    base_dir = Path(base_path).parent if base_path else Path.cwd()
    base = parse_scenario(base_text, path=base_path, base_dir=base_dir)
    n = len(design_ids)
    status = np.zeros(n, np.int8)
    errors = []
    problems, scen, ok = [], [], []
    for k, ov in enumerate(overrides):
        try:
            sc = apply_overrides(base, ov)
            problems.append(build_problem(sc))
            scen.append(sc)
            ok.append(k)
        except ActsimError as exc:
            status[k] = 2
            errors.append((int(design_ids[k]), str(exc)))
    res = run_batch(problems, free_length=[s.strip.free_length for s in scen], width=[s.strip.width for s in scen],
                    target_bend_angle=target, heat=[s.heat.enabled for s in scen], keep_series=keep_series,
                    raise_on_failure=False) if problems else None
    metrics, series = {}, None
    names = list(METRIC_INFO) if target is not None else [m for m in METRIC_INFO if m not in
                                                          ("time_to_target", "reached_target", "blocked_force_at_target")]
    ok = np.asarray(ok, int)
    for name in names:
        arr = np.zeros(n, bool) if name == "reached_target" else np.full(n, np.nan)
        if res is not None:
            arr[ok] = res["metrics"][name]
        metrics[name] = arr
    times = None
    if keep_series and res is not None:
        times = res["times"]
        series = {}
        for name in SERIES_INFO:
            arr = np.full((n, times.size), np.nan)
            arr[ok] = res["series"][name]
            series[name] = arr
    if res is not None:
        status[ok] = res["status"]
    return {"design": np.asarray(design_ids, np.int64), "status": status, "metrics": metrics, "series": series,
            "times": times, "errors": errors}


#: What a missing (fill-valued) entry of a metric means; any other metric is missing only for designs
#: that did not finish (``status`` != 0).
MISSING_MEANING = {
    "time_to_target": "the target bend angle is never reached (or the design did not finish: see status)",
    "blocked_force_at_target": "the target bend angle is never reached (or the design did not finish: see status)",
    "peak_temperature": "heat is not modelled in this design (or the design did not finish: see status)",
}


def _attrs(u, ln, name, arr):
    from ..io import MISSING_ATTR

    attrs = {"units": u, "long_name": ln}
    if arr.dtype.kind == "f" and np.isnan(arr).any():
        attrs[MISSING_ATTR] = MISSING_MEANING.get(name, "the design did not finish (see status)")
    return attrs


def _chunk_dataset(res) -> xr.Dataset:
    dv = {"status": xr.Variable(("design",), res["status"], attrs={"units": "1", "long_name": STATUS_INFO})}
    for name, arr in res["metrics"].items():
        u, ln = METRIC_INFO[name]
        dv[name] = xr.Variable(("design",), arr.astype(np.int8) if arr.dtype == bool else arr,
                               attrs=_attrs(u, ln, name, arr))
    coords = {"design": xr.Variable(("design",), res["design"], attrs={"long_name": "design number"})}
    if res["series"] is not None:
        coords["time"] = xr.Variable(("time",), res["times"], attrs={"units": "s", "long_name": "time since the start of the protocol"})
        for name, arr in res["series"].items():
            u, ln = SERIES_INFO[name]
            dv[f"series_{name}"] = xr.Variable(("design", "time"), arr, attrs=_attrs(u, ln, name, arr))
    ds = xr.Dataset(dv, coords=coords)
    ds.attrs["design_errors"] = json.dumps(res["errors"])
    return ds


# ----------------------------------------------------------------------------
# Store: manifest + chunk files
# ----------------------------------------------------------------------------


def _chunk_path(store: Path, c: int) -> Path:
    return store / f"chunk_{c:06d}.nc"


def _open_store(store, plan: SweepPlan):
    from ..io import write_json

    store = Path(store)
    manifest = store / "manifest.json"
    if manifest.is_file():
        try:
            old = json.loads(manifest.read_text())
        except (OSError, ValueError):
            raise ActsimInputError(f"store: {manifest} is not a readable sweep manifest; delete the folder or use another") from None
        if old.get("hash") != plan.hash:
            raise ActsimInputError(
                f"store: {store} holds a different sweep (definition hash {str(old.get('hash'))[:12]}, this one "
                f"{plan.hash[:12]}: the scenario, a data file it names or the swept values changed); use another "
                "output folder or delete it"
            )
    else:
        write_json(manifest, {"hash": plan.hash, "n_designs": plan.n_designs, "n_chunks": plan.n_chunks,
                              "chunk_size": plan.chunk_size, "files": "chunk_NNNNNN.nc, one per chunk of designs",
                              "definition": plan.definition})
    done = {c for c in range(plan.n_chunks) if _chunk_path(store, c).is_file()}
    return store, done


def _progress(total, initial, enabled):
    from tqdm.auto import tqdm

    on = enabled and sys.stderr.isatty() and not os.environ.get("CI")
    return tqdm(total=total, initial=initial, unit="design", desc="sweep", disable=not on, smoothing=0.1,
                dynamic_ncols=True)


def connect(scheduler, *, timeout=10.0):
    """A dask.distributed Client of an existing scheduler, or a one-line error within ``timeout`` seconds."""
    from distributed import Client

    if not re.match(r"^(tcp|tls|inproc|ucx|ws|wss)://", str(scheduler)):
        raise ActsimInputError(f"--scheduler: '{scheduler}' is not an address such as tcp://127.0.0.1:8786 "
                               "(or 'inprocess', or leave it out for local processes)")
    try:
        return Client(scheduler, timeout=timeout)
    except (OSError, TimeoutError) as exc:
        reason = str(exc).splitlines()[0] if str(exc) else exc.__class__.__name__
        raise ActsimInputError(f"--scheduler: no dask scheduler answered at {scheduler} within {timeout:g} s ({reason[:120]})") from None


def _local_cluster(n_workers):
    import logging

    from distributed import Client, LocalCluster

    cluster = LocalCluster(n_workers=n_workers, threads_per_worker=1, processes=True, dashboard_address=None,
                           silence_logs=logging.ERROR)
    return Client(cluster), cluster


def execute(plan: SweepPlan, *, store=None, scheduler=None, progress=True, connect_timeout=10.0, n_workers=None):
    """Run the chunks of a plan not yet in ``store``; returns the chunk Datasets (all of them, in order)."""
    from ..io import write_netcdf

    done: set = set()
    if store is not None:
        store, done = _open_store(store, plan)
    results: dict[int, xr.Dataset] = {}
    pending = [c for c in range(plan.n_chunks) if c not in done]
    sc = plan.scenario
    n_done = sum(len(plan.chunk_designs(c)) for c in done)
    bar = _progress(plan.n_designs, n_done, progress)

    def args_of(c):
        ids = list(plan.chunk_designs(c))
        return (sc.text, sc.path, [plan.overrides(i) for i in ids], ids, plan.target, plan.keep_series)

    pause = float(os.environ.get("ACTSIM_SWEEP_PAUSE", "0") or 0)  # seconds after each chunk (interruption tests)

    def finish(c, res):
        ds = _chunk_dataset(res)
        if store is not None:
            write_netcdf(ds, _chunk_path(store, c))
        results[c] = ds
        bar.update(len(res["design"]))
        if pause > 0:
            import time

            time.sleep(pause)

    mode = scheduler
    if mode is None:
        mode = "local" if len(pending) > 1 else "inprocess"
    try:
        if not pending:
            pass
        elif mode == "inprocess":
            for c in pending:
                finish(c, run_chunk(*args_of(c)))
        else:
            from distributed import as_completed

            cluster = None
            if mode == "local":
                client, cluster = _local_cluster(n_workers or os.cpu_count() or 1)
                threads = 1
            else:
                client = connect(mode, timeout=connect_timeout)
                threads = None
            try:
                futs = {}
                for c in pending:
                    f = client.submit(run_chunk, *args_of(c), threads, pure=False, key=f"actsim-chunk-{plan.hash[:10]}-{c}")
                    futs[f] = c
                for f in as_completed(futs):
                    finish(futs[f], f.result())
            finally:
                client.close()
                if cluster is not None:
                    cluster.close()
    finally:
        bar.close()
    for c in done:
        results[c] = xr.load_dataset(_chunk_path(store, c))
    return [results[c] for c in range(plan.n_chunks)]


# ----------------------------------------------------------------------------
# Assembly
# ----------------------------------------------------------------------------


def assemble(plan: SweepPlan, chunks) -> xr.Dataset:
    """One Dataset of the whole sweep from its chunk Datasets (grid: one dimension per swept field)."""
    from .. import __version__

    ds = xr.concat(chunks, dim="design", data_vars="all", coords="minimal", compat="override",
                   combine_attrs="drop") if len(chunks) > 1 else chunks[0].copy()
    ds = ds.sortby("design")
    for name in list(ds.data_vars):
        var = ds[name]
        key = name[len("series_"):] if name.startswith("series_") else name
        var.attrs.update(_attrs(var.attrs.get("units", ""), var.attrs.get("long_name", ""), key, var.values))
    errors = []
    for c in chunks:
        errors.extend(json.loads(c.attrs.get("design_errors", "[]")))
    if "reached_target" in ds:
        ds["reached_target"] = ds["reached_target"].astype(bool)
    coords = {}
    if plan.sampling == "grid":
        dims = [ax.name for ax in plan.axes]
        new = {}
        for name, var in ds.data_vars.items():
            rest = var.dims[1:]
            data = var.values.reshape(plan.shape + var.shape[1:])
            new[name] = xr.Variable(tuple(dims) + rest, data, attrs=var.attrs)
        for ax in plan.axes:
            for j, (p, vals) in enumerate(zip(ax.paths, ax.values)):
                si = [si_of(v) for v in vals]
                cname = ax.name if j == 0 else dim_name(p)
                coords[cname] = xr.Variable((ax.name,), np.array([s[0] for s in si]),
                                            attrs={"units": si[0][1], "field": p,
                                                   "long_name": f"swept field {p}", "values_as_written": json.dumps([_json_value(v) for v in vals])})
        if "time" in ds.coords:
            coords["time"] = ds["time"].variable
        out = xr.Dataset(new, coords=coords)
        out = out.assign_coords(design=xr.Variable(tuple(dims), np.arange(plan.n_designs).reshape(plan.shape),
                                                   attrs={"long_name": "design number (C order of the swept dimensions)"}))
    else:
        out = ds
        for ax in plan.axes:
            for j, (p, vals) in enumerate(zip(ax.paths, ax.values)):
                si = [si_of(v) for v in vals]
                cname = dim_name(p)
                out = out.assign_coords({cname: xr.Variable(("design",), np.array([s[0] for s in si]),
                                                            attrs={"units": si[0][1], "field": p,
                                                                   "long_name": f"sampled field {p}"})})
    out.attrs.update(
        title=f"sweep of {plan.scenario.title}",
        scenario=plan.scenario.text,
        scenario_path=plan.scenario.path,
        actsim_version=__version__,
        sweep_hash=plan.hash,
        sampling=plan.sampling,
        swept_fields=json.dumps([list(ax.paths) for ax in plan.axes]),
        n_designs=plan.n_designs,
        n_invalid=int((out["status"].values == 2).sum()),
        n_failed=int((out["status"].values == 1).sum()),
        design_errors=json.dumps(sorted(errors)[:50]),
        efficiency_definition=EFFICIENCY_DEFINITION,
        heat_modelled=int(bool(np.isfinite(out["peak_temperature"].values).any())),
    )
    if plan.target is not None:
        out.attrs["target_bend_angle"] = float(plan.target)
    if plan.sampling != "grid":
        out.attrs["seed"] = -1 if plan.seed is None else int(plan.seed)
    return out


def sweep(scenario, vary, *, sampling="grid", n_samples=None, seed=0, metrics=None, target_bend_angle=None,
          keep_series=False, chunk_size=None, store=None, scheduler=None, progress=True, yes=False,
          connect_timeout=10.0, n_workers=None) -> xr.Dataset:
    """Run a design sweep and return its metrics as one Dataset.

    Parameters
    ----------
    scenario : Scenario
        The base design.
    vary : dict
        Field path -> values: a list (``["10 mW/cm^2", "50 mW/cm^2"]``), a range
        (:func:`lin`, :func:`log`) or a spec string (``"lin(5 um, 200 um, 40)"``).
        A tuple of paths as key, with a tuple of value sets, links fields value
        by value on one dimension (e.g. a wavelength and the irradiance that
        source gives at a fixed electrical power).
    sampling : {"grid", "lhs", "sobol"}
        Full grid (one dimension per swept field) or ``n_samples`` designs
        (dimension ``design``) from a Latin hypercube or a scrambled Sobol
        sequence over the ranges (list values are drawn as categories).
    n_samples : int, optional
        Number of sampled designs.
    seed : int
        Seed of the sampler.
    metrics : list of str, optional
        Metrics to keep (default all of :data:`METRIC_INFO`).
    target_bend_angle : float, optional
        Target angle [rad] (default: the scenario's ``[report] target_bend_angle``).
    keep_series : bool
        Also keep the (time,) series of every design (``series_bend_angle`` ...).
    chunk_size : int, optional
        Designs per chunk (default from a memory budget of the raw outputs).
    store : str or Path, optional
        Folder for the manifest and one NetCDF per chunk; a re-run resumes.
    scheduler : None, "inprocess" or str
        See the module notes.
    progress : bool
        Show a progress bar (only on a terminal and when CI is not set).
    yes : bool
        Allow a grid above :data:`MAX_GRID_WITHOUT_YES` designs.
    connect_timeout : float
        Seconds to wait for a remote scheduler [s].
    n_workers : int, optional
        Worker processes of the local cluster (default: the number of cores).

    Returns
    -------
    xarray.Dataset
        Metrics (see :data:`METRIC_INFO`) per design, ``status``, and the
        swept fields as coordinates in SI with ``units``.
    """
    plan = plan_sweep(scenario, vary, sampling=sampling, n_samples=n_samples, seed=seed,
                      target_bend_angle=target_bend_angle, keep_series=keep_series, chunk_size=chunk_size, yes=yes)
    if metrics is not None:
        import difflib

        for m in metrics:
            if m not in METRIC_INFO:
                hint = difflib.get_close_matches(m, list(METRIC_INFO), n=1)
                extra = f"; did you mean '{hint[0]}'?" if hint else f"; metrics are: {', '.join(METRIC_INFO)}"
                raise ActsimInputError(f"metrics: no metric '{m}'{extra}")
    chunks = execute(plan, store=store, scheduler=scheduler, progress=progress, connect_timeout=connect_timeout,
                     n_workers=n_workers)
    ds = assemble(plan, chunks)
    if metrics is not None:
        drop = [m for m in METRIC_INFO if m in ds and m not in metrics]
        ds = ds.drop_vars(drop)
    return ds


def design_scenario(ds: xr.Dataset, design: int, base=None):
    """The scenario of one design of a sweep result (re-applies its field values to the base)."""
    from ..scenario import apply_overrides, parse_scenario

    base = base if base is not None else parse_scenario(ds.attrs["scenario"], path=ds.attrs.get("scenario_path", ""))
    fields = json.loads(ds.attrs["swept_fields"])
    ov = {}
    if ds.attrs["sampling"] == "grid":
        idx = np.argwhere(ds["design"].values == design)[0]
        dims = list(ds["design"].dims)
        for dim, k in zip(dims, idx):
            for name in ds.coords:
                c = ds.coords[name]
                if c.dims == (dim,) and "values_as_written" in c.attrs:
                    ov[c.attrs["field"]] = _scalar_value_written(json.loads(c.attrs["values_as_written"])[int(k)])
    else:
        raise ActsimInputError("design_scenario: only grid sweeps keep the values as written; rebuild from the coordinates")
    del fields
    return apply_overrides(base, ov)


def _scalar_value_written(v):
    return v


__all__ = ["Range", "lin", "log", "parse_values", "parse_vary_option", "plan_sweep", "run_chunk", "execute",
           "assemble", "sweep", "connect", "si_of", "dim_name", "design_scenario", "METRIC_INFO",
           "MAX_GRID_WITHOUT_YES"]
