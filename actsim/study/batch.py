"""Many designs in one numba call, and their strip metrics without a Dataset per design.

:func:`run_batch` takes a list of :class:`actsim.solver.Problem`, groups them
by array shapes (cells, beams, protocol steps, segments, output times, modulus
tables), stacks each group along a leading design axis and marches every design
of a group through :func:`actsim._kernels.run_design` inside ONE
``numba.prange`` loop (:func:`batch_kernel`). The per-design arithmetic is the
single-design kernel itself, so a design computed in a batch is bitwise the
design computed alone.

:func:`batch_metrics` then reduces the raw outputs of a group with the same
:mod:`actsim.mechanics`, :mod:`actsim.metrics` and :mod:`actsim.schedule`
functions as :func:`actsim.solver.assemble_dataset`, vectorised over designs:

.. math:: A = \\int E\\,dz,\\; B = \\int E z\\,dz,\\; D = \\int E z^2\\,dz,\\;
   \\kappa_{free} = \\frac{B N^* - A M^*}{A D - B^2},\\;
   F_{block} = \\frac{3\\, b\\, (D - B^2/A)\\, \\kappa_{free}}{2 L}

Metrics per design (SI): ``final_bend_angle``, ``peak_bend_angle`` [rad],
``time_of_peak_bend``, ``time_to_target`` [s] (NaN when the target is never
reached; ``reached_target`` says so), ``blocked_force_at_target`` [N],
``peak_blocked_force`` [N], ``peak_blocked_moment`` [N m],
``peak_tip_deflection`` [m], ``peak_temperature`` [K] (NaN where heat is not
modelled), ``optical_dose`` [J m-2], ``optical_energy`` [J], ``peak_optical_power`` [W]
(largest total incident irradiance of a protocol step times the strip area),
``mechanical_work`` [J] and ``efficiency`` [1] (see :func:`batch_metrics`).

References
----------
.. [1] Timoshenko, S. "Analysis of bi-metal thermostats." J. Opt. Soc. Am. 11
   (1925) 233-255.
.. [2] Gere, J. M. and Timoshenko, S. P. Mechanics of Materials, 4th ed.,
   PWS 1997, Appendix G (cantilever deflections).
"""

from __future__ import annotations

import numba
import numpy as np
from numba import njit, prange

from .. import mechanics
from .._kernels import RawOutput, allocate_output, design_slice, output_slice, run_design
from ..errors import ActsimSimulationError
from ..mechanics import HOLD_FREE
from ..metrics import first_crossing_times
from ..schedule import incident_dose
from ..solver import Problem

#: Raw output fields kept for every design (the others go to per-thread scratch unless ``full``).
KEPT_FIELDS = ("E", "Ee", "T", "mech", "budget", "energy")


@njit(parallel=True, cache=True)
def batch_kernel(grid, light, photo, heat, mat, protocol, out, bad):
    """March every design of a stacked group through its protocol, in parallel over designs.

    Every field of every parameter object has a leading design axis (scalars
    such as ``heat.mode`` become arrays of one value per design). An output
    field whose leading axis is shorter than the number of designs is
    per-thread scratch: design ``d`` writes into row
    ``numba.get_thread_id()`` (overwritten by the next design on that
    thread). ``bad[d]`` receives the return value of ``run_design``.

    (The schedule is named ``protocol`` here: numba's parallel loop lowering
    uses the name ``sched`` for its own iteration schedule.)
    """
    n = bad.size
    for d in prange(n):
        di = np.int64(d)
        tid = np.int64(numba.get_thread_id())
        bad[di] = run_design(design_slice(grid, di), design_slice(light, di), design_slice(photo, di),
                             design_slice(heat, di), design_slice(mat, di), design_slice(protocol, di),
                             output_slice(out, di, tid, n))


def shape_key(p: Problem) -> tuple:
    """Designs with equal keys stack into one group (same shape of every kernel array)."""
    return tuple(v.shape if isinstance(v, np.ndarray) else np.shape(v) for params in p.kernel_inputs() for v in params)


def group_problems(problems) -> list[list[int]]:
    """Indices of ``problems`` grouped by :func:`shape_key`, in order of first appearance."""
    groups: dict[tuple, list[int]] = {}
    for i, p in enumerate(problems):
        groups.setdefault(shape_key(p), []).append(i)
    return list(groups.values())


