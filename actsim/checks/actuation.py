"""Actuation state of the free strip: peak bend, large-deflection blocked force, load line, tip load.

Details, no verdict: :func:`actuation_state` is computed once per check run (``context.actuation``,
``details["actuation"]`` of ``checks.json``); the tip-loaded shape enters the strength and fatigue
checks (:mod:`actsim.checks.mechanical`) and the load line the lever joint
(:mod:`actsim.checks.joint_checks`).

References
----------
.. [1] S. P. Timoshenko and J. M. Gere, *Mechanics of Materials*, Van Nostrand Reinhold, 1972
   (cantilever formulas).
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import ActsimInputError
from .context import CheckContext, CheckOutput, free_curvature
from .settings import CheckSettings
from .verdict import NotAssessed

__all__ = ["actuation_state", "tip_load_shape", "elastica_check", "ELASTICA_CHECK"]

#: Name of the "not assessed" row when the large-deflection state could not be solved.
ELASTICA_CHECK = "large-deflection blocked force and load line"


def actuation_state(scenario, ds, cs: CheckSettings, *, elastica: bool, budget=None, progress: bool = False) -> dict:
    """Peak bend, large-deflection blocked force, load line and tip-loaded shape of the free strip.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
    ds : xarray.Dataset
        Its result of :func:`actsim.simulate`.
    cs : actsim.checks.settings.CheckSettings
        Parsed ``[checks]`` (``tip_force`` [N] is used).
    elastica : bool
        Solve the elastica blocked force at every output time and the load line at peak bend.
    budget : actsim.elastica.SolveBudget, optional
        Time and solve-count limit of all the large-deflection solves here (default 20 s).
    progress : bool, optional
        Show a progress line on stderr when the blocked forces take more than 2 s.

    Returns
    -------
    dict
        ``time`` [s], ``small_deflection_blocked_force`` [N], ``peak_time`` [s], ``peak_curvature``
        [1/m], ``peak_bend_angle`` [rad], ``peak_bending_stiffness`` [N m^2], ``peak_index``, ``notes``;
        ``tip_load`` (:func:`tip_load_shape`) with ``[checks].tip_force``; with ``elastica``:
        ``blocked_force`` per output time [N], ``peak_blocked_force`` [N] and its time [s], and
        ``load_line`` (displacement [m], force [N], tip_x [m], work [J]). Whatever could not be
        solved (a bend past a full turn, no convergence, the budget used up) is left out, with
        the reason in ``notes``; ``not_assessed`` (str) then says what is missing and why, and
        ``tip_load_not_solved`` (str) why the tip-loaded shape is missing.
    """
    from ..elastica import FULL_TURN, ElasticaLimitError, SolveBudget, blocked_tip_force, load_line, progress_bar
    from ..solve_budget import user_reason

    budget = SolveBudget() if budget is None else budget

    L = scenario.strip.free_length
    kappa = free_curvature(ds)
    ei = ds["bending_stiffness"].values
    times = ds["time"].values
    i_peak = int(np.argmax(np.abs(kappa)))
    out = {
        "time": times,
        "small_deflection_blocked_force": ds["blocked_force"].values,
        "peak_time": float(times[i_peak]),
        "peak_curvature": float(kappa[i_peak]),
        "peak_bend_angle": float(kappa[i_peak] * L),
        "peak_bending_stiffness": float(ei[i_peak]),
        "peak_index": i_peak,
        "notes": [],
    }
    # what the large-deflection part could not give, and why (the "not assessed" row); why = None: past a full turn
    missing: list[tuple[str, str | None]] = []
    beyond = np.abs(kappa) * L > FULL_TURN
    range_text = ""
    if np.any(beyond):
        i0 = int(np.argmax(beyond))
        range_text = (f"the strip bends past a full turn (360 degrees) from t = {times[i0]:g} s on (peak "
                      f"{abs(math.degrees(out['peak_bend_angle'])):.4g} degrees at t = {out['peak_time']:g} s); the "
                      "large-deflection model has no contact of the strip with itself and is outside its range there")
    peak_beyond = bool(beyond[i_peak])
    if cs.tip_force is not None:  # solved with or without the elastica blocked force: it enters the strength check
        reason = range_text if peak_beyond else ""
        if not reason:
            try:
                out["tip_load"] = tip_load_shape(length=L, curvature=out["peak_curvature"],
                                                 bending_stiffness=out["peak_bending_stiffness"],
                                                 tip_force=cs.tip_force, time_index=i_peak, budget=budget)
            except ElasticaLimitError as exc:
                reason = str(exc)
        if reason:
            out["tip_load_not_solved"] = reason
            out["notes"].append(f"shape under checks.tip_force not solved: {reason}")
    if not elastica:
        out["notes"].append("large-deflection (elastica) blocked force and load line skipped (--no-elastica)")
        return out
    force = np.full(times.size, np.nan)
    cache: dict = {}
    failed_at = None
    n_failed = 0
    with progress_bar(times.size, "large deflection: blocked force", on=progress) as bar:
        for i, (k, e) in enumerate(zip(kappa, ei)):
            bar.update(1)
            if k == 0.0:
                force[i] = 0.0
                continue
            if beyond[i]:
                continue  # NaN: outside the model's range (counted below)
            key = (float(k), float(e))
            if key in cache:
                force[i] = cache[key]
                n_failed += int(np.isnan(cache[key]))
                continue
            f = np.nan
            try:
                f = blocked_tip_force(length=L, bending_stiffness=float(e), spontaneous_curvature=float(k),
                                      budget=budget).force
            except (ActsimInputError, ElasticaLimitError) as exc:
                n_failed += 1
                if failed_at is None:
                    failed_at = (float(times[i]), user_reason(exc))
            cache[key] = f
            force[i] = f
    out["blocked_force"] = force
    n_beyond = int(np.count_nonzero(beyond))
    if n_beyond:
        missing.append((f"blocked force at {n_beyond} of {times.size} output times", None))
    if failed_at is not None:
        missing.append((f"blocked force at {n_failed} of {times.size} output times, first at t = {failed_at[0]:g} s",
                        failed_at[1]))
    fin = np.isfinite(force)
    if np.any(fin):
        j = int(np.nanargmax(np.abs(np.where(fin, force, 0.0))))
        out["peak_blocked_force"] = float(force[j])
        out["peak_blocked_force_time"] = float(times[j])
    k_peak, e_peak = out["peak_curvature"], out["peak_bending_stiffness"]
    if k_peak != 0.0:
        reason = range_text if peak_beyond else ""
        if not reason:
            try:
                ll = load_line(length=L, bending_stiffness=e_peak, spontaneous_curvature=abs(k_peak), budget=budget)
                out["load_line"] = {
                    "time": out["peak_time"],
                    "displacement": ll.displacement,
                    "force": ll.force,
                    "tip_x": ll.tip_x,
                    "work": ll.work,
                    "_object": ll,
                }
            except (ActsimInputError, ElasticaLimitError) as exc:
                reason = user_reason(exc)
        if reason:
            out["load_line_not_solved"] = reason
            missing.append(("the load line at peak bend", None if peak_beyond else reason))
    if missing:
        in_range = [what for what, why in missing if why is None]
        parts = ([f"{range_text} (not solved: {', '.join(in_range)})"] if in_range else [])
        parts += [f"{what} not solved: {why}" for what, why in missing if why is not None]
        out["not_assessed"] = "; ".join(parts)
    return out


def elastica_check(ctx: CheckContext) -> CheckOutput:
    """A "not assessed" row when the large-deflection blocked force or load line could not be solved (registered check).

    No row when they were solved (they are details, not verdicts) or not asked for (``elastica=False``).
    """
    reason = ctx.actuation.get("not_assessed")
    if not reason:
        return CheckOutput([])
    return CheckOutput([NotAssessed(ELASTICA_CHECK, reason,
                                    validity="bends up to a full turn (360 degrees); no contact of the strip with itself")])


def tip_load_shape(*, length: float, curvature: float, bending_stiffness: float, tip_force: float,
                   time_index: int, budget=None) -> dict:
    """Large-deflection shape under ``[checks].tip_force`` at peak bend, with the bending moment it adds.

    The moment ``EI (theta' - kappa0)`` of the dead tip force is largest at the
    clamp while the strip does not curl back past its tip; the largest
    magnitude along the strip is kept (``largest_moment``) for the strength check.

    Parameters
    ----------
    length : float
        Free length of the strip [m].
    curvature : float
        Free curvature at peak bend [1/m]; the force opposes the bend.
    bending_stiffness : float
        Bending stiffness at peak bend [N m^2].
    tip_force : float
        Dead tip force, normal to the clamped strip [N].
    time_index : int
        Output time of peak bend (kept in the result).
    budget : actsim.elastica.SolveBudget, optional
        Time and solve-count limit of the solves (default 20 s).

    Returns
    -------
    dict
        ``tip_force`` [N], ``tip_x``, ``tip_y`` [m], ``tip_angle`` [rad], ``clamp_moment``,
        ``largest_moment`` [N m] and where it acts ``largest_moment_at`` [m], ``time_index``, ``note``.

    Raises
    ------
    ActsimInputError
        When the elastica is not solved under that force (the message names the largest load solved).
    actsim.elastica.ElasticaLimitError
        When the budget's time or solve-count limit is reached.
    """
    L, k_peak, e_peak, i_peak = length, curvature, bending_stiffness, time_index
    from ..elastica import cantilever_shape

    sgn = 1.0 if k_peak >= 0 else -1.0

    def solve(f):
        return cantilever_shape(length=L, bending_stiffness=e_peak, spontaneous_curvature=k_peak, tip_force=(0.0, -sgn * f),
                                budget=budget)

    try:
        shape = solve(tip_force)
    except ActsimInputError as exc:
        # back off by decades to tell the user the largest load that was solved
        solved = None
        f = tip_force
        for _ in range(8):
            f /= 10.0
            try:
                solve(f)
                solved = f
                break
            except ActsimInputError:
                continue
        largest = f"largest load solved {solved:.3g} N" if solved is not None else "no load down to 1e-8 of it was solved"
        reason = str(exc).split(": ", 1)[-1]
        raise ActsimInputError(
            f"checks.tip_force: {tip_force:g} N is too large for the elastica at peak bend ({largest}; {reason})"
        ) from None
    m = np.asarray(shape.bending_moment, dtype=float)
    j = int(np.argmax(np.abs(m)))
    return {
        "tip_force": tip_force,
        "tip_x": shape.tip_x,
        "tip_y": shape.tip_y,
        "tip_angle": shape.tip_angle,
        "clamp_moment": float(m[0]),
        "largest_moment": float(m[j]),
        "largest_moment_at": float(shape.s[j]),
        "time_index": int(i_peak),
        "note": "dead tip force normal to the clamped strip, opposing the bend, at the time of peak bend",
    }
