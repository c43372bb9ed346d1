"""Storage modulus versus temperature from a DMA sweep: smooth-step fit or the table itself.

References
----------
.. [1] K. P. Menard and N. R. Menard, *Dynamic Mechanical Analysis*, 3rd ed., CRC Press, 2020.
.. [2] ISO 6721-1:2019, *Plastics — Determination of dynamic mechanical properties — Part 1:
   General principles*.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import least_squares
from scipy.special import expit

from ..errors import ActsimInputError
from .fitstats import FitResult, from_least_squares
from .readers import XYData, as_xy

__all__ = ["smooth_step_modulus", "smooth_step_log_modulus", "fit_dma", "dma_table", "ModulusTable", "DmaFit"]

_LN10 = np.log(10.0)


def smooth_step_modulus(temperature, *, glassy_modulus, rubbery_modulus, glass_transition, width):
    """Smooth step from the glassy to the rubbery modulus around the glass transition.

    Parameters
    ----------
    temperature : float or array_like
        Temperature [K].
    glassy_modulus : float
        Modulus well below the transition [Pa].
    rubbery_modulus : float
        Modulus well above the transition [Pa].
    glass_transition : float
        Temperature of the step's midpoint [K].
    width : float
        Width of the step, > 0 [K].

    Returns
    -------
    numpy.ndarray or float
        Modulus [Pa].

    Notes
    -----
    A logistic step (a phenomenological form, not a material law):

    .. math::

        E(T) = E_r + \\frac{E_g - E_r}{1 + \\exp\\left((T - T_g)/w\\right)}

    It is evaluated as :math:`E_r + (E_g - E_r)\\,\\operatorname{expit}(-(T - T_g)/w)`, which does
    not overflow far from the transition. The lead's thermal module uses the same formula; this
    local copy is kept until the two are merged.

    References
    ----------
    .. [1] K. P. Menard and N. R. Menard, *Dynamic Mechanical Analysis*, 3rd ed., CRC Press, 2020
       (shape of the storage-modulus curve through the glass transition).
    """
    if not width > 0:
        raise ActsimInputError(f"width: {width!r} K is outside the allowed range (> 0 K)")
    T = np.asarray(temperature, dtype=float)
    out = rubbery_modulus + (glassy_modulus - rubbery_modulus) * expit(-(T - glass_transition) / width)
    return float(out) if out.ndim == 0 else out


def smooth_step_log_modulus(temperature, *, glassy_modulus, rubbery_modulus, glass_transition, width):
    """Smooth step in log E from the glassy to the rubbery modulus (the form the thermal module uses).

    Parameters
    ----------
    temperature : float or array_like
        Temperature [K].
    glassy_modulus : float
        Modulus well below the transition, > 0 [Pa].
    rubbery_modulus : float
        Modulus well above the transition, > 0 [Pa].
    glass_transition : float
        Temperature of the step's midpoint [K].
    width : float
        Width of the step, > 0 [K].

    Returns
    -------
    numpy.ndarray or float
        Modulus [Pa]; :math:`\\sqrt{E_g E_r}` at :math:`T_g`.

    Notes
    -----
    .. math::

        \\ln E(T) = \\ln E_r + \\frac{\\ln E_g - \\ln E_r}{1 + \\exp\\left((T - T_g)/w\\right)}

    Same formula as :func:`actsim.material.glass_transition_modulus` (checked in the tests), so
    parameters fitted with ``step="log"`` can go straight into a scenario.

    References
    ----------
    .. [1] J. D. Ferry, *Viscoelastic Properties of Polymers*, 3rd ed., Wiley, 1980 (shape of
       modulus-temperature curves; the logistic form itself is common practice, no source).
    """
    if not width > 0:
        raise ActsimInputError(f"width: {width!r} K is outside the allowed range (> 0 K)")
    for nm, v in (("glassy_modulus", glassy_modulus), ("rubbery_modulus", rubbery_modulus)):
        if not v > 0:
            raise ActsimInputError(f"{nm}: {v!r} Pa is outside the allowed range (> 0 Pa)")
    T = np.asarray(temperature, dtype=float)
    f = expit(-(T - glass_transition) / width)
    out = np.exp(np.log(rubbery_modulus) + (np.log(glassy_modulus) - np.log(rubbery_modulus)) * f)
    return float(out) if out.ndim == 0 else out


@dataclass
class DmaFit:
    """Smooth-step fit of a DMA sweep.

    Attributes
    ----------
    params : FitResult
        ``glassy_modulus`` [Pa], ``rubbery_modulus`` [Pa], ``glass_transition`` [K],
        ``width`` [K], with standard errors and confidence intervals.
    fit_space : FitResult
        The same fit in the parameters actually fitted (log10 moduli), residuals in log10 E.
    temperature, storage_modulus : numpy.ndarray
        The data [K], [Pa].
    step : str
        ``"log"`` (:func:`smooth_step_log_modulus`) or ``"linear"`` (:func:`smooth_step_modulus`).
    source : str
        File name or "arrays".
    synthetic : bool
        True if the file says its data are synthetic.
    """

    params: FitResult
    fit_space: FitResult
    temperature: np.ndarray
    storage_modulus: np.ndarray
    step: str = "log"
    source: str = "arrays"
    synthetic: bool = False

    @property
    def glassy_modulus(self) -> float:
        return self.params.value("glassy_modulus")

    @property
    def rubbery_modulus(self) -> float:
        return self.params.value("rubbery_modulus")

    @property
    def glass_transition(self) -> float:
        return self.params.value("glass_transition")

    @property
    def width(self) -> float:
        return self.params.value("width")

    def model(self, temperature):
        """Fitted modulus at ``temperature`` [K] -> [Pa]."""
        f = smooth_step_log_modulus if self.step == "log" else smooth_step_modulus
        return f(temperature, glassy_modulus=self.glassy_modulus,
                                   rubbery_modulus=self.rubbery_modulus,
                                   glass_transition=self.glass_transition, width=self.width)

    def to_table(self) -> str:
        head = f"DMA smooth-step fit (step in {'log E' if self.step == 'log' else 'E'}) of {self.source}" + (" (synthetic data)" if self.synthetic else "")
        return head + "\n" + self.params.to_table()

    def to_dict(self) -> dict:
        d = self.params.to_dict()
        d.update(step=self.step, source=self.source, synthetic=self.synthetic)
        return d


def _initial_guess(T, logE):
    order = np.argsort(T)
    T, logE = T[order], logE[order]
    k = max(1, T.size // 10)
    lg, lr = float(np.median(logE[:k])), float(np.median(logE[-k:]))
    mid = 0.5 * (lg + lr)
    span = float(T[-1] - T[0])
    # first crossing of the midpoint
    d = logE - mid
    idx = np.flatnonzero(np.sign(d[:-1]) != np.sign(d[1:]))
    if idx.size:
        i = idx[0]
        t = d[i] / (d[i] - d[i + 1]) if d[i] != d[i + 1] else 0.5
        Tg = float(T[i] + t * (T[i + 1] - T[i]))
    else:
        Tg = float(0.5 * (T[0] + T[-1]))
    return np.array([lg, lr, Tg, max(span / 20.0, 1e-3)]), span


def fit_dma(data, *, step="log", temperature_unit=None, modulus_unit=None, initial=None, confidence=0.95,
            modulus_column=1) -> DmaFit:
    """Fit a smooth step to storage modulus versus temperature, with residuals in log E.

    Parameters
    ----------
    data : str, os.PathLike, XYData or (array_like, array_like)
        CSV (temperature column, storage modulus column) or arrays (temperature [K],
        modulus [Pa] unless units are given).
    step : {"log", "linear"}
        ``"log"`` (default): :func:`smooth_step_log_modulus`, the step in log E that
        :func:`actsim.material.glass_transition_modulus` uses, so the fitted parameters mean the
        same in the simulator. ``"linear"``: :func:`smooth_step_modulus`, the step in E itself.
        The two give different Tg and width for the same data.
    temperature_unit, modulus_unit : str, optional
        Units for array input or a header without units (e.g. "degC", "MPa").
    initial : dict, optional
        Starting values ``glassy_modulus`` [Pa], ``rubbery_modulus`` [Pa],
        ``glass_transition`` [K], ``width`` [K]; missing ones are estimated from the data.
    confidence : float
        Confidence level of the intervals [1].
    modulus_column : int or str
        Column of the storage modulus in a file (index or name).

    Returns
    -------
    DmaFit

    Notes
    -----
    The residuals are :math:`r_i = \\log_{10} E(T_i; p) - \\log_{10} E_i`, so every decade of the
    sweep weighs the same and the scatter is taken as relative. Fitted parameters are
    :math:`p = (\\log_{10} E_g, \\log_{10} E_r, T_g, w)` with bounds
    :math:`w \\in [10^{-3}\\,\\mathrm{K},\\; 10\\,\\Delta T]`, :math:`T_g` within one sweep span of the
    data, log10 moduli in [0, 15]. The moduli's intervals are the images of the log10 intervals
    (asymmetric); their standard errors follow the delta method.

    .. math::

        \\text{linear: } E(T) = E_r + \\frac{E_g - E_r}{1 + \\exp\\left((T - T_g)/w\\right)}, \\qquad
        \\text{log: } \\log E(T) = \\log E_r + \\frac{\\log E_g - \\log E_r}{1 + \\exp\\left((T - T_g)/w\\right)}

    References
    ----------
    .. [1] D. M. Bates and D. G. Watts, *Nonlinear Regression Analysis and Its Applications*,
       Wiley, 1988.
    .. [2] K. P. Menard and N. R. Menard, *Dynamic Mechanical Analysis*, 3rd ed., CRC Press, 2020.
    """
    if step not in ("log", "linear"):
        raise ActsimInputError(f"step: {step!r} is not one of 'log', 'linear'")
    if isinstance(data, (str,)) or hasattr(data, "__fspath__"):
        from .readers import read_xy_csv

        xy = read_xy_csv(data, x_kind="temperature", y_kind="modulus", x_unit=temperature_unit,
                         y_unit=modulus_unit, y_column=modulus_column, min_points=6)
    else:
        xy: XYData = as_xy(data, x_kind="temperature", y_kind="modulus", x_unit=temperature_unit,
                           y_unit=modulus_unit, min_points=6, x_name="temperature", y_name="storage modulus")
    T, E = xy.x, xy.y
    if T.size < 6:
        raise ActsimInputError(f"data: {T.size} points, at least 6 are needed to fit 4 parameters")
    bad = np.flatnonzero(E <= 0)
    if bad.size:
        raise ActsimInputError(f"storage modulus: value {E[bad[0]]:g} Pa at point {bad[0]} is not positive "
                               "(the fit works in log E)")
    if np.any(T <= 0):
        raise ActsimInputError(f"temperature: {float(np.min(T)):g} K is not above absolute zero; check the unit")
    if np.ptp(T) == 0:
        raise ActsimInputError("temperature: all points have the same temperature")
    logE = np.log10(E)
    p0, span = _initial_guess(T, logE)
    if initial:
        names = {"glassy_modulus": 0, "rubbery_modulus": 1, "glass_transition": 2, "width": 3}
        for k, v in initial.items():
            if k not in names:
                raise ActsimInputError(f"initial: {k!r} is not one of {', '.join(names)}")
            if k in ("glassy_modulus", "rubbery_modulus"):
                if not v > 0:
                    raise ActsimInputError(f"initial.{k}: {v!r} Pa is outside the allowed range (> 0 Pa)")
                p0[names[k]] = np.log10(v)
            else:
                p0[names[k]] = float(v)
    lo = np.array([0.0, 0.0, T.min() - span, 1e-3])
    hi = np.array([15.0, 15.0, T.max() + span, 10.0 * span])
    p0 = np.clip(p0, lo + 1e-9 * (hi - lo), hi - 1e-9 * (hi - lo))

    def model_log(p):
        f = expit(-(T - p[2]) / p[3])
        if step == "log":
            return p[1] + (p[0] - p[1]) * f
        Eg, Er = 10.0 ** p[0], 10.0 ** p[1]
        return np.log10(Er + (Eg - Er) * f)

    def resid(p):
        return model_log(p) - logE

    def jac(p):
        if step == "log":
            u = (T - p[2]) / p[3]
            f = expit(-u)
            dm_du = (p[0] - p[1]) * (-f * (1.0 - f))
            return np.column_stack([f, 1.0 - f, dm_du * (-1.0 / p[3]), dm_du * (-u / p[3])])
        Eg, Er = 10.0 ** p[0], 10.0 ** p[1]
        u = (T - p[2]) / p[3]
        f = expit(-u)  # 1/(1+e^u)
        m = Er + (Eg - Er) * f
        df_du = -f * (1.0 - f)
        J = np.empty((T.size, 4))
        J[:, 0] = Eg * f / m
        J[:, 1] = Er * (1.0 - f) / m
        dm_du = (Eg - Er) * df_du
        J[:, 2] = dm_du * (-1.0 / p[3]) / (m * _LN10)
        J[:, 3] = dm_du * (-u / p[3]) / (m * _LN10)
        return J

    sol = least_squares(resid, p0, jac=jac, bounds=(lo, hi), x_scale="jac", xtol=1e-14, ftol=1e-14, gtol=1e-14,
                        max_nfev=2000)
    if not np.all(np.isfinite(sol.x)):
        raise ActsimInputError("data: the smooth-step fit did not give finite parameters; check the sweep")
    # fitstats wants the Jacobian of the residuals in the fitted parameters; recompute analytically
    sol.jac = jac(sol.x)
    fs = from_least_squares(sol, names=("log10_glassy_modulus", "log10_rubbery_modulus", "glass_transition", "width"),
                            units=("log10(Pa)", "log10(Pa)", "K", "K"), confidence=confidence,
                            residual_unit="log10(Pa)")
    params = fs.transformed({
        "log10_glassy_modulus": ("glassy_modulus", "Pa", lambda q: 10.0 ** q, lambda q: _LN10 * 10.0 ** q),
        "log10_rubbery_modulus": ("rubbery_modulus", "Pa", lambda q: 10.0 ** q, lambda q: _LN10 * 10.0 ** q),
    })
    if params.value("glassy_modulus") < params.value("rubbery_modulus"):
        params.warnings.append("glassy modulus is below the rubbery modulus: the data rise with temperature; "
                               "check the columns")
    Tg = params.value("glass_transition")
    if not (T.min() <= Tg <= T.max()):
        params.warnings.append(f"glass_transition {Tg:g} K lies outside the measured range "
                               f"{T.min():g}..{T.max():g} K; the step is extrapolated")
    return DmaFit(params=params, fit_space=fs, temperature=T, storage_modulus=E, step=step, source=xy.source,
                  synthetic=xy.synthetic)


@dataclass
class ModulusTable:
    """Tabulated storage modulus E(T), sorted by temperature.

    Attributes
    ----------
    temperature : numpy.ndarray
        Temperatures, strictly increasing [K].
    storage_modulus : numpy.ndarray
        Storage modulus [Pa].
    source : str
        File name or "arrays".
    synthetic : bool
        True if the file says its data are synthetic.
    """

    temperature: np.ndarray
    storage_modulus: np.ndarray
    source: str = "arrays"
    synthetic: bool = False
    notes: list = field(default_factory=list)

    def modulus_at(self, temperature):
        """Modulus at ``temperature`` [K] by linear interpolation in log E [Pa].

        Outside the table a one-line error is raised (no extrapolation).

        .. math::

            \\log E(T) = \\log E_i + \\frac{T - T_i}{T_{i+1} - T_i}(\\log E_{i+1} - \\log E_i)
        """
        T = np.asarray(temperature, dtype=float)
        lo, hi = self.temperature[0], self.temperature[-1]
        if np.any(T < lo) or np.any(T > hi) or not np.all(np.isfinite(T)):
            bad = T[(T < lo) | (T > hi) | ~np.isfinite(T)].ravel()[0]
            raise ActsimInputError(f"temperature: {bad:g} K is outside the DMA table range ({lo:g} to {hi:g} K)")
        out = np.exp(np.interp(T, self.temperature, np.log(self.storage_modulus)))
        return float(out) if out.ndim == 0 else out


def dma_table(path, *, temperature_unit=None, modulus_unit=None, modulus_column=1) -> ModulusTable:
    """Read a DMA sweep as a table E(T) (no model), sorted by temperature.

    Parameters
    ----------
    path : str, os.PathLike, XYData or (array_like, array_like)
        CSV with temperature and storage modulus columns, or arrays ([K], [Pa]).
    temperature_unit, modulus_unit : str, optional
        Units if the header has none.
    modulus_column : int or str
        Column of the storage modulus in a file.

    Returns
    -------
    ModulusTable

    Notes
    -----
    Repeated temperatures are averaged in log E. Moduli must be positive.

    .. math::

        E_\\text{rep} = \\exp\\left(\\tfrac{1}{k}\\sum_{j=1}^k \\ln E_j\\right)

    References
    ----------
    .. [1] ISO 6721-1:2019, *Plastics — Determination of dynamic mechanical properties — Part 1:
       General principles*.
    """
    if isinstance(path, str) or hasattr(path, "__fspath__"):
        from .readers import read_xy_csv

        xy = read_xy_csv(path, x_kind="temperature", y_kind="modulus", x_unit=temperature_unit,
                         y_unit=modulus_unit, y_column=modulus_column, min_points=2)
    else:
        xy = as_xy(path, x_kind="temperature", y_kind="modulus", x_unit=temperature_unit, y_unit=modulus_unit,
                   min_points=2, x_name="temperature", y_name="storage modulus")
    T, E = xy.x, xy.y
    bad = np.flatnonzero(E <= 0)
    if bad.size:
        raise ActsimInputError(f"storage modulus: value {E[bad[0]]:g} Pa at point {bad[0]} is not positive")
    notes = []
    Tu, inv = np.unique(T, return_inverse=True)
    if Tu.size < T.size:
        notes.append(f"{T.size - Tu.size} repeated temperatures averaged (geometric mean)")
    lnE = np.bincount(inv, weights=np.log(E)) / np.bincount(inv)
    if Tu.size < 2:
        raise ActsimInputError("temperature: the table needs at least 2 distinct temperatures")
    return ModulusTable(temperature=Tu, storage_modulus=np.exp(lnE), source=xy.source, synthetic=xy.synthetic,
                        notes=notes)
