"""Material state: modulus E(z) and eigenstrain e*(z) of each cell.

The modulus is linear in conversion between the reactant and product moduli,
and the photo-induced eigenstrain is proportional to conversion:

.. math:: E = E_A + (E_B - E_A)\\,x, \\qquad e^* = \\varepsilon_{ph}\\, x

For the wide-plate section (plane strain across the width) the plane-strain
modulus :math:`E/(1-\\nu^2)` is used; the eigenstrain acts along the strip's
length only (an aligned, uniaxial photo-strain). For an in-plane isotropic
eigenstrain under plane strain, multiply the photo-strain by :math:`1+\\nu`; the
solver does this for the (isotropic) thermal strain.

References
----------
.. [1] Timoshenko, S. and Woinowsky-Krieger, S. Theory of Plates and Shells,
   2nd ed., McGraw-Hill 1959, ch. 1 (cylindrical bending, plane-strain modulus).
"""

from __future__ import annotations

import numpy as np


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
