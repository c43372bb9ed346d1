"""Strength and fatigue of every layer, on the stress history the strips carry.

:func:`stress_history` is a shared state of the check run (``context.stress``,
``details["stress"]``): the layered-beam stress of every cell at every output time (of the loaded
strips when a ``[joint]`` is sized, see :func:`actsim.checks.joint_checks.joint_loaded_stress`),
as a signed von Mises stress (plane strain for ``section = "plate"``, with the transverse stress of
isotropic thermal strain when heat is modelled), with the tip-loaded state at peak bend
(``[checks].tip_force``) as one more state. Two per-layer checks read it:

* :func:`yield_check`: the largest equivalent stress of the layer against its yield strength,
  with the required safety factor;
* :func:`fatigue_check`: the history at the layer's critical point (largest stress range),
  rainflow-counted, Basquin life with the Goodman, Gerber, Morrow and Smith-Watson-Topper
  corrections, Palmgren-Miner damage at ``target_cycles``.

Safety factor per layer: :math:`S_k = \\sigma_{y,k} / \\max_{t, z\\in k} \\sigma_\\mathrm{vM}(t, z)`;
fatigue: :math:`D = (N_\\text{target}/n_\\text{per run}) \\sum_i n_i/N_i \\le D_\\text{limit}`.

References
----------
.. [1] N. E. Dowling, *Mechanical Behavior of Materials*, 4th ed., Pearson, 2013
   (ch. 7 yielding, ch. 9 stress-based fatigue).
.. [2] S. P. Timoshenko and J. M. Gere, *Mechanics of Materials*, Van Nostrand
   Reinhold, 1972 (cantilever formulas).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np

from ..errors import ActsimInputError
from .context import CheckContext, CheckOutput, cell_thickness, free_curvature, layer_label
from .verdict import CheckResult, NotAssessed

__all__ = ["StressHistory", "stress_history", "tip_loaded_stress", "transverse_eigen_stress", "fatigue_life_text",
           "yield_check", "fatigue_check"]


def _equivalent_signed(sigma, nu_cell, plate: bool, transverse_eigen_stress=None):
    """Signed equivalent stress per cell: sign(sigma_x + sigma_y) * von Mises [Pa].

    The sign of the first stress invariant tells tension from compression
    (a signed von Mises stress, common practice, no source); where it is zero,
    the sign of sigma_x. Without transverse eigen-stress it is the sign of
    sigma_x, since then sigma_x + sigma_y = (1 + nu) sigma_x.
    """
    if not plate:
        return sigma
    from .strength import plate_biaxial_stress, von_mises

    eig = 0.0 if transverse_eigen_stress is None else transverse_eigen_stress
    sx, sy = plate_biaxial_stress(sigma_x=sigma, poisson_ratio=nu_cell[None, :], transverse_eigen_stress=eig)
    sgn = np.sign(sx + sy)
    sgn = np.where(sgn == 0, np.sign(sx), sgn)
    sgn = np.where(sgn == 0, 1.0, sgn)
    return sgn * von_mises(sigma_x=sx, sigma_y=sy)


def transverse_eigen_stress(scenario, ds, li):
    """Plate with heat: transverse stress of the isotropic thermal strain per (time, cell) [Pa], else None.

    sigma_y* = -E alpha (T - T_ref), E the Young's modulus = section modulus (1 - nu^2) (plane strain across
    the width, the solver's (1 + nu) alpha dT along the strip; see :func:`actsim.checks.strength.plate_biaxial_stress`).
    """
    from .strength import plate_thermal_transverse_stress

    if scenario.strip.section != "plate" or not scenario.heat.enabled or "temperature" not in ds:
        return None
    alpha = np.array([layer.material.thermal_expansion for layer in scenario.layers])[li]
    if not np.any(alpha):
        return None
    nu = np.array([layer.material.poisson_ratio for layer in scenario.layers])[li]
    young = ds["modulus"].values * (1.0 - nu[None, :] ** 2)
    return plate_thermal_transverse_stress(young_modulus=young, thermal_expansion=alpha[None, :],
                                           temperature=ds["temperature"].values,
                                           reference_temperature=scenario.heat.reference_temperature)


def _temperature_notes(limit, ds, cells) -> str:
    if limit is None or "temperature" not in limit.valid_range:
        return ""
    lo, hi = limit.valid_range["temperature"]
    if "temperature" in ds:
        t = ds["temperature"].values[:, cells]
        tmin, tmax = float(np.min(t)), float(np.max(t))
        if tmin < lo or tmax > hi:
            return (f"modelled temperature {tmin - 273.15:.1f}..{tmax - 273.15:.1f} degC lies outside the limit's "
                    f"range of validity {lo - 273.15:.0f}..{hi - 273.15:.0f} degC: the limit does not apply there")
        return f"modelled temperature {tmin - 273.15:.1f}..{tmax - 273.15:.1f} degC is within the limit's range of validity"
    return (f"temperature not modelled in this scenario: the limit's range of validity "
            f"{lo - 273.15:.0f}..{hi - 273.15:.0f} degC was not checked")


#: Life range over which Basquin constants are usually fitted, used when the constants carry no cycle range of
#: their own (typically 1e3 to 1e7 cycles; common practice, no source).
_TYPICAL_FIT_CYCLES = (1e3, 1e7)


def _fmt_cycles(x: float) -> str:
    """Cycle count for text: 1e7 rather than 1e+07, 3e5 rather than 300000."""
    if x <= 0 or not math.isfinite(x):
        return f"{x:g}"
    e = math.floor(math.log10(x))
    m = x / 10.0**e
    if abs(m - round(m)) < 1e-9:
        m = round(m)
    return f"{m:g}e{e}" if abs(e) >= 4 else f"{x:g}"


def _cycle_range(lim):
    """(lo, hi, known) cycle range of validity of a material's Basquin constants."""
    for x in (lim.fatigue_strength_coefficient, lim.fatigue_strength_exponent):
        if x is not None and "cycles" in x.valid_range:
            lo, hi = x.valid_range["cycles"]
            return float(lo), float(hi), True
    return _TYPICAL_FIT_CYCLES[0], _TYPICAL_FIT_CYCLES[1], False


