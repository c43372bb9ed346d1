"""Fit scenario parameters to measured bend angle against time, with the simulator as the model.

One or many curves (for example at different irradiances, thicknesses or wavelengths) are fitted
together in ONE bounded least-squares problem. Each curve is measured data plus the scenario
overrides that describe its experiment (``{"protocol[0].light.lamp": "20 mW/cm^2"}``); every
trial parameter set is written into the base scenario with
:func:`actsim.scenario.apply_overrides` (so each trial is validated exactly like a scenario
file), simulated, and the bend angle is interpolated at the measured times. The residuals of
all curves are stacked,

.. math::

    r_{c,i}(p) = \\frac{\\theta_\\text{model}(t_{c,i};\\,p,\\,\\text{overrides}_c) - \\theta_{c,i}}{\\sigma_c},
    \\qquad \\hat p = \\arg\\min_{l \\le p \\le u} \\sum_{c,i} r_{c,i}^2,

with :math:`\\sigma_c` the measurement standard deviation of curve :math:`c` when the curves give
one (then every curve must give it: a bare residual in radians and one divided by a sigma in
radians have different units, so mixing them would weight the curves arbitrarily), or
:math:`\\sigma_c = 1` for all curves when none does. The sigmas act as relative weights: the
residual standard deviation :math:`s` is still estimated from the fit.
The Jacobian is taken by forward differences on parameters scaled to order one, so the number
of simulations stays near ``(1 + n_parameters) * n_curves`` per iteration. Standard errors,
confidence intervals, correlations and identifiability warnings come from
:mod:`actsim.calibrate.fitstats` (linearised covariance :math:`s^2 (J^T J)^{-1}`).

Default parameters (of the scenario's active material): ``photo_strain`` (eigenstrain at full
conversion), ``forward_quantum_yield`` and ``thermal_back_rate``. With the absorptivity held
fixed, the fitted quantum yield is in effect the product of quantum yield and absorption cross
section that the bend data can see.

References
----------
.. [1] D. M. Bates and D. G. Watts, *Nonlinear Regression Analysis and Its Applications*,
   Wiley, 1988.
.. [2] M. A. Branch, T. F. Coleman and Y. Li, "A subspace, interior, and conjugate gradient
   method for large-scale bound-constrained minimization problems", SIAM J. Sci. Comput. 21
   (1999) 1-23 (the trust-region reflective method of scipy.optimize.least_squares).
"""

from __future__ import annotations

import hashlib
import math
import os
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
from scipy.optimize import least_squares

from ..errors import ActsimError, ActsimInputError, ActsimSimulationError
from ..units import DIMENSIONLESS_UNITS, parse_dimensionless, parse_quantity, registry, unit_kind
from .fitstats import FitResult, fit_statistics
from .readers import XYData, as_xy

__all__ = [
    "FitParameter",
    "BendCurve",
    "BendFit",
    "make_parameter",
    "default_parameters",
    "active_material",
    "scenario_value",
    "fit_bend",
    "FitPlan",
    "load_fit_plan",
]


# ----------------------------------------------------------------------------------------------
# Parameters
# ----------------------------------------------------------------------------------------------

def _value_si(value, *, unit: str, field: str):
    """A number in ``unit`` or a string with its own unit -> float in the SI unit of ``unit``."""
    si, kind = unit_kind(unit, field=field)
    if isinstance(value, bool) or value is None:
        raise ActsimInputError(f"{field}: {value!r} is not a number")
    if isinstance(value, str):
        v = parse_dimensionless(value, field=field) if kind is None else parse_quantity(value, field=field, kind=kind)
    else:
        try:
            v = float(value)
        except (TypeError, ValueError):
            raise ActsimInputError(f"{field}: {value!r} is not a number") from None
        ureg = registry()
        if kind is not None:
            v = float(ureg.Quantity(v, ureg.parse_units(str(unit).strip())).to(si).magnitude)
        elif str(unit).strip() not in DIMENSIONLESS_UNITS:
            v = float(ureg.Quantity(v, ureg.parse_units(str(unit).strip())).to("dimensionless").magnitude)
    if not math.isfinite(v):
        raise ActsimInputError(f"{field}: {value!r} is not finite")
    return v


