"""Large-deflection load lines at the output times of a simulation: the time-resolved force–travel curves
of a strip (``actsim check``), each one :func:`actsim.elastica.load_line`.
"""

from __future__ import annotations

import math

import numpy as np

from .elastica import load_line
from .errors import ActsimInputError
from .solve_budget import ElasticaLimitError, bend_beyond_range, budget_scope, progress_bar, user_reason


def load_line_history(ds, *, n_times=25, n=11, times=None, budget=None, progress=False):
    """Large-deflection load lines at output times of a simulation (time-resolved force–travel curves).

    At each selected output time the strip's free curvature and bending stiffness give one
    :func:`load_line`: the force the tip delivers along +y at each tip travel between blocked and free,
    and the work it can do. Times whose curvature is zero get a zero line. Times whose free strip bends
    past a full turn (:func:`bend_beyond_range`), whose line does not converge, or that the budget
    does not reach get NaN, and the dataset's ``not_solved`` attribute says which and why.

    Parameters
    ----------
    ds : xarray.Dataset
        Result of :func:`actsim.simulate` (needs ``free_curvature`` or ``curvature``, and
        ``bending_stiffness`` [N m2]); its ``free_length`` attribute is the length [m].
    n_times : int
        Number of output times, evenly spread, when ``times`` is not given; the time of peak
        curvature is always included [dimensionless].
    n : int
        Points on each load line [dimensionless].
    times : array_like, optional
        Output times to use [s] (nearest output times are taken).
    budget : SolveBudget, optional
        Time and solve-count limit of all the lines together (a limit object, unitless); None: a
        fresh one with the defaults (20 s).
    progress : bool, optional
        Show a progress line on stderr when the lines take more than 2 s (never when stderr is not
        a terminal or the ``CI`` environment variable is set).

    Returns
    -------
    xarray.Dataset
        ``displacement`` and ``force`` (time, point) [m], [N]; ``work`` (time,) [J];
        ``snap_displacement`` (time,) [m] (NaN where the line does not snap).
    """
    import xarray as xr

    t_all = ds["time"].values
    kappa = (ds["free_curvature"] if "free_curvature" in ds else ds["curvature"]).values
    ei = ds["bending_stiffness"].values
    length = float(ds.attrs["free_length"])
    if times is None:
        idx = np.unique(np.concatenate([np.linspace(0, t_all.size - 1, max(int(n_times), 1)).round().astype(int),
                                        [int(np.argmax(np.abs(kappa)))]]))
    else:
        idx = np.unique([int(np.argmin(np.abs(t_all - t))) for t in np.atleast_1d(times)])
    disp = np.zeros((idx.size, n))
    force = np.zeros((idx.size, n))
    work = np.zeros(idx.size)
    snap = np.full(idx.size, np.nan)
    not_solved = []
    bar = progress_bar(idx.size, "large deflection: load lines", on=progress)
    with budget_scope(budget), bar:
        for row, i in enumerate(idx):
            bar.update(1)
            k = float(kappa[i])
            if k == 0.0:
                continue
            reason = ""
            if bend_beyond_range(curvature=k, length=length):
                reason = f"the strip bends {math.degrees(abs(k) * length):.4g} degrees, past a full turn"
            else:
                try:
                    ll = load_line(length=length, bending_stiffness=float(ei[i]), spontaneous_curvature=abs(k), n=n)
                except (ActsimInputError, ElasticaLimitError) as exc:
                    reason = user_reason(exc)
            if reason:
                disp[row] = force[row] = np.nan
                work[row] = np.nan
                not_solved.append(f"t = {t_all[i]:g} s: {reason}")
                continue
            sign = 1.0 if k > 0 else -1.0
            disp[row] = sign * np.asarray(ll.displacement)
            force[row] = sign * np.asarray(ll.force)
            work[row] = ll.work
            snap[row] = sign * ll.snap_displacement if np.isfinite(ll.snap_displacement) else np.nan
    attrs = {"model": "elastica of a uniformly curved cantilever, tip load normal to the clamped tangent"}
    missing = {}
    if not_solved:
        attrs["not_solved"] = "; ".join(not_solved)
        missing = {"missing_means": "the load line at that time was not solved (see the not_solved attribute)"}
    return xr.Dataset(
        data_vars={
            "displacement": (("time", "point"), disp, {"units": "m", "long_name": "tip travel along +y from the clamped tangent",
                                                       **missing}),
            "force": (("time", "point"), force, {"units": "N", "long_name": "force the tip delivers along +y at that travel",
                                                 **missing}),
            "work": (("time",), work, {"units": "J", "long_name": "work the tip can do from blocked to free", **missing}),
            "snap_displacement": (("time",), snap, {"units": "m", "long_name": "travel at which the line snaps to the free branch",
                                                   "missing_means": "the load line does not snap at that time"}),
        },
        coords={"time": ("time", t_all[idx], {"units": "s", "long_name": "output time"})},
        attrs=attrs,
    )