def fatigue_life_text(life: float, lo: float, hi: float, known: bool) -> str:
    """Modelled life [actuation cycles] as text, never an extrapolated raw number beyond the fitted range."""
    which = "the fitted range of the constants" if known else "the usual fitted range of Basquin constants"
    if math.isinf(life):
        return "no fatigue damage counted (no stress cycle in the history)"
    if life > hi:
        return f"> {_fmt_cycles(hi)} cycles (beyond {which}; extrapolated)"
    if life < lo:
        return (f"{life:.3g} cycles (below {which}, {_fmt_cycles(lo)}..{_fmt_cycles(hi)}; extrapolated, "
                "a low-cycle estimate the stress-life method does not cover)")
    return f"{life:.3g} cycles"


def _repeat_history(h: np.ndarray) -> np.ndarray:
    """One pass of a repeated history, started and ended at its largest magnitude.

    Starting a repeated block at its largest peak lets rainflow count every
    cycle of the repetition as a closed cycle (common practice for repeated
    load blocks; Dowling 2013, ch. 9).
    """
    i = int(np.argmax(np.abs(h)))
    return np.concatenate([h[i:], h[: i + 1]])



def tip_loaded_stress(scenario, ds, tip: dict):
    """Stress through the thickness of the free strip carrying ``[checks].tip_force`` at peak bend [Pa].

    The elastica's bending moment M (largest along the strip, the clamp's while the strip does not curl back)
    changes the curvature by dk = M / EI, EI = ``ds.bending_stiffness`` at that time; bending about the neutral
    axis z_n = B/A of the section with the current modulus E(z) = ``ds.modulus`` adds
    sigma = -E(z) dk (z - z_n) to the free stress ``ds.stress`` (homogeneous strip: 6 M/(b h^2) at the faces;
    Gere and Timoshenko, Mechanics of Materials). Returns ``(row, info)``, or ``(None, reason)`` when it cannot
    be formed.
    """
    i = int(tip["time_index"])
    E = ds["modulus"].values[i]
    z = ds["z"].values
    dz = cell_thickness(scenario)
    ei = float(ds["bending_stiffness"].values[i])
    m = float(tip["largest_moment"])
    a = float(np.sum(E * dz))
    if not (math.isfinite(ei) and ei > 0 and math.isfinite(a) and a > 0 and math.isfinite(m)):
        return None, (f"the section at peak bend has no positive bending stiffness (EI = {ei:g} N m^2) "
                      "to carry the tip force")
    zn = float(np.sum(E * z * dz)) / a
    dk_load = m / ei
    dk = free_curvature(ds)[i] + dk_load - ds["curvature"].values[i]
    row = ds["stress"].values[i] - E * dk * (z - zn)
    if not np.all(np.isfinite(row)):
        return None, "the tip-loaded stress is not finite"
    info = {"time": float(ds["time"].values[i]), "tip_force": float(tip["tip_force"]), "moment": m,
            "moment_at": float(tip["largest_moment_at"]), "curvature_change": dk_load, "neutral_axis": zn,
            "stress": row}
    return row, info