@dataclass(frozen=True)
class FitParameter:
    """One fitted scenario field.

    Attributes
    ----------
    path : str
        Dotted scenario field path, as for :func:`actsim.scenario.apply_overrides`, e.g.
        ``"materials.film.photo_strain"``.
    unit : str
        SI unit of the field (``"1"`` if dimensionless, ``"1/s"``, ``"W/m^2"`` ...).
    lower, upper : float
        Bounds [``unit``].
    initial : float or None
        Starting value [``unit``]; None takes the value of the base scenario.
    name : str
        Short display name (default: the last part of ``path``).
    """

    path: str
    unit: str
    lower: float
    upper: float
    initial: float | None = None
    name: str = ""

    @property
    def label(self) -> str:
        return self.name or self.path

    def override(self, value) -> object:
        """The value as written in a scenario file: a plain number if dimensionless, else ``"v unit"``."""
        v = float(value)
        return v if self.unit == "1" else f"{v!r} {self.unit}"


def make_parameter(path, *, unit="1", lower, upper, initial=None, name=None) -> FitParameter:
    """Build a :class:`FitParameter` from numbers in ``unit`` or strings with units.

    Parameters
    ----------
    path : str
        Dotted scenario field path.
    unit : str
        Unit of plain-number values (converted to SI), e.g. ``"1/s"``, ``"1/min"``, ``"1"``.
    lower, upper : float or str
        Bounds [``unit``], or strings with their own unit (``"0 1/s"``).
    initial : float or str, optional
        Starting value [``unit``]; default the base scenario's value.
    name : str, optional
        Display name.

    Returns
    -------
    FitParameter
        With values in SI.

    Notes
    -----
    .. math::

        p_\\mathrm{SI} = p \\cdot [\\mathrm{unit} \\to \\mathrm{SI}]

    References
    ----------
    .. [1] Bureau International des Poids et Mesures, *The International System of Units (SI)*,
       9th edition, 2019.
    """
    from ..scenario import split_field_path

    if not isinstance(path, str) or not path.strip():
        raise ActsimInputError(f"parameter path: {path!r} must be a dotted field path such as 'materials.film.photo_strain'")
    split_field_path(path)
    si, _ = unit_kind(unit, field=f"{path} unit")
    lo = _value_si(lower, unit=unit, field=f"{path} lower bound")
    hi = _value_si(upper, unit=unit, field=f"{path} upper bound")
    if not lo < hi:
        raise ActsimInputError(f"{path}: lower bound {lo:g} {si} must be below the upper bound {hi:g} {si}")
    p0 = None if initial is None else _value_si(initial, unit=unit, field=f"{path} initial")
    if p0 is not None and not lo <= p0 <= hi:
        raise ActsimInputError(f"{path}: initial value {p0:g} {si} is outside its bounds {lo:g}..{hi:g} {si}")
    return FitParameter(path=path, unit=si, lower=lo, upper=hi, initial=p0, name=name or path.split(".")[-1])


def active_material(scenario) -> str:
    """Name of the one active (chromophore-bearing) material of the scenario's layers.

    Parameters
    ----------
    scenario : Scenario
        The scenario.

    Returns
    -------
    str
        The material name; ActsimInputError if there is none or more than one (then give the
        parameters explicitly).
    """
    names = []
    for layer in scenario.layers:
        m = layer.material
        if m.is_active and m.name not in names:
            names.append(m.name)
    if not names:
        raise ActsimInputError("scenario: no layer has an active material (chromophore_concentration > 0); nothing to fit")
    if len(names) > 1:
        raise ActsimInputError(f"scenario: {len(names)} active materials ({', '.join(names)}); "
                               "name the fitted fields explicitly (parameters)")
    return names[0]


