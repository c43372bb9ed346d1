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

A material may relax (linear viscoelasticity): its primary modulus is then a
Prony series (generalised Maxwell model) in the reduced time
:math:`\\xi`, with a time-temperature shift :math:`a_T` (WLF, Arrhenius or none),

.. math:: E(\\xi) = E_\\infty + \\sum_k E_k\\, e^{-\\xi/\\tau_k}, \\qquad
   d\\xi = dt / a_T(T)

integrated per cell with one internal stress per term by the exact exponential
update for a step (Simo and Hughes 1998, ch. 10):
:func:`prony_step`, :func:`prony_algorithmic` (readable) and the kernel steps
:func:`viscoelastic_state`, :func:`viscoelastic_accept`.

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
from scipy.constants import R as _R

from .errors import ActsimInputError
from .units import check_range, finite_array, scalar_or_array

MODULUS_CONSTANT = 0
MODULUS_GLASS = 1
MODULUS_TABLE = 2
#: Time-temperature shift of a relaxing material: none, WLF, Arrhenius, a table of log10 a_T.
SHIFT_NONE = 0
SHIFT_WLF = 1
SHIFT_ARRHENIUS = 2
SHIFT_TABLE = 3
SHIFT_NAMES = ("none", "wlf", "arrhenius", "table")
#: |ln a_T| is clamped here (exp(700) ~ 1e304): beyond it a cell is frozen (glassy) or fully relaxed anyway.
LN_SHIFT_MAX = 700.0
#: Molar gas constant [J mol-1 K-1] (CODATA 2018, exact; the value actsim.kinetics uses).
GAS_CONSTANT = float(_R)
LN10 = math.log(10.0)
#: Strain law of a cell: small strain (linear), hyperelastic under plane stress (beam), under plane strain (plate).
STRAIN_LINEAR = 0
STRAIN_UNIAXIAL = 1
STRAIN_PLANE = 2
#: Scenario names of the strain laws.
STRAIN_LAW_NAMES = ("linear", "neo-hookean", "gent")


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
    return MaterialParams(mod_kind=mod_kind, mod_base=mod_base, mod_ratio=mod_ratio, sec_fac=sec_fac, gl=gl,
                          tab_idx=tab_idx, tab_T=tab_T, tab_logE=tab_logE, network_mod=network_mod,
                          photo_strain=strain, alpha_th=alpha_th, visco_n=visco_n, visco_mod=visco_mod,
                          visco_tau=visco_tau, shift_kind=shift_kind, shift_par=shift_par,
                          shift_tab_idx=shift_tab_idx, shift_tab_T=shift_tab_T, shift_tab_log=shift_tab_log,
                          strain_law=strain_law,
                          extensibility=extensibility)


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

    .. math:: E = E_p + E_n x, \\qquad E e^* = E_p (\\varepsilon_{ph} x + e_{th}) + E_n (x e_{th} + S)

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


# --------------------------------------------------------------------------------------------------------------------
# Linear viscoelasticity: Prony series, time-temperature shift, the exact exponential update
# --------------------------------------------------------------------------------------------------------------------


def prony_relaxation_modulus(*, time, long_term_modulus, moduli, relaxation_times):
    r"""Relaxation modulus of a Prony series (generalised Maxwell model).

    .. math:: E(t) = E_\infty + \sum_k E_k\, e^{-t/\tau_k}

    Parameters
    ----------
    time : float or array_like
        Time since a step strain, >= 0 [s] (reduced time when shifted).
    long_term_modulus : float
        :math:`E_\infty`, the fully relaxed modulus [Pa].
    moduli : array_like, shape (n_term,)
        :math:`E_k` [Pa].
    relaxation_times : array_like, shape (n_term,)
        :math:`\tau_k` [s].

    Returns
    -------
    float or numpy.ndarray
        E(t) [Pa]; :math:`E(0) = E_\infty + \sum_k E_k` is the instantaneous (glassy) modulus.

    References
    ----------
    .. [1] Ferry, J. D. Viscoelastic Properties of Polymers, 3rd ed., Wiley 1980, ch. 3.
    """
    t = np.asarray(time, float)[..., None]
    return scalar_or_array(long_term_modulus + np.sum(np.asarray(moduli) * np.exp(-t / np.asarray(relaxation_times)),
                                                      axis=-1))


