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
    k_th: np.ndarray  # (n_cell,)
    modulus_a: np.ndarray  # section modulus of reactant form (n_cell,)
    modulus_b: np.ndarray
    photo_strain: np.ndarray
    x0: np.ndarray
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
    tol = 1e-9 * total
    boundaries = np.cumsum([0.0] + [s.duration for s in scenario.protocol])
    n_out = int(math.floor(total / scenario.output_interval + 1e-9))
    marks = np.concatenate([np.arange(n_out + 1) * scenario.output_interval, boundaries])
    marks = np.sort(marks[marks <= total + tol])
    keep = np.concatenate([[True], np.diff(marks) > tol])
    marks = marks[keep]
    marks[-1] = total
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
    e_a = np.zeros(n_cell)
    e_b = np.zeros(n_cell)
    strain = np.zeros(n_cell)
    x0 = np.zeros(n_cell)
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
            k_th[sel] = m.thermal_back_rate
            strain[sel] = m.photo_strain
            x0[sel] = layer.initial_conversion
        e_a[sel] = network.section_modulus(modulus=m.modulus, poisson_ratio=m.poisson_ratio, section=scenario.strip.section)
        e_b[sel] = network.section_modulus(modulus=m.product_modulus, poisson_ratio=m.poisson_ratio, section=scenario.strip.section)
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

    seg_step, seg_dt, seg_n, times = _schedule(scenario)
    step_irr = np.array([s.irradiance for s in scenario.protocol], float).reshape(len(scenario.protocol), len(scenario.sources))
    step_flux = np.zeros((len(scenario.protocol), n_beam))
    for b in range(n_beam):
        step_flux[:, b] = photon_flux(irradiance=step_irr[:, beam_source[b]] * beam_frac[b], wavelength=beam_wl[b])
    return Problem(
        z_edges=z_edges, dz=dz, layer_index=layer_index, c0=c0, eps_a=eps_a, eps_b=eps_b, alpha_bg=alpha_bg,
        phi_f=phi_f, phi_b=phi_b, k_th=k_th, modulus_a=e_a, modulus_b=e_b, photo_strain=strain, x0=x0,
        beam_source=beam_source, beam_wavelength=beam_wl, beam_from_top=from_top, beam_entry=entry,
        beam_emol=molar_photon_energy(beam_wl) if n_beam else np.zeros(0), step_flux=step_flux,
        step_irradiance=step_irr, seg_step=seg_step, seg_dt=seg_dt, seg_n=seg_n, times=times,
    )


def _allocate(p: Problem):
    n_out, n_cell = p.times.size, p.dz.size
    return np.zeros((n_out, n_cell)), np.zeros((n_out, n_cell)), np.zeros((n_out, n_cell)), np.zeros((n_out, 4))


def run_kernel(p: Problem):
    """Run the numba time loop; returns conversion, irradiance, absorbed power density, photon budget."""
    from ._kernels import run_optics_kinetics

    out_x, out_irr, out_pabs, out_budget = _allocate(p)
    bad = run_optics_kinetics(
        p.dz, p.c0, p.eps_a, p.eps_b, p.alpha_bg, p.phi_f, p.phi_b, p.k_th, p.beam_from_top, p.beam_entry,
        p.beam_emol, p.step_flux, p.seg_step, p.seg_dt, p.seg_n, p.x0, out_x, out_irr, out_pabs, out_budget,
    )
    if bad >= 0:
        raise ActsimSimulationError(f"non-finite conversion at t = {p.times[bad + 1]:g} s; nothing was written")
    return out_x, out_irr, out_pabs, out_budget


