"""Linear viscoelasticity of a relaxing primary network: Prony series, time-temperature shift, exact update.

A material may relax (linear viscoelasticity): its primary modulus is then a
Prony series (generalised Maxwell model) in the reduced time
:math:`\\xi`, with a time-temperature shift :math:`a_T` (WLF, Arrhenius, a table of
:math:`\\log_{10} a_T`, or none),

.. math:: E(\\xi) = E_\\infty + \\sum_k E_k\\, e^{-\\xi/\\tau_k}, \\qquad
   d\\xi = dt / a_T(T)

integrated per cell with one internal stress per term by the exact exponential
update for a step (Simo and Hughes 1998, ch. 10):
:func:`prony_step`, :func:`prony_algorithmic` (readable) and the kernel steps
:func:`viscoelastic_state`, :func:`viscoelastic_accept`.

The per-cell parameters are the relaxation fields (``visco_*``, ``shift_*``) of
:class:`actsim.material.MaterialParams`, built by :func:`actsim.material.material_params`;
:mod:`actsim.material` re-exports every public name of this module (and this module does
not import it).

References
----------
.. [1] Simo, J. C. and Hughes, T. J. R. Computational Inelasticity, Springer 1998,
   ch. 10 (viscoelasticity: the recursive exponential update).
.. [2] Williams, M. L., Landel, R. F. and Ferry, J. D. "The temperature dependence of relaxation
   mechanisms in amorphous polymers and other glass-forming liquids." J. Am. Chem. Soc. 77
   (1955) 3701–3707.
.. [3] Ferry, J. D. Viscoelastic Properties of Polymers, 3rd ed., Wiley 1980, ch. 3 (Prony series,
   dynamic moduli) and ch. 11 (time-temperature shift).
.. [4] Taylor, R. L., Pister, K. S. and Goudreau, G. L. "Thermomechanical analysis of viscoelastic
   solids." Int. J. Numer. Meth. Engng 2 (1970) 45–59.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np
from numba import njit
from scipy.constants import R as _R

from .units import scalar_or_array

if TYPE_CHECKING:  # annotations only: actsim.material imports this module
    from .material import MaterialParams

#: Time-temperature shift of a relaxing material: none, WLF, Arrhenius, a table of log10 a_T.
SHIFT_NONE = 0
SHIFT_WLF = 1
SHIFT_ARRHENIUS = 2
SHIFT_TABLE = 3
SHIFT_NAMES = ("none", "wlf", "arrhenius", "table")
#: |ln a_T| is clamped here (exp(700) ~ 1e304): beyond it a cell is frozen (glassy) or fully relaxed anyway.
LN_SHIFT_MAX = 700.0
#: Molar gas constant [J mol-1 K-1] (CODATA 2018, exact; the value actsim.kinetics uses).
GAS_CONSTANT = float(_R)
LN10 = math.log(10.0)


def prony_relaxation_modulus(*, time, long_term_modulus, moduli, relaxation_times):
    r"""Relaxation modulus of a Prony series (generalised Maxwell model).

    .. math:: E(t) = E_\infty + \sum_k E_k\, e^{-t/\tau_k}

    Parameters
    ----------
    time : float or array_like
        Time since a step strain, >= 0 [s] (reduced time when shifted).
    long_term_modulus : float
        :math:`E_\infty`, the fully relaxed modulus [Pa].
    moduli : array_like, shape (n_term,)
        :math:`E_k` [Pa].
    relaxation_times : array_like, shape (n_term,)
        :math:`\tau_k` [s].

    Returns
    -------
    float or numpy.ndarray
        E(t) [Pa]; :math:`E(0) = E_\infty + \sum_k E_k` is the instantaneous (glassy) modulus.

    References
    ----------
    .. [1] Ferry, J. D. Viscoelastic Properties of Polymers, 3rd ed., Wiley 1980, ch. 3.
    """
    t = np.asarray(time, float)[..., None]
    return scalar_or_array(long_term_modulus + np.sum(np.asarray(moduli) * np.exp(-t / np.asarray(relaxation_times)),
                                                      axis=-1))


def prony_storage_loss(*, angular_frequency, long_term_modulus, moduli, relaxation_times):
    r"""Storage and loss modulus of a Prony series under a sinusoidal strain.

    .. math:: E'(\omega) = E_\infty + \sum_k E_k \frac{\omega^2\tau_k^2}{1 + \omega^2\tau_k^2}, \qquad
       E''(\omega) = \sum_k E_k \frac{\omega\tau_k}{1 + \omega^2\tau_k^2}

    Parameters
    ----------
    angular_frequency : float or array_like
        :math:`\omega = 2\pi f`, >= 0 [rad s-1] (reduced: :math:`\omega a_T` at another temperature).
    long_term_modulus : float
        :math:`E_\infty` [Pa].
    moduli : array_like, shape (n_term,)
        :math:`E_k` [Pa].
    relaxation_times : array_like, shape (n_term,)
        :math:`\tau_k` [s].

    Returns
    -------
    (storage, loss) : float or numpy.ndarray
        E' and E'' [Pa].

    References
    ----------
    .. [1] Ferry, J. D. Viscoelastic Properties of Polymers, 3rd ed., Wiley 1980, ch. 3 (the Maxwell
       element's dynamic moduli; the series is their sum).
    """
    wt = np.asarray(angular_frequency, float)[..., None] * np.asarray(relaxation_times)
    e = np.asarray(moduli)
    storage = long_term_modulus + np.sum(e * wt ** 2 / (1.0 + wt ** 2), axis=-1)
    loss = np.sum(e * wt / (1.0 + wt ** 2), axis=-1)
    return scalar_or_array(storage), scalar_or_array(loss)


def wlf_log_shift(*, temperature, c1, c2, reference_temperature):
    r"""Williams–Landel–Ferry shift, :math:`\log_{10} a_T`.

    .. math:: \log_{10} a_T = -\frac{C_1 (T - T_r)}{C_2 + T - T_r}

    Parameters
    ----------
    temperature : float or array_like
        [K].
    c1 : float
        :math:`C_1` [1] (17.44 about :math:`T_g` for the "universal" constants).
    c2 : float
        :math:`C_2` [K] (51.6 K about :math:`T_g`).
    reference_temperature : float
        :math:`T_r` [K].

    Returns
    -------
    float or numpy.ndarray
        :math:`\log_{10} a_T` [1]; ``+inf`` at and below :math:`T_r - C_2`, where the form diverges
        (taken as no relaxation at all).

    Notes
    -----
    The WLF form holds from about :math:`T_g` to :math:`T_g + 100` K; below :math:`T_g` the shift of a
    real glass grows more slowly (Arrhenius-like). Used below :math:`T_g` it freezes relaxation faster
    than a real glass, which is harmless for a glassy plateau but not for creep well below :math:`T_g`.

    References
    ----------
    .. [1] Williams, M. L., Landel, R. F. and Ferry, J. D. J. Am. Chem. Soc. 77 (1955) 3701–3707.
    """
    d = np.asarray(temperature, float) - reference_temperature
    den = c2 + d
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.where(den > 0.0, -c1 * d / np.where(den > 0.0, den, 1.0), np.inf)
    return scalar_or_array(out)


def arrhenius_log_shift(*, temperature, activation_energy, reference_temperature):
    r"""Arrhenius shift, :math:`\log_{10} a_T`.

    .. math:: \ln a_T = \frac{E_a}{R}\left(\frac{1}{T} - \frac{1}{T_r}\right)

    Parameters
    ----------
    temperature : float or array_like
        [K].
    activation_energy : float
        :math:`E_a` [J mol-1].
    reference_temperature : float
        :math:`T_r` [K].

    Returns
    -------
    float or numpy.ndarray
        :math:`\log_{10} a_T` [1].

    References
    ----------
    .. [1] Ferry, J. D. Viscoelastic Properties of Polymers, 3rd ed., Wiley 1980, ch. 11.
    """
    T = np.asarray(temperature, float)
    return scalar_or_array(activation_energy / GAS_CONSTANT * (1.0 / T - 1.0 / reference_temperature) / LN10)


def table_log_shift(*, temperature, table_temperature, table_log10_shift):
    r"""Tabulated shift, :math:`\log_{10} a_T` piecewise linear in T between the table points, clamped at the ends.

    .. math:: \log_{10} a_T(T) = \log_{10} a_j + \frac{T - T_j}{T_{j+1} - T_j}\,(\log_{10} a_{j+1} - \log_{10} a_j),
              \quad T_j \le T \le T_{j+1}

    and :math:`\log_{10} a_T = \log_{10} a_1` below :math:`T_1`, :math:`\log_{10} a_m` above :math:`T_m`.

    Parameters
    ----------
    temperature : float or array_like
        [K].
    table_temperature : array_like, shape (m,)
        Strictly increasing table temperatures [K].
    table_log10_shift : array_like, shape (m,)
        :math:`\log_{10} a_T` at ``table_temperature`` [1] (e.g. measured by shifting DMA isotherms).

    Returns
    -------
    float or numpy.ndarray
        :math:`\log_{10} a_T` [1].

    References
    ----------
    .. [1] Ferry, J. D. Viscoelastic Properties of Polymers, 3rd ed., Wiley 1980, ch. 11 (shift factors measured
       by superposing isotherms).
    """
    T = np.asarray(temperature, float)
    return scalar_or_array(np.interp(T, np.asarray(table_temperature, float), np.asarray(table_log10_shift, float)))


def reduced_time_step(*, params: MaterialParams, dt, temperature):
    r"""Reduced time step :math:`\Delta\xi = \Delta t / a_T(T)` of every cell (readable path).

    Parameters
    ----------
    params : actsim.material.MaterialParams
        The design's material parameters.
    dt : float
        Time step [s].
    temperature : numpy.ndarray, shape (n_cell,)
        The step's temperature (its midpoint) [K].

    Returns
    -------
    numpy.ndarray, shape (n_cell,)
        :math:`\Delta\xi` [s]; :math:`|\ln a_T|` is clamped at :data:`LN_SHIFT_MAX`.
    """
    p = params
    log10_a = np.zeros(temperature.shape)
    wlf = p.shift_kind == SHIFT_WLF
    arr = p.shift_kind == SHIFT_ARRHENIUS
    for i in np.nonzero(p.shift_kind == SHIFT_TABLE)[0]:
        j = p.shift_tab_idx[i]
        log10_a[i] = table_log_shift(temperature=temperature[i], table_temperature=p.shift_tab_T[j],
                                     table_log10_shift=p.shift_tab_log[j] / LN10)
    if wlf.any():
        log10_a[wlf] = wlf_log_shift(temperature=temperature[wlf], c1=p.shift_par[wlf, 0], c2=p.shift_par[wlf, 1],
                                     reference_temperature=p.shift_par[wlf, 2])
    if arr.any():
        log10_a[arr] = arrhenius_log_shift(temperature=temperature[arr],
                                           activation_energy=p.shift_par[arr, 0] * GAS_CONSTANT,
                                           reference_temperature=p.shift_par[arr, 1])
    ln_a = np.clip(log10_a * LN10, -LN_SHIFT_MAX, LN_SHIFT_MAX)
    return dt * np.exp(-ln_a)


def _prony_factors(moduli, relaxation_times, reduced_dt):
    """exp(-a) and the algorithmic factor E_k (1 - exp(-a)) / a of each term, a = dxi / tau (a = 0: 1, E_k)."""
    a = np.asarray(reduced_dt, float)[..., None] / relaxation_times
    decay = np.exp(-a)
    with np.errstate(divide="ignore", invalid="ignore"):
        g = np.where(a > 0.0, -np.expm1(-a) / np.where(a > 0.0, a, 1.0), 1.0)
    return decay, moduli * g


def prony_algorithmic(*, history, strain_old, moduli, relaxation_times, reduced_dt):
    r"""Algorithmic modulus and history stress of one step of the exact exponential update.

    For a strain linear in (reduced) time over the step, the stress at its end is

    .. math:: \sigma_{n+1} = E_\infty e_{n+1} + \sum_k h_{k,n+1} = E_{alg}\, e_{n+1} + s_{hist},
       \qquad E_{alg} = E_\infty + \sum_k E_k g_k, \qquad
       s_{hist} = \sum_k \left(e^{-a_k} h_{k,n} - E_k g_k e_n\right)

    with :math:`a_k = \Delta\xi/\tau_k` and :math:`g_k = (1 - e^{-a_k})/a_k` (:math:`g_k = 1` at
    :math:`a_k = 0`). This function returns the Prony part :math:`\sum_k E_k g_k` of :math:`E_{alg}`
    (without :math:`E_\infty`) and :math:`s_{hist}`.

    Parameters
    ----------
    history : numpy.ndarray, shape (n_cell, n_term)
        :math:`h_{k,n}`, the stress of each Maxwell element at the start [Pa].
    strain_old : numpy.ndarray, shape (n_cell,)
        Mechanical strain :math:`e_n` at the start [1].
    moduli : numpy.ndarray, shape (n_cell, n_term)
        :math:`E_k` [Pa].
    relaxation_times : numpy.ndarray, shape (n_cell, n_term)
        :math:`\tau_k` at the reference temperature [s].
    reduced_dt : numpy.ndarray, shape (n_cell,)
        :math:`\Delta\xi` [s].

    Returns
    -------
    (modulus, history_stress) : numpy.ndarray, shape (n_cell,)
        :math:`\sum_k E_k g_k` [Pa] and :math:`s_{hist}` [Pa].

    References
    ----------
    .. [1] Simo, J. C. and Hughes, T. J. R. Computational Inelasticity, Springer 1998, sec. 10.3.
    """
    decay, eg = _prony_factors(moduli, relaxation_times, reduced_dt)
    return eg.sum(axis=1), np.sum(decay * history - eg * np.asarray(strain_old)[:, None], axis=1)


def prony_step(*, history, strain_old, strain_new, moduli, relaxation_times, reduced_dt):
    r"""The Maxwell elements' stresses after one step: the exact update for a strain linear in the step.

    .. math:: h_{k,n+1} = e^{-a_k} h_{k,n} + E_k \frac{1 - e^{-a_k}}{a_k} (e_{n+1} - e_n),
       \qquad a_k = \Delta\xi / \tau_k

    Exact for any step when the strain is linear in reduced time over it (the convolution integral of
    :math:`E_k e^{-(\xi - \xi')/\tau_k}` with a constant strain rate), hence unconditionally stable and
    second order for a smooth strain history. A zero step (:math:`a_k = 0`) is an instantaneous strain
    jump: :math:`h_k` grows by :math:`E_k\,\Delta e` (the glassy response).

    Parameters
    ----------
    history : numpy.ndarray, shape (n_cell, n_term)
        :math:`h_{k,n}` [Pa].
    strain_old, strain_new : numpy.ndarray, shape (n_cell,)
        Mechanical strain at the start and the end of the step [1].
    moduli, relaxation_times : numpy.ndarray, shape (n_cell, n_term)
        :math:`E_k` [Pa], :math:`\tau_k` [s].
    reduced_dt : numpy.ndarray, shape (n_cell,)
        :math:`\Delta\xi` [s].

    Returns
    -------
    numpy.ndarray, shape (n_cell, n_term)
        :math:`h_{k,n+1}` [Pa].

    References
    ----------
    .. [1] Simo, J. C. and Hughes, T. J. R. Computational Inelasticity, Springer 1998, sec. 10.3.
    .. [2] Taylor, R. L., Pister, K. S. and Goudreau, G. L. "Thermomechanical analysis of viscoelastic
       solids." Int. J. Numer. Meth. Engng 2 (1970) 45–59.
    """
    decay, eg = _prony_factors(moduli, relaxation_times, reduced_dt)
    return decay * history + eg * (np.asarray(strain_new) - np.asarray(strain_old))[:, None]


def viscoelastic_section_state(*, params: MaterialParams, conversion, temperature_old, temperature_new, dt, history,
                               strain_old, reference_temperature):
    """Prony contributions to E and E e* of every cell for a step of dt (readable path of :func:`viscoelastic_state`).

    The primary network's stress at the step's end is :math:`E_{alg} e_{mech} + s_{hist}` with
    :math:`e_{mech} = e - \\varepsilon_{ph} x - e_{th}`, so in the section's form
    :math:`\\sigma = E e - E e^*` the Prony terms add :math:`f\\sum_k E_k g_k` to E and
    :math:`f\\sum_k E_k g_k\\,(\\varepsilon_{ph}x + e_{th}) - s_{hist}` to E e*, where
    :math:`f = 1 + (E_B/E_A - 1) x` scales every term with conversion as it scales :math:`E_\\infty`.
    The shift is taken at the step's midpoint temperature; ``dt = 0`` gives the instantaneous state.

    Parameters
    ----------
    params : actsim.material.MaterialParams
        The design's material parameters.
    conversion : numpy.ndarray, shape (n_cell,)
        x at the step's end [1].
    temperature_old, temperature_new : numpy.ndarray, shape (n_cell,)
        T at the start and the end [K].
    dt : float
        Step [s].
    history : numpy.ndarray, shape (n_cell, n_term)
        :math:`h_k` at the start [Pa].
    strain_old : numpy.ndarray, shape (n_cell,)
        Mechanical strain of the primary network at the start [1].
    reference_temperature : float
        Zero of the thermal strain [K].

    Returns
    -------
    (modulus, modulus_times_eigenstrain) : numpy.ndarray, shape (n_cell,)
        What the Prony terms add to E [Pa] and to E e* [Pa] (0 in elastic cells).
    """
    p = params
    on = p.visco_n > 0
    f = 1.0 + (p.mod_ratio - 1.0) * np.asarray(conversion)
    dxi = reduced_time_step(params=p, dt=dt, temperature=0.5 * (temperature_old + temperature_new))
    e_alg, s_hist = prony_algorithmic(history=history, strain_old=strain_old, moduli=f[:, None] * p.visco_mod,
                                      relaxation_times=p.visco_tau, reduced_dt=dxi)
    e_star = p.photo_strain * conversion + p.alpha_th * (temperature_new - reference_temperature)
    return np.where(on, e_alg, 0.0), np.where(on, e_alg * e_star - s_hist, 0.0)


@njit(cache=True)
def interp_clamped_nb(x, xs, ys):
    """Piecewise-linear interpolation of ``ys`` at ``x`` over strictly increasing ``xs``, clamped at the ends.

    Parameters
    ----------
    x : float
        Where to interpolate [unit of ``xs``].
    xs : numpy.ndarray, shape (m,)
        Strictly increasing abscissae [unit of x].
    ys : numpy.ndarray, shape (m,)
        Values at ``xs`` [unit of the result].
    """
    m = xs.shape[0]
    if x <= xs[0]:
        return ys[0]
    if x >= xs[m - 1]:
        return ys[m - 1]
    lo = 0
    hi = m - 1
    while hi - lo > 1:  # bisection for xs[lo] <= x < xs[hi]
        mid = (lo + hi) // 2
        if xs[mid] <= x:
            lo = mid
        else:
            hi = mid
    f = (x - xs[lo]) / (xs[hi] - xs[lo])
    return ys[lo] + f * (ys[hi] - ys[lo])


@njit(cache=True)
def log_shift_nb(kind, par, T, tab_T, tab_log):
    """Natural log of the shift factor a_T of one cell, clamped to +-LN_SHIFT_MAX (kernel step) [1].

    Parameters
    ----------
    kind : int
        SHIFT_NONE, SHIFT_WLF, SHIFT_ARRHENIUS or SHIFT_TABLE.
    par : numpy.ndarray, shape (3,)
        The cell's row of ``MaterialParams.shift_par``: WLF C1 [1], C2 [K], T_r [K]; Arrhenius E_a/R [K], T_r [K].
    T : float
        Temperature [K].
    tab_T, tab_log : numpy.ndarray, shape (m,)
        The cell's rows of ``MaterialParams.shift_tab_T`` [K] and ``shift_tab_log`` (ln a_T) [1]; used by
        SHIFT_TABLE only (piecewise linear in ln a_T, clamped at the end values).
    """
    if kind == SHIFT_WLF:
        d = T - par[2]
        den = par[1] + d
        if den <= 0.0:
            return LN_SHIFT_MAX
        v = -LN10 * par[0] * d / den
    elif kind == SHIFT_ARRHENIUS:
        v = par[0] * (1.0 / T - 1.0 / par[1])
    elif kind == SHIFT_TABLE:
        v = interp_clamped_nb(T, tab_T, tab_log)
    else:
        return 0.0
    return min(max(v, -LN_SHIFT_MAX), LN_SHIFT_MAX)


@njit(cache=True)
def viscoelastic_state(x, T0, T1, dt, H, ev, mat, T_ref, E_out, Ee_out, Ev_out):
    """Kernel step: add the Prony terms' algorithmic modulus and history stress to E and E e* (in place).

    For a step of ``dt`` from the internal state (H, ev) to conversion ``x`` and temperature ``T1``,
    the shift at the midpoint temperature; ``dt = 0`` gives the instantaneous state
    (:func:`viscoelastic_section_state` is the readable version). Call after :func:`actsim.material.material_state`.

    Parameters
    ----------
    x, T0, T1 : numpy.ndarray, shape (n_cell,)
        Conversion at the end [1], temperature at the start and the end [K].
    dt : float
        [s].
    H : numpy.ndarray, shape (n_cell, n_term)
        Maxwell element stresses at the start [Pa].
    ev : numpy.ndarray, shape (n_cell,)
        Mechanical strain of the primary network at the start [1].
    mat : actsim.material.MaterialParams
    T_ref : float
        Zero of the thermal strain [K].
    E_out, Ee_out : numpy.ndarray, shape (n_cell,)
        E [Pa] and E e* [Pa], added to.
    Ev_out : numpy.ndarray, shape (n_cell,)
        Set to f sum_k E_k (g_k - 1) [Pa] (<= 0; 0 in elastic cells and for dt = 0): the relaxed part of the
        Prony terms' modulus, which acts on the cell-centre strain only
        (:func:`actsim.mechanics.section_solve_centred`), like the history stress; so the strain's variation
        across a cell always meets the instantaneous modulus, whatever the step.
    """
    for i in range(x.size):
        n = mat.visco_n[i]
        Ev_out[i] = 0.0
        if n == 0:
            continue
        f = 1.0 + (mat.mod_ratio[i] - 1.0) * x[i]
        dxi = dt * math.exp(-log_shift_nb(mat.shift_kind[i], mat.shift_par[i], 0.5 * (T0[i] + T1[i]),
                                           mat.shift_tab_T[mat.shift_tab_idx[i]],
                                           mat.shift_tab_log[mat.shift_tab_idx[i]]))
        e_alg = 0.0
        e_glassy = 0.0
        s_hist = 0.0
        for k in range(n):
            a = dxi / mat.visco_tau[i, k]
            g = -math.expm1(-a) / a if a > 0.0 else 1.0
            ek = f * mat.visco_mod[i, k] * g
            e_alg += ek
            e_glassy += f * mat.visco_mod[i, k]
            s_hist += math.exp(-a) * H[i, k] - ek * ev[i]
        e_star = mat.photo_strain[i] * x[i] + mat.alpha_th[i] * (T1[i] - T_ref)
        E_out[i] += e_alg
        Ee_out[i] += e_alg * e_star - s_hist
        Ev_out[i] = e_alg - e_glassy


@njit(cache=True)
def viscoelastic_strain(x, e_mech, mat, out):
    """Mechanical strain of the primary network, e - e_th - eps_ph x, of the relaxing cells (kernel step) [1].

    Parameters
    ----------
    x : numpy.ndarray, shape (n_cell,)
        Conversion [1].
    e_mech : numpy.ndarray, shape (n_cell,)
        Strain less the thermal strain (:func:`actsim.material.mechanical_strain`) [1].
    mat : actsim.material.MaterialParams
    out : numpy.ndarray, shape (n_cell,)
        Output (0 in elastic cells) [1].
    """
    for i in range(x.size):
        out[i] = e_mech[i] - mat.photo_strain[i] * x[i] if mat.visco_n[i] > 0 else 0.0


@njit(cache=True)
def viscoelastic_error(ev, ev_new, rate, dt):
    """Largest distance of the new primary strain from its linear extrapolation, max |e_new - e - rate dt| [1].

    The exact update assumes a strain linear in time over the step; this first-order predictor's miss is
    O(dt^2 e''), the local error estimate of the viscoelastic part (cells that do not relax have e = 0).

    Parameters
    ----------
    ev, ev_new : numpy.ndarray, shape (n_cell,)
        Primary mechanical strain at the start and the end of the step [1].
    rate : numpy.ndarray, shape (n_cell,)
        Its rate over the previous accepted step (0 after a jump) [s-1].
    dt : float
        [s].
    """
    err = 0.0
    for i in range(ev.size):
        d = abs(ev_new[i] - ev[i] - rate[i] * dt)
        if d > err:
            err = d
    return err


@njit(cache=True)
def viscoelastic_accept(x, T0, T1, dt, H, ev, ev_new, rate, mat):
    """Kernel step of :func:`prony_step` for an accepted step: H, ev and the strain rate in place.

    Parameters
    ----------
    x, T0, T1 : numpy.ndarray, shape (n_cell,)
        Conversion at the end [1], temperature at the start and the end [K].
    dt : float
        [s]; 0 is an instantaneous jump (the rate is then reset to 0).
    H : numpy.ndarray, shape (n_cell, n_term)
        Maxwell element stresses [Pa], updated.
    ev : numpy.ndarray, shape (n_cell,)
        Primary mechanical strain [1], set to ``ev_new``.
    ev_new : numpy.ndarray, shape (n_cell,)
        Primary mechanical strain at the end [1].
    rate : numpy.ndarray, shape (n_cell,)
        Strain rate of the step [s-1], set.
    mat : actsim.material.MaterialParams
    """
    for i in range(x.size):
        n = mat.visco_n[i]
        if n == 0:
            continue
        f = 1.0 + (mat.mod_ratio[i] - 1.0) * x[i]
        dxi = dt * math.exp(-log_shift_nb(mat.shift_kind[i], mat.shift_par[i], 0.5 * (T0[i] + T1[i]),
                                           mat.shift_tab_T[mat.shift_tab_idx[i]],
                                           mat.shift_tab_log[mat.shift_tab_idx[i]]))
        de = ev_new[i] - ev[i]
        for k in range(n):
            a = dxi / mat.visco_tau[i, k]
            g = -math.expm1(-a) / a if a > 0.0 else 1.0
            H[i, k] = math.exp(-a) * H[i, k] + f * mat.visco_mod[i, k] * g * de
        rate[i] = de / dt if dt > 0.0 else 0.0
        ev[i] = ev_new[i]
