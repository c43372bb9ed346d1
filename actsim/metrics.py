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


def conversion_front_depth(*, z, conversion, thickness, from_top=True, active=None, dz=None, level=None, full=None):
    """Depth below the lit face where the conversion falls to a level: the conversion front.

    With ``level`` (what :func:`actsim.solve` reports): the front is where the converted share of
    what can convert, :math:`y = x / x_\\mathrm{full}`, falls to ``level`` past its maximum, found by
    linear interpolation between cell centres and measured from the lit face. A profile whose
    maximum stays below the level has no front (depth 0); one at or above the level all through
    reports the deepest depth. Without ``level``: the contour of half the current maximum,
    :math:`x = 0.5\\,x_\\max(t)` (a relative front, which also finds one in a uniformly, weakly
    converted stack).

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
    level : float, optional
        Converted share that marks the front, 0 < level < 1 [1].
    full : numpy.ndarray, shape (n_cell,), optional
        Full conversion of each cell (the reactive fraction) [1]; default 1.

    Returns
    -------
    numpy.ndarray, shape (n_time,)
        Front depth [m] (0 where there is no front).
    """
    x = np.asarray(conversion, float)
    depth = thickness - z if from_top else z
    cols = np.arange(depth.size)
    scale = np.ones(depth.size) if full is None else np.asarray(full, float)
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
    cols = cols[order].astype(np.int64)
    relative = level is None
    return front_depth_rows(x, cols, depth[order], deepest, 0.5 if relative else float(level), relative,
                            np.ascontiguousarray(scale[cols]))


@njit(cache=True)
def front_depth_rows(x, cols, depth, deepest, level, relative, full):
    """Front depth of each row of ``x`` (n_row, n_cell): the first fall below the level past the maximum.

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
    level : float
        The level: a share of full conversion, or (``relative``) a fraction of the row's maximum [1].
    relative : bool
        Level relative to the row's maximum.
    full : numpy.ndarray, shape (m,)
        Full conversion of the cells sought [1]; the conversion is divided by it.

    Returns
    -------
    numpy.ndarray, shape (n_row,)
        Depth of the level past the shallowest maximum, linear between cells [m]; 0 where the row's
        maximum is at most 1e-12 or (absolute level) below the level.
    """
    n_row = x.shape[0]
    m = cols.size
    out = np.zeros(n_row)
    for r in range(n_row):
        ymax = x[r, cols[0]] / full[0]
        imax = 0
        for k in range(1, m):
            v = x[r, cols[k]] / full[k]
            if v > ymax:
                ymax = v
                imax = k
        if not ymax > 1e-12:
            continue
        lv = level * ymax if relative else level
        if ymax < lv:
            continue
        out[r] = deepest
        for k in range(imax + 1, m):
            v = x[r, cols[k]] / full[k]
            if v < lv:
                y0 = x[r, cols[k - 1]] / full[k - 1]
                out[r] = depth[k - 1] + (y0 - lv) * (depth[k] - depth[k - 1]) / (y0 - v)
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
    # peaks of the strip's free response: output times of free (or release) steps only -- while the strip is held
    # the bend is imposed and the blocked force of the free state is not what a support would feel
    hold = ds["hold"].values if "hold" in ds else None
    free = np.isin(hold, ("free", "release")) if hold is not None else np.ones(t.size, bool)
    peaks_over = "free steps"
    if not free.any():
        free = np.ones(t.size, bool)
        peaks_over = "all output times (every step holds the strip)"

    def peak_index(values):
        return int(np.argmax(np.where(free, np.abs(values), -1.0)))

    ipk = peak_index(theta)
    run = ipk  # the free stretch of output times that holds the peak
    while run > 0 and free[run - 1]:
        run -= 1
    force = ds["blocked_force"].values
    front = ds["conversion_front_depth"].values if "conversion_front_depth" in ds else None
    moment, tip = ds["blocked_moment"].values, ds["tip_deflection"].values
    out = {
        "final_bend_angle": float(theta[-1]),
        "peak_bend_angle": float(theta[ipk]),
        "time_of_peak_bend": float(t[ipk]),
        "time_to_90_percent": (first_crossing_time(t[run:ipk + 1], theta[run:ipk + 1], 0.9 * theta[ipk])
                               if theta[ipk] != 0 else None),
        "peak_blocked_force": float(force[peak_index(force)]),
        "peak_blocked_moment": float(moment[peak_index(moment)]),
        "peak_tip_deflection": float(tip[peak_index(tip)]),
        "peaks_over": peaks_over,
        "optical_dose": float(ds["optical_dose"].values[-1]),
    }
    if "protocol_step" in ds:
        out["step_of_peak_bend"] = int(ds["protocol_step"].values[ipk])
        if protocol is not None and protocol[out["step_of_peak_bend"]].label:
            out["step_of_peak_bend_label"] = protocol[out["step_of_peak_bend"]].label
    if front is not None:
        out["front_conversion"] = float(ds["conversion_front_depth"].attrs.get("front_conversion", 0.5))
        out["final_front_depth"] = float(front[-1])
        out["peak_front_depth"] = float(front.max())
        out["front_formed"] = bool(front.max() > 0)
    if "peak_temperature" in ds:
        out["peak_temperature"] = float(ds["peak_temperature"].values.max())
    if "grid_error_estimate" in ds.attrs:
        out["grid_error_estimate"] = float(ds.attrs["grid_error_estimate"])
    if "time_steps_accepted" in ds.attrs:
        out["time_steps_accepted"] = int(ds.attrs["time_steps_accepted"])
        out["time_steps_rejected"] = int(ds.attrs["time_steps_rejected"])
    if "protocol_step" in ds and "holding_moment" in ds:
        held = held_step_loads(ds, protocol)
        if held:
            out["held_steps"] = held
    if protocol is not None and any(s.hold in ("stretch", "bend") for s in protocol):
        from .shape_memory import shape_memory_cycles

        out["shape_memory_cycles"] = shape_memory_cycles(ds, protocol)
    if "ribbon_shape" in ds:
        from .liquid_crystal import ribbon_summary

        out["liquid_crystal"] = ribbon_summary(ds)
    if target_bend_angle is not None:
        tt = first_crossing_time(t, theta, target_bend_angle)
        out["target_bend_angle"] = float(target_bend_angle)
        out["time_to_target"] = tt
        if tt is not None:
            out["blocked_force_at_target"] = float(np.interp(tt, t, force))
            if front is not None:
                out["front_depth_at_target"] = float(np.interp(tt, t, front))
    return out


