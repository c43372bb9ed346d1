"""Optics stage: Beer–Lambert attenuation through the layer stack.

The absorption coefficient of each cell (natural-log, per metre) is

.. math:: \\alpha = \\ln 10\\,[\\varepsilon_{10,A}(\\lambda)\\, c_0 (1 - x)
   + \\varepsilon_{10,B}(\\lambda)\\, c_0 x] + \\alpha_{bg}(\\lambda)

with conversion :math:`x`, chromophore concentration :math:`c_0` and decadic
molar absorptivities of reactant A and product B. With optical depth
:math:`\\tau_i = \\alpha_i \\Delta z_i` and photon flux :math:`q_{in}` entering
cell *i*, the cell absorbs exactly :math:`q_{in}(1 - e^{-\\tau_i})` and its
mean flux is :math:`q_{in}(1 - e^{-\\tau_i})/\\tau_i`, so photons are conserved
to round-off on any grid. Absorbed photons are shared between the species in
proportion to their part of :math:`\\alpha_i`.

References
----------
.. [1] Swinehart, D. F. "The Beer-Lambert law." J. Chem. Educ. 39 (1962) 333.
.. [2] Born, M. and Wolf, E. Principles of Optics, 7th ed., Cambridge 1999,
   sec. 1.5 (Fresnel formulae at normal incidence).
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
from numba import njit
from numba.extending import overload

from .errors import ActsimInputError

#: Most cells of one layer (the upper limit of ``layers[].cells`` in the scenario parser).
MAX_LAYER_CELLS = 10_000

LN10 = math.log(10.0)


class LightParams(NamedTuple):
    """What the optics stage needs of one design, SI. Beams are (source, band) pairs.

    Attributes
    ----------
    c0 : numpy.ndarray, shape (n_cell,)
        Chromophore concentration [mol m-3] (0 in passive layers).
    eps_a, eps_b : numpy.ndarray, shape (n_cell, n_beam)
        Decadic molar absorptivities of reactant and product at each beam's wavelength [m2 mol-1].
    alpha_bg : numpy.ndarray, shape (n_cell, n_beam)
        Background (matrix) absorption coefficient, natural-log [m-1].
    from_top : numpy.ndarray of bool, shape (n_beam,)
        Entry face of each beam.
    entry : numpy.ndarray, shape (n_beam,)
        1 - R at the entry face [1].
    beam_emol : numpy.ndarray, shape (n_beam,)
        Energy of a mole of photons of each beam [J mol-1].
    beam_source : numpy.ndarray of int64, shape (n_beam,)
        Index of the source each beam belongs to.
    beam_wavelength : numpy.ndarray, shape (n_beam,)
        [m].
    beam_fraction : numpy.ndarray, shape (n_beam,)
        Fraction of its source's irradiance the beam carries [1].
    """

    c0: np.ndarray
    eps_a: np.ndarray
    eps_b: np.ndarray
    alpha_bg: np.ndarray
    from_top: np.ndarray
    entry: np.ndarray
    beam_emol: np.ndarray
    beam_source: np.ndarray
    beam_wavelength: np.ndarray
    beam_fraction: np.ndarray


#: What a design with liquid-crystal layers that absorb (or are birefringent) adds to :class:`LightParams`.
POLARISED_FIELDS = (
    ("pol_director_angle", np.ndarray), ("pol_director_tilt", np.ndarray), ("pol_birefringence", np.ndarray),
    ("pol_order_reference", np.ndarray), ("pol_refractive_index", np.ndarray), ("pol_order_factor_a", np.ndarray),
    ("pol_order_factor_b", np.ndarray), ("pol_ratio_a", np.ndarray), ("pol_ratio_b", np.ndarray),
    ("pol_beam", np.ndarray), ("pol_beam_angle", np.ndarray), ("order_law", np.ndarray), ("order_par", np.ndarray),
    ("order_t", np.ndarray), ("order_q", np.ndarray), ("order_now", np.ndarray))

PolarisedLightParams = NamedTuple("PolarisedLightParams", [*LightParams.__annotations__.items(), *POLARISED_FIELDS])
PolarisedLightParams.__doc__ = """:class:`LightParams` of a design whose liquid-crystal layers absorb or are birefringent, SI.

    Its own class, so that the kernel is compiled apart for it: :func:`light_stage` and :func:`species_fluxes`
    choose the dichroic pass at compile time, and the plain Beer–Lambert pass of every other design stays as it
    was. The fields of :class:`LightParams`, then (the ``pol_*`` ones are those of
    :class:`actsim.polarised.PolarParams`, kept flat):

    Attributes
    ----------
    pol_director_angle, pol_director_tilt : numpy.ndarray, shape (n_cell,)
        Director's angle from the strip axis in the plane and its tilt out of the plane [rad].
    pol_birefringence, pol_order_reference, pol_refractive_index : numpy.ndarray, shape (n_cell,)
        n_e - n_o at the order Q_ref, Q_ref, n_o [1].
    pol_order_factor_a, pol_order_factor_b, pol_ratio_a, pol_ratio_b : numpy.ndarray, shape (n_cell,)
        Each species' order as a share of Q, and its absorption across over along its transition moment [1].
    pol_beam : numpy.ndarray of bool, shape (n_beam,)
        Linearly polarised beams.
    pol_beam_angle : numpy.ndarray, shape (n_beam,)
        Angle of their electric field from the strip axis [rad].
    order_law, order_par, order_t, order_q : numpy.ndarray
        The order law of every cell, as :class:`actsim.material.MaterialParams` holds it.
    order_now : numpy.ndarray, shape (n_cell,)
        Scratch: the order parameter at the state of the latest light pass [1].
    """


def light_params(scenario, grid) -> LightParams:
    """Beams and per-cell absorptivities of a scenario.

    Also refuses a grid on which a cell's optical depth could exceed
    ``optics.max_cell_optical_depth`` at any conversion (alpha is linear in
    conversion, so x = 0 and x = 1 bound it).

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
        The validated scenario (SI).
    grid : actsim.grid.Grid
        The cell grid.
    """
    from .spectra import molar_photon_energy

    layers = scenario.layers
    beams = [(si, wl, fr) for si, src in enumerate(scenario.sources)
             for wl, fr in zip(src.band_wavelength, src.band_fraction)]
    beam_source = np.array([b[0] for b in beams], np.int64)
    beam_wl = np.array([b[1] for b in beams], float)
    beam_frac = np.array([b[2] for b in beams], float)
    n_beam, n_cell = beam_wl.size, grid.dz.size
    from_top = np.array([scenario.sources[s].face == "top" for s in beam_source], dtype=np.bool_)
    entry = np.ones(n_beam)
    if scenario.optics.front_reflection and n_beam:
        n0 = scenario.optics.ambient_refractive_index
        r_top = fresnel_reflectance(n_outside=n0, n_inside=layers[-1].material.refractive_index)
        r_bot = fresnel_reflectance(n_outside=n0, n_inside=layers[0].material.refractive_index)
        entry = np.where(from_top, 1.0 - r_top, 1.0 - r_bot)
    c0 = np.zeros(n_cell)
    eps_a = np.zeros((n_cell, n_beam))
    eps_b = np.zeros((n_cell, n_beam))
    alpha_bg = np.zeros((n_cell, n_beam))
    max_tau = scenario.optics.max_cell_optical_depth
    for li, layer in enumerate(layers):
        m = layer.material
        sel = grid.layer_index == li
        if not n_beam:
            continue
        alpha_bg[sel] = m.background_absorption(beam_wl)
        if m.is_active:
            c0[sel] = m.chromophore_concentration
            eps_a[sel] = m.reactant_absorptivity(beam_wl)
            eps_b[sel] = m.product_absorptivity(beam_wl)
        dzl = layer.thickness / layer.cells
        alpha_hi = LN10 * c0[sel][0] * np.maximum(eps_a[sel][0], eps_b[sel][0]) + alpha_bg[sel][0]
        tau = alpha_hi * dzl
        if not np.all(np.isfinite(tau)):
            raise ActsimInputError(f"layers[{li}]: absorption coefficient is not finite (check absorptivity and concentration)")
        worst = int(np.argmax(tau))
        if tau[worst] > max_tau:
            need = float(alpha_hi[worst] * layer.thickness / max_tau)
            src = scenario.sources[beam_source[worst]].name
            fix = (f"use cells >= {math.ceil(need)}" if need <= MAX_LAYER_CELLS else
                   f"it would need {need:.3g} cells, more than the {MAX_LAYER_CELLS} allowed per layer; lower the "
                   "layer's absorption (concentration, absorptivity) or thickness, or raise optics.max_cell_optical_depth")
            raise ActsimInputError(
                f"layers[{li}].cells: {layer.cells} cells give an optical depth of {tau[worst]:.3g} per cell at "
                f"{beam_wl[worst] * 1e9:.4g} nm (source '{src}'), above optics.max_cell_optical_depth = {max_tau:g}; "
                + fix
            )
    from .liquid_crystal import cell_params, has_polarised_light

    plain = LightParams(c0=c0, eps_a=eps_a, eps_b=eps_b, alpha_bg=alpha_bg, from_top=from_top, entry=entry,
                        beam_emol=molar_photon_energy(beam_wl) if n_beam else np.zeros(0), beam_source=beam_source,
                        beam_wavelength=beam_wl, beam_fraction=beam_frac)
    if not (has_polarised_light(scenario) and n_beam > 0):
        return plain
    lc = cell_params(scenario, grid)
    pol_angle = [scenario.sources[s].polarisation for s in beam_source]
    return PolarisedLightParams(*plain,
                       pol_director_angle=lc["phi"], pol_director_tilt=lc["tilt"],
                       pol_birefringence=lc["birefringence"],
                       pol_order_reference=np.where(lc["lc_kind"] > 0, lc["order_par"][:, 3], 1.0),
                       pol_refractive_index=lc["refractive_index"], pol_order_factor_a=lc["order_factor"][:, 0].copy(),
                       pol_order_factor_b=lc["order_factor"][:, 1].copy(),
                       pol_ratio_a=lc["absorption_ratio"][:, 0].copy(), pol_ratio_b=lc["absorption_ratio"][:, 1].copy(),
                       pol_beam=np.array([a is not None for a in pol_angle], dtype=np.bool_),
                       pol_beam_angle=np.array([0.0 if a is None else a for a in pol_angle], float),
                       order_law=lc["order_law"], order_par=lc["order_par"], order_t=lc["order_t"],
                       order_q=lc["order_q"], order_now=np.zeros(n_cell))


@njit(cache=True)
def light_pass(x, dz, light, q_surface, mean_flux, absorbed):
    """Kernel step of :func:`light_field`: fill ``mean_flux`` and ``absorbed`` (n_cell, n_beam) in place.

    Parameters
    ----------
    x : numpy.ndarray, shape (n_cell,)
        Conversion [1].
    dz : numpy.ndarray, shape (n_cell,)
        Cell widths [m].
    light : actsim.optics.LightParams
        The design's optics parameters.
    q_surface : numpy.ndarray, shape (n_beam,)
        Incident photon flux of each beam before reflection [mol m-2 s-1].
    mean_flux, absorbed : numpy.ndarray, shape (n_cell, n_beam)
        Outputs [mol m-2 s-1].

    Returns
    -------
    float
        Photon flux leaving through the far faces, summed over beams [mol m-2 s-1].
    """
    n_cell, n_beam = light.eps_a.shape
    transmitted = 0.0
    for b in range(n_beam):
        q = q_surface[b] * light.entry[b]
        for j in range(n_cell):
            i = n_cell - 1 - j if light.from_top[b] else j
            alpha = (LN10 * light.c0[i] * (light.eps_a[i, b] * (1.0 - x[i]) + light.eps_b[i, b] * x[i])
                     + light.alpha_bg[i, b])
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


def fresnel_reflectance(*, n_outside, n_inside):
    """Reflectance of a flat interface at normal incidence.

    .. math:: R = \\left(\\frac{n_1 - n_2}{n_1 + n_2}\\right)^2

    Parameters
    ----------
    n_outside, n_inside : float
        Refractive indices of the two media [1].

    Returns
    -------
    float
        Power reflectance [1].

    References
    ----------
    .. [1] Born and Wolf, Principles of Optics, 7th ed., 1999, eq. 1.5 (61).
    """
    return ((n_outside - n_inside) / (n_outside + n_inside)) ** 2


def absorption_coefficients(*, conversion, concentration, epsilon10_reactant, epsilon10_product, background):
    """Per-species absorption coefficients of each cell for each beam.

    Parameters
    ----------
    conversion : numpy.ndarray, shape (n_cell,)
        Fraction of chromophore in the product form [1].
    concentration : numpy.ndarray, shape (n_cell,)
        Chromophore concentration c0 [mol m-3].
    epsilon10_reactant, epsilon10_product : numpy.ndarray, shape (n_cell, n_beam)
        Decadic molar absorptivities at each beam's wavelength [m2 mol-1].
    background : numpy.ndarray, shape (n_cell, n_beam)
        Background (matrix) absorption coefficient, natural-log [m-1].

    Returns
    -------
    (alpha_reactant, alpha_product, alpha_total) : numpy.ndarray, shape (n_cell, n_beam)
        Natural-log absorption coefficients [m-1].
    """
    x = np.asarray(conversion)[:, None]
    c0 = np.asarray(concentration)[:, None]
    alpha_a = LN10 * epsilon10_reactant * c0 * (1.0 - x)
    alpha_b = LN10 * epsilon10_product * c0 * x
    return alpha_a, alpha_b, alpha_a + alpha_b + background


def attenuate(*, alpha, dz, flux_in, from_top):
    """Propagate one beam through the stack with exact per-cell attenuation.

    .. math:: q_{i}^{abs} = q_{in,i}\\,(1 - e^{-\\alpha_i \\Delta z_i}), \\qquad
       \\bar q_i = q_{i}^{abs} / (\\alpha_i \\Delta z_i)

    Parameters
    ----------
    alpha : numpy.ndarray, shape (n_cell,)
        Total natural-log absorption coefficient per cell [m-1].
    dz : numpy.ndarray, shape (n_cell,)
        Cell thickness [m], bottom to top.
    flux_in : float
        Photon flux entering the stack, after front reflection [mol m-2 s-1].
    from_top : bool
        True when light enters through the top face (z = h).

    Returns
    -------
    mean_flux : numpy.ndarray, shape (n_cell,)
        Cell-averaged photon flux [mol m-2 s-1].
    absorbed : numpy.ndarray, shape (n_cell,)
        Photon flux absorbed in each cell [mol m-2 s-1] (per unit face area).
    transmitted : float
        Photon flux leaving through the far face [mol m-2 s-1].
    """
    n = alpha.size
    mean_flux = np.empty(n)
    absorbed = np.empty(n)
    q = float(flux_in)
    order = range(n - 1, -1, -1) if from_top else range(n)
    for i in order:
        tau = alpha[i] * dz[i]
        if tau > 1e-12:
            a = -q * math.expm1(-tau)
            mean_flux[i] = a / tau
        else:
            a = q * tau
            mean_flux[i] = q
        absorbed[i] = a
        q -= a
    return mean_flux, absorbed, q


def light_field(*, alpha, dz, surface_flux, entry_transmission, from_top):
    """Mean flux and absorbed photons of every beam.

    Parameters
    ----------
    alpha : numpy.ndarray, shape (n_cell, n_beam)
        Total absorption coefficient [m-1].
    dz : numpy.ndarray, shape (n_cell,)
        Cell thickness [m].
    surface_flux : numpy.ndarray, shape (n_beam,)
        Incident photon flux at the entry face, before reflection [mol m-2 s-1].
    entry_transmission : numpy.ndarray, shape (n_beam,)
        1 - R at the entry face [1].
    from_top : numpy.ndarray of bool, shape (n_beam,)
        Entry face of each beam.

    Returns
    -------
    mean_flux, absorbed : numpy.ndarray, shape (n_cell, n_beam)
        [mol m-2 s-1].
    transmitted : numpy.ndarray, shape (n_beam,)
        [mol m-2 s-1].
    """
    n_cell, n_beam = alpha.shape
    mean_flux = np.empty((n_cell, n_beam))
    absorbed = np.empty((n_cell, n_beam))
    transmitted = np.empty(n_beam)
    for b in range(n_beam):
        mean_flux[:, b], absorbed[:, b], transmitted[b] = attenuate(
            alpha=alpha[:, b], dz=dz, flux_in=surface_flux[b] * entry_transmission[b], from_top=bool(from_top[b])
        )
    return mean_flux, absorbed, transmitted


def light_stage(x, T, dz, light, q_surface, mean_flux, absorbed, flux_a, flux_b):
    """The light pass of the kernel, chosen by the type of ``light`` when numba compiles it (numba only).

    A :class:`LightParams` takes :func:`light_pass` (``T``, ``flux_a`` and ``flux_b`` untouched); a
    :class:`PolarisedLightParams` the dichroic pass of :func:`actsim.polarised.polarised_light_pass` at the
    order Q(x, T) of every cell (:func:`actsim.order.order_nb`), which also fills the species-weighted fluxes.

    Parameters
    ----------
    x, T : numpy.ndarray, shape (n_cell,)
        Conversion [1] and temperature [K].
    dz : numpy.ndarray, shape (n_cell,)
        Cell widths [m].
    light : actsim.optics.LightParams or actsim.optics.PolarisedLightParams
        The design's optics parameters.
    q_surface : numpy.ndarray, shape (n_beam,)
        Incident photon flux of each beam before reflection [mol m-2 s-1].
    mean_flux, absorbed, flux_a, flux_b : numpy.ndarray, shape (n_cell, n_beam)
        Outputs [mol m-2 s-1].

    Returns
    -------
    float
        Photon flux leaving through the far faces, summed over beams [mol m-2 s-1].
    """
    raise NotImplementedError("light_stage is only callable from numba-compiled code")


def species_fluxes(light, mean_flux, flux_a, flux_b):
    """The flux the reactant and the product see: ``(flux_a, flux_b)`` for a :class:`PolarisedLightParams`,
    ``(mean_flux, mean_flux)`` otherwise, chosen when numba compiles (numba only).

    Parameters
    ----------
    light : actsim.optics.LightParams or actsim.optics.PolarisedLightParams
        The design's optics parameters.
    mean_flux, flux_a, flux_b : numpy.ndarray, shape (n_cell, n_beam)
        Cell-mean and species-weighted photon fluxes [mol m-2 s-1].

    Returns
    -------
    tuple of numpy.ndarray
        The reactant's and the product's flux.
    """
    raise NotImplementedError("species_fluxes is only callable from numba-compiled code")


def _polarised(light) -> bool:
    return getattr(light, "instance_class", None) is PolarisedLightParams


@njit(cache=True)
def polar_view(light):
    """The :class:`actsim.polarised.PolarParams` a :class:`PolarisedLightParams` holds flat.

    Parameters
    ----------
    light : actsim.optics.PolarisedLightParams
        The design's optics parameters.

    Returns
    -------
    actsim.polarised.PolarParams
    """
    return PolarParams(light.pol_director_angle, light.pol_director_tilt, light.pol_birefringence,
                       light.pol_order_reference, light.pol_refractive_index, light.pol_order_factor_a,
                       light.pol_order_factor_b, light.pol_ratio_a, light.pol_ratio_b, light.pol_beam,
                       light.pol_beam_angle)


@overload(light_stage)
def _light_stage_impl(x, T, dz, light, q_surface, mean_flux, absorbed, flux_a, flux_b):
    if not _polarised(light):
        def plain(x, T, dz, light, q_surface, mean_flux, absorbed, flux_a, flux_b):
            return light_pass(x, dz, light, q_surface, mean_flux, absorbed)
        return plain

    def dichroic(x, T, dz, light, q_surface, mean_flux, absorbed, flux_a, flux_b):
        q = light.order_now
        for i in range(x.size):
            q[i] = order_nb(x[i], T[i], light.order_law[i], light.order_par[i, 0], light.order_par[i, 1],
                            light.order_par[i, 2], light.order_t, light.order_q)
        return polarised_light_pass(x, q, dz, light, polar_view(light), q_surface, mean_flux, absorbed, flux_a,
                                    flux_b)
    return dichroic


@overload(species_fluxes)
def _species_fluxes_impl(light, mean_flux, flux_a, flux_b):
    if _polarised(light):
        return lambda light, mean_flux, flux_a, flux_b: (flux_a, flux_b)
    return lambda light, mean_flux, flux_a, flux_b: (mean_flux, mean_flux)


from .order import order_nb  # noqa: E402
from .polarised import PolarParams, polarised_light_pass  # noqa: E402 (polarised imports LN10 from here)