@dataclass(frozen=True, eq=False)
class StressHistory:
    """The stress history the yield and fatigue checks assess.

    Attributes
    ----------
    stress : numpy.ndarray
        sigma_x per (state, cell) [Pa]: every output time, and the tip-loaded state when formed.
    transverse : numpy.ndarray or None
        Transverse eigen-stress per (state, cell) [Pa] (plate with heat), else None.
    equivalent : numpy.ndarray
        Signed equivalent (von Mises) stress per (state, cell) [Pa].
    time : numpy.ndarray
        Time of each state [s] (the tip-loaded state repeats the time of peak bend).
    plate : bool
        Wide plate in plane strain (else a narrow strip, uniaxial).
    how : str
        Whose stress it is (free strip, loaded joint strips).
    tip_index : int or None
        Index of the tip-loaded state in the history, None without one.
    tip_how : str
        How the tip-loaded state was formed (for the notes), empty without one.
    tip_reason : str
        Why the tip-loaded state could not be formed, empty otherwise.
    details : dict
        ``details["stress"]`` of ``checks.json``: ``time``, ``state``, ``history``, ``layers`` (per
        layer: ``peak_equivalent_stress`` per output time, ``peak``, ``cell_of_peak``, and
        ``tip_loaded_peak``), ``tip_load``.
    """

    stress: np.ndarray
    transverse: np.ndarray | None
    equivalent: np.ndarray
    time: np.ndarray
    plate: bool
    how: str
    tip_index: int | None
    tip_how: str
    tip_reason: str
    details: dict


def stress_history(scenario, ds, li, *, stress, how: str, tip: dict | None, tip_not_solved: str = "") -> StressHistory:
    """The equivalent stress of every cell over the protocol, with the tip-loaded state at peak bend.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
    ds : xarray.Dataset
        Its result of :func:`actsim.simulate`.
    li : numpy.ndarray
        Layer index of every cell.
    stress : numpy.ndarray
        sigma_x per (time, cell) [Pa]: ``ds.stress``, or the loaded strips' stress of a joint.
    how : str
        Whose stress it is, for the notes.
    tip : dict or None
        ``tip_load`` of the actuation state (:func:`actsim.checks.actuation.tip_load_shape`) or None.
    tip_not_solved : str, optional
        Why the tip-loaded shape of ``[checks].tip_force`` could not be solved (the actuation state's
        ``tip_load_not_solved``); the yield and fatigue checks then add a "not assessed" row with it.

    Returns
    -------
    StressHistory
        The tip-loaded state joins the history right after the peak-bend sample (the load is carried at
        peak bend, once per run of the protocol).
    """
    sigma = stress
    plate = scenario.strip.section == "plate"
    nu_layer = np.array([layer.material.poisson_ratio for layer in scenario.layers])
    nu_cell = nu_layer[li]
    eig = transverse_eigen_stress(scenario, ds, li)
    eq = _equivalent_signed(sigma, nu_cell, plate, eig)
    if not plate:
        state = "narrow strip, uniaxial stress"
    elif eig is None:
        state = "wide plate, plane strain (sigma_y = nu sigma_x)"
    else:
        state = ("wide plate, plane strain with isotropic thermal strain "
                 "(sigma_y = nu sigma_x - E alpha (T - T_ref), E = section modulus (1 - nu^2))")
    times = ds["time"].values
    sdet = {"time": times, "state": state, "history": how, "layers": {}}
    tip_ins, tip_reason = None, tip_not_solved
    sig_c, eig_c, eq_c, times_c = sigma, eig, eq, times
    if tip is not None:
        row, info = tip_loaded_stress(scenario, ds, tip)
        if row is None:
            tip_reason = info
        else:
            tip_ins = int(tip["time_index"]) + 1
            sig_c = np.insert(sigma, tip_ins, row, axis=0)
            eig_c = None if eig is None else np.insert(eig, tip_ins, eig[tip_ins - 1], axis=0)
            eq_c = _equivalent_signed(sig_c, nu_cell, plate, eig_c)
            times_c = np.insert(times, tip_ins, times[tip_ins - 1])
            sdet["tip_load"] = info
    tip_how = "" if tip_ins is None else (
        f"with the tip-loaded state at peak bend (tip_force {tip['tip_force']:g} N, bending moment "
        f"{tip['largest_moment'] * 1e3:.4g} mN m at s = {tip['largest_moment_at'] * 1e3:.3g} mm, "
        f"dk = M/EI on the free stress)")
    for k, layer in enumerate(scenario.layers):
        cells = np.flatnonzero(li == k)
        sub = np.abs(eq[:, cells])
        per_time = sub.max(axis=1)
        sdet["layers"][layer.name] = {"peak_equivalent_stress": per_time, "peak": float(per_time.max()),
                                      "cell_of_peak": int(cells[int(np.argmax(sub.max(axis=0)))])}
        if tip_ins is not None:
            per_time_c = np.abs(eq_c[:, cells]).max(axis=1)
            sdet["layers"][layer.name]["tip_loaded_peak"] = float(per_time_c[tip_ins])
    return StressHistory(stress=sig_c, transverse=eig_c, equivalent=eq_c, time=times_c, plate=plate, how=how,
                         tip_index=tip_ins, tip_how=tip_how, tip_reason=tip_reason, details=sdet)