def prony_storage_loss(*, angular_frequency, long_term_modulus, moduli, relaxation_times):
    r"""Storage and loss modulus of a Prony series under a sinusoidal strain.

    .. math:: E'(\omega) = E_\infty + \sum_k E_k \frac{\omega^2\tau_k^2}{1 + \omega^2\tau_k^2}, \qquad
       E''(\omega) = \sum_k E_k \frac{\omega\tau_k}{1 + \omega^2\tau_k^2}

    Parameters
    ----------
    angular_frequency : float or array_like
        :math:`\omega = 2\pi f`, >= 0 [rad s-1] (reduced: :math:`\omega a_T` at another temperature).
    long_term_modulus : float
        :math:`E_\infty` [Pa].
    moduli : array_like, shape (n_term,)
        :math:`E_k` [Pa].
    relaxation_times : array_like, shape (n_term,)
        :math:`\tau_k` [s].

    Returns
    -------
    (storage, loss) : float or numpy.ndarray
        E' and E'' [Pa].

    References
    ----------
    .. [1] Ferry, J. D. Viscoelastic Properties of Polymers, 3rd ed., Wiley 1980, ch. 3 (the Maxwell
       element's dynamic moduli; the series is their sum).
    """
    wt = np.asarray(angular_frequency, float)[..., None] * np.asarray(relaxation_times)
    e = np.asarray(moduli)
    storage = long_term_modulus + np.sum(e * wt ** 2 / (1.0 + wt ** 2), axis=-1)
    loss = np.sum(e * wt / (1.0 + wt ** 2), axis=-1)
    return scalar_or_array(storage), scalar_or_array(loss)


def wlf_log_shift(*, temperature, c1, c2, reference_temperature):
    r"""Williams–Landel–Ferry shift, :math:`\log_{10} a_T`.

    .. math:: \log_{10} a_T = -\frac{C_1 (T - T_r)}{C_2 + T - T_r}

    Parameters
    ----------
    temperature : float or array_like
        [K].
    c1 : float
        :math:`C_1` [1] (17.44 about :math:`T_g` for the "universal" constants).
    c2 : float
        :math:`C_2` [K] (51.6 K about :math:`T_g`).
    reference_temperature : float
        :math:`T_r` [K].

    Returns
    -------
    float or numpy.ndarray
        :math:`\log_{10} a_T` [1]; ``+inf`` at and below :math:`T_r - C_2`, where the form diverges
        (taken as no relaxation at all).

    Notes
    -----
    The WLF form holds from about :math:`T_g` to :math:`T_g + 100` K; below :math:`T_g` the shift of a
    real glass grows more slowly (Arrhenius-like). Used below :math:`T_g` it freezes relaxation faster
    than a real glass, which is harmless for a glassy plateau but not for creep well below :math:`T_g`.

    References
    ----------
    .. [1] Williams, M. L., Landel, R. F. and Ferry, J. D. J. Am. Chem. Soc. 77 (1955) 3701–3707.
    """
    d = np.asarray(temperature, float) - reference_temperature
    den = c2 + d
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.where(den > 0.0, -c1 * d / np.where(den > 0.0, den, 1.0), np.inf)
    return scalar_or_array(out)


def arrhenius_log_shift(*, temperature, activation_energy, reference_temperature):
    r"""Arrhenius shift, :math:`\log_{10} a_T`.

    .. math:: \ln a_T = \frac{E_a}{R}\left(\frac{1}{T} - \frac{1}{T_r}\right)

    Parameters
    ----------
    temperature : float or array_like
        [K].
    activation_energy : float
        :math:`E_a` [J mol-1].
    reference_temperature : float
        :math:`T_r` [K].

    Returns
    -------
    float or numpy.ndarray
        :math:`\log_{10} a_T` [1].

    References
    ----------
    .. [1] Ferry, J. D. Viscoelastic Properties of Polymers, 3rd ed., Wiley 1980, ch. 11.
    """
    T = np.asarray(temperature, float)
    return scalar_or_array(activation_energy / GAS_CONSTANT * (1.0 / T - 1.0 / reference_temperature) / LN10)