def run_reference(p: Problem):
    """The same time loop written with the readable stage functions (slow; for tests)."""
    out_x, out_irr, out_pabs, out_budget = _allocate(p)

    def light(x, q):
        _, _, alpha = optics.absorption_coefficients(
            conversion=x, concentration=p.c0, epsilon10_reactant=p.eps_a, epsilon10_product=p.eps_b, background=p.alpha_bg
        )
        return optics.light_field(alpha=alpha, dz=p.dz, surface_flux=q, entry_transmission=p.beam_entry, from_top=p.beam_from_top)

    def rate(mf):
        return kinetics.photoreaction_rates(
            mean_flux=mf, epsilon10_reactant=p.eps_a, epsilon10_product=p.eps_b, forward_yield=p.phi_f,
            backward_yield=p.phi_b, thermal_rate=p.k_th,
        )

    def store(slot, x, q):
        mf, ab, tr = light(x, q)
        out_x[slot] = x
        out_irr[slot] = mf @ p.beam_emol
        out_pabs[slot] = (ab @ p.beam_emol) / p.dz
        out_budget[slot] = [q.sum(), (q * (1 - p.beam_entry)).sum(), ab.sum(), tr.sum()]

    x = p.x0.copy()
    store(0, x, p.step_flux[p.seg_step[0]])
    for s in range(p.seg_step.size):
        q = p.step_flux[p.seg_step[s]]
        dt = p.seg_dt[s]
        for _ in range(p.seg_n[s]):
            kf0, kb0 = rate(light(x, q)[0])
            xp = kinetics.exact_first_order_update(conversion=x, k_forward=kf0, k_backward=kb0, dt=dt)
            kf1, kb1 = rate(light(xp, q)[0])
            x = kinetics.exact_first_order_update(conversion=x, k_forward=0.5 * (kf0 + kf1), k_backward=0.5 * (kb0 + kb1), dt=dt)
        store(s + 1, x, q)
    return out_x, out_irr, out_pabs, out_budget


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
        ``absorbed_power``; (time,) strip response ``curvature``, ``bend_angle``,
        ``tip_deflection``, ``tip_position_x``, ``axial_strain``,
        ``blocked_moment``, ``blocked_force``, photon budget and optical dose.
        Attributes hold the scenario text and the actsim version.
    """
    from . import __version__

    p = build_problem(scenario)
    if engine == "kernel":
        x, irr, pabs, budget = run_kernel(p)
    elif engine == "reference":
        x, irr, pabs, budget = run_reference(p)
    else:
        raise ActsimInputError(f"engine: '{engine}' is not one of 'kernel', 'reference'")
    ds = assemble_dataset(scenario, p, x, irr, pabs, budget)
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
    )
    return ds


def assemble_dataset(scenario: Scenario, p: Problem, x, irr, pabs, budget) -> xr.Dataset:
    """Mechanics on every output time, and the labelled result."""
    strip = scenario.strip
    modulus = network.conversion_modulus(conversion=x, reactant_modulus=p.modulus_a, product_modulus=p.modulus_b)
    e_star = network.photo_eigenstrain(conversion=x, photo_strain=p.photo_strain)
    e0, kappa, d_eff = mechanics.free_strip_response(z_edges=p.z_edges, modulus=modulus, eigenstrain=e_star)
    z_c = 0.5 * (p.z_edges[:-1] + p.z_edges[1:])
    stress = mechanics.stress_profile(z_centres=z_c, modulus=modulus, eigenstrain=e_star, strain_bottom=e0, curvature=kappa)
    x_tip, y_tip = mechanics.arc_tip_position(curvature=kappa, free_length=strip.free_length)
    m_block = mechanics.blocked_moment(bending_stiffness=d_eff, curvature=kappa, width=strip.width)
    f_block = mechanics.blocked_tip_force(bending_stiffness=d_eff, curvature=kappa, width=strip.width, free_length=strip.free_length)
    h = scenario.thickness
    times = p.times
    step_of_time = np.concatenate([[p.seg_step[0]], p.seg_step])
    incident_power = p.step_irradiance.sum(axis=1)[step_of_time]
    # Incident power is piecewise constant per segment: integrate exactly.
    seg_power = p.step_irradiance.sum(axis=1)[p.seg_step]
    dose = np.concatenate([[0.0], np.cumsum(seg_power * np.diff(times))])
    for name, arr in (("conversion", x), ("curvature", kappa), ("stress", stress)):
        if not np.all(np.isfinite(arr)):
            raise ActsimSimulationError(f"non-finite {name} in the result; nothing was written")
    layer_names = np.array([scenario.layers[i].name for i in p.layer_index])
    from .metrics import conversion_front_depth

    lit_from_top = not scenario.sources or scenario.sources[0].face == "top"
    front = conversion_front_depth(z=z_c, conversion=x, thickness=h, from_top=lit_from_top, active=p.c0 > 0, dz=p.dz)
    ds = xr.Dataset(
        data_vars={
            "irradiance": _var(("time", "z"), irr, "W m-2", "cell-mean irradiance (all bands)"),
            "conversion": _var(("time", "z"), x, "1", "fraction of chromophore in the product form"),
            "eigenstrain": _var(("time", "z"), e_star, "1", "photo-induced eigenstrain along the strip"),
            "modulus": _var(("time", "z"), modulus, "Pa", f"section modulus ({'plane strain' if strip.section == 'plate' else 'plane stress'})"),
            "stress": _var(("time", "z"), stress, "Pa", "axial stress at cell centres, free strip"),
            "absorbed_power": _var(("time", "z"), pabs, "W m-3", "absorbed optical power density"),
            "curvature": _var(("time",), kappa, "m-1", "curvature (positive bends toward +z)"),
            "bend_angle": _var(("time",), kappa * strip.free_length, "rad", "tip rotation of the free length"),
            "tip_deflection": _var(("time",), y_tip, "m", "tip travel normal to the clamped tangent (toward +z)"),
            "tip_position_x": _var(("time",), x_tip, "m", "tip position along the clamped tangent"),
            "axial_strain": _var(("time",), e0 - kappa * 0.5 * h, "1", "axial strain at the mid-thickness"),
            "bending_stiffness": _var(("time",), strip.width * d_eff, "N m2", "bending stiffness EI about the neutral axis"),
            "blocked_moment": _var(("time",), m_block, "N m", "moment that holds the strip flat"),
            "blocked_force": _var(("time",), f_block, "N", "tip force that holds the tip in place (free rotation, small deflection)"),
            "photon_flux_incident": _var(("time",), budget[:, 0], "mol m-2 s-1", "incident photon flux (all sources)"),
            "photon_flux_reflected": _var(("time",), budget[:, 1], "mol m-2 s-1", "photon flux reflected at the entry faces"),
            "photon_flux_absorbed": _var(("time",), budget[:, 2], "mol m-2 s-1", "photon flux absorbed in the stack"),
            "photon_flux_transmitted": _var(("time",), budget[:, 3], "mol m-2 s-1", "photon flux leaving through the far faces"),
            "conversion_front_depth": _var(("time",), front, "m", f"depth below the {'top' if lit_from_top else 'bottom'} face where conversion falls to half its maximum"),
            "incident_irradiance": _var(("time",), incident_power, "W m-2", "total incident irradiance of the sources on"),
            "optical_dose": _var(("time",), dose, "J m-2", "incident radiant exposure since t = 0"),
            "protocol_step": _var(("time",), step_of_time.astype(np.int32), "1", "index of the protocol step (0-based) that ends at or contains this time"),
        },
        coords={
            "time": _var(("time",), times, "s", "time since the start of the protocol"),
            "z": _var(("z",), z_c, "m", "height of the cell centre above the bottom face"),
            "layer": _var(("z",), layer_names, "1", "layer of the cell"),
        },
    )
    return ds
