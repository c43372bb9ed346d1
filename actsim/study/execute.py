"""Running the chunks of a sweep: one chunk through the batch kernel, on this process or a dask cluster.

:func:`run_chunk` builds the designs of one chunk from the base scenario's text
and their overrides and runs them through :func:`actsim.study.batch.run_batch` in
one numba call; it returns plain arrays, so it can run on a worker.
:func:`execute` runs every chunk of a plan not yet in the store and writes each
one as it finishes (:mod:`actsim.study.store`); :func:`connect` opens a client of
an existing dask scheduler.

Where the work runs
-------------------
``scheduler=None`` or ``"inprocess"`` (default): every chunk in this process,
numba parallel over the designs of the chunk on ``threads`` cores (default: all
that numba may use, ``NUMBA_NUM_THREADS``). Building a design costs about a
tenth of a millisecond (:class:`actsim.study.designs.DesignBuilder` parses the
scenario once per chunk and patches each design), against a millisecond or so of
its time loop, so worker processes do not pay for their start-up on one machine
(see ``docs/studies.md`` for the measurement).
``scheduler="local"``: a ``dask.distributed.LocalCluster`` of worker processes
(``n_workers``, default one per core; one thread each, numba single-threaded
inside); the distributed scheduler hands back each chunk as it finishes, and the
main process writes it at once.
``scheduler="tcp://host:port"``: an existing dask cluster; the connection
gives up after ``connect_timeout`` seconds with a one-line error.

Data files a scenario names (spectra, modulus tables) must be readable by the
workers at the same path.
"""

from __future__ import annotations

import os
import re
import sys
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import xarray as xr

from ..errors import ActsimInputError
from .store import METRIC_INFO, SERIES_INFO, chunk_dataset, chunk_path, open_store

if TYPE_CHECKING:
    from .plan import SweepPlan


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
        Threads of numba's parallel loop over the designs (default: numba's current number;
        restored afterwards).

    Returns
    -------
    dict
        ``design``, ``status``, ``metrics`` (name -> array), ``series``, ``times``, ``errors``.
    """
    import numba

    from ..errors import ActsimError
    from ..scenario import parse_scenario
    from .batch import run_batch
    from .designs import DesignBuilder

    base_dir = Path(base_path).parent if base_path else Path.cwd()
    base = parse_scenario(base_text, path=base_path, base_dir=base_dir)
    builder = DesignBuilder(base, dict.fromkeys(p for ov in overrides for p in ov))
    n = len(design_ids)
    status = np.zeros(n, np.int8)
    errors = []
    problems, scen, ok = [], [], []
    for k, ov in enumerate(overrides):
        try:
            problem, sc = builder.build(ov)
            problems.append(problem)
            scen.append(sc)
            ok.append(k)
        except ActsimError as exc:
            status[k] = 2
            errors.append((int(design_ids[k]), str(exc)))
    res = None
    if problems:
        previous = numba.get_num_threads()
        if numba_threads:
            numba.set_num_threads(max(1, min(int(numba_threads), numba.config.NUMBA_NUM_THREADS)))
        try:
            res = run_batch(problems, free_length=[s.strip.free_length for s in scen],
                            width=[s.strip.width for s in scen], target_bend_angle=target,
                            heat=[s.heat.enabled for s in scen], keep_series=keep_series, raise_on_failure=False)
        finally:
            numba.set_num_threads(previous)
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
                               "(or 'local' for worker processes on this machine, 'inprocess', or leave it out)")
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


def execute(plan: SweepPlan, *, store=None, scheduler=None, progress=True, connect_timeout=10.0, n_workers=None,
            threads=None):
    """Run the chunks of a plan not yet in ``store``; returns the chunk Datasets (all of them, in order).

    ``scheduler``: None or ``"inprocess"`` (this process, numba parallel over the designs of a chunk on
    ``threads`` cores), ``"local"`` (a local dask cluster of ``n_workers`` processes) or a scheduler address.
    """
    from ..io import write_netcdf

    done: set = set()
    if store is not None:
        store, done = open_store(store, plan)
    results: dict[int, xr.Dataset] = {}
    pending = [c for c in range(plan.n_chunks) if c not in done]
    sc = plan.scenario
    n_done = sum(len(plan.chunk_designs(c)) for c in done)
    bar = _progress(plan.n_designs, n_done, progress)

    def args_of(c):
        ids = list(plan.chunk_designs(c))
        return (sc.text, sc.path, [plan.overrides(i) for i in ids], ids, plan.target, plan.keep_series)

    if threads is not None and (isinstance(threads, bool) or not isinstance(threads, int) or threads < 1):
        raise ActsimInputError(f"threads: {threads!r} is outside the allowed range (a whole number >= 1)")

    pause = float(os.environ.get("ACTSIM_SWEEP_PAUSE", "0") or 0)  # seconds after each chunk (interruption tests)

    def finish(c, res):
        ds = chunk_dataset(res)
        if store is not None:
            write_netcdf(ds, chunk_path(store, c))
        results[c] = ds
        bar.update(len(res["design"]))
        if pause > 0:
            import time

            time.sleep(pause)

    mode = "inprocess" if scheduler is None else scheduler
    try:
        if not pending:
            pass
        elif mode == "inprocess":
            for c in pending:
                finish(c, run_chunk(*args_of(c), threads))
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
        results[c] = xr.load_dataset(chunk_path(store, c))
    return [results[c] for c in range(plan.n_chunks)]


__all__ = ["run_chunk", "connect", "execute"]