def table_log_shift(*, temperature, table_temperature, table_log10_shift):
    r"""Tabulated shift, :math:`\log_{10} a_T` piecewise linear in T between the table points, clamped at the ends.

    .. math:: \log_{10} a_T(T) = \log_{10} a_j + \frac{T - T_j}{T_{j+1} - T_j}\,(\log_{10} a_{j+1} - \log_{10} a_j),
              \quad T_j \le T \le T_{j+1}

    and :math:`\log_{10} a_T = \log_{10} a_1` below :math:`T_1`, :math:`\log_{10} a_m` above :math:`T_m`.

    Parameters
    ----------
    temperature : float or array_like
        [K].
    table_temperature : array_like, shape (m,)
        Strictly increasing table temperatures [K].
    table_log10_shift : array_like, shape (m,)
        :math:`\log_{10} a_T` at ``table_temperature`` [1] (e.g. measured by shifting DMA isotherms).

    Returns
    -------
    float or numpy.ndarray
        :math:`\log_{10} a_T` [1].

    References
    ----------
    .. [1] Ferry, J. D. Viscoelastic Properties of Polymers, 3rd ed., Wiley 1980, ch. 11 (shift factors measured
       by superposing isotherms).
    """
    T = np.asarray(temperature, float)
    return scalar_or_array(np.interp(T, np.asarray(table_temperature, float), np.asarray(table_log10_shift, float)))


def reduced_time_step(*, params: MaterialParams, dt, temperature):
    r"""Reduced time step :math:`\Delta\xi = \Delta t / a_T(T)` of every cell (readable path).

    Parameters
    ----------
    params : actsim.material.MaterialParams
        The design's material parameters.
    dt : float
        Time step [s].
    temperature : numpy.ndarray, shape (n_cell,)
        The step's temperature (its midpoint) [K].

    Returns
    -------
    numpy.ndarray, shape (n_cell,)
        :math:`\Delta\xi` [s]; :math:`|\ln a_T|` is clamped at :data:`LN_SHIFT_MAX`.
    """
    p = params
    log10_a = np.zeros(temperature.shape)
    wlf = p.shift_kind == SHIFT_WLF
    arr = p.shift_kind == SHIFT_ARRHENIUS
    for i in np.nonzero(p.shift_kind == SHIFT_TABLE)[0]:
        j = p.shift_tab_idx[i]
        log10_a[i] = table_log_shift(temperature=temperature[i], table_temperature=p.shift_tab_T[j],
                                     table_log10_shift=p.shift_tab_log[j] / LN10)
    if wlf.any():
        log10_a[wlf] = wlf_log_shift(temperature=temperature[wlf], c1=p.shift_par[wlf, 0], c2=p.shift_par[wlf, 1],
                                     reference_temperature=p.shift_par[wlf, 2])
    if arr.any():
        log10_a[arr] = arrhenius_log_shift(temperature=temperature[arr],
                                           activation_energy=p.shift_par[arr, 0] * GAS_CONSTANT,
                                           reference_temperature=p.shift_par[arr, 1])
    ln_a = np.clip(log10_a * LN10, -LN_SHIFT_MAX, LN_SHIFT_MAX)
    return dt * np.exp(-ln_a)


def _prony_factors(moduli, relaxation_times, reduced_dt):
    """exp(-a) and the algorithmic factor E_k (1 - exp(-a)) / a of each term, a = dxi / tau (a = 0: 1, E_k)."""
    a = np.asarray(reduced_dt, float)[..., None] / relaxation_times
    decay = np.exp(-a)
    with np.errstate(divide="ignore", invalid="ignore"):
        g = np.where(a > 0.0, -np.expm1(-a) / np.where(a > 0.0, a, 1.0), 1.0)
    return decay, moduli * g


