"""Material state: modulus E(z) and eigenstrain e*(z) of each cell.

The modulus is linear in conversion between the reactant and product moduli,
and the photo-induced eigenstrain is proportional to conversion:

.. math:: E = E_A + (E_B - E_A)\\,x, \\qquad e^* = \\varepsilon_{ph}\\, x

For the wide-plate section (plane strain across the width) the plane-strain
modulus :math:`E/(1-\\nu^2)` is used; the eigenstrain acts along the strip's
length only (an aligned, uniaxial photo-strain). For an in-plane isotropic
eigenstrain under plane strain, multiply the photo-strain by :math:`1+\\nu`.

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
    """Modulus entering the beam solve: E (beam, plane stress) or E/(1 - nu^2) (plate, plane strain) [Pa]."""
    if section == "plate":
        return modulus / (1.0 - np.asarray(poisson_ratio) ** 2)
    return modulus


def photo_eigenstrain(*, conversion, photo_strain):
    """Photo-induced eigenstrain e* = photo_strain * x [1] (negative: contraction)."""
    return np.asarray(photo_strain) * np.asarray(conversion)
