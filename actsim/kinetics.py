"""Kinetics stage: first-order photoreaction A <-> B with thermal back reaction.

Per cell, with conversion :math:`x` (fraction of all chromophore in the product form B) and
reactive fraction :math:`x_{max}` (the part of the chromophore that can react; 1 unless the material
sets ``reactive_fraction``),

.. math:: \\frac{dx}{dt} = k_f (x_{max} - x) - k_b x, \\qquad
   k_f = \\ln 10 \\sum_\\lambda \\phi_{AB}(\\lambda)\\, \\varepsilon_{10,A}(\\lambda)\\, \\bar q_\\lambda, \\quad
   k_b = \\ln 10 \\sum_\\lambda \\phi_{BA}(\\lambda)\\, \\varepsilon_{10,B}(\\lambda)\\, \\bar q_\\lambda + k_{th}

where :math:`\\bar q_\\lambda` is the cell-mean photon flux of each band
[mol m-2 s-1] and :math:`k_f` is per reactant molecule: the forward flux acts on the
reactive reactant :math:`x_{max} - x` only, while the unreactive part :math:`1 - x_{max}` stays in
form A and keeps absorbing (so the optics stage is the same for every :math:`x_{max}`). A conversion
cap of this kind describes solid films in which the reaction stops short of full conversion [3]_.
For frozen light the update over a step is exact; the coupled
optics–kinetics problem is advanced with a predictor–corrector on the rates
(second order in the step, unconditionally stable).

References
----------
.. [1] Mauser, H. and Gauglitz, G. Photokinetics: Theoretical Fundamentals and
   Applications. Elsevier 1998, ch. 2 (first-order photoreactions).
.. [2] Corbett, D., van Oosten, C. L. and Warner, M. "Nonlinear dynamics of
   optical absorption of intense beams." Phys. Rev. A 78 (2008) 013823.
.. [3] Egerton, Pitts and Reiser, Macromolecules 14 (1981) 95 (the photoreaction of
   cinnamate in solid films stops near 50 % conversion).
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
from numba import njit
from scipy.constants import R as _R

from .errors import ActsimInputError
from .optics import LN10, species_fluxes
from .units import check_range, finite_array, scalar_or_array

#: Molar gas constant [J mol-1 K-1] (CODATA, via scipy.constants).
GAS_CONSTANT = float(_R)


class PhotoParams(NamedTuple):
    """What the photoreaction stage needs of one design, SI.

    Attributes
    ----------
    phi_f, phi_b : numpy.ndarray, shape (n_cell, n_beam)
        Quantum yields A -> B and B -> A at each beam's wavelength [1].
    k_ref : numpy.ndarray, shape (n_cell,)
        Thermal back rate B -> A at the reference temperature [s-1].
    e_act : numpy.ndarray, shape (n_cell,)
        Activation energy of the thermal back rate [J mol-1] (0 without heat: the rate stays at k_ref).
    x0 : numpy.ndarray, shape (n_cell,)
        Initial conversion [1].
    x_max : numpy.ndarray, shape (n_cell,)
        Reactive fraction of the chromophore, the cap of the conversion [1] (1: all of it can react;
        1 in passive cells).
    """

    phi_f: np.ndarray
    phi_b: np.ndarray
    k_ref: np.ndarray
    e_act: np.ndarray
    x0: np.ndarray
    x_max: np.ndarray


def photo_params(scenario, grid, light) -> PhotoParams:
    """Quantum yields, thermal back rates, initial conversion and reactive fraction of every cell.

    Refuses quantum yields whose bands add above 1 at a beam wavelength.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
        The validated scenario (SI).
    grid : actsim.grid.Grid
        The cell grid.
    light : actsim.optics.LightParams
        The beams (their wavelengths).
    """
    n_cell, n_beam = grid.dz.size, light.beam_wavelength.size
    beam_wl = light.beam_wavelength
    phi_f = np.zeros((n_cell, n_beam))
    phi_b = np.zeros((n_cell, n_beam))
    k_ref = np.zeros(n_cell)
    e_act = np.zeros(n_cell)
    x0 = np.zeros(n_cell)
    x_max = np.ones(n_cell)
    for li, layer in enumerate(scenario.layers):
        m = layer.material
        if not m.is_active:
            continue
        sel = grid.layer_index == li
        if n_beam:
            phi_f[sel] = m.forward_quantum_yield(beam_wl)
            phi_b[sel] = m.backward_quantum_yield(beam_wl)
        for name, phi in (("forward_quantum_yield", phi_f[sel]), ("backward_quantum_yield", phi_b[sel])):
            if phi.size and phi.max() > 1.0 + 1e-12:
                b = int(np.argmax(phi.max(axis=0)))
                raise ActsimInputError(
                    f"materials.{m.name}.{name}: {phi.max():.4g} at {beam_wl[b] * 1e9:.4g} nm (its bands add up above 1); "
                    "allowed range 0 to 1"
                )
        k_ref[sel] = m.thermal_back_rate
        e_act[sel] = m.back_reaction_activation_energy if scenario.heat.enabled else 0.0
        x0[sel] = layer.initial_conversion
        x_max[sel] = m.reactive_fraction
    return PhotoParams(phi_f=phi_f, phi_b=phi_b, k_ref=k_ref, e_act=e_act, x0=x0, x_max=x_max)


def photoreaction_rates(*, mean_flux, epsilon10_reactant, epsilon10_product, forward_yield, backward_yield, thermal_rate):
    """Forward and backward first-order rate constants of each cell, per molecule of A and of B.

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


