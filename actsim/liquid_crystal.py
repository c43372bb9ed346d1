"""Liquid-crystal layers of a stack: their per-cell parameters and what a run reports of them.

The physics lives in its stage modules: the order parameter and the spontaneous strain in
:mod:`actsim.order`, the dichroic absorption of polarised light in :mod:`actsim.polarised`, the plate
section (curvatures and twist) and the free ribbon's shape in :mod:`actsim.laminate`. This module
builds the per-cell arrays those stages take from a scenario (:func:`cell_params`) and, after a run,
the plate response and the ribbon's shape from the recorded conversion and temperature
(:func:`plate_outputs`).

The strip's beam response (``curvature``, ``bend_angle``, blocked force, the checks) takes the order
strain along the strip: :math:`e^*_{xx}` for a narrow strip (plane stress), :math:`e^*_{xx} + \\nu e^*_{yy}`
for a wide one (plane strain across the width). The plate response takes the whole in-plane tensor
:math:`(e^*_{xx}, e^*_{yy}, \\gamma^*_{xy})` of every cell in the laminate section; the two agree on
:math:`\\kappa_x` when the layers share one Poisson ratio and nothing twists.

References
----------
.. [1] Warner, M. and Terentjev, E. M. Liquid Crystal Elastomers, Oxford University Press 2003.
.. [2] Jones, R. M. Mechanics of Composite Materials, 2nd ed., Taylor & Francis 1999, ch. 4.
.. [3] Armon, S., Efrati, E., Kupferman, R. and Sharon, E. "Geometry and mechanics in the opening of
   chiral seed pods." Science 333 (2011) 1726–1730.
"""

from __future__ import annotations

import math

import numpy as np

from . import order as order_stage

#: Ribbon shapes are computed at no more output times than this (evenly spread, with every step end).
MAX_RIBBON_TIMES = 400


def has_liquid_crystal(scenario) -> bool:
    """Whether any layer of the stack is a liquid-crystal network."""
    return any(layer.material.liquid_crystal is not None for layer in scenario.layers)


def has_polarised_light(scenario) -> bool:
    """Whether the polarised, dichroic light pass is needed: a liquid-crystal layer that absorbs, or birefringence."""
    return any(layer.material.liquid_crystal is not None and layer.material.is_active for layer in scenario.layers) \
        or any(layer.material.liquid_crystal is not None and layer.material.liquid_crystal.birefringence > 0
               for layer in scenario.layers)