def prony_algorithmic(*, history, strain_old, moduli, relaxation_times, reduced_dt):
    r"""Algorithmic modulus and history stress of one step of the exact exponential update.

    For a strain linear in (reduced) time over the step, the stress at its end is

    .. math:: \sigma_{n+1} = E_\infty e_{n+1} + \sum_k h_{k,n+1} = E_{alg}\, e_{n+1} + s_{hist},
       \qquad E_{alg} = E_\infty + \sum_k E_k g_k, \qquad
       s_{hist} = \sum_k \left(e^{-a_k} h_{k,n} - E_k g_k e_n\right)

    with :math:`a_k = \Delta\xi/\tau_k` and :math:`g_k = (1 - e^{-a_k})/a_k` (:math:`g_k = 1` at
    :math:`a_k = 0`). This function returns the Prony part :math:`\sum_k E_k g_k` of :math:`E_{alg}`
    (without :math:`E_\infty`) and :math:`s_{hist}`.

    Parameters
    ----------
    history : numpy.ndarray, shape (n_cell, n_term)
        :math:`h_{k,n}`, the stress of each Maxwell element at the start [Pa].
    strain_old : numpy.ndarray, shape (n_cell,)
        Mechanical strain :math:`e_n` at the start [1].
    moduli : numpy.ndarray, shape (n_cell, n_term)
        :math:`E_k` [Pa].
    relaxation_times : numpy.ndarray, shape (n_cell, n_term)
        :math:`\tau_k` at the reference temperature [s].
    reduced_dt : numpy.ndarray, shape (n_cell,)
        :math:`\Delta\xi` [s].

    Returns
    -------
    (modulus, history_stress) : numpy.ndarray, shape (n_cell,)
        :math:`\sum_k E_k g_k` [Pa] and :math:`s_{hist}` [Pa].

    References
    ----------
    .. [1] Simo, J. C. and Hughes, T. J. R. Computational Inelasticity, Springer 1998, sec. 10.3.
    """
    decay, eg = _prony_factors(moduli, relaxation_times, reduced_dt)
    return eg.sum(axis=1), np.sum(decay * history - eg * np.asarray(strain_old)[:, None], axis=1)


def prony_step(*, history, strain_old, strain_new, moduli, relaxation_times, reduced_dt):
    r"""The Maxwell elements' stresses after one step: the exact update for a strain linear in the step.

    .. math:: h_{k,n+1} = e^{-a_k} h_{k,n} + E_k \frac{1 - e^{-a_k}}{a_k} (e_{n+1} - e_n),
       \qquad a_k = \Delta\xi / \tau_k

    Exact for any step when the strain is linear in reduced time over it (the convolution integral of
    :math:`E_k e^{-(\xi - \xi')/\tau_k}` with a constant strain rate), hence unconditionally stable and
    second order for a smooth strain history. A zero step (:math:`a_k = 0`) is an instantaneous strain
    jump: :math:`h_k` grows by :math:`E_k\,\Delta e` (the glassy response).

    Parameters
    ----------
    history : numpy.ndarray, shape (n_cell, n_term)
        :math:`h_{k,n}` [Pa].
    strain_old, strain_new : numpy.ndarray, shape (n_cell,)
        Mechanical strain at the start and the end of the step [1].
    moduli, relaxation_times : numpy.ndarray, shape (n_cell, n_term)
        :math:`E_k` [Pa], :math:`\tau_k` [s].
    reduced_dt : numpy.ndarray, shape (n_cell,)
        :math:`\Delta\xi` [s].

    Returns
    -------
    numpy.ndarray, shape (n_cell, n_term)
        :math:`h_{k,n+1}` [Pa].

    References
    ----------
    .. [1] Simo, J. C. and Hughes, T. J. R. Computational Inelasticity, Springer 1998, sec. 10.3.
    .. [2] Taylor, R. L., Pister, K. S. and Goudreau, G. L. "Thermomechanical analysis of viscoelastic
       solids." Int. J. Numer. Meth. Engng 2 (1970) 45–59.
    """
    decay, eg = _prony_factors(moduli, relaxation_times, reduced_dt)
    return decay * history + eg * (np.asarray(strain_new) - np.asarray(strain_old))[:, None]


