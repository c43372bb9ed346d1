"""The hot loop: optics and kinetics time stepping in one numba call.

Same arithmetic as the readable stage functions in :mod:`actsim.optics` and
:mod:`actsim.kinetics` (``tests/test_kernels.py`` compares them to 1e-12).
All arrays are SI; see :func:`actsim.solver.build_problem` for their layout.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

LN10 = math.log(10.0)


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
def rates(mean_flux, eps_a, eps_b, phi_f, phi_b, k_th, k_f, k_b):
    """First-order rate constants of each cell from the mean flux of each beam."""
    n_cell, n_beam = eps_a.shape
    for i in range(n_cell):
        sf = 0.0
        sb = 0.0
        for b in range(n_beam):
            sf += phi_f[i, b] * eps_a[i, b] * mean_flux[i, b]
            sb += phi_b[i, b] * eps_b[i, b] * mean_flux[i, b]
        k_f[i] = LN10 * sf
        k_b[i] = LN10 * sb + k_th[i]


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
def record(slot, x, dz, mean_flux, absorbed, beam_emol, q_surface, entry, transmitted, out_x, out_irr, out_pabs, out_budget):
    n_cell, n_beam = mean_flux.shape
    total_abs = 0.0
    for i in range(n_cell):
        out_x[slot, i] = x[i]
        irr = 0.0
        p = 0.0
        for b in range(n_beam):
            irr += mean_flux[i, b] * beam_emol[b]
            p += absorbed[i, b] * beam_emol[b]
            total_abs += absorbed[i, b]
        out_irr[slot, i] = irr
        out_pabs[slot, i] = p / dz[i]
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
def run_optics_kinetics(dz, c0, eps_a, eps_b, alpha_bg, phi_f, phi_b, k_th, from_top, entry, beam_emol,
                        step_flux, seg_step, seg_dt, seg_n, x0, out_x, out_irr, out_pabs, out_budget):
    """March the coupled Beer–Lambert / first-order kinetics problem.

    Predictor–corrector per step: rates from the light at the start, a
    predicted conversion by the exact update, rates from the light at the
    prediction, the exact update again with the averaged rates. Output slot 0
    holds the initial state; slot s+1 the state at the end of segment s.

    Returns the number of the first segment with a non-finite value, or -1.
    """
    n_cell, n_beam = eps_a.shape
    x = x0.copy()
    xp = np.empty(n_cell)
    mf = np.empty((n_cell, n_beam))
    ab = np.empty((n_cell, n_beam))
    kf0 = np.empty(n_cell)
    kb0 = np.empty(n_cell)
    kf1 = np.empty(n_cell)
    kb1 = np.empty(n_cell)
    q = step_flux[seg_step[0]]
    tr = light_pass(x, dz, c0, eps_a, eps_b, alpha_bg, from_top, entry, q, mf, ab)
    record(0, x, dz, mf, ab, beam_emol, q, entry, tr, out_x, out_irr, out_pabs, out_budget)
    for s in range(seg_step.size):
        q = step_flux[seg_step[s]]
        dt = seg_dt[s]
        for _ in range(seg_n[s]):
            light_pass(x, dz, c0, eps_a, eps_b, alpha_bg, from_top, entry, q, mf, ab)
            rates(mf, eps_a, eps_b, phi_f, phi_b, k_th, kf0, kb0)
            exact_update(x, kf0, kb0, dt, xp)
            light_pass(xp, dz, c0, eps_a, eps_b, alpha_bg, from_top, entry, q, mf, ab)
            rates(mf, eps_a, eps_b, phi_f, phi_b, k_th, kf1, kb1)
            for i in range(n_cell):
                kf1[i] = 0.5 * (kf0[i] + kf1[i])
                kb1[i] = 0.5 * (kb0[i] + kb1[i])
            exact_update(x, kf1, kb1, dt, xp)
            for i in range(n_cell):
                x[i] = xp[i]
        tr = light_pass(x, dz, c0, eps_a, eps_b, alpha_bg, from_top, entry, q, mf, ab)
        record(s + 1, x, dz, mf, ab, beam_emol, q, entry, tr, out_x, out_irr, out_pabs, out_budget)
        for i in range(n_cell):
            if not math.isfinite(x[i]):
                return s
    return -1
