"""Many designs in one numba call, and their strip metrics without a Dataset per design.

:func:`run_batch` takes a list of :class:`actsim.solver.Problem`, groups them
by array shapes (cells, beams, protocol steps, segments, output times, modulus
tables), stacks each group along a leading design axis and marches every design
of a group through :func:`actsim._kernels.run_design` inside ONE
``numba.prange`` loop (:func:`batch_kernel`). The per-design arithmetic is the
single-design kernel itself, so a design computed in a batch is bitwise the
design computed alone.

:func:`batch_metrics` then reduces the raw outputs of a group with numpy,
vectorised over designs, using the same section integrals and formulas as
:func:`actsim.solver.assemble_dataset` (:mod:`actsim.mechanics`):

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

from .._kernels import run_design
from ..errors import ActsimSimulationError
from ..solver import FIELDS, Problem, _allocate

#: Problem fields in the order of the arguments of :func:`actsim._kernels.run_design`.
KERNEL_ARGS = (
    "z_edges", "dz", "c0", "eps_a", "eps_b", "alpha_bg", "phi_f", "phi_b", "k_th", "e_act", "beam_from_top",
    "beam_entry", "beam_emol", "heat_mode", "k_cond", "rho_c", "heat_frac", "T_ref",
    "mod_kind", "mod_base", "mod_ratio", "sec_fac", "gl", "tab_idx", "tab_T", "tab_logE", "network_mod",
    "photo_strain", "alpha_th", "step_flux", "step_hold", "step_value", "step_env", "seg_step", "seg_dt",
    "seg_n", "x0", "T0",
)

#: Output arrays of :func:`actsim._kernels.run_design`, in the order of its arguments
#: (as :func:`actsim.solver.run_kernel` passes them).
OUTPUT_ORDER = ("x", "T", "S", "E", "Ee", "mech", "irr", "pabs", "budget", "energy")

#: Raw output fields kept for every design (the others go to per-thread scratch unless ``full``).
KEPT_FIELDS = ("E", "Ee", "T")


@njit(parallel=True, cache=True)
def batch_kernel(z_edges, dz, c0, eps_a, eps_b, alpha_bg, phi_f, phi_b, k_ref, e_act, from_top, entry, beam_emol,
                 heat_mode, k_cond, rho_c, heat_frac, T_ref,
                 mod_kind, mod_base, mod_ratio, sec_fac, gl, tab_idx, tab_T, tab_logE, network_mod, photo_strain,
                 alpha_th, step_flux, step_hold, step_value, step_env, seg_step, seg_dt, seg_n, x0, T0,
                 out_x, out_T, out_S, out_E, out_Ee, out_mech, out_irr, out_pabs, out_budget, out_energy, bad):
    """March every design of a stacked group through its protocol, in parallel over designs.

    Every input has a leading design axis (``heat_mode`` and ``T_ref`` are
    arrays of one value per design). An output whose leading axis is shorter
    than the number of designs is per-thread scratch: design ``d`` writes into
    slot ``numba.get_thread_id()`` (overwritten by the next design on that
    thread). ``bad[d]`` receives the return value of ``run_design``.
    """
    n_design = z_edges.shape[0]
    for d in prange(n_design):
        di = np.int64(d)
        tid = np.int64(numba.get_thread_id())
        ix = di if out_x.shape[0] == n_design else tid
        iT = di if out_T.shape[0] == n_design else tid
        iS = di if out_S.shape[0] == n_design else tid
        iE = di if out_E.shape[0] == n_design else tid
        iEe = di if out_Ee.shape[0] == n_design else tid
        ii = di if out_irr.shape[0] == n_design else tid
        ip = di if out_pabs.shape[0] == n_design else tid
        bad[d] = run_design(
            z_edges[d], dz[d], c0[d], eps_a[d], eps_b[d], alpha_bg[d], phi_f[d], phi_b[d], k_ref[d], e_act[d],
            from_top[d], entry[d], beam_emol[d], heat_mode[d], k_cond[d], rho_c[d], heat_frac[d], T_ref[d],
            mod_kind[d], mod_base[d], mod_ratio[d], sec_fac[d], gl[d], tab_idx[d], tab_T[d], tab_logE[d],
            network_mod[d], photo_strain[d], alpha_th[d], step_flux[d], step_hold[d], step_value[d], step_env[d],
            seg_step[d], seg_dt[d], seg_n[d], x0[d], T0[d],
            out_x[ix], out_T[iT], out_S[iS], out_E[iE], out_Ee[iEe], out_mech[d], out_irr[ii], out_pabs[ip],
            out_budget[d], out_energy[d],
        )


def shape_key(p: Problem) -> tuple:
    """Designs with equal keys stack into one group (same shape of every kernel array)."""
    return tuple(np.shape(getattr(p, name)) for name in KERNEL_ARGS) + (p.times.shape,)


def group_problems(problems) -> list[list[int]]:
    """Indices of ``problems`` grouped by :func:`shape_key`, in order of first appearance."""
    groups: dict[tuple, list[int]] = {}
    for i, p in enumerate(problems):
        groups.setdefault(shape_key(p), []).append(i)
    return list(groups.values())


def stack_problems(problems) -> dict:
    """Stacked kernel inputs (leading design axis) of problems of one shape group."""
    out = {}
    for name in KERNEL_ARGS:
        vals = [getattr(p, name) for p in problems]
        if name == "heat_mode":
            out[name] = np.array(vals, np.int64)
        elif name == "T_ref":
            out[name] = np.array(vals, float)
        else:
            out[name] = np.ascontiguousarray(np.stack(vals))
    return out


def run_group(problems, *, full=False) -> dict:
    """Run one shape group in one :func:`batch_kernel` call.

    Parameters
    ----------
    problems : list of Problem
        All with the same :func:`shape_key`.
    full : bool
        Keep every raw field for every design (as :func:`actsim.solver.run_kernel`
        returns them); otherwise ``x``, ``S``, ``irr`` and ``pabs`` go to
        per-thread scratch and only ``E``, ``Ee``, ``T``, ``mech``, ``budget`` are kept.

    Returns
    -------
    dict
        Raw outputs with a leading design axis, and ``bad`` (n_design,): -1 for
        a finite design, else the first segment that went non-finite.
    """
    s = stack_problems(problems)
    n_design = len(problems)
    n_out, n_cell = problems[0].times.size, problems[0].dz.size
    n_scratch = numba.get_num_threads()
    o = {}
    for name in FIELDS:
        lead = n_design if (full or name in KEPT_FIELDS) else n_scratch
        o[name] = np.zeros((lead, n_out, n_cell))
    single = _allocate(problems[0])
    missing = set(single) ^ set(OUTPUT_ORDER)
    if missing:
        raise RuntimeError(f"actsim.study.batch is out of step with actsim.solver._allocate (outputs {sorted(missing)})")
    for name in OUTPUT_ORDER:
        if name not in FIELDS:
            o[name] = np.zeros((n_design,) + single[name].shape)
    bad = np.full(n_design, -1, np.int64)
    batch_kernel(*(s[name] for name in KERNEL_ARGS), *(o[name] for name in OUTPUT_ORDER), bad)
    if not full:
        for name in FIELDS:
            if name not in KEPT_FIELDS:
                del o[name]
    o["bad"] = bad
    o["stacked"] = s
    return o


def _first_crossing(times, values, level):
    """Vectorised :func:`actsim.metrics.first_crossing_time` over a leading design axis (NaN: not reached)."""
    v = np.abs(values)
    lv = np.abs(level)[:, None]
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


def _at_peak(values):
    """Signed value at the largest magnitude along the last axis, and its index."""
    i = np.argmax(np.abs(values), axis=-1)
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
    from .. import mechanics

    n = len(problems)
    L = np.asarray(free_length, float).reshape(n)
    b = np.asarray(width, float).reshape(n)
    s = o["stacked"]
    z_edges = s["z_edges"]
    times = np.stack([p.times for p in problems])
    E, Ee = o["E"], o["Ee"]
    e_star = Ee / E
    # section integrals exactly as mechanics.section_integrals, stacked over designs
    z0, z1 = z_edges[:, :-1], z_edges[:, 1:]
    w1 = (z1 - z0)[..., None]
    w2 = (0.5 * (z1**2 - z0**2))[..., None]
    w3 = ((z1**3 - z0**3) / 3.0)[..., None]
    est = E * e_star
    A = np.matmul(E, w1)[..., 0]
    B = np.matmul(E, w2)[..., 0]
    D = np.matmul(E, w3)[..., 0]
    Ns = np.matmul(est, w1)[..., 0]
    Ms = np.matmul(est, w2)[..., 0]
    det = A * D - B**2
    kappa_free = (B * Ns - A * Ms) / det
    d_eff = det / A
    kappa = o["mech"][:, :, 1]
    theta = kappa * L[:, None]
    m_block = mechanics.blocked_moment(bending_stiffness=d_eff, curvature=kappa_free, width=b[:, None])
    f_block = 1.5 * (b[:, None] * d_eff) * kappa_free / L[:, None]
    _, y_tip = mechanics.arc_tip_position(curvature=kappa, free_length=L[:, None])
    _, y_free = mechanics.arc_tip_position(curvature=kappa_free, free_length=L[:, None])
    # incident radiant exposure, as assemble_dataset (piecewise-constant power per segment)
    dose = np.zeros_like(theta)
    for k, p in enumerate(problems):
        seg_power = p.step_irradiance.sum(axis=1)[p.seg_step]
        dose[k] = np.concatenate([[0.0], np.cumsum(seg_power * np.diff(p.times))])
    rows = np.arange(n)
    peak_theta, ipk = _at_peak(theta)
    peak_force, ifk = _at_peak(f_block)
    peak_moment, _ = _at_peak(m_block)
    peak_tip, _ = _at_peak(y_tip)
    work = 0.5 * np.abs(peak_force) * np.abs(y_free[rows, ifk])
    energy_at_peak = dose[rows, ifk] * L * b
    with np.errstate(invalid="ignore", divide="ignore"):
        eff = np.where(energy_at_peak > 0, work / energy_at_peak, 0.0)
    heat = np.zeros(n, bool) if heat is None else np.asarray(heat, bool).reshape(n)
    t_max = o["T"].max(axis=2)
    peak_T = np.where(heat, t_max.max(axis=1), np.nan)
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
        "peak_optical_power": np.array([p.step_irradiance.sum(axis=1).max() for p in problems]) * L * b,
        "mechanical_work": work,
        "efficiency": eff,
    }
    if target_bend_angle is not None:
        tgt = np.broadcast_to(np.asarray(target_bend_angle, float), (n,))
        tt = _first_crossing(times, theta, tgt)
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
                f"design {idx[k]}: non-finite state at t = {p.times[seg + 1]:g} s (step {p.seg_step[seg] + 1})"
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


__all__ = ["KERNEL_ARGS", "batch_kernel", "batch_metrics", "group_problems", "run_batch", "run_group",
           "shape_key", "stack_problems", "warm_up"]
