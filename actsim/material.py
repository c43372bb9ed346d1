"""Material-state stage: modulus E(z) and eigenstrain e*(z) of each cell.

This module owns the material laws (modulus against conversion and
temperature: linear in conversion, glass transition, DMA table), the
two-network model of a light-formed network, the stage's parameters
(:class:`MaterialParams`) and its kernel steps.

The modulus is linear in conversion between the reactant and product moduli,
and the photo-induced eigenstrain is proportional to conversion:

.. math:: E = E_A + (E_B - E_A)\\,x, \\qquad e^* = \\varepsilon_{ph}\\, x

For the wide-plate section (plane strain across the width) the plane-strain
modulus :math:`E/(1-\\nu^2)` is used; the eigenstrain acts along the strip's
length only (an aligned, uniaxial photo-strain). For an in-plane isotropic
eigenstrain under plane strain, multiply the photo-strain by :math:`1+\\nu`; the
solver does this for the (isotropic) thermal strain.

A material may relax (linear viscoelasticity: a Prony series in the reduced time with a
WLF, Arrhenius or tabulated time-temperature shift, integrated per cell by the exact
exponential update of Simo and Hughes 1998, ch. 10): that code is in
:mod:`actsim.viscoelastic`. The large-strain laws of a layer (incompressible neo-Hookean
and Gent) are in :mod:`actsim.hyperelastic`. This module imports both and re-exports
their public names, so ``from actsim.material import prony_step`` keeps working.

References
----------
.. [1] Timoshenko, S. and Woinowsky-Krieger, S. Theory of Plates and Shells,
   2nd ed., McGraw-Hill 1959, ch. 1 (cylindrical bending, plane-strain modulus).
.. [2] Simo, J. C. and Hughes, T. J. R. Computational Inelasticity, Springer 1998,
   ch. 10 (viscoelasticity: the recursive exponential update).
.. [3] Williams, M. L., Landel, R. F. and Ferry, J. D. "The temperature dependence of relaxation
   mechanisms in amorphous polymers and other glass-forming liquids." J. Am. Chem. Soc. 77
   (1955) 3701–3707.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
from numba import njit

from .errors import ActsimInputError
from .order import lc_strains_nb, order_nb
from .hyperelastic import STRAIN_LAW_NAMES, STRAIN_LINEAR, STRAIN_PLANE, STRAIN_UNIAXIAL  # noqa: F401 (re-exported)
from .hyperelastic import hyper_state, hyper_stress_nb, hyperelastic_stress  # noqa: F401 (re-exported)
from .units import check_range, finite_array, scalar_or_array
from .viscoelastic import (  # noqa: F401 (re-exported)
    GAS_CONSTANT, LN10, LN_SHIFT_MAX, SHIFT_ARRHENIUS, SHIFT_NAMES, SHIFT_NONE, SHIFT_TABLE, SHIFT_WLF,
    arrhenius_log_shift, interp_clamped_nb, log_shift_nb, prony_algorithmic, prony_relaxation_modulus,
    prony_step, prony_storage_loss, reduced_time_step, table_log_shift, viscoelastic_accept, viscoelastic_error,
    viscoelastic_section_state, viscoelastic_state, viscoelastic_strain, wlf_log_shift)

MODULUS_CONSTANT = 0
MODULUS_GLASS = 1
MODULUS_TABLE = 2


class MaterialParams(NamedTuple):
    """What the material-state stage needs of one design, SI.

    Attributes
    ----------
    mod_kind : numpy.ndarray of int64, shape (n_cell,)
        Modulus law of each cell: MODULUS_CONSTANT, MODULUS_GLASS or MODULUS_TABLE.
    mod_base : numpy.ndarray, shape (n_cell,)
        Reactant-form modulus of a constant law [Pa].
    mod_ratio : numpy.ndarray, shape (n_cell,)
        E_B / E_A, product over reactant modulus [1].
    sec_fac : numpy.ndarray, shape (n_cell,)
        1 (beam) or 1/(1 - nu^2) (plate) [1].
    gl : numpy.ndarray, shape (n_cell, 4)
        Glass-transition law: glassy [Pa], rubbery [Pa], Tg [K], width [K].
    tab_idx : numpy.ndarray of int64, shape (n_cell,)
        Row of the modulus table of each cell.
    tab_T, tab_logE : numpy.ndarray, shape (n_table, m)
        Table temperatures [K] and ln(E / 1 Pa), padded to one length (the lookup clamps at the ends).
    network_mod : numpy.ndarray, shape (n_cell,)
        Section modulus of the fully formed light network [Pa] (0: none).
    photo_strain : numpy.ndarray, shape (n_cell,)
        Eigenstrain at full conversion [1].
    alpha_th : numpy.ndarray, shape (n_cell,)
        Thermal expansion along the strip, (1 + nu) alpha for the plate [K-1] (0 without heat).
    visco_n : numpy.ndarray of int64, shape (n_cell,)
        Number of Prony terms of each cell (0: elastic; the rest of the visco fields are then unused).
    visco_mod : numpy.ndarray, shape (n_cell, n_term)
        Section modulus of each Prony term, f_sec E_k, at the reactant form [Pa] (0 beyond visco_n).
    visco_tau : numpy.ndarray, shape (n_cell, n_term)
        Relaxation time of each term at the shift's reference temperature [s] (1 beyond visco_n).
    shift_kind : numpy.ndarray of int64, shape (n_cell,)
        SHIFT_NONE, SHIFT_WLF, SHIFT_ARRHENIUS or SHIFT_TABLE.
    shift_par : numpy.ndarray, shape (n_cell, 3)
        WLF: C1 [1], C2 [K], reference temperature [K]; Arrhenius: E_a / R [K], reference temperature [K], 0.
    shift_tab_idx : numpy.ndarray of int64, shape (n_cell,)
        Row of the shift table of each SHIFT_TABLE cell (0 otherwise).
    shift_tab_T, shift_tab_log : numpy.ndarray, shape (n_shift_table, m)
        Shift-table temperatures [K] and ln a_T [1], padded to one length by repeating the last value at 1 K
        steps (the lookup clamps at the ends).
    strain_law : numpy.ndarray of int64, shape (n_cell,)
        STRAIN_LINEAR (small strain), STRAIN_UNIAXIAL (hyperelastic, plane stress: beam) or STRAIN_PLANE
        (hyperelastic, plane strain across the width: plate).
    extensibility : numpy.ndarray, shape (n_cell,)
        Gent's J_m of a hyperelastic cell [1]; 0: neo-Hookean (J_m -> infinity).
    lc_kind : numpy.ndarray of int64, shape (n_cell,)
        Liquid-crystal network of each cell: actsim.order.LC_NONE (isotropic), LC_GLASSY or LC_ELASTOMER.
    order_law : numpy.ndarray of int64, shape (n_cell,)
        actsim.order.ORDER_NONE, ORDER_MAIER_SAUPE or ORDER_HALLER.
    order_par : numpy.ndarray, shape (n_cell, 4)
        Clearing temperature [K], its drop at full conversion [K], Haller's exponent [1], reference order Q_ref [1].
    lc_coef : numpy.ndarray, shape (n_cell, 2)
        Strain per unit order along and across the director (glassy networks) [1].
    lc_wx, lc_wp : numpy.ndarray, shape (n_cell,)
        Weights of the order strain along the strip: e_perp lc_wp + (e_par - e_perp) lc_wx
        (:func:`actsim.liquid_crystal.section_weights`) [1].
    order_t, order_q : numpy.ndarray, shape (m,)
        The Maier–Saupe order against the reduced temperature T / T_NI (actsim.order.maier_saupe_table).
    """

    mod_kind: np.ndarray
    mod_base: np.ndarray
    mod_ratio: np.ndarray
    sec_fac: np.ndarray
    gl: np.ndarray
    tab_idx: np.ndarray
    tab_T: np.ndarray
    tab_logE: np.ndarray
    network_mod: np.ndarray
    photo_strain: np.ndarray
    alpha_th: np.ndarray
    visco_n: np.ndarray
    visco_mod: np.ndarray
    visco_tau: np.ndarray
    shift_kind: np.ndarray
    shift_par: np.ndarray
    shift_tab_idx: np.ndarray
    shift_tab_T: np.ndarray
    shift_tab_log: np.ndarray
    strain_law: np.ndarray
    extensibility: np.ndarray
    lc_kind: np.ndarray
    order_law: np.ndarray
    order_par: np.ndarray
    lc_coef: np.ndarray
    lc_wx: np.ndarray
    lc_wp: np.ndarray
    order_t: np.ndarray
    order_q: np.ndarray


def material_params(scenario, grid) -> MaterialParams:
    """Modulus laws, section factors, photo-strain, network modulus and thermal expansion of every cell.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
        The validated scenario (SI).
    grid : actsim.grid.Grid
        The cell grid.
    """
    n_cell = grid.dz.size
    heat_on = scenario.heat.enabled
    strain = np.zeros(n_cell)
    alpha_th = np.zeros(n_cell)
    mod_kind = np.zeros(n_cell, np.int64)
    mod_base = np.zeros(n_cell)
    mod_ratio = np.ones(n_cell)
    sec_fac = np.ones(n_cell)
    gl = np.ones((n_cell, 4))
    tab_idx = np.zeros(n_cell, np.int64)
    tables = []
    network_mod = np.zeros(n_cell)
    relax = [layer.material.relaxation for layer in scenario.layers]
    n_term = max([len(r.moduli) for r in relax if r is not None], default=0)
    visco_n = np.zeros(n_cell, np.int64)
    visco_mod = np.zeros((n_cell, max(n_term, 1)))
    visco_tau = np.ones((n_cell, max(n_term, 1)))
    shift_kind = np.zeros(n_cell, np.int64)
    shift_par = np.zeros((n_cell, 3))
    shift_tab_idx = np.zeros(n_cell, np.int64)
    shift_tables = []
    strain_law = np.zeros(n_cell, np.int64)
    extensibility = np.zeros(n_cell)
    for li, layer in enumerate(scenario.layers):
        m = layer.material
        sel = grid.layer_index == li
        if m.is_active:
            strain[sel] = m.photo_strain
        sec_fac[sel] = section_modulus(modulus=1.0, poisson_ratio=m.poisson_ratio, section=scenario.strip.section)
        if m.strain_law != "linear":
            # incompressible: the small-strain section modulus is 3 mu = E (beam) or 4 mu = 4 E / 3 (plate)
            plate = scenario.strip.section == "plate"
            strain_law[sel] = STRAIN_PLANE if plate else STRAIN_UNIAXIAL
            sec_fac[sel] = 4.0 / 3.0 if plate else 1.0
            extensibility[sel] = m.extensibility if m.strain_law == "gent" else 0.0
        mod_ratio[sel] = m.product_modulus_ratio
        law = m.temperature_modulus
        if law is None:
            mod_base[sel] = m.modulus
        elif law[0] == "glass":
            mod_kind[sel] = MODULUS_GLASS
            gl[sel] = law[1:5]
        else:
            mod_kind[sel] = MODULUS_TABLE
            tab_idx[sel] = len(tables)
            tables.append((law[1], law[2]))
        network_mod[sel] = sec_fac[sel] * m.network_modulus
        rx = m.relaxation
        if rx is not None:
            k = len(rx.moduli)
            visco_n[sel] = k
            visco_mod[np.ix_(sel, np.arange(k))] = sec_fac[sel][:, None] * np.asarray(rx.moduli)[None, :]
            visco_tau[np.ix_(sel, np.arange(k))] = np.asarray(rx.times)[None, :]
            shift_kind[sel] = SHIFT_NAMES.index(rx.shift)
            if rx.shift == "wlf":
                shift_par[sel] = (rx.wlf_c1, rx.wlf_c2, rx.reference_temperature)
            elif rx.shift == "arrhenius":
                shift_par[sel] = (rx.activation_energy / GAS_CONSTANT, rx.reference_temperature, 0.0)
            elif rx.shift == "table":
                shift_tab_idx[sel] = len(shift_tables)
                shift_tables.append((np.asarray(rx.shift_table_temperatures, float),
                                     LN10 * np.asarray(rx.shift_table_log10, float)))
        # thermal strain is isotropic: under plane strain across the width (plate) it acts as (1 + nu) alpha dT
        # along the strip with the plane-strain modulus (Timoshenko and Woinowsky-Krieger 1959, sec. 14)
        plate_factor = (1.0 + (0.5 if m.strain_law != "linear" else m.poisson_ratio)) if scenario.strip.section == "plate" else 1.0
        alpha_th[sel] = plate_factor * m.thermal_expansion if heat_on else 0.0
    # DMA-style tables, padded to one length by repeating the last point (the lookup clamps at the ends)
    m_len = max([len(t[0]) for t in tables], default=1)
    tab_T = np.zeros((max(len(tables), 1), m_len))
    tab_logE = np.zeros((max(len(tables), 1), m_len))
    for j, (tt, ee) in enumerate(tables):
        pad = m_len - len(tt)
        tab_T[j] = np.concatenate([tt, tt[-1] + np.arange(1, pad + 1)])
        tab_logE[j] = np.log(np.concatenate([ee, np.full(pad, ee[-1])]))
    shift_tab_T, shift_tab_log = _padded_tables(shift_tables)
    from .liquid_crystal import cell_params, section_weights

    lc = cell_params(scenario, grid)
    lc_wx, lc_wp = section_weights(scenario, grid, lc["weights"])
    return MaterialParams(mod_kind=mod_kind, mod_base=mod_base, mod_ratio=mod_ratio, sec_fac=sec_fac, gl=gl,
                          tab_idx=tab_idx, tab_T=tab_T, tab_logE=tab_logE, network_mod=network_mod,
                          photo_strain=strain, alpha_th=alpha_th, visco_n=visco_n, visco_mod=visco_mod,
                          visco_tau=visco_tau, shift_kind=shift_kind, shift_par=shift_par,
                          shift_tab_idx=shift_tab_idx, shift_tab_T=shift_tab_T, shift_tab_log=shift_tab_log,
                          strain_law=strain_law,
                          extensibility=extensibility, lc_kind=lc["lc_kind"], order_law=lc["order_law"],
                          order_par=lc["order_par"], lc_coef=lc["lc_coef"], lc_wx=lc_wx, lc_wp=lc_wp,
                          order_t=lc["order_t"], order_q=lc["order_q"])


def _padded_tables(tables):
    """Tables of (x, y) of different lengths as two arrays of one length, the last x stepped by 1, y repeated."""
    m_len = max([len(t[0]) for t in tables], default=1)
    xs = np.zeros((max(len(tables), 1), m_len))
    ys = np.zeros((max(len(tables), 1), m_len))
    for j, (tx, ty) in enumerate(tables):
        pad = m_len - len(tx)
        xs[j] = np.concatenate([tx, tx[-1] + np.arange(1, pad + 1)])
        ys[j] = np.concatenate([ty, np.full(pad, ty[-1])])
    return xs, ys


def primary_modulus(*, params: MaterialParams, conversion, temperature):
    """Section modulus E_p of the primary network of every cell from the readable material laws [Pa].

    .. math:: E_p = f_{sec}\\, E_A(T)\\,(1 + (E_B/E_A - 1)\\, x)

    Parameters
    ----------
    params : actsim.material.MaterialParams
        The design's material parameters.
    conversion : numpy.ndarray, shape (n_cell,)
        x [1].
    temperature : numpy.ndarray, shape (n_cell,)
        T [K].
    """
    p = params
    base = p.mod_base.copy()
    for i in np.nonzero(p.mod_kind == MODULUS_GLASS)[0]:
        base[i] = glass_transition_modulus(
            temperature=temperature[i], glassy_modulus=p.gl[i, 0], rubbery_modulus=p.gl[i, 1],
            glass_transition_temperature=p.gl[i, 2], transition_width=p.gl[i, 3],
        )
    for i in np.nonzero(p.mod_kind == MODULUS_TABLE)[0]:
        j = p.tab_idx[i]
        base[i] = tabulated_modulus(temperature=temperature[i], table_T=p.tab_T[j], table_E=np.exp(p.tab_logE[j]))
    return p.sec_fac * conversion_modulus(conversion=conversion, reactant_modulus=base, product_modulus=base * p.mod_ratio)


def conversion_modulus(*, conversion, reactant_modulus, product_modulus):
    """Young's modulus linear in conversion, E = E_A + (E_B - E_A) x.

    Parameters
    ----------
    conversion : array_like
        [1].
    reactant_modulus, product_modulus : array_like
        Moduli of the unconverted and fully converted material [Pa].

    Returns
    -------
    numpy.ndarray
        Modulus [Pa].
    """
    return reactant_modulus + (product_modulus - reactant_modulus) * np.asarray(conversion)


def section_modulus(*, modulus, poisson_ratio, section):
    """Modulus entering the beam solve: E (beam, plane stress) or E/(1 - nu^2) (plate, plane strain) [Pa].

    Parameters
    ----------
    modulus : float or numpy.ndarray
        Young's modulus E [Pa].
    poisson_ratio : float or numpy.ndarray
        Poisson's ratio nu, 0 <= nu < 0.5 [1].
    section : str
        ``"beam"`` (narrow strip, plane stress) or ``"plate"`` (wide strip, plane strain).

    References
    ----------
    .. [1] Timoshenko, S. and Woinowsky-Krieger, S. Theory of Plates and Shells,
       2nd ed., McGraw-Hill 1959, ch. 1.
    """
    if section == "plate":
        return modulus / (1.0 - np.asarray(poisson_ratio) ** 2)
    return modulus


def photo_eigenstrain(*, conversion, photo_strain):
    """Photo-induced eigenstrain e* = photo_strain * x [1] (negative: contraction).

    Parameters
    ----------
    conversion : float or numpy.ndarray
        Conversion x [1].
    photo_strain : float or numpy.ndarray
        Eigenstrain at full conversion [1].
    """
    return np.asarray(photo_strain) * np.asarray(conversion)


def two_network_state(*, conversion, temperature, network_strain, primary_modulus, network_modulus, photo_strain,
                      thermal_expansion, reference_temperature):
    """Effective modulus and eigenstrain of the two-network model, per cell.

    The primary network carries the photo-strain and the thermal strain; the
    light-formed network of density n = x (its modulus at full conversion
    :math:`E_n`) is stress-free at the strain it formed at, kept as the
    network-weighted strain :math:`S` (forming dn at mechanical strain
    :math:`e - e_{th}` adds :math:`(e - e_{th})\\,dn`, so new network is stress-free;
    cleavage removes the same fraction of S). With
    :math:`e_{th} = \\alpha_{th}(T - T_{ref})`,

    .. math:: \\sigma = E_p (e - \\varepsilon_{ph} x - e_{th}) + E_n (x (e - e_{th}) - S)
       = E (e - e^*),

    .. math:: E = E_p + E_n x, \\qquad E e^* = E_p(\\varepsilon_{ph} x + e_{th}) + E_n (x e_{th} + S)

    Parameters
    ----------
    conversion, temperature, network_strain : numpy.ndarray
        x [1], T [K], S [1].
    primary_modulus : numpy.ndarray
        E_p, section modulus of the primary network at x and T [Pa].
    network_modulus : numpy.ndarray
        E_n, section modulus of the fully formed light network [Pa] (0: none).
    photo_strain, thermal_expansion : numpy.ndarray
        [1], [K-1].
    reference_temperature : float
        Zero of the thermal strain [K].

    Returns
    -------
    (modulus, modulus_times_eigenstrain) : numpy.ndarray
        E [Pa] and E e* [Pa].

    References
    ----------
    .. [1] Long, K. N., Scott, T. F., Qi, H. J., Bowman, C. N. and Dunn, M. L.
       "Photomechanics of light-activated polymers." J. Mech. Phys. Solids 57
       (2009) 1103–1121.
    .. [2] Lendlein, A., Jiang, H., Jünger, O. and Langer, R. "Light-induced
       shape-memory polymers." Nature 434 (2005) 879–882.
    """
    x = np.asarray(conversion)
    e_th = np.asarray(thermal_expansion) * (np.asarray(temperature) - reference_temperature)
    modulus = primary_modulus + network_modulus * x
    ee = primary_modulus * (photo_strain * x + e_th) + network_modulus * (x * e_th + network_strain)
    return modulus, ee


def update_network_strain(*, network_strain, conversion_old, conversion_new, strain):
    """Network-weighted formation strain after one step.

    Forming (dn > 0) at strain e adds e dn; cleaving (dn < 0) removes the
    same fraction of S as of the network: S <- S x_new / x_old.

    Parameters
    ----------
    network_strain : numpy.ndarray
        S before the step [1].
    conversion_old, conversion_new : numpy.ndarray
        Network density (conversion) before and after [1].
    strain : numpy.ndarray
        Strain at which the new network forms (the step's midpoint strain) [1].
    """
    dn = conversion_new - conversion_old
    safe = np.where(conversion_old > 0, conversion_old, 1.0)
    cleaved = np.where(conversion_old > 0, network_strain * conversion_new / safe, network_strain)
    return np.where(dn >= 0, network_strain + strain * dn, cleaved)


@njit(cache=True)
def glass_transition_modulus_nb(temperature, glassy_modulus, rubbery_modulus, glass_transition_temperature, transition_width):
    """Scalar numba version of :func:`glass_transition_modulus` (no checks) [Pa].

    Parameters
    ----------
    temperature : float
        [K].
    glassy_modulus, rubbery_modulus : float
        Plateaus below and above the transition, > 0 [Pa].
    glass_transition_temperature : float
        Midpoint of the step [K].
    transition_width : float
        Width w, > 0 [K].
    """
    s = 0.5 * (1.0 - math.tanh(0.5 * (temperature - glass_transition_temperature) / transition_width))
    return rubbery_modulus * math.exp(s * math.log(glassy_modulus / rubbery_modulus))


def glass_transition_modulus(
    *, temperature, glassy_modulus, rubbery_modulus, glass_transition_temperature, transition_width
):
    r"""Modulus through the glass transition: a smooth step in :math:`\ln E` between glassy and rubbery.

    .. math::

       \ln E(T) = \ln E_r + \frac{\ln E_g - \ln E_r}{1 + \exp\left((T - T_g)/w\right)},
       \qquad\text{i.e.}\qquad E = E_r\,(E_g/E_r)^{s(T)},\; s = \tfrac12\left[1 - \tanh\tfrac{T-T_g}{2w}\right]

    Parameters
    ----------
    temperature : float or array_like
        [K].
    glassy_modulus : float
        Plateau below the transition, > 0 [Pa].
    rubbery_modulus : float
        Plateau above the transition, > 0 [Pa].
    glass_transition_temperature : float
        Midpoint of the step, > 0 [K].
    transition_width : float
        Width w, > 0; E moves from 73 % to 27 % of the way (in log) over :math:`T_g \pm w`, and is within
        about 1 % of each plateau (in log) 4.6 w away from :math:`T_g` [K].

    Returns
    -------
    float or ndarray
        Modulus [Pa]; :math:`\sqrt{E_g E_r}` at :math:`T = T_g`.

    Notes
    -----
    Common practice, no source: a logistic step is the usual smooth fit to a DMA storage-modulus curve.
    The step is taken in :math:`\ln E` (not in E) because the modulus falls by two to three decades through
    the transition and DMA curves look symmetric on a log axis; a step in E would leave E several times the
    rubbery plateau well above :math:`T_g`. The form is a fit, not a viscoelastic model: it has no rate or
    frequency dependence.

    References
    ----------
    J. D. Ferry, *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, 1980 (shape of modulus vs
    temperature curves; the formula itself is common practice, no source).
    """
    for name, v, unit in (
        ("transition_width", transition_width, "K"),
        ("glassy_modulus", glassy_modulus, "Pa"),
        ("rubbery_modulus", rubbery_modulus, "Pa"),
        ("glass_transition_temperature", glass_transition_temperature, "K"),
    ):
        if not math.isfinite(float(v)):
            raise ActsimInputError(f"{name}: {v!r} is not finite ({unit}, > 0)")
        check_range(float(v), field=name, unit=unit, lo=0.0, lo_open=True)
    T = finite_array(temperature, field="temperature", unit="K", lo=0.0, lo_open=True)
    s = 0.5 * (1.0 - np.tanh(0.5 * (T - glass_transition_temperature) / transition_width))
    return scalar_or_array(rubbery_modulus * np.exp(s * math.log(glassy_modulus / rubbery_modulus)))


@njit(cache=True)
def tabulated_modulus_nb(temperature, table_T, log_table_E):
    """Scalar numba version of :func:`tabulated_modulus`; takes ``log(table_E)`` (precompute it) [Pa].

    Parameters
    ----------
    temperature : float
        [K].
    table_T : ndarray, shape (m,)
        Strictly increasing table temperatures [K].
    log_table_E : ndarray, shape (m,)
        Natural logarithm of the moduli at ``table_T``, ln(E / 1 Pa) [1].
    """
    m = table_T.shape[0]
    if temperature <= table_T[0]:
        return math.exp(log_table_E[0])
    if temperature >= table_T[m - 1]:
        return math.exp(log_table_E[m - 1])
    lo = 0
    hi = m - 1
    while hi - lo > 1:  # bisection for table_T[lo] <= T < table_T[hi]
        mid = (lo + hi) // 2
        if table_T[mid] <= temperature:
            lo = mid
        else:
            hi = mid
    f = (temperature - table_T[lo]) / (table_T[hi] - table_T[lo])
    return math.exp(log_table_E[lo] + f * (log_table_E[hi] - log_table_E[lo]))


def tabulated_modulus(*, temperature, table_T, table_E):
    r"""Modulus from a DMA-style table, interpolated linearly in :math:`\ln E`, clamped at the ends.

    .. math::

       \ln E(T) = \ln E_j + \frac{T - T_j}{T_{j+1} - T_j}\,(\ln E_{j+1} - \ln E_j),\qquad T_j \le T \le T_{j+1}

    Parameters
    ----------
    temperature : float or array_like
        [K].
    table_T : array_like, shape (m,)
        Strictly increasing table temperatures, m >= 1 [K].
    table_E : array_like, shape (m,)
        Moduli at ``table_T``, > 0 [Pa].

    Returns
    -------
    float or ndarray
        Modulus [Pa]. Below ``table_T[0]`` it is ``table_E[0]``, above ``table_T[-1]`` it is
        ``table_E[-1]``: the table is not extrapolated (check that it spans the temperatures reached).

    Notes
    -----
    Interpolating in :math:`\ln E` keeps E positive and follows the near-exponential fall of the modulus
    between table points through the transition (common practice, no source).

    References
    ----------
    Common practice, no source.
    """
    tT = finite_array(table_T, field="table_T", unit="K", lo=0.0, lo_open=True).reshape(-1)
    tE = finite_array(table_E, field="table_E", unit="Pa", lo=0.0, lo_open=True).reshape(-1)
    if tT.size == 0:
        raise ActsimInputError("table_T: the table is empty; give at least one temperature in K")
    if tE.size != tT.size:
        raise ActsimInputError(f"table_E: has {tE.size} values but table_T has {tT.size}; give one modulus in Pa per temperature")
    if tT.size > 1 and np.any(np.diff(tT) <= 0):
        i = int(np.flatnonzero(np.diff(tT) <= 0)[0]) + 1
        raise ActsimInputError(f"table_T[{i}]: {tT[i]:g} K is not above table_T[{i - 1}] = {tT[i - 1]:g} K (must increase)")
    T = finite_array(temperature, field="temperature", unit="K", lo=0.0, lo_open=True)
    return scalar_or_array(np.exp(np.interp(T, tT, np.log(tE))))


@njit(cache=True)
def material_state(x, T, S, mat, T_ref, E_out, Ee_out):
    """Kernel step of :func:`two_network_state` with :func:`primary_modulus`: E and E e* of each cell in place.

    .. math:: E = E_p + E_n x, \\qquad E e^* = E_p (\\varepsilon_{ph} x + e_{th} + e_{LC}) + E_n (x e_{th} + S)

    with the order strain along the strip of a liquid-crystal cell
    :math:`e_{LC} = e_\\perp w_p + (e_\\parallel - e_\\perp) w_x` from the order Q(x, T)
    (:func:`actsim.order.order_nb`, :func:`actsim.order.lc_strains_nb`; 0 in isotropic cells).

    Parameters
    ----------
    x, T, S : numpy.ndarray, shape (n_cell,)
        Conversion [1], temperature [K], network-weighted formation strain [1].
    mat : actsim.material.MaterialParams
        The design's material parameters.
    T_ref : float
        Zero of the thermal strain [K].
    E_out, Ee_out : numpy.ndarray, shape (n_cell,)
        Outputs: E [Pa] and E e* [Pa].
    """
    for i in range(x.size):
        kind = mat.mod_kind[i]
        if kind == MODULUS_CONSTANT:
            base = mat.mod_base[i]
        elif kind == MODULUS_GLASS:
            base = glass_transition_modulus_nb(T[i], mat.gl[i, 0], mat.gl[i, 1], mat.gl[i, 2], mat.gl[i, 3])
        else:
            j = mat.tab_idx[i]
            base = tabulated_modulus_nb(T[i], mat.tab_T[j], mat.tab_logE[j])
        e_p = mat.sec_fac[i] * base * (1.0 + (mat.mod_ratio[i] - 1.0) * x[i])
        e_th = mat.alpha_th[i] * (T[i] - T_ref)
        e_n = mat.network_mod[i]
        E_out[i] = e_p + e_n * x[i]
        Ee_out[i] = e_p * (mat.photo_strain[i] * x[i] + e_th) + e_n * (x[i] * e_th + S[i])
        if mat.lc_kind[i] != 0:
            q = order_nb(x[i], T[i], mat.order_law[i], mat.order_par[i, 0], mat.order_par[i, 1], mat.order_par[i, 2],
                         mat.order_t, mat.order_q)
            e_par, e_perp = lc_strains_nb(q, mat.order_par[i, 3], mat.lc_kind[i], mat.lc_coef[i, 0], mat.lc_coef[i, 1])
            Ee_out[i] += e_p * (e_perp * mat.lc_wp[i] + (e_par - e_perp) * mat.lc_wx[i])


@njit(cache=True)
def mechanical_strain(z_edges, e0, kappa, alpha_th, T, T_ref, out):
    """Strain at each cell centre less the thermal strain: what a network formed now remembers [1].

    .. math:: e_{mech,i} = e_0 - \\kappa z_i - \\alpha_{th,i} (T_i - T_{ref})

    Parameters
    ----------
    z_edges : numpy.ndarray, shape (n_cell + 1,)
        Cell faces [m].
    e0 : float
        Strain at z = 0 [1].
    kappa : float
        Curvature [m-1].
    alpha_th : numpy.ndarray, shape (n_cell,)
        Thermal expansion along the strip [K-1].
    T : numpy.ndarray, shape (n_cell,)
        Temperature [K].
    T_ref : float
        Zero of the thermal strain [K].
    out : numpy.ndarray, shape (n_cell,)
        Output [1].
    """
    for i in range(out.size):
        out[i] = e0 - kappa * 0.5 * (z_edges[i] + z_edges[i + 1]) - alpha_th[i] * (T[i] - T_ref)


@njit(cache=True)
def network_strain_update(S, x_old, x_new, strain, network_mod, out):
    """Kernel step of :func:`update_network_strain` for the cells that carry a light network.

    Forming (dn >= 0) at strain e adds e dn; cleaving removes the same fraction
    of S as of the network. Cells without a network keep S.

    Parameters
    ----------
    S : numpy.ndarray, shape (n_cell,)
        Network-weighted formation strain before the step [1].
    x_old, x_new : numpy.ndarray, shape (n_cell,)
        Network density (conversion) before and after [1].
    strain : numpy.ndarray, shape (n_cell,)
        Mechanical strain at which new network forms [1].
    network_mod : numpy.ndarray, shape (n_cell,)
        Network modulus; cells with 0 are left alone [Pa].
    out : numpy.ndarray, shape (n_cell,)
        S after the step [1] (may be ``S`` itself).
    """
    for i in range(S.size):
        s = S[i]
        if network_mod[i] > 0.0:
            dn = x_new[i] - x_old[i]
            if dn >= 0.0:
                s = S[i] + strain[i] * dn
            elif x_old[i] > 0.0:
                s = S[i] * (x_new[i] / x_old[i])
        out[i] = s