def stack_problems(problems) -> tuple:
    """The kernel inputs of problems of one shape group, every field stacked along a leading design axis."""
    stacked = []
    inputs = [p.kernel_inputs() for p in problems]
    for k, first in enumerate(inputs[0]):
        fields = [np.ascontiguousarray(np.stack([np.asarray(inp[k][f]) for inp in inputs]))
                  for f in range(len(first))]
        stacked.append(type(first)(*fields))
    return tuple(stacked)


def run_group(problems, *, full=False) -> dict:
    """Run one shape group in one :func:`batch_kernel` call.

    Parameters
    ----------
    problems : list of Problem
        All with the same :func:`shape_key`.
    full : bool
        Keep every raw field for every design (as :func:`actsim.solver.run_kernel`
        returns them); otherwise ``x``, ``S``, ``irr`` and ``pabs`` go to
        per-thread scratch and only :data:`KEPT_FIELDS` are kept.

    Returns
    -------
    dict
        ``out`` (:class:`actsim._kernels.RawOutput` with a leading design axis),
        ``bad`` (n_design,): -1 for a finite design, else the first segment
        that went non-finite, and ``stacked`` (the stacked kernel inputs).
    """
    stacked = stack_problems(problems)
    n_design = len(problems)
    n_scratch = numba.get_num_threads()
    lead = {name: n_design if (full or name in KEPT_FIELDS) else n_scratch for name in RawOutput._fields}
    out = allocate_output(problems[0].times.size, problems[0].grid.dz.size, lead)
    bad = np.full(n_design, -1, np.int64)
    batch_kernel(*stacked, out, bad)
    if not full:
        out = out._replace(**{name: None for name in RawOutput._fields if lead[name] != n_design})
    return {"out": out, "bad": bad, "stacked": stacked}


def _at_peak(values, free):
    """Signed value at the largest magnitude along the last axis over the ``free`` entries, and its index."""
    i = np.argmax(np.where(free, np.abs(values), -1.0), axis=-1)
    return np.take_along_axis(values, i[:, None], axis=-1)[:, 0], i