def cell_params(scenario, grid) -> dict:
    """Per-cell arrays of the liquid-crystal model (zeros and "none" codes in isotropic cells).

    Returns
    -------
    dict
        ``lc_kind`` (int64: order.LC_NONE, LC_GLASSY, LC_ELASTOMER), ``order_law`` (int64), ``order_par``
        (n_cell, 4): clearing temperature [K], its shift at full conversion [K], Haller's exponent [1], the
        reference order Q_ref [1]; ``lc_coef`` (n_cell, 2): strain per unit order along and across the director
        [1]; ``phi``, ``tilt`` (n_cell,) director angles [rad]; ``weights`` (n_cell, 3) = (wxx, wyy, wxy) of
        :func:`actsim.order.director_weights`; ``order_factor`` and ``absorption_ratio`` (n_cell, 2) for reactant
        and product; ``birefringence``, ``refractive_index`` (n_cell,); ``order_t``, ``order_q``: the
        Maier–Saupe table (reduced temperature, Q).
    """
    n = grid.dz.size
    out = dict(lc_kind=np.zeros(n, np.int64), order_law=np.zeros(n, np.int64), order_par=np.zeros((n, 4)),
               lc_coef=np.zeros((n, 2)), phi=np.zeros(n), tilt=np.zeros(n), weights=np.zeros((n, 3)),
               order_factor=np.zeros((n, 2)), absorption_ratio=np.zeros((n, 2)), birefringence=np.zeros(n),
               refractive_index=np.ones(n))
    out["order_par"][:, 0] = 1.0  # harmless T_NI in isotropic cells (never used: law none)
    if not has_liquid_crystal(scenario):
        out["order_t"], out["order_q"] = np.array([0.0, 1.0]), np.array([1.0, 0.0])
        out["refractive_index"] = np.array([la.material.refractive_index for la in scenario.layers])[grid.layer_index]
        return out
    any_ms = False
    for li, layer in enumerate(scenario.layers):
        sel = grid.layer_index == li
        m = layer.material
        out["refractive_index"][sel] = m.refractive_index
        lc = m.liquid_crystal
        if lc is None:
            continue
        law = order_stage.ORDER_LAW_NAMES.index(lc.order_law)
        any_ms |= law == order_stage.ORDER_MAIER_SAUPE
        q_ref = float(order_stage.nematic_order(0.0, lc.preparation_temperature, law=lc.order_law,
                                                clearing_temperature=lc.clearing_temperature,
                                                clearing_shift=lc.clearing_shift, exponent=lc.haller_exponent))
        out["lc_kind"][sel] = order_stage.LC_KIND_NAMES.index(lc.network)
        out["order_law"][sel] = law
        out["order_par"][sel] = (lc.clearing_temperature, lc.clearing_shift, lc.haller_exponent, q_ref)
        out["lc_coef"][sel] = (lc.strain_per_order, lc.strain_across_per_order)
        d = layer.director
        zeta = (np.arange(layer.cells) + 0.5) / layer.cells
        if d is None:
            phi, tilt = np.zeros(layer.cells), np.zeros(layer.cells)
        elif d.kind == "polydomain":  # a fine laminate of domains: K in-plane angles, cycling cell by cell
            phi, tilt = math.pi * (np.arange(layer.cells) % d.families) / d.families, np.zeros(layer.cells)
        else:
            table = tuple(np.asarray(d.table, float).T) if d.table else None
            phi, tilt = order_stage.director_profile(d.kind, zeta, angle=d.angle, angle_top=d.angle_top,
                                                     tilt_bottom=d.tilt_bottom, tilt_top=d.tilt_top, table=table)
        out["phi"][sel], out["tilt"][sel] = phi, tilt
        out["weights"][sel] = np.column_stack(order_stage.director_weights(phi, tilt))
        out["order_factor"][sel] = (lc.reactant_order, lc.product_order)
        out["absorption_ratio"][sel] = (lc.absorption_ratio_reactant, lc.absorption_ratio_product)
        out["birefringence"][sel] = lc.birefringence
    if any_ms:
        out["order_t"], out["order_q"] = (np.ascontiguousarray(a, float) for a in order_stage.maier_saupe_table())
    else:
        out["order_t"], out["order_q"] = np.array([0.0, 1.0]), np.array([1.0, 0.0])
    return out


def section_weights(scenario, grid, weights) -> tuple:
    """Weights of the order strain along the strip in the beam section, per cell.

    The strain along the strip is :math:`e_\\perp w_p + (e_\\parallel - e_\\perp) w_x` with
    :math:`(w_x, w_p) = (w_{xx}, 1)` in plane stress and :math:`(w_{xx} + \\nu w_{yy}, 1 + \\nu)` in plane strain
    across the width (:math:`\\varepsilon_{yy} = 0`, so :math:`\\sigma_{xx} = E/(1-\\nu^2)\\,(\\varepsilon_{xx}
    - e^*_{xx} - \\nu e^*_{yy})`; Timoshenko and Woinowsky-Krieger 1959, sec. 14).
    """
    w_x = weights[:, 0].copy()
    w_p = np.ones(grid.dz.size)
    if scenario.strip.section == "plate":
        nu = np.array([layer.material.poisson_ratio for layer in scenario.layers])[grid.layer_index]
        w_x += nu * weights[:, 1]
        w_p += nu
    return w_x, w_p


