r"""Readable heat steps: input checks, the theta-method and TR-BDF2 steps in numpy/scipy, a marching driver.

The numba steps the kernel calls are in :mod:`actsim.thermal`; these
functions assemble the same conduction matrices with scipy's banded solver,
so the tests can compare the two (to 1e-12) and :mod:`actsim.reference`
runs independently of the kernel's heat step. Conventions (cells, faces,
signs of the face losses) are those of :mod:`actsim.thermal`.

References
----------
.. [1] Crank, J. and Nicolson, P. "A practical method for numerical evaluation of solutions of partial
   differential equations of the heat-conduction type." Proc. Cambridge Philos. Soc. 43 (1947) 50–67.
.. [2] Bank, R. E., Coughran, W. M., Fichtner, W., Grosse, E. H., Rose, D. J. and Smith, R. K. "Transient
   simulation of silicon devices and circuits." IEEE Trans. Comput.-Aided Des. 4 (1985) 436–451.
.. [3] Hosea, M. E. and Shampine, L. F. "Analysis and implementation of TR-BDF2." Appl. Numer. Math. 20
   (1996) 21–37.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from numba import njit
from scipy.linalg import solve_banded

from .errors import ActsimInputError
from .thermal import (
    TRBDF2_GAMMA,
    conduction_theta_factored,
    conduction_trbdf2_factored,
    face_conductance,
    factor_conduction,
    interior_conductance,
    interior_conductances,
)
from .units import check_range

__all__ = [
    "theta_step",
    "crank_nicolson_step",
    "trbdf2_step",
    "thomas_solve",
    "steady_temperature",
    "check_conduction_inputs",
    "theta_step_reference",
    "trbdf2_step_reference",
    "ConductionResult",
    "march_conduction",
]


def _as_cell_array(value, *, field, unit, n=None, lo=None, lo_open=False):
    arr = np.atleast_1d(np.asarray(value, dtype=np.float64))
    if arr.ndim != 1:
        raise ActsimInputError(f"{field}: must be a 1-D array of cell values in {unit}, got shape {arr.shape}")
    if n is not None and arr.shape[0] != n:
        raise ActsimInputError(f"{field}: has {arr.shape[0]} cells but dz has {n}; give one value per cell in {unit}")
    bad = ~np.isfinite(arr)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ActsimInputError(f"{field}[{i}]: {arr[i]!r} is not finite (unit {unit})")
    if lo is not None:
        viol = arr <= lo if lo_open else arr < lo
        if viol.any():
            i = int(np.flatnonzero(viol)[0])
            check_range(float(arr[i]), field=f"{field}[{i}]", unit=unit, lo=lo, lo_open=lo_open)
    return arr


def _check_coefficient(value, *, field):
    v = float(value)
    if math.isnan(v):
        raise ActsimInputError(f"{field}: nan is not allowed (W/(m^2*K), >= 0; 0 insulated, inf fixed temperature)")
    return check_range(v, field=field, unit="W/(m^2*K)", lo=0.0)


def _check_temperature(value, *, field):
    v = float(value)
    if not math.isfinite(v):
        raise ActsimInputError(f"{field}: {v!r} is not finite (K, > 0)")
    return check_range(v, field=field, unit="K", lo=0.0, lo_open=True)


def check_conduction_inputs(
    *, dz, conductivity, volumetric_heat_capacity, h_bottom, h_top, ambient_bottom=None, ambient_top=None
):
    """Check grid and material arrays once, before the kernels run; return them as float64 arrays.

    Parameters
    ----------
    dz : array_like, shape (n,)
        Cell widths, > 0 [m].
    conductivity : array_like, shape (n,)
        > 0 [W/(m K)].
    volumetric_heat_capacity : array_like, shape (n,)
        Density times specific heat, > 0 [J/(m^3 K)].
    h_bottom, h_top : float
        >= 0, ``inf`` allowed [W/(m^2 K)].
    ambient_bottom, ambient_top : float, optional
        > 0 [K].

    Returns
    -------
    dz, conductivity, volumetric_heat_capacity : ndarray
        Contiguous float64 copies [m], [W/(m K)], [J/(m^3 K)].

    Raises
    ------
    ActsimInputError
        One line naming the field, value, unit and allowed range.
    """
    dz = _as_cell_array(dz, field="dz", unit="m", lo=0.0, lo_open=True)
    n = dz.shape[0]
    k = _as_cell_array(conductivity, field="conductivity", unit="W/(m*K)", n=n, lo=0.0, lo_open=True)
    rc = _as_cell_array(
        volumetric_heat_capacity, field="volumetric_heat_capacity", unit="J/(m^3*K)", n=n, lo=0.0, lo_open=True
    )
    _check_coefficient(h_bottom, field="h_bottom")
    _check_coefficient(h_top, field="h_top")
    if ambient_bottom is not None:
        _check_temperature(ambient_bottom, field="ambient_bottom")
    if ambient_top is not None:
        _check_temperature(ambient_top, field="ambient_top")
    return np.ascontiguousarray(dz), np.ascontiguousarray(k), np.ascontiguousarray(rc)


class _ConductionOperator:
    """The cell heat balance C dT/dt = -A T + b(q) of the readable steps, with scipy's banded solver.

    ``cap`` = C [J/(m^2 K)], ``a_times(T)`` = A T [W/m^2], ``b_of(q)`` = q dz + face exchange with the
    ambients [W/m^2], ``solve(coef, rhs)`` solves (C + coef A) x = rhs.
    """

    def __init__(self, *, dz, conductivity, volumetric_heat_capacity, h_bottom, ambient_bottom, h_top, ambient_top):
        dz = np.asarray(dz, dtype=float)
        k = np.asarray(conductivity, dtype=float)
        self.dz = dz
        self.cap = np.asarray(volumetric_heat_capacity, dtype=float) * dz
        self.g_int = 1.0 / (dz[:-1] / (2 * k[:-1]) + dz[1:] / (2 * k[1:]))

        def g_face(h, dzc, kc):
            return 0.0 if h <= 0 else 1.0 / (1.0 / h + dzc / (2 * kc))

        self.g_b = g_face(h_bottom, dz[0], k[0])
        self.g_t = g_face(h_top, dz[-1], k[-1])
        self.ambient_bottom, self.ambient_top = ambient_bottom, ambient_top
        self.a_diag = np.zeros_like(dz)
        self.a_diag[:-1] += self.g_int
        self.a_diag[1:] += self.g_int
        self.a_diag[0] += self.g_b
        self.a_diag[-1] += self.g_t

    def a_times(self, x):
        y = self.a_diag * x
        y[:-1] -= self.g_int * x[1:]
        y[1:] -= self.g_int * x[:-1]
        return y

    def b_of(self, q):
        b = q * self.dz
        b[0] += self.g_b * self.ambient_bottom
        b[-1] += self.g_t * self.ambient_top
        return b

    def solve(self, coef, rhs):
        ab = np.zeros((3, self.dz.size))
        ab[0, 1:] = -coef * self.g_int
        ab[1] = self.cap + coef * self.a_diag
        ab[2, :-1] = -coef * self.g_int
        return solve_banded((1, 1), ab, rhs)


def theta_step_reference(
    *,
    temperature,
    dz,
    conductivity,
    volumetric_heat_capacity,
    source_old,
    source_new,
    dt,
    h_bottom,
    ambient_bottom,
    h_top,
    ambient_top,
    theta=0.5,
):
    r"""Readable numpy version of :func:`theta_step` (assembles the banded matrix, uses scipy).

    .. math::

       (C + \theta\Delta t A)\,T^{n+1} = (C - (1-\theta)\Delta t A)\,T^n
       + \Delta t\,[\theta b^{n+1} + (1-\theta) b^n]

    Parameters
    ----------
    temperature : ndarray, shape (n,)
        Cell temperatures at the start of the step [K].
    dz : ndarray, shape (n,)
        Cell widths [m].
    conductivity : ndarray, shape (n,)
        [W/(m K)].
    volumetric_heat_capacity : ndarray, shape (n,)
        [J/(m^3 K)].
    source_old, source_new : ndarray, shape (n,)
        Cell-averaged source at the start and end of the step [W/m^3].
    dt : float
        [s].
    h_bottom, h_top : float
        [W/(m^2 K)].
    ambient_bottom, ambient_top : float
        [K].
    theta : float
        Implicitness [1].

    Returns
    -------
    ndarray, shape (n,)
        Temperatures at the end of the step [K].

    References
    ----------
    J. Crank and P. Nicolson, Proc. Cambridge Philos. Soc. 43, 50-67, 1947.
    """
    T = np.asarray(temperature, dtype=float)
    op = _ConductionOperator(dz=dz, conductivity=conductivity, volumetric_heat_capacity=volumetric_heat_capacity,
                             h_bottom=h_bottom, ambient_bottom=ambient_bottom, h_top=h_top, ambient_top=ambient_top)
    b_old, b_new = op.b_of(np.asarray(source_old, dtype=float)), op.b_of(np.asarray(source_new, dtype=float))
    rhs = op.cap * T - (1 - theta) * dt * op.a_times(T) + dt * (theta * b_new + (1 - theta) * b_old)
    return op.solve(theta * dt, rhs)


def trbdf2_step_reference(
    *,
    temperature,
    dz,
    conductivity,
    volumetric_heat_capacity,
    source_old,
    source_new,
    dt,
    h_bottom,
    ambient_bottom,
    h_top,
    ambient_top,
    return_losses=False,
    return_error=False,
):
    r"""Readable numpy version of :func:`trbdf2_step` (assembles the banded matrices, uses scipy).

    One TR-BDF2 step of the cell heat balance :math:`C\,\dot T = F(T, q) = -A\,T + b(q)`, with
    :math:`C = \mathrm{diag}(\rho c_i\,\Delta z_i)`, :math:`A` the conduction operator (series conductances
    between cell centres, Robin faces through :math:`G = (1/h + \Delta z/(2k))^{-1}`) and
    :math:`b(q) = q\,\Delta z + G_b T_{\infty,b}\,e_0 + G_t T_{\infty,t}\,e_{n-1}`. A trapezoid stage to
    :math:`t + \gamma\Delta t`, then a second-order backward difference (BDF2) through
    :math:`t`, :math:`t + \gamma\Delta t` and :math:`t + \Delta t`:

    .. math::

       \left(C + \tfrac{\gamma\Delta t}{2}A\right)T^{\gamma} =
       \left(C - \tfrac{\gamma\Delta t}{2}A\right)T^{n} + \tfrac{\gamma\Delta t}{2}\left[b(q^n) + b(q^\gamma)\right],
       \qquad q^\gamma = (1-\gamma)\,q^n + \gamma\,q^{n+1}

       \left(C + d\,\Delta t\,A\right)T^{n+1} =
       C\,\frac{T^\gamma - (1-\gamma)^2\,T^n}{\gamma(2-\gamma)} + d\,\Delta t\,b(q^{n+1}),
       \qquad d = \frac{1-\gamma}{2-\gamma}

    With :math:`\gamma = 2 - \sqrt 2` the two stages share one matrix (:math:`d = \gamma/2`); the scheme
    is second order and L-stable. With ``return_losses`` the heat lost through each face over the step
    is returned as well, integrated with the scheme's own weights,

    .. math::

       E_\mathrm{face} = \Delta t\left[w\,\dot q(T^n) + w\,\dot q(T^\gamma) + d\,\dot q(T^{n+1})\right],
       \qquad w = \frac{1}{2(2-\gamma)},\quad \dot q(T) = G\,(T_\mathrm{face\ cell} - T_\infty),

    with which the energy balance of the step closes to round-off.

    Parameters
    ----------
    temperature : ndarray, shape (n,)
        Cell temperatures at the start of the step [K].
    dz : ndarray, shape (n,)
        Cell widths, bottom to top [m].
    conductivity : ndarray, shape (n,)
        [W/(m K)].
    volumetric_heat_capacity : ndarray, shape (n,)
        Density times specific heat [J/(m^3 K)].
    source_old, source_new : ndarray, shape (n,)
        Cell-averaged heat source at the start and at the end of the step [W/m^3].
    dt : float
        Time step [s].
    h_bottom, h_top : float
        Surface coefficients at z = 0 and z = h; 0 insulated, ``inf`` face held at the ambient [W/(m^2 K)].
    ambient_bottom, ambient_top : float
        Ambient temperatures below and above, constant over the step [K].
    return_losses : bool
        Also return the heat lost through the bottom and top faces over the step.
    return_error : bool
        Also return the estimated local error of each cell temperature [K]
        (:func:`actsim.thermal.trbdf2_error`: Hosea and Shampine's embedded estimate).

    Returns
    -------
    ndarray, shape (n,)
        Temperatures at the end of the step [K]; with ``return_losses``, the tuple
        ``(temperatures, (loss_bottom, loss_top))``, the losses in [J/m^2], positive leaving the strip;
        with ``return_error`` the estimated error [K] follows as the last item.

    References
    ----------
    R. E. Bank, W. M. Coughran, W. Fichtner, E. H. Grosse, D. J. Rose and R. K. Smith, "Transient
    simulation of silicon devices and circuits", IEEE Trans. Computer-Aided Design 4(4), 436-451, 1985.
    M. E. Hosea and L. F. Shampine, "Analysis and implementation of TR-BDF2", Applied Numerical
    Mathematics 20, 21-37, 1996.
    """
    gamma = 2.0 - math.sqrt(2.0)
    d = (1.0 - gamma) / (2.0 - gamma)
    T = np.asarray(temperature, dtype=float)
    op = _ConductionOperator(dz=dz, conductivity=conductivity, volumetric_heat_capacity=volumetric_heat_capacity,
                             h_bottom=h_bottom, ambient_bottom=ambient_bottom, h_top=h_top, ambient_top=ambient_top)
    cap, a_times, b_of, solve = op.cap, op.a_times, op.b_of, op.solve
    g_b, g_t = op.g_b, op.g_t
    q_old = np.asarray(source_old, dtype=float)
    q_new = np.asarray(source_new, dtype=float)

    c = 0.5 * gamma * dt
    q_gamma = (1.0 - gamma) * q_old + gamma * q_new
    T_gamma = solve(c, cap * T - c * a_times(T) + c * (b_of(q_old) + b_of(q_gamma)))
    rhs = cap * (T_gamma - (1.0 - gamma) ** 2 * T) / (gamma * (2.0 - gamma)) + d * dt * b_of(q_new)
    T_new = solve(d * dt, rhs)
    out = [T_new]
    if return_losses:
        w = 1.0 / (2.0 * (2.0 - gamma))
        out.append(tuple(
            dt * (w * g * (T[i] - amb) + w * g * (T_gamma[i] - amb) + d * g * (T_new[i] - amb))
            for g, i, amb in ((g_b, 0, ambient_bottom), (g_t, -1, ambient_top))
        ))
    if return_error:
        # Hosea & Shampine's embedded estimate, filtered by the step's own matrix (C + d dt A)
        kk = (-3.0 * gamma**2 + 4.0 * gamma - 2.0) / (12.0 * (2.0 - gamma))

        def f(temp, q):
            return -a_times(temp) + b_of(q)

        raw = 2.0 * kk * dt * (f(T, q_old) / gamma - f(T_gamma, q_gamma) / (gamma * (1.0 - gamma))
                               + f(T_new, q_new) / (1.0 - gamma))
        out.append(solve(d * dt, raw))
    return out[0] if len(out) == 1 else tuple(out)


@dataclass(frozen=True)
class ConductionResult:
    """Temperatures and the energy ledger of :func:`march_conduction` (all per unit area)."""

    #: Times [s], shape (nt,).
    time: np.ndarray
    #: Cell temperatures [K], shape (nt, n).
    temperature: np.ndarray
    #: Energy absorbed since the start [J/m^2], shape (nt,).
    absorbed: np.ndarray
    #: Change of stored energy since the start [J/m^2], shape (nt,).
    stored: np.ndarray
    #: Heat lost through the bottom face since the start [J/m^2], shape (nt,).
    lost_bottom: np.ndarray
    #: Heat lost through the top face since the start [J/m^2], shape (nt,).
    lost_top: np.ndarray

    def balance_residual(self) -> float:
        r"""Relative energy-balance residual at the end, :math:`|E_a - \Delta E_s - E_l| / \max(|E_a|, |\Delta E_s|, |E_l|)` [1]."""
        a, s = self.absorbed[-1], self.stored[-1]
        lost = self.lost_bottom[-1] + self.lost_top[-1]
        scale = max(abs(a), abs(s), abs(lost), 1e-300)
        return abs(a - s - lost) / scale


_STEPPERS = {"crank-nicolson": 0, "tr-bdf2": 1, "backward-euler": 2}


@njit(cache=True)
def _march(T0, dz, k, rho_c, times, q, h_b, Ta_b, h_t, Ta_t, method, T_out, e_b, e_t):
    n = T0.shape[0]
    work = np.empty((6, n))
    for i in range(n):
        T_out[0, i] = T0[i]
    e_b[0] = 0.0
    e_t[0] = 0.0
    for j in range(1, times.shape[0]):
        dt = times[j] - times[j - 1]
        if method == 0:
            eb, et = crank_nicolson_step(T_out[j - 1], dz, k, rho_c, q[j - 1], q[j], dt, h_b, Ta_b, h_t, Ta_t, work, T_out[j])
        elif method == 1:
            eb, et = trbdf2_step(T_out[j - 1], dz, k, rho_c, q[j - 1], q[j], dt, h_b, Ta_b, h_t, Ta_t, work, T_out[j])
        else:
            eb, et = theta_step(T_out[j - 1], dz, k, rho_c, q[j - 1], q[j], dt, h_b, Ta_b, h_t, Ta_t, 1.0, work, T_out[j])
        e_b[j] = e_b[j - 1] + eb
        e_t[j] = e_t[j - 1] + et


def march_conduction(
    *,
    dz,
    conductivity,
    volumetric_heat_capacity,
    initial_temperature,
    time,
    source,
    h_bottom,
    ambient_bottom,
    h_top,
    ambient_top,
    method="crank-nicolson",
):
    r"""March the cell heat balance over given times and keep an energy ledger.

    .. math::

       E_\mathrm{absorbed}(t) = \Delta E_\mathrm{stored}(t) + E_\mathrm{lost,bottom}(t) + E_\mathrm{lost,top}(t)

    Parameters
    ----------
    dz : array_like, shape (n,)
        Cell widths, bottom to top [m].
    conductivity : array_like, shape (n,)
        [W/(m K)].
    volumetric_heat_capacity : array_like, shape (n,)
        Density times specific heat [J/(m^3 K)].
    initial_temperature : float or array_like, shape (n,)
        [K].
    time : array_like, shape (nt,)
        Strictly increasing output and step times [s].
    source : array_like, shape (nt, n) or (n,)
        Cell-averaged heat source at each time (constant if 1-D) [W/m^3].
    h_bottom, h_top : float
        Surface coefficients (add :func:`linearised_radiation_coefficient` for radiation) [W/(m^2 K)].
    ambient_bottom, ambient_top : float
        Ambient temperatures [K].
    method : {"crank-nicolson", "tr-bdf2", "backward-euler"}
        Time stepper [-].

    Returns
    -------
    ConductionResult
        Temperatures [K] and cumulative energies [J/m^2]. The absorbed energy is integrated over the given
        times with the stepper's own weights (trapezoid for Crank–Nicolson and TR-BDF2, the end value for
        backward Euler), and so are the losses, so the balance closes to round-off.

    References
    ----------
    F. P. Incropera et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley, 2007, sec. 1.3
    (conservation of energy for a control volume).
    """
    dz, k, rc = check_conduction_inputs(
        dz=dz,
        conductivity=conductivity,
        volumetric_heat_capacity=volumetric_heat_capacity,
        h_bottom=h_bottom,
        h_top=h_top,
        ambient_bottom=ambient_bottom,
        ambient_top=ambient_top,
    )
    n = dz.size
    if method not in _STEPPERS:
        raise ActsimInputError(f"method: {method!r} is not one of {', '.join(_STEPPERS)}")
    t = np.asarray(time, dtype=np.float64)
    if t.ndim != 1 or t.size < 1 or not np.all(np.isfinite(t)):
        raise ActsimInputError("time: must be a 1-D array of finite times in s")
    if t.size > 1 and np.any(np.diff(t) <= 0):
        i = int(np.flatnonzero(np.diff(t) <= 0)[0]) + 1
        raise ActsimInputError(f"time[{i}]: {t[i]:g} s is not after time[{i - 1}] = {t[i - 1]:g} s (must increase)")
    q = np.asarray(source, dtype=np.float64)
    if q.ndim == 1:
        q = np.broadcast_to(q, (t.size, q.size))
    if q.shape != (t.size, n):
        raise ActsimInputError(f"source: shape {q.shape} does not match (len(time), len(dz)) = ({t.size}, {n}) in W/m^3")
    if not np.all(np.isfinite(q)):
        raise ActsimInputError("source: contains non-finite values (W/m^3)")
    q = np.ascontiguousarray(q)
    T0 = np.broadcast_to(np.asarray(initial_temperature, dtype=np.float64), (n,)).copy()
    if not np.all(np.isfinite(T0)) or np.any(T0 <= 0):
        raise ActsimInputError("initial_temperature: must be finite and > 0 K")
    T = np.empty((t.size, n))
    e_b = np.empty(t.size)
    e_t = np.empty(t.size)
    _march(T0, dz, k, rc, t, q, float(h_bottom), float(ambient_bottom), float(h_top), float(ambient_top),
           _STEPPERS[method], T, e_b, e_t)
    absorbed_rate = q @ dz  # [W/m^2]
    w_new = 1.0 if method == "backward-euler" else 0.5  # the stepper's own quadrature of the source
    absorbed = np.concatenate(
        [[0.0], np.cumsum((w_new * absorbed_rate[1:] + (1.0 - w_new) * absorbed_rate[:-1]) * np.diff(t))]
    )
    stored = (T - T[0]) @ (rc * dz)
    return ConductionResult(time=t, temperature=T, absorbed=absorbed, stored=stored, lost_bottom=e_b, lost_top=e_t)


@njit(cache=True)
def thomas_solve(lower, diag, upper, rhs, out):
    r"""Solve a tridiagonal system by the Thomas algorithm (Gaussian elimination without pivoting).

    .. math::

       l_i x_{i-1} + d_i x_i + u_i x_{i+1} = r_i ,\qquad i = 0 \dots n-1 .

    Parameters
    ----------
    lower : ndarray, shape (n,)
        Sub-diagonal; ``lower[0]`` is not used [matrix units].
    diag : ndarray, shape (n,)
        Main diagonal. **Overwritten** with the elimination pivots (it is scratch) [matrix units].
    upper : ndarray, shape (n,)
        Super-diagonal; ``upper[n-1]`` is not used [matrix units].
    rhs : ndarray, shape (n,)
        Right-hand side; left unchanged unless it is the same array as ``out`` [rhs units].
    out : ndarray, shape (n,)
        Receives the solution; may be the same array as ``rhs`` [rhs units / matrix units].

    Notes
    -----
    No pivoting: the matrix must be diagonally dominant (every heat-conduction matrix built here
    is, because the heat capacities make it strictly so), otherwise a zero pivot can occur. No
    checks are made (hot path).

    References
    ----------
    G. H. Golub and C. F. Van Loan, *Matrix Computations*, 4th ed., Johns Hopkins University Press,
    2013, sec. 4.3 (banded systems; from memory).
    L. H. Thomas, *Elliptic problems in linear difference equations over a network*, Watson
    Scientific Computing Laboratory report, Columbia University, 1949.
    """
    n = diag.shape[0]
    out[0] = rhs[0]
    for i in range(1, n):
        w = lower[i] / diag[i - 1]
        diag[i] = diag[i] - w * upper[i - 1]
        out[i] = rhs[i] - w * out[i - 1]
    out[n - 1] = out[n - 1] / diag[n - 1]
    for i in range(n - 2, -1, -1):
        out[i] = (out[i] - upper[i] * out[i + 1]) / diag[i]


@njit(cache=True)
def _assemble(dz, k, rho_c, coef, h_bottom, h_top, lower, diag, upper):
    # Matrix C + coef * A of the implicit part (C = rho_c dz, A the conduction operator).
    n = dz.shape[0]
    gb = face_conductance(h_bottom, dz[0], k[0])
    gt = face_conductance(h_top, dz[n - 1], k[n - 1])
    for i in range(n):
        diag[i] = rho_c[i] * dz[i]
        lower[i] = 0.0
        upper[i] = 0.0
    for i in range(n - 1):
        g = coef * interior_conductance(dz, k, i)
        upper[i] = -g
        lower[i + 1] = -g
        diag[i] += g
        diag[i + 1] += g
    diag[0] += coef * gb
    diag[n - 1] += coef * gt


@njit(cache=True)
def steady_temperature(dz, k, q, h_bottom, T_amb_bottom, h_top, T_amb_top, work, out):
    r"""Steady cell temperatures, :math:`A\,T = q\,\Delta z + G_b T_{\infty,b} e_0 + G_t T_{\infty,t} e_{n-1}`.

    Parameters
    ----------
    dz : ndarray, shape (n,)
        Cell widths [m].
    k : ndarray, shape (n,)
        Cell conductivities [W/(m K)].
    q : ndarray, shape (n,)
        Cell-averaged heat source [W/m^3].
    h_bottom, h_top : float
        Surface coefficients; at least one must be > 0, else there is no steady state [W/(m^2 K)].
    T_amb_bottom, T_amb_top : float
        Ambient temperatures [K].
    work : ndarray, shape (>= 5, n)
        Scratch, overwritten [-].
    out : ndarray, shape (n,)
        Receives the steady temperatures [K].

    References
    ----------
    F. P. Incropera et al., *Fundamentals of Heat and Mass Transfer*, 6th ed., Wiley, 2007, ch. 3.
    """
    n = dz.shape[0]
    lower = work[0]
    diag = work[1]
    upper = work[2]
    rhs = work[3]
    # Solve for the rise above a reference ambient: A 1 = G_b e_0 + G_t e_{n-1}, so the ambient terms become
    # differences and the round-off scales with the temperature differences, not with ~300 K.
    t_ref = T_amb_top if h_top > 0.0 else T_amb_bottom
    for i in range(n):
        rhs[i] = q[i] * dz[i]
    rhs[0] += face_conductance(h_bottom, dz[0], k[0]) * (T_amb_bottom - t_ref)
    rhs[n - 1] += face_conductance(h_top, dz[n - 1], k[n - 1]) * (T_amb_top - t_ref)
    zero_capacity = work[4]  # the steady operator has no heat capacity; scratch row, no allocation
    for i in range(n):
        zero_capacity[i] = 0.0
    _assemble(dz, k, zero_capacity, 1.0, h_bottom, h_top, lower, diag, upper)
    thomas_solve(lower, diag, upper, rhs, out)
    for i in range(n):
        out[i] += t_ref


@njit(cache=True)
def _cell_conductances(dz, k, rho_c, h_bottom, h_top):
    # rho c dz of each cell [J/(m^2 K)], interior and face conductances [W/(m^2 K)] of the array-level steps
    n = dz.shape[0]
    cap = np.empty(n)
    g_int = np.empty(max(n - 1, 1))
    for i in range(n):
        cap[i] = rho_c[i] * dz[i]
    interior_conductances(dz, k, g_int)
    return cap, g_int, face_conductance(h_bottom, dz[0], k[0]), face_conductance(h_top, dz[n - 1], k[n - 1])


@njit(cache=True)
def theta_step(T, dz, k, rho_c, q_old, q_new, dt, h_bottom, T_amb_bottom, h_top, T_amb_top, theta, work, out):
    r"""One theta-method step of the cell heat balance (theta = 1/2 Crank–Nicolson, 1 backward Euler).

    .. math::

       (C + \theta\Delta t A)\,T^{n+1} = (C - (1-\theta)\Delta t A)\,T^n
       + \Delta t\,[\theta b^{n+1} + (1-\theta) b^n],

    with :math:`C = \mathrm{diag}(\rho c_i \Delta z_i)`, :math:`A` the conduction operator (interior
    and face conductances) and :math:`b = q\,\Delta z + G_b T_{\infty,b} e_0 + G_t T_{\infty,t} e_{n-1}`.

    Parameters
    ----------
    T : ndarray, shape (n,)
        Cell temperatures at the start of the step [K].
    dz : ndarray, shape (n,)
        Cell widths [m].
    k : ndarray, shape (n,)
        Cell conductivities [W/(m K)].
    rho_c : ndarray, shape (n,)
        Volumetric heat capacities, density times specific heat [J/(m^3 K)].
    q_old, q_new : ndarray, shape (n,)
        Cell-averaged heat source at the start and at the end of the step [W/m^3].
    dt : float
        Time step [s].
    h_bottom, h_top : float
        Surface coefficients at z = 0 and z = h (0 insulated, inf fixed temperature) [W/(m^2 K)].
    T_amb_bottom, T_amb_top : float
        Ambient temperatures, constant over the step [K].
    theta : float
        Implicitness, 0.5 for Crank–Nicolson, 1 for backward Euler [1].
    work : ndarray, shape (>= 4, n)
        Scratch, overwritten [-].
    out : ndarray, shape (n,)
        Receives the temperatures at the end of the step; may be ``T`` itself [K].

    Returns
    -------
    energy_bottom, energy_top : float
        Heat lost through each face during the step,
        :math:`\Delta t[\theta\,\dot q(T^{n+1}) + (1-\theta)\,\dot q(T^n)]` [J/m^2].

    References
    ----------
    J. Crank and P. Nicolson, "A practical method for numerical evaluation of solutions of partial
    differential equations of the heat-conduction type", Proc. Cambridge Philos. Soc. 43, 50-67, 1947.
    S. V. Patankar, *Numerical Heat Transfer and Fluid Flow*, Hemisphere, 1980, ch. 4.
    """
    cap, g_int, gb, gt = _cell_conductances(dz, k, rho_c, h_bottom, h_top)
    factor_conduction(cap, g_int, gb, gt, theta * dt, work[0:3])
    return conduction_theta_factored(T, cap, dz, g_int, gb, gt, q_old, q_new, dt, T_amb_bottom, T_amb_top, theta,
                                     work[0:3], work[3], out)


@njit(cache=True)
def crank_nicolson_step(T, dz, k, rho_c, q_old, q_new, dt, h_bottom, T_amb_bottom, h_top, T_amb_top, work, out):
    r"""One Crank–Nicolson step (theta = 1/2) of the cell heat balance, source averaged over the step.

    .. math::

       \left(C + \tfrac{\Delta t}{2}A\right)T^{n+1} = \left(C - \tfrac{\Delta t}{2}A\right)T^n
       + \Delta t\left[\tfrac{q^n + q^{n+1}}{2}\Delta z + G_b T_{\infty,b} e_0 + G_t T_{\infty,t} e_{n-1}\right]

    Parameters
    ----------
    T : ndarray, shape (n,)
        Cell temperatures at the start of the step [K].
    dz : ndarray, shape (n,)
        Cell widths [m].
    k : ndarray, shape (n,)
        Cell conductivities [W/(m K)].
    rho_c : ndarray, shape (n,)
        Volumetric heat capacities [J/(m^3 K)].
    q_old, q_new : ndarray, shape (n,)
        Cell-averaged heat source at the start and end of the step [W/m^3].
    dt : float
        Time step [s].
    h_bottom : float
        Surface coefficient at z = 0 [W/(m^2 K)].
    T_amb_bottom : float
        Ambient temperature below [K].
    h_top : float
        Surface coefficient at z = h [W/(m^2 K)].
    T_amb_top : float
        Ambient temperature above [K].
    work : ndarray, shape (>= 4, n)
        Scratch, overwritten [-].
    out : ndarray, shape (n,)
        Receives the new temperatures; may be ``T`` itself [K].

    Returns
    -------
    energy_bottom, energy_top : float
        Heat lost through each face during the step (trapezoid rule) [J/m^2].

    Notes
    -----
    Not L-stable: rings for ``dt >> rho_c dz^2/k`` with sharp data; see the module notes and
    :func:`trbdf2_step`.

    References
    ----------
    J. Crank and P. Nicolson, Proc. Cambridge Philos. Soc. 43, 50-67, 1947.
    """
    return theta_step(T, dz, k, rho_c, q_old, q_new, dt, h_bottom, T_amb_bottom, h_top, T_amb_top, 0.5, work, out)


@njit(cache=True)
def trbdf2_step(T, dz, k, rho_c, q_old, q_new, dt, h_bottom, T_amb_bottom, h_top, T_amb_top, work, out):
    r"""One TR-BDF2 step: a trapezoid stage to :math:`t+\gamma\Delta t`, then BDF2 to :math:`t+\Delta t`.

    .. math::

       C\,T^{\gamma} = C\,T^n + \tfrac{\gamma\Delta t}{2}\,[F(T^n, q^n) + F(T^\gamma, q^\gamma)]

       C\,T^{n+1} - d\,\Delta t\,F(T^{n+1}, q^{n+1}) =
       C\left[\frac{T^\gamma}{\gamma(2-\gamma)} - \frac{(1-\gamma)^2}{\gamma(2-\gamma)}T^n\right]

    with :math:`\gamma = 2-\sqrt2`, :math:`d = (1-\gamma)/(2-\gamma) = \gamma/2`,
    :math:`F(T, q) = -AT + b(q)` and the source interpolated linearly,
    :math:`q^\gamma = (1-\gamma)q^n + \gamma q^{n+1}`.

    Parameters
    ----------
    T : ndarray, shape (n,)
        Cell temperatures at the start of the step [K].
    dz : ndarray, shape (n,)
        Cell widths [m].
    k : ndarray, shape (n,)
        Cell conductivities [W/(m K)].
    rho_c : ndarray, shape (n,)
        Volumetric heat capacities [J/(m^3 K)].
    q_old, q_new : ndarray, shape (n,)
        Cell-averaged heat source at the start and end of the step [W/m^3].
    dt : float
        Time step [s].
    h_bottom : float
        Surface coefficient at z = 0 [W/(m^2 K)].
    T_amb_bottom : float
        Ambient temperature below [K].
    h_top : float
        Surface coefficient at z = h [W/(m^2 K)].
    T_amb_top : float
        Ambient temperature above [K].
    work : ndarray, shape (>= 6, n)
        Scratch, overwritten [-].
    out : ndarray, shape (n,)
        Receives the new temperatures; may be ``T`` itself [K].

    Returns
    -------
    energy_bottom, energy_top : float
        Heat lost through each face during the step, with the scheme's own quadrature weights
        :math:`\Delta t\,[w\,\dot q(T^n) + w\,\dot q(T^\gamma) + d\,\dot q(T^{n+1})]`,
        :math:`w = 1/(2(2-\gamma))`; with these the energy balance closes to round-off, and the
        absorbed energy is exactly the trapezoid :math:`\Delta t\,\Delta z\,(q^n + q^{n+1})/2` [J/m^2].

    Notes
    -----
    Second order and L-stable: modes with :math:`\lambda\Delta t \gg 1` are damped in one step, so no
    ringing after sudden changes. Costs two tridiagonal solves per step.

    References
    ----------
    R. E. Bank, W. M. Coughran, W. Fichtner, E. H. Grosse, D. J. Rose and R. K. Smith, "Transient
    simulation of silicon devices and circuits", IEEE Trans. Computer-Aided Design 4(4), 436-451, 1985.
    M. E. Hosea and L. F. Shampine, "Analysis and implementation of TR-BDF2", Applied Numerical
    Mathematics 20, 21-37, 1996.
    """
    cap, g_int, gb, gt = _cell_conductances(dz, k, rho_c, h_bottom, h_top)
    factor_conduction(cap, g_int, gb, gt, 0.5 * TRBDF2_GAMMA * dt, work[0:3])
    return conduction_trbdf2_factored(T, cap, dz, g_int, gb, gt, q_old, q_new, dt, T_amb_bottom, T_amb_top,
                                      work[0:3], work, out)
