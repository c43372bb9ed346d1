"""Statistics of a nonlinear least-squares fit: covariance, standard errors, confidence intervals.

Every calibration in :mod:`actsim.calibrate` returns a :class:`FitResult`. It is built from
what :func:`scipy.optimize.least_squares` returns (the Jacobian of the residuals at the
solution and the residuals themselves) by the usual linearisation: near the optimum the model
is replaced by its tangent, and the covariance of the parameters is

.. math::

    \\operatorname{Cov}(\\hat p) = s^2 \\, (J^T J)^{-1}, \\qquad
    s^2 = \\frac{\\sum_i r_i^2}{n - p},

with Student-t confidence intervals :math:`\\hat p_k \\pm t_{1-\\alpha/2,\\,n-p}\\,\\mathrm{se}_k`.
When the residuals are already divided by known standard deviations (``absolute_sigma``),
:math:`s^2 = 1` is not estimated and the interval uses the normal quantile
:math:`z_{1-\\alpha/2}` instead.
These intervals are exact for a linear model with independent, equal-variance normal errors
and approximate otherwise (their coverage is checked by simulation in the tests).

The inverse is taken through the singular value decomposition of the column-scaled Jacobian,
so that a rank-deficient problem (a parameter the data cannot see, or two parameters that
only act together) is detected and reported instead of producing huge or meaningless numbers.

References
----------
.. [1] D. M. Bates and D. G. Watts, *Nonlinear Regression Analysis and Its Applications*,
   Wiley, 1988 (chapter 2: linear approximation inference regions).
.. [2] G. A. F. Seber and C. J. Wild, *Nonlinear Regression*, Wiley, 1989.
.. [3] W. H. Press, S. A. Teukolsky, W. T. Vetterling and B. P. Flannery, *Numerical Recipes*,
   3rd ed., Cambridge University Press, 2007, section 15.4 (SVD for least squares).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import stats

from ..errors import ActsimInputError

__all__ = [
    "FitResult",
    "covariance_from_jacobian",
    "fit_statistics",
    "from_least_squares",
]

#: Relative singular value (of the column-scaled Jacobian) below which a direction in
#: parameter space is treated as numerically absent (rank deficiency).
RANK_RTOL = 1e-10
#: Relative singular value below which the fit is reported as poorly identifiable.
#: Common practice, no source: 1e-3 means some combination of parameters is a thousand times
#: less determined than the best-determined one.
SV_WARN_RTOL = 1e-3
#: |correlation| above which two parameters are reported as not separately identifiable.
#: Common practice, no source.
CORR_WARN = 0.99


@dataclass
class FitResult:
    """Fitted parameters with their uncertainty.

    Attributes
    ----------
    names : tuple of str
        Parameter names.
    values : numpy.ndarray
        Best-fit values [in ``units``].
    standard_errors : numpy.ndarray
        Standard errors from the linearised covariance [in ``units``]; ``inf`` for a
        parameter that the data cannot determine (rank deficiency, see ``warnings``).
    ci_low, ci_high : numpy.ndarray
        Bounds of the two-sided confidence interval at level ``confidence`` [in ``units``].
    correlation : numpy.ndarray
        Correlation matrix of the parameters [1]; NaN in rows of undeterminable parameters.
    units : tuple of str
        SI unit of each parameter, e.g. ``"Pa"``, ``"K"``, ``"1"``.
    residuals : numpy.ndarray
        Residuals at the solution, in the units the fit worked in.
    n_points : int
        Number of residuals (data points).
    success : bool
        Whether the optimiser reported convergence.
    message : str
        The optimiser's message.
    warnings : list of str
        Identifiability and convergence warnings, each one line naming the parameters.
    covariance : numpy.ndarray
        Parameter covariance matrix [units_i * units_j].
    dof : int
        Degrees of freedom used for ``s^2`` and the t quantile (n - rank); with known sigma
        (``absolute_sigma``) the interval uses the normal quantile instead.
    residual_std : float
        Residual standard deviation ``s`` [``residual_unit``].
    residual_unit : str
        Unit of the residuals and of ``residual_std`` ("" when not given).
    confidence : float
        Confidence level of ``ci_low``/``ci_high`` [1].
    """

    names: tuple
    values: np.ndarray
    standard_errors: np.ndarray
    ci_low: np.ndarray
    ci_high: np.ndarray
    correlation: np.ndarray
    units: tuple
    residuals: np.ndarray
    n_points: int
    success: bool
    message: str
    warnings: list = field(default_factory=list)
    covariance: np.ndarray | None = None
    dof: int = 0
    residual_std: float = float("nan")
    confidence: float = 0.95
    residual_unit: str = ""

    # -- access by name -------------------------------------------------------------------
    def index(self, name: str) -> int:
        """Position of parameter ``name`` (one-line error if unknown)."""
        try:
            return list(self.names).index(name)
        except ValueError:
            raise ActsimInputError(f"parameter: {name!r} is not one of {', '.join(self.names)}") from None

    def value(self, name: str) -> float:
        """Best-fit value of ``name`` [its unit]."""
        return float(self.values[self.index(name)])

    def stderr(self, name: str) -> float:
        """Standard error of ``name`` [its unit]."""
        return float(self.standard_errors[self.index(name)])

    def ci(self, name: str) -> tuple[float, float]:
        """Confidence interval of ``name`` [its unit]."""
        i = self.index(name)
        return float(self.ci_low[i]), float(self.ci_high[i])

    # -- derived results ------------------------------------------------------------------
    def transformed(self, transforms: dict) -> "FitResult":
        """Return a copy with some parameters mapped through monotone functions.

        Parameters
        ----------
        transforms : dict
            ``{old_name: (new_name, new_unit, f, dfdp)}`` with ``f`` monotone. The value is
            ``f(p)``, the standard error follows the delta method ``|f'(p)| se``, and the
            confidence interval is the image of the old interval (exact for a monotone map,
            so it may be asymmetric). Correlations keep their magnitude and change sign where
            ``f`` decreases.

        Returns
        -------
        FitResult

        Notes
        -----
        .. math::

            \\operatorname{Cov}(f(\\hat p)) \\approx G\\,\\operatorname{Cov}(\\hat p)\\,G^T,
            \\qquad G = \\operatorname{diag}(f'(\\hat p))
        """
        names = list(self.names)
        units = list(self.units)
        values = self.values.astype(float).copy()
        lo = self.ci_low.astype(float).copy()
        hi = self.ci_high.astype(float).copy()
        grad = np.ones(len(names))
        for old, (new, unit, f, df) in transforms.items():
            i = self.index(old)
            p = self.values[i]
            values[i] = f(p)
            grad[i] = df(p)
            with np.errstate(over="ignore", invalid="ignore"):
                a, b = f(self.ci_low[i]), f(self.ci_high[i])
            lo[i], hi[i] = min(a, b), max(a, b)
            names[i], units[i] = new, unit
        cov = None
        if self.covariance is not None:
            with np.errstate(invalid="ignore"):
                cov = self.covariance * np.outer(grad, grad)
        with np.errstate(invalid="ignore"):
            se = np.abs(grad) * self.standard_errors
            corr = self.correlation * np.outer(np.sign(grad), np.sign(grad))
        return FitResult(
            names=tuple(names), values=values, standard_errors=se, ci_low=lo, ci_high=hi,
            correlation=corr, units=tuple(units), residuals=self.residuals, n_points=self.n_points,
            success=self.success, message=self.message, warnings=list(self.warnings), covariance=cov,
            dof=self.dof, residual_std=self.residual_std, confidence=self.confidence,
            residual_unit=self.residual_unit,
        )

    def to_table(self) -> str:
        """Plain-text table: name, value, standard error, confidence interval, unit."""
        pct = f"{100 * self.confidence:g} %"
        head = ("parameter", "value", "std. error", f"{pct} CI low", f"{pct} CI high", "unit")
        rows = []
        for i, n in enumerate(self.names):
            scale, offset, unit = _display_unit(n, self.units[i], self.values[i])
            rows.append((n, _fmt(self.values[i] * scale + offset), _fmt(self.standard_errors[i] * scale),
                         _fmt(self.ci_low[i] * scale + offset), _fmt(self.ci_high[i] * scale + offset), unit))
        widths = [max(len(r[k]) for r in [head] + rows) for k in range(len(head))]
        lines = ["  ".join(c.ljust(w) for c, w in zip(head, widths)).rstrip()]
        lines.append("  ".join("-" * w for w in widths))
        lines += ["  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip() for r in rows]
        lines.append(f"n = {self.n_points} points, dof = {self.dof}, residual std = {self.residual_std_text()}, "
                     f"converged = {'yes' if self.success else 'no'}")
        if len(self.names) > 1:
            lines.append("correlation:")
            w = max(len(n) for n in self.names)
            for i, n in enumerate(self.names):
                cells = " ".join(f"{c:+6.3f}" if np.isfinite(c) else "   n/a" for c in self.correlation[i])
                lines.append(f"  {n.ljust(w)} {cells}")
        for wtxt in self.warnings:
            lines.append(f"warning: {wtxt}")
        return "\n".join(lines)

    def residual_std_text(self) -> str:
        """The residual standard deviation with its unit ("0.00877 rad (0.502 deg)")."""
        text = _fmt(self.residual_std)
        if self.residual_unit == "rad" and math.isfinite(self.residual_std):
            return f"{text} rad ({math.degrees(self.residual_std):.3g} deg)"
        return f"{text} {self.residual_unit}".rstrip()

    def to_dict(self) -> dict:
        """Plain Python types (for JSON): lists and floats; inf/NaN become None."""
        def clean(a):
            a = np.asarray(a, dtype=float)
            return [clean(x) for x in a] if a.ndim else (float(a) if np.isfinite(a) else None)

        return {
            "names": list(self.names),
            "values": clean(self.values),
            "standard_errors": clean(self.standard_errors),
            "ci_low": clean(self.ci_low),
            "ci_high": clean(self.ci_high),
            "confidence": float(self.confidence),
            "correlation": clean(self.correlation),
            "covariance": None if self.covariance is None else clean(self.covariance),
            "units": list(self.units),
            "n_points": int(self.n_points),
            "dof": int(self.dof),
            "residual_std": clean(self.residual_std),
            "residual_unit": self.residual_unit,
            "success": bool(self.success),
            "message": str(self.message),
            "warnings": list(self.warnings),
        }


def _display_unit(name: str, unit: str, value) -> tuple[float, float, str]:
    """(scale, offset, unit) that show a fitted value as a person reads it: Pa in kPa/MPa/GPa, a temperature in degC.

    A temperature difference (a name with "width" or "difference") stays in K; the standard error
    is scaled but never offset.
    """
    v = abs(float(value)) if math.isfinite(float(value)) else 0.0
    if unit == "Pa":
        for lim, scale, u in ((1e9, 1e-9, "GPa"), (1e6, 1e-6, "MPa"), (1e3, 1e-3, "kPa")):
            if v >= lim:
                return scale, 0.0, u
    if unit == "K" and not any(w in name for w in ("width", "difference")):
        return 1.0, -273.15, "degC"
    return 1.0, 0.0, unit


def _fmt(v) -> str:
    v = float(v)
    if math.isinf(v):
        return "inf" if v > 0 else "-inf"
    if math.isnan(v):
        return "n/a"
    return f"{v:.6g}"


def covariance_from_jacobian(jacobian, residuals, *, n_params_dof=None, absolute_sigma=False, rank_rtol=RANK_RTOL):
    """Covariance of least-squares parameters from the Jacobian of the residuals.

    Parameters
    ----------
    jacobian : array_like, shape (n, p)
        Jacobian of the residual vector with respect to the parameters at the solution
        [residual unit / parameter unit].
    residuals : array_like, shape (n,)
        Residuals at the solution [residual unit].
    n_params_dof : int, optional
        Number of parameters to subtract from ``n`` for the degrees of freedom; defaults to
        the numerical rank of the Jacobian.
    absolute_sigma : bool
        If True the residuals are already divided by known measurement standard deviations
        and ``s^2`` is taken as 1 (no rescaling by the scatter). Default False.
    rank_rtol : float
        Singular values of the column-scaled Jacobian below ``rank_rtol`` times the largest
        are dropped [1].

    Returns
    -------
    cov : numpy.ndarray, shape (p, p)
        Covariance [parameter units squared]. Parameters that lie in a dropped direction
        get infinite variance (their rows/columns are ``inf`` on the diagonal, NaN elsewhere).
    info : dict
        ``s2``, ``dof``, ``rank``, ``singular_values`` (relative, of the column-scaled
        Jacobian, descending), ``null_params`` (indices with infinite variance),
        ``weak_directions`` (list of (relative singular value, loading vector) for
        directions below :data:`SV_WARN_RTOL`).

    Notes
    -----
    With column scaling :math:`D = \\operatorname{diag}(\\lVert J_{:,k} \\rVert)`,
    :math:`J D^{-1} = U S V^T` and

    .. math::

        (J^T J)^{+} = D^{-1} V S^{-2} V^T D^{-1}, \\qquad \\operatorname{Cov} = s^2 (J^T J)^{+}.

    Scaling the columns first makes the rank test independent of the parameters' units.

    References
    ----------
    .. [1] W. H. Press et al., *Numerical Recipes*, 3rd ed., Cambridge University Press, 2007,
       section 15.4.
    """
    J = np.asarray(jacobian, dtype=float)
    r = np.asarray(residuals, dtype=float).ravel()
    if J.ndim != 2 or J.shape[0] != r.size:
        raise ActsimInputError(f"jacobian: shape {J.shape} does not match {r.size} residuals")
    if not (np.all(np.isfinite(J)) and np.all(np.isfinite(r))):
        raise ActsimInputError("jacobian/residuals: contain NaN or inf; the fit did not produce finite values")
    n, p = J.shape
    norms = np.sqrt(np.sum(J * J, axis=0))
    zero_cols = norms == 0.0
    scale = np.where(zero_cols, 1.0, norms)
    Js = J / scale
    _, s, Vt = np.linalg.svd(Js, full_matrices=False)
    smax = s[0] if s.size and s[0] > 0 else 1.0
    rel = s / smax
    keep = rel > rank_rtol
    rank = int(np.count_nonzero(keep))
    k = n_params_dof if n_params_dof is not None else rank
    dof = n - k
    if dof <= 0:
        raise ActsimInputError(f"data: {n} points for {k} fitted parameters; need more points than parameters")
    s2 = 1.0 if absolute_sigma else float(r @ r) / dof
    V = Vt.T
    Vk = V[:, keep]
    pinv = (Vk / s[keep] ** 2) @ Vk.T
    cov = s2 * pinv / np.outer(scale, scale)
    null_params = set(np.flatnonzero(zero_cols).tolist())
    if rank < p:
        loading = np.sum(V[:, ~keep] ** 2, axis=1)
        null_params |= set(np.flatnonzero(loading > 1e-2).tolist())
    null_params = sorted(null_params)
    for i in null_params:
        cov[i, :] = np.nan
        cov[:, i] = np.nan
        cov[i, i] = np.inf
    weak = [(float(rel[j]), V[:, j].copy()) for j in range(len(s)) if rel[j] < SV_WARN_RTOL]
    info = {"s2": s2, "dof": dof, "rank": rank, "singular_values": rel, "null_params": null_params,
            "weak_directions": weak}
    return cov, info


def fit_statistics(jacobian, residuals, *, values, names, units, confidence=0.95, success=True, message="",
                   absolute_sigma=False, active_mask=None, sv_warn_rtol=SV_WARN_RTOL, corr_warn=CORR_WARN,
                   residual_unit=""):
    """Build a :class:`FitResult` from the Jacobian and residuals at a least-squares solution.

    Parameters
    ----------
    jacobian : array_like, shape (n, p)
        Jacobian of the residuals [residual unit / parameter unit].
    residuals : array_like, shape (n,)
        Residuals at the solution [residual unit].
    values : array_like, shape (p,)
        Parameter values at the solution [``units``].
    names, units : sequence of str
        Parameter names and SI units.
    confidence : float
        Two-sided confidence level, in (0, 1) [1]. Default 0.95.
    success, message : bool, str
        Passed through from the optimiser.
    absolute_sigma : bool
        Residuals already weighted by known standard deviations (``s^2 = 1``); the
        confidence interval then uses the normal quantile instead of Student t.
    active_mask : array_like of int, optional
        ``least_squares``' ``active_mask``; a parameter sitting on a bound is reported.
    residual_unit : str, optional
        Unit of the residuals, shown with the residual standard deviation.
    sv_warn_rtol : float
        Relative singular value that triggers a "poorly identifiable" warning [1].
    corr_warn : float
        |correlation| that triggers a "not separately identifiable" warning [1].

    Returns
    -------
    FitResult

    Notes
    -----
    .. math::

        \\mathrm{se}_k = \\sqrt{\\operatorname{Cov}_{kk}}, \\quad
        \\hat p_k \\pm t_{(1+c)/2,\\;n-p}\\,\\mathrm{se}_k
        \\;\\text{(or } z_{(1+c)/2}\\,\\mathrm{se}_k \\text{ with known } \\sigma), \\quad
        \\rho_{jk} = \\frac{\\operatorname{Cov}_{jk}}{\\mathrm{se}_j\\,\\mathrm{se}_k}

    References
    ----------
    .. [1] D. M. Bates and D. G. Watts, *Nonlinear Regression Analysis and Its Applications*,
       Wiley, 1988.
    """
    if not (0.0 < confidence < 1.0):
        raise ActsimInputError(f"confidence: {confidence!r} is outside the allowed range (> 0 and < 1)")
    values = np.asarray(values, dtype=float).ravel()
    names = tuple(names)
    units = tuple(units)
    J = np.asarray(jacobian, dtype=float)
    if not (len(names) == len(units) == values.size == J.shape[1]):
        raise ActsimInputError(f"names/units/values: lengths {len(names)}/{len(units)}/{values.size} do not match "
                               f"the {J.shape[1]} Jacobian columns")
    cov, info = covariance_from_jacobian(J, residuals, absolute_sigma=absolute_sigma)
    diag = np.diag(cov).copy()
    se = np.sqrt(np.where(diag < 0, 0.0, diag))  # tiny negative round-off only
    # Known standard deviations (absolute_sigma): s is not estimated, so the interval uses the
    # normal quantile; an estimated s (n - p dof) calls for Student t (Bates and Watts 1988, sec. 2.3).
    if absolute_sigma:
        tq = float(stats.norm.ppf(0.5 + confidence / 2.0))
    else:
        tq = float(stats.t.ppf(0.5 + confidence / 2.0, info["dof"]))
    lo = values - tq * se
    hi = values + tq * se
    with np.errstate(invalid="ignore", divide="ignore"):
        corr = cov / np.outer(se, se)
    for i in range(len(names)):
        if np.isfinite(se[i]) and se[i] > 0:
            corr[i, i] = 1.0
    null = info["null_params"]
    corr[null, :] = np.nan
    corr[:, null] = np.nan
    # zero standard error (exact fit): correlation undefined -> report 0 off-diagonal, 1 on it
    exact = se == 0
    if np.any(exact):
        corr[exact, :] = 0.0
        corr[:, exact] = 0.0
        corr[exact, exact] = 1.0
    msgs = []
    if not success:
        msgs.append(f"optimiser did not converge: {message}")
    if null:
        msgs.append("not identifiable from these data (no independent effect on the residuals): "
                    + ", ".join(names[i] for i in null) + "; their standard errors are reported as inf")
    for relsv, vec in info["weak_directions"]:
        if relsv <= RANK_RTOL:
            continue
        involved = [names[i] for i in np.flatnonzero(np.abs(vec) > 0.1)]
        msgs.append(f"poorly identifiable combination of {', '.join(involved)} "
                    f"(relative singular value {relsv:.2g} < {sv_warn_rtol:g})")
    p = len(names)
    for i in range(p):
        for j in range(i + 1, p):
            c = corr[i, j]
            if np.isfinite(c) and abs(c) > corr_warn:
                msgs.append(f"{names[i]} and {names[j]} are strongly correlated (r = {c:+.4f}); "
                            "the data do not determine them separately")
    if active_mask is not None:
        am = np.asarray(active_mask)
        for i in np.flatnonzero(am != 0):
            side = "lower" if am[i] < 0 else "upper"
            msgs.append(f"{names[i]} sits on its {side} bound; its confidence interval is not reliable")
    return FitResult(
        names=names, values=values, standard_errors=se, ci_low=lo, ci_high=hi, correlation=corr, units=units,
        residuals=np.asarray(residuals, dtype=float).ravel(), n_points=int(J.shape[0]), success=bool(success),
        message=str(message), warnings=msgs, covariance=cov, dof=int(info["dof"]),
        residual_std=float(math.sqrt(info["s2"])), confidence=float(confidence), residual_unit=str(residual_unit),
    )


def from_least_squares(result, *, names, units, confidence=0.95, absolute_sigma=False, **kwargs) -> FitResult:
    """:class:`FitResult` from a :func:`scipy.optimize.least_squares` result.

    Parameters
    ----------
    result : scipy.optimize.OptimizeResult
        Needs ``x``, ``fun`` (residuals), ``jac``, ``success``, ``message``; ``active_mask``
        is used when present.
    names, units : sequence of str
        Parameter names and SI units, in the order of ``result.x``.
    confidence : float
        Two-sided confidence level [1].
    absolute_sigma : bool
        Residuals already divided by known standard deviations.
    **kwargs
        Passed to :func:`fit_statistics` (``sv_warn_rtol``, ``corr_warn``).

    Returns
    -------
    FitResult

    Notes
    -----
    With a robust ``loss`` the Jacobian returned by ``least_squares`` is the modified one,
    so the covariance is that of the Gauss–Newton approximation of the robust cost.

    .. math::

        \\operatorname{Cov} = s^2 (J^T J)^{-1}

    References
    ----------
    .. [1] D. M. Bates and D. G. Watts, *Nonlinear Regression Analysis and Its Applications*,
       Wiley, 1988.
    """
    jac = result.jac
    if hasattr(jac, "toarray"):
        jac = jac.toarray()
    return fit_statistics(
        jac, result.fun, values=result.x, names=names, units=units, confidence=confidence,
        success=bool(result.success), message=str(result.message), absolute_sigma=absolute_sigma,
        active_mask=getattr(result, "active_mask", None), **kwargs,
    )
