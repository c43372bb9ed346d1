"""The plan of a sweep: its axes, the values of every design, its chunks and the hash that decides a resume.

:func:`plan_sweep` checks a sweep definition (every value of every field is applied
to the base scenario and built once) and lays out its designs: a full grid (one
:class:`Axis` per swept field, or per group of linked fields) or a space-filling
sample (Latin hypercube or scrambled Sobol, :mod:`scipy.stats.qmc`). The
:class:`SweepPlan` it returns gives each design's overrides and the designs of
each chunk, and holds the SHA-256 of the definition, including the contents of
every data file the scenario names (:func:`data_file_digests`), so that a store
is resumed only by the same sweep. Nothing here runs the time loop.
"""

from __future__ import annotations

import hashlib
import json
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import ActsimInputError
from .store import STORE_FORMAT
from .values import MAX_SWEEP_DESIGNS, Range, dim_name, format_value, json_value, parse_values, range_values, split_number_unit

#: A grid with more designs than this needs ``yes=True`` (``--yes``).
MAX_GRID_WITHOUT_YES = 20_000

#: Memory budget for the raw output arrays of one chunk [bytes] (sets the default chunk size).
CHUNK_MEMORY = 256 * 2**20

#: Most designs in one chunk by default (fewer, larger chunks: less writing and per-chunk set-up; a resume
#: loses at most the chunk that was running, about a second of work at this size).
MAX_CHUNK = 1024


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


def _axis_length(ax) -> int:
    """Number of values of a grid axis, from its specs (nothing is made): the first spec's count."""
    s = ax.specs[0]
    if isinstance(s, Range):
        return int(s.num) if s.num is not None else 0
    return len(s)


def _check_size(axes, sampling, n_samples, yes):
    """Refuse a sweep larger than :data:`MAX_SWEEP_DESIGNS`, or than :data:`MAX_GRID_WITHOUT_YES` without ``yes``,
    before any value or design is made."""
    for ax in axes:
        for p, s in zip(ax.paths, ax.specs):
            if not isinstance(s, Range) and len(s) > MAX_SWEEP_DESIGNS:
                raise ActsimInputError(f"{p}: {len(s)} values is more than the {MAX_SWEEP_DESIGNS} allowed")
    if sampling == "grid":
        shape = [_axis_length(ax) for ax in axes]
        n = math.prod(shape)  # Python integers: no overflow
        dims = " x ".join(str(s) for s in shape)
        if n > MAX_SWEEP_DESIGNS:
            raise ActsimInputError(f"--vary: the grid has {n:.4g} designs ({dims}), more than the {MAX_SWEEP_DESIGNS} "
                                   "allowed; use fewer values, or sample the ranges with --sample lhs --samples N")
        if n > MAX_GRID_WITHOUT_YES and not yes:
            raise ActsimInputError(
                f"--vary: the grid has {n} designs ({dims}), more than {MAX_GRID_WITHOUT_YES}; pass --yes "
                "(yes=True) to run it, or sample it with --sample lhs --samples N"
            )
        return
    if n_samples is None:
        raise ActsimInputError(f"samples: --sample {sampling} needs --samples N (the number of designs)")
    if isinstance(n_samples, bool) or not isinstance(n_samples, (int, np.integer)):
        raise ActsimInputError(f"--samples: {n_samples!r} is not a whole number of designs")
    if not 1 <= n_samples <= MAX_SWEEP_DESIGNS:
        raise ActsimInputError(f"--samples: {n_samples} is outside the allowed range (>= 1 and <= {MAX_SWEEP_DESIGNS})")
    if n_samples > MAX_GRID_WITHOUT_YES and not yes:
        raise ActsimInputError(f"--samples: {n_samples} designs is more than {MAX_GRID_WITHOUT_YES}; pass --yes to run them")


