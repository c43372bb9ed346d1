"""Strip metrics from a simulation result: the numbers a designer reads first.

All functions take the :class:`xarray.Dataset` of :func:`actsim.simulate` and
return SI floats (NaN is never returned: a metric that does not exist, such as
the time to an angle never reached, is ``None``).
"""

from __future__ import annotations

import numpy as np
from numba import njit


def first_crossing_times(times, values, levels):
    """First times at which ``|values|`` reaches ``|levels|``, linearly interpolated, per row; NaN where never.

    Parameters
    ----------
    times : numpy.ndarray, shape (n_row, n_time)
        [s].
    values : numpy.ndarray, shape (n_row, n_time)
        Signals (any unit); compared by magnitude.
    levels : numpy.ndarray, shape (n_row,)
        Levels in the unit of ``values``.

    Returns
    -------
    numpy.ndarray, shape (n_row,)
        [s]; NaN where the level is never reached.
    """
    v = np.abs(np.asarray(values, float))
    lv = np.abs(np.asarray(levels, float))[:, None]
    hit = v >= lv
    any_hit = hit.any(axis=1)
    i = np.argmax(hit, axis=1)
    rows = np.arange(v.shape[0])
    im = np.maximum(i - 1, 0)
    t0, t1 = times[rows, im], times[rows, i]
    v0, v1 = v[rows, im], v[rows, i]
    lvl = lv[:, 0]
    with np.errstate(invalid="ignore", divide="ignore"):
        interp = np.where(v1 != v0, t0 + (lvl - v0) * (t1 - t0) / (v1 - v0), t1)
    out = np.where(i == 0, times[rows, 0], interp)
    return np.where(any_hit, out, np.nan)


def first_crossing_time(times, values, level):
    """First time at which ``|values|`` reaches ``|level|``, linearly interpolated, or None.

    Parameters
    ----------
    times : numpy.ndarray
        [s].
    values : numpy.ndarray
        Signal (any unit); compared by magnitude.
    level : float
        Level in the unit of ``values``.
    """
    t = first_crossing_times(np.asarray(times, float)[None], np.asarray(values, float)[None], [level])[0]
    return None if np.isnan(t) else float(t)


def conversion_front_depth(*, z, conversion, thickness, from_top=True, active=None, dz=None):
    """Depth below the lit face where conversion falls to half its current maximum.

    The front is the x = 0.5 x_max contour (x_max over the stack at that time),
    found by linear interpolation between cell centres, measured from the lit face.

    Parameters
    ----------
    z : numpy.ndarray, shape (n_cell,)
        Cell centres [m].
    conversion : numpy.ndarray, shape (n_time, n_cell)
        [1].
    thickness : float
        Stack thickness [m].
    from_top : bool
        Lit face.
    active : numpy.ndarray of bool, optional
        Cells that hold chromophore; the front is sought among them only.
    dz : numpy.ndarray, optional
        Cell thickness [m]; with ``active``, a fully converted active region
        reports the depth of its far face.

    Returns
    -------
    numpy.ndarray, shape (n_time,)
        Front depth [m] (0 where nothing has converted).
    """
    x = np.asarray(conversion, float)
    depth = thickness - z if from_top else z
    cols = np.arange(depth.size)
    if active is not None:
        sel = np.asarray(active, bool)
        if not sel.any():
            return np.zeros(x.shape[0])
        far = depth[sel] + (0.5 * np.asarray(dz)[sel] if dz is not None else 0.0)
        cols, depth = cols[sel], depth[sel]
        deepest = float(far.max())
    else:
        deepest = float(depth.max())
    order = np.argsort(depth)
    return front_depth_rows(x, cols[order].astype(np.int64), depth[order], deepest, 0.5)


