r"""Heat stage: conduction across the strip's thickness, with the absorbed light as source.

The strip is cut into cells ``i = 0 .. n-1`` from the bottom face (z = 0) to the top face (z = h),
with widths ``dz[i]`` (non-uniform allowed, so each layer can have its own cells). Each cell carries
a conductivity ``k[i]`` [W/(m K)], a volumetric heat capacity ``rho_c[i]`` (density times specific
heat) [J/(m^3 K)] and a volumetric heat source ``q[i]`` [W/m^3] (the absorbed optical power density,
averaged over the cell). Both faces lose heat to their own ambient through a coefficient ``h``
[W/(m^2 K)] (convection, plus linearised radiation if wanted).

Conventions
-----------
* The finite-volume balance of cell ``i`` is

  .. math::

     \rho c_i \,\Delta z_i \,\frac{dT_i}{dt} = G_{i-1/2}(T_{i-1}-T_i) + G_{i+1/2}(T_{i+1}-T_i) + q_i\,\Delta z_i ,

  with the series conductance between cell centres
  :math:`G_{i+1/2} = 1/(\Delta z_i/(2k_i) + \Delta z_{i+1}/(2k_{i+1}))` [W/(m^2 K)], and at the faces
  :math:`G = 1/(1/h + \Delta z/(2k))` to the ambient temperature (``h = 0``: insulated; ``h = inf``:
  the face is held at the ambient temperature).
* The source enters each cell as the cell average ``q[i]`` [W/m^3]; the cell absorbs ``q[i]*dz[i]``
  [W/m^2]. A flux ``q0`` [W/m^2] prescribed on a face is, in this discretisation, *exactly* the same as
  a source ``q0/dz`` in the cell next to that face.
* Face losses are positive when heat leaves the strip (strip to ambient), in W/m^2.
* The numba kernels (``face_conductances``, the factored conduction steps,
  :func:`trbdf2_error`, ``face_heat_loss``, ``face_temperatures`` and the ``*_nb``
  radiation coefficient) take float64 arrays and floats only, do not check their inputs and do not allocate, so
  the solver kernel can call them every step. The readable path (input checks, numpy/scipy steps,
  a steady solve, a marching driver) is in :mod:`actsim.thermal_reference`, for tests and scripts.

Time steppers and ringing
-------------------------
Crank–Nicolson (theta = 1/2) is second order and unconditionally stable, but not L-stable: a mode with
decay rate lambda is multiplied per step by :math:`(1-\lambda\Delta t/2)/(1+\lambda\Delta t/2)`, which
tends to -1 for :math:`\lambda\Delta t \gg 1`. With sharp initial data (a step in temperature, a face
suddenly switched to a new ambient, light switched on in a thin absorbing skin) and
``dt >> rho_c dz^2 / k`` the short-wavelength part of the error flips sign every step and decays
slowly: the profile rings. Measured here (``tests/test_thermal.py::test_crank_nicolson_rings_trbdf2_does_not``,
40 cells, ``dt = 100 rho_c dz^2/k``): with the top face suddenly held at an ambient 10 K below the
strip, the cell next to the face falls 8.6 K *below* the new ambient after the first step, the error
there changes sign every step, and after ten steps the largest error is still 65 % of the step. A
hot/cold step inside an insulated strip (measured while writing this module, not a test) gives an
error of 44 % of the step at the jump that alternates in sign and is 33 % after ten steps. TR-BDF2 (:func:`actsim.thermal_reference.trbdf2_step`) is second order and L-stable: in the same
runs it undershoots by 1.8 % of the step once and its error is below 0.2 % after four steps.
Backward Euler (``thermal_reference.theta_step`` with ``theta = 1``) is first order but obeys a discrete maximum
principle (its matrix is an M-matrix), so it never leaves the physical bounds. Use Crank–Nicolson for smooth forcing with ``dt`` of the order of the cell diffusion time,
TR-BDF2 when light switches on and off in steps much longer than that.

Safety
------
The model predicts temperatures of a thin strip under light. Near skin, a warm surface can burn well
below the temperatures that damage polymers: judge contact temperatures against the applicable
standard for touchable surfaces (for example the limits for hot surfaces of equipment in the relevant
ISO/IEC safety standards) and do not rely on this model alone.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
from numba import njit
from scipy.constants import Stefan_Boltzmann as _SIGMA_SB

from .errors import ActsimInputError
from .units import check_range, finite_array, scalar_or_array

__all__ = [
    "WORK_ROWS",
    "make_work",
    "face_conductances",
    "face_heat_loss",
    "face_temperatures",
    "linearised_radiation_coefficient",
    "linearised_radiation_coefficient_nb",
]

#: Rows of the scratch array every stepper accepts (``work.shape == (WORK_ROWS, n)``).
#: ``thermal_reference.theta_step`` uses rows 0-3, ``steady_temperature`` rows 0-4, ``trbdf2_step`` rows 0-5.
WORK_ROWS = 6

#: TR-BDF2 stage fraction gamma = 2 - sqrt(2) (Hosea & Shampine 1996): both stages then share one matrix.
TRBDF2_GAMMA = 2.0 - math.sqrt(2.0)

_STEFAN_BOLTZMANN = float(_SIGMA_SB)


HEAT_OFF = 0
HEAT_CN = 1
HEAT_TRBDF2 = 2


class HeatParams(NamedTuple):
    """What the heat stage needs of one design, SI.

    Attributes
    ----------
    mode : int
        HEAT_OFF, HEAT_CN (Crank–Nicolson) or HEAT_TRBDF2.
    k_cond : numpy.ndarray, shape (n_cell,)
        Conductivity [W m-1 K-1].
    rho_c : numpy.ndarray, shape (n_cell,)
        Volumetric heat capacity [J m-3 K-1].
    heat_frac : numpy.ndarray, shape (n_cell,)
        Fraction of the absorbed light turned into heat [1].
    T_ref : float
        Reference temperature of thermal strain and back-reaction rate [K] (the ambient without heat).
    T0 : numpy.ndarray, shape (n_cell,)
        Initial temperature [K].
    """

    mode: int
    k_cond: np.ndarray
    rho_c: np.ndarray
    heat_frac: np.ndarray
    T_ref: float
    T0: np.ndarray


def heat_params(scenario, grid, schedule) -> HeatParams:
    """Heat parameters of a scenario.

    Refuses Crank–Nicolson steps longer than 50 cell diffusion times (the
    scheme rings there; TR-BDF2 is L-stable).

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
        The validated scenario (SI).
    grid : actsim.grid.Grid
        The cell grid.
    schedule : actsim.schedule.Schedule
        The segments (their time steps).
    """
    heat = scenario.heat
    k_cond = np.array([layer.material.conductivity for layer in scenario.layers])[grid.layer_index]
    rho_c = np.array([layer.material.density * layer.material.specific_heat for layer in scenario.layers])[grid.layer_index]
    heat_frac = np.array([layer.material.heat_fraction for layer in scenario.layers])[grid.layer_index]
    mode = HEAT_OFF if not heat.enabled else (HEAT_CN if heat.scheme == "crank-nicolson" else HEAT_TRBDF2)
    T_ref = heat.reference_temperature if heat.enabled else heat.ambient_temperature
    T0 = np.full(grid.dz.size, scenario.protocol[0].ambient_top if heat.enabled else T_ref)
    if mode == HEAT_CN:
        rate = np.max(k_cond / (rho_c * grid.dz**2))
        fourier = float(schedule.seg_dt.max() * rate)
        if fourier > 50.0:
            raise ActsimInputError(
                f"time.step: {schedule.seg_dt.max():g} s is {fourier:.3g} cell diffusion times, too long for heat.scheme = "
                f"'crank-nicolson' (allowed <= 50, i.e. step <= {50.0 / float(rate):.3g} s); use heat.scheme = 'tr-bdf2' (L-stable)"
            )
    return HeatParams(mode=mode, k_cond=k_cond, rho_c=rho_c, heat_frac=heat_frac, T_ref=float(T_ref), T0=T0)


@njit(cache=True)
def heat_source(absorbed, beam_emol, dz, heat_frac, out):
    """Absorbed optical power turned into heat, per unit volume, into ``out`` [W m-3].

    .. math:: q_i = f_{heat,i} \\sum_b a_{i,b} E_{mol,b} / \\Delta z_i

    Parameters
    ----------
    absorbed : numpy.ndarray, shape (n_cell, n_beam)
        Photon flux absorbed per cell [mol m-2 s-1].
    beam_emol : numpy.ndarray, shape (n_beam,)
        Molar photon energy of each beam [J mol-1].
    dz : numpy.ndarray, shape (n_cell,)
        Cell widths [m].
    heat_frac : numpy.ndarray, shape (n_cell,)
        Fraction turned into heat [1].
    out : numpy.ndarray, shape (n_cell,)
        Output [W m-3].
    """
    n_cell, n_beam = absorbed.shape
    for i in range(n_cell):
        p = 0.0
        for b in range(n_beam):
            p += absorbed[i, b] * beam_emol[b]
        out[i] = heat_frac[i] * p / dz[i]


def make_work(n: int) -> np.ndarray:
    """Scratch array for the steppers, shape ``(WORK_ROWS, n)``, float64.

    Parameters
    ----------
    n : int
        Number of cells.
    """
    return np.empty((WORK_ROWS, int(n)), dtype=np.float64)


# ----------------------------------------------------------------------------------------------
# numba kernels
# ----------------------------------------------------------------------------------------------


@njit(cache=True)
def interior_conductance(dz, k, i):
    """Series conductance from the centre of cell i to the centre of cell i+1 [W/(m^2 K)].

    .. math:: G_{i+1/2} = \\left(\\frac{\\Delta z_i}{2k_i} + \\frac{\\Delta z_{i+1}}{2k_{i+1}}\\right)^{-1}

    Parameters
    ----------
    dz : ndarray, shape (n,)
        Cell widths [m].
    k : ndarray, shape (n,)
        Conductivities [W/(m K)].
    i : int
        Index of the lower cell of the pair.
    """
    return 1.0 / (0.5 * dz[i] / k[i] + 0.5 * dz[i + 1] / k[i + 1])


@njit(cache=True)
def face_conductance(h, dz_cell, k_cell):
    r"""Conductance from the ambient through the film coefficient and half the face cell.

    .. math:: G = \left(\frac{1}{h} + \frac{\Delta z}{2k}\right)^{-1}

    Parameters
    ----------
    h : float
        Surface coefficient; <= 0 means insulated, ``inf`` a face held at the ambient [W/(m^2 K)].
    dz_cell : float
        Width of the face cell [m].
    k_cell : float
        Its conductivity [W/(m K)].

    Returns
    -------
    float
        [W/(m^2 K)].
    """
    if h <= 0.0:
        return 0.0
    return 1.0 / (1.0 / h + 0.5 * dz_cell / k_cell)


@njit(cache=True)
def face_conductances(dz, k, h_bottom, h_top, out_interior, out_faces):
    r"""Finite-volume conductances between cell centres and from the two faces' ambients.

    .. math::

       G_{i+1/2} = \left(\frac{\Delta z_i}{2k_i} + \frac{\Delta z_{i+1}}{2k_{i+1}}\right)^{-1},\qquad
       G_\mathrm{face} = \left(\frac{1}{h} + \frac{\Delta z}{2k}\right)^{-1}

    Parameters
    ----------
    dz : ndarray, shape (n,)
        Cell widths, bottom to top [m].
    k : ndarray, shape (n,)
        Cell conductivities [W/(m K)].
    h_bottom, h_top : float
        Surface coefficients at z = 0 and z = h; 0 means insulated, ``inf`` a face held at the
        ambient temperature [W/(m^2 K)].
    out_interior : ndarray, shape (n-1,)
        Receives :math:`G_{i+1/2}` between cells i and i+1 [W/(m^2 K)].
    out_faces : ndarray, shape (2,)
        Receives (G_bottom, G_top) [W/(m^2 K)].

    References
    ----------
    S. V. Patankar, *Numerical Heat Transfer and Fluid Flow*, Hemisphere, 1980, sec. 4.2 (harmonic
    interface conductivity; from memory).
    """
    n = dz.shape[0]
    for i in range(n - 1):
        out_interior[i] = interior_conductance(dz, k, i)
    out_faces[0] = face_conductance(h_bottom, dz[0], k[0])
    out_faces[1] = face_conductance(h_top, dz[n - 1], k[n - 1])


@njit(cache=True)
def face_heat_loss(T, dz, k, h_bottom, T_amb_bottom, h_top, T_amb_top):
    r"""Heat flux leaving the strip through each face, consistent with the discretisation.

    .. math::

       \dot q_\mathrm{bottom} = G_\mathrm{bottom}\,(T_0 - T_{\infty,b}),\qquad
       \dot q_\mathrm{top} = G_\mathrm{top}\,(T_{n-1} - T_{\infty,t})

    Parameters
    ----------
    T : ndarray, shape (n,)
        Cell temperatures [K].
    dz : ndarray, shape (n,)
        Cell widths [m].
    k : ndarray, shape (n,)
        Cell conductivities [W/(m K)].
    h_bottom : float
        Surface coefficient at z = 0 [W/(m^2 K)].
    T_amb_bottom : float
        Ambient temperature below the strip [K].
    h_top : float
        Surface coefficient at z = h [W/(m^2 K)].
    T_amb_top : float
        Ambient temperature above the strip [K].

    Returns
    -------
    loss_bottom, loss_top : float
        Positive when heat leaves the strip [W/m^2].

    Notes
    -----
    Integrated over a step with the same weights as the stepper (trapezoid for Crank–Nicolson), these
    losses close the energy balance of the stepper to round-off.

    References
    ----------
    F. P. Incropera, D. P. DeWitt, T. L. Bergman and A. S. Lavine, *Fundamentals of Heat and Mass
    Transfer*, 6th ed., Wiley, 2007, sec. 1.3 (surface energy balance) and sec. 3.1 (thermal resistance).
    """
    n = T.shape[0]
    gb = face_conductance(h_bottom, dz[0], k[0])
    gt = face_conductance(h_top, dz[n - 1], k[n - 1])
    return gb * (T[0] - T_amb_bottom), gt * (T[n - 1] - T_amb_top)


@njit(cache=True)
def face_temperatures(T, dz, k, h_bottom, T_amb_bottom, h_top, T_amb_top):
    r"""Surface temperatures of the two faces, from the half-cell resistance.

    .. math::

       T_s = T_\mathrm{cell} - \dot q_\mathrm{loss}\,\frac{\Delta z}{2k}

    Parameters
    ----------
    T : ndarray, shape (n,)
        Cell temperatures [K].
    dz : ndarray, shape (n,)
        Cell widths [m].
    k : ndarray, shape (n,)
        Cell conductivities [W/(m K)].
    h_bottom, T_amb_bottom, h_top, T_amb_top : float
        As in :func:`face_heat_loss` [W/(m^2 K)], [K].

    Returns
    -------
    T_surface_bottom, T_surface_top : float
        [K]. With an insulated face this is the adjacent cell temperature.

    References
    ----------
    F. P. Incropera et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley, 2007, sec. 3.1.
    """
    n = T.shape[0]
    lb, lt = face_heat_loss(T, dz, k, h_bottom, T_amb_bottom, h_top, T_amb_top)
    return T[0] - lb * 0.5 * dz[0] / k[0], T[n - 1] - lt * 0.5 * dz[n - 1] / k[n - 1]


@njit(cache=True)
def interior_conductances(dz, k, out):
    r"""Series conductances between neighbouring cell centres, into ``out``.

    .. math:: G_{i+1/2} = \left(\frac{\Delta z_i}{2k_i} + \frac{\Delta z_{i+1}}{2k_{i+1}}\right)^{-1}

    Parameters
    ----------
    dz : ndarray, shape (n,)
        Cell widths [m].
    k : ndarray, shape (n,)
        Conductivities [W/(m K)].
    out : ndarray, shape (n-1,)
        Receives the conductances [W/(m^2 K)].
    """
    for i in range(dz.shape[0] - 1):
        out[i] = interior_conductance(dz, k, i)


@njit(cache=True)
def factor_conduction(cap, g_int, gb, gt, coef, fac):
    r"""Factor the implicit conduction matrix :math:`C + c A` once (Thomas algorithm), for many steps.

    Parameters
    ----------
    cap : ndarray, shape (n,)
        rho c dz of each cell [J/(m^2 K)].
    g_int : ndarray, shape (n-1,)
        Interior conductances [W/(m^2 K)].
    gb, gt : float
        Face conductances [W/(m^2 K)].
    coef : float
        Implicit weight times the step, e.g. dt/2 for Crank–Nicolson [s].
    fac : ndarray, shape (3, n)
        Receives the sub-diagonal, the inverse pivots and the reduced super-diagonal [dimensionless].

    References
    ----------
    .. [1] Press, Teukolsky, Vetterling and Flannery, Numerical Recipes, 3rd ed., Cambridge 2007,
       sec. 2.4 (tridiagonal systems).
    """
    n = cap.shape[0]
    sub = fac[0]
    inv = fac[1]
    sup = fac[2]
    for i in range(n):
        d = cap[i]
        if i > 0:
            d += coef * g_int[i - 1]
        if i < n - 1:
            d += coef * g_int[i]
        if i == 0:
            d += coef * gb
        if i == n - 1:
            d += coef * gt
        if i > 0:
            sub[i] = -coef * g_int[i - 1]
            d -= sub[i] * sup[i - 1]
        else:
            sub[i] = 0.0
        inv[i] = 1.0 / d
        sup[i] = (-coef * g_int[i] if i < n - 1 else 0.0) * inv[i]


@njit(cache=True)
def solve_factored(fac, rhs, out):
    """Solve the factored tridiagonal system for ``rhs`` into ``out`` (``out`` may be ``rhs``).

    Parameters
    ----------
    fac : ndarray, shape (3, n)
        From :func:`factor_conduction` [dimensionless].
    rhs : ndarray, shape (n,)
        Right-hand side [J/m^2].
    out : ndarray, shape (n,)
        Receives the solution [K].
    """
    n = rhs.shape[0]
    sub = fac[0]
    inv = fac[1]
    sup = fac[2]
    out[0] = rhs[0] * inv[0]
    for i in range(1, n):
        out[i] = (rhs[i] - sub[i] * out[i - 1]) * inv[i]
    for i in range(n - 2, -1, -1):
        out[i] -= sup[i] * out[i + 1]


@njit(cache=True)
def conduction_theta_factored(T, cap, dz, g_int, gb, gt, q_old, q_new, dt, Tb, Tt, theta, fac, rhs, out):
    r"""Theta-method heat step with precomputed conductances and the matrix factored for ``theta * dt``.

    .. math:: (C + \theta\Delta t A)\,T^{n+1} = (C - (1-\theta)\Delta t A)\,T^n
       + \Delta t\,[\theta b^{n+1} + (1-\theta) b^n]

    Parameters
    ----------
    T : ndarray, shape (n,)
        Temperatures at the start of the step [K].
    cap : ndarray, shape (n,)
        Heat capacity per unit area of each cell, rho c dz [J/(m^2 K)].
    dz : ndarray, shape (n,)
        Cell widths [m].
    g_int : ndarray, shape (n-1,)
        Interior conductances (:func:`interior_conductances`) [W/(m^2 K)].
    gb, gt : float
        Face conductances (:func:`face_conductance`) [W/(m^2 K)].
    q_old, q_new : ndarray, shape (n,)
        Heat source at the start and end of the step [W/m^3].
    dt : float
        Step [s].
    Tb, Tt : float
        Ambient temperatures below and above [K].
    theta : float
        Implicitness, 0.5 Crank–Nicolson, 1 backward Euler [dimensionless].
    out : ndarray, shape (n,)
        Receives the new temperatures; may be ``T`` [K].
    fac : ndarray, shape (3, n)
        :func:`factor_conduction` of coef = theta * dt [dimensionless].
    rhs : ndarray, shape (n,)
        Scratch [J/m^2].

    Returns
    -------
    (loss_bottom, loss_top) : float
        Heat lost through each face over the step [J/m^2].
    """
    n = T.shape[0]
    lb0 = gb * (T[0] - Tb)
    lt0 = gt * (T[n - 1] - Tt)
    w = (1.0 - theta) * dt
    for i in range(n):
        rhs[i] = dt * (theta * q_new[i] + (1.0 - theta) * q_old[i]) * dz[i]
    for i in range(n - 1):
        f = g_int[i] * (T[i + 1] - T[i])
        rhs[i] += w * f
        rhs[i + 1] -= w * f
    rhs[0] += w * gb * (Tb - T[0])
    rhs[n - 1] += w * gt * (Tt - T[n - 1])
    for i in range(n):
        rhs[i] += cap[i] * T[i]
    rhs[0] += theta * dt * gb * Tb
    rhs[n - 1] += theta * dt * gt * Tt
    solve_factored(fac, rhs, out)
    lb1 = gb * (out[0] - Tb)
    lt1 = gt * (out[n - 1] - Tt)
    return dt * (theta * lb1 + (1.0 - theta) * lb0), dt * (theta * lt1 + (1.0 - theta) * lt0)


@njit(cache=True)
def conduction_trbdf2_factored(T, cap, dz, g_int, gb, gt, q_old, q_new, dt, Tb, Tt, fac, work, out):
    """TR-BDF2 heat step (:func:`actsim.thermal_reference.trbdf2_step`) with the shared matrix already factored for gamma dt / 2 (``fac``).

    Parameters
    ----------
    T, cap, dz, g_int, gb, gt, q_old, q_new, dt, Tb, Tt, out : see :func:`conduction_theta_factored`
        [K], [J/(m^2 K)], [m], [W/(m^2 K)], [W/(m^2 K)], [W/(m^2 K)], [W/m^3], [W/m^3], [s], [K], [K], [K].
    fac : ndarray, shape (3, n)
        :func:`factor_conduction` of coef = gamma dt / 2 [dimensionless].
    work : ndarray, shape (>= 6, n)
        Scratch; rows 3 to 5 are used [dimensionless].

    Returns
    -------
    (loss_bottom, loss_top) : float
        Heat lost through each face over the step [J/m^2].
    """
    n = T.shape[0]
    g = TRBDF2_GAMMA
    d = 0.5 * g
    rhs = work[3]
    q_g = work[4]
    T_g = work[5]
    for i in range(n):
        q_g[i] = (1.0 - g) * q_old[i] + g * q_new[i]
    eb1, et1 = conduction_theta_factored(T, cap, dz, g_int, gb, gt, q_old, q_g, g * dt, Tb, Tt, 0.5, fac, rhs, T_g)
    a_g = 1.0 / (g * (2.0 - g))
    a_n = (1.0 - g) * (1.0 - g) / (g * (2.0 - g))
    for i in range(n):
        rhs[i] = cap[i] * (a_g * T_g[i] - a_n * T[i]) + d * dt * q_new[i] * dz[i]
    rhs[0] += d * dt * gb * Tb
    rhs[n - 1] += d * dt * gt * Tt
    solve_factored(fac, rhs, out)
    lb1 = gb * (out[0] - Tb)
    lt1 = gt * (out[n - 1] - Tt)
    return a_g * eb1 + d * dt * lb1, a_g * et1 + d * dt * lt1


#: Error constant of TR-BDF2's local error, k = (-3 gamma^2 + 4 gamma - 2) / (12 (2 - gamma)) (Hosea & Shampine 1996).
TRBDF2_ERROR_CONSTANT = (-3.0 * TRBDF2_GAMMA**2 + 4.0 * TRBDF2_GAMMA - 2.0) / (12.0 * (2.0 - TRBDF2_GAMMA))


@njit(cache=True)
def _heat_rate(T, cap, dz, g_int, gb, gt, q, Tb, Tt, i):
    # F_i = q_i dz_i + conduction into cell i + face exchange [W/m^2]: C dT/dt = F(T, q)
    n = T.shape[0]
    f = q[i] * dz[i]
    if i > 0:
        f += g_int[i - 1] * (T[i - 1] - T[i])
    if i < n - 1:
        f += g_int[i] * (T[i + 1] - T[i])
    if i == 0:
        f += gb * (Tb - T[0])
    if i == n - 1:
        f += gt * (Tt - T[n - 1])
    return f


@njit(cache=True)
def trbdf2_error(T, T_g, T_new, cap, dz, g_int, gb, gt, q_old, q_g, q_new, dt, Tb, Tt, fac, rhs, out):
    r"""Estimated local error of the TR-BDF2 step just taken (Hosea & Shampine's embedded estimate, filtered).

    .. math:: e = (C + d\Delta t A)^{-1}\, 2 k \Delta t \left[\frac{F_n}{\gamma}
       - \frac{F_{n+\gamma}}{\gamma(1-\gamma)} + \frac{F_{n+1}}{1-\gamma}\right],
       \qquad k = \frac{-3\gamma^2 + 4\gamma - 2}{12(2-\gamma)}

    with :math:`F = -A T + b(q)` the heat balance of the cells [W/m^2] at the start, the trapezoid stage and the
    end of the step. The factor :math:`(C + d\Delta t A)^{-1}` (the step's own factored matrix, ``fac``) keeps the
    estimate bounded for stiff modes.

    Parameters
    ----------
    T, T_g, T_new : ndarray, shape (n,)
        Temperatures at the start, at the stage t + gamma dt and at the end of the step [K].
    cap : ndarray, shape (n,)
        rho c dz of each cell [J/(m^2 K)].
    dz : ndarray, shape (n,)
        Cell widths [m].
    g_int : ndarray, shape (n-1,)
        Interior conductances [W/(m^2 K)].
    gb, gt : float
        Face conductances [W/(m^2 K)].
    q_old, q_g, q_new : ndarray, shape (n,)
        Heat source at the three points [W/m^3].
    dt : float
        Step [s].
    Tb, Tt : float
        Ambient temperatures [K].
    fac : ndarray, shape (3, n)
        :func:`factor_conduction` of coef = gamma dt / 2 [dimensionless].
    rhs : ndarray, shape (n,)
        Scratch [J/m^2].
    out : ndarray, shape (n,)
        Receives the estimated error of each cell temperature [K].

    Returns
    -------
    float
        The largest absolute estimated error [K].

    References
    ----------
    .. [1] Hosea, M. E. and Shampine, L. F. "Analysis and implementation of TR-BDF2." Appl. Numer. Math. 20
       (1996) 21–37.
    """
    n = T.shape[0]
    g = TRBDF2_GAMMA
    c = 2.0 * TRBDF2_ERROR_CONSTANT * dt
    w0 = c / g
    w1 = -c / (g * (1.0 - g))
    w2 = c / (1.0 - g)
    for i in range(n):
        rhs[i] = (w0 * _heat_rate(T, cap, dz, g_int, gb, gt, q_old, Tb, Tt, i)
                  + w1 * _heat_rate(T_g, cap, dz, g_int, gb, gt, q_g, Tb, Tt, i)
                  + w2 * _heat_rate(T_new, cap, dz, g_int, gb, gt, q_new, Tb, Tt, i))
    solve_factored(fac, rhs, out)
    worst = 0.0
    for i in range(n):
        if abs(out[i]) > worst:
            worst = abs(out[i])
    return worst


@njit(cache=True)
def linearised_radiation_coefficient_nb(emissivity, ambient_temperature):
    """Scalar numba version of :func:`linearised_radiation_coefficient` (no checks) [W/(m^2 K)].

    Parameters
    ----------
    emissivity : float
        0..1 [1].
    ambient_temperature : float
        > 0 [K].
    """
    return 4.0 * emissivity * _STEFAN_BOLTZMANN * ambient_temperature**3


def linearised_radiation_coefficient(*, emissivity, ambient_temperature):
    r"""Radiation exchange with large surroundings, linearised about the ambient temperature.

    .. math::

       \varepsilon\sigma(T_s^4 - T_\infty^4) \approx h_\mathrm{rad}(T_s - T_\infty),\qquad
       h_\mathrm{rad} = 4\varepsilon\sigma T_\infty^3

    Parameters
    ----------
    emissivity : float or array_like
        Total hemispherical emissivity of the face, 0..1 [1].
    ambient_temperature : float or array_like
        Temperature of the surroundings, taken equal to the air's, > 0 [K].

    Returns
    -------
    float or ndarray
        h_rad, to be added to the convection coefficient of that face [W/(m^2 K)].

    Notes
    -----
    Valid for small :math:`\Delta T = T_s - T_\infty`: the exact coefficient is
    :math:`\varepsilon\sigma(T_s + T_\infty)(T_s^2 + T_\infty^2) = h_\mathrm{rad}(1 + \tfrac32\Delta T/T_\infty + \dots)`,
    so the linearisation under-estimates the radiative loss by about 1.5 ΔT/T_∞ (5 % at ΔT = 10 K,
    15 % at ΔT = 30 K near room temperature). It assumes a grey face seeing surroundings that are large
    and at the ambient temperature.

    References
    ----------
    F. P. Incropera et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley, 2007, sec. 1.2.3
    (radiation heat transfer coefficient; from memory). sigma from CODATA via
    ``scipy.constants.Stefan_Boltzmann``.
    """
    eps = finite_array(emissivity, field="emissivity", unit="1", lo=0.0)
    if np.any(eps > 1.0):
        check_range(float(np.max(eps)), field="emissivity", unit="1", lo=0.0, hi=1.0)
    Ta = finite_array(ambient_temperature, field="ambient_temperature", unit="K", lo=0.0, lo_open=True)
    return scalar_or_array(4.0 * eps * _STEFAN_BOLTZMANN * Ta**3)


def face_temperatures_series(*, temperature, dz, conductivity, h_bottom, ambient_bottom, h_top, ambient_top):
    r"""Surface temperatures of the two faces at many times at once (numpy, vectorised over time).

    The same arithmetic, in the same order, as :func:`face_temperatures` applied to each row
    (bitwise equal results): the face conductance from the film coefficient and half the face cell,
    the loss through it, and the temperature drop across the half cell.

    .. math::

       G = \left(\frac{1}{h} + \frac{\Delta z}{2k}\right)^{-1},\qquad
       T_s = T_\mathrm{cell} - G\,(T_\mathrm{cell} - T_\infty)\,\frac{\Delta z}{2k}

    Parameters
    ----------
    temperature : ndarray, shape (n_time, n)
        Cell temperatures [K].
    dz : ndarray, shape (n,)
        Cell widths [m].
    conductivity : ndarray, shape (n,)
        Cell conductivities [W/(m K)].
    h_bottom, h_top : ndarray, shape (n_time,)
        Surface coefficients of each time; <= 0 means insulated, ``inf`` a face held at the ambient
        [W/(m^2 K)].
    ambient_bottom, ambient_top : ndarray, shape (n_time,)
        Ambient temperatures below and above the strip [K].

    Returns
    -------
    T_surface_bottom, T_surface_top : ndarray, shape (n_time,)
        [K]. With an insulated face this is the adjacent cell temperature.

    References
    ----------
    F. P. Incropera et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley, 2007, sec. 3.1.
    """
    T = np.asarray(temperature, dtype=float)
    n = T.shape[1]
    out = []
    for cell, h, T_amb in ((0, h_bottom, ambient_bottom), (n - 1, h_top, ambient_top)):
        h = np.asarray(h, dtype=float)
        half = 0.5 * dz[cell] / conductivity[cell]
        g = np.zeros(h.shape)
        on = h > 0.0
        g[on] = 1.0 / (1.0 / h[on] + half)
        T_cell = T[:, cell]
        loss = g * (T_cell - np.asarray(T_amb, dtype=float))
        out.append(T_cell - loss * 0.5 * dz[cell] / conductivity[cell])  # the order of face_temperatures
    return out[0], out[1]
