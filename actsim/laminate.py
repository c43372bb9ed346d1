"""Plate section of a laminate (classical lamination theory in actsim's sign) and the free ribbon's shape.

Strain through the thickness, z from the bottom face (0) to the top (h), in-plane components
(e_xx, e_yy, g_xy) with the engineering shear g_xy = 2 e_xy:

.. math:: \\boldsymbol\\varepsilon(z) = \\boldsymbol\\varepsilon_0 - z\\,\\boldsymbol\\kappa, \\qquad
   \\boldsymbol\\kappa = (w_{,xx},\\; w_{,yy},\\; 2 w_{,xy}),

w the deflection toward +z, so kappa_xx > 0 bends the plate toward +z (the top face concave), as in
:mod:`actsim.mechanics`. Classical texts write :math:`\\varepsilon = \\varepsilon_0 + z k` with
:math:`k = -(w_{,xx}, w_{,yy}, 2 w_{,xy})`: our kappa is minus theirs, and our reference is the bottom
face, theirs the mid-plane. The stress of a cell is :math:`\\sigma = \\bar Q (\\varepsilon - \\varepsilon^*)`
with the cell's eigenstrain e*. The twist is reported as ``twist_rate`` = w_,xy = kappa_xy / 2 [rad m-1],
the rotation of the cross-section about the strip axis per unit length.

With A, B, D taken about z = 0, N* = int Q e* dz and M* = -int Q e* z dz (the moment conjugate to our
kappa; minus the M* of :func:`actsim.mechanics.section_integrals`), the free plate solves

.. math:: \\begin{pmatrix} A & -B \\\\ -B & D \\end{pmatrix}
   \\begin{pmatrix} \\varepsilon_0 \\\\ \\kappa \\end{pmatrix} =
   \\begin{pmatrix} N^* \\\\ M^* \\end{pmatrix}.

References
----------
.. [1] Jones, R. M. *Mechanics of Composite Materials*, 2nd ed. Taylor & Francis, 1999, ch. 2 and 4.
.. [2] Sawa, Y., Ye, F., Urayama, K., Takigawa, T., Gimenez-Pinto, V., Selinger, R. L. B. and
   Selinger, J. V. "Shape selection of twist-nematic-elastomer ribbons." PNAS 108 (2011) 6364–6368
   (from memory).
.. [3] Armon, S., Efrati, E., Kupferman, R. and Sharon, E. "Geometry and mechanics in the opening
   of chiral seed pods." Science 333 (2011) 1726–1730 (from memory).
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np

from .errors import ActsimInputError
from .units import check_range

#: Shape words of :func:`ribbon_shape` and their thresholds (common practice, no source): with s the
#: largest principal curvature magnitude of the adopted tensor, the ribbon is "flat" when s <= FLAT * s_bar
#: (s_bar that of the natural curvature); it has no twist when |k12| <= SMALL * s, no bend of its centre
#: line when |k11| <= SMALL * s, and is developable ("K ~ 0") when |K| <= DEVELOPABLE * s^2.
SHAPE_THRESHOLDS = {"FLAT": 1e-3, "SMALL": 0.02, "DEVELOPABLE": 0.05}


class PlateResponse(NamedTuple):
    """Free plate: reference strain at z = 0 and curvature, each (..., 3) = (xx, yy, engineering xy)."""

    e0: np.ndarray
    kappa: np.ndarray


class RibbonShape(NamedTuple):
    """The shape a free ribbon adopts (:func:`ribbon_shape`); curvatures in m-1, lengths in m."""

    curvature: np.ndarray  # (k11, k22, k12), k12 = w_,xy [m-1]
    gaussian_curvature: float  # K = k11 k22 - k12^2 [m-2]
    centerline_curvature: float  # |k11|, the normal curvature (geodesic curvature 0) [m-1]
    centerline_torsion: float  # k12, the geodesic torsion = twist rate [m-1]
    helix_radius: float  # kc / (kc^2 + tc^2) [m]
    helix_pitch: float  # 2 pi |tc| / (kc^2 + tc^2), axis length per turn [m]
    twist_pitch: float  # 2 pi / |k12| [m] (inf without twist)
    width_parameter: float  # w^2 |kbar| / h [1]
    shape: str  # "flat", "arc", "helicoid", "spiral ribbon" or "twisted arc"
    energy: float  # U at the adopted curvature [J m-1]


def _fail(field, value, unit, allowed):
    raise ActsimInputError(f"{field}: {value} {unit} is outside the allowed range ({allowed})".replace("  ", " "))


def _edges(z_edges):
    z = np.asarray(z_edges, dtype=float)
    if z.ndim != 1 or z.size < 2 or not np.all(np.isfinite(z)) or np.any(np.diff(z) <= 0):
        _fail("z_edges", f"array of shape {z.shape}", "m", "1-D, finite, at least 2 faces, strictly increasing")
    return z


def _cells(z_edges, qbar):
    z = _edges(z_edges)
    q = np.asarray(qbar, dtype=float)
    if q.shape != (z.size - 1, 3, 3) or not np.all(np.isfinite(q)):
        _fail("qbar", f"array of shape {q.shape}", "Pa", f"finite, shape ({z.size - 1}, 3, 3), one per cell")
    z0, z1 = z[:-1], z[1:]
    return q, z1 - z0, 0.5 * (z1**2 - z0**2), (z1**3 - z0**3) / 3.0


def reduced_stiffness(*, E1, E2, nu12, G12):
    """Plane-stress reduced stiffness Q of an orthotropic ply in its material axes.

    .. math:: Q = \\frac{1}{1 - \\nu_{12}\\nu_{21}} \\begin{pmatrix} E_1 & \\nu_{12} E_2 & 0 \\\\
       \\nu_{12} E_2 & E_2 & 0 \\\\ 0 & 0 & (1 - \\nu_{12}\\nu_{21}) G_{12} \\end{pmatrix},
       \\qquad \\nu_{21} = \\nu_{12} E_2 / E_1,

    acting on (e_11, e_22, g_12) with the engineering shear g_12 = 2 e_12.

    Parameters
    ----------
    E1, E2 : float
        Young's moduli along and across the fibre or director [Pa], > 0.
    nu12 : float
        Major Poisson ratio [1], |nu12| < sqrt(E1 / E2) (positive definite).
    G12 : float
        In-plane shear modulus [Pa], > 0.

    Returns
    -------
    numpy.ndarray, shape (3, 3)
        Q [Pa].

    References
    ----------
    .. [1] Jones, R. M. *Mechanics of Composite Materials*, 2nd ed., 1999, eq. (2.61).
    """
    check_range(E1, field="E1", unit="Pa", lo=0, lo_open=True)
    check_range(E2, field="E2", unit="Pa", lo=0, lo_open=True)
    check_range(G12, field="G12", unit="Pa", lo=0, lo_open=True)
    bound = math.sqrt(E1 / E2)
    check_range(nu12, field="nu12", unit="1", lo=-bound, hi=bound, lo_open=True, hi_open=True)
    den = 1.0 - nu12 * nu12 * E2 / E1
    return np.array([[E1 / den, nu12 * E2 / den, 0.0], [nu12 * E2 / den, E2 / den, 0.0], [0.0, 0.0, G12]])


def isotropic_stiffness(*, modulus, poisson_ratio):
    """Plane-stress stiffness of an isotropic layer.

    .. math:: Q = \\frac{E}{1 - \\nu^2} \\begin{pmatrix} 1 & \\nu & 0 \\\\ \\nu & 1 & 0 \\\\
       0 & 0 & (1 - \\nu)/2 \\end{pmatrix}

    Parameters
    ----------
    modulus : float or array_like
        Young's modulus E [Pa], > 0.
    poisson_ratio : float or array_like
        Poisson ratio nu [1], -1 < nu < 0.5 (broadcast with ``modulus``).

    Returns
    -------
    numpy.ndarray, shape (..., 3, 3)
        Q [Pa], one matrix per broadcast element.

    References
    ----------
    .. [1] Jones, R. M. *Mechanics of Composite Materials*, 2nd ed., 1999, eq. (2.63) (equation number from memory).
    """
    E = np.asarray(modulus, float)
    nu = np.asarray(poisson_ratio, float)
    if E.ndim == 0 and nu.ndim == 0:
        check_range(float(E), field="modulus", unit="Pa", lo=0, lo_open=True)
        check_range(float(nu), field="poisson_ratio", unit="1", lo=-1, hi=0.5, lo_open=True, hi_open=True)
    elif not (np.all(E > 0) and np.all((nu > -1) & (nu < 0.5))):
        raise ActsimInputError("modulus, poisson_ratio: every modulus must be > 0 Pa and every Poisson ratio "
                               "between -1 and 0.5 (exclusive)")
    E, nu = np.broadcast_arrays(E, nu)
    q11 = E / (1.0 - nu**2)
    out = np.zeros(E.shape + (3, 3))
    out[..., 0, 0] = out[..., 1, 1] = q11
    out[..., 0, 1] = out[..., 1, 0] = nu * q11
    out[..., 2, 2] = 0.5 * E / (1.0 + nu)
    return out


def rotated_stiffness(Q, angle):
    """Transformed reduced stiffness Qbar of a ply whose fibre or director lies at ``angle`` from x.

    .. math:: \\bar Q = T^{-1} Q\\, T^{-\\mathsf T}, \\qquad T^{-1} = \\begin{pmatrix} c^2 & s^2 & -2sc \\\\
       s^2 & c^2 & 2sc \\\\ sc & -sc & c^2 - s^2 \\end{pmatrix}, \\quad c = \\cos\\theta,\\; s = \\sin\\theta,

    the same as Jones's explicit entries (Q̄11 = Q11 c^4 + 2 (Q12 + 2 Q66) s^2 c^2 + Q22 s^4, ...).

    Parameters
    ----------
    Q : numpy.ndarray, shape (..., 3, 3)
        Reduced stiffness in the material axes [Pa].
    angle : float or numpy.ndarray, shape (...)
        Angle from x to the 1 axis, counter-clockwise seen from +z [rad]; broadcasts against ``Q``.

    Returns
    -------
    numpy.ndarray, shape (..., 3, 3)
        Qbar in the x, y axes [Pa], acting on (e_xx, e_yy, g_xy).

    References
    ----------
    .. [1] Jones, R. M. *Mechanics of Composite Materials*, 2nd ed., 1999, eq. (2.85)
       (the T matrix of eq. (2.84) from memory).
    """
    Q = np.asarray(Q, dtype=float)
    th = np.asarray(angle, dtype=float)
    if Q.shape[-2:] != (3, 3):
        _fail("Q", f"array of shape {Q.shape}", "Pa", "shape (..., 3, 3)")
    c, s = np.cos(th), np.sin(th)
    ti = np.stack([np.stack([c * c, s * s, -2 * s * c], -1), np.stack([s * s, c * c, 2 * s * c], -1),
                   np.stack([s * c, -s * c, c * c - s * s], -1)], -2)
    return ti @ Q @ np.swapaxes(ti, -1, -2)


def abd_matrices(z_edges, qbar):
    """Extension, coupling and bending stiffness A, B, D of a laminate, about z = 0 (the bottom face).

    .. math:: (A, B, D) = \\sum_i \\bar Q_i \\left(z_{i+1} - z_i,\\; \\frac{z_{i+1}^2 - z_i^2}{2},\\;
       \\frac{z_{i+1}^3 - z_i^3}{3}\\right),

    exact for a stiffness constant in each cell. About another reference z = d:
    A' = A, B' = B - d A, D' = D - 2 d B + d^2 A (d = h/2 gives the classical mid-plane matrices).

    Parameters
    ----------
    z_edges : numpy.ndarray, shape (n_cell + 1,)
        Cell faces, strictly increasing, from the bottom face [m].
    qbar : numpy.ndarray, shape (n_cell, 3, 3)
        Stiffness of each cell in the x, y axes [Pa].

    Returns
    -------
    A, B, D : numpy.ndarray, shape (3, 3)
        [N m-1], [N], [N m] per unit width.

    References
    ----------
    .. [1] Jones, R. M. *Mechanics of Composite Materials*, 2nd ed., 1999, sec. 4.2 (eq. number from memory: 4.23).
    """
    q, w1, w2, w3 = _cells(z_edges, qbar)
    return tuple(np.einsum("i,ijk->jk", w, q) for w in (w1, w2, w3))


def eigen_resultants(z_edges, qbar, eig):
    """Force and moment resultants of the eigenstrain, in actsim's sign.

    .. math:: N^* = \\int \\bar Q\\, \\varepsilon^*\\, dz, \\qquad M^* = -\\int \\bar Q\\, \\varepsilon^* z\\, dz,

    exact per cell for values constant in each cell. M* is minus the classical thermal moment (taken about
    z = 0), so that the free plate is :math:`[A, -B; -B, D] (\\varepsilon_0, \\kappa) = (N^*, M^*)`.

    Parameters
    ----------
    z_edges : numpy.ndarray, shape (n_cell + 1,)
        Cell faces from the bottom face [m].
    qbar : numpy.ndarray, shape (n_cell, 3, 3)
        Stiffness of each cell [Pa].
    eig : numpy.ndarray, shape (n_cell, 3)
        Eigenstrain (e_xx*, e_yy*, g_xy*) of each cell, engineering shear [1].

    Returns
    -------
    N_star, M_star : numpy.ndarray, shape (3,)
        [N m-1], [N] per unit width.

    References
    ----------
    .. [1] Jones, R. M. *Mechanics of Composite Materials*, 2nd ed., 1999, sec. 4.2 (thermal resultants).
    """
    q, w1, w2, _ = _cells(z_edges, qbar)
    e = np.asarray(eig, dtype=float)
    if e.shape != (q.shape[0], 3) or not np.all(np.isfinite(e)):
        _fail("eig", f"array of shape {e.shape}", "1", f"finite, shape ({q.shape[0]}, 3)")
    sig = np.einsum("ijk,ik->ij", q, e)
    return w1 @ sig, -(w2 @ sig)


def free_plate_response(A, B, D, N_star, M_star):
    """Reference strain and curvature of the free laminate (all force and moment resultants zero).

    .. math:: \\begin{pmatrix} A & -B \\\\ -B & D \\end{pmatrix}
       \\begin{pmatrix} \\varepsilon_0 \\\\ \\kappa \\end{pmatrix} =
       \\begin{pmatrix} N^* \\\\ M^* \\end{pmatrix}

    Parameters
    ----------
    A, B, D : numpy.ndarray, shape (3, 3)
        Stiffness about z = 0 from :func:`abd_matrices` [N m-1], [N], [N m].
    N_star, M_star : numpy.ndarray, shape (3,)
        Eigenstrain resultants from :func:`eigen_resultants` [N m-1], [N].

    Returns
    -------
    PlateResponse
        ``e0`` (e_xx, e_yy, g_xy) at z = 0 [1] and ``kappa`` (kxx, kyy, kxy_eng) [m-1];
        twist rate w_,xy = kappa[2] / 2.

    References
    ----------
    .. [1] Jones, R. M. *Mechanics of Composite Materials*, 2nd ed., 1999, sec. 4.2 (classical form
       eq. 4.24, from memory; here in actsim's sign).
    """
    A, B, D, N_star, M_star = (np.asarray(m, dtype=float) for m in (A, B, D, N_star, M_star))
    if ({A.shape, B.shape, D.shape} != {(3, 3)} or {N_star.shape, M_star.shape} != {(3,)}
            or not all(np.all(np.isfinite(m)) for m in (A, B, D, N_star, M_star))):
        _fail("A, B, D, N_star, M_star", "arrays", "SI", "finite, 3x3 matrices and 3-vectors")
    K = np.block([[A, -B], [-B, D]])
    rhs = np.concatenate([N_star, M_star])
    try:
        x = np.linalg.solve(K, rhs)
    except np.linalg.LinAlgError:
        _fail("A, B, D", "a singular section", "SI", "a positive definite laminate stiffness")
    return PlateResponse(x[:3], x[3:])


def _beam_solve(weight, strain, W):
    """Free 2x2 section of one mode: weight (..., n) [Pa], strain (..., n) [1], W (n, 3) cell moments."""
    a, b, d = np.moveaxis(weight @ W, -1, 0)
    n_star, m_star = np.moveaxis((weight * strain) @ W[:, :2], -1, 0)
    m_star = -m_star
    det = a * d - b * b
    return (d * n_star + b * m_star) / det, (b * n_star + a * m_star) / det


def plate_curvature_series(z_edges, modulus, poisson, eig):
    """Free plate response at many times for isotropic cells (vectorised; no 3x3 algebra per time).

    For isotropic cells the plate splits into three independent beam problems: the sum (xx + yy) with
    weight E/(1 - nu), the difference (xx - yy) and the shear xy, both with weight E/(1 + nu). Each is

    .. math:: \\varepsilon_0 = \\frac{D N^* + B M^*}{A D - B^2}, \\qquad
       \\kappa = \\frac{B N^* + A M^*}{A D - B^2}

    with A, B, D, N*, M* (= -int w e* z dz) of its weight w and eigenstrain, exact per cell.

    Parameters
    ----------
    z_edges : numpy.ndarray, shape (n_cell + 1,)
        Cell faces from the bottom face [m].
    modulus : numpy.ndarray, shape (n_time, n_cell)
        Young's modulus of each cell at each time [Pa], > 0.
    poisson : numpy.ndarray, shape (n_cell,)
        Poisson ratio of each cell [1], -1 < nu < 0.5.
    eig : numpy.ndarray, shape (n_time, n_cell, 3)
        Eigenstrain (e_xx*, e_yy*, g_xy*), engineering shear [1].

    Returns
    -------
    PlateResponse
        ``e0`` (n_time, 3) at z = 0 [1] and ``kappa`` (n_time, 3) = (kxx, kyy, kxy_eng) [m-1].

    Notes
    -----
    1e4 times x 200 cells take 0.12 s (best of 5 on two shared cores, about 60 ns per time and cell).

    References
    ----------
    .. [1] Jones, R. M. *Mechanics of Composite Materials*, 2nd ed., 1999, ch. 4.
    """
    z = _edges(z_edges)
    n = z.size - 1
    E = np.asarray(modulus, dtype=float)
    nu = np.asarray(poisson, dtype=float)
    e = np.asarray(eig, dtype=float)
    if E.ndim != 2 or E.shape[1] != n or not np.all(E > 0) or not np.all(np.isfinite(E)):
        _fail("modulus", f"array of shape {E.shape}", "Pa", f"finite, > 0, shape (n_time, {n})")
    if nu.shape != (n,) or not np.all((nu > -1) & (nu < 0.5)):
        _fail("poisson", f"array of shape {nu.shape}", "1", f"-1 < nu < 0.5, shape ({n},)")
    if e.shape != E.shape + (3,) or not np.all(np.isfinite(e)):
        _fail("eig", f"array of shape {e.shape}", "1", f"finite, shape {E.shape + (3,)}")
    z0, z1 = z[:-1], z[1:]
    W = np.stack([z1 - z0, 0.5 * (z1**2 - z0**2), (z1**3 - z0**3) / 3.0], -1)
    w_sum, w_dif = E / (1.0 - nu), E / (1.0 + nu)
    es0, ks = _beam_solve(w_sum, e[..., 0] + e[..., 1], W)
    ed0, kd = _beam_solve(w_dif, e[..., 0] - e[..., 1], W)
    g0, kxy = _beam_solve(w_dif, e[..., 2], W)
    e0 = np.stack([0.5 * (es0 + ed0), 0.5 * (es0 - ed0), g0], -1)
    kappa = np.stack([0.5 * (ks + kd), 0.5 * (ks - kd), kxy], -1)
    return PlateResponse(e0, kappa)


def reduced_bending_stiffness(A, B, D):
    """Bending stiffness of the free laminate, D* = D - B A^-1 B (the same about any reference).

    .. math:: D^* = D - B A^{-1} B

    Parameters
    ----------
    A, B, D : numpy.ndarray, shape (3, 3)
        Stiffness from :func:`abd_matrices` [N m-1], [N], [N m].

    Returns
    -------
    numpy.ndarray, shape (3, 3)
        D* [N m] per unit width, acting on (kxx, kyy, kxy_eng).

    References
    ----------
    .. [1] Jones, R. M. *Mechanics of Composite Materials*, 2nd ed., 1999, sec. 4.3 (inverted stiffness).
    """
    A, B, D = (np.asarray(m, dtype=float) for m in (A, B, D))
    return D - B @ np.linalg.solve(A, B)


def stretch_stiffness(A):
    """In-plane stretching stiffness per unit width along x, Y = 1 / (A^-1)_11.

    .. math:: Y = 1 / (A^{-1})_{11}

    Parameters
    ----------
    A : numpy.ndarray, shape (3, 3)
        Extension stiffness [N m-1].

    Returns
    -------
    float
        Y [N m-1] (E h for one isotropic layer of thickness h).
    """
    return float(1.0 / np.linalg.inv(np.asarray(A, dtype=float))[0, 0])


def _spectral(k):
    """Largest principal curvature magnitude of (k11, k22, k12)."""
    mean, half = 0.5 * (k[0] + k[1]), math.hypot(0.5 * (k[0] - k[1]), k[2])
    return abs(mean) + half


def _developable_starts(xbar, Dh, count=3):
    """Best developable tensors c (cos a, sin a) x (cos a, sin a) with c optimal for each direction a."""
    a = np.linspace(0.0, np.pi, 361)[:-1]
    m = np.stack([np.cos(a) ** 2, np.sin(a) ** 2, 2 * np.sin(a) * np.cos(a)], -1)  # engineering twist
    c = (m @ Dh @ xbar) / np.einsum("ij,jk,ik->i", m, Dh, m)
    r = c[:, None] * m - xbar
    f = np.einsum("ij,jk,ik->i", r, Dh, r)
    local = np.flatnonzero((f <= np.roll(f, 1)) & (f <= np.roll(f, -1)))
    best = local[np.argsort(f[local])][:count]
    return [c[i] * np.array([m[i, 0], m[i, 1], 0.5 * m[i, 2]]) for i in best]


def ribbon_shape(kbar, *, Dstar, stretch_stiffness, width, thickness):
    """The curvature a free ribbon adopts from its natural curvature: helicoid, arc or spiral ribbon.

    Minimises the energy per unit length

    .. math:: U(k) = \\frac{w}{2} (\\hat k - \\hat{\\bar k})^{\\mathsf T} D^* (\\hat k - \\hat{\\bar k})
       + \\frac{Y w^5 K^2}{1440}, \\qquad \\hat k = (k_{11}, k_{22}, 2 k_{12}), \\quad
       K = k_{11} k_{22} - k_{12}^2,

    the bending energy about the natural curvature plus the stretching the Gaussian curvature K forces
    across the width (derived in docs/models.md). Narrow ribbons keep kbar; wide ones become developable
    (K -> 0). The centre line (along x) has normal curvature k11, geodesic curvature 0 and geodesic
    torsion k12: a helix of radius kc/(kc^2 + tc^2) and pitch 2 pi |tc|/(kc^2 + tc^2), kc = |k11|, tc = k12.

    Parameters
    ----------
    kbar : array_like, shape (3,)
        Natural curvature (k11, k22, k12) with k12 = w_,xy (not the engineering twist) [m-1].
    Dstar : numpy.ndarray, shape (3, 3)
        Bending stiffness per unit width on (k11, k22, 2 k12), e.g. :func:`reduced_bending_stiffness` [N m].
    stretch_stiffness : float
        In-plane stretching stiffness per unit width Y, e.g. :func:`stretch_stiffness` [N m-1].
    width, thickness : float
        Ribbon width w and thickness h [m].

    Returns
    -------
    RibbonShape
        Adopted curvature, K, centre-line curvature and torsion, helix radius and pitch, twist pitch,
        width parameter w^2 |kbar| / h (|kbar| the largest principal natural curvature magnitude), the
        shape word (thresholds in ``SHAPE_THRESHOLDS``, common practice, no source) and U [J m-1].

    Notes
    -----
    Minimised with scipy's trust-region method (exact gradient and Hessian of the quartic) in curvatures
    scaled by |kbar|, from kbar and from the three best developable tensors (direction scanned every
    0.5 deg, magnitude optimal); the lowest minimum is kept. The stretching term is the leading order for a
    narrow ribbon (w |k| << 1) and, from memory, the reduced energy of Armon et al. [2]; Sawa et al. [1]
    observed the helicoid-to-spiral transition with width.

    References
    ----------
    .. [1] Sawa, Y. et al. "Shape selection of twist-nematic-elastomer ribbons." PNAS 108 (2011) 6364.
    .. [2] Armon, S., Efrati, E., Kupferman, R. and Sharon, E. "Geometry and mechanics in the opening of
       chiral seed pods." Science 333 (2011) 1726.
    """
    from scipy.optimize import minimize

    check_range(width, field="width", unit="m", lo=0, lo_open=True)
    check_range(thickness, field="thickness", unit="m", lo=0, lo_open=True)
    check_range(stretch_stiffness, field="stretch_stiffness", unit="N/m", lo=0, lo_open=True)
    kb = np.asarray(kbar, dtype=float)
    Ds = np.asarray(Dstar, dtype=float)
    if kb.shape != (3,) or not np.all(np.isfinite(kb)):
        _fail("kbar", f"array of shape {kb.shape}", "1/m", "finite, shape (3,)")
    if Ds.shape != (3, 3) or not np.all(np.isfinite(Ds)) or np.any(np.linalg.eigvalsh(0.5 * (Ds + Ds.T)) <= 0):
        _fail("Dstar", "a matrix", "N m", "3x3, symmetric positive definite")
    P = np.diag([1.0, 1.0, 2.0])
    s_bar = _spectral(kb)

    def energy(k):
        r = P @ (k - kb)
        gauss = k[0] * k[1] - k[2] ** 2
        return 0.5 * width * r @ Ds @ r + stretch_stiffness * width**5 * gauss**2 / 1440.0

    if s_bar == 0.0:
        k = np.zeros(3)
    else:
        d_ref = float(np.max(np.diag(Ds)))
        Dh = P @ Ds @ P / d_ref  # acts on scaled (k11, k22, k12)
        xbar = kb / s_bar
        lam = stretch_stiffness * width**4 * s_bar**2 / (720.0 * d_ref)
        Hg = np.array([[0.0, 1.0, 0.0], [1.0, 0.0, 0.0], [0.0, 0.0, -2.0]])

        def f(x):
            r, g = x - xbar, x[0] * x[1] - x[2] ** 2
            return r @ Dh @ r + lam * g * g

        def jac(x):
            g = x[0] * x[1] - x[2] ** 2
            return 2 * Dh @ (x - xbar) + 2 * lam * g * np.array([x[1], x[0], -2 * x[2]])

        def hess(x):
            g, dg = x[0] * x[1] - x[2] ** 2, np.array([x[1], x[0], -2 * x[2]])
            return 2 * Dh + 2 * lam * (np.outer(dg, dg) + g * Hg)

        best = None
        Dhat = Ds / d_ref  # developable scan on (k11, k22, 2 k12)
        for x0 in [xbar] + _developable_starts(P @ xbar, Dhat):
            res = minimize(f, x0, jac=jac, hess=hess, method="trust-exact", options={"gtol": 1e-11})
            if best is None or res.fun < best.fun:
                best = res
        k = best.x * s_bar
    gauss = float(k[0] * k[1] - k[2] ** 2)
    kc, tc = abs(float(k[0])), float(k[2])
    den = kc * kc + tc * tc
    radius = kc / den if den > 0 else 0.0
    pitch = 2 * math.pi * abs(tc) / den if den > 0 else math.inf
    twist_pitch = 2 * math.pi / abs(tc) if tc != 0 else math.inf
    s = _spectral(k)
    th = SHAPE_THRESHOLDS
    if s <= th["FLAT"] * s_bar or s == 0.0:
        word = "flat"
    elif abs(tc) <= th["SMALL"] * s:
        word = "arc"
    elif kc <= th["SMALL"] * s and gauss < 0:
        word = "helicoid"
    elif abs(gauss) <= th["DEVELOPABLE"] * s * s:
        word = "spiral ribbon"
    else:
        word = "twisted arc"
    return RibbonShape(k, gauss, kc, tc, radius, pitch, twist_pitch, float(width**2 * s_bar / thickness), word,
                       float(energy(k)))


def ribbon_surface(k, *, length, width, n_along=60, n_across=7):
    """Coordinates of a ribbon's mid-surface with uniform curvature k, for a 3-D figure.

    The centre line starts at the origin along +x with the surface normal +z; its Darboux frame
    (tangent T, in-surface normal U across the width, surface normal N) follows

    .. math:: T' = k_{11} N, \\quad U' = k_{12} N, \\quad N' = -k_{11} T - k_{12} U

    (geodesic curvature 0), integrated exactly with a matrix exponential (a helix). Across the width the
    surface is the second-order patch r + v U + (k22 v^2 / 2) N, -w/2 <= v <= w/2 (exact to O(w^3 k^2)).

    Parameters
    ----------
    k : array_like, shape (3,)
        Curvature (k11, k22, k12), k12 = w_,xy [m-1].
    length, width : float
        Ribbon length along the centre line and width [m].
    n_along, n_across : int
        Points along and across (n_across odd puts a column on the centre line).

    Returns
    -------
    X, Y, Z : numpy.ndarray, shape (n_along, n_across)
        Coordinates [m].
    """
    from scipy.linalg import expm

    check_range(length, field="length", unit="m", lo=0, lo_open=True)
    check_range(width, field="width", unit="m", lo=0, lo_open=True)
    check_range(n_along, field="n_along", unit="1", lo=2, hi=100000)
    check_range(n_across, field="n_across", unit="1", lo=2, hi=10000)
    k11, k22, k12 = (float(v) for v in np.asarray(k, dtype=float).reshape(3))
    gen = np.zeros((4, 4))
    gen[:3, :3] = [[0.0, 0.0, -k11], [0.0, 0.0, -k12], [k11, k12, 0.0]]
    gen[0, 3] = 1.0
    s = np.linspace(0.0, length, int(n_along))
    frames = np.array([expm(si * gen) for si in s])  # columns: T, U, N, r in world coordinates
    v = np.linspace(-0.5 * width, 0.5 * width, int(n_across))
    pts = (frames[:, None, :3, 3] + v[None, :, None] * frames[:, None, :3, 1]
           + 0.5 * k22 * v[None, :, None] ** 2 * frames[:, None, :3, 2])
    return pts[..., 0], pts[..., 1], pts[..., 2]
