"""The hot loop: one design marched through its protocol in one numba call.

The loop only orders the stages; every piece of arithmetic is a stage's own
kernel step: :func:`actsim.optics.light_stage` (the light pass), :func:`actsim.kinetics.rates`
and :func:`actsim.kinetics.exact_update`, :func:`actsim.thermal.heat_source`
and the conduction steps, :func:`actsim.material.material_state` and
:func:`actsim.material.network_strain_update`, the viscoelastic steps
(:func:`actsim.material.viscoelastic_state`, :func:`actsim.material.viscoelastic_accept`),
:func:`actsim.mechanics.section_solve`.
It takes each stage's parameter object (a ``NamedTuple`` of arrays built by
the stage module) as one argument, so no argument list is written twice;
:mod:`actsim.study.batch` runs many designs through the same function.
``tests/test_kernels.py`` compares it with the readable loop of
:mod:`actsim.reference`.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
from numba import njit, types
from numba.extending import overload

from .kinetics import exact_update, rates
from .material import (hyper_state, material_state, mechanical_strain, network_strain_update, viscoelastic_accept,
                       viscoelastic_error, viscoelastic_state, viscoelastic_strain)
from .mechanics import section_solve, section_solve_centred, section_solve_hyper
from .optics import light_stage
#: Step-size control (Hairer, Nørsett and Wanner, Solving ODEs I, 2nd ed., 1993, sec. II.4): safety factor, largest
#: and smallest change of the step, the error exponent 1/(q+1) with q = 1 the order of the embedded (predictor) step.
STEP_SAFETY = 0.9
STEP_GROW_MAX = 5.0
STEP_SHRINK_MIN = 0.2
STEP_EXPONENT = 0.5
#: Exponent for the temperature's estimate, which is of TR-BDF2's own third-order local error.
STEP_EXPONENT_HEAT = 1.0 / 3.0
#: Exponent of the four-stage step, whose estimate (against its embedded trapezoid-rate step) is O(dt^3).
STEP_EXPONENT_FOUR = 1.0 / 3.0
#: Fraction of the tolerance the local error estimate of a step is held to: the estimate is of the first-order
#: predictor, and the global error of the kept second-order state then stays below the tolerance (measured on
#: every bundled scenario: conversion 0.6 x tol at most; tests/test_time_stepping.py).
LOCAL_TARGET = 0.5
#: Scales of the error norm: the tolerance bounds the local error of conversion [1], temperature / TEMPERATURE_SCALE
#: and network strain / STRAIN_SCALE per step.
TEMPERATURE_SCALE = 1.0  # K
STRAIN_SCALE = 0.01  # 1
#: Failure guards of the error-controlled march.
MAX_STEPS = 50_000_000
MIN_STEP_FRACTION = 1e-14

from .thermal import (  # noqa: E402
    HEAT_CN,
    HEAT_OFF,
    TRBDF2_GAMMA,
    conduction_theta_factored,
    conduction_trbdf2_factored,
    face_conductance,
    trbdf2_error,
    factor_conduction,
    heat_source,
    interior_conductances,
)


class RawOutput(NamedTuple):
    """Raw output arrays of the time loop; slot 0 is the initial state, slot s+1 the end of segment s.

    Attributes
    ----------
    x, T, S : numpy.ndarray, shape (n_out, n_cell)
        Conversion [1], temperature [K], network-weighted formation strain [1].
    E, Ee : numpy.ndarray, shape (n_out, n_cell)
        Section modulus [Pa] and modulus times eigenstrain [Pa].
    irr : numpy.ndarray, shape (n_out, n_cell)
        Cell-mean irradiance, all beams [W m-2].
    pabs : numpy.ndarray, shape (n_out, n_cell)
        Absorbed optical power density [W m-3].
    mech : numpy.ndarray, shape (n_out, 4)
        e0 [1], kappa [m-1], N [N m-1], M about z = 0 [N] under the step's hold.
    budget : numpy.ndarray, shape (n_out, 4)
        Photon flux incident, reflected, absorbed, transmitted [mol m-2 s-1].
    energy : numpy.ndarray, shape (n_out, 3)
        Cumulative heat absorbed, lost bottom, lost top [J m-2].
    steps : numpy.ndarray, shape (n_out, 2)
        Cumulative number of accepted and rejected time steps [1].
    """

    x: np.ndarray
    T: np.ndarray
    S: np.ndarray
    E: np.ndarray
    Ee: np.ndarray
    irr: np.ndarray
    pabs: np.ndarray
    mech: np.ndarray
    budget: np.ndarray
    energy: np.ndarray
    steps: np.ndarray


#: Trailing shape of each output per design: (n_out, n_cell) fields, or (n_out, k).
OUTPUT_WIDTH = {"mech": 4, "budget": 4, "energy": 3, "steps": 2}


def allocate_output(n_out: int, n_cell: int, lead: dict | int | None = None, *, skip=()) -> RawOutput:
    """Zeroed output arrays; ``lead`` adds a leading axis (one int for all, or per-field ints).

    Fields named in ``skip`` get one row only, which :func:`record` overwrites at every output time
    (temperature without heat, network strain without a network): 8 bytes per output and cell each saved.
    """
    arrays = []
    for name in RawOutput._fields:
        shape = (1 if name in skip else n_out, OUTPUT_WIDTH.get(name, n_cell))
        k = lead.get(name) if isinstance(lead, dict) else lead
        arrays.append(np.zeros(shape if k is None else (k,) + shape))
    return RawOutput(*arrays)


def design_slice(params, d):
    """Design ``d`` of a parameter object whose every field has a leading design axis (numba only)."""
    raise NotImplementedError("design_slice is only callable from numba-compiled code")


@overload(design_slice)
def _design_slice_impl(params, d):
    if isinstance(params, types.BaseNamedTuple):
        cls = params.instance_class
        src = "def impl(params, d):\n    return cls(" + ", ".join(f"params.{f}[d]" for f in params.fields) + ")\n"
        ns = {"cls": cls}
        exec(src, ns)
        return ns["impl"]


def output_slice(out, d, scratch, n_design):
    """Design ``d``'s view of stacked outputs; a field with fewer than n_design rows is per-thread scratch (numba only)."""
    raise NotImplementedError("output_slice is only callable from numba-compiled code")