def scenario_value(scenario, path: str, unit: str):
    """Current value of a scenario field as written in its TOML text.

    Parameters
    ----------
    scenario : Scenario
        The scenario.
    path : str
        Dotted field path.
    unit : str
        Unit of the field (``"1"`` if dimensionless).

    Returns
    -------
    float or None
        The value [SI of ``unit``], or None if the file does not set the field.
    """
    from ..scenario import descend, split_field_path

    raw = tomllib.loads(scenario.text)
    node = raw
    tokens = split_field_path(path)
    for tok in tokens[:-1]:
        parent, key = descend(node, tok, path)
        node = parent[key]
    if isinstance(tokens[-1], tuple):
        parent, key = descend(node, tokens[-1], path)
    else:
        if not isinstance(node, dict):
            raise ActsimInputError(f"{path}: '{tokens[-1]}' used on something that is not a table")
        if tokens[-1] not in node:
            return None
        parent, key = node, tokens[-1]
    value = parent[key]
    if isinstance(value, (dict, list)):
        raise ActsimInputError(f"{path}: is a table or list in the scenario, not a single value; only single "
                               "values can be fitted (replace it by a constant or fit another field)")
    si, kind = unit_kind(unit, field=path)
    if isinstance(value, str):
        return _value_si(value, unit=unit, field=path)
    if kind is not None:
        raise ActsimInputError(f"{path}: the scenario has a bare number {value!r}, but the parameter unit is {unit!r}")
    return float(value)


def default_parameters(scenario) -> list[FitParameter]:
    """The default fitted set of the active material: photo strain, forward quantum yield, thermal back rate.

    Parameters
    ----------
    scenario : Scenario
        Base scenario with one active material.

    Returns
    -------
    list of FitParameter
        ``materials.<m>.photo_strain`` [1], bounds keeping its sign within the parser's
        +-0.5; ``materials.<m>.forward_quantum_yield`` [1] in [1e-6, 1];
        ``materials.<m>.thermal_back_rate`` [1/s] in [0, max(1, 100 k0)] 1/s.

    Notes
    -----
    The bounds are the physical ranges of the fields, widened where none exists (rate);
    common practice, no source.

    .. math::

        |\\varepsilon_\\text{photo}| \\le 0.5, \\quad 0 < \\Phi_f \\le 1, \\quad k_\\text{th} \\ge 0

    References
    ----------
    .. [1] IUPAC, *Compendium of Chemical Terminology* (the "Gold Book"), entry "quantum yield"
       (a fraction of absorbed photons, so at most 1 for a one-photon reaction).
    """
    m = active_material(scenario)
    base = f"materials.{m}"
    ps = scenario_value(scenario, f"{base}.photo_strain", "1") or 0.0
    if ps == 0.0:
        raise ActsimInputError(f"{base}.photo_strain: the base scenario has 0; give a starting value with the "
                               "expected sign (e.g. -0.01 for a contracting film)")
    params = [make_parameter(f"{base}.photo_strain", unit="1", lower=-0.5 if ps < 0 else 0.0,
                             upper=0.0 if ps < 0 else 0.5, initial=ps, name="photo_strain")]
    qy = scenario_value(scenario, f"{base}.forward_quantum_yield", "1")
    params.append(make_parameter(f"{base}.forward_quantum_yield", unit="1", lower=1e-6, upper=1.0,
                                 initial=min(max(qy, 1e-6), 1.0), name="forward_quantum_yield"))
    kb = scenario_value(scenario, f"{base}.thermal_back_rate", "1/s") or 0.0
    hi = max(1.0, 100.0 * kb)
    params.append(make_parameter(f"{base}.thermal_back_rate", unit="1/s", lower=0.0, upper=hi,
                                 initial=kb if kb > 0 else 0.01 * hi, name="thermal_back_rate"))
    return params


# ----------------------------------------------------------------------------------------------
# Curves
# ----------------------------------------------------------------------------------------------

