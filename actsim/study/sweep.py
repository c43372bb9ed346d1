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

This module is the front: :func:`sweep` plans, runs and assembles a sweep;
:func:`assemble` makes one Dataset of the chunk Datasets; :func:`design_scenario`
rebuilds the scenario of one design. The parts live beside it:

- :mod:`actsim.study.values`: ranges (:func:`~actsim.study.values.lin`,
  :func:`~actsim.study.values.log`), value specs, SI values of values as written;
- :mod:`actsim.study.plan`: :func:`~actsim.study.plan.plan_sweep`, the designs, chunks and definition hash;
- :mod:`actsim.study.execute`: one chunk through the batch kernel, and where the chunks run
  (this process, local worker processes or a dask cluster);
- :mod:`actsim.study.store`: the metrics and their meaning, chunk Datasets, the store folder and its manifest.
"""

from __future__ import annotations

import json

import numpy as np
import xarray as xr

from ..errors import ActsimInputError
from .execute import execute
from .plan import SweepPlan, plan_sweep
from .store import EFFICIENCY_DEFINITION, METRIC_INFO, variable_attrs
from .values import dim_name, json_value, si_values


def assemble(plan: SweepPlan, chunks) -> xr.Dataset:
    """One Dataset of the whole sweep from its chunk Datasets (grid: one dimension per swept field)."""
    from .. import __version__

    ds = xr.concat(chunks, dim="design", data_vars="all", coords="minimal", compat="override",
                   combine_attrs="drop") if len(chunks) > 1 else chunks[0].copy()
    for name, var in ds.variables.items():  # concat dropped every attribute: units and meanings are per variable
        if name in chunks[0].variables:
            var.attrs = dict(chunks[0].variables[name].attrs)
    ds.attrs = {}
    ds = ds.sortby("design")
    for name in list(ds.data_vars):
        var = ds[name]
        key = name[len("series_"):] if name.startswith("series_") else name
        var.attrs.update(variable_attrs(var.attrs.get("units", ""), var.attrs.get("long_name", ""), key, var.values))
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
                si = si_values(vals)
                cname = ax.name if j == 0 else dim_name(p)
                coords[cname] = xr.Variable((ax.name,), np.array([s[0] for s in si]),
                                            attrs={"units": si[0][1], "field": p,
                                                   "long_name": f"swept field {p}", "values_as_written": json.dumps([json_value(v) for v in vals])})
        if "time" in ds.coords:
            coords["time"] = ds["time"].variable
        out = xr.Dataset(new, coords=coords)
        out = out.assign_coords(design=xr.Variable(tuple(dims), np.arange(plan.n_designs).reshape(plan.shape),
                                                   attrs={"units": "1", "long_name": "design number (C order of the swept dimensions)"}))
    else:
        out = ds
        for ax in plan.axes:
            for j, (p, vals) in enumerate(zip(ax.paths, ax.values)):
                si = si_values(vals)
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
          connect_timeout=10.0, n_workers=None, threads=None, security=None) -> xr.Dataset:
    """Run a design sweep and return its metrics as one Dataset.

    Parameters
    ----------
    scenario : Scenario
        The base design.
    vary : dict
        Field path -> values: a list (``["10 mW/cm^2", "50 mW/cm^2"]``), a range
        (:func:`~actsim.study.values.lin`, :func:`~actsim.study.values.log`) or a
        spec string (``"lin(5 um, 200 um, 40)"``).
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
        Metrics to keep (default all of :data:`~actsim.study.store.METRIC_INFO`).
    target_bend_angle : float, optional
        Target angle [rad] (default: the scenario's ``[report] target_bend_angle``).
    keep_series : bool
        Also keep the (time,) series of every design (``series_bend_angle`` ...).
    chunk_size : int, optional
        Designs per chunk (default from a memory budget of the raw outputs).
    store : str or Path, optional
        Folder for the manifest and one NetCDF per chunk; a re-run resumes.
    scheduler : None, "inprocess", "local" or str
        Where the chunks run: this process (default), a local dask cluster or a
        scheduler address; see :mod:`actsim.study.execute`.
    progress : bool
        Show a progress bar (only on a terminal and when CI is not set).
    yes : bool
        Allow a grid above :data:`~actsim.study.plan.MAX_GRID_WITHOUT_YES` designs.
    connect_timeout : float
        Seconds to wait for a remote scheduler [s].
    n_workers : int, optional
        Worker processes of the local cluster (default: the number of cores).
    threads : int, optional
        Cores of the parallel loop over designs in this process (default: all numba may use).
    security : distributed.security.Security, optional
        TLS settings of a ``tls://`` scheduler (:func:`actsim.study.execute.tls_security`).

    Returns
    -------
    xarray.Dataset
        Metrics (see :data:`~actsim.study.store.METRIC_INFO`) per design,
        ``status``, and the swept fields as coordinates in SI with ``units``.
    """
    hyper = sorted({la.material.name for la in scenario.layers if la.material.strain_law != "linear"})
    if hyper:
        raise ActsimInputError(
            f"materials.{hyper[0]}.strain_law: a sweep's metrics (blocked force, tip travel) are small-strain, and "
            f"'{hyper[0]}' is {scenario.layers[[la.material.name for la in scenario.layers].index(hyper[0])].material.strain_law}; "
            "run the designs one by one with actsim run (sweeps of hyperelastic layers are not supported yet)")
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
                     n_workers=n_workers, threads=threads, security=security)
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


__all__ = ["assemble", "sweep", "design_scenario"]