def exact_first_order_update(*, conversion, k_forward, k_backward, dt, reactive_fraction=1.0):
    """Exact solution of dx/dt = k_f (x_max - x) - k_b x over ``dt`` with frozen rates.

    .. math:: x(t + \\Delta t) = x_{ss} + (x - x_{ss})\\, e^{-(k_f + k_b)\\Delta t},
       \\qquad x_{ss} = \\frac{k_f\\, x_{max}}{k_f + k_b}

    Parameters
    ----------
    conversion : numpy.ndarray
        x at the start of the step [1].
    k_forward, k_backward : numpy.ndarray
        Rate constants [s-1].
    dt : float
        Step [s].
    reactive_fraction : float or numpy.ndarray
        x_max, the part of the chromophore that can react, in (0, 1] [1]; 1 (all of it) by default.

    Returns
    -------
    numpy.ndarray
        x at the end of the step [1].
    """
    k = k_forward + k_backward
    decay = np.exp(-k * dt)
    safe_k = np.where(k > 0, k, 1.0)
    x_ss = np.where(k > 0, reactive_fraction * k_forward / safe_k, conversion)
    return x_ss + (conversion - x_ss) * decay


def photostationary_state(*, k_forward, k_backward, reactive_fraction=1.0):
    """Photostationary conversion x_ss = x_max k_f/(k_f + k_b) [1] and relaxation time 1/(k_f + k_b) [s].

    .. math:: x_{ss} = \\frac{x_{max}\\, k_f}{k_f + k_b}, \\qquad t_r = \\frac{1}{k_f + k_b}

    Parameters
    ----------
    k_forward, k_backward : float or numpy.ndarray
        Rate constants A -> B and B -> A, > 0 in sum [s-1].
    reactive_fraction : float or numpy.ndarray
        x_max, the part of the chromophore that can react, in (0, 1] [1]; 1 by default.

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
    return reactive_fraction * k_forward / k, 1.0 / k


def arrhenius_shift(*, rate_at_reference, activation_energy, temperature, reference_temperature):
    """Rate constant at T from its value at a reference temperature (Arrhenius).

    .. math:: k(T) = k(T_{ref})\\, \\exp\\left[-\\frac{E_a}{R}\\left(\\frac1T - \\frac1{T_{ref}}\\right)\\right]

    Parameters
    ----------
    rate_at_reference : float or numpy.ndarray
        k(T_ref) [s-1].
    activation_energy : float or numpy.ndarray
        E_a [J mol-1]; 0 leaves the rate unchanged.
    temperature : float or numpy.ndarray
        T [K].
    reference_temperature : float
        T_ref [K].

    Returns
    -------
    numpy.ndarray
        k(T) [s-1].

    References
    ----------
    .. [1] Arrhenius, S. "Über die Reaktionsgeschwindigkeit bei der Inversion von Rohrzucker durch Säuren."
       Z. Phys. Chem. 4 (1889) 226–248.
    """
    k = np.asarray(rate_at_reference, float)
    ea = np.asarray(activation_energy, float)
    on = (ea != 0) & (k != 0)
    return np.where(on, k * np.exp(-ea / GAS_CONSTANT * (1 / np.asarray(temperature) - 1 / reference_temperature)), k)


@njit(cache=True)
def rates(mean_flux, flux_a, flux_b, light, photo, T, T_ref, k_f, k_b):
    """Kernel step of :func:`photoreaction_rates` with :func:`arrhenius_shift`: fill k_f, k_b [s-1] in place.

    With a reactive fraction :math:`x_{max} < 1` the cell's rates are handed on as those of the
    equivalent uncapped reaction, so that :func:`exact_update` needs no cap of its own:

    .. math:: k_f (x_{max} - x) - k_b x = k_f' (1 - x) - k_b' x, \\qquad
       k_f' = x_{max} k_f, \\quad k_b' = k_b + (1 - x_{max}) k_f

    (same sum :math:`k_f' + k_b' = k_f + k_b`, same stationary state
    :math:`k_f'/(k_f' + k_b') = x_{max} k_f/(k_f + k_b)`; both are linear in the rates, so the
    predictor–corrector's averaging of the rates is unchanged). With :math:`x_{max} = 1` the rates are
    the per-molecule rates of :func:`photoreaction_rates`, bit for bit.

    Parameters
    ----------
    mean_flux : numpy.ndarray, shape (n_cell, n_beam)
        Cell-mean photon flux [mol m-2 s-1].
    flux_a, flux_b : numpy.ndarray, shape (n_cell, n_beam)
        With a :class:`actsim.optics.PolarisedLightParams`: the flux each species sees, weighted by its
        dichroic absorption factor (:func:`actsim.polarised.polarised_light_pass`) [mol m-2 s-1]; not read
        otherwise (:func:`actsim.optics.species_fluxes`).
    light : actsim.optics.LightParams
        Absorptivities.
    photo : actsim.kinetics.PhotoParams
        Quantum yields, thermal back rates and reactive fractions.
    T : numpy.ndarray, shape (n_cell,)
        Temperature [K].
    T_ref : float
        Reference temperature of the thermal back rate [K].
    k_f, k_b : numpy.ndarray, shape (n_cell,)
        Outputs [s-1].
    """
    n_cell, n_beam = light.eps_a.shape
    fa, fb = species_fluxes(light, mean_flux, flux_a, flux_b)
    for i in range(n_cell):
        sf = 0.0
        sb = 0.0
        for b in range(n_beam):
            sf += photo.phi_f[i, b] * light.eps_a[i, b] * fa[i, b]
            sb += photo.phi_b[i, b] * light.eps_b[i, b] * fb[i, b]
        k_th = photo.k_ref[i]
        if photo.e_act[i] != 0.0 and k_th != 0.0:
            k_th = k_th * math.exp(-photo.e_act[i] / GAS_CONSTANT * (1.0 / T[i] - 1.0 / T_ref))
        kf = LN10 * sf
        kb = LN10 * sb + k_th
        x_max = photo.x_max[i]
        if x_max < 1.0:  # conversion cap: the equivalent uncapped rates (see above)
            kb = kb + (1.0 - x_max) * kf
            kf = x_max * kf
        k_f[i] = kf
        k_b[i] = kb


@njit(cache=True)
def exact_update(x, k_f, k_b, dt, out):
    """Kernel step of :func:`exact_first_order_update`: x_ss + (x - x_ss) exp(-(k_f + k_b) dt) per cell.

    x_ss = k_f/(k_f + k_b): a conversion cap arrives already folded into the rates by :func:`rates`.

    Parameters
    ----------
    x : numpy.ndarray, shape (n_cell,)
        Conversion at the start of the step [1].
    k_f, k_b : numpy.ndarray, shape (n_cell,)
        Rate constants [s-1].
    dt : float
        Step [s].
    out : numpy.ndarray, shape (n_cell,)
        Conversion at the end of the step [1].
    """
    for i in range(x.size):
        k = k_f[i] + k_b[i]
        if k > 0.0:
            xss = k_f[i] / k
            out[i] = xss + (x[i] - xss) * math.exp(-k * dt)
        else:
            out[i] = x[i]
@njit(cache=True)
def arrhenius_rate_nb(temperature, pre_factor, activation_energy):
    """Scalar numba version of :func:`arrhenius_rate` (no checks) [unit of pre_factor].

    Parameters
    ----------
    temperature : float
        > 0 [K].
    pre_factor : float
        A [1/s] (or any rate unit; the result has the same).
    activation_energy : float
        E_a [J/mol].
    """
    return pre_factor * math.exp(-activation_energy / (GAS_CONSTANT * temperature))


def arrhenius_rate(*, temperature, pre_factor, activation_energy):
    r"""Arrhenius rate constant.

    .. math::

       k(T) = A\,\exp\left(-\frac{E_a}{R\,T}\right)

    Parameters
    ----------
    temperature : float or array_like
        > 0 [K].
    pre_factor : float
        A, >= 0, in the unit of the rate (1/s for a first-order step) [1/s].
    activation_energy : float
        E_a, >= 0 [J/mol].

    Returns
    -------
    float or ndarray
        Rate constant [1/s] (the unit of ``pre_factor``).

    References
    ----------
    S. Arrhenius, "Über die Reaktionsgeschwindigkeit bei der Inversion von Rohrzucker durch Säuren",
    Z. Phys. Chem. 4, 226-248, 1889. R from CODATA 2018 via ``scipy.constants.R``.
    """
    for name, v, unit in (("pre_factor", pre_factor, "1/s"), ("activation_energy", activation_energy, "J/mol")):
        if not math.isfinite(float(v)):
            raise ActsimInputError(f"{name}: {v!r} is not finite ({unit}, >= 0)")
        check_range(float(v), field=name, unit=unit, lo=0.0)
    T = finite_array(temperature, field="temperature", unit="K", lo=0.0, lo_open=True)
    return scalar_or_array(pre_factor * np.exp(-activation_energy / (GAS_CONSTANT * T)))


