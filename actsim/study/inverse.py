"""Inverse design: the free fields that meet the targets with the least optical power (or the most force).

The free fields are searched between bounds by differential evolution
(:func:`scipy.optimize.differential_evolution`, seeded, ``vectorized=True`` so
each generation runs through the batch kernel in one call). Constraints
(``g <= 0``, each scaled by its limit):

- reach the target bend angle within a time: :math:`g = (t_{target} - t_{max}) / t_{max}`;
  a design that never reaches it within its protocol (duration :math:`t_{end}`) scores
  :math:`g = (t_{end} - t_{max})/t_{max} + 1 + (\\theta_{target} - |\\theta_{peak}|)/\\theta_{target}`,
  more than any design that reaches the angle late (at most :math:`(t_{end} - t_{max})/t_{max}`),
  and less the closer it comes to the angle;
- a blocked force of at least :math:`F_{min}`: :math:`g = (F_{min} - |F|)/F_{min}`;
- a peak temperature of at most :math:`T_{max}`: :math:`g = (T_{peak} - T_{max}) / 10\\,K`.

Feasibility first (Deb's rule as a penalty): an infeasible design scores
:math:`10 + 10 \\sum \\max(0, g)`, above every feasible design, whose score is
the objective scaled to about 1 (peak incident optical power on the strip area,
or minus the peak blocked force). A field whose bounds span a factor of 20 or
more (both > 0) is searched on a log scale. When no design between the bounds
meets every constraint, the least-violating one is returned with
``feasible = False`` and ``status = "infeasible"``; it is not an optimum.

References
----------
.. [1] Storn, R. and Price, K. "Differential evolution - a simple and efficient
   heuristic for global optimization over continuous spaces." J. Global
   Optimization 11 (1997) 341-359.
.. [2] Deb, K. "An efficient constraint handling method for genetic algorithms."
   Computer Methods in Applied Mechanics and Engineering 186 (2000) 311-338.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import ActsimError, ActsimInputError
from .values import format_value, si_of, split_number_unit

OBJECTIVES = ("power", "force")


@dataclass
class FreeField:
    path: str
    lo: float
    hi: float
    unit: str
    log: bool

    def value(self, u):
        v = 10.0**u if self.log else u
        return format_value(min(max(v, self.lo), self.hi), self.unit)

    @property
    def bounds(self):
        return (math.log10(self.lo), math.log10(self.hi)) if self.log else (self.lo, self.hi)


def _free_fields(free) -> list[FreeField]:
    if not isinstance(free, dict) or not free:
        raise ActsimInputError("free: give at least one field with bounds, e.g. {\"protocol[0].light.lamp\": (\"1 mW/cm^2\", \"200 mW/cm^2\")}")
    out = []
    for path, b in free.items():
        if isinstance(b, str):
            parts = [p.strip() for p in b.split("..")]
            if len(parts) != 2:
                raise ActsimInputError(f"--free: '{path}={b}' must be FIELD=LOW..HIGH, e.g. \"protocol[0].light.lamp=1 mW/cm^2..200 mW/cm^2\"")
            b = parts
        if len(b) != 2:
            raise ActsimInputError(f"free.{path}: bounds must be (low, high)")
        lo, unit = split_number_unit(b[0], path)
        hi_v, hi_unit = split_number_unit(b[1], path)
        if unit or hi_unit:
            from ..units import Q_

            try:
                hi = float(Q_(hi_v, hi_unit or "dimensionless").to(unit or "dimensionless").magnitude)
            except Exception:
                raise ActsimInputError(f"free.{path}: bounds {b[0]!r} and {b[1]!r} do not have compatible units") from None
        else:
            hi = hi_v
        if not hi > lo:
            raise ActsimInputError(f"free.{path}: high bound {b[1]!r} must be above the low bound {b[0]!r}")
        out.append(FreeField(path, lo, hi, unit, lo > 0 and hi / lo >= 20))
    return out


def constraint_values(metrics, *, target_bend_angle=None, within=None, duration=None, min_force=None,
                      max_temperature=None) -> list:
    """Scaled constraint values ``g`` (``g <= 0``: met) of one design.

    Parameters
    ----------
    metrics : dict
        Metrics of the design (:func:`actsim.study.batch.run_batch`): ``time_to_target`` [s] (NaN:
        never), ``peak_bend_angle`` [rad], ``peak_blocked_force`` [N], ``peak_temperature`` [K].
    target_bend_angle : float, optional
        Angle to reach [rad]; needed with ``within``.
    within : float, optional
        Time by which the angle must be reached [s].
    duration : float, optional
        Length of the design's protocol [s] (:math:`t_{end}`); needed with ``within``.
    min_force : float, optional
        Least peak blocked force [N].
    max_temperature : float, optional
        Highest allowed peak temperature [K].

    Returns
    -------
    list of tuple
        ``(name, limit, value, unit, g, kind)`` with ``kind`` "max" or "min".

    Notes
    -----
    .. math::

        g_t = \\begin{cases} (t_{target} - t_{max})/t_{max} & \\text{reached} \\\\
              (t_{end} - t_{max})/t_{max} + 1 + (\\theta_{target} - |\\theta_{peak}|)/\\theta_{target}
              & \\text{never reached} \\end{cases}, \\quad
        g_F = \\frac{F_{min} - |F|}{F_{min}}, \\quad g_T = \\frac{T_{peak} - T_{max}}{10\\,\\mathrm{K}}

    Since a reached target has :math:`t_{target} \\le t_{end}`, every never-reaching design
    violates the time constraint by more than every design that reaches the angle late.

    References
    ----------
    .. [1] Deb, K. "An efficient constraint handling method for genetic algorithms."
       Computer Methods in Applied Mechanics and Engineering 186 (2000) 311-338.
    """
    m = metrics
    g = []
    if within is not None:
        tgt = abs(target_bend_angle)
        tt = m.get("time_to_target")
        tt = math.nan if tt is None else float(tt)  # batch metrics: NaN for never; summarize: None
        if math.isfinite(tt):
            g.append(("time_to_target", within, tt, "s", (tt - within) / within, "max"))
        else:
            if duration is None or not math.isfinite(duration):
                raise ActsimInputError("duration: the protocol length [s] is needed to score a design that "
                                       "never reaches the target")
            g.append(("time_to_target", within, math.inf, "s",
                      (duration - within) / within + 1.0 + (tgt - abs(m["peak_bend_angle"])) / tgt, "max"))
    if min_force is not None:
        f = abs(m["peak_blocked_force"])
        g.append(("peak_blocked_force", min_force, f, "N", (min_force - f) / min_force, "min"))
    if max_temperature is not None:
        T = m["peak_temperature"]
        g.append(("peak_temperature", max_temperature, T, "K", (T - max_temperature) / 10.0, "max"))
    return g


def inverse_design(scenario, free, *, objective="power", target_bend_angle=None, within=None, min_force=None,
                   max_temperature=None, seed=0, maxiter=40, popsize=12, tol=1e-7, atol=0.0, polish=False):
    """Find the free field values that meet the targets with the best objective.

    Parameters
    ----------
    scenario : Scenario
        Base design.
    free : dict
        Field path -> (low, high) as written in a scenario (``("1 mW/cm^2", "200 mW/cm^2")``)
        or the string ``"1 mW/cm^2..200 mW/cm^2"``.
    objective : {"power", "force"}
        Minimise the peak incident optical power on the strip area [W], or
        maximise the peak blocked force [N].
    target_bend_angle : float, optional
        Angle to reach [rad] (default: the scenario's target).
    within : float, optional
        Time by which the angle must be reached [s].
    min_force : float, optional
        Least peak blocked force [N].
    max_temperature : float, optional
        Highest allowed peak temperature [K] (needs heat in the scenario).
    seed : int
        Seed of differential evolution.
    maxiter, popsize, tol, atol, polish
        Passed to :func:`scipy.optimize.differential_evolution`.

    Returns
    -------
    dict
        ``optimum`` (field -> value as written), ``optimum_si`` (field -> SI
        value), ``objective`` and its value, ``metrics`` at the optimum,
        ``constraints`` (list of dict: name, limit, value, slack >= 0 when met,
        unit, active), ``feasible``, ``status`` ("optimum" or "infeasible": no
        design meets every constraint and the least-violating one is shown),
        ``n_evaluations``, ``message``.

    Notes
    -----
    Each design scores (penalty form of Deb's feasibility rule, constraint values
    :math:`g_k` from :func:`constraint_values`, :math:`f` the objective scaled to about 1)

    .. math::

        s = \\begin{cases} f & \\text{all } g_k \\le 0 \\\\
            10 + 10 \\sum_k \\max(0, g_k) & \\text{otherwise} \\end{cases}

    References
    ----------
    .. [1] Storn, R. and Price, K. "Differential evolution - a simple and efficient
       heuristic for global optimization over continuous spaces." J. Global
       Optimization 11 (1997) 341-359.
    .. [2] Deb, K. "An efficient constraint handling method for genetic algorithms."
       Computer Methods in Applied Mechanics and Engineering 186 (2000) 311-338.
    """
    from scipy.optimize import differential_evolution

    from ..scenario import apply_overrides
    from ..solver import build_problem
    from .batch import run_batch

    if objective not in OBJECTIVES:
        raise ActsimInputError(f"objective: '{objective}' is not one of {', '.join(OBJECTIVES)}")
    fields = _free_fields(free)
    tgt = target_bend_angle if target_bend_angle is not None else scenario.target_bend_angle
    if within is not None and tgt is None:
        raise ActsimInputError("--within: needs a target bend angle (--target-angle or [report] target_bend_angle)")
    if within is not None and not within > 0:
        raise ActsimInputError(f"--within: {within:g} s is outside the allowed range (> 0 s)")
    if max_temperature is not None and not scenario.heat.enabled:
        raise ActsimInputError("--max-temperature: the scenario models no heat (add a [heat] section)")
    if min_force is not None and not min_force > 0:
        raise ActsimInputError(f"--min-force: {min_force:g} N is outside the allowed range (> 0 N)")
    if within is None and min_force is None and max_temperature is None and objective == "power":
        raise ActsimInputError("inverse design: minimising power needs a target (--within, --min-force); "
                               "without one the answer is no light")
    # check the corners
    for ff in fields:
        for v in (ff.lo, ff.hi):
            build_problem(apply_overrides(scenario, {ff.path: format_value(v, ff.unit)}))

    cache: dict = {}
    state = {"scale": None, "n": 0}

    def evaluate(X):
        X = np.atleast_2d(X)
        todo = [tuple(x) for x in X if tuple(x) not in cache]
        probs, scs, keys = [], [], []
        for key in todo:
            ov = {ff.path: ff.value(u) for ff, u in zip(fields, key)}
            try:
                sc = apply_overrides(scenario, ov)
                probs.append(build_problem(sc))
                scs.append(sc)
                keys.append(key)
            except ActsimError:
                cache[key] = None
        if probs:
            r = run_batch(probs, free_length=[s.strip.free_length for s in scs], width=[s.strip.width for s in scs],
                          target_bend_angle=tgt, heat=[s.heat.enabled for s in scs], raise_on_failure=False)
            for k, key in enumerate(keys):
                if r["status"][k]:
                    cache[key] = None
                else:
                    cache[key] = {m: float(v[k]) for m, v in r["metrics"].items()}
                    cache[key]["protocol_duration"] = float(scs[k].duration)
            state["n"] += len(probs)
        return [cache[tuple(x)] for x in X]

    def constraints(m):
        return constraint_values(m, target_bend_angle=tgt, within=within, duration=m["protocol_duration"],
                                 min_force=min_force, max_temperature=max_temperature)

    def raw_objective(m):
        return m["peak_optical_power"] if objective == "power" else -abs(m["peak_blocked_force"])

    def score(X):
        X = np.asarray(X)
        cols = X.T if X.ndim == 2 else X[None, :]
        res = evaluate(cols)
        if state["scale"] is None:
            vals = [abs(raw_objective(m)) for m in res if m is not None]
            state["scale"] = max(vals) if vals and max(vals) > 0 else 1.0
        out = np.empty(len(res))
        for k, m in enumerate(res):
            if m is None:
                out[k] = 1e3
                continue
            viol = sum(max(0.0, c[4]) for c in constraints(m))
            out[k] = 10.0 + 10.0 * viol if viol > 0 else raw_objective(m) / state["scale"]
        return out if X.ndim == 2 else out[0]

    result = differential_evolution(score, [ff.bounds for ff in fields], seed=seed, maxiter=maxiter, popsize=popsize,
                                    tol=tol, atol=atol, polish=polish, vectorized=True, updating="deferred",
                                    init="sobol")
    m = evaluate(np.atleast_2d(result.x))[0]
    if m is None:
        raise ActsimInputError("inverse design: no valid design between the bounds")
    cons = []
    for name, limit, value, unit, g, kind in constraints(m):
        slack = (limit - value) if kind == "max" else (value - limit)
        cons.append({"name": name, "kind": "at most" if kind == "max" else "at least", "limit": limit,
                     "value": value if math.isfinite(value) else None, "unit": unit,
                     "slack": slack if math.isfinite(slack) else None,
                     "met": bool(g <= 0), "active": bool(g <= 0 and abs(g) < 0.02)})
    optimum = {ff.path: ff.value(u) for ff, u in zip(fields, result.x)}
    feasible = all(c["met"] for c in cons)
    return {
        "optimum": optimum,
        "optimum_si": {p: si_of(v)[0] for p, v in optimum.items()},
        "objective": objective,
        "objective_value": m["peak_optical_power"] if objective == "power" else abs(m["peak_blocked_force"]),
        "objective_unit": "W" if objective == "power" else "N",
        "metrics": m,
        "constraints": cons,
        "feasible": feasible,
        "status": "optimum" if feasible else "infeasible",
        "note": "" if feasible else "no feasible design; least-violating design shown",
        "n_evaluations": state["n"],
        "message": str(result.message),
        "log_scale": {ff.path: ff.log for ff in fields},
    }


def format_inverse(res) -> str:
    """Plain-text report of :func:`inverse_design`."""
    feasible = res.get("feasible", True)
    lines = ["optimum:" if feasible else "no feasible design; least-violating design shown:"]
    for p, v in res["optimum"].items():
        lines.append(f"  {p} = {v}")
    unit = res["objective_unit"]
    val = res["objective_value"]
    shown = f"{val * 1e3:.4g} m{unit}"
    lines.append(f"objective: {'least peak optical power on the strip' if res['objective'] == 'power' else 'largest peak blocked force'}"
                 f" = {shown}" + ("" if feasible else " (not an optimum: constraints not met)"))
    lines.append("constraints (slack >= 0: met):")
    for c in res["constraints"]:
        v = "never" if c["value"] is None else f"{c['value']:.4g}"
        s = "n/a" if c["slack"] is None else f"{c['slack']:.3g}"
        lines.append(f"  {c['name']:<20} {c['kind']} {c['limit']:.4g} {c['unit']}: value {v} {c['unit']}, slack {s} {c['unit']}"
                     f"{' (active)' if c['active'] else ''}{'' if c['met'] else '  NOT MET'}")
    lines.append(f"{'feasible' if feasible else 'NO feasible design found between the bounds'}; "
                 f"{res['n_evaluations']} designs evaluated")
    return "\n".join(lines)


__all__ = ["inverse_design", "format_inverse", "constraint_values", "OBJECTIVES"]
