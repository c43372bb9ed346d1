"""Large strain: incompressible neo-Hookean and Gent layers (hyperelastic laws of a cell).

A layer with ``strain_law = "neo-hookean"`` or ``"gent"`` has the axial Cauchy stress of an
incompressible hyperelastic solid along the strip, under plane stress (beam) or plane strain
across the width (plate), of the elastic stretch :math:`\\lambda_e = \\lambda/\\lambda_s`:

.. math:: \\sigma_\\mathrm{beam} = \\mu\\, g\\, (\\lambda_e^2 - \\lambda_e^{-1}), \\qquad
   \\sigma_\\mathrm{plate} = \\mu\\, g\\, (\\lambda_e^2 - \\lambda_e^{-2}), \\qquad
   g = \\frac{J_m}{J_m - (I_1 - 3)}

(g = 1 for neo-Hookean): :func:`hyperelastic_stress` (readable), the kernel steps
:func:`hyper_stress_nb` and :func:`hyper_state`. The per-cell parameters are the fields
``strain_law`` and ``extensibility`` of :class:`actsim.material.MaterialParams`;
:mod:`actsim.material` re-exports every public name of this module (and this module does not
import it).

References
----------
.. [1] Treloar, L. R. G. The Physics of Rubber Elasticity, 3rd ed., Clarendon Press 1975, ch. 4 and 5.
.. [2] Gent, A. N. "A new constitutive relation for rubber." Rubber Chem. Technol. 69 (1996) 59–61.
"""

from __future__ import annotations

import math

import numpy as np
from numba import njit

from .units import scalar_or_array

#: Strain law of a cell: small strain (linear), hyperelastic under plane stress (beam), under plane strain (plate).
STRAIN_LINEAR = 0
STRAIN_UNIAXIAL = 1
STRAIN_PLANE = 2
#: Scenario names of the strain laws.
STRAIN_LAW_NAMES = ("linear", "neo-hookean", "gent")


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
    """Per-cell state of the hyperelastic cells, after :func:`actsim.material.material_state` filled ``E``.

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
        Section modulus from :func:`actsim.material.material_state` [Pa].
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