def viscoelastic_section_state(*, params: MaterialParams, conversion, temperature_old, temperature_new, dt, history,
                               strain_old, reference_temperature):
    """Prony contributions to E and E e* of every cell for a step of dt (readable path of :func:`viscoelastic_state`).

    The primary network's stress at the step's end is :math:`E_{alg} e_{mech} + s_{hist}` with
    :math:`e_{mech} = e - \\varepsilon_{ph} x - e_{th}`, so in the section's form
    :math:`\\sigma = E e - E e^*` the Prony terms add :math:`f\\sum_k E_k g_k` to E and
    :math:`f\\sum_k E_k g_k\\,(\\varepsilon_{ph}x + e_{th}) - s_{hist}` to E e*, where
    :math:`f = 1 + (E_B/E_A - 1) x` scales every term with conversion as it scales :math:`E_\\infty`.
    The shift is taken at the step's midpoint temperature; ``dt = 0`` gives the instantaneous state.

    Parameters
    ----------
    params : actsim.material.MaterialParams
        The design's material parameters.
    conversion : numpy.ndarray, shape (n_cell,)
        x at the step's end [1].
    temperature_old, temperature_new : numpy.ndarray, shape (n_cell,)
        T at the start and the end [K].
    dt : float
        Step [s].
    history : numpy.ndarray, shape (n_cell, n_term)
        :math:`h_k` at the start [Pa].
    strain_old : numpy.ndarray, shape (n_cell,)
        Mechanical strain of the primary network at the start [1].
    reference_temperature : float
        Zero of the thermal strain [K].

    Returns
    -------
    (modulus, modulus_times_eigenstrain) : numpy.ndarray, shape (n_cell,)
        What the Prony terms add to E [Pa] and to E e* [Pa] (0 in elastic cells).
    """
    p = params
    on = p.visco_n > 0
    f = 1.0 + (p.mod_ratio - 1.0) * np.asarray(conversion)
    dxi = reduced_time_step(params=p, dt=dt, temperature=0.5 * (temperature_old + temperature_new))
    e_alg, s_hist = prony_algorithmic(history=history, strain_old=strain_old, moduli=f[:, None] * p.visco_mod,
                                      relaxation_times=p.visco_tau, reduced_dt=dxi)
    e_star = p.photo_strain * conversion + p.alpha_th * (temperature_new - reference_temperature)
    return np.where(on, e_alg, 0.0), np.where(on, e_alg * e_star - s_hist, 0.0)


@njit(cache=True)
def interp_clamped_nb(x, xs, ys):
    """Piecewise-linear interpolation of ``ys`` at ``x`` over strictly increasing ``xs``, clamped at the ends.

    Parameters
    ----------
    x : float
        Where to interpolate [unit of ``xs``].
    xs : numpy.ndarray, shape (m,)
        Strictly increasing abscissae [unit of x].
    ys : numpy.ndarray, shape (m,)
        Values at ``xs`` [unit of the result].
    """
    m = xs.shape[0]
    if x <= xs[0]:
        return ys[0]
    if x >= xs[m - 1]:
        return ys[m - 1]
    lo = 0
    hi = m - 1
    while hi - lo > 1:  # bisection for xs[lo] <= x < xs[hi]
        mid = (lo + hi) // 2
        if xs[mid] <= x:
            lo = mid
        else:
            hi = mid
    f = (x - xs[lo]) / (xs[hi] - xs[lo])
    return ys[lo] + f * (ys[hi] - ys[lo])


@njit(cache=True)
def log_shift_nb(kind, par, T, tab_T, tab_log):
    """Natural log of the shift factor a_T of one cell, clamped to +-LN_SHIFT_MAX (kernel step) [1].

    Parameters
    ----------
    kind : int
        SHIFT_NONE, SHIFT_WLF, SHIFT_ARRHENIUS or SHIFT_TABLE.
    par : numpy.ndarray, shape (3,)
        The cell's row of ``MaterialParams.shift_par``: WLF C1 [1], C2 [K], T_r [K]; Arrhenius E_a/R [K], T_r [K].
    T : float
        Temperature [K].
    tab_T, tab_log : numpy.ndarray, shape (m,)
        The cell's rows of ``MaterialParams.shift_tab_T`` [K] and ``shift_tab_log`` (ln a_T) [1]; used by
        SHIFT_TABLE only (piecewise linear in ln a_T, clamped at the end values).
    """
    if kind == SHIFT_WLF:
        d = T - par[2]
        den = par[1] + d
        if den <= 0.0:
            return LN_SHIFT_MAX
        v = -LN10 * par[0] * d / den
    elif kind == SHIFT_ARRHENIUS:
        v = par[0] * (1.0 / T - 1.0 / par[1])
    elif kind == SHIFT_TABLE:
        v = interp_clamped_nb(T, tab_T, tab_log)
    else:
        return 0.0
    return min(max(v, -LN_SHIFT_MAX), LN_SHIFT_MAX)


