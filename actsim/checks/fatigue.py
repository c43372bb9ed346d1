"""Stress-based fatigue check: rainflow counting, Basquin life, mean-stress corrections, Miner's rule.

Chain: stress history sigma(t) [Pa] at the critical point -> turning points ->
rainflow cycles (range, mean, count) per ASTM E1049-85 (2017) section 5.4.4 ->
each cycle's equivalent fully reversed amplitude sigma_ar by a mean-stress
correction -> cycles to failure N_i from Basquin's law -> Palmgren–Miner damage
D = sum n_i / N_i per pass of the history -> damage at the target number of
passes against the damage limit (1 by default).

This is a high-cycle, stress-life estimate with the scatter and limits of its
material constants. Polymer fatigue depends strongly on loading frequency
(hysteretic self-heating), temperature, humidity, ageing and surface finish,
and Miner's rule ignores load-sequence effects. The result is a modelled
estimate to compare designs, not a qualification: for a device that bears load
on or near a person, test the real part and follow the governing standard.

Compressive mean stress (sigma_m < 0): by default no benefit is credited, i.e.
sigma_m is replaced by 0 for every method (sigma_ar = sigma_a for Goodman,
Gerber and Morrow; sigma_max = sigma_a for Smith–Watson–Topper). This is common
practice, no source, and is conservative; Gerber's parabola would even predict a
harmful compressive mean, which is not observed. ``credit_compressive_mean=True``
applies the Goodman and Morrow formulas with the negative mean (a benefit) and
SWT with the actual sigma_max; Gerber is never credited.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Mapping, Sequence

import numpy as np

from ..errors import ActsimInputError
from ..units import check_range
from .verdict import CheckResult, Limit

__all__ = [
    "turning_points",
    "rainflow_cycles",
    "basquin_life",
    "basquin_amplitude",
    "equivalent_amplitude",
    "MEAN_STRESS_METHODS",
    "miner_damage",
    "FatigueResult",
    "fatigue_life",
]

#: Mean-stress correction methods understood by :func:`equivalent_amplitude`.
MEAN_STRESS_METHODS = ("none", "goodman", "gerber", "morrow", "swt")

_METHOD_LABEL = {
    "none": "no mean-stress correction",
    "goodman": "Goodman",
    "gerber": "Gerber",
    "morrow": "Morrow",
    "swt": "Smith-Watson-Topper",
}


def _finite_array(x, *, field: str, unit: str = "Pa") -> np.ndarray:
    try:
        a = np.asarray(x, dtype=float)
    except (TypeError, ValueError):
        raise ActsimInputError(f"{field}: {x!r} is not a number or array of numbers [{unit}]") from None
    if not np.all(np.isfinite(a)):
        raise ActsimInputError(f"{field}: contains NaN or inf; finite values are required [{unit}]")
    return a


def _scalar(x, *, field: str, unit: str) -> tuple[float, Limit | None]:
    """A float or a Limit -> (value, limit-or-None)."""
    if isinstance(x, Limit):
        if x.unit != unit:
            raise ActsimInputError(f"{field}: limit {x.name} has unit {x.unit}, {unit} required")
        return float(x.value), x
    if isinstance(x, bool) or x is None:
        raise ActsimInputError(f"{field}: {x!r} is not a number [{unit}]")
    try:
        v = float(x)
    except (TypeError, ValueError):
        raise ActsimInputError(f"{field}: {x!r} is not a number [{unit}]") from None
    if not math.isfinite(v):
        raise ActsimInputError(f"{field}: {v!r} is not finite [{unit}]")
    return v, None


def _out(a: np.ndarray):
    return float(a) if a.ndim == 0 else a


# ---------------------------------------------------------------------------
# Cycle counting


def turning_points(history) -> np.ndarray:
    """Reduce a load or stress history to its peaks and valleys (reversals).

    Parameters
    ----------
    history : array_like, shape (n,)
        Samples of the stress (or any load parameter) in time order [Pa].

    Returns
    -------
    numpy.ndarray
        The first point, every point where the direction of change reverses,
        and the last point. Repeated equal samples (plateaus) count once.

    Notes
    -----
    ASTM E1049 counts ranges between successive peaks and valleys; intermediate
    points on a rising or falling stretch do not change the count. The first and
    last samples are kept as the ends of the first and last half cycles, as in
    the standard's examples.

    References
    ----------
    .. [1] ASTM E1049-85 (Reapproved 2017), "Standard Practices for Cycle
       Counting in Fatigue Analysis", ASTM International, 2017, sections 3 and 5.
    """
    h = _finite_array(history, field="history")
    if h.ndim != 1:
        raise ActsimInputError(f"history: shape {h.shape}; a 1-D sequence of values is required [Pa]")
    if h.size == 0:
        raise ActsimInputError("history: empty; at least one value is required [Pa]")
    # drop repeated equal values
    keep = np.ones(h.size, dtype=bool)
    keep[1:] = h[1:] != h[:-1]
    h = h[keep]
    if h.size <= 2:
        return h.copy()
    d = np.sign(np.diff(h))
    rev = np.flatnonzero(d[1:] != d[:-1]) + 1  # indices of interior reversals
    idx = np.concatenate(([0], rev, [h.size - 1]))
    return h[idx]


def rainflow_cycles(history) -> np.ndarray:
    r"""Rainflow cycle count of a stress history (ASTM E1049-85 (2017), 5.4.4).

    Parameters
    ----------
    history : array_like, shape (n,)
        Stress (or load) samples in time order [Pa]. Reduced first to turning
        points with :func:`turning_points`.

    Returns
    -------
    numpy.ndarray, shape (n_cycles, 3)
        One row per counted range, in counting order: ``range`` (peak-to-valley,
        >= 0) [Pa], ``mean`` [Pa] and ``count`` (1.0 for a full cycle, 0.5 for a
        half cycle) [-]. Empty (shape (0, 3)) for a constant history.

    Notes
    -----
    The rules of 5.4.4, with X the range under consideration and Y the previous
    range adjacent to X (S the starting point):

    1. Read the next peak or valley; if out of data, go to step 6.
    2. If there are fewer than three points, go to step 1. Form X and Y from
       the three most recent peaks and valleys not discarded.
    3. If X < Y, go to step 1; if X >= Y, go to step 4.
    4. If Y contains S, go to step 5; otherwise count Y as one cycle, discard
       the peak and valley of Y, and go to step 2.
    5. Count Y as one half cycle, discard the first point of Y, move S to the
       second point of Y, and go to step 2.
    6. Count each range not yet counted as one half cycle.

    Two properties follow and are tested: the counts add up to
    (n_turning_points - 1) / 2, and 2 * sum(range * count) equals the total
    variation sum |diff(history)|.

    .. math::

        \Delta\sigma = |\sigma_\mathrm{peak} - \sigma_\mathrm{valley}|, \qquad
        \sigma_m = (\sigma_\mathrm{peak} + \sigma_\mathrm{valley}) / 2

    References
    ----------
    .. [1] ASTM E1049-85 (Reapproved 2017), "Standard Practices for Cycle
       Counting in Fatigue Analysis", ASTM International, 2017, section 5.4.4.
    .. [2] M. Matsuishi and T. Endo, "Fatigue of metals subjected to varying
       stress", Japan Society of Mechanical Engineers, Fukuoka, 1968.
    """
    tp = turning_points(history).tolist()
    out: list[tuple[float, float, float]] = []
    # Points not yet discarded; stack[0] is always the starting point S.
    stack: list[float] = []
    for point in tp:
        stack.append(point)
        while len(stack) >= 3:
            x = abs(stack[-1] - stack[-2])
            y = abs(stack[-2] - stack[-3])
            if x < y:
                break
            a, b = stack[-3], stack[-2]
            if len(stack) == 3:  # Y contains S, the first point on the stack
                out.append((y, 0.5 * (a + b), 0.5))
                stack.pop(0)
            else:
                out.append((y, 0.5 * (a + b), 1.0))
                last = stack.pop()
                stack.pop()
                stack.pop()
                stack.append(last)
    for a, b in zip(stack[:-1], stack[1:]):
        out.append((abs(b - a), 0.5 * (a + b), 0.5))
    return np.asarray(out, dtype=float).reshape(-1, 3)


# ---------------------------------------------------------------------------
# Basquin


def _check_basquin_constants(sf, b):
    check_range(sf, field="fatigue_strength_coefficient", unit="Pa", lo=0.0, lo_open=True)
    check_range(b, field="fatigue_strength_exponent", unit="1", hi=0.0, hi_open=True)


def basquin_life(*, stress_amplitude, fatigue_strength_coefficient, fatigue_strength_exponent):
    r"""Cycles to failure from Basquin's law for fully reversed stress (vectorised).

    Parameters
    ----------
    stress_amplitude : float or array_like
        Fully reversed stress amplitude :math:`\sigma_a` (or an equivalent
        amplitude :math:`\sigma_{ar}`), >= 0 [Pa]. Zero gives infinite life.
    fatigue_strength_coefficient : float
        :math:`\sigma_f'`, > 0 [Pa].
    fatigue_strength_exponent : float
        :math:`b`, < 0 [-].

    Returns
    -------
    float or numpy.ndarray
        Cycles to failure :math:`N_f` [-] (may be below 1 for amplitudes above
        :math:`\sigma_f'/2^b`, which means static failure, not a life).

    Notes
    -----
    .. math::

        \sigma_a = \sigma_f' (2 N_f)^b \quad\Longleftrightarrow\quad
        N_f = \tfrac12 \left(\sigma_a / \sigma_f'\right)^{1/b}

    The law is fitted over a limited life range (typically 1e3 to 1e7 cycles);
    outside it the result is an extrapolation.

    References
    ----------
    .. [1] O. H. Basquin, "The exponential law of endurance tests", Proc. ASTM
       10, 625–630, 1910.
    .. [2] N. E. Dowling, "Mechanical Behavior of Materials", 4th ed., Pearson,
       2013, ch. 9 (stress-based approach to fatigue).
    """
    sf = float(fatigue_strength_coefficient)
    b = float(fatigue_strength_exponent)
    _check_basquin_constants(sf, b)
    sa = _finite_array(stress_amplitude, field="stress_amplitude")
    if np.any(sa < 0):
        raise ActsimInputError(f"stress_amplitude: {float(sa.min()):g} is outside the allowed range (>= 0 Pa)")
    with np.errstate(divide="ignore", over="ignore"):
        n = 0.5 * (sa / sf) ** (1.0 / b)
    return _out(np.where(sa == 0, np.inf, n))


def basquin_amplitude(*, cycles_to_failure, fatigue_strength_coefficient, fatigue_strength_exponent):
    r"""Fully reversed stress amplitude for a given life from Basquin's law (inverse of :func:`basquin_life`).

    Parameters
    ----------
    cycles_to_failure : float or array_like
        :math:`N_f`, > 0 [-].
    fatigue_strength_coefficient : float
        :math:`\sigma_f'`, > 0 [Pa].
    fatigue_strength_exponent : float
        :math:`b`, < 0 [-].

    Returns
    -------
    float or numpy.ndarray
        :math:`\sigma_a` [Pa].

    Notes
    -----
    .. math::

        \sigma_a = \sigma_f' (2 N_f)^b

    References
    ----------
    .. [1] O. H. Basquin, "The exponential law of endurance tests", Proc. ASTM
       10, 625–630, 1910.
    """
    sf = float(fatigue_strength_coefficient)
    b = float(fatigue_strength_exponent)
    _check_basquin_constants(sf, b)
    n = _finite_array(cycles_to_failure, field="cycles_to_failure", unit="1")
    if np.any(n <= 0):
        raise ActsimInputError(f"cycles_to_failure: {float(n.min()):g} is outside the allowed range (> 0)")
    return _out(sf * (2.0 * n) ** b)


# ---------------------------------------------------------------------------
# Mean stress


def equivalent_amplitude(
    *,
    stress_amplitude,
    mean_stress,
    method: str,
    ultimate_strength=None,
    fatigue_strength_coefficient=None,
    credit_compressive_mean: bool = False,
):
    r"""Equivalent fully reversed amplitude :math:`\sigma_{ar}` of a cycle with mean stress (vectorised).

    Parameters
    ----------
    stress_amplitude : float or array_like
        :math:`\sigma_a`, >= 0 [Pa].
    mean_stress : float or array_like
        :math:`\sigma_m` [Pa], broadcast against ``stress_amplitude``.
    method : str
        ``"goodman"``, ``"gerber"``, ``"morrow"``, ``"swt"`` or ``"none"``.
    ultimate_strength : float, optional
        :math:`\sigma_u` > 0, required for Goodman and Gerber [Pa].
    fatigue_strength_coefficient : float, optional
        :math:`\sigma_f'` > 0, required for Morrow [Pa].
    credit_compressive_mean : bool, optional
        False (default): a compressive mean is replaced by zero (no benefit).
        True: Goodman, Morrow and SWT use the negative mean; Gerber never does.

    Returns
    -------
    float or numpy.ndarray
        :math:`\sigma_{ar}` [Pa].

    Notes
    -----
    .. math::

        \text{Goodman:}\quad \frac{\sigma_a}{\sigma_{ar}} + \frac{\sigma_m}{\sigma_u} = 1 \qquad
        \text{Gerber:}\quad \frac{\sigma_a}{\sigma_{ar}} + \left(\frac{\sigma_m}{\sigma_u}\right)^2 = 1

        \text{Morrow:}\quad \frac{\sigma_a}{\sigma_{ar}} + \frac{\sigma_m}{\sigma_f'} = 1 \qquad
        \text{SWT:}\quad \sigma_{ar} = \sqrt{\sigma_\max \sigma_a},\ \ \sigma_\max = \sigma_m + \sigma_a > 0

    A mean stress at or beyond :math:`\sigma_u` (Goodman, Gerber) or
    :math:`\sigma_f'` (Morrow) has no finite equivalent amplitude and raises
    :class:`~actsim.errors.ActsimInputError`; so does SWT with
    :math:`\sigma_\max \le 0` and a nonzero amplitude. Morrow is written with
    :math:`\sigma_f'`, the form Dowling discusses; the true fracture strength
    may be used instead by passing it as ``fatigue_strength_coefficient``.

    References
    ----------
    .. [1] N. E. Dowling, "Mechanical Behavior of Materials", 4th ed., Pearson,
       2013, ch. 9 (mean stress effects; equivalent fully reversed
       amplitude).
    .. [2] J. D. Morrow, "Fatigue properties of metals", in Fatigue Design
       Handbook, SAE, 1968.
    .. [3] K. N. Smith, P. Watson and T. H. Topper, "A stress-strain function
       for the fatigue of metals", Journal of Materials 5(4), 767–778, 1970.
    """
    if method not in MEAN_STRESS_METHODS:
        raise ActsimInputError(f"method: {method!r} is not one of {', '.join(MEAN_STRESS_METHODS)}")
    sa = _finite_array(stress_amplitude, field="stress_amplitude")
    sm = _finite_array(mean_stress, field="mean_stress")
    try:
        sa, sm = np.broadcast_arrays(sa, sm)
    except ValueError:
        raise ActsimInputError("equivalent_amplitude: stress_amplitude and mean_stress do not broadcast together") from None
    if np.any(sa < 0):
        raise ActsimInputError(f"stress_amplitude: {float(sa.min()):g} is outside the allowed range (>= 0 Pa)")
    credit = bool(credit_compressive_mean) and method != "gerber"
    sm_eff = sm if credit else np.maximum(sm, 0.0)

    if method == "none":
        return _out(sa.astype(float, copy=True))
    if method in ("goodman", "gerber"):
        if ultimate_strength is None:
            raise ActsimInputError(f"ultimate_strength: required for the {_METHOD_LABEL[method]} correction [Pa]")
        su = float(ultimate_strength)
        check_range(su, field="ultimate_strength", unit="Pa", lo=0.0, lo_open=True)
        if np.any(sm >= su):
            raise ActsimInputError(
                f"mean_stress: {float(sm.max()):g} Pa is at or beyond the ultimate strength {su:g} Pa; "
                f"{_METHOD_LABEL[method]} needs mean_stress < ultimate_strength (static failure)"
            )
        r = sm_eff / su
        denom = 1.0 - r if method == "goodman" else 1.0 - r * r
        return _out(sa / denom)
    if method == "morrow":
        if fatigue_strength_coefficient is None:
            raise ActsimInputError("fatigue_strength_coefficient: required for the Morrow correction [Pa]")
        sf = float(fatigue_strength_coefficient)
        check_range(sf, field="fatigue_strength_coefficient", unit="Pa", lo=0.0, lo_open=True)
        if np.any(sm >= sf):
            raise ActsimInputError(
                f"mean_stress: {float(sm.max()):g} Pa is at or beyond fatigue_strength_coefficient {sf:g} Pa; "
                "Morrow needs mean_stress < sigma_f'"
            )
        return _out(sa / (1.0 - sm_eff / sf))
    # SWT
    smax = sm_eff + sa
    bad = (sa > 0) & (smax <= 0)
    if np.any(bad):
        raise ActsimInputError(
            f"mean_stress: sigma_max = mean + amplitude = {float(smax[bad].min()):g} Pa; "
            "Smith-Watson-Topper needs sigma_max > 0 Pa"
        )
    return _out(np.sqrt(np.maximum(smax, 0.0) * sa))


# ---------------------------------------------------------------------------
# Miner and the check


def miner_damage(*, counts, cycles_to_failure) -> float:
    r"""Palmgren–Miner damage sum.

    Parameters
    ----------
    counts : array_like
        Applied cycles :math:`n_i` of each kind, >= 0 [-].
    cycles_to_failure : array_like
        Cycles to failure :math:`N_i` at that kind's amplitude, > 0 (inf allowed) [-].

    Returns
    -------
    float
        :math:`D` [-]; failure is predicted at :math:`D = 1`.

    Notes
    -----
    .. math::

        D = \sum_i \frac{n_i}{N_i}

    References
    ----------
    .. [1] M. A. Miner, "Cumulative damage in fatigue", Journal of Applied
       Mechanics 12, A159–A164, 1945.
    .. [2] A. Palmgren, "Die Lebensdauer von Kugellagern", Zeitschrift des VDI
       68, 339–341, 1924.
    """
    n = _finite_array(counts, field="counts", unit="1")
    nf = np.asarray(cycles_to_failure, dtype=float)
    if n.shape != nf.shape:
        raise ActsimInputError(f"cycles_to_failure: shape {nf.shape} differs from counts {n.shape}")
    if np.any(n < 0):
        raise ActsimInputError(f"counts: {float(n.min()):g} is outside the allowed range (>= 0)")
    if np.any(np.isnan(nf)) or np.any(nf <= 0):
        raise ActsimInputError("cycles_to_failure: all values must be > 0 (inf allowed)")
    return float(np.sum(n / nf))


@dataclass(frozen=True)
class FatigueResult:
    """Outcome of :func:`fatigue_life`.

    Attributes
    ----------
    cycles : numpy.ndarray, shape (n, 3)
        Counted cycles of one pass of the history: range [Pa], mean [Pa], count [-].
    equivalent_amplitude : dict[str, numpy.ndarray]
        Method -> sigma_ar per cycle [Pa].
    cycles_to_failure : dict[str, numpy.ndarray]
        Method -> N_i per cycle [-].
    damage_per_pass : dict[str, float]
        Method -> Miner damage of one pass of the history [-].
    passes_to_failure : dict[str, float]
        Method -> damage_limit / damage_per_pass: passes until the damage limit [-].
    governing_method : str
        The most conservative method (largest damage per pass).
    checks : list of CheckResult
        One per method, in the order given; the governing one says so in its note.
    """

    cycles: np.ndarray
    equivalent_amplitude: Mapping[str, np.ndarray]
    cycles_to_failure: Mapping[str, np.ndarray]
    damage_per_pass: Mapping[str, float]
    passes_to_failure: Mapping[str, float]
    governing_method: str
    checks: list

    @property
    def governing(self) -> CheckResult:
        """The check result of the most conservative method."""
        return self.checks[list(self.damage_per_pass).index(self.governing_method)]


def _cycles_array(cycles) -> np.ndarray:
    c = _finite_array(cycles, field="cycles")
    if c.ndim != 2 or c.shape[1] != 3:
        raise ActsimInputError(f"cycles: shape {c.shape}; rows of (range [Pa], mean [Pa], count [-]) required")
    if np.any(c[:, 0] < 0):
        raise ActsimInputError(f"cycles: range {float(c[:, 0].min()):g} is outside the allowed range (>= 0 Pa)")
    if np.any(c[:, 2] < 0):
        raise ActsimInputError(f"cycles: count {float(c[:, 2].min()):g} is outside the allowed range (>= 0)")
    return c


def fatigue_life(
    history=None,
    *,
    cycles=None,
    fatigue_strength_coefficient,
    fatigue_strength_exponent,
    ultimate_strength=None,
    methods: Sequence[str] = ("goodman", "gerber", "morrow", "swt"),
    target_passes: float,
    damage_limit: float = 1.0,
    credit_compressive_mean: bool = False,
    source: str | None = None,
    validity: str | None = None,
) -> FatigueResult:
    r"""Fatigue damage and life of a stress history by several mean-stress methods, with a verdict.

    Parameters
    ----------
    history : array_like, shape (n,), optional
        Stress at the critical point over one pass of the duty (e.g. one
        actuation cycle, or one day of use) [Pa]. Counted with
        :func:`rainflow_cycles`. Give either ``history`` or ``cycles``.
    cycles : array_like, shape (n, 3), optional
        Already counted cycles of one pass: (range [Pa], mean [Pa], count [-]).
    fatigue_strength_coefficient : float or Limit
        Basquin :math:`\sigma_f'` > 0 [Pa].
    fatigue_strength_exponent : float or Limit
        Basquin :math:`b` < 0 [-].
    ultimate_strength : float or Limit, optional
        :math:`\sigma_u` [Pa]; required for Goodman and Gerber.
    methods : sequence of str, optional
        Any of :data:`MEAN_STRESS_METHODS`.
    target_passes : float
        Planned number of passes of the history over the service life, > 0 [-].
    damage_limit : float, optional
        Miner sum at which failure is predicted, > 0 [-]. 1 is Miner's rule; a
        lower value (common practice, no source) allows for sequence effects.
    credit_compressive_mean : bool, optional
        See :func:`equivalent_amplitude`; default False (no benefit credited).
    source, validity : str, optional
        Text for the verdict; by default built from the Limit objects passed.

    Returns
    -------
    FatigueResult

    Notes
    -----
    Per method :math:`m`, with cycle amplitude :math:`\sigma_{a,i} = \Delta\sigma_i/2`:

    .. math::

        N_{i,m} = \tfrac12\left(\sigma_{ar,i,m}/\sigma_f'\right)^{1/b}, \qquad
        D_m = \text{target\_passes} \sum_i \frac{n_i}{N_{i,m}}

    and the check is :math:`D_m \le D_\mathrm{limit}`, margin
    :math:`D_\mathrm{limit}/D_m` (the factor on life). The governing method is
    the one with the largest :math:`D_m`. If a Limit with a ``cycles`` range of
    validity is given for :math:`\sigma_f'` or :math:`b`, cycles whose
    :math:`N_i` falls outside it are reported as extrapolated. A cycle whose
    peak reaches :math:`\sigma_u` is static failure; it fails the check.

    References
    ----------
    .. [1] N. E. Dowling, "Mechanical Behavior of Materials", 4th ed., Pearson,
       2013, ch. 9 (stress-based fatigue, mean stress, Palmgren–Miner rule).
    .. [2] ASTM E1049-85 (Reapproved 2017), "Standard Practices for Cycle
       Counting in Fatigue Analysis", ASTM International, 2017.
    .. [3] M. A. Miner, "Cumulative damage in fatigue", Journal of Applied
       Mechanics 12, A159–A164, 1945.
    """
    if (history is None) == (cycles is None):
        raise ActsimInputError("fatigue_life: give exactly one of history (stress samples [Pa]) or cycles (range, mean, count)")
    c = rainflow_cycles(history) if cycles is None else _cycles_array(cycles)
    sf, sf_lim = _scalar(fatigue_strength_coefficient, field="fatigue_strength_coefficient", unit="Pa")
    b, b_lim = _scalar(fatigue_strength_exponent, field="fatigue_strength_exponent", unit="1")
    _check_basquin_constants(sf, b)
    su, su_lim = (None, None) if ultimate_strength is None else _scalar(ultimate_strength, field="ultimate_strength", unit="Pa")
    check_range(float(target_passes), field="target_passes", unit="1", lo=0.0, lo_open=True)
    check_range(float(damage_limit), field="damage_limit", unit="1", lo=0.0, lo_open=True)
    methods = list(methods)
    if not methods:
        raise ActsimInputError(f"methods: empty; choose from {', '.join(MEAN_STRESS_METHODS)}")
    for m in methods:
        if m not in MEAN_STRESS_METHODS:
            raise ActsimInputError(f"methods: {m!r} is not one of {', '.join(MEAN_STRESS_METHODS)}")
    if len(set(methods)) != len(methods):
        raise ActsimInputError(f"methods: {methods} lists a method twice")

    lims = [x for x in (sf_lim, b_lim, su_lim) if x is not None]
    if source is None:
        srcs = list(dict.fromkeys(x.source for x in lims))
        source = "; ".join(srcs) if srcs else "fatigue constants given by the caller"
    if validity is None:
        vals = list(dict.fromkeys(x.validity for x in lims if x.validity))
        validity = "; ".join(vals)
    n_range = None
    for lim in (sf_lim, b_lim):
        if lim is not None and "cycles" in lim.valid_range:
            n_range = lim.valid_range["cycles"]
            break

    amp = 0.5 * c[:, 0]
    mean = c[:, 1]
    count = c[:, 2]
    static = su is not None and c.shape[0] > 0 and bool(np.any(mean + amp >= su))

    sar, nf, dpp, ptf = {}, {}, {}, {}
    for m in methods:
        a = np.atleast_1d(
            equivalent_amplitude(
                stress_amplitude=amp,
                mean_stress=mean,
                method=m,
                ultimate_strength=su,
                fatigue_strength_coefficient=sf,
                credit_compressive_mean=credit_compressive_mean,
            )
        )
        n_i = np.atleast_1d(basquin_life(stress_amplitude=a, fatigue_strength_coefficient=sf, fatigue_strength_exponent=b))
        d = miner_damage(counts=count, cycles_to_failure=n_i) if c.shape[0] else 0.0
        sar[m], nf[m], dpp[m] = a, n_i, d
        ptf[m] = math.inf if d == 0 else float(damage_limit) / d
    governing = max(methods, key=lambda m: dpp[m])

    checks = []
    for m in methods:
        notes = [f"{_METHOD_LABEL[m]} mean-stress correction with Basquin life and Palmgren-Miner sum"]
        if m == governing and len(methods) > 1:
            notes.append("most conservative of the methods evaluated")
        notes.append(
            "compressive mean credited" if (credit_compressive_mean and m != "gerber") else "no benefit credited for compressive mean"
        )
        if n_range is not None and c.shape[0]:
            finite = np.isfinite(nf[m])
            outside = finite & ((nf[m] < n_range[0]) | (nf[m] > n_range[1]))
            if np.any(outside):
                notes.append(
                    f"{int(outside.sum())} of {c.shape[0]} counted ranges have N_i outside the fitted range "
                    f"{n_range[0]:g}..{n_range[1]:g} cycles (extrapolated)"
                )
        if static:
            notes.append("peak stress of a cycle reaches the ultimate strength: static failure, fatigue estimate not meaningful")
        notes.append(f"{target_passes:g} passes planned; modelled {ptf[m]:.4g} passes to the damage limit")
        r = CheckResult.upper_bound(
            check=f"fatigue damage ({_METHOD_LABEL[m]})",
            value=dpp[m] * float(target_passes),
            limit=float(damage_limit),
            unit="1",
            source=source,
            validity=validity,
            note="; ".join(notes),
            margin_kind="ratio",
        )
        if static:  # static failure: the damage is unbounded whatever the method
            r = replace(r, value=math.inf, margin=0.0, passed=False)
        checks.append(r)

    return FatigueResult(
        cycles=c,
        equivalent_amplitude=sar,
        cycles_to_failure=nf,
        damage_per_pass=dpp,
        passes_to_failure=ptf,
        governing_method=governing,
        checks=checks,
    )