def order_field(conversion, temperature, params) -> np.ndarray:
    """Order parameter Q of every cell at every output time (0 in isotropic cells) [1]."""
    q = np.zeros(np.broadcast_shapes(np.shape(conversion), np.shape(temperature)))
    x = np.broadcast_to(conversion, q.shape)
    T = np.broadcast_to(temperature, q.shape)
    keys = np.column_stack([params["order_law"], params["order_par"][:, :3]])
    for key in np.unique(keys, axis=0):  # one call per distinct law (per liquid-crystal material)
        law = int(key[0])
        if law == order_stage.ORDER_NONE:
            continue
        cols = np.flatnonzero(np.all(keys == key, axis=1))
        q[:, cols] = order_stage.nematic_order(
            x[:, cols], T[:, cols], law=order_stage.ORDER_LAW_NAMES[law], clearing_temperature=float(key[1]),
            clearing_shift=float(key[2]), exponent=float(key[3]))
    return q


def order_strains(q, params) -> tuple:
    """Spontaneous strains along and across the director, (time, cell) each [1] (0 in isotropic cells)."""
    e_par = np.zeros(q.shape)
    e_perp = np.zeros(q.shape)
    q_ref = params["order_par"][:, 3]
    keys = np.column_stack([params["lc_kind"], q_ref, params["lc_coef"]])
    for key in np.unique(keys, axis=0):
        kind = int(key[0])
        if kind == order_stage.LC_NONE:
            continue
        cols = np.flatnonzero(np.all(keys == key, axis=1))
        if kind == order_stage.LC_GLASSY:
            a, b = order_stage.glassy_strains(q[:, cols], reference_order=float(key[1]), c_par=float(key[2]),
                                              c_perp=float(key[3]))
        else:
            a, b = order_stage.elastomer_strains(q[:, cols], reference_order=float(key[1]))
        e_par[:, cols], e_perp[:, cols] = a, b
    return e_par, e_perp


def sample_times(n_time: int, step_of_time, most: int = MAX_RIBBON_TIMES) -> np.ndarray:
    """Output-time indices at which the ribbon and the polarisation are solved: all of them, or ``most`` evenly
    spread plus the last time of every protocol step."""
    if n_time <= most:
        return np.arange(n_time)
    ends = np.flatnonzero(np.diff(step_of_time) != 0)
    return np.unique(np.concatenate([np.linspace(0, n_time - 1, most).round().astype(int), ends, [n_time - 1]]))