def batch_metrics(problems, o, *, free_length, width, target_bend_angle=None, heat=None, keep_series=False):
    """Strip metrics of every design of one group from its raw outputs (numpy, vectorised over designs).

    Mechanics as in :func:`actsim.solver.assemble_dataset`: the free curvature
    and the bending stiffness about the neutral axis from the section integrals
    of E and E e* at every output time (:func:`actsim.mechanics.free_strip_response`
    arithmetic, stacked), the bend angle :math:`\\theta = \\kappa L`, the blocked
    tip force :math:`F = 3 b (D - B^2/A) \\kappa_{free} / (2 L)` and the blocked
    moment :math:`M = b (D - B^2/A) \\kappa_{free}`.

    Efficiency: at the output time :math:`t^*` of the peak blocked force,

    .. math:: W = \\tfrac12 |F_{block}(t^*)|\\, |y_{free}(t^*)|, \\qquad
       \\eta = \\frac{W}{H(t^*)\\, L\\, b}

    with :math:`y_{free}` the tip deflection of the free strip at that state
    (circular arc of the free curvature, :func:`actsim.mechanics.arc_tip_position`)
    and :math:`H(t^*)` the incident radiant exposure up to :math:`t^*` [J m-2]
    (the light falling on the strip area :math:`L b`). W is the work of a linear
    spring-like load taken from zero to the blocked force over the free stroke:
    the largest work a linear actuator can deliver into a matched load. The
    efficiency is 0 where no light has fallen yet.

    Parameters
    ----------
    problems : list of Problem
        The group's problems (same order as in ``o``).
    o : dict
        Output of :func:`run_group`.
    free_length, width : numpy.ndarray, shape (n_design,)
        Strip free length and width of each design [m].
    target_bend_angle : numpy.ndarray or float, optional
        Target angle [rad]; the time of its first crossing (linear interpolation
        between output times, as :func:`actsim.metrics.first_crossing_time`).
    heat : numpy.ndarray of bool, optional
        Designs whose heat is modelled (peak temperature reported; NaN otherwise).
    keep_series : bool
        Also return the (design, time) series ``bend_angle``, ``blocked_force``,
        ``blocked_moment``, ``tip_deflection``, ``peak_temperature``.

    Returns
    -------
    (metrics, series) : dict of numpy.ndarray (n_design,), dict of numpy.ndarray (n_design, n_time) or None
    """
    n = len(problems)
    L = np.asarray(free_length, float).reshape(n)
    b = np.asarray(width, float).reshape(n)
    out = o["out"]
    z_edges = o["stacked"][0].z_edges
    times = np.stack([p.times for p in problems])
    E = out.E
    _, kappa_free, d_eff = mechanics.free_strip_response(z_edges=z_edges, modulus=E, eigenstrain=out.Ee / E)
    kappa = out.mech[:, :, 1]
    theta = kappa * L[:, None]
    m_block = mechanics.blocked_moment(bending_stiffness=d_eff, curvature=kappa_free, width=b[:, None])
    f_block = mechanics.blocked_tip_force(bending_stiffness=d_eff, curvature=kappa_free, width=b[:, None],
                                          free_length=L[:, None])
    _, y_tip = mechanics.arc_tip_position(curvature=kappa, free_length=L[:, None])
    _, y_free = mechanics.arc_tip_position(curvature=kappa_free, free_length=L[:, None])
    dose = np.stack([incident_dose(p.schedule) for p in problems])
    rows = np.arange(n)
    # peaks over the output times of free steps (as actsim.metrics.summarize); all times where every step holds
    free = np.stack([p.schedule.step_hold[np.concatenate([p.schedule.seg_step[:1], p.schedule.seg_step])] == HOLD_FREE
                     for p in problems])
    free[~free.any(axis=1)] = True
    peak_theta, ipk = _at_peak(theta, free)
    peak_force, ifk = _at_peak(f_block, free)
    peak_moment, _ = _at_peak(m_block, free)
    peak_tip, _ = _at_peak(y_tip, free)
    work = 0.5 * np.abs(peak_force) * np.abs(y_free[rows, ifk])
    energy_at_peak = dose[rows, ifk] * L * b
    with np.errstate(invalid="ignore", divide="ignore"):
        eff = np.where(energy_at_peak > 0, work / energy_at_peak, 0.0)
    heat = np.zeros(n, bool) if heat is None else np.asarray(heat, bool).reshape(n)
    t_max = out.T.max(axis=2) if (heat.any() or keep_series) else None  # (n, n_time) of no use without heat
    peak_T = np.where(heat, t_max.max(axis=1), np.nan) if t_max is not None else np.full(n, np.nan)
    m = {
        "final_bend_angle": theta[:, -1],
        "peak_bend_angle": peak_theta,
        "time_of_peak_bend": times[rows, ipk],
        "peak_blocked_force": peak_force,
        "time_of_peak_force": times[rows, ifk],
        "peak_blocked_moment": peak_moment,
        "peak_tip_deflection": peak_tip,
        "peak_temperature": peak_T,
        "optical_dose": dose[:, -1],
        "optical_energy": dose[:, -1] * L * b,
        "peak_optical_power": np.array([p.schedule.step_irradiance.sum(axis=1).max() for p in problems]) * L * b,
        "mechanical_work": work,
        "efficiency": eff,
    }
    if target_bend_angle is not None:
        tgt = np.broadcast_to(np.asarray(target_bend_angle, float), (n,))
        tt = first_crossing_times(times, theta, tgt)
        m["time_to_target"] = tt
        m["reached_target"] = np.isfinite(tt)
        f_at = np.full(n, np.nan)
        for k in np.nonzero(np.isfinite(tt))[0]:
            f_at[k] = np.interp(tt[k], times[k], f_block[k])
        m["blocked_force_at_target"] = f_at
    series = None
    if keep_series:
        series = {"bend_angle": theta, "blocked_force": f_block, "blocked_moment": m_block,
                  "tip_deflection": y_tip, "peak_temperature": np.where(heat[:, None], t_max, np.nan)}
    return m, series


