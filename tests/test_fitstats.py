"""Tests of actsim.calibrate.fitstats against ordinary least squares, scipy and simulated coverage."""

import json

import numpy as np
import pytest
from scipy import stats
from scipy.optimize import least_squares

from actsim.calibrate.fitstats import covariance_from_jacobian, fit_statistics, from_least_squares
from actsim.errors import ActsimInputError


def _linear_data(seed=1, n=25):
    rng = np.random.default_rng(seed)
    x = np.linspace(0.0, 4.0, n)
    y = 1.5 + 2.0 * x + rng.normal(0.0, 0.3, n)
    return x, y


def test_linear_covariance_equals_ols_formula_and_linregress():
    x, y = _linear_data()
    res = least_squares(lambda p: p[0] + p[1] * x - y, [0.0, 0.0], jac=lambda p: np.column_stack([np.ones_like(x), x]),
                        method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15)
    fr = from_least_squares(res, names=("intercept", "slope"), units=("Pa", "Pa"))
    # Ordinary least squares: Cov = s^2 (X^T X)^-1, s^2 = RSS/(n-p)
    # (N. R. Draper and H. Smith, Applied Regression Analysis, 3rd ed., Wiley, 1998, ch. 5).
    X = np.column_stack([np.ones_like(x), x])
    beta = np.linalg.solve(X.T @ X, X.T @ y)
    rss = float(np.sum((X @ beta - y) ** 2))
    cov_ols = rss / (x.size - 2) * np.linalg.inv(X.T @ X)
    np.testing.assert_allclose(fr.values, beta, rtol=1e-10)
    np.testing.assert_allclose(fr.covariance, cov_ols, rtol=1e-8)
    # Reference library: scipy.stats.linregress (slope stderr, intercept_stderr).
    lr = stats.linregress(x, y)
    assert fr.value("slope") == pytest.approx(lr.slope, rel=1e-10)
    assert fr.stderr("slope") == pytest.approx(lr.stderr, rel=1e-8)
    assert fr.stderr("intercept") == pytest.approx(lr.intercept_stderr, rel=1e-8)
    # t-based interval: Student t with n-2 dof (scipy.stats.t), e.g. Draper & Smith 1998 sec. 1.4.
    tq = stats.t.ppf(0.975, x.size - 2)
    lo, hi = fr.ci("slope")
    assert lo == pytest.approx(lr.slope - tq * lr.stderr, rel=1e-8)
    assert hi == pytest.approx(lr.slope + tq * lr.stderr, rel=1e-8)
    # correlation of slope and intercept from the OLS covariance
    r = cov_ols[0, 1] / np.sqrt(cov_ols[0, 0] * cov_ols[1, 1])
    assert fr.correlation[0, 1] == pytest.approx(r, rel=1e-8)
    assert fr.warnings == []
    assert fr.dof == x.size - 2


def test_ci_coverage_nonlinear_exponential_decay():
    """Coverage of the 95 % linearised CI for y = a exp(-k t) over 200 seeded trials.

    Expected near 0.95 for a mildly nonlinear model (Bates and Watts, Nonlinear Regression
    Analysis and Its Applications, Wiley, 1988, ch. 7: linearisation intervals are close to
    nominal when curvature is small). Accepted band 0.90-0.99 (binomial spread for 200 trials
    is about +-0.015 at 0.95).
    """
    a_true, k_true, sigma = 2.0, 0.7, 0.05
    t = np.linspace(0.0, 5.0, 30)
    hits = np.zeros(2)
    trials = 200
    rng = np.random.default_rng(20240601)
    for _ in range(trials):
        y = a_true * np.exp(-k_true * t) + rng.normal(0.0, sigma, t.size)

        def r(p):
            return p[0] * np.exp(-p[1] * t) - y

        def j(p):
            e = np.exp(-p[1] * t)
            return np.column_stack([e, -p[0] * t * e])

        res = least_squares(r, [1.0, 0.3], jac=j)
        fr = from_least_squares(res, names=("a", "k"), units=("1", "1/s"))
        hits += (fr.ci_low <= [a_true, k_true]) & ([a_true, k_true] <= fr.ci_high)
    coverage = hits / trials
    print(f"95 % CI coverage over {trials} trials: a {coverage[0]:.3f}, k {coverage[1]:.3f}")
    assert np.all((coverage >= 0.90) & (coverage <= 0.99))


def test_exactly_collinear_parameters_reported_not_identifiable():
    # y = a*b*x: only the product is determined -> rank 1; both named, se = inf.
    x = np.linspace(1, 2, 10)
    y = 3.0 * x + 0.01 * np.sin(7 * x)
    res = least_squares(lambda p: p[0] * p[1] * x - y, [1.0, 2.0])
    fr = from_least_squares(res, names=("a", "b"), units=("1", "1"))
    assert np.all(np.isinf(fr.standard_errors))
    assert any("not identifiable" in w and "a" in w and "b" in w for w in fr.warnings)
    assert "warning:" in fr.to_table()
    json.dumps(fr.to_dict())  # inf/NaN become None: valid JSON


def test_strong_correlation_warning_names_both():
    # intercept and slope far from the data's x origin: |r| ~ 1 (common practice, no source: threshold 0.99)
    x = np.linspace(1000.0, 1001.0, 20)
    y = 1.0 + 0.5 * x + 0.01 * np.cos(3 * x)
    X = np.column_stack([np.ones_like(x), x])
    beta = np.linalg.lstsq(X, y, rcond=None)[0]
    fr = fit_statistics(X, X @ beta - y, values=beta, names=("offset", "slope"), units=("Pa", "Pa"))
    assert abs(fr.correlation[0, 1]) > 0.99
    assert any("offset and slope are strongly correlated" in w for w in fr.warnings)