@dataclass
class BendCurve:
    """One measured curve and the overrides that describe its experiment.

    Attributes
    ----------
    data : str, os.PathLike, XYData or (array_like, array_like)
        CSV (``time [s], bend angle [deg]``) or arrays (time [s], angle [rad] unless units
        are given).
    overrides : dict
        Scenario overrides of this experiment (dotted path -> value as in a file).
    label : str
        Legend label (default: the file name or ``curve <n>``).
    sigma : float or None
        Measurement standard deviation of this curve [rad]; give it on every curve of a fit or
        on none (None on all weighs all curves equally).
    time_unit, angle_unit : str, optional
        Units for arrays or a header without units.
    """

    data: object
    overrides: dict = field(default_factory=dict)
    label: str = ""
    sigma: float | None = None
    time_unit: str | None = None
    angle_unit: str | None = None
    # filled in by fit_bend
    time: np.ndarray | None = None
    angle: np.ndarray | None = None
    source: str = ""
    file: str | None = None
    synthetic: bool = False
    sha256: str | None = None


def _resolve_curve(c, i, scenario):
    from ..scenario import apply_overrides

    if not isinstance(c, BendCurve):
        raise ActsimInputError(f"curves[{i}]: expected a BendCurve, got {type(c).__name__}")
    if not isinstance(c.overrides, dict):
        raise ActsimInputError(f"curves[{i}].overrides: must be a table of field path -> value")
    xy: XYData = as_xy(c.data, x_kind="time", y_kind="angle", x_unit=c.time_unit, y_unit=c.angle_unit,
                       min_points=2, x_name="time", y_name="bend angle")
    order = np.argsort(xy.x, kind="stable")
    t, th = xy.x[order], xy.y[order]
    name = xy.source if xy.source != "arrays" else f"curve {i + 1}"
    if t[0] < 0:
        raise ActsimInputError(f"{name}: time {t[0]:g} s is negative; times count from the start of the protocol")
    try:
        sc = apply_overrides(scenario, c.overrides)
    except ActsimInputError as exc:
        raise ActsimInputError(f"{name} overrides: {exc}") from None
    if t[-1] > sc.duration * (1 + 1e-9):
        raise ActsimInputError(f"{name}: data reach t = {t[-1]:g} s but the protocol of this curve lasts "
                               f"{sc.duration:g} s; lengthen the protocol or drop the late points")
    if c.sigma is not None and not (math.isfinite(c.sigma) and c.sigma > 0):
        raise ActsimInputError(f"{name} sigma: {c.sigma!r} rad is outside the allowed range (> 0 rad)")
    out = BendCurve(data=c.data, overrides=dict(c.overrides), label=c.label or name, sigma=c.sigma,
                    time_unit=c.time_unit, angle_unit=c.angle_unit, time=t, angle=th, source=name,
                    synthetic=xy.synthetic)
    if isinstance(c.data, (str, os.PathLike)):
        out.file = str(Path(c.data).resolve())
        out.sha256 = hashlib.sha256(Path(c.data).read_bytes()).hexdigest()
    return out


# ----------------------------------------------------------------------------------------------
# The fit
# ----------------------------------------------------------------------------------------------