@overload(output_slice)
def _output_slice_impl(out, d, scratch, n_design):
    if isinstance(out, types.BaseNamedTuple):
        cls = out.instance_class
        fields = ", ".join(f"out.{f}[d if out.{f}.shape[0] == n_design else scratch]" for f in out.fields)
        ns = {"cls": cls}
        exec(f"def impl(out, d, scratch, n_design):\n    return cls({fields})\n", ns)
        return ns["impl"]


@njit(cache=True)
def record(slot, x, T, S, E, Ee, mech, dz, mean_flux, absorbed, beam_emol, q_surface, entry, transmitted, out):
    """Store the state, light field and photon budget of one output time."""
    n_cell, n_beam = mean_flux.shape
    total_abs = 0.0
    for i in range(n_cell):
        out.x[slot, i] = x[i]
        out.T[min(slot, out.T.shape[0] - 1), i] = T[i]  # one row only when not kept (see allocate_output)
        out.S[min(slot, out.S.shape[0] - 1), i] = S[i]
        out.E[slot, i] = E[i]
        out.Ee[slot, i] = Ee[i]
        irr = 0.0
        p = 0.0
        for b in range(n_beam):
            irr += mean_flux[i, b] * beam_emol[b]
            p += absorbed[i, b] * beam_emol[b]
            total_abs += absorbed[i, b]
        out.irr[slot, i] = irr
        out.pabs[slot, i] = p / dz[i]
    for k in range(4):
        out.mech[slot, k] = mech[k]
    inc = 0.0
    refl = 0.0
    for b in range(n_beam):
        inc += q_surface[b]
        refl += q_surface[b] * (1.0 - entry[b])
    out.budget[slot, 0] = inc
    out.budget[slot, 1] = refl
    out.budget[slot, 2] = total_abs
    out.budget[slot, 3] = transmitted


@njit(cache=True)
def hyper_solve(z_edges, x, T, S, mat, T_ref, E, Ee, hs, hold, value, r):
    """The section of a stack with hyperelastic layers: :func:`actsim.material.hyper_state`, then
    :func:`actsim.mechanics.section_solve_hyper` started from the linear solution ``r``."""
    hyper_state(x, T, S, mat, T_ref, E, hs)
    return section_solve_hyper(z_edges, E, Ee, mat.strain_law, mat.extensibility, hs, hold, value, r[0], r[1])