def yield_check(ctx: CheckContext) -> CheckOutput:
    """Yield strength of layer ``ctx.layer``: its largest equivalent stress over the history (registered check).

    Not assessed without a yield strength for the layer's material in ``[checks.materials]``; with
    ``[checks].tip_force`` whose loaded state could not be formed, one more "not assessed" row says so.
    """
    from .strength import stress_check

    scenario, ds, cs, sh, k = ctx.scenario, ctx.ds, ctx.checks, ctx.stress, ctx.layer
    layer = scenario.layers[k]
    label = layer_label(k, scenario)
    cells = np.flatnonzero(ctx.layers == k)
    lim = cs.materials.get(layer.material.name)
    if lim is None or lim.yield_strength is None:
        return CheckOutput([NotAssessed(f"von Mises stress vs yield strength, {label}",
                                        f"no yield strength for material '{layer.material.name}' in [checks.materials]")])
    tip_ins = sh.tip_index
    per_time_c = np.abs(sh.equivalent[:, cells]).max(axis=1)
    r = stress_check(stress_profile=sh.stress[:, cells], layer_index=np.zeros(cells.size, dtype=np.int64),
                     yield_strength_per_layer=[lim.yield_strength], layer_names=[layer.name],
                     poisson_ratio=[layer.material.poisson_ratio] if sh.plate else None,
                     required_safety_factor=cs.required_safety_factor,
                     transverse_eigen_stress=None if sh.transverse is None else sh.transverse[:, cells])[0]
    t_note = _temperature_notes(lim.yield_strength, ds, cells)
    kt = int(np.argmax(per_time_c))
    at = (f"peak in the tip-loaded state at t = {sh.time[kt]:g} s" if tip_ins is not None and kt == tip_ins
          else f"peak at t = {sh.time[kt]:g} s")
    if tip_ins is not None:  # the time index of stress_check counts the inserted state
        r = dataclasses.replace(r, note=r.note.replace("at time index", "at history index"))
    note = "; ".join(x for x in (f"{sh.how}; {at}", sh.tip_how, r.note, t_note) if x)
    out = [dataclasses.replace(r, check=f"von Mises stress vs yield strength, {label}", note=note)]
    if sh.tip_reason:
        out.append(NotAssessed(f"von Mises stress under checks.tip_force vs yield strength, {label}",
                               f"the tip-loaded stress could not be formed: {sh.tip_reason}",
                               source=r.source, validity=r.validity))
    return CheckOutput(out)