@njit(cache=True)
def viscoelastic_state(x, T0, T1, dt, H, ev, mat, T_ref, E_out, Ee_out, Ev_out):
    """Kernel step: add the Prony terms' algorithmic modulus and history stress to E and E e* (in place).

    For a step of ``dt`` from the internal state (H, ev) to conversion ``x`` and temperature ``T1``,
    the shift at the midpoint temperature; ``dt = 0`` gives the instantaneous state
    (:func:`viscoelastic_section_state` is the readable version). Call after :func:`material_state`.

    Parameters
    ----------
    x, T0, T1 : numpy.ndarray, shape (n_cell,)
        Conversion at the end [1], temperature at the start and the end [K].
    dt : float
        [s].
    H : numpy.ndarray, shape (n_cell, n_term)
        Maxwell element stresses at the start [Pa].
    ev : numpy.ndarray, shape (n_cell,)
        Mechanical strain of the primary network at the start [1].
    mat : actsim.material.MaterialParams
    T_ref : float
        Zero of the thermal strain [K].
    E_out, Ee_out : numpy.ndarray, shape (n_cell,)
        E [Pa] and E e* [Pa], added to.
    Ev_out : numpy.ndarray, shape (n_cell,)
        Set to f sum_k E_k (g_k - 1) [Pa] (<= 0; 0 in elastic cells and for dt = 0): the relaxed part of the
        Prony terms' modulus, which acts on the cell-centre strain only
        (:func:`actsim.mechanics.section_solve_centred`), like the history stress; so the strain's variation
        across a cell always meets the instantaneous modulus, whatever the step.
    """
    for i in range(x.size):
        n = mat.visco_n[i]
        Ev_out[i] = 0.0
        if n == 0:
            continue
        f = 1.0 + (mat.mod_ratio[i] - 1.0) * x[i]
        dxi = dt * math.exp(-log_shift_nb(mat.shift_kind[i], mat.shift_par[i], 0.5 * (T0[i] + T1[i]),
                                           mat.shift_tab_T[mat.shift_tab_idx[i]],
                                           mat.shift_tab_log[mat.shift_tab_idx[i]]))
        e_alg = 0.0
        e_glassy = 0.0
        s_hist = 0.0
        for k in range(n):
            a = dxi / mat.visco_tau[i, k]
            g = -math.expm1(-a) / a if a > 0.0 else 1.0
            ek = f * mat.visco_mod[i, k] * g
            e_alg += ek
            e_glassy += f * mat.visco_mod[i, k]
            s_hist += math.exp(-a) * H[i, k] - ek * ev[i]
        e_star = mat.photo_strain[i] * x[i] + mat.alpha_th[i] * (T1[i] - T_ref)
        E_out[i] += e_alg
        Ee_out[i] += e_alg * e_star - s_hist
        Ev_out[i] = e_alg - e_glassy


@njit(cache=True)
def viscoelastic_strain(x, e_mech, mat, out):
    """Mechanical strain of the primary network, e - e_th - eps_ph x, of the relaxing cells (kernel step) [1].

    Parameters
    ----------
    x : numpy.ndarray, shape (n_cell,)
        Conversion [1].
    e_mech : numpy.ndarray, shape (n_cell,)
        Strain less the thermal strain (:func:`mechanical_strain`) [1].
    mat : actsim.material.MaterialParams
    out : numpy.ndarray, shape (n_cell,)
        Output (0 in elastic cells) [1].
    """
    for i in range(x.size):
        out[i] = e_mech[i] - mat.photo_strain[i] * x[i] if mat.visco_n[i] > 0 else 0.0


@njit(cache=True)
def viscoelastic_error(ev, ev_new, rate, dt):
    """Largest distance of the new primary strain from its linear extrapolation, max |e_new - e - rate dt| [1].

    The exact update assumes a strain linear in time over the step; this first-order predictor's miss is
    O(dt^2 e''), the local error estimate of the viscoelastic part (cells that do not relax have e = 0).

    Parameters
    ----------
    ev, ev_new : numpy.ndarray, shape (n_cell,)
        Primary mechanical strain at the start and the end of the step [1].
    rate : numpy.ndarray, shape (n_cell,)
        Its rate over the previous accepted step (0 after a jump) [s-1].
    dt : float
        [s].
    """
    err = 0.0
    for i in range(ev.size):
        d = abs(ev_new[i] - ev[i] - rate[i] * dt)
        if d > err:
            err = d
    return err