def test_transformed_delta_method_and_interval_images():
    x, y = _linear_data(seed=3)
    X = np.column_stack([np.ones_like(x), x])
    beta = np.linalg.lstsq(X, y, rcond=None)[0]
    fr = fit_statistics(X, X @ beta - y, values=beta, names=("c", "q"), units=("1", "1"))
    tr = fr.transformed({"q": ("Q", "Pa", lambda v: 10.0 ** v, lambda v: np.log(10) * 10.0 ** v)})
    # delta method: se(f) = |f'(p)| se(p) (Bates and Watts 1988, sec. 2.3)
    assert tr.value("Q") == pytest.approx(10 ** fr.value("q"))
    assert tr.stderr("Q") == pytest.approx(np.log(10) * 10 ** fr.value("q") * fr.stderr("q"))
    assert tr.ci("Q") == pytest.approx((10 ** fr.ci("q")[0], 10 ** fr.ci("q")[1]))
    assert tr.units == ("1", "Pa")


def test_too_few_points_and_bad_confidence():
    J = np.ones((2, 2))
    with pytest.raises(ActsimInputError, match="need more points than parameters"):
        covariance_from_jacobian(np.array([[1.0, 0.0], [0.0, 1.0]]), [0.1, 0.2])
    with pytest.raises(ActsimInputError, match="confidence"):
        fit_statistics(J, [0.0, 0.0], values=[1, 1], names=("a", "b"), units=("1", "1"), confidence=1.5)


def test_table_lists_every_parameter():
    x, y = _linear_data()
    X = np.column_stack([np.ones_like(x), x])
    beta = np.linalg.lstsq(X, y, rcond=None)[0]
    fr = fit_statistics(X, X @ beta - y, values=beta, names=("intercept", "slope"), units=("Pa", "Pa"))
    txt = fr.to_table()
    assert "intercept" in txt and "slope" in txt and "95 % CI" in txt
    d = fr.to_dict()
    assert d["names"] == ["intercept", "slope"] and d["dof"] == x.size - 2


def test_calibrate_docstrings_document_every_parameter():
    # Project style rule (common practice, no source): numpydoc parameters match the signature, and each
    # computational function carries a math block and references. File/plot helpers are exempt from the latter.
    import importlib
    import inspect
    import re

    exempt = {"save_figure_atomic", "as_xy", "plot_tensile"}
    for m in ("fitstats", "readers", "tensile", "rates", "dma", "spectra"):
        mod = importlib.import_module(f"actsim.calibrate.{m}")
        for name in mod.__all__:
            obj = getattr(mod, name)
            if not inspect.isfunction(obj):
                continue
            doc = obj.__doc__ or ""
            for p in inspect.signature(obj).parameters:
                assert re.search(rf"(^|[\s,*]){re.escape(p)}\b[^\n]*:", doc, re.M) or f"*{p}" in doc, (m, name, p)
            if name not in exempt:
                assert ".. math::" in doc and "References" in doc, (m, name)


def test_known_sigma_interval_uses_normal_quantile():
    # With known standard deviations (absolute_sigma=True) s is not estimated, so the two-sided 95 %
    # interval is p +- z_0.975 se with z_0.975 = 1.959964 (scipy.stats.norm.ppf(0.975); normal table,
    # e.g. M. Abramowitz and I. A. Stegun, Handbook of Mathematical Functions, 1964, table 26.5),
    # not Student t with n - p dof (Bates and Watts 1988, sec. 2.3). Few points make the two differ.
    x = np.linspace(0.0, 1.0, 5)
    sigma = 0.2
    y = 1.0 + 2.0 * x + np.array([0.1, -0.2, 0.15, 0.0, -0.05])
    X = np.column_stack([np.ones_like(x), x]) / sigma
    beta = np.linalg.lstsq(X, y / sigma, rcond=None)[0]
    fr = fit_statistics(X, X @ beta - y / sigma, values=beta, names=("c", "m"), units=("1", "1"),
                        absolute_sigma=True)
    # known-sigma covariance: Cov = (X^T W X)^-1 with W = 1/sigma^2 (Draper and Smith 1998, sec. 9.2)
    se_m = np.sqrt(np.linalg.inv(X.T @ X)[1, 1])
    assert fr.stderr("m") == pytest.approx(se_m, rel=1e-10)
    z = 1.959963984540054
    assert stats.norm.ppf(0.975) == pytest.approx(z, rel=1e-12)
    lo, hi = fr.ci("m")
    assert lo == pytest.approx(beta[1] - z * se_m, rel=1e-10)
    assert hi == pytest.approx(beta[1] + z * se_m, rel=1e-10)
    # the estimated-sigma fit of the same data keeps Student t with n - p = 3 dof (t_0.975,3 = 3.182)
    fr_t = fit_statistics(X, X @ beta - y / sigma, values=beta, names=("c", "m"), units=("1", "1"))
    lo_t, hi_t = fr_t.ci("m")
    assert (hi_t - lo_t) / 2 == pytest.approx(stats.t.ppf(0.975, 3) * fr_t.stderr("m"), rel=1e-10)
