"""Tensile test evaluation: modulus, toe compensation, offset yield strength, ultimate strength.

Inputs are engineering strain [1] (a fraction, not percent) and engineering stress [Pa].
The methods follow the usual test standards; the standards' own specimen, speed and
conditioning requirements are the user's job, and numbers from this module are only as good
as the test behind them.

References
----------
.. [1] ISO 527-1:2019, *Plastics — Determination of tensile properties — Part 1: General
   principles* (chord modulus between 0.05 % and 0.25 % strain).
.. [2] ASTM E111-17, *Standard Test Method for Young's Modulus, Tangent Modulus, and Chord
   Modulus* (least-squares modulus over a linear range).
.. [3] ASTM D638-14, *Standard Test Method for Tensile Properties of Plastics*, Appendix X1
   (toe compensation).
.. [4] ASTM E8/E8M-22, *Standard Test Methods for Tension Testing of Metallic Materials*
   (offset method for yield strength, 0.2 % offset).
.. [5] I. M. Ward and J. Sweeney, *Mechanical Properties of Solid Polymers*, 3rd ed., Wiley, 2013
   (Eyring law of yield against strain rate and temperature).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import ActsimInputError
from ..io import save_figure
from ..units import check_range
from .fitstats import FitResult, fit_statistics
from .readers import XYData, as_xy

__all__ = [
    "chord_modulus",
    "regression_modulus",
    "toe_compensation",
    "offset_yield_strength",
    "ultimate_strength",
    "fit_tensile",
    "plot_tensile",
    "TensileResult",
    "ToeCompensation",
    "check_strain_is_fraction",
    "eyring_yield_stress",
    "fit_eyring",
    "EyringFit",
    "fit_tensile_rates",
    "RateSeries",
    "plot_tensile_rates",
]

#: A strain column whose largest value exceeds this is taken to be percent written where a
#: fraction was expected. Common practice, no source (150 % strain as a fraction would be 1.5).
PERCENT_SUSPECT = 1.5


def _arrays(strain, stress):
    e = np.asarray(strain, dtype=float).ravel()
    s = np.asarray(stress, dtype=float).ravel()
    if e.size != s.size:
        raise ActsimInputError(f"strain/stress: {e.size} strain values but {s.size} stress values")
    if e.size < 2:
        raise ActsimInputError(f"strain/stress: {e.size} points, at least 2 are needed")
    if not (np.all(np.isfinite(e)) and np.all(np.isfinite(s))):
        raise ActsimInputError("strain/stress: contain NaN or inf; all values must be finite")
    return e, s


def _loading_branch(e, s):
    """Points up to the maximum stress, sorted by strain (stable)."""
    iu = int(np.argmax(s))
    eb, sb = e[: iu + 1], s[: iu + 1]
    order = np.argsort(eb, kind="stable")
    return eb[order], sb[order]


def check_strain_is_fraction(strain, *, unit="", allow_large_strain=False, field="strain"):
    """Refuse a strain column that looks like percent read as a fraction.

    Parameters
    ----------
    strain : array_like
        Strain values as they will be used [1].
    unit : str
        The unit the values came with ("" for none, "%" or "percent" if converted from percent).
    allow_large_strain : bool
        Set True for a material that really stretches beyond 150 % with strain given as fraction.
    field : str
        Name used in the message.

    Raises
    ------
    ActsimInputError
        If max(strain) > 1.5 and the unit does not say percent.

    Notes
    -----
    Common practice, no source: a tensile strain above 150 % is rare outside elastomers, while a
    percent column read as a fraction is a frequent mistake. The test is

    .. math::

        \\max_i \\varepsilon_i > 1.5 \\;\\wedge\\; \\text{unit} \\ne \\% \\Rightarrow \\text{error}

    References
    ----------
    .. [1] ISO 527-1:2019, *Plastics — Determination of tensile properties — Part 1* (strain as
       a dimensionless ratio or in percent).
    """
    e = np.asarray(strain, dtype=float)
    said_percent = str(unit).strip().lower() in ("%", "percent", "pct")
    if not said_percent and not allow_large_strain and e.size and float(np.max(e)) > PERCENT_SUSPECT:
        raise ActsimInputError(
            f"{field}: maximum {float(np.max(e)):g} read as a fraction (unit {unit or '1'}) looks like percent; "
            f"write 'strain [%]' in the header (or strain_unit=\"%\"), or pass allow_large_strain=True "
            f"if the strain really exceeds {PERCENT_SUSPECT:g}"
        )


def chord_modulus(strain, stress, *, e1=0.0005, e2=0.0025):
    """Chord modulus between two strains (ISO 527-1).

    Parameters
    ----------
    strain : array_like
        Engineering strain [1].
    stress : array_like
        Engineering stress [Pa].
    e1, e2 : float
        Strains of the chord; ISO 527-1 uses 0.0005 and 0.0025 [1].

    Returns
    -------
    float
        Chord modulus [Pa].

    Notes
    -----
    The stresses at ``e1`` and ``e2`` are interpolated linearly on the loading branch
    (points up to the maximum stress, sorted by strain).

    .. math::

        E_t = \\frac{\\sigma(\\varepsilon_2) - \\sigma(\\varepsilon_1)}{\\varepsilon_2 - \\varepsilon_1}

    References
    ----------
    .. [1] ISO 527-1:2019, *Plastics — Determination of tensile properties — Part 1: General
       principles*, International Organization for Standardization, 2019.
    """
    e, s = _arrays(strain, stress)
    check_range(e1, field="e1", unit="1", lo=0.0)
    check_range(e2, field="e2", unit="1", lo=e1, lo_open=True)
    eb, sb = _loading_branch(e, s)
    if eb[0] > e1 or eb[-1] < e2:
        raise ActsimInputError(
            f"strain: data on the loading branch span {eb[0]:g} to {eb[-1]:g}, which does not cover the chord "
            f"strains {e1:g} to {e2:g}"
        )
    s1, s2 = np.interp([e1, e2], eb, sb)
    return float((s2 - s1) / (e2 - e1))


def regression_modulus(strain, stress, *, strain_range, min_points=5, confidence=0.95) -> FitResult:
    """Least-squares modulus over a chosen linear range (ASTM E111).

    Parameters
    ----------
    strain : array_like
        Engineering strain [1].
    stress : array_like
        Engineering stress [Pa].
    strain_range : (float, float)
        Strain interval of the linear part, inclusive [1].
    min_points : int
        Fewest points accepted in the range (at least 3, for a standard error).
    confidence : float
        Confidence level of the intervals [1].

    Returns
    -------
    FitResult
        Parameters ``modulus`` [Pa] and ``intercept`` [Pa] of
        :math:`\\sigma = E\\varepsilon + b`, with standard errors and confidence intervals from
        :func:`actsim.calibrate.fitstats.fit_statistics` (identical to the ordinary
        least-squares formulas for this linear model).

    Notes
    -----
    .. math::

        E = \\frac{\\sum (\\varepsilon_i - \\bar\\varepsilon)(\\sigma_i - \\bar\\sigma)}
                  {\\sum (\\varepsilon_i - \\bar\\varepsilon)^2}, \\qquad
        \\mathrm{se}(E) = \\frac{s}{\\sqrt{\\sum (\\varepsilon_i - \\bar\\varepsilon)^2}}

    References
    ----------
    .. [1] ASTM E111-17, *Standard Test Method for Young's Modulus, Tangent Modulus, and Chord
       Modulus*, ASTM International, 2017.
    """
    e, s = _arrays(strain, stress)
    try:
        lo, hi = (float(v) for v in strain_range)
    except (TypeError, ValueError):
        raise ActsimInputError(f"strain_range: {strain_range!r} must be two numbers (low, high) [1]") from None
    check_range(hi, field="strain_range high", unit="1", lo=lo, lo_open=True)
    min_points = max(int(min_points), 3)
    sel = (e >= lo) & (e <= hi)
    n = int(np.count_nonzero(sel))
    if n < min_points:
        raise ActsimInputError(
            f"strain_range: ({lo:g}, {hi:g}) holds {n} points, at least {min_points} are needed for the "
            "linear fit; widen the range or record more points"
        )
    x, y = e[sel], s[sel]
    if np.ptp(x) == 0:
        raise ActsimInputError(f"strain_range: all {n} points in ({lo:g}, {hi:g}) have the same strain")
    A = np.column_stack([x, np.ones_like(x)])
    coef, *_ = np.linalg.lstsq(A, y, rcond=None)
    resid = A @ coef - y
    return fit_statistics(A, resid, values=coef, names=("modulus", "intercept"), units=("Pa", "Pa"),
                          confidence=confidence, message="linear least squares (exact)", residual_unit="Pa")


@dataclass
class ToeCompensation:
    """Result of :func:`toe_compensation`.

    Attributes
    ----------
    shift : float
        Strain at which the linear region's regression line crosses zero stress; the new
        strain origin [1].
    strain : numpy.ndarray
        Compensated strain of the compensated curve [1].
    stress : numpy.ndarray
        Stress of the compensated curve [Pa].
    fit : FitResult
        Regression line over the linear region (``modulus``, ``intercept``).
    strain_range : tuple of float
        Linear region used, in the original strain [1].
    """

    shift: float
    strain: np.ndarray
    stress: np.ndarray
    fit: FitResult
    strain_range: tuple


def toe_compensation(strain, stress, *, strain_range=None, stress_fraction=(0.1, 0.4), min_points=5):
    """Move the strain origin to where the linear region, extended, meets zero stress.

    A slack or seating start ("toe") makes the curve begin flat. In the style of ASTM D638
    Appendix X1 the linear region's regression line is extended down to zero stress; that
    strain becomes the corrected zero. The compensated curve runs along that line from the new
    origin up to the start of the linear region and follows the data from there on.

    Parameters
    ----------
    strain : array_like
        Engineering strain as measured [1].
    stress : array_like
        Engineering stress [Pa].
    strain_range : (float, float), optional
        Linear region in measured strain [1]. If omitted, the loading-branch points whose
        stress lies between ``stress_fraction`` of the maximum stress are used.
    stress_fraction : (float, float)
        Fractions of the maximum stress bounding the automatic linear region [1]. Default
        (0.1, 0.4), common practice, no source; check it on the plot.
    min_points : int
        Fewest points in the linear region.

    Returns
    -------
    ToeCompensation

    Notes
    -----
    With the regression line :math:`\\sigma = E\\varepsilon + b` over the linear region,

    .. math::

        \\varepsilon_0 = -b / E, \\qquad \\varepsilon_{\\text{corr}} = \\varepsilon - \\varepsilon_0 .

    Points below the start of the linear region are replaced by the straight line from
    :math:`(\\varepsilon_0, 0)`, as in the standard's figure; the toe itself does not enter any
    property computed afterwards.

    References
    ----------
    .. [1] ASTM D638-14, *Standard Test Method for Tensile Properties of Plastics*, Appendix X1
       "Toe compensation", ASTM International, 2014.
    """
    e, s = _arrays(strain, stress)
    eb, sb = _loading_branch(e, s)
    if strain_range is None:
        f_lo, f_hi = stress_fraction
        smax = float(np.max(s))
        if smax <= 0:
            raise ActsimInputError(f"stress: maximum {smax:g} Pa is not positive; no tensile loading in the data")
        inside = np.flatnonzero((sb >= f_lo * smax) & (sb <= f_hi * smax))
        if inside.size < 2:
            raise ActsimInputError(
                f"stress_fraction: {f_lo:g}..{f_hi:g} of the maximum stress holds {inside.size} points; "
                "give strain_range explicitly"
            )
        strain_range = (float(eb[inside[0]]), float(eb[inside[-1]]))
    fit = regression_modulus(e, s, strain_range=strain_range, min_points=min_points)
    E, b = fit.value("modulus"), fit.value("intercept")
    if E <= 0:
        raise ActsimInputError(f"strain_range: the slope in {strain_range} is {E:g} Pa, not positive; "
                               "choose the rising linear part of the curve")
    e0 = -b / E
    lo = float(strain_range[0])
    keep = e >= lo
    e_c = np.concatenate([[0.0], e[keep] - e0])
    s_c = np.concatenate([[0.0], s[keep]])
    return ToeCompensation(shift=float(e0), strain=e_c, stress=s_c, fit=fit,
                           strain_range=(float(strain_range[0]), float(strain_range[1])))


def offset_yield_strength(strain, stress, *, modulus, offset=0.002):
    """Offset yield strength: where the curve meets the line :math:`\\sigma = E(\\varepsilon - \\varepsilon_\\text{off})`.

    Parameters
    ----------
    strain : array_like
        Engineering strain, origin already corrected if needed [1].
    stress : array_like
        Engineering stress [Pa].
    modulus : float
        Modulus of the offset line [Pa].
    offset : float
        Strain offset; 0.002 is the common 0.2 % offset [1].

    Returns
    -------
    (float, float)
        Yield strength [Pa] and the strain at it [1].

    Notes
    -----
    The first sign change of :math:`g_i = \\sigma_i - E(\\varepsilon_i - \\varepsilon_\\text{off})`
    from positive to non-positive, in data order, brackets the intersection; it is found by
    linear interpolation between the two points:

    .. math::

        t = \\frac{g_i}{g_i - g_{i+1}}, \\qquad \\sigma_y = \\sigma_i + t(\\sigma_{i+1} - \\sigma_i)

    References
    ----------
    .. [1] ASTM E8/E8M-22, *Standard Test Methods for Tension Testing of Metallic Materials*,
       ASTM International, 2022 (offset method).
    """
    e, s = _arrays(strain, stress)
    check_range(modulus, field="modulus", unit="Pa", lo=0.0, lo_open=True)
    check_range(offset, field="offset", unit="1", lo=0.0)
    g = s - modulus * (e - offset)
    idx = np.flatnonzero((g[:-1] > 0) & (g[1:] <= 0))
    if idx.size == 0:
        raise ActsimInputError(
            f"offset: the curve never meets the {100 * offset:g} % offset line (E = {modulus:g} Pa) within the data "
            f"(strain up to {float(np.max(e)):g}); no offset yield strength"
        )
    i = int(idx[0])
    t = g[i] / (g[i] - g[i + 1])
    return float(s[i] + t * (s[i + 1] - s[i])), float(e[i] + t * (e[i + 1] - e[i]))


def ultimate_strength(strain, stress):
    """Largest engineering stress and the strain where it occurs.

    Parameters
    ----------
    strain : array_like
        Engineering strain [1].
    stress : array_like
        Engineering stress [Pa].

    Returns
    -------
    (float, float)
        Ultimate tensile strength [Pa] and strain at it [1] (the first point if several tie).

    Notes
    -----
    .. math::

        \\sigma_M = \\max_i \\sigma_i

    References
    ----------
    .. [1] ISO 527-1:2019, *Plastics — Determination of tensile properties — Part 1: General
       principles* (tensile strength sigma_M, strain at tensile strength epsilon_M).
    """
    e, s = _arrays(strain, stress)
    i = int(np.argmax(s))
    return float(s[i]), float(e[i])


@dataclass
class TensileResult:
    """All tensile properties from :func:`fit_tensile` (SI).

    Attributes
    ----------
    chord_modulus : float or None
        ISO 527-1 chord modulus [Pa]; None if the data do not reach ``e2``.
    regression : FitResult
        Least-squares line over ``linear_range`` (``modulus``, ``intercept``) [Pa].
    modulus : float
        The modulus used for the offset line: the regression modulus [Pa].
    linear_range : tuple of float
        Strain range of the regression, in (compensated) strain [1].
    toe_shift : float
        Strain removed by toe compensation, 0 if none [1].
    yield_strength, yield_strain : float or None
        Offset yield strength [Pa] and strain [1]; None if the curve never meets the line.
    offset : float
        Offset used [1].
    ultimate_strength, strain_at_ultimate : float
        Maximum stress [Pa] and its strain [1].
    strain, stress : numpy.ndarray
        The (compensated) curve [1], [Pa].
    source : str
        File name or "arrays".
    synthetic : bool
        True if the file says its data are synthetic.
    warnings : list of str
        Notes a user should read.
    """

    chord_modulus: float | None
    regression: FitResult
    modulus: float
    linear_range: tuple
    toe_shift: float
    yield_strength: float | None
    yield_strain: float | None
    offset: float
    ultimate_strength: float
    strain_at_ultimate: float
    strain: np.ndarray
    stress: np.ndarray
    source: str = "arrays"
    synthetic: bool = False
    warnings: list = field(default_factory=list)

    def to_dict(self) -> dict:
        """Scalars and the regression statistics as plain Python types (SI)."""
        return {
            "chord_modulus_Pa": self.chord_modulus,
            "modulus_Pa": self.modulus,
            "regression": self.regression.to_dict(),
            "linear_range": list(self.linear_range),
            "toe_shift": self.toe_shift,
            "yield_strength_Pa": self.yield_strength,
            "yield_strain": self.yield_strain,
            "offset": self.offset,
            "ultimate_strength_Pa": self.ultimate_strength,
            "strain_at_ultimate": self.strain_at_ultimate,
            "source": self.source,
            "synthetic": self.synthetic,
            "warnings": list(self.warnings),
        }

    def to_table(self) -> str:
        """Plain-text summary (display units MPa and %)."""
        def mpa(v):
            return "n/a" if v is None else f"{v / 1e6:.4g} MPa"

        def pct(v):
            return "n/a" if v is None else f"{100 * v:.4g} %"

        reg = self.regression
        lines = [
            f"tensile evaluation of {self.source}" + (" (synthetic data)" if self.synthetic else ""),
            f"  chord modulus (ISO 527-1, 0.05-0.25 %): {mpa(self.chord_modulus)}",
            f"  regression modulus over {pct(self.linear_range[0])}..{pct(self.linear_range[1])}: "
            f"{mpa(reg.value('modulus'))} +- {mpa(reg.stderr('modulus'))} (std. error), "
            f"{100 * reg.confidence:g} % CI {mpa(reg.ci('modulus')[0])}..{mpa(reg.ci('modulus')[1])}",
            f"  toe compensation shift: {pct(self.toe_shift)}",
            f"  offset yield strength ({pct(self.offset)} offset): {mpa(self.yield_strength)} "
            f"at strain {pct(self.yield_strain)}",
            f"  ultimate strength: {mpa(self.ultimate_strength)} at strain {pct(self.strain_at_ultimate)}",
        ]
        lines += [f"  warning: {w}" for w in self.warnings]
        return "\n".join(lines)


def fit_tensile(data, *, toe=False, linear_range=None, offset=0.002, e1=0.0005, e2=0.0025, strain_unit=None,
                stress_unit=None, allow_large_strain=False, min_points=5, confidence=0.95) -> TensileResult:
    """Evaluate a tensile curve: moduli, toe compensation, offset yield, ultimate strength.

    Parameters
    ----------
    data : str, os.PathLike, XYData or (array_like, array_like)
        A CSV file (strain column, stress column; see :mod:`actsim.calibrate.readers`) or
        arrays (strain [1], stress [Pa] unless ``strain_unit``/``stress_unit`` say otherwise).
    toe : bool
        Apply toe compensation (ASTM D638 Appendix X1) before everything else.
    linear_range : (float, float), optional
        Linear region for the regression modulus, in measured strain [1]. Default: the ISO
        527-1 chord strains (e1, e2) (after compensation if ``toe``); with ``toe`` and no range,
        the region between 10 % and 40 % of the maximum stress.
    offset : float
        Yield offset strain [1].
    e1, e2 : float
        Chord strains [1].
    strain_unit, stress_unit : str, optional
        Units for array input or a header without units (e.g. "%", "MPa").
    allow_large_strain : bool
        Accept strain fractions above 1.5 without a percent unit.
    min_points : int
        Fewest points in the linear range.
    confidence : float
        Confidence level of the modulus interval [1].

    Returns
    -------
    TensileResult

    Notes
    -----
    The offset line uses the regression modulus :math:`E`:

    .. math::

        \\sigma = E\\,(\\varepsilon - \\varepsilon_\\text{off})

    References
    ----------
    .. [1] ISO 527-1:2019, *Plastics — Determination of tensile properties — Part 1*.
    .. [2] ASTM E111-17, *Young's Modulus, Tangent Modulus, and Chord Modulus*.
    .. [3] ASTM D638-14, *Tensile Properties of Plastics*, Appendix X1.
    .. [4] ASTM E8/E8M-22, *Tension Testing of Metallic Materials*.
    """
    xy: XYData = as_xy(data, x_kind="strain", y_kind="stress", x_unit=strain_unit, y_unit=stress_unit,
                       min_points=3, x_name="strain", y_name="stress")
    check_strain_is_fraction(xy.x, unit=xy.x_unit, allow_large_strain=allow_large_strain,
                             field=f"{xy.source} strain" if xy.source != "arrays" else "strain")
    e, s = _arrays(xy.x, xy.y)
    if float(np.max(s)) <= 0:
        raise ActsimInputError(f"stress: maximum {float(np.max(s)):g} Pa is not positive; no tensile loading in the data")
    notes = []
    shift = 0.0
    if toe:
        tc = toe_compensation(e, s, strain_range=linear_range, min_points=min_points)
        shift = tc.shift
        e, s = tc.strain, tc.stress
        lr = (tc.strain_range[0] - shift, tc.strain_range[1] - shift)
    else:
        lr = tuple(float(v) for v in (linear_range if linear_range is not None else (e1, e2)))
    try:
        reg = regression_modulus(e, s, strain_range=lr, min_points=min_points, confidence=confidence)
    except ActsimInputError as exc:
        if xy.x_unit.strip().lower() in ("%", "percent") and float(np.max(e)) < lr[1]:
            raise ActsimInputError(f"{exc}; the strain column says % but reaches only {100 * float(np.max(e)):g} %: "
                                   "were the values written as fractions?") from None
        raise
    E = reg.value("modulus")
    if E <= 0:
        raise ActsimInputError(f"linear_range: slope over {lr} is {E:g} Pa, not positive; choose the rising linear part")
    try:
        chord = chord_modulus(e, s, e1=e1, e2=e2)
    except ActsimInputError as exc:
        chord = None
        notes.append(f"no chord modulus: {exc}")
        if xy.x_unit.strip().lower() in ("%", "percent") and float(np.max(e)) < e2:
            notes.append(f"the strain column says % but reaches only {100 * float(np.max(e)):g} %: "
                         "were the values written as fractions?")
    if chord is not None and abs(chord - E) > 0.05 * abs(E):
        notes.append(f"chord modulus {chord / 1e6:.4g} MPa differs from the regression modulus {E / 1e6:.4g} MPa "
                     "by more than 5 %: check the linear range on the plot")
    try:
        ys, ye = offset_yield_strength(e, s, modulus=E, offset=offset)
    except ActsimInputError as exc:
        ys = ye = None
        notes.append(str(exc))
    us, ue = ultimate_strength(e, s)
    return TensileResult(chord_modulus=chord, regression=reg, modulus=E, linear_range=lr, toe_shift=shift,
                         yield_strength=ys, yield_strain=ye, offset=offset, ultimate_strength=us,
                         strain_at_ultimate=ue, strain=e, stress=s, source=xy.source, synthetic=xy.synthetic,
                         warnings=notes + list(reg.warnings))


def plot_tensile(result: TensileResult, path, *, title=None, records=None):
    """Plot the curve, the fitted line and the offset construction to a PNG (written atomically).

    Parameters
    ----------
    result : TensileResult
        From :func:`fit_tensile`.
    path : str or os.PathLike
        PNG file to write.
    title : str, optional
        Figure title; default names the source (and says "synthetic data" when it is).
    records : list, optional
        The figure's :func:`actsim.figures.figure_record` (title, generated caption) is appended to it.

    Returns
    -------
    pathlib.Path
        The written file.
    """
    from ..figures import figure_record, fmt, new_figure

    fig = new_figure((7.0, 4.8))
    ax = fig.add_subplot(1, 1, 1)
    e, s = result.strain, result.stress
    ax.plot(100 * e, s / 1e6, color="0.2", lw=1.4, label="data")
    E = result.modulus
    b = result.regression.value("intercept")
    top = result.yield_strength if result.yield_strength is not None else result.ultimate_strength
    e_line = np.linspace(max(0.0, -b / E), (top - b) / E, 50)
    ax.plot(100 * e_line, (E * e_line + b) / 1e6, color="tab:blue", lw=1.2,
            label=f"regression line, E = {E / 1e9:.3g} GPa")
    lo, hi = result.linear_range
    ax.axvspan(100 * lo, 100 * hi, color="tab:blue", alpha=0.08, label="linear range")
    if result.yield_strength is not None:
        e_off = np.linspace(result.offset, result.yield_strain * 1.02, 20)
        ax.plot(100 * e_off, E * (e_off - result.offset) / 1e6, "--", color="tab:red", lw=1.2,
                label=f"{100 * result.offset:g} % offset line")
        ax.plot(100 * result.yield_strain, result.yield_strength / 1e6, "o", color="tab:red",
                label=f"offset yield {result.yield_strength / 1e6:.4g} MPa")
    ax.plot(100 * result.strain_at_ultimate, result.ultimate_strength / 1e6, "s", color="tab:green",
            label=f"ultimate {result.ultimate_strength / 1e6:.4g} MPa")
    ax.set_xlabel("strain (%)" + (", toe-compensated" if result.toe_shift else ""))
    ax.set_ylabel("stress (MPa)")
    ax.set_xlim(left=0)
    ax.set_ylim(bottom=0)
    ax.grid(True, alpha=0.3)
    ax.legend(loc="lower right", fontsize=8)
    ttl = title or f"tensile curve: {result.source}"
    if result.synthetic:
        ttl += " (synthetic data)"
    ax.set_title(ttl)
    fig.tight_layout()
    save_figure(fig, path)
    if records is not None:
        yld = (f"; red: {100 * result.offset:g} % offset line and the offset yield strength "
               f"{fmt(result.yield_strength / 1e6, 4)} MPa at {fmt(100 * result.yield_strain)} % strain"
               if result.yield_strength is not None else "; no offset yield point")
        records.append(figure_record(path, "Tensile curve and fit", (
            f"Stress (MPa) against strain (%{', toe-compensated' if result.toe_shift else ''}) of {result.source}"
            f"{' (synthetic data)' if result.synthetic else ''}: the data (black), the regression line of the "
            f"linear range {fmt(100 * lo)}-{fmt(100 * hi)} % (blue, shaded), modulus E = {fmt(E / 1e9, 4)} GPa"
            f"{yld}; green square: ultimate strength {fmt(result.ultimate_strength / 1e6, 4)} MPa")))
    return Path(path)


# ----------------------------------------------------------------------------------------------
# several strain rates: modulus and yield against rate, the Eyring law
# ----------------------------------------------------------------------------------------------

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