@njit(cache=True)
def viscoelastic_accept(x, T0, T1, dt, H, ev, ev_new, rate, mat):
    """Kernel step of :func:`prony_step` for an accepted step: H, ev and the strain rate in place.

    Parameters
    ----------
    x, T0, T1 : numpy.ndarray, shape (n_cell,)
        Conversion at the end [1], temperature at the start and the end [K].
    dt : float
        [s]; 0 is an instantaneous jump (the rate is then reset to 0).
    H : numpy.ndarray, shape (n_cell, n_term)
        Maxwell element stresses [Pa], updated.
    ev : numpy.ndarray, shape (n_cell,)
        Primary mechanical strain [1], set to ``ev_new``.
    ev_new : numpy.ndarray, shape (n_cell,)
        Primary mechanical strain at the end [1].
    rate : numpy.ndarray, shape (n_cell,)
        Strain rate of the step [s-1], set.
    mat : actsim.material.MaterialParams
    """
    for i in range(x.size):
        n = mat.visco_n[i]
        if n == 0:
            continue
        f = 1.0 + (mat.mod_ratio[i] - 1.0) * x[i]
        dxi = dt * math.exp(-log_shift_nb(mat.shift_kind[i], mat.shift_par[i], 0.5 * (T0[i] + T1[i]),
                                           mat.shift_tab_T[mat.shift_tab_idx[i]],
                                           mat.shift_tab_log[mat.shift_tab_idx[i]]))
        de = ev_new[i] - ev[i]
        for k in range(n):
            a = dxi / mat.visco_tau[i, k]
            g = -math.expm1(-a) / a if a > 0.0 else 1.0
            H[i, k] = math.exp(-a) * H[i, k] + f * mat.visco_mod[i, k] * g * de
        rate[i] = de / dt if dt > 0.0 else 0.0
        ev[i] = ev_new[i]


# --------------------------------------------------------------------------------------------------------------------
# Large strain: incompressible neo-Hookean and Gent layers
# --------------------------------------------------------------------------------------------------------------------


def hyperelastic_stress(*, stretch, eigenstretch=1.0, shear_modulus, section="beam", extensibility=None):
    r"""Axial Cauchy stress of an incompressible neo-Hookean or Gent layer along the strip.

    The elastic stretch is :math:`\lambda_e = \lambda / \lambda_s` (the eigenstretch
    :math:`\lambda_s = 1 + e^*` is isochoric). Under plane stress (``"beam"``: the transverse
    faces free, uniaxial) and plane strain across the width (``"plate"``: the width held,
    :math:`\lambda_2 = 1`):

    .. math:: \sigma_\mathrm{beam} = \mu\, g\, (\lambda_e^2 - \lambda_e^{-1}), \qquad
       \sigma_\mathrm{plate} = \mu\, g\, (\lambda_e^2 - \lambda_e^{-2}), \qquad
       g = \frac{J_m}{J_m - (I_1 - 3)}

    with :math:`I_1 = \lambda_e^2 + 2/\lambda_e` (beam) or :math:`\lambda_e^2 + 1 + \lambda_e^{-2}`
    (plate), and g = 1 for neo-Hookean (:math:`J_m \to \infty`). The nominal stress (force per
    undeformed area) is :math:`\sigma/\lambda`.

    Parameters
    ----------
    stretch : float or array_like
        Total stretch along the strip, lambda > 0 [1].
    eigenstretch : float or array_like
        lambda_s = 1 + eigenstrain, > 0 [1].
    shear_modulus : float or array_like
        mu, the small-strain shear modulus (Young's modulus E = 3 mu) [Pa].
    section : str
        ``"beam"`` (plane stress) or ``"plate"`` (plane strain across the width).
    extensibility : float, optional
        Gent's J_m > 0, the largest I_1 - 3 [1]; None: neo-Hookean.

    Returns
    -------
    float or numpy.ndarray
        Cauchy (true) stress along the strip [Pa]; ``inf`` at and past the Gent limit.

    References
    ----------
    .. [1] Treloar, L. R. G. The Physics of Rubber Elasticity, 3rd ed., Clarendon Press 1975, ch. 4 and 5.
    .. [2] Gent, A. N. "A new constitutive relation for rubber." Rubber Chem. Technol. 69 (1996) 59–61.
    """
    lam = np.asarray(stretch, float) / np.asarray(eigenstretch, float)
    if section == "plate":
        i1, core = lam**2 + 1.0 + lam**-2 - 3.0, lam**2 - lam**-2
    else:
        i1, core = lam**2 + 2.0 / lam - 3.0, lam**2 - 1.0 / lam
    g = 1.0
    if extensibility is not None:
        with np.errstate(divide="ignore"):
            g = np.where(i1 < extensibility, extensibility / (extensibility - i1), np.inf)
    return scalar_or_array(np.asarray(shear_modulus) * g * core)


