"""Time–temperature shift of DMA frequency sweeps: reading the sweeps, shift factors by overlap, WLF or Arrhenius law.

Input: storage and loss modulus at several frequencies, measured at several temperatures (one
frequency sweep per temperature), read by :func:`read_dma_sweeps` or checked by :func:`dma_sweeps`.
These are the first two steps of the viscoelastic fit (:mod:`actsim.calibrate.viscoelastic` does
the master curve and the Prony series):

1. **Shift factors by overlap** (time–temperature superposition, :func:`pairwise_log_shifts`).
   Curves are taken in order of temperature; each curve is slid along log frequency onto its colder
   neighbour until log E' and log E'' of the two overlap best (least squares over the overlapping
   points of both, in both directions), and the pairwise shifts are chained. No vertical shift is
   applied.
2. **Shift law**. The chained log10 a_T are fitted by the WLF equation (C1, C2 at the reference
   temperature, :func:`fit_wlf`) or by an Arrhenius law (activation energy, :func:`fit_arrhenius`),
   each with a free offset that places log10 a_T = 0 at the reference temperature. The laws
   themselves are :func:`wlf_log_shift` and :func:`arrhenius_log_shift`.

References
----------
.. [1] J. D. Ferry, *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, 1980 (time–temperature
   superposition, shift factors, WLF and Arrhenius shift).
.. [2] M. L. Williams, R. F. Landel and J. D. Ferry, "The temperature dependence of relaxation
   mechanisms in amorphous polymers and other glass-forming liquids", J. Am. Chem. Soc. 77 (1955) 3701.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.constants import R as GAS_CONSTANT

from ..errors import ActsimInputError
from .fitstats import FitResult, fit_statistics, from_least_squares

__all__ = [
    "wlf_log_shift",
    "arrhenius_log_shift",
    "DmaSweeps",
    "read_dma_sweeps",
    "dma_sweeps",
    "pairwise_log_shifts",
    "fit_wlf",
    "fit_arrhenius",
]

_LN10 = math.log(10.0)

#: Universal WLF constants about Tg (Williams, Landel and Ferry 1955), used as starting values.
WLF_UNIVERSAL_C1 = 17.44
WLF_UNIVERSAL_C2 = 51.6  # K


# ----------------------------------------------------------------------------------------------
# the shift laws
# ----------------------------------------------------------------------------------------------

def wlf_log_shift(temperature, *, c1, c2, reference_temperature):
    """WLF shift factor, log10 a_T.

    Parameters
    ----------
    temperature : float or array_like
        Temperature [K].
    c1 : float
        WLF constant C1 [1].
    c2 : float
        WLF constant C2 [K].
    reference_temperature : float
        Temperature where a_T = 1 [K].

    Returns
    -------
    numpy.ndarray
        log10 a_T [1]; a_T multiplies frequency (reduced frequency :math:`\\omega a_T`) and divides
        relaxation times' temperature dependence: :math:`\\tau(T) = a_T \\tau(T_r)`.

    Notes
    -----
    .. math::

        \\log_{10} a_T = -\\frac{C_1 (T - T_r)}{C_2 + T - T_r}

    References
    ----------
    .. [1] M. L. Williams, R. F. Landel and J. D. Ferry, J. Am. Chem. Soc. 77 (1955) 3701.
    """
    dT = np.asarray(temperature, dtype=float) - reference_temperature
    return -c1 * dT / (c2 + dT)


def arrhenius_log_shift(temperature, *, activation_energy, reference_temperature):
    """Arrhenius shift factor, log10 a_T.

    Parameters
    ----------
    temperature : float or array_like
        Temperature [K].
    activation_energy : float
        Activation energy [J/mol].
    reference_temperature : float
        Temperature where a_T = 1 [K].

    Returns
    -------
    numpy.ndarray
        log10 a_T [1].

    Notes
    -----
    .. math::

        \\log_{10} a_T = \\frac{E_a}{R \\ln 10}\\left(\\frac{1}{T} - \\frac{1}{T_r}\\right)

    References
    ----------
    .. [1] J. D. Ferry, *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, 1980, ch. 11.
    """
    T = np.asarray(temperature, dtype=float)
    return activation_energy / (GAS_CONSTANT * _LN10) * (1.0 / T - 1.0 / reference_temperature)


# ----------------------------------------------------------------------------------------------
# the data
# ----------------------------------------------------------------------------------------------

@dataclass
class DmaSweeps:
    """Frequency sweeps at several temperatures (SI), sorted by temperature then frequency.

    Attributes
    ----------
    temperature : numpy.ndarray
        Temperature of each point [K].
    omega : numpy.ndarray
        Angular frequency [rad/s].
    storage, loss : numpy.ndarray
        E' and E'' [Pa], positive.
    levels : numpy.ndarray
        The distinct temperatures, ascending [K].
    group : numpy.ndarray
        Index into ``levels`` of each point.
    source : str
        File name or "arrays".
    synthetic : bool
        True if the file says its data are synthetic.
    """

    temperature: np.ndarray
    omega: np.ndarray
    storage: np.ndarray
    loss: np.ndarray
    levels: np.ndarray
    group: np.ndarray
    source: str = "arrays"
    synthetic: bool = False


#: Temperatures closer than this are one set point [K] (common practice, no source).
TEMPERATURE_GROUPING = 0.05


def dma_sweeps(temperature, omega, storage, loss, *, source="arrays", synthetic=False, min_temperatures=3,
               min_frequencies=3) -> DmaSweeps:
    """Check and group frequency-sweep arrays (SI) into :class:`DmaSweeps`.

    Parameters
    ----------
    temperature : array_like
        Temperature [K].
    omega : array_like
        Angular frequency [rad/s].
    storage, loss : array_like
        Storage and loss modulus [Pa].
    source : str
        Name used in messages.
    synthetic : bool
        Whether the data are invented.
    min_temperatures : int
        Fewest distinct temperatures accepted.
    min_frequencies : int
        Fewest frequencies per temperature.

    Returns
    -------
    DmaSweeps
    """
    arrs = [np.asarray(a, dtype=float).ravel() for a in (temperature, omega, storage, loss)]
    n = arrs[0].size
    if any(a.size != n for a in arrs):
        raise ActsimInputError(f"{source}: temperature, frequency, storage and loss columns differ in length")
    T, w, e1, e2 = arrs
    for name, a, unit in (("temperature", T, "K"), ("frequency", w, "rad/s"), ("storage modulus", e1, "Pa"),
                          ("loss modulus", e2, "Pa")):
        if not np.all(np.isfinite(a)):
            raise ActsimInputError(f"{source}: {name} holds a value that is not finite")
        bad = np.flatnonzero(a <= 0)
        if bad.size:
            raise ActsimInputError(f"{source}: {name} {a[bad[0]]:g} {unit} at data row {bad[0] + 1} is not positive "
                                   "(allowed: > 0; the fit works in log scale)")
    order = np.lexsort((w, T))
    T, w, e1, e2 = T[order], w[order], e1[order], e2[order]
    # one set point: consecutive sorted temperatures within TEMPERATURE_GROUPING
    new = np.concatenate([[True], np.diff(T) > TEMPERATURE_GROUPING])
    group = np.cumsum(new) - 1
    levels = np.array([T[group == g].mean() for g in range(group[-1] + 1)]) if n else np.array([])
    if levels.size < min_temperatures:
        at = f" ({levels[0] - 273.15:.4g} degC)" if levels.size == 1 else ""
        raise ActsimInputError(f"{source}: {levels.size} temperature{'s' if levels.size != 1 else ''}{at}; "
                               f"time-temperature superposition needs frequency sweeps at {min_temperatures} or more "
                               "temperatures")
    for g, Tg in enumerate(levels):
        wg = w[group == g]
        if np.unique(wg).size < min_frequencies:
            raise ActsimInputError(f"{source}: {np.unique(wg).size} distinct frequencies at {Tg - 273.15:.4g} degC; "
                                   f"each temperature needs {min_frequencies} or more")
    return DmaSweeps(temperature=T, omega=w, storage=e1, loss=e2, levels=levels, group=group, source=source,
                     synthetic=synthetic)


def _find_column(table, *, words, exclude=(), what):
    for i, name in enumerate(table.names):
        low = name.lower()
        if all(wd in low for wd in words) and not any(x in low for x in exclude):
            return i
    raise ActsimInputError(f"{table.source}: no {what} column in the header (need columns temperature, frequency, "
                           "storage modulus, loss modulus with units, e.g. 'temperature [degC], frequency [Hz], "
                           "storage modulus [MPa], loss modulus [MPa]')")


def read_dma_sweeps(path) -> DmaSweeps:
    """Read a DMA multi-frequency file: temperature, frequency, storage modulus, loss modulus.

    Parameters
    ----------
    path : str or os.PathLike
        CSV with a header naming the four columns with their units (any order), e.g.
        ``temperature [degC], frequency [Hz], storage modulus [MPa], loss modulus [MPa]``.
        A frequency in Hz (or 1/s) is a cyclic frequency f, taken as :math:`\\omega = 2\\pi f`;
        a column in rad/s, or named "angular frequency", is :math:`\\omega` itself.

    Returns
    -------
    DmaSweeps
    """
    from ..tables import read_csv_table

    tab = read_csv_table(path)
    iT = _find_column(tab, words=("temp",), what="temperature")
    iw = _find_column(tab, words=("freq",), what="frequency")
    i1 = _find_column(tab, words=("storage",), what="storage modulus")
    i2 = _find_column(tab, words=("loss",), exclude=("tan", "factor"), what="loss modulus")
    if not tab.rows:
        raise ActsimInputError(f"{tab.source}: no data rows after the header")
    T = tab.column(iT, unit="K")
    wu = (tab.units[iw] or "").replace(" ", "").lower()
    w = tab.column(iw, unit="1/s")
    angular = "rad" in wu or "angular" in tab.names[iw].lower()
    omega = w if angular else 2.0 * np.pi * w
    e1 = tab.column(i1, unit="Pa")
    e2 = tab.column(i2, unit="Pa")
    return dma_sweeps(T, omega, e1, e2, source=tab.source, synthetic=tab.synthetic)


# ----------------------------------------------------------------------------------------------
# step 1: shift factors by overlap
# ----------------------------------------------------------------------------------------------

def _overlap_cost(xa, ya, xb, yb, s, min_points, min_span):
    """Mean squared mismatch of curve B moved by s onto A and of A moved by -s onto B (log space)."""
    xb_s = xb + s
    lo, hi = max(xa[0], xb_s[0]), min(xa[-1], xb_s[-1])
    if hi - lo < min_span:
        return np.inf
    inb = (xb_s >= lo) & (xb_s <= hi)
    ina = (xa >= lo) & (xa <= hi)
    if np.count_nonzero(inb) + np.count_nonzero(ina) < min_points:
        return np.inf
    r = []
    for k in range(ya.shape[1]):
        r.append(yb[inb, k] - np.interp(xb_s[inb], xa, ya[:, k]))
        r.append(ya[ina, k] - np.interp(xa[ina], xb_s, yb[:, k]))
    r = np.concatenate(r)
    return float(r @ r) / r.size


def pairwise_log_shifts(sweeps: DmaSweeps, *, grid_step=0.01):
    """Shift of each curve onto its colder neighbour, chained: log10 a_T relative to the coldest curve.

    Parameters
    ----------
    sweeps : DmaSweeps
        The data.
    grid_step : float
        Step of the coarse search in log10 frequency [1]; the best grid point is refined by a
        bounded scalar minimisation.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        log10 a_T of each temperature level relative to the coldest (0 there) [1], and the rms
        log10 mismatch of each pair at its best shift [1] (length n_levels - 1).

    Notes
    -----
    For curves A (colder) and B, the shift :math:`s` minimises the mean of the squared differences
    of :math:`(\\log_{10} E', \\log_{10} E'')` between the points of each curve and the other curve
    (linear interpolation in log–log), over the overlap of the two after the shift:

    .. math::

        \\log_{10} a_{T_{i+1}} = \\log_{10} a_{T_i} + s_i

    The overlap must span at least 0.3 of the shorter curve's decades (at most half a decade) and
    hold 4 points of the two curves (common practice, no source).
    """
    from scipy.optimize import minimize_scalar

    x = np.log10(sweeps.omega)
    y = np.column_stack([np.log10(sweeps.storage), np.log10(sweeps.loss)])
    shifts = [0.0]
    mism = []
    for g in range(sweeps.levels.size - 1):
        a, b = sweeps.group == g, sweeps.group == g + 1
        xa, ya, xb, yb = x[a], y[a], x[b], y[b]
        span = (xa[-1] - xa[0]) + (xb[-1] - xb[0])
        min_span = min(0.5, 0.3 * min(xa[-1] - xa[0], xb[-1] - xb[0]))
        grid = np.arange(-span, span + grid_step / 2, grid_step)
        cost = np.array([_overlap_cost(xa, ya, xb, yb, s, 4, min_span) for s in grid])
        if not np.any(np.isfinite(cost)):
            Ta, Tb = sweeps.levels[g] - 273.15, sweeps.levels[g + 1] - 273.15
            raise ActsimInputError(f"{sweeps.source}: the sweeps at {Ta:.4g} degC and {Tb:.4g} degC cannot be "
                                   "overlapped (too few frequencies in common after any shift)")
        k = int(np.nanargmin(cost))
        res = minimize_scalar(lambda s: _overlap_cost(xa, ya, xb, yb, s, 4, min_span),
                              bounds=(grid[k] - grid_step, grid[k] + grid_step), method="bounded",
                              options={"xatol": 1e-6})
        s = float(res.x) if np.isfinite(res.fun) and res.fun <= cost[k] else float(grid[k])
        shifts.append(shifts[-1] + s)
        mism.append(math.sqrt(_overlap_cost(xa, ya, xb, yb, s, 4, min_span)))
    return np.array(shifts), np.array(mism)


# ----------------------------------------------------------------------------------------------
# step 2: the shift law
# ----------------------------------------------------------------------------------------------

def fit_wlf(temperature, log_shift, *, reference_temperature, confidence=0.95) -> FitResult:
    """Fit WLF constants (and an offset) to log10 shift factors.

    Parameters
    ----------
    temperature : array_like
        Temperatures [K].
    log_shift : array_like
        log10 a_T relative to any temperature [1].
    reference_temperature : float
        T_r of the WLF constants [K].
    confidence : float
        Confidence level [1].

    Returns
    -------
    FitResult
        ``C1`` [1], ``C2`` [K], ``offset`` [1] (log10 a_T of the data at T_r; subtract it to refer
        the shifts to T_r).

    Notes
    -----
    .. math::

        y_i = y_0 - \\frac{C_1 (T_i - T_r)}{C_2 + T_i - T_r}

    For fixed C2 the model is linear in (C1, y0): C2 is scanned on a log grid with the linear
    solution at each point, then all three are polished by ``scipy.optimize.least_squares`` with
    :math:`C_2 > T_r - \\min T_i` (the law has a pole at :math:`T = T_r - C_2`).

    References
    ----------
    .. [1] M. L. Williams, R. F. Landel and J. D. Ferry, J. Am. Chem. Soc. 77 (1955) 3701.
    """
    from scipy.optimize import least_squares

    T = np.asarray(temperature, dtype=float)
    y = np.asarray(log_shift, dtype=float)
    if T.size < 4:
        raise ActsimInputError(f"temperature: {T.size} temperatures; a WLF fit (C1, C2, offset) needs 4 or more "
                               "(use the Arrhenius law for fewer)")
    Tr = float(reference_temperature)
    dT = T - Tr
    c2_lo = max(1e-3, -float(dT.min()) + 1e-3)

    def lin(c2):
        A = np.column_stack([-dT / (c2 + dT), np.ones_like(dT)])
        coef, *_ = np.linalg.lstsq(A, y, rcond=None)
        r = A @ coef - y
        return coef, float(r @ r)

    best = None
    for c2 in np.geomspace(c2_lo * 1.01 + 1.0, 5000.0, 400):
        coef, ss = lin(c2)
        if best is None or ss < best[0]:
            best = (ss, coef[0], c2, coef[1])
    p0 = np.array([best[1], best[2], best[3]])

    def resid(p):
        return p[2] - p[0] * dT / (p[1] + dT) - y

    def jac(p):
        d = p[1] + dT
        return np.column_stack([-dT / d, p[0] * dT / d ** 2, np.ones_like(dT)])

    lo = np.array([-np.inf, c2_lo, -np.inf])
    hi = np.array([np.inf, 1e5, np.inf])
    sol = least_squares(resid, np.clip(p0, lo + 1e-9, hi - 1e-9), jac=jac, bounds=(lo, hi), x_scale="jac",
                        xtol=1e-14, ftol=1e-14, gtol=1e-14, max_nfev=5000)
    sol.jac = jac(sol.x)
    fr = from_least_squares(sol, names=("C1", "C2", "offset"), units=("1", "K", "1"), confidence=confidence)
    if fr.value("C1") <= 0:
        fr.warnings.append(f"C1 = {fr.value('C1'):.4g} is not positive: the shift factors do not fall with "
                           "temperature as WLF assumes")
    return fr


def fit_arrhenius(temperature, log_shift, *, reference_temperature, confidence=0.95) -> FitResult:
    """Fit an Arrhenius activation energy (and an offset) to log10 shift factors.

    Parameters
    ----------
    temperature : array_like
        Temperatures [K].
    log_shift : array_like
        log10 a_T relative to any temperature [1].
    reference_temperature : float
        T_r [K].
    confidence : float
        Confidence level [1].

    Returns
    -------
    FitResult
        ``activation_energy`` [J/mol], ``offset`` [1].

    Notes
    -----
    Linear least squares (exact intervals for normal errors):

    .. math::

        y_i = y_0 + \\frac{E_a}{R \\ln 10}\\left(\\frac{1}{T_i} - \\frac{1}{T_r}\\right)

    References
    ----------
    .. [1] J. D. Ferry, *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, 1980, ch. 11.
    """
    T = np.asarray(temperature, dtype=float)
    y = np.asarray(log_shift, dtype=float)
    if T.size < 3:
        raise ActsimInputError(f"temperature: {T.size} temperatures; an Arrhenius fit (activation energy, offset) "
                               "needs 3 or more")
    A = np.column_stack([(1.0 / T - 1.0 / reference_temperature) / (GAS_CONSTANT * _LN10), np.ones_like(T)])
    coef, *_ = np.linalg.lstsq(A, y, rcond=None)
    return fit_statistics(A, A @ coef - y, values=coef, names=("activation_energy", "offset"),
                          units=("J/mol", "1"), confidence=confidence, message="linear least squares (exact)")