@njit(cache=True)
def front_depth_rows(x, cols, depth, deepest, fraction):
    """Front depth of each row of ``x`` (n_row, n_cell): the first crossing of ``fraction`` x its maximum.

    Parameters
    ----------
    x : numpy.ndarray, shape (n_row, n_cell)
        Conversion [1].
    cols : numpy.ndarray of int, shape (m,)
        The cells sought, in order of increasing depth.
    depth : numpy.ndarray, shape (m,)
        Their depths below the lit face [m], increasing.
    deepest : float
        Depth reported when nothing past the peak falls below the level [m].
    fraction : float
        The level as a fraction of the row's maximum [1].

    Returns
    -------
    numpy.ndarray, shape (n_row,)
        Depth of the level past the deepest-first maximum, linear between cells [m]; 0 where the row's
        maximum is at most 1e-12.
    """
    n_row = x.shape[0]
    m = cols.size
    out = np.zeros(n_row)
    for r in range(n_row):
        xmax = x[r, cols[0]]
        imax = 0
        for k in range(1, m):
            v = x[r, cols[k]]
            if v > xmax:
                xmax = v
                imax = k
        if not xmax > 1e-12:
            continue
        level = fraction * xmax
        out[r] = deepest
        for k in range(imax + 1, m):
            v = x[r, cols[k]]
            if v < level:
                x0 = x[r, cols[k - 1]]
                out[r] = depth[k - 1] + (x0 - level) * (depth[k] - depth[k - 1]) / (x0 - v)
                break
    return out


def summarize(ds, *, target_bend_angle=None, protocol=None):
    """Key numbers of one simulation.

    Parameters
    ----------
    ds : xarray.Dataset
        Result of :func:`actsim.simulate`.
    target_bend_angle : float, optional
        Angle whose first crossing is reported [rad].
    protocol : sequence of actsim.scenario.Step, optional
        With programming holds in it, the shape-memory cycles are added
        (``shape_memory_cycles``, see :mod:`actsim.shape_memory`).

    Returns
    -------
    dict
        ``final_bend_angle`` and ``peak_bend_angle`` [rad]; ``time_to_90_percent``
        [s] (first time |bend| reaches 90 % of its peak); ``peak_blocked_force``
        [N]; ``peak_blocked_moment`` [N m]; ``peak_tip_deflection`` [m];
        ``final_front_depth`` [m]; ``optical_dose`` [J m-2]; and, with a target,
        ``time_to_target``, ``blocked_force_at_target`` and ``front_depth_at_target``.
    """
    t = ds["time"].values
    theta = ds["bend_angle"].values
    ipk = int(np.argmax(np.abs(theta)))
    force = ds["blocked_force"].values
    front = ds["conversion_front_depth"].values if "conversion_front_depth" in ds else None
    out = {
        "final_bend_angle": float(theta[-1]),
        "peak_bend_angle": float(theta[ipk]),
        "time_of_peak_bend": float(t[ipk]),
        "time_to_90_percent": first_crossing_time(t, theta, 0.9 * theta[ipk]) if theta[ipk] != 0 else None,
        "peak_blocked_force": float(force[int(np.argmax(np.abs(force)))]),
        "peak_blocked_moment": float(ds["blocked_moment"].values[int(np.argmax(np.abs(ds["blocked_moment"].values)))]),
        "peak_tip_deflection": float(ds["tip_deflection"].values[int(np.argmax(np.abs(ds["tip_deflection"].values)))]),
        "optical_dose": float(ds["optical_dose"].values[-1]),
    }
    if front is not None:
        out["final_front_depth"] = float(front[-1])
        out["peak_front_depth"] = float(front.max())
    if "peak_temperature" in ds:
        out["peak_temperature"] = float(ds["peak_temperature"].values.max())
    if "grid_error_estimate" in ds.attrs:
        out["grid_error_estimate"] = float(ds.attrs["grid_error_estimate"])
    if "time_steps_accepted" in ds.attrs:
        out["time_steps_accepted"] = int(ds.attrs["time_steps_accepted"])
        out["time_steps_rejected"] = int(ds.attrs["time_steps_rejected"])
    if protocol is not None and any(s.hold in ("stretch", "bend") for s in protocol):
        from .shape_memory import shape_memory_cycles

        out["shape_memory_cycles"] = shape_memory_cycles(ds, protocol)
    if target_bend_angle is not None:
        tt = first_crossing_time(t, theta, target_bend_angle)
        out["target_bend_angle"] = float(target_bend_angle)
        out["time_to_target"] = tt
        if tt is not None:
            out["blocked_force_at_target"] = float(np.interp(tt, t, force))
            if front is not None:
                out["front_depth_at_target"] = float(np.interp(tt, t, front))
    return out
