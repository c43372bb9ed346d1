"""Mechanics stage: layered-beam force and moment balance.

Strain through the thickness follows the textbook beam sign,
:math:`e(z) = e_0 - \\kappa z` (z from the bottom face), and the stress is
:math:`\\sigma = E (e - e^*)`. With the section integrals (per unit width)

.. math:: A = \\int E\\,dz,\\; B = \\int E z\\,dz,\\; D = \\int E z^2\\,dz,\\;
   N^* = \\int E e^*\\,dz,\\; M^* = \\int E e^* z\\,dz

the free strip (no net force, no net moment) has

.. math:: e_0 = \\frac{D N^* - B M^*}{A D - B^2}, \\qquad
   \\kappa = \\frac{B N^* - A M^*}{A D - B^2}.

This is the general form of Timoshenko's bimetal solution for any number of
layers and any through-thickness eigenstrain and modulus. Curvature
:math:`\\kappa > 0` bends the strip toward +z (the top face becomes concave).
Integrals are exact for values constant within each cell.

References
----------
.. [1] Timoshenko, S. "Analysis of bi-metal thermostats." J. Opt. Soc. Am. 11
   (1925) 233–255.
.. [2] Hsueh, C. H. "Thermal stresses in elastic multilayer systems." Thin Solid
   Films 418 (2002) 182–188.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from .material import hyper_state, hyper_stress_nb

#: Mechanical conditions of a protocol step, as the kernel codes them.
HOLD_FREE = 0
HOLD_STRETCH = 1
HOLD_BEND = 2
HOLD_FLAT = 3
#: Scenario hold names -> codes ("release" is a free step).
HOLD_CODES = {"free": HOLD_FREE, "release": HOLD_FREE, "stretch": HOLD_STRETCH, "bend": HOLD_BEND, "flat": HOLD_FLAT}
#: Codes -> the hold names :func:`held_strip_response` takes.
HOLD_NAMES = {HOLD_FREE: "free", HOLD_STRETCH: "stretch", HOLD_BEND: "bend", HOLD_FLAT: "flat"}


def _cell_weights(z_edges):
    """Exact per-cell weights of int 1, z, z^2 dz; with a design axis, shaped to broadcast as (design, 1, cell)."""
    z0, z1 = z_edges[..., :-1], z_edges[..., 1:]
    return z1 - z0, 0.5 * (z1**2 - z0**2), (z1**3 - z0**3) / 3.0


def _weighted_sum(values, weights):
    """Sum over cells of values (..., n_cell) times weights (n_cell,) or (n_design, n_cell)."""
    if weights.ndim == 1:
        return values @ weights
    return np.matmul(values, weights[..., None])[..., 0]


def section_integrals(*, z_edges, modulus, eigenstrain):
    """Section integrals A, B, D, N*, M* per unit width (exact per cell).

    Parameters
    ----------
    z_edges : numpy.ndarray, shape (n_cell + 1,) or (n_design, n_cell + 1)
        Cell faces from the bottom face z = 0 [m]; with a design axis, ``modulus``
        and ``eigenstrain`` are (n_design, n_time, n_cell).
    modulus : numpy.ndarray, shape (..., n_cell)
        Section modulus of each cell [Pa].
    eigenstrain : numpy.ndarray, shape (..., n_cell)
        Eigenstrain of each cell [1].

    Returns
    -------
    dict of numpy.ndarray, shape (...)
        ``A`` [N m-1], ``B`` [N], ``D`` [N m], ``N_star`` [N m-1], ``M_star`` [N].
    """
    w1, w2, w3 = _cell_weights(np.asarray(z_edges))
    e_star = modulus * eigenstrain
    return {
        "A": _weighted_sum(modulus, w1),
        "B": _weighted_sum(modulus, w2),
        "D": _weighted_sum(modulus, w3),
        "N_star": _weighted_sum(e_star, w1),
        "M_star": _weighted_sum(e_star, w2),
    }


def free_strip_response(*, z_edges, modulus, eigenstrain):
    """Strain at z = 0 and curvature of a free strip (zero force and moment).

    .. math:: \\begin{pmatrix} A & -B \\\\ B & -D \\end{pmatrix}
       \\begin{pmatrix} e_0 \\\\ \\kappa \\end{pmatrix} =
       \\begin{pmatrix} N^* \\\\ M^* \\end{pmatrix}

    Parameters
    ----------
    z_edges : numpy.ndarray, shape (n_cell + 1,) or (n_design, n_cell + 1)
        [m] (see :func:`section_integrals`).
    modulus : numpy.ndarray, shape (..., n_cell)
        [Pa].
    eigenstrain : numpy.ndarray, shape (..., n_cell)
        [1].

    Returns
    -------
    (strain_bottom, curvature, bending_stiffness) : numpy.ndarray, shape (...)
        e0 at z = 0 [1], kappa [m-1] and the bending stiffness about the
        neutral axis per unit width, D - B^2/A [N m].
    """
    s = section_integrals(z_edges=z_edges, modulus=modulus, eigenstrain=eigenstrain)
    det = s["A"] * s["D"] - s["B"] ** 2
    e0 = (s["D"] * s["N_star"] - s["B"] * s["M_star"]) / det
    kappa = (s["B"] * s["N_star"] - s["A"] * s["M_star"]) / det
    return e0, kappa, det / s["A"]


def stress_profile(*, z_centres, modulus, eigenstrain, strain_bottom, curvature):
    """Stress of each cell, sigma = E (e0 - kappa z - e*), at cell centres [Pa].

    Parameters
    ----------
    z_centres : numpy.ndarray, shape (n_cell,)
        [m].
    modulus, eigenstrain : numpy.ndarray, shape (..., n_cell)
        [Pa], [1].
    strain_bottom, curvature : numpy.ndarray, shape (...)
        [1], [m-1].
    """
    e = np.asarray(strain_bottom)[..., None] - np.asarray(curvature)[..., None] * z_centres
    return modulus * (e - eigenstrain)


def blocked_moment(*, bending_stiffness, curvature, width):
    """Moment that holds the strip flat, M = b (D - B^2/A) kappa_free [N m].

    Holding kappa = 0 with the axial strain free leaves the section moment
    :math:`B N^*/A - M^*`, which equals the free curvature times the bending
    stiffness about the neutral axis.

    Parameters
    ----------
    bending_stiffness : array_like
        Per unit width, D - B^2/A [N m].
    curvature : array_like
        Free curvature [m-1].
    width : float
        Strip width [m].
    """
    return width * np.asarray(bending_stiffness) * np.asarray(curvature)


def blocked_tip_force(*, bending_stiffness, curvature, width, free_length):
    """Force that holds the tip of a uniformly curved cantilever in place (small deflection).

    .. math:: F = \\frac{3 E I \\kappa}{2 L}

    from equating the free tip deflection :math:`\\kappa L^2/2` with the tip
    deflection under an end load, :math:`F L^3/(3 E I)`; the tip is free to rotate.

    Parameters
    ----------
    bending_stiffness : array_like
        Per unit width [N m].
    curvature : array_like
        Free curvature [m-1].
    width, free_length : float
        [m].

    Returns
    -------
    numpy.ndarray
        Force normal to the clamped tangent [N], positive toward +z.

    References
    ----------
    .. [1] Gere, J. M. and Timoshenko, S. P. Mechanics of Materials, 4th ed.,
       PWS 1997, Appendix G (cantilever deflections).
    """
    ei = width * np.asarray(bending_stiffness)
    return 1.5 * ei * np.asarray(curvature) / free_length


def arc_tip_position(*, curvature, free_length):
    r"""Tip of a uniformly curved cantilever (exact circular arc), clamped tangent along +x.

    Uses :func:`actsim.elastica.circular_arc_tip` (half-angle form, no 0/0 and no
    cancellation as kappa L -> 0):

    .. math:: x = \frac{\sin \kappa L}{\kappa}, \qquad y = \frac{1 - \cos \kappa L}{\kappa}

    Parameters
    ----------
    curvature : array_like
        [m-1].
    free_length : float
        [m].

    Returns
    -------
    (x_tip, y_tip) : numpy.ndarray
        Tip position along the clamped tangent and toward +z [m].
    """
    from .elastica import circular_arc_tip

    x, y, _ = circular_arc_tip(curvature=np.asarray(curvature, dtype=float), length=free_length)
    return np.asarray(x), np.asarray(y)


@njit(cache=True, error_model="numpy")
def section_series(z_edges, z_centres, modulus, modulus_eigenstrain, strain_bottom, curvature, eigenstrain, stress):
    """Eigenstrain, stress and the free strip's curvature and bending stiffness at every output time, in one pass.

    The fused form of :func:`free_strip_response` and :func:`stress_profile` for
    (n_time, n_cell) results: per row the eigenstrain :math:`e^* = (E e^*)/E`, the
    section integrals (exact per cell), and the stress under the row's actual strain
    state,

    .. math:: \\kappa_\\mathrm{free} = \\frac{B N^* - A M^*}{A D - B^2},\\qquad
       \\bar D = D - \\frac{B^2}{A},\\qquad \\sigma = E\\,(e_0 - \\kappa z - e^*).

    Parameters
    ----------
    z_edges : numpy.ndarray, shape (n_cell + 1,)
        Cell faces from the bottom face [m].
    z_centres : numpy.ndarray, shape (n_cell,)
        Cell centres [m].
    modulus : numpy.ndarray, shape (n_time, n_cell)
        Section modulus [Pa].
    modulus_eigenstrain : numpy.ndarray, shape (n_time, n_cell)
        Modulus times eigenstrain, as the time loop stores it [Pa].
    strain_bottom, curvature : numpy.ndarray, shape (n_time,)
        The strip's actual strain at z = 0 [1] and curvature [m-1] (free or held).
    eigenstrain, stress : numpy.ndarray, shape (n_time, n_cell)
        Outputs [1], [Pa]; ``eigenstrain`` may be ``modulus_eigenstrain`` itself (overwritten row by row).

    Returns
    -------
    (free_curvature, bending_stiffness, finite) : (numpy.ndarray, numpy.ndarray, bool)
        Curvature of the free strip [m-1], bending stiffness about the neutral axis per unit
        width [N m], and whether every curvature and stress is finite.

    References
    ----------
    .. [1] Timoshenko, S. "Analysis of bi-metal thermostats." J. Opt. Soc. Am. 11 (1925) 233-255.
    .. [2] Hsueh, C. H. "Thermal stresses in elastic multilayer systems." Thin Solid Films 418 (2002) 182-188.
    """
    n_time, n_cell = modulus.shape
    w1 = np.empty(n_cell)
    w2 = np.empty(n_cell)
    w3 = np.empty(n_cell)
    for i in range(n_cell):
        z0, z1 = z_edges[i], z_edges[i + 1]
        w1[i] = z1 - z0
        w2[i] = 0.5 * (z1**2 - z0**2)
        w3[i] = (z1**3 - z0**3) / 3.0
    kappa_free = np.empty(n_time)
    stiffness = np.empty(n_time)
    finite = True
    for t in range(n_time):
        a = b = d = n_star = m_star = 0.0
        e0, kappa = strain_bottom[t], curvature[t]
        for i in range(n_cell):
            e = modulus[t, i]
            es = modulus_eigenstrain[t, i] / e
            eigenstrain[t, i] = es
            ee = e * es
            a += e * w1[i]
            b += e * w2[i]
            d += e * w3[i]
            n_star += ee * w1[i]
            m_star += ee * w2[i]
            s = e * ((e0 - kappa * z_centres[i]) - es)
            stress[t, i] = s
            finite = finite and math.isfinite(s)
        det = a * d - b * b
        kappa_free[t] = (b * n_star - a * m_star) / det
        stiffness[t] = det / a
        finite = finite and math.isfinite(kappa) and math.isfinite(kappa_free[t])
    return kappa_free, stiffness, finite


@njit(cache=True)
def strain_peaks(strain_bottom, curvature, z_edges, z_centres, eigenstrain):
    """Largest strains over the output times: total strain at each cell face, elastic strain at each centre.

    .. math:: \\max_t |e_0 - \\kappa z_j| \\;(\\text{faces } z_j), \\qquad
       \\max_t |e_0 - \\kappa z_i - e^*_i| \\;(\\text{centres } z_i)

    Parameters
    ----------
    strain_bottom, curvature : numpy.ndarray, shape (n_time,)
        Strain at z = 0 [1] and curvature [m-1].
    z_edges : numpy.ndarray, shape (n_cell + 1,)
        [m].
    z_centres : numpy.ndarray, shape (n_cell,)
        [m].
    eigenstrain : numpy.ndarray, shape (n_time, n_cell)
        [1].

    Returns
    -------
    (face_peaks, centre_peaks) : numpy.ndarray, shapes (n_cell + 1,), (n_cell,)
        [1].

    References
    ----------
    .. [1] Timoshenko, S. "Analysis of bi-metal thermostats." J. Opt. Soc. Am. 11 (1925) 233-255 (the strain
       field e_0 - kappa z of a layered beam).
    """
    n_time, n_cell = eigenstrain.shape
    faces = np.zeros(n_cell + 1)
    centres = np.zeros(n_cell)
    for t in range(n_time):
        e0, k = strain_bottom[t], curvature[t]
        for j in range(n_cell + 1):
            v = abs(e0 - k * z_edges[j])
            if v > faces[j]:
                faces[j] = v
        for i in range(n_cell):
            v = abs(e0 - k * z_centres[i] - eigenstrain[t, i])
            if v > centres[i]:
                centres[i] = v
    return faces, centres


@njit(cache=True)
def arc_tip_series(curvature, free_length):
    """Tip of a uniformly curved cantilever at every output time (the loop form of :func:`arc_tip_position`).

    .. math:: x = L\\,\\mathrm{sinc}\\,\\theta,\\qquad y = L\\,\\frac{\\theta}{2}\\,\\mathrm{sinc}^2\\frac{\\theta}{2},
       \\qquad \\theta = \\kappa L,\\quad \\mathrm{sinc}\\,u = \\frac{\\sin u}{u}

    Parameters
    ----------
    curvature : numpy.ndarray, shape (n_time,)
        [m-1].
    free_length : float
        [m].

    Returns
    -------
    (x_tip, y_tip) : numpy.ndarray, shape (n_time,)
        [m].

    References
    ----------
    .. [1] Timoshenko, S. P. and Gere, J. M., *Theory of Elastic Stability*, 2nd ed., McGraw-Hill, 1961.
    """
    n = curvature.size
    x = np.empty(n)
    y = np.empty(n)
    for t in range(n):
        th = curvature[t] * free_length
        half = 0.5 * th
        s1 = 1.0 if th == 0.0 else math.sin(th) / th
        s2 = 1.0 if half == 0.0 else math.sin(half) / half
        x[t] = free_length * s1
        y[t] = free_length * half * s2 * s2
    return x, y


def held_strip_response(*, z_edges, modulus, eigenstrain, hold, value=0.0, centred_modulus=None):
    """Strain at z = 0, curvature and the holding force and moment under a mechanical condition.

    Conditions: ``"free"`` (N = M = 0); ``"stretch"`` (uniform strain
    ``value``, curvature held at zero by the grips); ``"bend"`` (curvature
    ``value`` [m-1], no axial force, as around a mandrel); ``"flat"``
    (curvature zero, no axial force). The holding force and moment are the
    section resultants :math:`N = A e_0 - B\\kappa - N^*` and
    :math:`M = B e_0 - D\\kappa - M^*` about z = 0, per unit width.

    Parameters
    ----------
    z_edges : numpy.ndarray
        [m].
    modulus, eigenstrain : numpy.ndarray, shape (n_cell,)
        [Pa], [1].
    hold : str
        One of "free", "release", "stretch", "bend", "flat".
    value : float
        Strain [1] for "stretch", curvature [m-1] for "bend".
    centred_modulus : numpy.ndarray, shape (n_cell,), optional
        The part of ``modulus`` whose stress is taken at the cell centre (constant over the cell: the
        Maxwell elements of a relaxing material) [Pa]; it adds nothing to the in-cell bending stiffness,
        D is reduced by sum_i E_c,i dz_i^3 / 12 (the midpoint rule for its moment).

    Returns
    -------
    (e0, kappa, N, M) : float
        [1], [m-1], [N m-1], [N].
    """
    s = section_integrals(z_edges=z_edges, modulus=modulus, eigenstrain=eigenstrain)
    A, B, D, Ns, Ms = s["A"], s["B"], s["D"], s["N_star"], s["M_star"]
    if centred_modulus is not None:
        D = D - float(np.sum(np.asarray(centred_modulus) * np.diff(z_edges) ** 3)) / 12.0
    if hold == "stretch":
        e0, kappa = value, 0.0
    elif hold == "bend":
        kappa = value
        e0 = (Ns + B * kappa) / A
    elif hold == "flat":
        e0, kappa = Ns / A, 0.0
    elif centred_modulus is not None:  # N = M = 0 with the reduced D (Cramer's rule)
        det = A * D - B * B
        e0, kappa = (D * Ns - B * Ms) / det, (B * Ns - A * Ms) / det
    else:
        e0, kappa, _ = free_strip_response(z_edges=z_edges, modulus=modulus, eigenstrain=eigenstrain)
    return e0, kappa, A * e0 - B * kappa - Ns, B * e0 - D * kappa - Ms


@njit(cache=True)
def _held_state(A, B, D, Ns, Ms, hold, value):
    """Strain at z = 0, curvature and the holding force and moment from the section integrals, for a hold.

    Free: N = M = 0; stretch: e0 given, kappa = 0; bend: kappa given, N = 0; flat: kappa = 0, N = 0. The
    holding resultants per unit width are N = A e0 - B kappa - N*, M = B e0 - D kappa - M*.
    """
    if hold == HOLD_STRETCH:
        kappa = 0.0
        e0 = value
    elif hold == HOLD_BEND:
        kappa = value
        e0 = (Ns + B * kappa) / A
    elif hold == HOLD_FLAT:
        kappa = 0.0
        e0 = Ns / A
    else:
        det = A * D - B * B
        e0 = (D * Ns - B * Ms) / det
        kappa = (B * Ns - A * Ms) / det
    N = A * e0 - B * kappa - Ns
    M = B * e0 - D * kappa - Ms
    return e0, kappa, N, M


@njit(cache=True)
def section_solve(z_edges, E, Ee, hold, value):
    """Kernel step of :func:`held_strip_response`: strain at z = 0 and curvature under a hold code.

    Parameters
    ----------
    z_edges : numpy.ndarray, shape (n_cell + 1,)
        Cell faces [m].
    E, Ee : numpy.ndarray, shape (n_cell,)
        Section modulus [Pa] and modulus times eigenstrain [Pa].
    hold : int
        HOLD_FREE, HOLD_STRETCH, HOLD_BEND or HOLD_FLAT.
    value : float
        Strain [1] (stretch) or curvature [m-1] (bend).

    Returns
    -------
    (e0, kappa, N, M) : float
        [1], [m-1], and the section's force [N m-1] and moment about z = 0 [N]
        per unit width (zero for a free strip).
    """
    A = 0.0
    B = 0.0
    D = 0.0
    Ns = 0.0
    Ms = 0.0
    for i in range(E.size):
        z0 = z_edges[i]
        z1 = z_edges[i + 1]
        w1 = z1 - z0
        w2 = 0.5 * (z1 * z1 - z0 * z0)
        w3 = (z1 * z1 * z1 - z0 * z0 * z0) / 3.0
        A += E[i] * w1
        B += E[i] * w2
        D += E[i] * w3
        Ns += Ee[i] * w1
        Ms += Ee[i] * w2
    return _held_state(A, B, D, Ns, Ms, hold, value)


@njit(cache=True)
def section_solve_centred(z_edges, E, Ee, Ec, hold, value):
    """:func:`section_solve` where the part ``Ec`` of each cell's modulus acts on the strain at the cell centre only.

    The stress of that part is constant over the cell, Ec (e0 - kappa z_c) (the midpoint rule), so the
    bending stiffness loses its in-cell term: D = sum E w3 - Ec w1^3 / 12, with w1 the cell width and
    w3 = int z^2 dz. Used for the Maxwell elements of a relaxing material, whose stresses are kept at the
    cell centres: the relaxed part of their algorithmic modulus (Ec <= 0) acts on the same strain as their
    history stress, and the strain's variation across a cell meets the instantaneous modulus, so the result
    does not depend on the step through the in-cell strain. Ec = 0 gives :func:`section_solve` exactly.

    Parameters
    ----------
    z_edges : numpy.ndarray, shape (n_cell + 1,)
        Cell faces [m].
    E, Ee : numpy.ndarray, shape (n_cell,)
        Section modulus [Pa] (Ec included) and modulus times eigenstrain [Pa].
    Ec : numpy.ndarray, shape (n_cell,)
        The part of E taken at the cell centre [Pa].
    hold : int
        HOLD_FREE, HOLD_STRETCH, HOLD_BEND or HOLD_FLAT.
    value : float
        Strain [1] (stretch) or curvature [m-1] (bend).

    Returns
    -------
    (e0, kappa, N, M) : float
        As :func:`section_solve`.
    """
    A = 0.0
    B = 0.0
    D = 0.0
    Ns = 0.0
    Ms = 0.0
    for i in range(E.size):
        z0 = z_edges[i]
        z1 = z_edges[i + 1]
        w1 = z1 - z0
        w2 = 0.5 * (z1 * z1 - z0 * z0)
        w3 = (z1 * z1 * z1 - z0 * z0 * z0) / 3.0
        A += E[i] * w1
        B += E[i] * w2
        D += E[i] * w3 - Ec[i] * (w1 * w1 * w1 / 12.0)
        Ns += Ee[i] * w1
        Ms += Ee[i] * w2
    return _held_state(A, B, D, Ns, Ms, hold, value)


#: Gauss-Legendre points of the hyperelastic section integrals: two per cell (exact for a stress cubic in z).
GAUSS_OFFSET = 0.5 / math.sqrt(3.0)
#: Newton iterations of the hyperelastic section solve, and its step tolerance on e0 and kappa h [1].
HYPER_MAX_ITER = 60
HYPER_TOL = 1e-14


@njit(cache=True)
def hyper_resultants(z_edges, E, Ee, law, jm, hs, e0, kappa):
    """Force and moment of a section with hyperelastic cells, and their tangents, for lambda(z) = 1 + e0 - kappa z.

    Nominal stress (force per undeformed area) of each cell: linear cells E (lambda - 1) - E e*; hyperelastic
    cells C_p f(lambda / lambda_s) / lambda + C_n x f_nH(lambda / lambda_n) / lambda (the light network
    neo-Hookean), f from :func:`actsim.material.hyper_stress_nb`. Two Gauss points per cell.

    Parameters
    ----------
    z_edges : numpy.ndarray, shape (n_cell + 1,)
        Cell faces of the undeformed strip [m].
    E, Ee : numpy.ndarray, shape (n_cell,)
        Section modulus [Pa] and modulus times eigenstrain [Pa] (used for the linear cells).
    law : numpy.ndarray of int64, shape (n_cell,)
        Strain law of each cell (``actsim.material.STRAIN_*``) [1].
    jm : numpy.ndarray, shape (n_cell,)
        Gent's J_m (0: neo-Hookean) [1].
    hs : numpy.ndarray, shape (4, n_cell)
        From :func:`actsim.material.hyper_state`: C_p [Pa], e_s [1], C_n x [Pa], e_n [1].
    e0, kappa : float
        Stretch less 1 at z = 0 [1] and bend angle per undeformed length [m-1].

    Returns
    -------
    (N, M, A, B, D) : float
        N = int P dz [N m-1], M = int P z dz [N], and the tangents int dP/dlambda (1, z, z^2) dz
        [N m-1], [N], [N m].
    """
    N = 0.0
    M = 0.0
    A = 0.0
    B = 0.0
    D = 0.0
    for i in range(E.size):
        z0 = z_edges[i]
        w = z_edges[i + 1] - z0
        for g in range(2):
            z = z0 + w * (0.5 - GAUSS_OFFSET if g == 0 else 0.5 + GAUSS_OFFSET)
            e = e0 - kappa * z
            lam = 1.0 + e
            if law[i] == 0:
                p = E[i] * e - Ee[i]
                dp = E[i]
            else:
                ls = 1.0 + hs[1, i]
                f, df = hyper_stress_nb((e - hs[1, i]) / ls, law[i], jm[i])
                p = hs[0, i] * f / lam
                dp = hs[0, i] * (df / (ls * lam) - f / (lam * lam))
                if hs[2, i] > 0.0:
                    ln = 1.0 + hs[3, i]
                    f, df = hyper_stress_nb((e - hs[3, i]) / ln, law[i], 0.0)
                    p += hs[2, i] * f / lam
                    dp += hs[2, i] * (df / (ln * lam) - f / (lam * lam))
            hw = 0.5 * w
            N += hw * p
            M += hw * p * z
            A += hw * dp
            B += hw * dp * z
            D += hw * dp * z * z
    return N, M, A, B, D


@njit(cache=True)
def section_solve_hyper(z_edges, E, Ee, law, jm, hs, hold, value, e0, kappa):
    """:func:`section_solve` for a section with hyperelastic cells: Newton from the guess (e0, kappa).

    Kinematics of plane sections (a Reissner beam): the stretch along the strip of the fibre at
    undeformed height z is :math:`\\lambda(z) = 1 + e_0 - \\kappa z`, so e0 is the stretch less 1 of the
    bottom face and kappa the bend angle per undeformed length (the bend angle of a length L is
    kappa L exactly; the fibre at z has the geometric curvature kappa / lambda(z)). The free strip solves
    N = M = 0, the held steps as :func:`section_solve`; each Newton step is halved until the force and
    moment misfit falls (at most 30 times), and the iteration stops when |de0| + |dkappa| h < 1e-14.

    Parameters
    ----------
    z_edges : numpy.ndarray, shape (n_cell + 1,)
        Cell faces of the undeformed strip [m].
    E, Ee : numpy.ndarray, shape (n_cell,)
        Section modulus [Pa] and modulus times eigenstrain [Pa] (the linear cells).
    law : numpy.ndarray of int64, shape (n_cell,)
        Strain law of each cell [1].
    jm : numpy.ndarray, shape (n_cell,)
        Gent's J_m (0: neo-Hookean) [1].
    hs : numpy.ndarray, shape (4, n_cell)
        From :func:`actsim.material.hyper_state`: C_p [Pa], e_s [1], C_n x [Pa], e_n [1].
    hold : int
        HOLD_FREE, HOLD_STRETCH, HOLD_BEND or HOLD_FLAT.
    value : float
        Strain lambda - 1 [1] (stretch) or kappa [m-1] (bend).
    e0, kappa : float
        The start: the linear solution (:func:`section_solve`) [1], [m-1].

    Returns
    -------
    (e0, kappa, N, M) : float
        As :func:`section_solve`; N and M from the nominal stress, about z = 0 of the undeformed section.

    References
    ----------
    .. [1] Reissner, E. "On one-dimensional finite-strain beam theory: the plane problem." Z. angew. Math.
       Phys. 23 (1972) 795–804.
    """
    h = z_edges[z_edges.size - 1] - z_edges[0]
    if hold == HOLD_STRETCH:
        e0 = value
        kappa = 0.0
    elif hold == HOLD_BEND:
        kappa = value
    elif hold == HOLD_FLAT:
        kappa = 0.0
    N, M, A, B, D = hyper_resultants(z_edges, E, Ee, law, jm, hs, e0, kappa)
    if hold == HOLD_STRETCH:
        return e0, kappa, N, M
    free = hold == HOLD_FREE
    for _ in range(HYPER_MAX_ITER):
        if free:
            det = A * D - B * B  # [[A, -B], [B, -D]] (de0, dk) = -(N, M)
            de = (-N * -D - (-B) * -M) / (-det)
            dk = (A * -M - B * -N) / (-det)
        else:
            de = -N / A
            dk = 0.0
        res0 = abs(N) + abs(M) / h if free else abs(N)
        t = 1.0
        for _k in range(30):
            N1, M1, A1, B1, D1 = hyper_resultants(z_edges, E, Ee, law, jm, hs, e0 + t * de, kappa + t * dk)
            res1 = abs(N1) + abs(M1) / h if free else abs(N1)
            if math.isfinite(res1) and math.isfinite(A1) and (res1 <= res0 or res1 == 0.0):
                break
            t *= 0.5
        e0 += t * de
        kappa += t * dk
        N, M, A, B, D = N1, M1, A1, B1, D1
        if abs(t * de) + abs(t * dk) * h < HYPER_TOL:
            break
    return e0, kappa, N, M


@njit(cache=True)
def hyper_section_series(z_edges, z_centres, x, T, S, mat, T_ref, E, Ee, strain_bottom, curvature, kappa_free,
                         stiffness, stress):
    """The output-time mechanics of :func:`section_series` redone for the hyperelastic cells, in place.

    Per output time: the Cauchy stress of each hyperelastic cell at its centre,
    :math:`\\sigma = C_p f(\\lambda/\\lambda_s) + C_n x f_{nH}(\\lambda/\\lambda_n)` with
    :math:`\\lambda = 1 + e_0 - \\kappa z` (linear cells keep theirs), the free strip's bend per undeformed
    length by :func:`section_solve_hyper` (started from the linear one), and the tangent bending stiffness
    about the neutral axis at the actual state, :math:`D_t - B_t^2/A_t` (from the nominal stress).

    Parameters
    ----------
    z_edges, z_centres : numpy.ndarray
        Cell faces (n_cell + 1,) and centres (n_cell,) [m].
    x, T, S : numpy.ndarray, shape (n_time or 1, n_cell)
        Conversion [1], temperature [K], network-weighted formation strain [1] (one row: the same at every time).
    mat : actsim.material.MaterialParams
    T_ref : float
        Zero of the thermal strain [K].
    E, Ee : numpy.ndarray, shape (n_time, n_cell)
        Section modulus and modulus times eigenstrain as the time loop recorded them [Pa].
    strain_bottom, curvature : numpy.ndarray, shape (n_time,)
        The strip's actual e0 [1] and kappa [m-1].
    kappa_free, stiffness : numpy.ndarray, shape (n_time,)
        In: the linear values (the Newton start); out: the hyperelastic ones [m-1], [N m].
    stress : numpy.ndarray, shape (n_time, n_cell)
        Out (hyperelastic cells): Cauchy stress [Pa].

    Returns
    -------
    bool
        Whether every value is finite.
    """
    n_time, n_cell = E.shape
    hs = np.zeros((4, n_cell))
    finite = True
    for t in range(n_time):
        tx, tT, tS = min(t, x.shape[0] - 1), min(t, T.shape[0] - 1), min(t, S.shape[0] - 1)
        hyper_state(x[tx], T[tT], S[tS], mat, T_ref, E[t], hs)
        for i in range(n_cell):
            if mat.strain_law[i] == 0:
                continue
            e = strain_bottom[t] - curvature[t] * z_centres[i]
            f, _ = hyper_stress_nb((e - hs[1, i]) / (1.0 + hs[1, i]), mat.strain_law[i], mat.extensibility[i])
            s = hs[0, i] * f
            if hs[2, i] > 0.0:
                f, _ = hyper_stress_nb((e - hs[3, i]) / (1.0 + hs[3, i]), mat.strain_law[i], 0.0)
                s += hs[2, i] * f
            stress[t, i] = s
            finite = finite and math.isfinite(s)
        r = section_solve_hyper(z_edges, E[t], Ee[t], mat.strain_law, mat.extensibility, hs, HOLD_FREE, 0.0,
                                0.0, kappa_free[t])
        kappa_free[t] = r[1]
        _, _, a, b, d = hyper_resultants(z_edges, E[t], Ee[t], mat.strain_law, mat.extensibility, hs,
                                         strain_bottom[t], curvature[t])
        stiffness[t] = d - b * b / a
        finite = finite and math.isfinite(r[1]) and math.isfinite(stiffness[t])
    return finite