def run_batch(problems, *, free_length, width, target_bend_angle=None, heat=None, keep_series=False,
              raise_on_failure=True):
    """Run many designs (any shapes) and return their metrics in the order given.

    Designs are grouped by :func:`shape_key`; each group runs in one
    :func:`batch_kernel` call (parallel over designs) and is reduced by
    :func:`batch_metrics`.

    Parameters
    ----------
    problems : list of Problem
        From :func:`actsim.solver.build_problem`.
    free_length, width : array_like, shape (n_design,)
        [m].
    target_bend_angle : array_like or float, optional
        [rad].
    heat : array_like of bool, optional
        Designs with heat modelled.
    keep_series : bool
        Also return (design, time) series; all designs must then share their output times.
    raise_on_failure : bool
        Raise :class:`ActsimSimulationError` when a design goes non-finite;
        otherwise its metrics are NaN and ``status`` is 1.

    Returns
    -------
    dict
        ``metrics`` (name -> (n_design,) array), ``status`` (n_design,) int
        (0 finite, 1 non-finite), ``series`` (name -> (n_design, n_time)) or
        None, and ``times`` (n_time,) when series are kept.
    """
    n = len(problems)
    L = np.broadcast_to(np.asarray(free_length, float), (n,))
    b = np.broadcast_to(np.asarray(width, float), (n,))
    heat_arr = np.zeros(n, bool) if heat is None else np.broadcast_to(np.asarray(heat, bool), (n,))
    tgt = None if target_bend_angle is None else np.broadcast_to(np.asarray(target_bend_angle, float), (n,))
    if keep_series and n and any(p.times.shape != problems[0].times.shape or np.any(p.times != problems[0].times)
                                 for p in problems):
        from ..errors import ActsimInputError

        raise ActsimInputError("series: keeping the time series needs the same output times in every design "
                               "(a swept field changes the protocol duration or the output interval)")
    metrics: dict = {}
    series: dict | None = {} if keep_series else None
    status = np.zeros(n, np.int8)
    for idx in group_problems(problems):
        grp = [problems[i] for i in idx]
        o = run_group(grp)
        failed = o["bad"] >= 0
        if failed.any() and raise_on_failure:
            k = int(np.nonzero(failed)[0][0])
            p = grp[k]
            seg = int(o["bad"][k])
            raise ActsimSimulationError(
                f"design {idx[k]}: non-finite state at t = {p.times[seg + 1]:g} s (step {p.schedule.seg_step[seg] + 1})"
            )
        m, ser = batch_metrics(grp, o, free_length=L[idx], width=b[idx],
                               target_bend_angle=None if tgt is None else tgt[idx], heat=heat_arr[idx],
                               keep_series=keep_series)
        for name, val in m.items():
            if name not in metrics:
                metrics[name] = np.zeros(n, bool) if val.dtype == bool else np.full(n, np.nan)
            v = val.copy()
            if v.dtype != bool:
                v[failed] = np.nan
            else:
                v[failed] = False
            metrics[name][idx] = v
        if ser is not None:
            for name, val in ser.items():
                if name not in series:
                    series[name] = np.full((n, val.shape[1]), np.nan)
                v = val.copy()
                v[failed] = np.nan
                series[name][idx] = v
        status[np.asarray(idx)[failed]] = 1
    out = {"metrics": metrics, "status": status, "series": series}
    if keep_series and n:
        out["times"] = problems[0].times.copy()
    return out


def warm_up():
    """Compile (or load from cache) the batch kernel with a tiny design; returns the seconds it took."""
    import time

    from ..scenario import parse_scenario
    from ..solver import build_problem

    text = """
title = "warm-up"
[strip]
free_length = "5 mm"
width = "1 mm"
[materials.film]
modulus = "1 GPa"
refractive_index = 1.5
chromophore_concentration = "0.1 mol/L"
photo_strain = -0.01
reactant_absorptivity = "1e3 L/(mol*cm)"
product_absorptivity = "0 L/(mol*cm)"
forward_quantum_yield = 0.3
[[layers]]
name = "film"
material = "film"
thickness = "10 um"
cells = 4
[[sources]]
name = "lamp"
wavelength = "365 nm"
irradiance = "10 mW/cm^2"
[[protocol]]
duration = "1 s"
light = ["lamp"]
[time]
output_interval = "0.5 s"
step = "0.25 s"
"""
    t0 = time.perf_counter()
    p = build_problem(parse_scenario(text))
    run_batch([p, p], free_length=5e-3, width=1e-3)
    return time.perf_counter() - t0


__all__ = ["batch_kernel", "batch_metrics", "group_problems", "run_batch", "run_group",
           "shape_key", "stack_problems", "warm_up"]
