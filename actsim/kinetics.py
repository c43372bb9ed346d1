"""Kinetics stage: first-order photoreaction A <-> B with thermal back reaction.

Per cell, with conversion :math:`x` (fraction in the product form B),

.. math:: \\frac{dx}{dt} = k_f (1 - x) - k_b x, \\qquad
   k_f = \\ln 10 \\sum_\\lambda \\phi_{AB}(\\lambda)\\, \\varepsilon_{10,A}(\\lambda)\\, \\bar q_\\lambda, \\quad
   k_b = \\ln 10 \\sum_\\lambda \\phi_{BA}(\\lambda)\\, \\varepsilon_{10,B}(\\lambda)\\, \\bar q_\\lambda + k_{th}

where :math:`\\bar q_\\lambda` is the cell-mean photon flux of each band
[mol m-2 s-1]. For frozen light the update over a step is exact; the coupled
optics–kinetics problem is advanced with a predictor–corrector on the rates
(second order in the step, unconditionally stable).

References
----------
.. [1] Mauser, H. and Gauglitz, G. Photokinetics: Theoretical Fundamentals and
   Applications. Elsevier 1998, ch. 2 (first-order photoreactions).
.. [2] Corbett, D., van Oosten, C. L. and Warner, M. "Nonlinear dynamics of
   optical absorption of intense beams." Phys. Rev. A 78 (2008) 013823.
"""

from __future__ import annotations

import numpy as np

from .optics import LN10


def photoreaction_rates(*, mean_flux, epsilon10_reactant, epsilon10_product, forward_yield, backward_yield, thermal_rate):
    """Forward and backward first-order rate constants of each cell.

    Parameters
    ----------
    mean_flux : numpy.ndarray, shape (n_cell, n_beam)
        Cell-mean photon flux of each beam [mol m-2 s-1].
    epsilon10_reactant, epsilon10_product : numpy.ndarray, shape (n_cell, n_beam)
        Decadic molar absorptivities [m2 mol-1].
    forward_yield, backward_yield : numpy.ndarray, shape (n_cell, n_beam)
        Quantum yields A -> B and B -> A [1].
    thermal_rate : numpy.ndarray, shape (n_cell,)
        Thermal back-reaction rate constant B -> A [s-1].

    Returns
    -------
    (k_forward, k_backward) : numpy.ndarray, shape (n_cell,)
        [s-1].
    """
    k_f = LN10 * np.sum(forward_yield * epsilon10_reactant * mean_flux, axis=1)
    k_b = LN10 * np.sum(backward_yield * epsilon10_product * mean_flux, axis=1) + thermal_rate
    return k_f, k_b


def exact_first_order_update(*, conversion, k_forward, k_backward, dt):
    """Exact solution of dx/dt = k_f (1 - x) - k_b x over ``dt`` with frozen rates.

    .. math:: x(t + \\Delta t) = x_{ss} + (x - x_{ss})\\, e^{-(k_f + k_b)\\Delta t},
       \\qquad x_{ss} = \\frac{k_f}{k_f + k_b}

    Parameters
    ----------
    conversion : numpy.ndarray
        x at the start of the step [1].
    k_forward, k_backward : numpy.ndarray
        Rate constants [s-1].
    dt : float
        Step [s].

    Returns
    -------
    numpy.ndarray
        x at the end of the step [1].
    """
    k = k_forward + k_backward
    decay = np.exp(-k * dt)
    safe_k = np.where(k > 0, k, 1.0)
    x_ss = np.where(k > 0, k_forward / safe_k, conversion)
    return x_ss + (conversion - x_ss) * decay


def photostationary_state(*, k_forward, k_backward):
    """Photostationary conversion x_ss = k_f/(k_f + k_b) [1] and relaxation time 1/(k_f + k_b) [s].

    .. math:: x_{ss} = \\frac{k_f}{k_f + k_b}, \\qquad t_r = \\frac{1}{k_f + k_b}

    Parameters
    ----------
    k_forward, k_backward : float or numpy.ndarray
        Rate constants A -> B and B -> A, > 0 in sum [s-1].

    Returns
    -------
    (x_ss, t_relax) : float or numpy.ndarray
        Photostationary conversion [1] and relaxation time [s].

    References
    ----------
    .. [1] Mauser, H. and Gauglitz, G. Photokinetics: Theoretical Fundamentals and
       Applications. Elsevier 1998, ch. 2.
    """
    k = k_forward + k_backward
    return k_forward / k, 1.0 / k