def _check_file_values(axes, scenario):
    """Every swept value of a ``file`` field names a regular data file inside the scenario's folder (stat only)."""
    from ..inputfiles import check_data_file, resolve_data_path

    base = Path(scenario.base_dir or (Path(scenario.path).parent if scenario.path else Path.cwd()))
    for ax in axes:
        for p, s in zip(ax.paths, ax.specs):
            if not (p.endswith(".file") or p == "file") or isinstance(s, Range):
                continue
            for v in s:
                if not isinstance(v, str):
                    raise ActsimInputError(f"{p}: {v!r} is not a file name")
                check_data_file(resolve_data_path(v, base_dir=base, field=p), field=p, shown=v)


def _grid_values(axes):
    for ax in axes:
        vals = []
        for p, s in zip(ax.paths, ax.specs):
            vals.append(range_values(s, p) if isinstance(s, Range) else list(s))
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
                a, unit = split_number_unit(s.start, p)
                grid = range_values(Range(s.kind, s.start, s.stop, 2), p)
                b = split_number_unit(grid[1], p)[0]
                with np.errstate(all="ignore"):  # refused below, with one line, if not finite
                    if s.kind == "log":
                        v = np.exp(np.log(a) + u[:, j] * (np.log(b) - np.log(a)))
                    else:
                        v = a + u[:, j] * (b - a)
                if not np.all(np.isfinite(v)):
                    raise ActsimInputError(f"{p}: {s.kind}({s.start}, {s.stop}) spans more than floating point numbers "
                                           "can hold; use a narrower range")
                vals.append([format_value(x, unit) for x in v])
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


def file_names(node, out):
    """Collect the strings under keys named ``file`` anywhere in a parsed TOML tree."""
    if isinstance(node, dict):
        for k, v in node.items():
            if k == "file" and isinstance(v, str):
                out.append(v)
            else:
                file_names(v, out)
    elif isinstance(node, list):
        for v in node:
            file_names(v, out)
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
    from ..inputfiles import read_file_bytes, resolve_data_path

    base = Path(scenario.base_dir or (Path(scenario.path).parent if scenario.path else Path.cwd()))
    out = {}
    for name in file_names(tree, []) + [str(n) for n in extra_names]:
        if name in out:
            continue
        try:  # the same checks as the parser: inside the folder, a regular file, bounded (never a FIFO or device)
            data = read_file_bytes(resolve_data_path(name, base_dir=base, field="file"), field="file")
            out[name] = hashlib.sha256(data).hexdigest()
        except ActsimInputError:
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
    _check_size(axes, sampling, n_samples, yes)  # before any value is made
    _check_file_values(axes, scenario)  # every named file, not only the values built below
    if sampling == "grid":
        _grid_values(axes)
        shape = tuple(len(ax.values[0]) for ax in axes)
        n = math.prod(shape)
        checks = []
        for j, ax in enumerate(axes):
            k_all = range(shape[j])
            if shape[j] > 60:
                k_all = sorted(set(np.linspace(0, shape[j] - 1, 60).round().astype(int)))
            for k in k_all:
                checks.append({p: vals[k] for p, vals in zip(ax.paths, ax.values)})
    else:
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
                    for v in range_values(Range(s.kind, s.start, s.stop, 2), p):
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
        chunk_size = int(min(max(1, CHUNK_MEMORY // per_design), MAX_CHUNK, max(8, math.ceil(n / 8))))
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
                  "values": [[json_value(v) for v in vals] for vals in ax.values]} for ax in axes],
        "target_bend_angle": tgt,
        "keep_series": bool(keep_series),
        "chunk_size": int(chunk_size),
    }
    digest = hashlib.sha256(json.dumps(definition, sort_keys=True).encode()).hexdigest()
    return SweepPlan(scenario=scenario, axes=axes, sampling=sampling, n_designs=n, shape=shape, target=tgt,
                     keep_series=bool(keep_series), chunk_size=int(chunk_size), seed=seed, definition=definition,
                     hash=digest)


__all__ = ["MAX_SWEEP_DESIGNS", "MAX_GRID_WITHOUT_YES", "CHUNK_MEMORY", "MAX_CHUNK", "Axis", "SweepPlan", "data_file_digests", "plan_sweep"]