@dataclass
class BendFit:
    """Result of :func:`fit_bend`.

    Attributes
    ----------
    result : FitResult
        Values [SI], standard errors, confidence intervals, correlation, warnings.
    parameters : tuple of FitParameter
        The fitted fields (bounds, units).
    curves : list of BendCurve
        The curves as read (``time`` [s], ``angle`` [rad]).
    base : Scenario
        The base scenario.
    initial : numpy.ndarray
        Starting values [SI].
    model_time, model_angle : list of numpy.ndarray
        Simulated bend angle of each curve at the fit, on the simulation's output grid [s], [rad].
    fitted_at_data : list of numpy.ndarray
        Simulated bend angle at the measured times [rad].
    n_simulations : int
        Simulations run.
    """

    result: FitResult
    parameters: tuple
    curves: list
    base: object
    initial: np.ndarray
    model_time: list
    model_angle: list
    fitted_at_data: list
    n_simulations: int

    def fitted_overrides(self) -> dict:
        """Dotted path -> fitted value, as written in a scenario file."""
        return {p.path: p.override(v) for p, v in zip(self.parameters, self.result.values)}

    def fitted_scenario(self):
        """The base scenario with the fitted values (no [calibration] section)."""
        from ..scenario import apply_overrides

        return apply_overrides(self.base, self.fitted_overrides())

    def to_table(self) -> str:
        """Parameter table with warnings (FitResult.to_table) and a header naming the data."""
        syn = any(c.synthetic for c in self.curves)
        head = (f"bend-angle fit of {len(self.curves)} curve(s), {self.n_simulations} simulations"
                + (" (synthetic data)" if syn else ""))
        return head + "\n" + self.result.to_table()

    def to_dict(self) -> dict:
        """Plain types for JSON: the FitResult plus paths, bounds and data provenance."""
        d = self.result.to_dict()
        d.update(
            kind="bend",
            paths=[p.path for p in self.parameters],
            lower=[p.lower for p in self.parameters],
            upper=[p.upper for p in self.parameters],
            initial=[float(v) for v in self.initial],
            n_simulations=int(self.n_simulations),
            curves=[{"label": c.label, "source": c.source, "overrides": dict(c.overrides), "n_points": int(c.time.size),
                     "synthetic": bool(c.synthetic), "sha256": c.sha256,
                     "rms_residual_rad": float(np.sqrt(np.mean((f - c.angle) ** 2)))}
                    for c, f in zip(self.curves, self.fitted_at_data)],
        )
        return d

    def plot(self, path, *, records=None):
        """Data, fitted curves and residuals against time to a PNG (written atomically).

        Parameters
        ----------
        path : str or os.PathLike
            The PNG file.
        records : list, optional
            The figure's :func:`actsim.figures.figure_record` (title, generated caption) is appended to it.

        Returns
        -------
        pathlib.Path
        """
        from ..figures import display_unit, figure_record, fmt, new_figure
        from ..io import save_figure

        ang = display_unit("rad")
        fig = new_figure((7.2, 6.0))
        ax, axr = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [2.2, 1]})
        parts = []
        for k, (c, tm, am, fd) in enumerate(zip(self.curves, self.model_time, self.model_angle, self.fitted_at_data)):
            col = f"C{k % 10}"
            ax.plot(c.time, ang(c.angle), "o", ms=3, color=col, alpha=0.7, label=f"{c.label} (data)")
            ax.plot(tm, ang(am), "-", color=col, lw=1.3)
            axr.plot(c.time, ang(fd - c.angle), "o", ms=3, color=col)
            rms = float(np.sqrt(np.mean((fd - c.angle) ** 2)))
            parts.append(f"{c.label}: {c.time.size} points, rms residual {fmt(ang(rms))}°")
        axr.axhline(0.0, color="0.4", lw=0.8)
        ax.set_ylabel(f"bend angle ({ang.unit})")
        axr.set_ylabel(f"model - data ({ang.unit})")
        axr.set_xlabel("time (s)")
        ax.grid(True, alpha=0.3)
        axr.grid(True, alpha=0.3)
        ax.legend(fontsize=7, loc="best")
        ttl = "bend-angle fit: data (points) and model (lines)"
        synthetic = any(c.synthetic for c in self.curves)
        if synthetic:
            ttl += " - synthetic data"
        ax.set_title(ttl, fontsize=10)
        fig.tight_layout()
        save_figure(fig, path)
        if records is not None:
            fitted = "; ".join(f"{n} = {fmt(v, 4)} {u}".rstrip() for n, v, u in
                               zip(self.result.names, self.result.values, self.result.units))
            records.append(figure_record(path, "Bend-angle fit", (
                f"Measured bend angle (points, degrees) and the fitted model (lines) against time (s) for "
                f"{len(self.curves)} curve(s), residuals (model - data, degrees) below; " + "; ".join(parts)
                + f"; fitted {fitted}" + ("; synthetic data" if synthetic else ""))))
        return Path(path)