@njit(cache=True)
def run_design(grid, light, photo, heat, mat, sched, out):
    """March one design through its protocol.

    Per step: light at the start -> rates and heat source; predicted
    conversion by the exact first-order update; light at the prediction ->
    heat step (Crank–Nicolson or TR-BDF2, source averaged) and rates at the new
    temperature; the exact update again with the averaged rates. Where a
    light-formed network exists, network formed in the step remembers the
    midpoint mechanical strain of the step (total strain less thermal strain;
    predicted, then corrected), so it is stress-free when it forms; cleavage
    removes the same fraction of the remembered strain. Where a material
    relaxes (a Prony series), each step ends with a section solve whose
    modulus and eigen-resultants hold the algorithmic modulus and the history
    stress of the exact exponential update (shift at the step's midpoint
    temperature), and the accepted step updates the Maxwell elements' stresses;
    every segment starts with an instantaneous (glassy) step, so a change of
    hold is taken up at once, and every output time records the instantaneous
    state (modulus E_0, eigenstrain at which the cells would be stress-free if
    loaded now). The heat state is the
    rise above ``heat.T_ref`` (the stages see the absolute temperature), so
    the stored heat is not rounded at 293 K every step. With liquid-crystal
    layers every light pass is the dichroic, polarised one at the order
    Q(x, T) of each cell (:func:`actsim.optics.light_stage`), the rates take
    each species' weighted flux, and the material step adds the order strain;
    the light at a predicted conversion takes the temperature at the start of
    the step. ``out.energy`` holds
    the cumulative heat absorbed and lost through the bottom and top faces
    [J m-2], integrated with the heat scheme's own quadrature.

    Steps: with ``sched.tolerance == 0`` each segment is cut into ``seg_n``
    equal steps. Otherwise the step is error-controlled: the local error of a
    step is estimated from quantities the step computes anyway — predicted
    against corrected conversion and network strain, and TR-BDF2's embedded
    estimate (:func:`actsim.thermal.trbdf2_error`); where a material relaxes, the
    miss of the primary mechanical strain against its linear extrapolation
    (:func:`actsim.material.viscoelastic_error`), scaled like S — as the norm

    .. math:: \\mathrm{err} = \\max_i \\max\\left(|x^c_i - x^p_i|,\\;
       \\frac{|S^c_i - S^p_i|}{0.01}\\right) / (\\mathrm{tol}/2), \\qquad
       \\mathrm{err}_T = \\max_i \\frac{|e_{T,i}|}{1\\,\\mathrm{K}} / (\\mathrm{tol}/2)

    A step with both <= 1 is accepted (the corrected, second-order state is
    kept: local extrapolation); the next step is
    :math:`\\Delta t \\min(5, \\max(0.2, \\min(0.9\\, \\mathrm{err}^{-1/2}, 0.9\\, \\mathrm{err}_T^{-1/3})))`
    (no growth right after a rejection), and every segment ends exactly on its output time or protocol
    boundary (Hairer, Nørsett and Wanner 1993, sec. II.4).

    Parameters
    ----------
    grid : actsim.grid.Grid
    light : actsim.optics.LightParams
    photo : actsim.kinetics.PhotoParams
    heat : actsim.thermal.HeatParams
    mat : actsim.material.MaterialParams
    sched : actsim.schedule.Schedule
    out : RawOutput
        Filled in place.

    Returns
    -------
    int
        The index of the first segment that produced a non-finite value (or
        whose step size collapsed), or -1.
    """
    z_edges = grid.z_edges
    dz = grid.dz
    T_ref = heat.T_ref
    heat_mode = heat.mode
    tol = sched.tolerance
    adaptive = tol > 0.0
    n_cell, n_beam = light.eps_a.shape
    e_in = 0.0
    e_lb = 0.0
    e_lt = 0.0
    n_acc = 0
    n_rej = 0
    has_network = False
    for i in range(n_cell):
        if mat.network_mod[i] > 0.0:
            has_network = True
    has_visco = False
    for i in range(n_cell):
        if mat.visco_n[i] > 0:
            has_visco = True
    has_hyper = False
    for i in range(n_cell):
        if mat.strain_law[i] != 0:
            has_hyper = True
    hs = np.zeros((4, n_cell))  # hyperelastic cells: C_p, e_s, C_n x, e_n (actsim.material.hyper_state)
    x = photo.x0.copy()
    T = heat.T0.copy()
    S = np.zeros(n_cell)
    # viscoelastic state: Maxwell element stresses, primary mechanical strain (0: stress-free start), its rate
    H = np.zeros(mat.visco_mod.shape)
    ev = np.zeros(n_cell)
    ev_n = np.empty(n_cell)
    ev_rate = np.zeros(n_cell)
    Ev = np.zeros(n_cell)  # the Prony terms' part of E, taken at the cell centres
    rise = np.empty(n_cell)  # heat state: rise above T_ref, so the stored heat is not rounded at 293 K
    rise_n = np.empty(n_cell)
    for i in range(n_cell):
        rise[i] = T[i] - T_ref
    xp = np.empty(n_cell)
    x_pred = np.empty(n_cell)
    kf_sum = np.empty(n_cell)
    kb_sum = np.empty(n_cell)
    Tn = np.empty(n_cell)
    Sp = np.empty(n_cell)
    Sn = np.empty(n_cell)
    mf = np.empty((n_cell, n_beam))
    ab = np.empty((n_cell, n_beam))
    # species-weighted flux of the dichroic (polarised) light pass; unused (and not filled) otherwise
    fa = np.zeros((n_cell, n_beam))
    fb = np.zeros((n_cell, n_beam))
    kf0 = np.empty(n_cell)
    kb0 = np.empty(n_cell)
    kf1 = np.empty(n_cell)
    kb1 = np.empty(n_cell)
    q0 = np.empty(n_cell)
    q1 = np.empty(n_cell)
    E = np.empty(n_cell)
    Ee = np.empty(n_cell)
    e_start = np.empty(n_cell)
    e_end = np.empty(n_cell)
    e_next = np.empty(n_cell)
    work = np.empty((6, n_cell))
    est = np.empty(n_cell)
    mech = np.zeros(4)
    cap = np.empty(n_cell)
    fac = np.empty((3, n_cell))
    g_int = np.empty(max(n_cell - 1, 1))
    for i in range(n_cell):
        cap[i] = heat.rho_c[i] * dz[i]
    interior_conductances(dz, heat.k_cond, g_int)
    # one-way photoreaction (no photo or thermal back reaction): the four-stage step is fourth order there
    one_way = True
    for i in range(n_cell):
        if photo.k_ref[i] != 0.0:
            one_way = False
        for b in range(n_beam):
            if photo.phi_b[i, b] != 0.0:
                one_way = False
    four_stage = adaptive and heat_mode == HEAT_OFF and not has_network and not has_visco and one_way

    s0 = sched.seg_step[0]
    q = sched.step_flux[s0]
    material_state(x, T, S, mat, T_ref, E, Ee)
    if has_visco:
        viscoelastic_state(x, T, T, 0.0, H, ev, mat, T_ref, E, Ee, Ev)
    r = section_solve_centred(z_edges, E, Ee, Ev, sched.step_hold[s0], sched.step_value[s0])
    if has_hyper:
        r = hyper_solve(z_edges, x, T, S, mat, T_ref, E, Ee, hs, sched.step_hold[s0], sched.step_value[s0], r)
    mech[0], mech[1], mech[2], mech[3] = r[0], r[1], r[2], r[3]
    tr = light_stage(x, T, dz, light, q, mf, ab, fa, fb)
    record(0, x, T, S, E, Ee, mech, dz, mf, ab, light.beam_emol, q, light.entry, tr, out)
    # mf and ab hold the light at the current x under protocol step `light_of` (-1: not current). The light at
    # the end of a segment, computed for the output record, is the first stage of the next step when the light
    # has not switched (first same as last): the pass is skipped, the numbers are the same.
    light_of = s0

    dt_next = 0.0  # proposal of the error-controlled march (0: none yet)
    for s in range(sched.seg_step.size):
        st = sched.seg_step[s]
        q = sched.step_flux[st]
        hold = sched.step_hold[st]
        value = sched.step_value[st]
        T_amb_b = sched.step_env[st, 0]
        h_b = sched.step_env[st, 1]
        T_amb_t = sched.step_env[st, 2]
        h_t = sched.step_env[st, 3]
        seg_len = sched.times[s + 1] - sched.times[s]
        gb = face_conductance(h_b, dz[0], heat.k_cond[0])
        gt = face_conductance(h_t, dz[n_cell - 1], heat.k_cond[n_cell - 1])
        fac_dt = -1.0  # step the heat matrix is factored for (none yet in this segment)
        if adaptive and (s == 0 or st != sched.seg_step[s - 1]):
            # a new protocol step (light, ambient or hold switched): start from a step the fastest
            # photoreaction allows, sqrt(tol) / max(k_f + k_b), or the previous step if smaller
            if light_of != st:
                light_stage(x, T, dz, light, q, mf, ab, fa, fb)
                light_of = st
            rates(mf, fa, fb, light, photo, T, T_ref, kf0, kb0)
            k_max = 0.0
            for i in range(n_cell):
                if kf0[i] + kb0[i] > k_max:
                    k_max = kf0[i] + kb0[i]
            h0 = seg_len if k_max == 0.0 else min(seg_len, math.sqrt(tol) / k_max)
            if dt_next == 0.0 or h0 < dt_next:
                dt_next = h0
        new_step = s == 0 or st != sched.seg_step[s - 1]
        if has_network or (has_visco and new_step):
            material_state(x, T, S, mat, T_ref, E, Ee)
            if has_visco:
                viscoelastic_state(x, T, T, 0.0, H, ev, mat, T_ref, E, Ee, Ev)
            r = section_solve_centred(z_edges, E, Ee, Ev, hold, value)
            if has_hyper:
                r = hyper_solve(z_edges, x, T, S, mat, T_ref, E, Ee, hs, hold, value, r)
            mechanical_strain(z_edges, r[0], r[1], mat.alpha_th, T, T_ref, e_start)
            if has_visco and new_step:
                # a new protocol step starts with an instantaneous step: a change of hold is taken up at once
                # with the glassy modulus (and the strain rate of the error estimate starts again from 0)
                viscoelastic_strain(x, e_start, mat, ev_n)
                viscoelastic_accept(x, T, T, 0.0, H, ev, ev_n, ev_rate, mat)
        t = 0.0
        n_left = sched.seg_n[s]
        rejected_last = False
        while True:
            last = False
            if adaptive:
                remaining = seg_len - t
                if remaining <= 0.0:
                    break
                dt = dt_next
                dt_unclipped = dt
                if dt * 1.01 >= remaining:
                    dt = remaining
                    last = True
                if dt < MIN_STEP_FRACTION * seg_len or n_acc + n_rej > MAX_STEPS:
                    return s
            else:
                if n_left == 0:
                    break
                dt = sched.seg_dt[s]
                dt_unclipped = dt
            if heat_mode != HEAT_OFF and dt != fac_dt:
                if heat_mode == HEAT_CN:
                    factor_conduction(cap, g_int, gb, gt, 0.5 * dt, fac)
                else:
                    factor_conduction(cap, g_int, gb, gt, 0.5 * TRBDF2_GAMMA * dt, fac)
                fac_dt = dt
            if four_stage:
                # error-controlled, one-way reaction, no heat, no light network: the rates at four stages averaged
                # with RK4's weights in the exact update -- classical RK4 in ln(x_max - x), so fourth order
                if light_of != st:
                    light_stage(x, T, dz, light, q, mf, ab, fa, fb)
                rates(mf, fa, fb, light, photo, T, T_ref, kf0, kb0)
                exact_update(x, kf0, kb0, 0.5 * dt, x_pred)
                light_of = -1
                light_stage(x_pred, T, dz, light, q, mf, ab, fa, fb)
                rates(mf, fa, fb, light, photo, T, T_ref, kf1, kb1)
                for i in range(n_cell):
                    kf_sum[i] = kf0[i] + 2.0 * kf1[i]
                    kb_sum[i] = kb0[i] + 2.0 * kb1[i]
                exact_update(x, kf1, kb1, 0.5 * dt, x_pred)
                light_stage(x_pred, T, dz, light, q, mf, ab, fa, fb)
                rates(mf, fa, fb, light, photo, T, T_ref, kf1, kb1)
                for i in range(n_cell):
                    kf_sum[i] += 2.0 * kf1[i]
                    kb_sum[i] += 2.0 * kb1[i]
                exact_update(x, kf1, kb1, dt, x_pred)
                light_stage(x_pred, T, dz, light, q, mf, ab, fa, fb)
                rates(mf, fa, fb, light, photo, T, T_ref, kf1, kb1)
                for i in range(n_cell):
                    kf_sum[i] = (kf_sum[i] + kf1[i]) / 6.0
                    kb_sum[i] = (kb_sum[i] + kb1[i]) / 6.0
                    kf1[i] = 0.5 * (kf0[i] + kf1[i])
                    kb1[i] = 0.5 * (kb0[i] + kb1[i])
                exact_update(x, kf_sum, kb_sum, dt, xp)
                exact_update(x, kf1, kb1, dt, x_pred)  # the embedded trapezoid-rate step: the error estimate
                for i in range(n_cell):
                    Tn[i] = T[i]
                    rise_n[i] = rise[i]
                lb = 0.0
                lt = 0.0
                d_in = 0.0
                err_T = 0.0
            else:
                # light and rates at the start of the step
                if light_of != st:
                    light_stage(x, T, dz, light, q, mf, ab, fa, fb)
                rates(mf, fa, fb, light, photo, T, T_ref, kf0, kb0)
                light_of = -1
                if heat_mode != HEAT_OFF:
                    heat_source(ab, light.beam_emol, dz, heat.heat_frac, q0)
                exact_update(x, kf0, kb0, dt, x_pred)
                # light at the predicted conversion
                light_stage(x_pred, T, dz, light, q, mf, ab, fa, fb)
                lb = 0.0
                lt = 0.0
                d_in = 0.0
                err_T = 0.0
                if heat_mode != HEAT_OFF:
                    heat_source(ab, light.beam_emol, dz, heat.heat_frac, q1)
                    if heat_mode == HEAT_CN:
                        lb, lt = conduction_theta_factored(rise, cap, dz, g_int, gb, gt, q0, q1, dt, T_amb_b - T_ref,
                                                           T_amb_t - T_ref, 0.5, fac, work[3], rise_n)
                    else:
                        lb, lt = conduction_trbdf2_factored(rise, cap, dz, g_int, gb, gt, q0, q1, dt, T_amb_b - T_ref,
                                                            T_amb_t - T_ref, fac, work, rise_n)
                        if adaptive:
                            err_T = trbdf2_error(rise, work[5], rise_n, cap, dz, g_int, gb, gt, q0, work[4], q1, dt,
                                                 T_amb_b - T_ref, T_amb_t - T_ref, fac, work[3], est)
                    for i in range(n_cell):
                        Tn[i] = rise_n[i] + T_ref
                    for i in range(n_cell):
                        d_in += 0.5 * dt * (q0[i] + q1[i]) * dz[i]
                else:
                    for i in range(n_cell):
                        Tn[i] = T[i]
                rates(mf, fa, fb, light, photo, Tn, T_ref, kf1, kb1)
                for i in range(n_cell):
                    kf1[i] = 0.5 * (kf0[i] + kf1[i])
                    kb1[i] = 0.5 * (kb0[i] + kb1[i])
                exact_update(x, kf1, kb1, dt, xp)
                if has_network:
                    # predictor: network formed at the start-of-step strain
                    network_strain_update(S, x, xp, e_start, mat.network_mod, Sp)
                    material_state(xp, Tn, Sp, mat, T_ref, E, Ee)
                    if has_visco:
                        viscoelastic_state(xp, T, Tn, dt, H, ev, mat, T_ref, E, Ee, Ev)
                    r = section_solve_centred(z_edges, E, Ee, Ev, hold, value)
                    if has_hyper:
                        r = hyper_solve(z_edges, xp, Tn, Sp, mat, T_ref, E, Ee, hs, hold, value, r)
                    mechanical_strain(z_edges, r[0], r[1], mat.alpha_th, Tn, T_ref, e_end)
                    # corrector: midpoint strain
                    for i in range(n_cell):
                        e_end[i] = 0.5 * (e_start[i] + e_end[i])
                    network_strain_update(S, x, xp, e_end, mat.network_mod, Sn)
                    material_state(xp, Tn, Sn, mat, T_ref, E, Ee)
                    if has_visco:
                        viscoelastic_state(xp, T, Tn, dt, H, ev, mat, T_ref, E, Ee, Ev)
                    r = section_solve_centred(z_edges, E, Ee, Ev, hold, value)
                    if has_hyper:
                        r = hyper_solve(z_edges, xp, Tn, Sn, mat, T_ref, E, Ee, hs, hold, value, r)
                    mechanical_strain(z_edges, r[0], r[1], mat.alpha_th, Tn, T_ref, e_next)
                elif has_visco:
                    # the step ends on a section solve with the algorithmic modulus and the history stress
                    material_state(xp, Tn, S, mat, T_ref, E, Ee)
                    viscoelastic_state(xp, T, Tn, dt, H, ev, mat, T_ref, E, Ee, Ev)
                    r = section_solve_centred(z_edges, E, Ee, Ev, hold, value)
                    mechanical_strain(z_edges, r[0], r[1], mat.alpha_th, Tn, T_ref, e_next)
                if has_visco:
                    viscoelastic_strain(xp, e_next, mat, ev_n)
            if adaptive:
                err_T = err_T / TEMPERATURE_SCALE / (LOCAL_TARGET * tol)
                err = 0.0
                for i in range(n_cell):
                    d = abs(xp[i] - x_pred[i])
                    if d > err:
                        err = d
                if has_network:
                    for i in range(n_cell):
                        d = abs(Sn[i] - Sp[i]) / STRAIN_SCALE
                        if d > err:
                            err = d
                if has_visco:
                    d = viscoelastic_error(ev, ev_n, ev_rate, dt) / STRAIN_SCALE
                    if d > err:
                        err = d
                err = err / (LOCAL_TARGET * tol)
                if not (math.isfinite(err) and math.isfinite(err_T)):
                    return s
                # each part of the norm proposes the step its own error order allows; the smallest wins
                factor = STEP_GROW_MAX
                if err > 0.0:
                    factor = min(factor, STEP_SAFETY * err ** (-(STEP_EXPONENT_FOUR if four_stage else STEP_EXPONENT)))
                if err_T > 0.0:
                    factor = min(factor, STEP_SAFETY * err_T ** (-STEP_EXPONENT_HEAT))
                if err > 1.0 or err_T > 1.0:
                    n_rej += 1
                    dt_next = dt * max(STEP_SHRINK_MIN, factor)
                    rejected_last = True
                    continue
                grow = max(STEP_SHRINK_MIN, factor)
                if rejected_last and grow > 1.0:
                    grow = 1.0
                dt_next = dt * grow
                if last and dt_unclipped > dt_next:
                    dt_next = dt_unclipped  # landing on the segment end shortened the step; keep the proposal
                rejected_last = False
            # accept the step
            n_acc += 1
            if has_visco:
                viscoelastic_accept(xp, T, Tn, dt, H, ev, ev_n, ev_rate, mat)
            e_lb += lb
            e_lt += lt
            e_in += d_in
            for i in range(n_cell):
                x[i] = xp[i]
                T[i] = Tn[i]
                rise[i] = rise_n[i]
            if has_network:
                for i in range(n_cell):
                    S[i] = Sn[i]
                    e_start[i] = e_next[i]
            elif has_visco:
                for i in range(n_cell):
                    e_start[i] = e_next[i]
            if adaptive:
                t = seg_len if last else t + dt
            else:
                n_left -= 1
        material_state(x, T, S, mat, T_ref, E, Ee)
        if has_visco:
            viscoelastic_state(x, T, T, 0.0, H, ev, mat, T_ref, E, Ee, Ev)
        r = section_solve_centred(z_edges, E, Ee, Ev, hold, value)
        if has_hyper:
            r = hyper_solve(z_edges, x, T, S, mat, T_ref, E, Ee, hs, hold, value, r)
        mech[0], mech[1], mech[2], mech[3] = r[0], r[1], r[2], r[3]
        tr = light_stage(x, T, dz, light, q, mf, ab, fa, fb)
        light_of = st
        record(s + 1, x, T, S, E, Ee, mech, dz, mf, ab, light.beam_emol, q, light.entry, tr, out)
        out.energy[s + 1, 0] = e_in
        out.energy[s + 1, 1] = e_lb
        out.energy[s + 1, 2] = e_lt
        out.steps[s + 1, 0] = n_acc
        out.steps[s + 1, 1] = n_rej
        for i in range(n_cell):
            if not (math.isfinite(x[i]) and math.isfinite(T[i]) and math.isfinite(S[i])):
                return s
        for k in range(4):
            if not math.isfinite(mech[k]):
                return s
    return -1
