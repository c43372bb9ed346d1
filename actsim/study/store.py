"""Store of a sweep: what its variables mean, one Dataset per chunk, the chunk files and the manifest.

:data:`METRIC_INFO`, :data:`SERIES_INFO` and :data:`STATUS_INFO` give the unit and
meaning of every stored variable, :data:`MISSING_MEANING` what a missing
(fill-valued) metric means, and :func:`variable_attrs` the attributes written with
each. :func:`chunk_dataset` turns the plain arrays of one chunk
(:func:`actsim.study.execute.run_chunk`) into a Dataset. A store folder holds
``manifest.json`` (the hash of the sweep definition, :attr:`SweepPlan.hash
<actsim.study.plan.SweepPlan>`) and one NetCDF file per finished chunk
(:func:`chunk_path`); :func:`open_store` refuses a folder that holds a different
sweep and lists the chunks already written, so a re-run resumes.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import xarray as xr

from ..errors import ActsimInputError

if TYPE_CHECKING:
    from .plan import SweepPlan

#: Version of the chunk/manifest layout (part of the sweep hash).
STORE_FORMAT = 1

#: Metric name -> (unit, long name) of every metric a sweep stores per design.
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

#: How the ``efficiency`` metric is defined (written as a Dataset attribute).
EFFICIENCY_DEFINITION = (
    "efficiency = W / (H(t*) L b), W = 0.5 |F_block(t*)| |y_free(t*)|: t* the output time of the peak blocked force, "
    "y_free the tip deflection of the free strip at that state, H(t*) the incident radiant exposure up to t*, L b the "
    "strip area"
)

#: Series name -> (unit, long name) of the (design, time) series kept with ``keep_series``.
SERIES_INFO = {
    "bend_angle": ("rad", "tip rotation of the free length"),
    "blocked_force": ("N", "tip force that holds the tip in place"),
    "blocked_moment": ("N m", "moment that holds the strip flat"),
    "tip_deflection": ("m", "tip travel normal to the clamped tangent"),
    "peak_temperature": ("K", "highest cell temperature (missing: heat not modelled)"),
}

#: Meaning of the ``status`` variable.
STATUS_INFO = "0 finished, 1 non-finite state, 2 invalid design (see attribute design_errors)"


#: What a missing (fill-valued) entry of a metric means; any other metric is missing only for designs
#: that did not finish (``status`` != 0).
MISSING_MEANING = {
    "time_to_target": "the target bend angle is never reached (or the design did not finish: see status)",
    "blocked_force_at_target": "the target bend angle is never reached (or the design did not finish: see status)",
    "peak_temperature": "heat is not modelled in this design (or the design did not finish: see status)",
}


def variable_attrs(u, ln, name, arr):
    """``units``, ``long_name`` and, when ``arr`` holds NaN, what a missing entry of variable ``name`` means."""
    from ..io import MISSING_ATTR

    attrs = {"units": u, "long_name": ln}
    if arr.dtype.kind == "f" and np.isnan(arr).any():
        attrs[MISSING_ATTR] = MISSING_MEANING.get(name, "the design did not finish (see status)")
    return attrs


def chunk_dataset(res) -> xr.Dataset:
    """The Dataset of one chunk (dimension ``design``) from the dict returned by ``run_chunk``."""
    dv = {"status": xr.Variable(("design",), res["status"], attrs={"units": "1", "long_name": STATUS_INFO})}
    for name, arr in res["metrics"].items():
        u, ln = METRIC_INFO[name]
        dv[name] = xr.Variable(("design",), arr.astype(np.int8) if arr.dtype == bool else arr,
                               attrs=variable_attrs(u, ln, name, arr))
    coords = {"design": xr.Variable(("design",), res["design"], attrs={"units": "1", "long_name": "design number"})}
    if res["series"] is not None:
        coords["time"] = xr.Variable(("time",), res["times"], attrs={"units": "s", "long_name": "time since the start of the protocol"})
        for name, arr in res["series"].items():
            u, ln = SERIES_INFO[name]
            dv[f"series_{name}"] = xr.Variable(("design", "time"), arr, attrs=variable_attrs(u, ln, name, arr))
    ds = xr.Dataset(dv, coords=coords)
    ds.attrs["design_errors"] = json.dumps(res["errors"])
    return ds


def chunk_path(store: Path, c: int) -> Path:
    """The NetCDF file of chunk ``c`` in a store folder."""
    return store / f"chunk_{c:06d}.nc"


def open_store(store, plan: SweepPlan):
    """Open (or start) the store folder of ``plan``; returns (folder, set of chunks already written).

    A new folder gets a manifest; an existing one must hold the same sweep
    definition hash, else a one-line error.
    """
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
    done = {c for c in range(plan.n_chunks) if chunk_path(store, c).is_file()}
    return store, done


__all__ = ["STORE_FORMAT", "METRIC_INFO", "EFFICIENCY_DEFINITION", "SERIES_INFO", "STATUS_INFO", "MISSING_MEANING",
           "variable_attrs", "chunk_dataset", "chunk_path", "open_store"]