def plate_outputs(scenario, p, *, conversion, temperature, modulus, step_of_time) -> dict:
    """What a run reports of its liquid-crystal layers, every (time,) array on the output times.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
    p : actsim.solver.Problem
    conversion, temperature : numpy.ndarray, shape (n_time, n_cell)
        [1] and [K] (temperature may have one row: a constant field).
    modulus : numpy.ndarray, shape (n_time, n_cell)
        Section modulus as recorded (Young's modulus times the section factor) [Pa].
    step_of_time : numpy.ndarray of int, shape (n_time,)

    Returns
    -------
    dict
        ``order_parameter`` (time, z) [1]; ``plate_curvature_x``, ``plate_curvature_y`` [m-1] and
        ``twist_rate`` (d2w/dxdy) [rad m-1] of the free plate; the free ribbon of the strip's width
        (:func:`actsim.laminate.ribbon_shape`): ``ribbon_shape`` (words), ``ribbon_curvature`` (its centre line's
        bend, k11) [m-1], ``ribbon_curvature_across`` (k22) [m-1], ``ribbon_twist_rate`` (k12) [rad m-1], ``ribbon_helix_radius`` and ``ribbon_helix_pitch``
        [m]; with a polarised source, ``polarisation_rotation`` [rad] of the first one's main band across the film,
        and ``ribbon_width_parameter`` (w^2 |kbar| / h at the last time) [1].
    """
    from . import laminate

    grid = p.grid
    lc = cell_params(scenario, grid)
    n_time = conversion.shape[0]
    T = np.broadcast_to(temperature, conversion.shape)
    q = order_field(conversion, T, lc)
    e_par, e_perp = order_strains(q, lc)
    li = grid.layer_index
    layers = scenario.layers
    nu = np.array([la.material.poisson_ratio for la in layers])[li]
    photo = np.array([la.material.photo_strain for la in layers])[li]
    alpha = np.array([la.material.thermal_expansion for la in layers])[li] if scenario.heat.enabled else np.zeros(li.size)
    w = lc["weights"]
    iso = alpha * (T - p.heat.T_ref)
    diff = e_par - e_perp
    eig = np.empty(conversion.shape + (3,))
    eig[..., 0] = photo * conversion + iso + e_perp + diff * w[:, 0]
    eig[..., 1] = iso + e_perp + diff * w[:, 1]
    eig[..., 2] = diff * w[:, 2]
    young = modulus / p.material.sec_fac
    kappa = laminate.plate_curvature_series(grid.z_edges, young, nu, eig).kappa
    out = dict(order_parameter=q, plate_curvature_x=kappa[:, 0], plate_curvature_y=kappa[:, 1],
               twist_rate=0.5 * kappa[:, 2])
    # the free ribbon of the strip's width, solved at sample times; its adopted curvature in between linearly
    idx = sample_times(n_time, step_of_time)
    adopted = np.empty((idx.size, 3))
    words = []
    wp = 0.0
    for j, t in enumerate(idx):
        A, B, D = laminate.abd_matrices(grid.z_edges, laminate.isotropic_stiffness(modulus=young[t], poisson_ratio=nu))
        r = laminate.ribbon_shape(np.array([kappa[t, 0], kappa[t, 1], 0.5 * kappa[t, 2]]),
                                  Dstar=laminate.reduced_bending_stiffness(A, B, D),
                                  stretch_stiffness=laminate.stretch_stiffness(A), width=scenario.strip.width,
                                  thickness=scenario.thickness)
        adopted[j] = r.curvature
        words.append(r.shape)
        wp = r.width_parameter
    times = p.times
    k = np.column_stack([np.interp(times, times[idx], adopted[:, c]) for c in range(3)])
    nearest = np.searchsorted(idx, np.arange(n_time)).clip(0, idx.size - 1)
    kc, tc = np.abs(k[:, 0]), k[:, 2]
    s2 = kc**2 + tc**2
    with np.errstate(divide="ignore", invalid="ignore"):
        radius = np.where(s2 > 0, kc / s2, np.nan)  # a flat ribbon has no helix: missing (solution.MISSING_MEANS)
        pitch = np.where(s2 > 0, 2 * math.pi * np.abs(tc) / s2, np.nan)
    out.update(ribbon_shape=np.array(words)[nearest], ribbon_curvature=k[:, 0], ribbon_curvature_across=k[:, 1],
               ribbon_twist_rate=tc,
               ribbon_helix_radius=radius, ribbon_helix_pitch=pitch, ribbon_width_parameter=wp)
    light = p.light
    from .optics import PolarisedLightParams

    dichroic = isinstance(light, PolarisedLightParams)
    polarised = [b for b in range(light.pol_beam.size) if light.pol_beam[b]] if dichroic else []
    if polarised:
        from .polarised import transmitted_polarisation

        src = light.beam_source[polarised[0]]
        beams = [b for b in polarised if light.beam_source[b] == src]
        beam = max(beams, key=lambda b: light.beam_fraction[b])
        from .optics import polar_view

        pol = polar_view(light)
        rot = np.array([transmitted_polarisation(conversion=conversion[t], order=q[t], dz=grid.dz, light=light,
                                                 pol=pol, beam=beam).rotation for t in idx])
        out["polarisation_rotation"] = np.interp(times, times[idx], rot)
        out["polarisation_source"] = scenario.sources[src].name
    return out


def _finite_or_none(v):
    v = float(v)
    return v if math.isfinite(v) else None


