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

import numpy as np

LN10 = math.log(10.0)


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
