"""The hot loop: optics, kinetics, heat and the light-formed network in one numba call.

Same arithmetic as the readable stage functions in :mod:`actsim.optics`,
:mod:`actsim.kinetics`, :mod:`actsim.thermal`, :mod:`actsim.network` and
:mod:`actsim.mechanics` (``tests/test_kernels.py`` compares the two paths to
1e-12). All arrays are SI; :func:`actsim.solver.build_problem` documents their
layout.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from .thermal import (
    TRBDF2_GAMMA,
    conduction_theta_factored,
    conduction_trbdf2_factored,
    face_conductance,
    factor_conduction,
    interior_conductances,
    glass_transition_modulus_nb,
    tabulated_modulus_nb,
)

LN10 = math.log(10.0)
GAS_CONSTANT = 8.314462618  # J/(mol K), CODATA 2018 (scipy.constants.R)

HOLD_FREE = 0
HOLD_STRETCH = 1
HOLD_BEND = 2
HOLD_FLAT = 3

HEAT_OFF = 0
HEAT_CN = 1
HEAT_TRBDF2 = 2


@njit(cache=True)
def light_pass(x, dz, c0, eps_a, eps_b, alpha_bg, from_top, entry, q_surface, mean_flux, absorbed):
    """Fill mean_flux and absorbed (n_cell, n_beam); return transmitted photon flux summed over beams."""
    n_cell, n_beam = eps_a.shape
    transmitted = 0.0
    for b in range(n_beam):
        q = q_surface[b] * entry[b]
        for j in range(n_cell):
            i = n_cell - 1 - j if from_top[b] else j
            alpha = LN10 * c0[i] * (eps_a[i, b] * (1.0 - x[i]) + eps_b[i, b] * x[i]) + alpha_bg[i, b]
            tau = alpha * dz[i]
            if tau > 1e-12:
                a = -q * math.expm1(-tau)
                mean_flux[i, b] = a / tau
            else:
                a = q * tau
                mean_flux[i, b] = q
            absorbed[i, b] = a
            q -= a
        transmitted += q
    return transmitted


@njit(cache=True)
def heat_source(absorbed, beam_emol, dz, heat_frac, out):
    """Absorbed optical power turned into heat, per unit volume [W m-3]."""
    n_cell, n_beam = absorbed.shape
    for i in range(n_cell):
        p = 0.0
        for b in range(n_beam):
            p += absorbed[i, b] * beam_emol[b]
        out[i] = heat_frac[i] * p / dz[i]


@njit(cache=True)
def rates(mean_flux, eps_a, eps_b, phi_f, phi_b, k_ref, e_act, T, T_ref, k_f, k_b):
    """First-order rate constants of each cell; thermal back rate by Arrhenius about T_ref."""
    n_cell, n_beam = eps_a.shape
    for i in range(n_cell):
        sf = 0.0
        sb = 0.0
        for b in range(n_beam):
            sf += phi_f[i, b] * eps_a[i, b] * mean_flux[i, b]
            sb += phi_b[i, b] * eps_b[i, b] * mean_flux[i, b]
        k_th = k_ref[i]
        if e_act[i] != 0.0 and k_th != 0.0:
            k_th = k_th * math.exp(-e_act[i] / GAS_CONSTANT * (1.0 / T[i] - 1.0 / T_ref))
        k_f[i] = LN10 * sf
        k_b[i] = LN10 * sb + k_th


@njit(cache=True)
def exact_update(x, k_f, k_b, dt, out):
    """x(t+dt) = x_ss + (x - x_ss) exp(-(k_f + k_b) dt) per cell."""
    for i in range(x.size):
        k = k_f[i] + k_b[i]
        if k > 0.0:
            xss = k_f[i] / k
            out[i] = xss + (x[i] - xss) * math.exp(-k * dt)
        else:
            out[i] = x[i]


@njit(cache=True)
def material_state(x, T, S, mod_kind, mod_base, mod_ratio, sec_fac, gl, tab_idx, tab_T, tab_logE,
                   network_mod, photo_strain, alpha_th, T_ref, E_out, Ee_out):
    """Effective modulus E and E*e* of each cell (two-network model).

    E = E_p + E_n x and E e* = E_p (e_ph + e_th) + E_n (x e_th + S), with
    E_p = base(T) (1 + (ratio - 1) x) times the section factor.
    """
    for i in range(x.size):
        kind = mod_kind[i]
        if kind == 0:
            base = mod_base[i]
        elif kind == 1:
            base = glass_transition_modulus_nb(T[i], gl[i, 0], gl[i, 1], gl[i, 2], gl[i, 3])
        else:
            j = tab_idx[i]
            base = tabulated_modulus_nb(T[i], tab_T[j], tab_logE[j])
        e_p = sec_fac[i] * base * (1.0 + (mod_ratio[i] - 1.0) * x[i])
        e_th = alpha_th[i] * (T[i] - T_ref)
        e_n = network_mod[i]
        E_out[i] = e_p + e_n * x[i]
        Ee_out[i] = e_p * (photo_strain[i] * x[i] + e_th) + e_n * (x[i] * e_th + S[i])


@njit(cache=True)
def section_solve(z_edges, E, Ee, hold, value, h):
    """Strain at z = 0 and curvature under the step's mechanical condition.

    Returns (e0, kappa, N, M): N and M are the section's force and moment
    about z = 0 per unit width (zero for a free strip).
    """
    A = 0.0
    B = 0.0
    D = 0.0
    Ns = 0.0
    Ms = 0.0
    for i in range(E.size):
        z0 = z_edges[i]
        z1 = z_edges[i + 1]
        w1 = z1 - z0
        w2 = 0.5 * (z1 * z1 - z0 * z0)
        w3 = (z1 * z1 * z1 - z0 * z0 * z0) / 3.0
        A += E[i] * w1
        B += E[i] * w2
        D += E[i] * w3
        Ns += Ee[i] * w1
        Ms += Ee[i] * w2
    if hold == HOLD_STRETCH:
        kappa = 0.0
        e0 = value
    elif hold == HOLD_BEND:
        kappa = value
        e0 = (Ns + B * kappa) / A
    elif hold == HOLD_FLAT:
        kappa = 0.0
        e0 = Ns / A
    else:
        det = A * D - B * B
        e0 = (D * Ns - B * Ms) / det
        kappa = (B * Ns - A * Ms) / det
    N = A * e0 - B * kappa - Ns
    M = B * e0 - D * kappa - Ms
    return e0, kappa, N, M


@njit(cache=True)
def mechanical_strain(z_edges, e0, kappa, alpha_th, T, T_ref, out):
    """Strain at each cell centre less the thermal strain: what a network formed now remembers."""
    for i in range(out.size):
        out[i] = e0 - kappa * 0.5 * (z_edges[i] + z_edges[i + 1]) - alpha_th[i] * (T[i] - T_ref)


@njit(cache=True)
def record(slot, x, T, S, E, Ee, mech, dz, mean_flux, absorbed, beam_emol, q_surface, entry, transmitted,
           out_x, out_T, out_S, out_E, out_Ee, out_mech, out_irr, out_pabs, out_budget):
    n_cell, n_beam = mean_flux.shape
    total_abs = 0.0
    for i in range(n_cell):
        out_x[slot, i] = x[i]
        out_T[slot, i] = T[i]
        out_S[slot, i] = S[i]
        out_E[slot, i] = E[i]
        out_Ee[slot, i] = Ee[i]
        irr = 0.0
        p = 0.0
        for b in range(n_beam):
            irr += mean_flux[i, b] * beam_emol[b]
            p += absorbed[i, b] * beam_emol[b]
            total_abs += absorbed[i, b]
        out_irr[slot, i] = irr
        out_pabs[slot, i] = p / dz[i]
    for k in range(4):
        out_mech[slot, k] = mech[k]
    inc = 0.0
    refl = 0.0
    for b in range(n_beam):
        inc += q_surface[b]
        refl += q_surface[b] * (1.0 - entry[b])
    out_budget[slot, 0] = inc
    out_budget[slot, 1] = refl
    out_budget[slot, 2] = total_abs
    out_budget[slot, 3] = transmitted


@njit(cache=True)
def run_design(z_edges, dz, c0, eps_a, eps_b, alpha_bg, phi_f, phi_b, k_ref, e_act, from_top, entry, beam_emol,
               heat_mode, k_cond, rho_c, heat_frac, T_ref,
               mod_kind, mod_base, mod_ratio, sec_fac, gl, tab_idx, tab_T, tab_logE, network_mod, photo_strain, alpha_th,
               step_flux, step_hold, step_value, step_env, seg_step, seg_dt, seg_n, x0, T0,
               out_x, out_T, out_S, out_E, out_Ee, out_mech, out_irr, out_pabs, out_budget, out_energy):
    """March one design through its protocol.

    Per step: light at the start -> rates and heat source; predicted
    conversion by the exact first-order update; light at the prediction ->
    heat step (Crank–Nicolson or TR-BDF2, source averaged) and rates at the new
    temperature; the exact update again with the averaged rates. Where a
    light-formed network exists, network formed in the step remembers the
    midpoint mechanical strain of the step (total strain less thermal strain;
    predicted, then corrected), so it is stress-free when it forms; cleavage
    removes the same fraction of the remembered strain. Output slot 0 holds the
    initial state; slot s+1 the state at the end of segment s. ``out_energy``
    holds the cumulative heat absorbed and lost through the bottom and top
    faces [J m-2], integrated with the heat scheme's own quadrature.

    Returns the index of the first segment that produced a non-finite value, or -1.
    """
    n_cell, n_beam = eps_a.shape
    e_in = 0.0
    e_lb = 0.0
    e_lt = 0.0
    h = z_edges[n_cell]
    has_network = False
    for i in range(n_cell):
        if network_mod[i] > 0.0:
            has_network = True
    x = x0.copy()
    T = T0.copy()
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
        cap[i] = rho_c[i] * dz[i]
    interior_conductances(dz, k_cond, g_int)

    s0 = seg_step[0]
    q = step_flux[s0]
    material_state(x, T, S, mod_kind, mod_base, mod_ratio, sec_fac, gl, tab_idx, tab_T, tab_logE,
                   network_mod, photo_strain, alpha_th, T_ref, E, Ee)
    r = section_solve(z_edges, E, Ee, step_hold[s0], step_value[s0], h)
    mech[0], mech[1], mech[2], mech[3] = r[0], r[1], r[2], r[3]
    tr = light_pass(x, dz, c0, eps_a, eps_b, alpha_bg, from_top, entry, q, mf, ab)
    record(0, x, T, S, E, Ee, mech, dz, mf, ab, beam_emol, q, entry, tr,
           out_x, out_T, out_S, out_E, out_Ee, out_mech, out_irr, out_pabs, out_budget)

    for s in range(seg_step.size):
        st = seg_step[s]
        q = step_flux[st]
        hold = step_hold[st]
        value = step_value[st]
        T_amb_b = step_env[st, 0]
        h_b = step_env[st, 1]
        T_amb_t = step_env[st, 2]
        h_t = step_env[st, 3]
        dt = seg_dt[s]
        gb = face_conductance(h_b, dz[0], k_cond[0])
        gt = face_conductance(h_t, dz[n_cell - 1], k_cond[n_cell - 1])
        if heat_mode == HEAT_CN:
            factor_conduction(cap, g_int, gb, gt, 0.5 * dt, fac)
        elif heat_mode == HEAT_TRBDF2:
            factor_conduction(cap, g_int, gb, gt, 0.5 * TRBDF2_GAMMA * dt, fac)
        if has_network:
            material_state(x, T, S, mod_kind, mod_base, mod_ratio, sec_fac, gl, tab_idx, tab_T, tab_logE,
                           network_mod, photo_strain, alpha_th, T_ref, E, Ee)
            r = section_solve(z_edges, E, Ee, hold, value, h)
            mechanical_strain(z_edges, r[0], r[1], alpha_th, T, T_ref, e_start)
        for _ in range(seg_n[s]):
            # light and rates at the start of the step
            light_pass(x, dz, c0, eps_a, eps_b, alpha_bg, from_top, entry, q, mf, ab)
            rates(mf, eps_a, eps_b, phi_f, phi_b, k_ref, e_act, T, T_ref, kf0, kb0)
            if heat_mode != HEAT_OFF:
                heat_source(ab, beam_emol, dz, heat_frac, q0)
            exact_update(x, kf0, kb0, dt, xp)
            # light at the predicted conversion
            light_pass(xp, dz, c0, eps_a, eps_b, alpha_bg, from_top, entry, q, mf, ab)
            if heat_mode != HEAT_OFF:
                heat_source(ab, beam_emol, dz, heat_frac, q1)
                if heat_mode == HEAT_CN:
                    lb, lt = conduction_theta_factored(T, cap, dz, g_int, gb, gt, q0, q1, dt, T_amb_b, T_amb_t, 0.5,
                                                       fac, work[3], Tn)
                else:
                    lb, lt = conduction_trbdf2_factored(T, cap, dz, g_int, gb, gt, q0, q1, dt, T_amb_b, T_amb_t,
                                                        fac, work, Tn)
                e_lb += lb
                e_lt += lt
                for i in range(n_cell):
                    e_in += 0.5 * dt * (q0[i] + q1[i]) * dz[i]
            else:
                for i in range(n_cell):
                    Tn[i] = T[i]
            rates(mf, eps_a, eps_b, phi_f, phi_b, k_ref, e_act, Tn, T_ref, kf1, kb1)
            for i in range(n_cell):
                kf1[i] = 0.5 * (kf0[i] + kf1[i])
                kb1[i] = 0.5 * (kb0[i] + kb1[i])
            exact_update(x, kf1, kb1, dt, xp)
            if has_network:
                # predictor: network formed at the start-of-step strain
                for i in range(n_cell):
                    Sp[i] = S[i]
                    if network_mod[i] > 0.0:
                        dn = xp[i] - x[i]
                        if dn >= 0.0:
                            Sp[i] = S[i] + e_start[i] * dn
                        elif x[i] > 0.0:
                            Sp[i] = S[i] * (xp[i] / x[i])
                material_state(xp, Tn, Sp, mod_kind, mod_base, mod_ratio, sec_fac, gl, tab_idx, tab_T, tab_logE,
                               network_mod, photo_strain, alpha_th, T_ref, E, Ee)
                r = section_solve(z_edges, E, Ee, hold, value, h)
                mechanical_strain(z_edges, r[0], r[1], alpha_th, Tn, T_ref, e_end)
                # corrector: midpoint strain
                for i in range(n_cell):
                    if network_mod[i] > 0.0:
                        dn = xp[i] - x[i]
                        if dn >= 0.0:
                            S[i] = S[i] + 0.5 * (e_start[i] + e_end[i]) * dn
                        else:
                            S[i] = Sp[i]
                material_state(xp, Tn, S, mod_kind, mod_base, mod_ratio, sec_fac, gl, tab_idx, tab_T, tab_logE,
                               network_mod, photo_strain, alpha_th, T_ref, E, Ee)
                r = section_solve(z_edges, E, Ee, hold, value, h)
                mechanical_strain(z_edges, r[0], r[1], alpha_th, Tn, T_ref, e_start)
            for i in range(n_cell):
                x[i] = xp[i]
                T[i] = Tn[i]
        material_state(x, T, S, mod_kind, mod_base, mod_ratio, sec_fac, gl, tab_idx, tab_T, tab_logE,
                       network_mod, photo_strain, alpha_th, T_ref, E, Ee)
        r = section_solve(z_edges, E, Ee, hold, value, h)
        mech[0], mech[1], mech[2], mech[3] = r[0], r[1], r[2], r[3]
        tr = light_pass(x, dz, c0, eps_a, eps_b, alpha_bg, from_top, entry, q, mf, ab)
        record(s + 1, x, T, S, E, Ee, mech, dz, mf, ab, beam_emol, q, entry, tr,
               out_x, out_T, out_S, out_E, out_Ee, out_mech, out_irr, out_pabs, out_budget)
        out_energy[s + 1, 0] = e_in
        out_energy[s + 1, 1] = e_lb
        out_energy[s + 1, 2] = e_lt
        for i in range(n_cell):
            if not (math.isfinite(x[i]) and math.isfinite(T[i]) and math.isfinite(S[i])):
                return s
        for k in range(4):
            if not math.isfinite(mech[k]):
                return s
    return -1
