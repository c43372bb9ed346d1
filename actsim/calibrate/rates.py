"""Tensile curves at several strain rates: modulus and yield against rate, the Eyring law.

Each curve is evaluated by :func:`actsim.calibrate.tensile.fit_tensile`; the modulus is fitted
against strain rate as a power law and the yield stress by the high-stress form of the Eyring
law, which then predicts the yield stress (with its confidence interval) at an actuation rate.
Inputs are strain rate [1/s], temperature [K] and stress [Pa].

References
----------
.. [1] I. M. Ward and J. Sweeney, *Mechanical Properties of Solid Polymers*, 3rd ed., Wiley, 2013
   (Eyring law of yield against strain rate and temperature).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..errors import ActsimInputError
from ..io import save_figure
from ..units import check_range
from .fitstats import FitResult, fit_statistics
from .tensile import fit_tensile

__all__ = [
    "eyring_yield_stress",
    "fit_eyring",
    "EyringFit",
    "fit_tensile_rates",
    "RateSeries",
    "plot_tensile_rates",
]


def eyring_yield_stress(rate, *, temperature, activation_volume, activation_energy, reference_rate):
    """Yield stress of the Eyring law at a strain rate and temperature.

    Parameters
    ----------
    rate : float or array_like
        Strain rate, > 0 [1/s].
    temperature : float or array_like
        Temperature [K].
    activation_volume : float
        Molar activation volume V, > 0 [m^3/mol] (per molecule: V / N_A).
    activation_energy : float
        Activation energy :math:`\\Delta H` [J/mol].
    reference_rate : float
        Rate constant :math:`\\dot\\varepsilon_0` [1/s].

    Returns
    -------
    numpy.ndarray or float
        Yield stress [Pa].

    Notes
    -----
    The high-stress form of the Eyring law (the backward jumps neglected):

    .. math::

        \\frac{\\sigma_y}{T} = \\frac{R}{V}\\left(\\ln\\frac{2\\dot\\varepsilon}{\\dot\\varepsilon_0}
        + \\frac{\\Delta H}{R T}\\right)

    References
    ----------
    .. [1] I. M. Ward and J. Sweeney, *Mechanical Properties of Solid Polymers*, 3rd ed., Wiley,
       2013, ch. 13.
    """
    from scipy.constants import R

    r = np.asarray(rate, dtype=float)
    T = np.asarray(temperature, dtype=float)
    out = R * T / activation_volume * np.log(2.0 * r / reference_rate) + activation_energy / activation_volume
    return float(out) if np.ndim(out) == 0 else out


@dataclass
class EyringFit:
    """Eyring law fitted to yield stresses at several rates (and temperatures).

    Attributes
    ----------
    params : FitResult
        With several temperatures: ``activation_volume`` [m^3/mol], ``activation_energy`` [J/mol],
        ``log10_reference_rate`` [log10(1/s)]. At one temperature the energy and the rate constant
        act only together: ``activation_volume`` and ``log10_effective_rate``
        (:math:`\\dot\\varepsilon_0 e^{-\\Delta H/RT}`) [log10(1/s)].
    rate, temperature, yield_stress : numpy.ndarray
        The data [1/s], [K], [Pa].
    """

    params: FitResult
    rate: np.ndarray
    temperature: np.ndarray
    yield_stress: np.ndarray

    @property
    def one_temperature(self) -> bool:
        return "log10_effective_rate" in self.params.names

    def _grad(self, rate, temperature):
        from scipy.constants import R

        p = self.params
        V = p.value("activation_volume")
        q = p.value("log10_effective_rate" if self.one_temperature else "log10_reference_rate")
        dH = 0.0 if self.one_temperature else p.value("activation_energy")
        sig = R * temperature / V * (np.log(2.0 * rate) - np.log(10.0) * q) + dH / V
        g = [-sig / V]
        if not self.one_temperature:
            g.append(1.0 / V)
        g.append(-R * temperature / V * np.log(10.0))
        return float(sig), np.array(g)

    def predict(self, rate, temperature=None):
        """Yield stress at ``rate`` [1/s] and ``temperature`` [K] with its confidence interval.

        Returns (value, low, high) [Pa]; the interval is the delta-method image of the parameter
        covariance (Student t with the fit's degrees of freedom).
        """
        from scipy import stats

        if temperature is None:
            temperature = float(np.mean(self.temperature))
        if self.one_temperature and abs(temperature - float(self.temperature[0])) > 1e-6:
            raise ActsimInputError(f"temperature: {temperature - 273.15:.4g} degC differs from the test temperature "
                                   f"{self.temperature[0] - 273.15:.4g} degC; with one test temperature the Eyring "
                                   "fit cannot move in temperature")
        sig, g = self._grad(float(rate), float(temperature))
        cov = self.params.covariance
        se = float(np.sqrt(max(g @ cov @ g, 0.0))) if cov is not None and np.all(np.isfinite(cov)) else float("inf")
        tq = float(stats.t.ppf(0.5 + self.params.confidence / 2.0, self.params.dof))
        return sig, sig - tq * se, sig + tq * se


def fit_eyring(rate, temperature, yield_stress, *, confidence=0.95) -> EyringFit:
    """Fit the Eyring law to yield stresses measured at several strain rates (and temperatures).

    Parameters
    ----------
    rate : array_like
        Strain rates, > 0 [1/s].
    temperature : float or array_like
        Test temperature(s) [K]; one value for all, or one per rate.
    yield_stress : array_like
        Yield stresses [Pa].
    confidence : float
        Confidence level [1].

    Returns
    -------
    EyringFit

    Notes
    -----
    The law is linear in :math:`a = R/V`, :math:`b = -(R/V)\\ln\\dot\\varepsilon_0`,
    :math:`c = \\Delta H/V`:

    .. math::

        \\sigma_y = a\\,T\\ln(2\\dot\\varepsilon) + b\\,T + c

    The linear solution starts ``scipy.optimize.least_squares`` in the physical parameters
    (residuals in Pa), whose Jacobian gives the intervals. With one temperature :math:`bT + c` is
    one constant, so only V and the effective rate :math:`\\dot\\varepsilon_0 e^{-\\Delta H/RT}`
    are fitted.

    References
    ----------
    .. [1] I. M. Ward and J. Sweeney, *Mechanical Properties of Solid Polymers*, 3rd ed., Wiley,
       2013, ch. 13.
    """
    from scipy.constants import R
    from scipy.optimize import least_squares

    from .fitstats import from_least_squares

    r = np.asarray(rate, dtype=float).ravel()
    s = np.asarray(yield_stress, dtype=float).ravel()
    T = np.broadcast_to(np.asarray(temperature, dtype=float), r.shape).astype(float).ravel()
    if not (r.size == s.size == T.size):
        raise ActsimInputError(f"rate/yield_stress: {r.size} rates but {s.size} yield stresses")
    for name, a, unit in (("rate", r, "1/s"), ("temperature", T, "K"), ("yield_stress", s, "Pa")):
        if not np.all(np.isfinite(a)) or np.any(a <= 0):
            bad = a[~(np.isfinite(a) & (a > 0))][0]
            raise ActsimInputError(f"{name}: {bad:g} {unit} is outside the allowed range (> 0, finite)")
    one_T = np.ptp(T) < 1e-6
    if np.unique(r).size < (3 if one_T else 2) or r.size < (3 if one_T else 4):
        raise ActsimInputError(f"rate: {np.unique(r).size} distinct rates in {r.size} tests; an Eyring fit needs 3 or "
                               "more rates (and 4 or more tests over 2 or more temperatures for the activation energy)")
    L = np.log(2.0 * r)
    ln10 = np.log(10.0)
    if one_T:
        A = np.column_stack([T * L, np.ones_like(T)])
        (a, k), *_ = np.linalg.lstsq(A, s, rcond=None)  # s = a T ln(2r) + k,  k = -a T ln(rate_eff)
        if not a > 0:
            raise ActsimInputError(f"yield_stress: falls with strain rate (slope {a * T[0]:.3g} Pa per ln-unit of rate); "
                                   "the Eyring law needs a yield stress rising with rate")
        p0 = np.array([R / a, -k / (a * T[0]) / ln10])

        def resid(p):
            return R * T / p[0] * (L - ln10 * p[1]) - s

        def jac(p):
            sig = R * T / p[0] * (L - ln10 * p[1])
            return np.column_stack([-sig / p[0], -R * T / p[0] * ln10])

        names, units = ("activation_volume", "log10_effective_rate"), ("m^3/mol", "log10(1/s)")
    else:
        A = np.column_stack([T * L, T, np.ones_like(T)])
        (a, b, c), *_ = np.linalg.lstsq(A, s, rcond=None)
        if not a > 0:
            raise ActsimInputError("yield_stress: does not rise with strain rate at fixed temperature; the Eyring "
                                   "law does not describe these data")
        p0 = np.array([R / a, c * R / a, -b / a / ln10])

        def resid(p):
            return R * T / p[0] * (L - ln10 * p[2]) + p[1] / p[0] - s

        def jac(p):
            sig = resid(p) + s
            return np.column_stack([-sig / p[0], np.full_like(T, 1.0 / p[0]), -R * T / p[0] * ln10])

        names, units = ("activation_volume", "activation_energy", "log10_reference_rate"), \
            ("m^3/mol", "J/mol", "log10(1/s)")
    lo = np.full(p0.size, -np.inf)
    lo[0] = p0[0] * 1e-6
    sol = least_squares(resid, p0, jac=jac, bounds=(lo, np.inf), x_scale="jac", xtol=1e-15, ftol=1e-15,
                        gtol=1e-15, max_nfev=2000)
    sol.jac = jac(sol.x)
    fr = from_least_squares(sol, names=names, units=units, confidence=confidence)
    return EyringFit(params=fr, rate=r, temperature=T, yield_stress=s)


@dataclass
class RateSeries:
    """Tensile curves at several strain rates: each curve's result, modulus and yield against rate.

    Attributes
    ----------
    results : list of TensileResult
        One per file, in the order given.
    rate, temperature : numpy.ndarray
        Strain rate [1/s] and test temperature [K] of each curve.
    yield_from : str
        "offset" (offset yield strength) or "maximum" (largest stress).
    yield_stress : numpy.ndarray
        The yield stress used for each curve [Pa].
    modulus_law : FitResult
        ``log10_modulus_at_1_per_s`` [log10(Pa)] and ``rate_exponent`` [1] of
        :math:`E = E_1 (\\dot\\varepsilon / 1\\,s^{-1})^m`.
    eyring : EyringFit
        The Eyring fit of the yield stresses.
    at_rate, at_temperature : float or None
        The actuation rate [1/s] and temperature [K] asked for.
    """

    results: list
    rate: np.ndarray
    temperature: np.ndarray
    yield_from: str
    yield_stress: np.ndarray
    modulus_law: FitResult
    eyring: EyringFit
    at_rate: float | None = None
    at_temperature: float | None = None

    def modulus_at(self, rate):
        """Modulus of the power law at ``rate`` [1/s] -> [Pa]."""
        m = self.modulus_law
        return 10.0 ** (m.value("log10_modulus_at_1_per_s") + m.value("rate_exponent") * np.log10(rate))

    def to_table(self) -> str:
        """Plain-text summary: one line per curve, the modulus law, the Eyring fit, the prediction."""
        lines = [f"tensile curves at {self.rate.size} strain rates (yield: {self.yield_from})",
                 "  file                           rate [1/s]   T [degC]   modulus [MPa]   yield [MPa]"]
        for res, r, T, y in zip(self.results, self.rate, self.temperature, self.yield_stress):
            lines.append(f"  {res.source[:30]:30s} {r:10.4g}   {T - 273.15:8.4g}   {res.modulus / 1e6:13.5g}   "
                         f"{y / 1e6:11.5g}")
        lines += ["modulus against rate, E = E1 (rate / 1 1/s)^m:", self.modulus_law.to_table(),
                  "Eyring law of yield, sigma_y/T = (R/V) (ln(2 rate/rate_0) + dH/(R T)) (Ward and Sweeney 2013):",
                  self.eyring.params.to_table()]
        from scipy.constants import N_A

        V = self.eyring.params.value("activation_volume")
        lines.append(f"  activation volume per molecule V/N_A = {V / N_A * 1e27:.4g} nm^3")
        if self.eyring.one_temperature:
            lines.append("  one test temperature: the activation energy and the rate constant are not separable; "
                         "test at two or more temperatures to move the prediction in temperature")
        if self.at_rate is not None:
            v, lo, hi = self.eyring.predict(self.at_rate, self.at_temperature)
            T = self.at_temperature if self.at_temperature is not None else float(np.mean(self.temperature))
            ref = self.yield_stress[np.argmin(self.rate)]
            lines.append(f"at the actuation rate {self.at_rate:.4g} 1/s and {T - 273.15:.4g} degC: yield "
                         f"{v / 1e6:.4g} MPa ({100 * self.eyring.params.confidence:g} % CI {lo / 1e6:.4g}..{hi / 1e6:.4g}) "
                         f"against {ref / 1e6:.4g} MPa at the slowest test ({self.rate.min():.3g} 1/s); modulus "
                         f"{self.modulus_at(self.at_rate) / 1e6:.4g} MPa")
            lo_r, hi_r = self.rate.min(), self.rate.max()
            if not lo_r <= self.at_rate <= hi_r:
                lines.append(f"  warning: {self.at_rate:.3g} 1/s lies outside the tested rates {lo_r:.3g}..{hi_r:.3g} "
                             "1/s; the prediction is extrapolated along the Eyring law")
        for res in self.results:
            lines += [f"  warning ({res.source}): {w}" for w in res.warnings]
        return "\n".join(lines)

    def to_dict(self) -> dict:
        """Plain Python types (SI)."""
        d = {"rates_per_s": self.rate.tolist(), "temperatures_K": self.temperature.tolist(),
             "yield_from": self.yield_from, "yield_stress_Pa": self.yield_stress.tolist(),
             "curves": [r.to_dict() for r in self.results], "modulus_law": self.modulus_law.to_dict(),
             "eyring": self.eyring.params.to_dict()}
        if self.at_rate is not None:
            v, lo, hi = self.eyring.predict(self.at_rate, self.at_temperature)
            d["prediction"] = {"rate_per_s": self.at_rate, "temperature_K": self.at_temperature,
                               "yield_stress_Pa": v, "ci_Pa": [lo, hi], "modulus_Pa": float(self.modulus_at(self.at_rate))}
        return d


def fit_tensile_rates(data, *, rates, temperatures, yield_from="offset", at_rate=None, at_temperature=None,
                      confidence=0.95, **kwargs) -> RateSeries:
    """Evaluate tensile curves at several strain rates: modulus and yield against rate, Eyring fit.

    Parameters
    ----------
    data : sequence
        One curve per rate (anything :func:`fit_tensile` takes).
    rates : sequence of float
        Strain rate of each curve [1/s].
    temperatures : float or sequence of float
        Test temperature, one for all or one per curve [K].
    yield_from : {"offset", "maximum"}
        Yield stress of each curve: the offset yield strength (every curve must reach the offset
        line) or the largest stress (upper yield point of a curve that necks).
    at_rate : float, optional
        Actuation strain rate for the prediction [1/s].
    at_temperature : float, optional
        Temperature of the prediction [K]; default the mean test temperature.
    confidence : float
        Confidence level [1].
    **kwargs
        Passed to :func:`fit_tensile` for each curve (``toe``, ``offset``, ...).

    Returns
    -------
    RateSeries

    Notes
    -----
    Modulus against rate: a power law fitted in log–log (common practice, no source),

    .. math::

        \\log_{10} E = \\log_{10} E_1 + m \\log_{10}(\\dot\\varepsilon / 1\\,\\mathrm{s^{-1}})

    and the yield stress by :func:`fit_eyring`.

    References
    ----------
    .. [1] I. M. Ward and J. Sweeney, *Mechanical Properties of Solid Polymers*, 3rd ed., Wiley, 2013.
    """
    if yield_from not in ("offset", "maximum"):
        raise ActsimInputError(f"yield_from: {yield_from!r} is not one of 'offset', 'maximum'")
    data = list(data)
    r = np.asarray(rates, dtype=float).ravel()
    if r.size != len(data):
        raise ActsimInputError(f"rate: {r.size} strain rates for {len(data)} curves; give one rate per curve")
    T = np.asarray(temperatures, dtype=float).ravel()
    if T.size == 1:
        T = np.full(r.size, T[0])
    if T.size != r.size:
        raise ActsimInputError(f"temperature: {T.size} test temperatures for {r.size} curves; give one for all or "
                               "one per curve")
    for k, v in enumerate(r):
        check_range(v, field=f"rate of curve {k + 1}", unit="1/s", lo=0.0, lo_open=True)
    if len(data) < 3:
        raise ActsimInputError(f"data: {len(data)} curves; modulus and yield against rate need 3 or more rates")
    results = [fit_tensile(d, confidence=confidence, **kwargs) for d in data]
    ys = []
    for res in results:
        if yield_from == "offset":
            if res.yield_strength is None:
                raise ActsimInputError(f"{res.source}: the curve never meets the {100 * res.offset:g} % offset line; "
                                       "use yield_from='maximum' (--yield-from maximum)")
            ys.append(res.yield_strength)
        else:
            ys.append(res.ultimate_strength)
    ys = np.array(ys)
    E = np.array([res.modulus for res in results])
    A = np.column_stack([np.ones_like(r), np.log10(r)])
    coef, *_ = np.linalg.lstsq(A, np.log10(E), rcond=None)
    ml = fit_statistics(A, A @ coef - np.log10(E), values=coef, names=("log10_modulus_at_1_per_s", "rate_exponent"),
                        units=("log10(Pa)", "1"), confidence=confidence, message="linear least squares (exact)")
    ey = fit_eyring(r, T, ys, confidence=confidence)
    return RateSeries(results=results, rate=r, temperature=T, yield_from=yield_from, yield_stress=ys,
                      modulus_law=ml, eyring=ey, at_rate=at_rate, at_temperature=at_temperature)


def plot_tensile_rates(series: RateSeries, path):
    """Figure: the curves, modulus against rate, yield against rate with the Eyring law.

    Parameters
    ----------
    series : RateSeries
        From :func:`fit_tensile_rates`.
    path : str or os.PathLike
        PNG file (written atomically).

    Returns
    -------
    pathlib.Path

    Notes
    -----
    The yield panel draws the fitted law at each test temperature,

    .. math::

        \\sigma_y(\\dot\\varepsilon) = \\frac{R T}{V}\\ln\\frac{2\\dot\\varepsilon}{\\dot\\varepsilon_0} + \\frac{\\Delta H}{V}

    References
    ----------
    .. [1] I. M. Ward and J. Sweeney, *Mechanical Properties of Solid Polymers*, 3rd ed., Wiley, 2013.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(12.0, 4.2))
    FigureCanvasAgg(fig)
    a1, a2, a3 = fig.subplots(1, 3)
    for res, r in zip(series.results, series.rate):
        a1.plot(100 * res.strain, res.stress / 1e6, lw=1.1, label=f"{r:.3g} 1/s")
    a1.set_xlabel("strain [%]")
    a1.set_ylabel("stress [MPa]")
    a1.legend(fontsize=7)
    lo = min(series.rate.min(), series.at_rate or series.rate.min()) / 2
    hi = max(series.rate.max(), series.at_rate or series.rate.max()) * 2
    rf = np.geomspace(lo, hi, 100)
    a2.semilogx(series.rate, [res.modulus / 1e6 for res in series.results], "o", color="0.2", label="regression modulus")
    a2.semilogx(rf, series.modulus_at(rf) / 1e6, "-", color="C0", label="power law")
    a2.set_xlabel("strain rate [1/s]")
    a2.set_ylabel("modulus [MPa]")
    a2.legend(fontsize=7)
    for T in np.unique(series.temperature):
        m = series.temperature == T
        a3.semilogx(series.rate[m], series.yield_stress[m] / 1e6, "o", label=f"data {T - 273.15:.4g} degC")
        curve = [series.eyring.predict(x, T)[0] for x in rf]
        a3.semilogx(rf, np.array(curve) / 1e6, "-", lw=1.0)
    if series.at_rate is not None:
        v, lo_, hi_ = series.eyring.predict(series.at_rate, series.at_temperature)
        a3.errorbar([series.at_rate], [v / 1e6], yerr=[[(v - lo_) / 1e6], [(hi_ - v) / 1e6]], fmt="s", color="C3",
                    label="actuation rate")
    a3.set_xlabel("strain rate [1/s]")
    a3.set_ylabel(f"yield stress ({series.yield_from}) [MPa]")
    a3.set_title("Eyring law", fontsize=10)
    a3.legend(fontsize=7)
    for a in (a1, a2, a3):
        a.grid(True, which="both", alpha=0.3)
    syn = any(res.synthetic for res in series.results)
    fig.suptitle("tensile curves at several strain rates" + (" (synthetic data)" if syn else ""), fontsize=10)
    fig.tight_layout()
    save_figure(fig, path)
    return Path(path)