@njit(cache=True)
def hyper_stress_nb(u, law, jm):
    """Normalised Cauchy stress f of a hyperelastic cell at the elastic strain u = lambda_e - 1, and df/dlambda_e.

    The stress is the section modulus times f, f'(1) = 1: beam (plane stress) f = g (lam^2 - 1/lam) / 3, plate
    (plane strain) f = g (lam^2 - lam^-2) / 4, with Gent's g = J_m / (J_m - (I_1 - 3)) (g = 1 when ``jm`` is 0:
    neo-Hookean); see :func:`hyperelastic_stress`. Written in u (lam^2 - 1/lam = u (3 + 3u + u^2) / lam,
    lam^2 - lam^-2 = u (2 + u)(1 + lam^2) / lam^2), so a tiny strain loses no digits to cancellation.

    Parameters
    ----------
    u : float
        Elastic strain lambda_e - 1 [1].
    law : int
        STRAIN_UNIAXIAL or STRAIN_PLANE.
    jm : float
        Gent's J_m [1]; 0: neo-Hookean.

    Returns
    -------
    (f, df) : float
        [1], [1]; ``inf`` past the Gent limit or for lambda_e <= 0.
    """
    lam = 1.0 + u
    if lam <= 0.0:
        return math.inf, math.inf
    if law == STRAIN_PLANE:
        p = u * (2.0 + u) * (1.0 + lam * lam) / (lam * lam)  # lam^2 - lam^-2
        core = p / 4.0
        dcore = (2.0 * lam + 2.0 / (lam * lam * lam)) / 4.0
        q = u * (2.0 + u) / lam  # lam - 1/lam
        i1 = q * q
        di1 = 2.0 * p / lam
    else:
        p = u * (3.0 + 3.0 * u + u * u) / lam  # lam^2 - 1/lam
        core = p / 3.0
        dcore = (2.0 * lam + 1.0 / (lam * lam)) / 3.0
        i1 = u * u * (3.0 + u) / lam
        di1 = 2.0 * p / lam
    if jm == 0.0:
        return core, dcore
    if i1 >= jm:
        return math.inf, math.inf
    g = jm / (jm - i1)
    return g * core, g * dcore + g * g / jm * di1 * core


@njit(cache=True)
def hyper_state(x, T, S, mat, T_ref, E, hs):
    """Per-cell state of the hyperelastic cells, after :func:`material_state` filled ``E``.

    Rows of ``hs``: section modulus of the primary network C_p [Pa], its eigenstrain
    e_s = e_ph x + e_th (eigenstretch 1 + e_s) [1], the light network's section modulus times its density
    C_n x [Pa], and the strain at which that network is stress-free, e_n = S / x + e_th [1] (0 where no
    network has formed). Linear cells are left alone.

    Parameters
    ----------
    x, T, S : numpy.ndarray, shape (n_cell,)
        Conversion [1], temperature [K], network-weighted formation strain [1].
    mat : actsim.material.MaterialParams
    T_ref : float
        Zero of the thermal strain [K].
    E : numpy.ndarray, shape (n_cell,)
        Section modulus from :func:`material_state` [Pa].
    hs : numpy.ndarray, shape (4, n_cell)
        Output: C_p [Pa], e_s [1], C_n x [Pa], e_n [1].
    """
    for i in range(x.size):
        if mat.strain_law[i] == STRAIN_LINEAR:
            continue
        e_th = mat.alpha_th[i] * (T[i] - T_ref)
        cn = mat.network_mod[i] * x[i]
        hs[0, i] = E[i] - cn
        hs[1, i] = mat.photo_strain[i] * x[i] + e_th
        hs[2, i] = cn
        hs[3, i] = S[i] / x[i] + e_th if x[i] > 0.0 else 0.0
