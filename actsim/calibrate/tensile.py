"""Tensile test evaluation: modulus, toe compensation, offset yield strength, ultimate strength.

Inputs are engineering strain [1] (a fraction, not percent) and engineering stress [Pa].
The methods follow the usual test standards; the standards' own specimen, speed and
conditioning requirements are the user's job, and numbers from this module are only as good
as the test behind them. Curves at several strain rates (modulus and yield against rate, the
Eyring law) are in :mod:`actsim.calibrate.rates`; its public names are still importable from here.

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


#: Names that moved to :mod:`actsim.calibrate.rates`, still importable from here.
_MOVED_TO_RATES = ("eyring_yield_stress", "fit_eyring", "EyringFit", "fit_tensile_rates", "RateSeries",
                   "plot_tensile_rates")


def __getattr__(name):
    # The strain-rate fits live in rates.py, which imports fit_tensile from here; importing them
    # only when asked for keeps the old import path working without an import cycle.
    if name in _MOVED_TO_RATES:
        from . import rates

        return getattr(rates, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