def ribbon_summary(ds) -> dict:
    """Key numbers of the liquid-crystal outputs of a run (for ``summary.json`` and the screens).

    The free ribbon is reported at the output time of its largest curvature (centre-line bend and twist
    together) and at the end; the order as its lowest value in any liquid-crystal cell against its value at
    the start. Lengths in m, curvatures in m-1, twist in rad m-1, angles in rad; a helix pitch or radius that is
    infinite (a flat ribbon) is None.
    """
    t = ds["time"].values
    k11 = ds["ribbon_curvature"].values
    k12 = ds["ribbon_twist_rate"].values
    i = int(np.argmax(np.hypot(k11, k12)))
    q = ds["order_parameter"].values
    lc_cells = np.any(q != 0, axis=0)
    out = {
        "ribbon_width": float(ds.attrs.get("width", float("nan"))),
        "ribbon_width_parameter": _finite_or_none(ds.attrs.get("ribbon_width_parameter", float("nan"))),
        "time_of_largest_ribbon_curvature": float(t[i]),
        "ribbon_shape": str(ds["ribbon_shape"].values[i]),
        "ribbon_helix_pitch": _finite_or_none(ds["ribbon_helix_pitch"].values[i]),
        "ribbon_helix_radius": _finite_or_none(ds["ribbon_helix_radius"].values[i]),
        "ribbon_curvature": float(k11[i]),
        "ribbon_twist_rate": float(k12[i]),
        "plate_curvature_x": float(ds["plate_curvature_x"].values[i]),
        "plate_curvature_y": float(ds["plate_curvature_y"].values[i]),
        "twist_rate": float(ds["twist_rate"].values[i]),
        "final_ribbon_shape": str(ds["ribbon_shape"].values[-1]),
        "order_at_start": float(q[0, lc_cells].max()) if lc_cells.any() else 0.0,
        "lowest_order": float(q[:, lc_cells].min()) if lc_cells.any() else 0.0,
    }
    if "polarisation_rotation" in ds:
        rot = ds["polarisation_rotation"].values
        out.update(polarisation_source=str(ds["polarisation_rotation"].attrs.get("source", "")),
                   polarisation_rotation_start=float(rot[0]), polarisation_rotation_end=float(rot[-1]))
    return out


def summary_rows(lc: dict) -> list[tuple[str, str]]:
    """(label, text) rows of :func:`ribbon_summary` for the run screen, in display units."""
    def mm(v):
        return "-" if v is None else f"{v * 1e3:.3g} mm"

    rows = [(f"free ribbon, {lc['ribbon_width'] * 1e3:.3g} mm wide",
             f"{lc['ribbon_shape']} at t = {lc['time_of_largest_ribbon_curvature']:.4g} s: helix pitch "
             f"{mm(lc['ribbon_helix_pitch'])}, radius {mm(lc['ribbon_helix_radius'])} (bend "
             f"{lc['ribbon_curvature'] * 1e-3:.3g} 1/mm, twist {math.degrees(lc['ribbon_twist_rate']) * 1e-3:.3g} "
             f"deg/mm); {lc['final_ribbon_shape']} at the end"),
            ("free plate at that time",
             f"curvature along {lc['plate_curvature_x'] * 1e-3:.3g} 1/mm, across {lc['plate_curvature_y'] * 1e-3:.3g} "
             f"1/mm, twist {math.degrees(lc['twist_rate']) * 1e-3:.3g} deg/mm"),
            ("nematic order", f"{lc['order_at_start']:.3g} at the start, lowest {lc['lowest_order']:.3g}")]
    if "polarisation_rotation_start" in lc:
        rows.append((f"polarisation of '{lc['polarisation_source']}'",
                     f"turned by {math.degrees(lc['polarisation_rotation_start']):.3g} deg across the film at the "
                     f"start, {math.degrees(lc['polarisation_rotation_end']):.3g} deg at the end"))
    return rows
