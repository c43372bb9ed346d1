"""The readable time loop: the same scheme as the numba kernel, written with the stages' numpy functions.

Slow; for tests (``tests/test_kernels.py`` compares it with
:func:`actsim._kernels.run_design`) and for reading. Light by
:func:`actsim.optics.light_field`, rates by
:func:`actsim.kinetics.photoreaction_rates` and
:func:`actsim.kinetics.arrhenius_shift`, the exact update by
:func:`actsim.kinetics.exact_first_order_update`, heat by
:func:`actsim.thermal_reference.theta_step_reference` (Crank–Nicolson) or
:func:`actsim.thermal_reference.trbdf2_step_reference` (both readable numpy/scipy), the material state by
:func:`actsim.material.primary_modulus` and
:func:`actsim.material.two_network_state` (with
:func:`actsim.material.viscoelastic_section_state` and :func:`actsim.material.prony_step`
where a material relaxes), the section by
:func:`actsim.mechanics.held_strip_response`.
"""

from __future__ import annotations

import numpy as np

from . import _kernels, kinetics, material, mechanics, optics, thermal, thermal_reference
from .errors import ActsimSimulationError
from .grid import cell_centres


def run_reference(p):
    """Run one design through its protocol with the readable stage functions.

    Parameters
    ----------
    p : actsim.solver.Problem
        The design.

    Returns
    -------
    actsim._kernels.RawOutput
    """
    grid, light, photo, heat, mat, sched = p.kernel_inputs()
    dz = grid.dz
    o = p.allocate_output()

    def light_at(x, q):
        _, _, alpha = optics.absorption_coefficients(
            conversion=x, concentration=light.c0, epsilon10_reactant=light.eps_a, epsilon10_product=light.eps_b,
            background=light.alpha_bg,
        )
        return optics.light_field(alpha=alpha, dz=dz, surface_flux=q, entry_transmission=light.entry,
                                  from_top=light.from_top)

    def rate(mf, T):
        k_th = kinetics.arrhenius_shift(rate_at_reference=photo.k_ref, activation_energy=photo.e_act, temperature=T,
                                        reference_temperature=heat.T_ref)
        return kinetics.photoreaction_rates(
            mean_flux=mf, epsilon10_reactant=light.eps_a, epsilon10_product=light.eps_b, forward_yield=photo.phi_f,
            backward_yield=photo.phi_b, thermal_rate=k_th,
        )

    def state(x, T, S):
        return material.two_network_state(
            conversion=x, temperature=T, network_strain=S,
            primary_modulus=material.primary_modulus(params=mat, conversion=x, temperature=T),
            network_modulus=mat.network_mod, photo_strain=mat.photo_strain, thermal_expansion=mat.alpha_th,
            reference_temperature=heat.T_ref,
        )

    has_visco = bool(np.any(mat.visco_n > 0))
    relaxing = mat.visco_n > 0
    # viscoelastic state: Maxwell element stresses, primary mechanical strain, its rate over the last step
    visco = {"H": np.zeros(mat.visco_mod.shape), "ev": np.zeros_like(photo.x0), "rate": np.zeros_like(photo.x0)}

    def mech(x, T, S, step, T_old=None, dt=0.0):
        """The section under protocol step ``step``; with a relaxing material, at the end of a step of dt from T_old."""
        E, Ee = state(x, T, S)
        dE = None
        if has_visco:
            dE, dEe = material.viscoelastic_section_state(
                params=mat, conversion=x, temperature_old=T if T_old is None else T_old, temperature_new=T, dt=dt,
                history=visco["H"], strain_old=visco["ev"], reference_temperature=heat.T_ref)
            E, Ee = E + dE, Ee + dEe
            # the relaxed part of the Prony modulus acts on the cell-centre strain only (the variation of the
            # strain across a cell meets the instantaneous modulus)
            f = 1.0 + (mat.mod_ratio - 1.0) * x
            dE = np.where(relaxing, dE - f * mat.visco_mod.sum(axis=1), 0.0)
        r = mechanics.held_strip_response(z_edges=grid.z_edges, modulus=E, eigenstrain=Ee / E,
                                          hold=mechanics.HOLD_NAMES[int(sched.step_hold[step])],
                                          value=sched.step_value[step], centred_modulus=dE)
        return E, Ee, r

    zc = cell_centres(grid.z_edges)

    def heat_power(ab):
        return heat.heat_frac * (ab @ light.beam_emol) / dz

    def store(slot, x, T, S, step):
        q = sched.step_flux[step]
        mf, ab, tr = light_at(x, q)
        E, Ee, r = mech(x, T, S, step)
        for name, val in (("x", x), ("T", T), ("S", S), ("E", E), ("Ee", Ee)):
            arr = getattr(o, name)
            arr[min(slot, arr.shape[0] - 1)] = val
        o.irr[slot] = mf @ light.beam_emol
        o.pabs[slot] = (ab @ light.beam_emol) / dz
        o.mech[slot] = r
        o.budget[slot] = [q.sum(), (q * (1 - light.entry)).sum(), ab.sum(), tr.sum()]

    def mechanical_strain(r, T):
        return r[0] - r[1] * zc - mat.alpha_th * (T - heat.T_ref)  # network formed now is stress-free

    def primary_strain(e_mech, x):
        return np.where(relaxing, e_mech - mat.photo_strain * x, 0.0)

    def visco_after(x, T_old, T_new, dt, ev_new):
        """The viscoelastic state after a step of dt (0: an instantaneous jump) ending at ev_new."""
        f = 1.0 + (mat.mod_ratio - 1.0) * x
        dxi = material.reduced_time_step(params=mat, dt=dt, temperature=0.5 * (T_old + T_new))
        H = material.prony_step(history=visco["H"], strain_old=visco["ev"], strain_new=ev_new,
                                moduli=f[:, None] * mat.visco_mod, relaxation_times=mat.visco_tau, reduced_dt=dxi)
        rate = (ev_new - visco["ev"]) / dt if dt > 0 else np.zeros_like(ev_new)
        return {"H": H, "ev": ev_new, "rate": rate}

    has_network = bool(np.any(mat.network_mod > 0))
    on = mat.network_mod > 0
    energy = np.zeros(3)  # heat absorbed, lost bottom, lost top [J m-2]
    x, T, S = photo.x0.copy(), heat.T0.copy(), np.zeros_like(photo.x0)
    rise = T - heat.T_ref
    store(0, x, T, S, sched.seg_step[0])
    tol = sched.tolerance

    one_way = not (np.any(photo.k_ref != 0) or np.any(photo.phi_b != 0))  # no photo or thermal back reaction
    four_stage = bool(tol) and heat.mode == thermal.HEAT_OFF and not has_network and not has_visco and one_way

    def take_four_stage_step(x, T, rise, S, e_start, st, dt):
        """One-way reaction, no heat, no light network: the rates at four stages, RK4's weights, the exact update."""
        q = sched.step_flux[st]

        def update(rates, h):
            return kinetics.exact_first_order_update(conversion=x, k_forward=rates[0], k_backward=rates[1], dt=h,
                                                     reactive_fraction=photo.x_max)

        kA = rate(light_at(x, q)[0], T)
        kB = rate(light_at(update(kA, 0.5 * dt), q)[0], T)
        kC = rate(light_at(update(kB, 0.5 * dt), q)[0], T)
        kD = rate(light_at(update(kC, dt), q)[0], T)
        xn = update([(a + 2 * b + 2 * c + d) / 6 for a, b, c, d in zip(kA, kB, kC, kD)], dt)
        x_low = update([0.5 * (a + d) for a, d in zip(kA, kD)], dt)  # embedded trapezoid-rate step
        err = float(np.max(np.abs(xn - x_low))) / (_kernels.LOCAL_TARGET * tol)
        return xn, T, rise, S, e_start, np.zeros(3), visco, (err, 0.0)

    def take_step(x, T, rise, S, e_start, st, dt):
        """One step from (x, T, rise, S); returns the new state, its heat ledger and the error norm / tol."""
        q = sched.step_flux[st]
        tb, hb, tt, ht = sched.step_env[st]
        ledger = np.zeros(3)
        err_T = 0.0
        mf, ab, _ = light_at(x, q)
        kf0, kb0 = rate(mf, T)
        xp = kinetics.exact_first_order_update(conversion=x, k_forward=kf0, k_backward=kb0, dt=dt,
                                               reactive_fraction=photo.x_max)
        mf1, ab1, _ = light_at(xp, q)
        if heat.mode != thermal.HEAT_OFF:
            # the heat state is the rise above T_ref (as in the kernel), so the stored heat is not rounded at 293 K
            kw = dict(dz=dz, conductivity=heat.k_cond, volumetric_heat_capacity=heat.rho_c,
                      source_old=heat_power(ab), source_new=heat_power(ab1), dt=dt, h_bottom=hb,
                      ambient_bottom=tb - heat.T_ref, h_top=ht, ambient_top=tt - heat.T_ref)
        if heat.mode == thermal.HEAT_CN:
            rise_n = thermal_reference.theta_step_reference(temperature=rise, theta=0.5, **kw)
            # Crank–Nicolson's own quadrature of the face losses is the trapezoid rule
            l0 = thermal.face_heat_loss(rise, dz, heat.k_cond, hb, tb - heat.T_ref, ht, tt - heat.T_ref)
            l1 = thermal.face_heat_loss(rise_n, dz, heat.k_cond, hb, tb - heat.T_ref, ht, tt - heat.T_ref)
            ledger[1:] = 0.5 * dt * (np.array(l0) + np.array(l1))
        elif heat.mode == thermal.HEAT_TRBDF2:
            rise_n, losses, e_T = thermal_reference.trbdf2_step_reference(temperature=rise, return_losses=True,
                                                                          return_error=True, **kw)
            ledger[1:] = losses
            err_T = float(np.max(np.abs(e_T)))
        if heat.mode != thermal.HEAT_OFF:
            Tn = rise_n + heat.T_ref
            ledger[0] = 0.5 * dt * np.sum((heat_power(ab) + heat_power(ab1)) * dz)
        else:
            Tn, rise_n = T, rise
        kf1, kb1 = rate(mf1, Tn)
        xn = kinetics.exact_first_order_update(conversion=x, k_forward=0.5 * (kf0 + kf1),
                                               k_backward=0.5 * (kb0 + kb1), dt=dt, reactive_fraction=photo.x_max)
        Sn, e_next, err_S, visco_n = S, e_start, 0.0, visco
        if has_network:
            Sp = np.where(on, material.update_network_strain(network_strain=S, conversion_old=x, conversion_new=xn,
                                                             strain=e_start), S)
            _, _, r = mech(xn, Tn, Sp, st, T, dt)
            e_end = mechanical_strain(r, Tn)
            Sn = np.where(on, material.update_network_strain(network_strain=S, conversion_old=x, conversion_new=xn,
                                                             strain=0.5 * (e_start + e_end)), S)
            _, _, r = mech(xn, Tn, Sn, st, T, dt)
            e_next = mechanical_strain(r, Tn)
            err_S = float(np.max(np.abs(Sn - Sp))) / _kernels.STRAIN_SCALE
        elif has_visco:
            e_next = mechanical_strain(mech(xn, Tn, S, st, T, dt)[2], Tn)
        if has_visco:
            ev_new = primary_strain(e_next, xn)
            # the miss of the new strain against its linear extrapolation: the viscoelastic local error
            miss = float(np.max(np.abs(ev_new - visco["ev"] - visco["rate"] * dt))) / _kernels.STRAIN_SCALE
            err_S = max(err_S, miss)
            visco_n = visco_after(xn, T, Tn, dt, ev_new)
        target = _kernels.LOCAL_TARGET * tol
        err = max(float(np.max(np.abs(xn - xp))), err_S) / target if tol else 0.0
        err_T = err_T / _kernels.TEMPERATURE_SCALE / target if tol else 0.0
        return xn, Tn, rise_n, Sn, e_next, ledger, visco_n, (err, err_T)

    dt_next = 0.0
    e_start = None
    n_acc = n_rej = 0
    for s in range(sched.seg_step.size):
        st = sched.seg_step[s]
        seg_len = sched.times[s + 1] - sched.times[s]
        new_step = s == 0 or st != sched.seg_step[s - 1]
        e_start = mechanical_strain(mech(x, T, S, st)[2], T) if has_network or (has_visco and new_step) else e_start
        if has_visco and new_step:  # the instantaneous (glassy) step at the start of a protocol step
            visco = visco_after(x, T, T, 0.0, primary_strain(e_start, x))
        if tol and (s == 0 or st != sched.seg_step[s - 1]):
            kf, kb = rate(light_at(x, sched.step_flux[st])[0], T)
            k_max = float(np.max(kf + kb))
            h0 = seg_len if k_max == 0.0 else min(seg_len, np.sqrt(tol) / k_max)
            dt_next = h0 if dt_next == 0.0 or h0 < dt_next else dt_next
        if not tol:
            for _ in range(sched.seg_n[s]):
                x, T, rise, S, e_start, ledger, visco, _ = take_step(x, T, rise, S, e_start, st, sched.seg_dt[s])
                energy += ledger
                n_acc += 1
        else:
            t, rejected_last = 0.0, False
            while t < seg_len:
                dt = dt_unclipped = dt_next
                last = dt * 1.01 >= seg_len - t
                if last:
                    dt = seg_len - t
                if dt < _kernels.MIN_STEP_FRACTION * seg_len:
                    raise ActsimSimulationError(f"step size collapsed at t = {sched.times[s] + t:g} s")
                trial = (take_four_stage_step if four_stage else take_step)(x, T, rise, S, e_start, st, dt)
                err, err_T = trial[-1]
                factor = min(_kernels.STEP_GROW_MAX,
                             _kernels.STEP_SAFETY * err ** -(_kernels.STEP_EXPONENT_FOUR if four_stage
                                                             else _kernels.STEP_EXPONENT) if err > 0 else np.inf,
                             _kernels.STEP_SAFETY * err_T ** -_kernels.STEP_EXPONENT_HEAT if err_T > 0 else np.inf)
                if err > 1.0 or err_T > 1.0:
                    n_rej += 1
                    dt_next = dt * max(_kernels.STEP_SHRINK_MIN, factor)
                    rejected_last = True
                    continue
                grow = max(_kernels.STEP_SHRINK_MIN, factor)
                dt_next = dt * (min(grow, 1.0) if rejected_last else grow)
                if last and dt_unclipped > dt_next:
                    dt_next = dt_unclipped
                rejected_last = False
                x, T, rise, S, e_start, ledger, visco, _ = trial
                energy += ledger
                n_acc += 1
                t = seg_len if last else t + dt
        store(s + 1, x, T, S, st)
        o.energy[s + 1] = energy
        o.steps[s + 1] = (n_acc, n_rej)
    return o
