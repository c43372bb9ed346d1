"""Thin orchestrator: scenario -> arrays -> time loop -> labelled result.

:func:`simulate` builds the SI arrays of a scenario (:func:`build_problem`),
runs the time loop (the numba kernel, or the readable reference path built
from the stage functions), applies the layered-beam mechanics to every output
time, and returns an :class:`xarray.Dataset` whose every variable carries
``units`` and ``long_name``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import xarray as xr

from . import kinetics, mechanics, network, optics
from .errors import ActsimInputError, ActsimSimulationError
from .scenario import Scenario
from .spectra import molar_photon_energy, photon_flux


@dataclass
class Problem:
    """All arrays of one design, SI. Cells bottom to top; beams = (source, band) pairs."""

    z_edges: np.ndarray
    dz: np.ndarray
    layer_index: np.ndarray
    c0: np.ndarray
    eps_a: np.ndarray  # (n_cell, n_beam) m2/mol, decadic
    eps_b: np.ndarray
    alpha_bg: np.ndarray  # (n_cell, n_beam) 1/m
    phi_f: np.ndarray
    phi_b: np.ndarray
    k_th: np.ndarray  # (n_cell,) thermal back rate at the reference temperature, 1/s
    e_act: np.ndarray  # (n_cell,) activation energy of the back reaction, J/mol
    heat_mode: int  # 0 off, 1 Crank–Nicolson, 2 TR-BDF2
    k_cond: np.ndarray  # W/(m K)
    rho_c: np.ndarray  # J/(m3 K)
    heat_frac: np.ndarray
    T_ref: float
    mod_kind: np.ndarray  # 0 constant, 1 glass transition, 2 table
    mod_base: np.ndarray  # reactant-form modulus (kind 0), Pa
    mod_ratio: np.ndarray  # E_B/E_A
    sec_fac: np.ndarray  # 1 or 1/(1-nu^2)
    gl: np.ndarray  # (n_cell, 4) glassy, rubbery, Tg, width
    tab_idx: np.ndarray
    tab_T: np.ndarray  # (n_table, m) padded with +inf... see build_problem
    tab_logE: np.ndarray
    network_mod: np.ndarray  # section modulus of the full light network, Pa
    photo_strain: np.ndarray
    alpha_th: np.ndarray  # 1/K
    x0: np.ndarray
    T0: np.ndarray
    step_hold: np.ndarray  # (n_step,) int codes of actsim._kernels
    step_value: np.ndarray
    step_env: np.ndarray  # (n_step, 4) T_amb_bottom, h_bottom, T_amb_top, h_top
    beam_source: np.ndarray
    beam_wavelength: np.ndarray
    beam_from_top: np.ndarray
    beam_entry: np.ndarray  # 1 - R
    beam_emol: np.ndarray  # J/mol
    step_flux: np.ndarray  # (n_step, n_beam) incident photon flux, mol m-2 s-1
    step_irradiance: np.ndarray  # (n_step, n_source) W/m2
    seg_step: np.ndarray
    seg_dt: np.ndarray
    seg_n: np.ndarray
    times: np.ndarray  # output times (n_out,)


def _schedule(scenario: Scenario):
    """Split the protocol into segments that end on every output time and step boundary."""
    total = scenario.duration
    durations = [s.duration for s in scenario.protocol]
    # protocol boundaries are always kept (however short a step); output marks that fall on a
    # boundary, to round-off, are dropped in its favour
    tol = 1e-9 * min(min(durations), scenario.output_interval)
    boundaries = np.cumsum([0.0] + durations)
    boundaries[-1] = total
    n_out = int(math.floor(total / scenario.output_interval + 1e-9))
    outs = np.arange(n_out + 1) * scenario.output_interval
    outs = outs[outs < total - tol]
    j = np.clip(np.searchsorted(boundaries, outs), 1, boundaries.size - 1)
    near = np.minimum(np.abs(outs - boundaries[j - 1]), np.abs(outs - boundaries[j])) <= tol
    marks = np.sort(np.concatenate([boundaries, outs[~near]]))
    seg_step, seg_dt, seg_n = [], [], []
    for a, b in zip(marks[:-1], marks[1:]):
        mid = 0.5 * (a + b)
        step = int(np.searchsorted(boundaries, mid) - 1)
        n = max(1, int(math.ceil((b - a) / scenario.time_step - 1e-9)))
        seg_step.append(step)
        seg_dt.append((b - a) / n)
        seg_n.append(n)
    return np.array(seg_step, np.int64), np.array(seg_dt), np.array(seg_n, np.int64), marks


def build_problem(scenario: Scenario) -> Problem:
    """Turn a scenario into the SI arrays the time loop needs.

    Also checks that no cell's optical depth exceeds
    ``optics.max_cell_optical_depth`` at any conversion (the absorption
    coefficient is linear in conversion, so checking x = 0 and x = 1 bounds it).
    """
    layers = scenario.layers
    dz_list, idx = [], []
    for li, layer in enumerate(layers):
        dz_list.append(np.full(layer.cells, layer.thickness / layer.cells))
        idx.append(np.full(layer.cells, li))
    dz = np.concatenate(dz_list)
    layer_index = np.concatenate(idx)
    z_edges = np.concatenate([[0.0], np.cumsum(dz)])
    n_cell = dz.size

    beam_source, beam_wl, beam_frac = [], [], []
    for si, src in enumerate(scenario.sources):
        for wl, fr in zip(src.band_wavelength, src.band_fraction):
            beam_source.append(si)
            beam_wl.append(wl)
            beam_frac.append(fr)
    beam_source = np.array(beam_source, np.int64)
    beam_wl = np.array(beam_wl, float)
    beam_frac = np.array(beam_frac, float)
    n_beam = beam_wl.size
    from_top = np.array([scenario.sources[s].face == "top" for s in beam_source], dtype=np.bool_)

    entry = np.ones(n_beam)
    if scenario.optics.front_reflection and n_beam:
        n0 = scenario.optics.ambient_refractive_index
        r_top = optics.fresnel_reflectance(n_outside=n0, n_inside=layers[-1].material.refractive_index)
        r_bot = optics.fresnel_reflectance(n_outside=n0, n_inside=layers[0].material.refractive_index)
        entry = np.where(from_top, 1.0 - r_top, 1.0 - r_bot)

    c0 = np.zeros(n_cell)
    eps_a = np.zeros((n_cell, n_beam))
    eps_b = np.zeros((n_cell, n_beam))
    alpha_bg = np.zeros((n_cell, n_beam))
    phi_f = np.zeros((n_cell, n_beam))
    phi_b = np.zeros((n_cell, n_beam))
    k_th = np.zeros(n_cell)
    e_act = np.zeros(n_cell)
    strain = np.zeros(n_cell)
    x0 = np.zeros(n_cell)
    k_cond = np.zeros(n_cell)
    rho_c = np.zeros(n_cell)
    heat_frac = np.zeros(n_cell)
    alpha_th = np.zeros(n_cell)
    mod_kind = np.zeros(n_cell, np.int64)
    mod_base = np.zeros(n_cell)
    mod_ratio = np.ones(n_cell)
    sec_fac = np.ones(n_cell)
    gl = np.ones((n_cell, 4))
    tab_idx = np.zeros(n_cell, np.int64)
    tables = []
    network_mod = np.zeros(n_cell)
    heat_on = scenario.heat.enabled
    max_tau = scenario.optics.max_cell_optical_depth
    for li, layer in enumerate(layers):
        m = layer.material
        sel = layer_index == li
        if n_beam:
            alpha_bg[sel] = m.background_absorption(beam_wl)
        if m.is_active:
            c0[sel] = m.chromophore_concentration
            if n_beam:
                eps_a[sel] = m.reactant_absorptivity(beam_wl)
                eps_b[sel] = m.product_absorptivity(beam_wl)
                phi_f[sel] = m.forward_quantum_yield(beam_wl)
                phi_b[sel] = m.backward_quantum_yield(beam_wl)
            for name, phi in (("forward_quantum_yield", phi_f[sel]), ("backward_quantum_yield", phi_b[sel])):
                if phi.size and phi.max() > 1.0 + 1e-12:
                    b = int(np.argmax(phi.max(axis=0)))
                    raise ActsimInputError(
                        f"materials.{m.name}.{name}: {phi.max():.4g} at {beam_wl[b] * 1e9:.4g} nm (its bands add up above 1); "
                        "allowed range 0 to 1"
                    )
            k_th[sel] = m.thermal_back_rate
            e_act[sel] = m.back_reaction_activation_energy if heat_on else 0.0
            strain[sel] = m.photo_strain
            x0[sel] = layer.initial_conversion
        sec_fac[sel] = network.section_modulus(modulus=1.0, poisson_ratio=m.poisson_ratio, section=scenario.strip.section)
        mod_ratio[sel] = m.product_modulus_ratio
        law = m.temperature_modulus
        if law is None:
            mod_base[sel] = m.modulus
        elif law[0] == "glass":
            mod_kind[sel] = 1
            gl[sel] = law[1:5]
        else:
            mod_kind[sel] = 2
            tab_idx[sel] = len(tables)
            tables.append((law[1], law[2]))
        network_mod[sel] = sec_fac[sel] * m.network_modulus
        k_cond[sel] = m.conductivity
        rho_c[sel] = m.density * m.specific_heat
        heat_frac[sel] = m.heat_fraction
        # thermal strain is isotropic: under plane strain across the width (plate) it acts as (1 + nu) alpha dT
        # along the strip with the plane-strain modulus (Timoshenko and Woinowsky-Krieger 1959, sec. 14)
        plate_factor = (1.0 + m.poisson_ratio) if scenario.strip.section == "plate" else 1.0
        alpha_th[sel] = plate_factor * m.thermal_expansion if heat_on else 0.0
        if n_beam:
            dzl = layer.thickness / layer.cells
            alpha_hi = optics.LN10 * c0[sel][0] * np.maximum(eps_a[sel][0], eps_b[sel][0]) + alpha_bg[sel][0]
            tau = alpha_hi * dzl
            if not np.all(np.isfinite(tau)):
                raise ActsimInputError(f"layers[{li}]: absorption coefficient is not finite (check absorptivity and concentration)")
            worst = int(np.argmax(tau))
            if tau[worst] > max_tau:
                need = int(math.ceil(alpha_hi[worst] * layer.thickness / max_tau))
                src = scenario.sources[beam_source[worst]].name
                raise ActsimInputError(
                    f"layers[{li}].cells: {layer.cells} cells give an optical depth of {tau[worst]:.3g} per cell at "
                    f"{beam_wl[worst] * 1e9:.4g} nm (source '{src}'), above optics.max_cell_optical_depth = {max_tau:g}; "
                    f"use cells >= {need}"
                )

    # DMA-style tables, padded to one length by repeating the last point (the lookup clamps at the ends)
    m_len = max([len(t[0]) for t in tables], default=1)
    tab_T = np.zeros((max(len(tables), 1), m_len))
    tab_logE = np.zeros((max(len(tables), 1), m_len))
    for j, (tt, ee) in enumerate(tables):
        pad = m_len - len(tt)
        tab_T[j] = np.concatenate([tt, tt[-1] + np.arange(1, pad + 1)])
        tab_logE[j] = np.log(np.concatenate([ee, np.full(pad, ee[-1])]))

    from ._kernels import HEAT_CN, HEAT_OFF, HEAT_TRBDF2, HOLD_BEND, HOLD_FLAT, HOLD_FREE, HOLD_STRETCH

    hold_codes = {"free": HOLD_FREE, "release": HOLD_FREE, "stretch": HOLD_STRETCH, "bend": HOLD_BEND, "flat": HOLD_FLAT}
    step_hold = np.array([hold_codes[st.hold] for st in scenario.protocol], np.int64)
    step_value = np.array([st.hold_value for st in scenario.protocol], float)
    step_env = np.array([[st.ambient_bottom, st.h_bottom, st.ambient_top, st.h_top] for st in scenario.protocol], float)
    heat_mode = HEAT_OFF if not heat_on else (HEAT_CN if scenario.heat.scheme == "crank-nicolson" else HEAT_TRBDF2)
    T_ref = scenario.heat.reference_temperature if heat_on else scenario.heat.ambient_temperature
    T0 = np.full(n_cell, scenario.protocol[0].ambient_top if heat_on else T_ref)

    seg_step, seg_dt, seg_n, times = _schedule(scenario)
    if heat_mode == HEAT_CN:
        # Crank–Nicolson rings (decays slowly, with alternating sign) when a step is many cell diffusion times
        fourier = float(seg_dt.max() * np.max(k_cond / (rho_c * dz**2)))
        if fourier > 50.0:
            dt_max = 50.0 / float(np.max(k_cond / (rho_c * dz**2)))
            raise ActsimInputError(
                f"time.step: {seg_dt.max():g} s is {fourier:.3g} cell diffusion times, too long for heat.scheme = "
                f"'crank-nicolson' (allowed <= 50, i.e. step <= {dt_max:.3g} s); use heat.scheme = 'tr-bdf2' (L-stable)"
            )
    step_irr = np.array([s.irradiance for s in scenario.protocol], float).reshape(len(scenario.protocol), len(scenario.sources))
    step_flux = np.zeros((len(scenario.protocol), n_beam))
    for b in range(n_beam):
        step_flux[:, b] = photon_flux(irradiance=step_irr[:, beam_source[b]] * beam_frac[b], wavelength=beam_wl[b])
    return Problem(
        z_edges=z_edges, dz=dz, layer_index=layer_index, c0=c0, eps_a=eps_a, eps_b=eps_b, alpha_bg=alpha_bg,
        phi_f=phi_f, phi_b=phi_b, k_th=k_th, e_act=e_act, heat_mode=heat_mode, k_cond=k_cond, rho_c=rho_c,
        heat_frac=heat_frac, T_ref=T_ref, mod_kind=mod_kind, mod_base=mod_base, mod_ratio=mod_ratio, sec_fac=sec_fac,
        gl=gl, tab_idx=tab_idx, tab_T=tab_T, tab_logE=tab_logE, network_mod=network_mod, photo_strain=strain,
        alpha_th=alpha_th, x0=x0, T0=T0, step_hold=step_hold, step_value=step_value, step_env=step_env,
        beam_source=beam_source, beam_wavelength=beam_wl, beam_from_top=from_top, beam_entry=entry,
        beam_emol=molar_photon_energy(beam_wl) if n_beam else np.zeros(0), step_flux=step_flux,
        step_irradiance=step_irr, seg_step=seg_step, seg_dt=seg_dt, seg_n=seg_n, times=times,
    )


FIELDS = ("x", "T", "S", "E", "Ee", "irr", "pabs")


def _allocate(p: Problem):
    n_out, n_cell = p.times.size, p.dz.size
    out = {name: np.zeros((n_out, n_cell)) for name in FIELDS}
    out["mech"] = np.zeros((n_out, 4))
    out["budget"] = np.zeros((n_out, 4))
    out["energy"] = np.zeros((n_out, 3))
    return out


def run_kernel(p: Problem) -> dict:
    """Run the numba time loop; returns the raw output arrays (see :data:`FIELDS`)."""
    from ._kernels import run_design

    o = _allocate(p)
    bad = run_design(
        p.z_edges, p.dz, p.c0, p.eps_a, p.eps_b, p.alpha_bg, p.phi_f, p.phi_b, p.k_th, p.e_act, p.beam_from_top,
        p.beam_entry, p.beam_emol, p.heat_mode, p.k_cond, p.rho_c, p.heat_frac, p.T_ref,
        p.mod_kind, p.mod_base, p.mod_ratio, p.sec_fac, p.gl, p.tab_idx, p.tab_T, p.tab_logE, p.network_mod,
        p.photo_strain, p.alpha_th, p.step_flux, p.step_hold, p.step_value, p.step_env, p.seg_step, p.seg_dt,
        p.seg_n, p.x0, p.T0,
        o["x"], o["T"], o["S"], o["E"], o["Ee"], o["mech"], o["irr"], o["pabs"], o["budget"], o["energy"],
    )
    if bad >= 0:
        raise ActsimSimulationError(
            f"non-finite state at t = {p.times[bad + 1]:g} s (protocol[{p.seg_step[bad]}]); nothing was written. "
            "Check for a runaway temperature or an extreme load"
        )
    return o


_HOLD_NAMES = {0: "free", 1: "stretch", 2: "bend", 3: "flat"}


def _primary_modulus(p: Problem, x, T):
    """E_p of every cell from the readable material laws (network.conversion_modulus, thermal laws)."""
    from . import thermal

    base = p.mod_base.copy()
    for i in np.nonzero(p.mod_kind == 1)[0]:
        base[i] = thermal.glass_transition_modulus(
            temperature=T[i], glassy_modulus=p.gl[i, 0], rubbery_modulus=p.gl[i, 1],
            glass_transition_temperature=p.gl[i, 2], transition_width=p.gl[i, 3],
        )
    for i in np.nonzero(p.mod_kind == 2)[0]:
        j = p.tab_idx[i]
        base[i] = thermal.tabulated_modulus(temperature=T[i], table_T=p.tab_T[j], table_E=np.exp(p.tab_logE[j]))
    return p.sec_fac * network.conversion_modulus(conversion=x, reactant_modulus=base, product_modulus=base * p.mod_ratio)


def run_reference(p: Problem) -> dict:
    """The same time loop written with the readable stage functions (slow; for tests).

    Heat uses :func:`actsim.thermal.theta_step_reference` for Crank–Nicolson;
    for TR-BDF2 it calls the tested numba step (there is no separate readable
    TR-BDF2).
    """
    from . import thermal

    o = _allocate(p)
    R = 8.314462618

    def light(x, q):
        _, _, alpha = optics.absorption_coefficients(
            conversion=x, concentration=p.c0, epsilon10_reactant=p.eps_a, epsilon10_product=p.eps_b, background=p.alpha_bg
        )
        return optics.light_field(alpha=alpha, dz=p.dz, surface_flux=q, entry_transmission=p.beam_entry, from_top=p.beam_from_top)

    def rate(mf, T):
        k_th = np.where((p.e_act != 0) & (p.k_th != 0), p.k_th * np.exp(-p.e_act / R * (1 / T - 1 / p.T_ref)), p.k_th)
        return kinetics.photoreaction_rates(
            mean_flux=mf, epsilon10_reactant=p.eps_a, epsilon10_product=p.eps_b, forward_yield=p.phi_f,
            backward_yield=p.phi_b, thermal_rate=k_th,
        )

    def state(x, T, S):
        return network.two_network_state(
            conversion=x, temperature=T, network_strain=S, primary_modulus=_primary_modulus(p, x, T),
            network_modulus=p.network_mod, photo_strain=p.photo_strain, thermal_expansion=p.alpha_th,
            reference_temperature=p.T_ref,
        )

    def mech(x, T, S, step):
        E, Ee = state(x, T, S)
        r = mechanics.held_strip_response(z_edges=p.z_edges, modulus=E, eigenstrain=Ee / E,
                                          hold=_HOLD_NAMES[int(p.step_hold[step])], value=p.step_value[step])
        return E, Ee, r

    zc = 0.5 * (p.z_edges[1:] + p.z_edges[:-1])

    def heat_power(ab):
        return p.heat_frac * (ab @ p.beam_emol) / p.dz

    def store(slot, x, T, S, step):
        q = p.step_flux[step]
        mf, ab, tr = light(x, q)
        E, Ee, r = mech(x, T, S, step)
        for name, val in (("x", x), ("T", T), ("S", S), ("E", E), ("Ee", Ee)):
            o[name][slot] = val
        o["irr"][slot] = mf @ p.beam_emol
        o["pabs"][slot] = (ab @ p.beam_emol) / p.dz
        o["mech"][slot] = r
        o["budget"][slot] = [q.sum(), (q * (1 - p.beam_entry)).sum(), ab.sum(), tr.sum()]

    has_network = bool(np.any(p.network_mod > 0))
    energy = np.zeros(3)  # heat absorbed, lost bottom, lost top [J m-2]
    x, T, S = p.x0.copy(), p.T0.copy(), np.zeros_like(p.x0)
    store(0, x, T, S, p.seg_step[0])
    work = thermal.make_work(p.dz.size)
    for s in range(p.seg_step.size):
        st = p.seg_step[s]
        q = p.step_flux[st]
        tb, hb, tt, ht = p.step_env[st]
        dt = p.seg_dt[s]
        if has_network:
            _, _, r = mech(x, T, S, st)
            e_start = r[0] - r[1] * zc - p.alpha_th * (T - p.T_ref)  # mechanical strain: stress-free network
        for _ in range(p.seg_n[s]):
            mf, ab, _ = light(x, q)
            kf0, kb0 = rate(mf, T)
            xp = kinetics.exact_first_order_update(conversion=x, k_forward=kf0, k_backward=kb0, dt=dt)
            mf1, ab1, _ = light(xp, q)
            if p.heat_mode == 1:
                Tn = thermal.theta_step_reference(
                    temperature=T, dz=p.dz, conductivity=p.k_cond, volumetric_heat_capacity=p.rho_c,
                    source_old=heat_power(ab), source_new=heat_power(ab1), dt=dt, h_bottom=hb, ambient_bottom=tb,
                    h_top=ht, ambient_top=tt, theta=0.5,
                )
                # Crank–Nicolson's own quadrature of the face losses is the trapezoid rule
                l0 = thermal.face_heat_loss(T, p.dz, p.k_cond, hb, tb, ht, tt)
                l1 = thermal.face_heat_loss(Tn, p.dz, p.k_cond, hb, tb, ht, tt)
                energy[1:] += 0.5 * dt * (np.array(l0) + np.array(l1))
            elif p.heat_mode == 2:
                Tn = np.empty_like(T)
                energy[1:] += thermal.trbdf2_step(T, p.dz, p.k_cond, p.rho_c, heat_power(ab), heat_power(ab1), dt, hb, tb, ht, tt, work, Tn)
            else:
                Tn = T
            if p.heat_mode:
                energy[0] += 0.5 * dt * np.sum((heat_power(ab) + heat_power(ab1)) * p.dz)
            kf1, kb1 = rate(mf1, Tn)
            xn = kinetics.exact_first_order_update(conversion=x, k_forward=0.5 * (kf0 + kf1), k_backward=0.5 * (kb0 + kb1), dt=dt)
            if has_network:
                on = p.network_mod > 0
                Sp = np.where(on, network.update_network_strain(network_strain=S, conversion_old=x, conversion_new=xn, strain=e_start), S)
                _, _, r = mech(xn, Tn, Sp, st)
                e_end = r[0] - r[1] * zc - p.alpha_th * (Tn - p.T_ref)
                S = np.where(on, network.update_network_strain(network_strain=S, conversion_old=x, conversion_new=xn,
                                                               strain=0.5 * (e_start + e_end)), S)
                _, _, r = mech(xn, Tn, S, st)
                e_start = r[0] - r[1] * zc - p.alpha_th * (Tn - p.T_ref)
            x, T = xn, Tn
        store(s + 1, x, T, S, st)
        o["energy"][s + 1] = energy
    return o


def _var(dims, data, units, long_name, **extra):
    return xr.Variable(dims, data, attrs={"units": units, "long_name": long_name, **extra})


def simulate(scenario: Scenario, *, engine: str = "kernel") -> xr.Dataset:
    """Simulate a scenario over its whole protocol.

    Parameters
    ----------
    scenario : Scenario
        From :func:`actsim.load_scenario`.
    engine : {"kernel", "reference"}
        The numba kernel (fast) or the readable stage functions (slow, for checking).

    Returns
    -------
    xarray.Dataset
        Coordinates ``time`` [s] and ``z`` [m, cell centres]; (time, z) fields
        ``irradiance``, ``conversion``, ``eigenstrain``, ``modulus``, ``stress``,
        ``absorbed_power`` (and ``temperature``, ``network_density``,
        ``network_strain`` where modelled); (time,) strip response
        ``curvature``, ``bend_angle``, ``tip_deflection``, ``tip_position_x``,
        ``axial_strain``, ``blocked_moment``, ``blocked_force``, holding force
        and moment, photon budget and optical dose. Attributes hold the
        scenario text and the actsim version.
    """
    from . import __version__

    p = build_problem(scenario)
    if engine == "kernel":
        o = run_kernel(p)
    elif engine == "reference":
        o = run_reference(p)
    else:
        raise ActsimInputError(f"engine: '{engine}' is not one of 'kernel', 'reference'")
    ds = assemble_dataset(scenario, p, o)
    ds.attrs.update(
        title=scenario.title,
        scenario=scenario.text,
        scenario_path=scenario.path,
        actsim_version=__version__,
        sign_convention="curvature > 0 bends the strip toward +z (top face concave); z = 0 is the bottom face",
        Conventions="CF-1.8",
        thickness=scenario.thickness,
        free_length=scenario.strip.free_length,
        width=scenario.strip.width,
        heat_modelled=int(scenario.heat.enabled),
    )
    return ds


def assemble_dataset(scenario: Scenario, p: Problem, o: dict) -> xr.Dataset:
    """Mechanics on every output time, and the labelled result."""
    from .metrics import conversion_front_depth

    strip = scenario.strip
    x, E, Ee = o["x"], o["E"], o["Ee"]
    e_star = Ee / E
    e0, kappa, n_hold, m_hold = o["mech"].T
    _, kappa_free, d_eff = mechanics.free_strip_response(z_edges=p.z_edges, modulus=E, eigenstrain=e_star)
    z_c = 0.5 * (p.z_edges[:-1] + p.z_edges[1:])
    stress = mechanics.stress_profile(z_centres=z_c, modulus=E, eigenstrain=e_star, strain_bottom=e0, curvature=kappa)
    x_tip, y_tip = mechanics.arc_tip_position(curvature=kappa, free_length=strip.free_length)
    m_block = mechanics.blocked_moment(bending_stiffness=d_eff, curvature=kappa_free, width=strip.width)
    f_block = mechanics.blocked_tip_force(bending_stiffness=d_eff, curvature=kappa_free, width=strip.width,
                                          free_length=strip.free_length)
    h = scenario.thickness
    times = p.times
    step_of_time = np.concatenate([[p.seg_step[0]], p.seg_step])
    incident_power = p.step_irradiance.sum(axis=1)[step_of_time]
    # Incident power is piecewise constant per segment: integrate exactly.
    seg_power = p.step_irradiance.sum(axis=1)[p.seg_step]
    dose = np.concatenate([[0.0], np.cumsum(seg_power * np.diff(times))])
    for name, arr in (("conversion", x), ("temperature", o["T"]), ("curvature", kappa), ("stress", stress)):
        if not np.all(np.isfinite(arr)):
            raise ActsimSimulationError(f"non-finite {name} in the result; nothing was written")
    layer_names = np.array([scenario.layers[i].name for i in p.layer_index])
    lit_from_top = not scenario.sources or scenario.sources[0].face == "top"
    front = conversion_front_depth(z=z_c, conversion=x, thickness=h, from_top=lit_from_top, active=p.c0 > 0, dz=p.dz)
    b, L = strip.width, strip.free_length
    section = "plane strain" if strip.section == "plate" else "plane stress"
    hold_names = np.array([scenario.protocol[i].hold for i in step_of_time])
    data_vars = {
        "irradiance": _var(("time", "z"), o["irr"], "W m-2", "cell-mean irradiance (all bands)"),
        "conversion": _var(("time", "z"), x, "1", "fraction of chromophore in the product form"),
        "eigenstrain": _var(("time", "z"), e_star, "1", "effective eigenstrain along the strip (photo, thermal, network)"),
        "modulus": _var(("time", "z"), E, "Pa", f"effective section modulus ({section})"),
        "stress": _var(("time", "z"), stress, "Pa", "axial stress at cell centres"),
        "absorbed_power": _var(("time", "z"), o["pabs"], "W m-3", "absorbed optical power density"),
        "curvature": _var(("time",), kappa, "m-1", "curvature (positive bends toward +z)"),
        "free_curvature": _var(("time",), kappa_free, "m-1", "curvature the strip takes when free at this state"),
        "bend_angle": _var(("time",), kappa * L, "rad", "tip rotation of the free length"),
        "tip_deflection": _var(("time",), y_tip, "m", "tip travel normal to the clamped tangent (toward +z)"),
        "tip_position_x": _var(("time",), x_tip, "m", "tip position along the clamped tangent"),
        "axial_strain": _var(("time",), e0 - kappa * 0.5 * h, "1", "axial strain at the mid-thickness"),
        "bending_stiffness": _var(("time",), b * d_eff, "N m2", "bending stiffness EI about the neutral axis"),
        "blocked_moment": _var(("time",), m_block, "N m", "moment that holds the strip flat"),
        "blocked_force": _var(("time",), f_block, "N", "force the tip exerts on a support holding it in place (positive toward +z; free rotation, small deflection)"),
        "holding_force": _var(("time",), b * n_hold, "N", "axial force the grips apply (zero when free)"),
        "holding_moment": _var(("time",), b * (m_hold - n_hold * 0.5 * h), "N m", "moment the grips or mandrel apply about the mid-thickness"),
        "photon_flux_incident": _var(("time",), o["budget"][:, 0], "mol m-2 s-1", "incident photon flux (all sources)"),
        "photon_flux_reflected": _var(("time",), o["budget"][:, 1], "mol m-2 s-1", "photon flux reflected at the entry faces"),
        "photon_flux_absorbed": _var(("time",), o["budget"][:, 2], "mol m-2 s-1", "photon flux absorbed in the stack"),
        "photon_flux_transmitted": _var(("time",), o["budget"][:, 3], "mol m-2 s-1", "photon flux leaving through the far faces"),
        "incident_irradiance": _var(("time",), incident_power, "W m-2", "total incident irradiance of the sources on"),
        "optical_dose": _var(("time",), dose, "J m-2", "incident radiant exposure since t = 0"),
        "protocol_step": _var(("time",), step_of_time.astype(np.int32), "1", "index of the protocol step (0-based) that ends at or contains this time"),
        "hold": _var(("time",), hold_names, "1", "mechanical condition of that protocol step"),
    }
    if np.any(p.c0 > 0):
        data_vars["conversion_front_depth"] = _var(
            ("time",), front, "m", f"depth below the {'top' if lit_from_top else 'bottom'} face where conversion falls to half its maximum")
    if scenario.heat.enabled:
        from .thermal import face_temperatures

        T = o["T"]
        env = p.step_env[step_of_time]  # T_amb_bottom, h_bottom, T_amb_top, h_top
        faces = np.array([face_temperatures(T[i], p.dz, p.k_cond, env[i, 1], env[i, 0], env[i, 3], env[i, 2])
                          for i in range(times.size)])
        data_vars["temperature"] = _var(("time", "z"), T, "K", "temperature")
        data_vars["peak_temperature"] = _var(("time",), T.max(axis=1), "K", "highest cell temperature")
        data_vars["surface_temperature_bottom"] = _var(("time",), faces[:, 0], "K", "temperature of the bottom face")
        data_vars["surface_temperature_top"] = _var(("time",), faces[:, 1], "K", "temperature of the top face")
        data_vars["absorbed_power_total"] = _var(("time",), (o["pabs"] * p.dz).sum(axis=1), "W m-2", "absorbed optical power per unit area")
        data_vars["heat_absorbed"] = _var(("time",), o["energy"][:, 0], "J m-2", "heat deposited by absorbed light since t = 0")
        data_vars["heat_lost_bottom"] = _var(("time",), o["energy"][:, 1], "J m-2", "heat lost through the bottom face since t = 0")
        data_vars["heat_lost_top"] = _var(("time",), o["energy"][:, 2], "J m-2", "heat lost through the top face since t = 0")
    if np.any(p.network_mod > 0):
        on = p.network_mod > 0
        data_vars["network_density"] = _var(("time", "z"), np.where(on, x, 0.0), "1", "density of the light-formed network (1 = fully formed)")
        data_vars["network_strain"] = _var(("time", "z"), o["S"], "1", "network-weighted strain the light-formed network remembers")
    return xr.Dataset(
        data_vars=data_vars,
        coords={
            "time": _var(("time",), times, "s", "time since the start of the protocol"),
            "z": _var(("z",), z_c, "m", "height of the cell centre above the bottom face"),
            "layer": _var(("z",), layer_names, "1", "layer of the cell"),
        },
    )