def held_step_loads(ds, protocol=None):
    """What the grips or mandrel carry through each held protocol step, and how much is left at its end.

    A flat or bent hold carries the moment :math:`M(t)` (``holding_moment``), a stretch the axial force
    ``holding_force``; with a relaxing (viscoelastic) layer it decays while the hold lasts. The share
    left is :math:`|L_\\mathrm{end}| / \\max_t |L(t)|` over the step's output times.

    Parameters
    ----------
    ds : xarray.Dataset
        Result of :func:`actsim.simulate` (``protocol_step``, ``hold``, ``holding_moment``,
        ``holding_force``, ``free_length`` attribute [m]).
    protocol : sequence of actsim.scenario.Step, optional
        For the step labels (durations [s]).

    Returns
    -------
    list of dict
        One entry per held step: ``step``, ``label``, ``hold``, ``quantity`` ("holding_moment" [N m] or
        "holding_force" [N]), ``peak``, ``time_of_peak`` [s], ``final`` and ``share_left`` [1] (None when
        nothing was carried); for a moment also ``equivalent_tip_force`` [N], 1.5 M / L at the end: the
        blocked tip force of the same free curvature (small deflection).
    """
    steps = ds["protocol_step"].values
    hold = ds["hold"].values
    t = ds["time"].values
    out = []
    for k in sorted(set(steps.tolist())):
        idx = np.nonzero(steps == k)[0]
        kind = str(hold[idx[0]])
        if kind not in ("flat", "bend", "stretch"):
            continue
        name = "holding_force" if kind == "stretch" else "holding_moment"
        v = ds[name].values[idx]
        j = int(np.argmax(np.abs(v)))
        peak, final = float(v[j]), float(v[-1])
        entry = {"step": int(k), "label": (protocol[k].label if protocol is not None else ""), "hold": kind,
                 "quantity": name, "peak": peak, "time_of_peak": float(t[idx[j]]), "final": final,
                 "time_of_end": float(t[idx[-1]]), "share_left": abs(final) / abs(peak) if peak != 0 else None}
        if name == "holding_moment" and "free_length" in ds.attrs:
            entry["equivalent_tip_force"] = 1.5 * final / float(ds.attrs["free_length"])
        out.append(entry)
    return out