def fit_bend(scenario, curves, *, parameters=None, confidence=0.95, max_iterations=40, engine="kernel",
             allow_unconverged=False, progress=None) -> BendFit:
    """Fit scenario fields to one or many bend-angle curves in one global bounded least-squares fit.

    Parameters
    ----------
    scenario : Scenario
        The base scenario (:func:`actsim.load_scenario`).
    curves : sequence of BendCurve
        Measured curves and their overrides.
    parameters : sequence of FitParameter, optional
        Fitted fields; default :func:`default_parameters`.
    confidence : float
        Two-sided confidence level of the intervals [1].
    max_iterations : int
        Largest number of trust-region iterations (``max_nfev`` of least_squares); each costs
        about ``(1 + n_parameters) * n_curves`` simulations.
    engine : {"kernel", "reference"}
        Simulator engine.
    allow_unconverged : bool
        Return an unconverged fit (with a warning) instead of raising.
    progress : callable, optional
        Called with the number of simulations run so far.

    Returns
    -------
    BendFit

    Raises
    ------
    ActsimInputError
        Unreadable data, data beyond the protocol, bad overrides or parameters, a simulation
        that fails at a trial point, or (unless ``allow_unconverged``) no convergence.

    Notes
    -----
    Internally the parameters are scaled, :math:`u_k = p_k / s_k` with :math:`s_k` the starting
    magnitude, so that the forward-difference step is relative for every parameter; the
    Jacobian is then mapped back, :math:`J_p = J_u\\,\\operatorname{diag}(1/s)`.

    .. math::

        \\operatorname{Cov}(\\hat p) = s^2 (J_p^T J_p)^{-1}, \\qquad
        s^2 = \\frac{\\lVert r \\rVert^2}{n - p}

    References
    ----------
    .. [1] D. M. Bates and D. G. Watts, *Nonlinear Regression Analysis and Its Applications*,
       Wiley, 1988.
    .. [2] M. A. Branch, T. F. Coleman and Y. Li, SIAM J. Sci. Comput. 21 (1999) 1-23.
    """
    from ..scenario import apply_overrides
    from ..solver import fixed_step_equivalent, simulate

    scenario = fixed_step_equivalent(scenario)  # finite-difference derivatives need outputs smooth in the parameters
    curves = list(curves)
    if not curves:
        raise ActsimInputError("curves: at least one bend-angle curve is needed")
    params = tuple(default_parameters(scenario) if parameters is None else parameters)
    if not params:
        raise ActsimInputError("parameters: at least one parameter to fit is needed")
    paths = [p.path for p in params]
    if len(set(paths)) != len(paths):
        raise ActsimInputError("parameters: a field path is listed twice")
    if not isinstance(max_iterations, int) or max_iterations < 1:
        raise ActsimInputError(f"max_iterations: {max_iterations!r} is outside the allowed range (whole number >= 1)")
    resolved = [_resolve_curve(c, i, scenario) for i, c in enumerate(curves)]
    bare = [c.source for c in resolved if c.sigma is None]
    if bare and len(bare) < len(resolved):
        raise ActsimInputError(
            f"curves sigma: missing on {', '.join(bare)} but given on the others; give sigma [angle, > 0] "
            "on every curve or on none")
    for c in resolved:
        clash = set(c.overrides) & set(paths)
        if clash:
            raise ActsimInputError(f"{c.source} overrides: '{sorted(clash)[0]}' is also a fitted parameter")
    n_pts = sum(c.time.size for c in resolved)
    if n_pts <= len(params):
        raise ActsimInputError(f"data: {n_pts} points for {len(params)} fitted parameters; need more points than parameters")

    p0 = np.empty(len(params))
    for k, p in enumerate(params):
        v = p.initial if p.initial is not None else scenario_value(scenario, p.path, p.unit)
        if v is None:
            raise ActsimInputError(f"{p.path}: not set in the base scenario; give an initial value")
        if not p.lower <= v <= p.upper:
            raise ActsimInputError(f"{p.path}: starting value {v:g} {p.unit} is outside its bounds "
                                   f"{p.lower:g}..{p.upper:g} {p.unit}")
        p0[k] = v
    try:  # a misspelt path or a value the scenario refuses shows up here, before any fitting
        apply_overrides(scenario, {p.path: p.override(v) for p, v in zip(params, p0)})
    except ActsimInputError as exc:
        raise ActsimInputError(f"parameters: {exc}") from None
    lo = np.array([p.lower for p in params])
    hi = np.array([p.upper for p in params])
    scale = np.abs(p0)
    width = hi - lo
    fallback = np.where(np.isfinite(width), 0.01 * width, 1.0)
    scale = np.where(scale > 0, scale, fallback)
    # all curves give sigma (relative weights 1/sigma_c) or none does (equal weights); mixed is refused above
    weights = np.array([1.0 if c.sigma is None else 1.0 / c.sigma for c in resolved])
    count = {"sims": 0}
    cache = {}

    def simulate_curves(pvec, *, full=False):
        ov = {p.path: p.override(v) for p, v in zip(params, pvec)}
        out = []
        for c in resolved:
            try:
                sc = apply_overrides(scenario, {**c.overrides, **ov})
                ds = simulate(sc, engine=engine)
            except (ActsimError, FloatingPointError) as exc:
                vals = ", ".join(f"{p.label} = {v:.6g} {p.unit}" for p, v in zip(params, pvec))
                raise ActsimSimulationError(f"fit: the simulation of {c.source} failed at {vals} ({exc}); "
                                       "narrow the bounds") from None
            count["sims"] += 1
            if progress is not None:
                progress(count["sims"])
            t = ds["time"].values
            a = ds["bend_angle"].values
            out.append((t, a) if full else np.interp(c.time, t, a))
        return out

    def residuals(u):
        key = u.tobytes()
        if key in cache:
            return cache[key]
        pred = simulate_curves(u * scale)
        r = np.concatenate([w * (m - c.angle) for w, m, c in zip(weights, pred, resolved)])
        if not np.all(np.isfinite(r)):
            raise ActsimInputError("fit: the simulated bend angle is not finite at a trial point; narrow the bounds")
        cache.clear()
        cache[key] = r
        return r

    u0 = p0 / scale
    ulo, uhi = lo / scale, hi / scale
    with np.errstate(all="ignore"):
        sol = least_squares(residuals, u0, bounds=(ulo, uhi), x_scale=1.0, method="trf", max_nfev=max_iterations,
                            xtol=1e-8, ftol=1e-8, gtol=1e-8)
    if sol.status == 0 and not allow_unconverged:
        raise ActsimInputError(
            f"fit: did not converge within {max_iterations} iterations ({count['sims']} simulations); start closer "
            "(initial values), narrow the bounds, fit fewer parameters or raise max_iterations")
    if sol.status < 0:
        raise ActsimInputError(f"fit: the optimiser stopped ({sol.message})")
    pfit = sol.x * scale
    jac_p = np.asarray(sol.jac, dtype=float) / scale
    res = fit_statistics(jac_p, sol.fun, values=pfit, names=[p.label for p in params], units=[p.unit for p in params],
                         confidence=confidence, success=sol.status > 0, message=str(sol.message),
                         active_mask=sol.active_mask,
                         residual_unit="rad" if all(c.sigma is None for c in resolved) else "1 (residual / sigma)")
    full = simulate_curves(pfit, full=True)
    at_data = [np.interp(c.time, t, a) for c, (t, a) in zip(resolved, full)]
    return BendFit(result=res, parameters=params, curves=resolved, base=scenario, initial=p0,
                   model_time=[t for t, _ in full], model_angle=[a for _, a in full], fitted_at_data=at_data,
                   n_simulations=count["sims"])


