"""A cantilever strip resolved along its length: inertia, damping and large rotations (planar).

Clamped at ``s = 0`` with its tangent along +x, the strip bends in the (x, z) plane (z: thickness
direction, the y of :mod:`actsim.elastica`; kappa > 0 turns the tip toward +z). It is cut into N rigid,
inextensible segments of length ``ds = L/N``; the coordinates are the segment angles ``theta_i`` and
the state is ``y = (theta, theta_dot)``. Hinge ``j`` sits at ``s_j = j ds`` (hinge 0: the clamp), with
the curvature ``kappa_j = (theta_j - theta_{j-1}) / w_j`` (``w_0 = ds/2``, else ``ds``). Lagrange's
equations (derived in docs/models.md, "Strip dynamics along the length"):

.. math::

    M(\\theta)\\ddot\\theta + S(\\theta)\\dot\\theta^2 = -D^T m + Q_g + Q_F + Q_d, \\qquad
    m_j = EI_j(\\kappa_j - \\kappa_{0,j} + \\eta_s \\dot\\kappa_j),

``M_kl = ds^2 mu_kl cos(theta_k - theta_l) + J_k delta_kl``, ``S_kl = ds^2 mu_kl sin(theta_k - theta_l)``.
SI throughout (m, s, kg, N, rad).

References
----------
.. [1] Bergou, M., Wardetzky, M., Robinson, S., Audoly, B. and Grinspun, E., "Discrete elastic
   rods", ACM Transactions on Graphics 27(3), 63, 2008 (curvature as turning angle over the
   Voronoi length).
.. [2] Blevins, R. D., *Formulas for Natural Frequency and Mode Shape*, Van Nostrand Reinhold,
   1979, table 8-1 (clamped-free beam).
.. [3] Meirovitch, L., *Fundamentals of Vibrations*, McGraw-Hill, 2001 (Lagrange's equations,
   Rayleigh's dissipation function, proportional damping).
.. [4] Hairer, E. and Wanner, G., *Solving Ordinary Differential Equations II*, 2nd ed., Springer,
   1996 (Radau IIA, the method of scipy's ``Radau``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .errors import ActsimInputError, ActsimSimulationError

__all__ = [
    "StripParams",
    "strip_params",
    "strip_section",
    "hinge_positions",
    "mass_matrix",
    "stiffness_matrix",
    "centreline",
    "tip_angle",
    "tip_position",
    "kinetic_energy",
    "elastic_energy",
    "dissipation_rate",
    "dissipated_energy",
    "generalised_acceleration",
    "strip_jacobian",
    "integrate_strip",
    "static_shape",
    "natural_frequencies",
    "METHODS",
]

#: Integrators offered by :func:`integrate_strip` (scipy.integrate.solve_ivp names).
METHODS = ("Radau", "BDF", "DOP853")
_MAX_SEGMENTS = 2000
_GAUSS = (0.5 - 0.5 / math.sqrt(3.0), 0.5 + 0.5 / math.sqrt(3.0))  # 2-point Gauss-Legendre on [0, 1]


# --------------------------------------------------------------------------- parameters


@dataclass(frozen=True, eq=False)
class StripParams:
    """Discrete strip, built by :func:`strip_params` (SI; see its parameters). Per-hinge arrays
    (``bending_stiffness``, ``kv_time``, ``hinge_weight`` w_j) and per-segment arrays
    (``mass_per_length``, ``rotary_inertia``, ``seg_inertia`` J_k, ``grav_lever`` m_k/2 + mass beyond k)
    have shape (N,); ``mu_ds2`` is ds^2 mu (N, N) [kg m^2]; ``gauss_b`` (2N, N) holds the lever fractions
    of the 2 Gauss points per segment, ``gauss_seg`` their segment.
    """

    length: float
    n_segments: int
    ds: float
    bending_stiffness: np.ndarray
    mass_per_length: np.ndarray
    rotary_inertia: np.ndarray
    kv_time: np.ndarray
    drag_linear: float
    drag_quadratic: float
    gravity: np.ndarray
    tip_force: np.ndarray
    tip_moment: float
    hinge_weight: np.ndarray
    mu_ds2: np.ndarray
    seg_inertia: np.ndarray
    grav_lever: np.ndarray
    gauss_b: np.ndarray
    gauss_seg: np.ndarray

    @property
    def loaded(self) -> bool:
        """Whether gravity, a tip force or a tip moment acts (bool)."""
        return bool(np.any(self.gravity != 0.0) or np.any(self.tip_force != 0.0) or self.tip_moment != 0.0)


def _number(value, name, unit, lo=None, lo_open=False):
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ActsimInputError(f"{name}: {value!r} is not a number [{unit}]") from None
    bad = not math.isfinite(v) or (lo is not None and (v <= lo if lo_open else v < lo))
    if bad:
        rng = "finite" if lo is None else f"{'>' if lo_open else '>='} {lo:g} {unit}"
        raise ActsimInputError(f"{name}: {v:g} {unit} is outside the allowed range ({rng})")
    return v


def _per_segment(value, n, name, unit, lo=0.0, lo_open=False):
    a = np.asarray(value, dtype=float)
    if a.ndim == 0:
        a = np.full(n, float(a))
    if a.shape != (n,):
        raise ActsimInputError(f"{name}: need a number or {n} values [{unit}], got shape {a.shape}")
    for v in a:
        _number(v, name, unit, lo=lo, lo_open=lo_open)
    return a


def _vec2(value, name, unit):
    a = np.asarray(value, dtype=float)
    if a.shape != (2,) or not np.all(np.isfinite(a)):
        raise ActsimInputError(f"{name}: {value!r} must be two finite numbers (x, z) [{unit}]")
    return a


def strip_params(*, length, n_segments, bending_stiffness, mass_per_length, rotary_inertia=0.0, kv_time=0.0,
                 drag_linear=0.0, drag_quadratic=0.0, gravity=(0.0, 0.0), tip_force=(0.0, 0.0),
                 tip_moment=0.0) -> StripParams:
    """Build the discrete strip and its constant matrices.

    Parameters
    ----------
    length : float
        Free length L [m], > 0.
    n_segments : int
        Number of segments N, 2 .. 2000 (int).
    bending_stiffness : float or array_like
        EI = width x D_eff of the section, at the hinges s_j = j L/N [N m^2], > 0.
    mass_per_length : float or array_like
        rho_A of each segment [kg/m], > 0.
    rotary_inertia : float or array_like, optional
        rho_I, rotary inertia of the cross-section per length [kg m], >= 0; 0 (default) for a thin
        strip, whose rho_I = rho_A h^2/12 changes w1 by about (h/L)^2.
    kv_time : float or array_like, optional
        Kelvin–Voigt time eta_s at the hinges, M_d = eta_s EI dkappa/dt [s], >= 0.
    drag_linear : float, optional
        c_lin of the drag force per length -c_lin v_n [N s/m^2], >= 0.
    drag_quadratic : float, optional
        c_quad of -c_quad |v_n| v_n, e.g. rho_air C_d width / 2 [kg/m^2], >= 0.
    gravity : tuple of float, optional
        Gravitational acceleration (g_x, g_z) [m/s^2].
    tip_force : tuple of float, optional
        Dead tip force (F_x, F_z) [N].
    tip_moment : float, optional
        Tip moment, counter-clockwise positive [N m].

    Returns
    -------
    StripParams
        The strip with its derived matrices.

    Notes
    -----
    The segment mass points are rigid rods: segment i has mass m_i = rho_A,i ds at its centre and the
    rotary inertia J_i = m_i ds^2/12 + rho_I,i ds about it, so the kinetic energy is exact for the
    piecewise-rigid strip. With a_ik = 1 (k < i), 1/2 (k = i), 0 (k > i),

    .. math::

        \\mu_{kl} = \\sum_i m_i a_{ik} a_{il}, \\qquad M_{kl} = ds^2 \\mu_{kl}\\cos(\\theta_k-\\theta_l)
        + J_k \\delta_{kl} .

    References
    ----------
    .. [1] Meirovitch, L., *Fundamentals of Vibrations*, McGraw-Hill, 2001 (Lagrange's equations).
    """
    L = _number(length, "length", "m", lo=0.0, lo_open=True)
    if isinstance(n_segments, bool) or not isinstance(n_segments, (int, np.integer)) \
            or not 2 <= int(n_segments) <= _MAX_SEGMENTS:
        raise ActsimInputError(f"n_segments: {n_segments!r} is outside the allowed range (integer 2 .. {_MAX_SEGMENTS})")
    n = int(n_segments)
    ds = L / n
    ei = _per_segment(bending_stiffness, n, "bending_stiffness", "N m^2", lo_open=True)
    rho = _per_segment(mass_per_length, n, "mass_per_length", "kg/m", lo_open=True)
    rot = _per_segment(rotary_inertia, n, "rotary_inertia", "kg m")
    eta = _per_segment(kv_time, n, "kv_time", "s")
    m = rho * ds
    idx = np.arange(n)
    a = np.where(idx[None, :] < idx[:, None], 1.0, 0.0) + 0.5 * np.eye(n)  # a[i, k]
    gauss_b = np.concatenate([np.where(idx[None, :] < idx[:, None], 1.0, 0.0) + u * np.eye(n) for u in _GAUSS])
    tail = np.concatenate([np.cumsum(m[::-1])[::-1][1:], [0.0]])  # mass beyond segment k
    w = np.full(n, ds)
    w[0] = 0.5 * ds
    return StripParams(
        length=L, n_segments=n, ds=ds, bending_stiffness=ei, mass_per_length=rho, rotary_inertia=rot, kv_time=eta,
        drag_linear=_number(drag_linear, "drag_linear", "N s/m^2", lo=0.0),
        drag_quadratic=_number(drag_quadratic, "drag_quadratic", "kg/m^2", lo=0.0),
        gravity=_vec2(gravity, "gravity", "m/s^2"), tip_force=_vec2(tip_force, "tip_force", "N"),
        tip_moment=_number(tip_moment, "tip_moment", "N m"), hinge_weight=w,
        mu_ds2=ds * ds * (a.T @ (m[:, None] * a)), seg_inertia=m * ds * ds / 12.0 + rot * ds,
        grav_lever=0.5 * m + tail, gauss_b=gauss_b, gauss_seg=np.concatenate([idx, idx]),
    )


def strip_section(*, width, thickness, modulus, density):
    """Bending stiffness and mass per length of a uniform rectangular strip.

    Parameters
    ----------
    width : float
        Strip width b [m], > 0.
    thickness : float
        Thickness h [m], > 0.
    modulus : float
        Young's modulus E [Pa], > 0 (a narrow beam; use E/(1 - nu^2) for a wide plate).
    density : float
        Mass density rho [kg/m^3], > 0.

    Returns
    -------
    (float, float)
        EI [N m^2] and rho_A [kg/m].

    Notes
    -----
    .. math::

        EI = E\\,b h^3/12, \\qquad \\rho_A = \\rho\\, b h .

    References
    ----------
    .. [1] Timoshenko, S. P. and Gere, J. M., *Mechanics of Materials*, Van Nostrand Reinhold, 1972.
    """
    b = _number(width, "width", "m", lo=0.0, lo_open=True)
    h = _number(thickness, "thickness", "m", lo=0.0, lo_open=True)
    E = _number(modulus, "modulus", "Pa", lo=0.0, lo_open=True)
    rho = _number(density, "density", "kg/m^3", lo=0.0, lo_open=True)
    return E * b * h**3 / 12.0, rho * b * h


def hinge_positions(params):
    """Arc length of the hinges, where EI, eta_s and kappa0 are sampled.

    Parameters
    ----------
    params : StripParams
        The strip (a parameter object, unitless; SI inside).

    Returns
    -------
    ndarray
        s_j = j ds, j = 0 .. N-1 [m] (hinge 0 is the clamp).
    """
    return np.arange(params.n_segments) * params.ds


def _kappa0(params, kappa0):
    k = np.asarray(kappa0, dtype=float)
    if k.ndim == 0:
        k = np.full(params.n_segments, float(k))
    if k.shape != (params.n_segments,) or not np.all(np.isfinite(k)):
        raise ActsimInputError(f"kappa0: need a finite number or {params.n_segments} finite values [1/m]")
    return k


def _turning(theta):
    out = theta.copy()
    out[1:] -= theta[:-1]
    return out


def _dt_m(m):
    """D^T m: the generalised force of hinge moments m (m_N = 0 at the free tip)."""
    out = m.copy()
    out[:-1] -= m[1:]
    return out


# --------------------------------------------------------------------------- geometry and energies


def mass_matrix(params, theta):
    """Mass matrix M(theta) of the segment angles.

    Parameters
    ----------
    params : StripParams
        The strip (a parameter object, unitless; SI inside).
    theta : array_like
        Segment angles [rad], shape (N,).

    Returns
    -------
    ndarray
        M [kg m^2], shape (N, N), symmetric positive definite.
    """
    th = np.asarray(theta, dtype=float)
    return params.mu_ds2 * np.cos(th[:, None] - th[None, :]) + np.diag(params.seg_inertia)


def stiffness_matrix(params, *, kv=False):
    """Bending stiffness matrix K = D^T diag(EI/w) D (or the Kelvin–Voigt matrix eta_s K).

    Parameters
    ----------
    params : StripParams
        The strip (a parameter object, unitless; SI inside).
    kv : bool, optional
        True: the damping matrix D^T diag(eta_s EI/w) D [N m s] instead.

    Returns
    -------
    ndarray
        K [N m], shape (N, N).
    """
    n = params.n_segments
    d = np.eye(n) - np.eye(n, k=-1)
    c = params.bending_stiffness / params.hinge_weight * (params.kv_time if kv else 1.0)
    return d.T @ (c[:, None] * d)


def centreline(theta, ds):
    """Points of the segment ends, from the clamp to the tip.

    Parameters
    ----------
    theta : array_like
        Segment angles [rad], shape (N,) or (N, n_times).
    ds : float
        Segment length [m].

    Returns
    -------
    (ndarray, ndarray)
        x and z [m], shape (N+1,) or (N+1, n_times); the first point is the clamp (0, 0).
    """
    th = np.asarray(theta, dtype=float)
    zero = np.zeros((1,) + th.shape[1:])
    x = np.concatenate([zero, ds * np.cumsum(np.cos(th), axis=0)])
    z = np.concatenate([zero, ds * np.cumsum(np.sin(th), axis=0)])
    return x, z


def tip_angle(theta):
    """Tangent angle at the tip, theta_N + (theta_N - theta_{N-1})/2 (exact on an arc).

    Parameters
    ----------
    theta : array_like
        Segment angles [rad], shape (N,) or (N, n_times).

    Returns
    -------
    float or ndarray
        Tip angle [rad] (not wrapped).
    """
    th = np.asarray(theta, dtype=float)
    return 1.5 * th[-1] - 0.5 * th[-2]


def tip_position(theta, ds):
    """Tip position (x, z).

    Parameters
    ----------
    theta : array_like
        Segment angles [rad], shape (N,) or (N, n_times).
    ds : float
        Segment length [m].

    Returns
    -------
    (float or ndarray, float or ndarray)
        Tip x and z [m].
    """
    x, z = centreline(theta, ds)
    return x[-1], z[-1]


def kinetic_energy(params, theta, omega):
    """Kinetic energy (1/2) omega^T M(theta) omega.

    Parameters
    ----------
    params : StripParams
        The strip (a parameter object, unitless; SI inside).
    theta : array_like
        Segment angles [rad], shape (N,).
    omega : array_like
        Angular velocities [rad/s], shape (N,).

    Returns
    -------
    float
        Kinetic energy [J].
    """
    om = np.asarray(omega, dtype=float)
    return 0.5 * float(om @ mass_matrix(params, theta) @ om)


def elastic_energy(params, theta, kappa0):
    """Elastic energy (1/2) sum_j w_j EI_j (kappa_j - kappa0_j)^2.

    Parameters
    ----------
    params : StripParams
        The strip (a parameter object, unitless; SI inside).
    theta : array_like
        Segment angles [rad], shape (N,).
    kappa0 : float or array_like
        Natural curvature at the hinges [1/m].

    Returns
    -------
    float
        Elastic energy [J].
    """
    w = params.hinge_weight
    dk = _turning(np.asarray(theta, dtype=float)) / w - _kappa0(params, kappa0)
    return 0.5 * float(np.sum(w * params.bending_stiffness * dk * dk))


def _drag(params, c, s, omega):
    """Normal velocities at the Gauss points, drag per length there, and the matrices W, Z."""
    ds = params.ds
    W = ds * params.gauss_b * c[params.gauss_seg]
    Z = ds * params.gauss_b * s[params.gauss_seg]
    vn = W @ omega
    f = -(params.drag_linear + params.drag_quadratic * np.abs(vn)) * vn
    return vn, f, W, Z


def dissipation_rate(params, theta, omega):
    """Power dissipated by Kelvin–Voigt damping and air drag.

    Parameters
    ----------
    params : StripParams
        The strip (a parameter object, unitless; SI inside).
    theta : array_like
        Segment angles [rad], shape (N,).
    omega : array_like
        Angular velocities [rad/s], shape (N,).

    Returns
    -------
    float
        Dissipated power, >= 0 [W].

    Notes
    -----
    .. math::

        P = \\sum_j w_j \\eta_{s,j} EI_j \\dot\\kappa_j^2 - \\int f\\,v_n\\,ds
    """
    th = np.asarray(theta, dtype=float)
    om = np.asarray(omega, dtype=float)
    kd = _turning(om) / params.hinge_weight
    p = float(np.sum(params.hinge_weight * params.kv_time * params.bending_stiffness * kd * kd))
    d = th[:, None] - th[None, :]
    vn, f, _, _ = _drag(params, np.cos(d), np.sin(d), om)
    return p - 0.5 * params.ds * float(np.sum(f * vn))


def dissipated_energy(params, sol, t_end=None):
    """Energy dissipated from the start of an :func:`integrate_strip` result to ``t_end``.

    Parameters
    ----------
    params : StripParams
        The strip (a parameter object, unitless; SI inside).
    sol : scipy.integrate OdeResult
        Result of :func:`integrate_strip` with ``dense_output=True`` (a result object, unitless; SI inside).
    t_end : float, optional
        End time [s]; default the last time of ``sol``.

    Returns
    -------
    float
        Dissipated energy [J], by 3-point Gauss–Legendre quadrature on every accepted step.
    """
    if sol.sol is None:
        raise ActsimInputError("sol: dissipated_energy needs integrate_strip(..., dense_output=True)")
    t = np.asarray(sol.t, dtype=float)
    t_end = float(t[-1]) if t_end is None else float(t_end)
    edges = np.append(t[t < t_end], t_end)
    n = params.n_segments
    xg, wg = np.polynomial.legendre.leggauss(3)
    total = 0.0
    for a, b in zip(edges[:-1], edges[1:]):
        for x, wq in zip(xg, wg):
            y = sol.sol(0.5 * (a + b) + 0.5 * (b - a) * x)
            total += 0.5 * (b - a) * wq * dissipation_rate(params, y[:n], y[n:])
    return total


# --------------------------------------------------------------------------- equations of motion


def _conservative(params, theta):
    """Generalised forces of gravity and the tip load, and their diagonal derivative."""
    ds = params.ds
    cos, sin = np.cos(theta), np.sin(theta)
    g, F = params.gravity, params.tip_force
    q = ds * params.grav_lever * (-g[0] * sin + g[1] * cos) + ds * (-F[0] * sin + F[1] * cos)
    q[-1] += params.tip_moment
    dq = -ds * params.grav_lever * (g[0] * cos + g[1] * sin) - ds * (F[0] * cos + F[1] * sin)
    return q, dq


def _forces(params, theta, omega, kappa0):
    d = theta[:, None] - theta[None, :]
    c, s = np.cos(d), np.sin(d)
    w = params.hinge_weight
    m = params.bending_stiffness * (_turning(theta) / w - kappa0 + params.kv_time * _turning(omega) / w)
    out = -_dt_m(m) - (params.mu_ds2 * s) @ (omega * omega)
    if params.loaded:
        out += _conservative(params, theta)[0]
    if params.drag_linear > 0.0 or params.drag_quadratic > 0.0:
        _, f, W, _ = _drag(params, c, s, omega)
        out += 0.5 * params.ds * (W.T @ f)
    return out, c, s


def generalised_acceleration(params, theta, omega, kappa0):
    """Angular accelerations from the equations of motion.

    Parameters
    ----------
    params : StripParams
        The strip (a parameter object, unitless; SI inside).
    theta : array_like
        Segment angles [rad], shape (N,).
    omega : array_like
        Angular velocities [rad/s], shape (N,).
    kappa0 : float or array_like
        Natural curvature at the hinges [1/m].

    Returns
    -------
    ndarray
        d omega/dt [rad/s^2], shape (N,).

    Notes
    -----
    .. math::

        M(\\theta)\\ddot\\theta = -D^T m - S(\\theta)\\dot\\theta^2 + Q_g + Q_F + Q_d
    """
    th = np.asarray(theta, dtype=float)
    F, c, _ = _forces(params, th, np.asarray(omega, dtype=float), _kappa0(params, kappa0))
    return np.linalg.solve(params.mu_ds2 * c + np.diag(params.seg_inertia), F)


def strip_jacobian(params, theta, omega, kappa0):
    """Analytic Jacobian of the first-order system y' = (omega, omega_dot).

    Parameters
    ----------
    params : StripParams
        The strip (a parameter object, unitless; SI inside).
    theta : array_like
        Segment angles [rad], shape (N,).
    omega : array_like
        Angular velocities [rad/s], shape (N,).
    kappa0 : float or array_like
        Natural curvature at the hinges [1/m].

    Returns
    -------
    ndarray
        d y'/d y, shape (2N, 2N) [1/s, 1/s^2 in the blocks].

    Notes
    -----
    .. math::

        \\frac{\\partial\\ddot\\theta}{\\partial\\theta} = M^{-1}\\Bigl(\\frac{\\partial F}{\\partial\\theta}
        + \\operatorname{diag}(S\\ddot\\theta) - S\\operatorname{diag}(\\ddot\\theta)\\Bigr), \\qquad
        \\frac{\\partial\\ddot\\theta}{\\partial\\dot\\theta} = M^{-1}\\frac{\\partial F}{\\partial\\dot\\theta}
    """
    from scipy.linalg import cho_factor, cho_solve

    th = np.asarray(theta, dtype=float)
    om = np.asarray(omega, dtype=float)
    n = params.n_segments
    F, c, s = _forces(params, th, om, _kappa0(params, kappa0))
    A, S = params.mu_ds2 * c, params.mu_ds2 * s
    cho = cho_factor(A + np.diag(params.seg_inertia))
    acc = cho_solve(cho, F)
    _, dq = _conservative(params, th)
    om2 = om * om
    dF_th = -stiffness_matrix(params) + np.diag(dq) - (np.diag(A @ om2) - A * om2[None, :])
    dF_om = -stiffness_matrix(params, kv=True) - 2.0 * S * om[None, :]
    if params.drag_linear > 0.0 or params.drag_quadratic > 0.0:
        vn, f, W, Z = _drag(params, c, s, om)
        fp = -(params.drag_linear + 2.0 * params.drag_quadratic * np.abs(vn))
        E = np.zeros((2 * n, n))
        E[np.arange(2 * n), params.gauss_seg] = 1.0
        h = 0.5 * params.ds
        dF_th += -h * (Z.T * f[None, :]) @ E + np.diag(h * (Z.T @ f))
        dF_th += h * (W.T * fp[None, :]) @ (Z * om[None, :] - (Z @ om)[:, None] * E)
        dF_om += h * (W.T * fp[None, :]) @ W
    jac = np.zeros((2 * n, 2 * n))
    jac[:n, n:] = np.eye(n)
    jac[n:, :n] = cho_solve(cho, dF_th + np.diag(S @ acc) - S * acc[None, :])
    jac[n:, n:] = cho_solve(cho, dF_om)
    return jac


def integrate_strip(params, kappa0_of_t, t_span, y0, *, rtol=1e-6, atol=1e-9, method="Radau", t_eval=None,
                    dense_output=False, max_step=math.inf):
    """Integrate the strip's motion with error control (scipy.integrate.solve_ivp).

    Parameters
    ----------
    params : StripParams
        The strip (a parameter object, unitless; SI inside).
    kappa0_of_t : float, array_like or callable
        Natural curvature at the hinges [1/m]: a constant, or ``kappa0_of_t(t)`` of time [s]
        returning a number or N values.
    t_span : tuple of float
        Start and end time [s].
    y0 : array_like
        Initial state (theta [rad], theta_dot [rad/s]), shape (2N,).
    rtol : float, optional
        Relative tolerance [-], 1e-13 .. 1e-2.
    atol : float or array_like, optional
        Absolute tolerance on each state component [rad, rad/s].
    method : str, optional
        "Radau" (default; implicit, L-stable, for the stiff high bending modes), "BDF", or "DOP853"
        (explicit; its step is limited by the highest mode, ~ 1/(N^2 w1)).
    t_eval : array_like, optional
        Output times [s].
    dense_output : bool, optional
        Keep the continuous solution (needed by :func:`dissipated_energy`).
    max_step : float, optional
        Largest step [s]; set it below the shortest time scale of a callable kappa0 (a pulse).

    Returns
    -------
    scipy.integrate OdeResult
        ``t`` [s], ``y`` (2N, n_t): rows 0..N-1 theta [rad], N..2N-1 theta_dot [rad/s]; ``nfev``,
        ``njev``, ``nlu`` and the accepted steps ``t``.

    Notes
    -----
    The implicit methods get the analytic Jacobian (:func:`strip_jacobian`), without the term of
    d kappa0/dt, which is not a state derivative.
    """
    from scipy.integrate import solve_ivp

    if method not in METHODS:
        raise ActsimInputError(f"method: {method!r} is not one of {', '.join(METHODS)}")
    rtol = _number(rtol, "rtol", "-", lo=1e-13)
    if rtol > 1e-2:
        raise ActsimInputError(f"rtol: {rtol:g} is outside the allowed range (1e-13 .. 1e-2)")
    n = params.n_segments
    y0 = np.asarray(y0, dtype=float)
    if y0.shape != (2 * n,) or not np.all(np.isfinite(y0)):
        raise ActsimInputError(f"y0: need {2 * n} finite values (theta [rad], theta_dot [rad/s])")
    k_of_t = kappa0_of_t if callable(kappa0_of_t) else (lambda t, k=_kappa0(params, kappa0_of_t): k)

    def fun(t, y):
        return np.concatenate([y[n:], generalised_acceleration(params, y[:n], y[n:], k_of_t(t))])

    def jac(t, y):
        return strip_jacobian(params, y[:n], y[n:], k_of_t(t))

    kw = {} if method == "DOP853" else {"jac": jac}
    sol = solve_ivp(fun, t_span, y0, method=method, rtol=rtol, atol=atol, t_eval=t_eval,
                    dense_output=dense_output, max_step=max_step, **kw)
    if sol.status < 0 or not np.all(np.isfinite(sol.y)):
        raise ActsimSimulationError(f"strip dynamics: the integration failed at t = {sol.t[-1]:g} s ({sol.message})")
    return sol


# --------------------------------------------------------------------------- statics and modes


def static_shape(params, kappa0, *, tol=1e-12, max_iter=50):
    """Quasi-static equilibrium (no inertia) by Newton's method with load continuation.

    Parameters
    ----------
    params : StripParams
        The strip (a parameter object, unitless; SI inside); its gravity, tip force and tip moment load it.
    kappa0 : float or array_like
        Natural curvature at the hinges [1/m].
    tol : float, optional
        Convergence limit on the largest angle update [rad].
    max_iter : int, optional
        Newton iterations per load step (int).

    Returns
    -------
    ndarray
        Segment angles theta [rad], shape (N,).

    Notes
    -----
    Unloaded, the balance :math:`D^T m = 0` gives :math:`m = 0`, i.e. :math:`D\\theta = w\\kappa_0`
    (the inscribed arc for uniform kappa0). With loads the residual
    :math:`K\\theta - D^T(EI\\kappa_0) - \\lambda (Q_g + Q_F)` is solved for :math:`\\lambda`
    from 0 to 1, halving the load step when Newton's method fails.
    """
    from scipy.linalg import solve

    k0 = _kappa0(params, kappa0)
    theta = np.cumsum(params.hinge_weight * k0)
    K = stiffness_matrix(params)
    rhs0 = _dt_m(params.bending_stiffness * k0)
    lam, step = 0.0, 1.0
    while params.loaded and lam < 1.0:
        target = min(1.0, lam + step)
        th = theta.copy()
        ok = False
        for _ in range(max_iter):
            q, dq = _conservative(params, th)
            dth = solve(K - target * np.diag(dq), -(K @ th - rhs0 - target * q))
            th += dth
            if not np.all(np.isfinite(th)) or np.max(np.abs(dth)) > 1.0:
                break
            if np.max(np.abs(dth)) < tol:
                ok = True
                break
        if ok:
            theta, lam, step = th, target, min(1.0, 2.0 * step)
        else:
            step *= 0.5
            if step < 1e-4:
                raise ActsimSimulationError(f"static_shape: no equilibrium found past {100 * lam:.3g} % of the load")
    return theta


def natural_frequencies(params, n_modes, *, theta=None):
    """Angular frequencies and mode shapes of small vibration about a static shape.

    Parameters
    ----------
    params : StripParams
        The strip (a parameter object, unitless; SI inside).
    n_modes : int
        Number of modes, 1 .. N (int).
    theta : array_like, optional
        Static shape to linearise about [rad] (an equilibrium, e.g. from :func:`static_shape`);
        default the straight strip.

    Returns
    -------
    (ndarray, ndarray)
        omega_n [rad/s], shape (n_modes,), and the mode shapes in theta [rad], shape (N, n_modes),
        mass-normalised.

    Notes
    -----
    .. math::

        \\bigl(K - \\operatorname{diag}(\\partial Q/\\partial\\theta)\\bigr) v = \\omega^2 M(\\theta_s) v

    solved with scipy.linalg.eigh. Damping is left out (Kelvin–Voigt and linear drag give the modal
    damping ratios eta_s w/2 and c_lin/(2 rho_A w) for uniform strips without rho_I).
    """
    from scipy.linalg import eigh

    n = params.n_segments
    if isinstance(n_modes, bool) or not isinstance(n_modes, (int, np.integer)) or not 1 <= n_modes <= n:
        raise ActsimInputError(f"n_modes: {n_modes!r} is outside the allowed range (integer 1 .. {n})")
    th = np.zeros(n) if theta is None else np.asarray(theta, dtype=float)
    _, dq = _conservative(params, th)
    w2, v = eigh(stiffness_matrix(params) - np.diag(dq), mass_matrix(params, th), subset_by_index=(0, n_modes - 1))
    if w2[0] <= 0.0:
        raise ActsimSimulationError("natural_frequencies: the shape is not a stable equilibrium (w^2 <= 0)")
    return np.sqrt(w2), v