def fatigue_check(ctx: CheckContext) -> CheckOutput:
    """Fatigue damage of layer ``ctx.layer`` per mean-stress method at its critical point (registered check).

    Not assessed without Basquin constants for the layer's material or without ``[checks].target_cycles``;
    a history that reaches the ultimate strength fails statically, before any fatigue. The details are the
    layer's entry of ``details["fatigue"]``: critical cell, counted cycles per run, life in actuation cycles
    per method (raw, and as text within the constants' fitted range), damage at the target.
    """
    from .fatigue import fatigue_life

    scenario, ds, cs, sh, k = ctx.scenario, ctx.ds, ctx.checks, ctx.stress, ctx.layer
    layer = scenario.layers[k]
    label = layer_label(k, scenario)
    cells = np.flatnonzero(ctx.layers == k)
    lim = cs.materials.get(layer.material.name)
    eq_c, tip_ins, stress_how = sh.equivalent, sh.tip_index, sh.how
    results = []
    flabel = f"fatigue (damage vs allowed damage), {label}"
    if lim is None or lim.fatigue_strength_coefficient is None:
        return CheckOutput([NotAssessed(flabel, f"no Basquin constants for material '{layer.material.name}' in [checks.materials]")])
    if cs.target_passes is None:
        return CheckOutput([NotAssessed(flabel, "no target_cycles in [checks]")])
    if sh.tip_reason:
        results.append(NotAssessed(f"fatigue (damage) under checks.tip_force vs allowed damage, {label}",
                                   f"the tip-loaded stress could not be formed: {sh.tip_reason}"))
    rng = eq_c[:, cells].max(axis=0) - eq_c[:, cells].min(axis=0)
    c = int(cells[int(np.argmax(rng))])
    hist = _repeat_history(eq_c[:, c])
    methods = [m for m in cs.mean_stress_methods if lim.ultimate_strength is not None or m not in ("goodman", "gerber")]
    if not methods:
        results.append(NotAssessed(flabel, "Goodman/Gerber need ultimate_strength, which is not given"))
        return CheckOutput(results)
    u_lim = lim.ultimate_strength
    u_val = getattr(u_lim, "value", u_lim)
    peak = float(np.max(np.abs(hist)))
    if u_val is not None and peak >= u_val:
        # the simulated stress itself reaches the ultimate strength: the design fails statically,
        # before any fatigue (a failing check, not bad input)
        results.append(CheckResult.upper_bound(
            check=f"fatigue: peak stress vs ultimate strength (static failure), {label}", value=peak, limit=float(u_val), unit="Pa",
            source=getattr(u_lim, "source", "material limits"), validity=getattr(u_lim, "validity", ""),
            note=f"the cyclic stress at {label} reaches the ultimate strength; no fatigue life is computed",
        ))
        return CheckOutput(results)
    try:
        fr = fatigue_life(hist, fatigue_strength_coefficient=lim.fatigue_strength_coefficient,
                          fatigue_strength_exponent=lim.fatigue_strength_exponent,
                          ultimate_strength=lim.ultimate_strength, methods=methods,
                          target_passes=cs.target_passes, damage_limit=cs.damage_limit,
                          credit_compressive_mean=cs.credit_compressive_mean)
    except ActsimInputError as exc:
        raise ActsimInputError(f"checks.materials.{layer.material.name} ({label} fatigue): {exc}") from None
    where = (f"critical point: cell {c} (z = {ds['z'].values[c] * 1e6:.4g} um), largest stress range "
             f"{rng.max() / 1e6:.4g} MPa; {stress_how}"
             + ("" if tip_ins is None else f"; {sh.tip_how}, once per run")
             + f"; {cs.target_cycles:g} actuation cycles = {cs.target_passes:g} runs of the protocol")
    t_note = _temperature_notes(lim.fatigue_strength_coefficient, ds, cells)
    freq = cs.cycles_per_protocol / scenario.duration
    f_rng = lim.fatigue_strength_coefficient.valid_range.get("frequency")
    if f_rng is not None and not (f_rng[0] <= freq <= f_rng[1]):
        t_note = "; ".join(x for x in (t_note, f"actuation frequency {freq:.3g} Hz lies outside the constants' range "
                                                f"of validity {f_rng[0]:g}..{f_rng[1]:g} Hz") if x)
    lo, hi, known = _cycle_range(lim)
    life = {m: fr.passes_to_failure[m] * cs.cycles_per_protocol for m in fr.passes_to_failure}
    life_text = {m: fatigue_life_text(life[m], lo, hi, known) for m in life}
    for m_key, r in zip(methods, fr.checks):
        meth = r.check[r.check.find("(") + 1: r.check.rfind(")")]
        # the raw life stays in the details (checks.json); the note shows it only within the fitted range
        raw = f"modelled {fr.passes_to_failure[m_key]:.4g} passes to the damage limit"
        shown = f"modelled life {life_text[m_key]}"
        if cs.cycles_per_protocol != 1.0 and life[m_key] <= hi and math.isfinite(life[m_key]):
            shown += f" ({fr.passes_to_failure[m_key]:.4g} runs of the protocol)"
        note = r.note.replace(raw, shown) if raw in r.note else "; ".join((r.note, shown))
        results.append(dataclasses.replace(r, check=f"fatigue damage ({meth}) vs allowed damage, {label}",
                                           note="; ".join(x for x in (note, where, t_note) if x)))
    return CheckOutput(results, {
        "critical_cell": c,
        "cycles_per_run": fr.cycles,
        "governing_method": fr.governing_method,
        "life_cycles": life,
        "life_text": life_text,
        "fitted_cycle_range": [lo, hi],
        "fitted_cycle_range_source": "the constants' range of validity" if known else
                                     "usual fitted range of Basquin constants (common practice, no source)",
        "damage_at_target": {m: fr.damage_per_pass[m] * cs.target_passes for m in fr.damage_per_pass},
    })