# ----------------------------------------------------------------------------------------------
# Fit plan files
# ----------------------------------------------------------------------------------------------

@dataclass
class FitPlan:
    """A bend fit described in a TOML file (see :func:`load_fit_plan`)."""

    scenario: object
    curves: list
    parameters: list | None
    confidence: float = 0.95
    max_iterations: int = 40
    path: str = ""


def load_fit_plan(path) -> FitPlan:
    """Read a fit plan: base scenario, curves with their overrides, fitted parameters.

    Parameters
    ----------
    path : str or os.PathLike
        TOML file; paths in it are relative to its folder::

            scenario = "vent_flap_strip.toml"
            confidence = 0.95          # optional
            max_iterations = 40        # optional

            [[parameters]]             # optional; default: photo_strain, forward_quantum_yield,
            path = "materials.flap_film.thermal_back_rate"   # thermal_back_rate of the active material
            unit = "1/s"
            initial = 0.02             # optional (default: the scenario's value)
            bounds = [0.0, 1.0]        # numbers in `unit`, or strings with units

            [[curves]]
            file = "bend_05mWcm2.csv"
            label = "5 mW/cm^2"        # optional
            sigma = "0.5 deg"          # optional measurement standard deviation (all curves or none)
            overrides = { "protocol[0].light.uv_lamp" = "5 mW/cm^2" }

    Returns
    -------
    FitPlan
    """
    from ..scenario import load_scenario
    from ..schema import Table

    from ..inputfiles import read_text_file, resolve_data_path

    p = Path(path)
    text = read_text_file(p, field="fit plan", what="TOML")
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ActsimInputError(f"fit plan {p.name}: not valid TOML ({exc})") from None
    base = p.parent
    t = Table(raw, "")
    sc = load_scenario(resolve_data_path(t.string("scenario"), base_dir=base, field="scenario"))
    confidence = t.number("confidence", default=0.95, lo=0.0, hi=1.0, lo_open=True, hi_open=True)
    max_it = t.integer("max_iterations", default=40, lo=1, hi=10000)
    params = None
    if t.has("parameters"):
        items = t.raw("parameters")
        if not isinstance(items, list) or not items:
            raise ActsimInputError("parameters: must be a list of [[parameters]] tables")
        params = []
        for i, item in enumerate(items):
            pt = Table(item, f"parameters[{i}]")
            bounds = pt.raw("bounds")
            if not isinstance(bounds, list) or len(bounds) != 2:
                raise ActsimInputError(f"parameters[{i}].bounds: must be [lower, upper]")
            params.append(make_parameter(pt.string("path"), unit=pt.string("unit", default="1"), lower=bounds[0],
                                         upper=bounds[1], initial=pt.raw("initial", default=None),
                                         name=pt.string("name", default="") or None))
            pt.finish()
    items = t.raw("curves")
    if not isinstance(items, list) or not items:
        raise ActsimInputError("curves: must be a list of [[curves]] tables (file, overrides)")
    curves = []
    for i, item in enumerate(items):
        ct = Table(item, f"curves[{i}]")
        f = ct.string("file")
        ov = ct.raw("overrides", default={})
        if not isinstance(ov, dict):
            raise ActsimInputError(f"curves[{i}].overrides: must be a table of field path -> value")
        sigma = ct.quantity("sigma", "angle", default=None, lo=0.0, lo_open=True)
        curves.append(BendCurve(data=resolve_data_path(f, base_dir=base, field=f"curves[{i}].file"), overrides=dict(ov), label=ct.string("label", default=""), sigma=sigma))
        ct.finish()
    t.finish()
    return FitPlan(scenario=sc, curves=curves, parameters=params, confidence=confidence, max_iterations=max_it,
                   path=str(p))
