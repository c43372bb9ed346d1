"""The hot loop: one design marched through its protocol in one numba call.

The loop only orders the stages; every piece of arithmetic is a stage's own
kernel step: :func:`actsim.optics.light_pass`, :func:`actsim.kinetics.rates`
and :func:`actsim.kinetics.exact_update`, :func:`actsim.thermal.heat_source`
and the conduction steps, :func:`actsim.material.material_state` and
:func:`actsim.material.network_strain_update`, :func:`actsim.mechanics.section_solve`.
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
from .material import material_state, mechanical_strain, network_strain_update
from .mechanics import section_solve
from .optics import light_pass
from .thermal import (
    HEAT_CN,
    HEAT_OFF,
    HEAT_TRBDF2,
    TRBDF2_GAMMA,
    conduction_theta_factored,
    conduction_trbdf2_factored,
    face_conductance,
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


#: Trailing shape of each output per design: (n_out, n_cell) fields, or (n_out, k).
OUTPUT_WIDTH = {"mech": 4, "budget": 4, "energy": 3}


def allocate_output(n_out: int, n_cell: int, lead: dict | int | None = None) -> RawOutput:
    """Zeroed output arrays; ``lead`` adds a leading axis (one int for all, or per-field ints)."""
    arrays = []
    for name in RawOutput._fields:
        shape = (n_out, OUTPUT_WIDTH.get(name, n_cell))
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
        out.T[slot, i] = T[i]
        out.S[slot, i] = S[i]
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
def run_design(grid, light, photo, heat, mat, sched, out):
    """March one design through its protocol.

    Per step: light at the start -> rates and heat source; predicted
    conversion by the exact first-order update; light at the prediction ->
    heat step (Crank–Nicolson or TR-BDF2, source averaged) and rates at the new
    temperature; the exact update again with the averaged rates. Where a
    light-formed network exists, network formed in the step remembers the
    midpoint mechanical strain of the step (total strain less thermal strain;
    predicted, then corrected), so it is stress-free when it forms; cleavage
    removes the same fraction of the remembered strain. The heat state is the
    rise above ``heat.T_ref`` (the stages see the absolute temperature), so
    the stored heat is not rounded at 293 K every step. ``out.energy`` holds
    the cumulative heat absorbed and lost through the bottom and top faces
    [J m-2], integrated with the heat scheme's own quadrature.

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
        The index of the first segment that produced a non-finite value, or -1.
    """
    z_edges = grid.z_edges
    dz = grid.dz
    T_ref = heat.T_ref
    heat_mode = heat.mode
    n_cell, n_beam = light.eps_a.shape
    e_in = 0.0
    e_lb = 0.0
    e_lt = 0.0
    has_network = False
    for i in range(n_cell):
        if mat.network_mod[i] > 0.0:
            has_network = True
    x = photo.x0.copy()
    T = heat.T0.copy()
    rise = np.empty(n_cell)  # heat state: rise above T_ref, so the stored heat is not rounded at 293 K
    rise_n = np.empty(n_cell)
    for i in range(n_cell):
        rise[i] = T[i] - T_ref
    S = np.zeros(n_cell)
    xp = np.empty(n_cell)
    Tn = np.empty(n_cell)
    Sp = np.empty(n_cell)
    mf = np.empty((n_cell, n_beam))
    ab = np.empty((n_cell, n_beam))
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
    work = np.empty((6, n_cell))
    mech = np.zeros(4)
    cap = np.empty(n_cell)
    fac = np.empty((3, n_cell))
    g_int = np.empty(max(n_cell - 1, 1))
    for i in range(n_cell):
        cap[i] = heat.rho_c[i] * dz[i]
    interior_conductances(dz, heat.k_cond, g_int)

    s0 = sched.seg_step[0]
    q = sched.step_flux[s0]
    material_state(x, T, S, mat, T_ref, E, Ee)
    r = section_solve(z_edges, E, Ee, sched.step_hold[s0], sched.step_value[s0])
    mech[0], mech[1], mech[2], mech[3] = r[0], r[1], r[2], r[3]
    tr = light_pass(x, dz, light, q, mf, ab)
    record(0, x, T, S, E, Ee, mech, dz, mf, ab, light.beam_emol, q, light.entry, tr, out)

    for s in range(sched.seg_step.size):
        st = sched.seg_step[s]
        q = sched.step_flux[st]
        hold = sched.step_hold[st]
        value = sched.step_value[st]
        T_amb_b = sched.step_env[st, 0]
        h_b = sched.step_env[st, 1]
        T_amb_t = sched.step_env[st, 2]
        h_t = sched.step_env[st, 3]
        dt = sched.seg_dt[s]
        gb = face_conductance(h_b, dz[0], heat.k_cond[0])
        gt = face_conductance(h_t, dz[n_cell - 1], heat.k_cond[n_cell - 1])
        if heat_mode == HEAT_CN:
            factor_conduction(cap, g_int, gb, gt, 0.5 * dt, fac)
        elif heat_mode == HEAT_TRBDF2:
            factor_conduction(cap, g_int, gb, gt, 0.5 * TRBDF2_GAMMA * dt, fac)
        if has_network:
            material_state(x, T, S, mat, T_ref, E, Ee)
            r = section_solve(z_edges, E, Ee, hold, value)
            mechanical_strain(z_edges, r[0], r[1], mat.alpha_th, T, T_ref, e_start)
        for _ in range(sched.seg_n[s]):
            # light and rates at the start of the step
            light_pass(x, dz, light, q, mf, ab)
            rates(mf, light, photo, T, T_ref, kf0, kb0)
            if heat_mode != HEAT_OFF:
                heat_source(ab, light.beam_emol, dz, heat.heat_frac, q0)
            exact_update(x, kf0, kb0, dt, xp)
            # light at the predicted conversion
            light_pass(xp, dz, light, q, mf, ab)
            if heat_mode != HEAT_OFF:
                heat_source(ab, light.beam_emol, dz, heat.heat_frac, q1)
                if heat_mode == HEAT_CN:
                    lb, lt = conduction_theta_factored(rise, cap, dz, g_int, gb, gt, q0, q1, dt, T_amb_b - T_ref,
                                                       T_amb_t - T_ref, 0.5, fac, work[3], rise_n)
                else:
                    lb, lt = conduction_trbdf2_factored(rise, cap, dz, g_int, gb, gt, q0, q1, dt, T_amb_b - T_ref,
                                                        T_amb_t - T_ref, fac, work, rise_n)
                for i in range(n_cell):
                    Tn[i] = rise_n[i] + T_ref
                e_lb += lb
                e_lt += lt
                for i in range(n_cell):
                    e_in += 0.5 * dt * (q0[i] + q1[i]) * dz[i]
            else:
                for i in range(n_cell):
                    Tn[i] = T[i]
            rates(mf, light, photo, Tn, T_ref, kf1, kb1)
            for i in range(n_cell):
                kf1[i] = 0.5 * (kf0[i] + kf1[i])
                kb1[i] = 0.5 * (kb0[i] + kb1[i])
            exact_update(x, kf1, kb1, dt, xp)
            if has_network:
                # predictor: network formed at the start-of-step strain
                network_strain_update(S, x, xp, e_start, mat.network_mod, Sp)
                material_state(xp, Tn, Sp, mat, T_ref, E, Ee)
                r = section_solve(z_edges, E, Ee, hold, value)
                mechanical_strain(z_edges, r[0], r[1], mat.alpha_th, Tn, T_ref, e_end)
                # corrector: midpoint strain
                for i in range(n_cell):
                    e_end[i] = 0.5 * (e_start[i] + e_end[i])
                network_strain_update(S, x, xp, e_end, mat.network_mod, S)
                material_state(xp, Tn, S, mat, T_ref, E, Ee)
                r = section_solve(z_edges, E, Ee, hold, value)
                mechanical_strain(z_edges, r[0], r[1], mat.alpha_th, Tn, T_ref, e_start)
            for i in range(n_cell):
                x[i] = xp[i]
                T[i] = Tn[i]
                rise[i] = rise_n[i]
        material_state(x, T, S, mat, T_ref, E, Ee)
        r = section_solve(z_edges, E, Ee, hold, value)
        mech[0], mech[1], mech[2], mech[3] = r[0], r[1], r[2], r[3]
        tr = light_pass(x, dz, light, q, mf, ab)
        record(s + 1, x, T, S, E, Ee, mech, dz, mf, ab, light.beam_emol, q, light.entry, tr, out)
        out.energy[s + 1, 0] = e_in
        out.energy[s + 1, 1] = e_lb
        out.energy[s + 1, 2] = e_lt
        for i in range(n_cell):
            if not (math.isfinite(x[i]) and math.isfinite(T[i]) and math.isfinite(S[i])):
                return s
        for k in range(4):
            if not math.isfinite(mech[k]):
                return s
    return -1
