"""Run every design check of a scenario on its simulated result.

:func:`run_checks` takes a scenario (with its optional ``[checks]``,
``[safety]`` and ``[joint]`` sections, see :mod:`actsim.checks.settings`) and
the dataset of :func:`actsim.simulate`, and returns the list of check results
with a dictionary of details (time series, counted cycles, the load line, the
joint's margin at each angle ...). The checks are:

1. **Strength**: von Mises stress of every cell at every output time (biaxial
   plane-strain state for ``section = "plate"``, with the transverse stress
   of isotropic thermal strain when heat is modelled), the largest per layer against
   the layer's yield strength, with the required safety factor. With
   ``[checks].tip_force`` the tip-loaded state at peak bend is one more state of
   the history (the elastica's bending moment M adds the bending stress of
   dk = M/EI about the neutral axis), for this check and for fatigue.
2. **Fatigue**: the stress history at the critical point of each layer
   (largest stress range), counted by rainflow, Basquin life with the
   Goodman, Gerber, Morrow and Smith-Watson-Topper corrections and the
   Palmgren-Miner sum against ``target_cycles``; the most conservative method
   is flagged.
3. **Actuation** (details, no verdict): the large-deflection blocked force at
   every output time (elastica), and the load line with the work the tip can
   do at the time of peak bend; with ``[checks].tip_force``, the shape under
   that dead load.
4. **Joint** (with ``[joint]``): the moment the strips deliver against the
   payload's gravity moment at each angle, the number of strips needed with
   the safety factor, the plausibility of that stack (its total thickness
   against the hinge length or lever arm, at most 1000 strips), and the stress of the loaded strips over time (used by
   checks 1 and 2 instead of the free-strip stress).
5. **Light at the exposure position** (UV and visible sources): actinic UV,
   UV-A and blue-light hazards of the protocol, repeated over the exposure
   duration (:func:`actsim.checks.exposure.protocol_check`); without
   ``[safety].exposure_duration``, 8 h of repeated use (the daily reference
   of the ICNIRP / IEC 62471 limits), never a single run.
6. **Skin contact** (``[safety].skin_contact = true``): the peak modelled
   temperature of the contacting face against the skin-contact limit; if the
   scenario has no temperature model, a "not assessed" entry (never a pass).

A check that cannot be made is reported as :class:`NotAssessed`, never left
out silently. Verdicts say "within the modelled limit of <source>", never
"safe"; print them with :data:`actsim.cautions.CAUTION`.

References
----------
.. [1] N. E. Dowling, *Mechanical Behavior of Materials*, 4th ed., Pearson, 2013
   (ch. 7 yielding, ch. 9 stress-based fatigue).
.. [2] S. P. Timoshenko and J. M. Gere, *Mechanics of Materials*, Van Nostrand
   Reinhold, 1972 (cantilever formulas).
"""

from __future__ import annotations

import csv
import dataclasses
import math
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .. import io
from ..cautions import caution_lines
from ..errors import ActsimInputError
from .settings import CheckSettings, SafetySettings
from .verdict import CheckResult, _fmt_margin
from .verdict import format_quantity as _fmt_quantity  # local short name (format_results below)

__all__ = ["NotAssessed", "run_checks", "format_results", "write_checks", "any_failed", "CHECKS_JSON", "CHECKS_CSV"]

CHECKS_JSON = "checks.json"
CHECKS_CSV = "checks.csv"

_STRESS_SOURCE_NOTE = "layered-beam stress at cell centres"

#: Exposure assessed when ``[safety].exposure_duration`` is not given: one working day of repeated use, the
#: 8 h daily reference of the ICNIRP (2004) / IEC 62471:2006 exposure limits [s].
_DEFAULT_EXPOSURE = 8.0 * 3600.0


@dataclass(frozen=True)
class NotAssessed:
    """A check that could not be made, with the reason (never counted as a pass).

    Attributes
    ----------
    check : str
        What would have been checked.
    reason : str
        Why it was not assessed, and what would make it possible.
    source : str
        The limit's source, when known.
    validity : str
        Range of validity, when known.
    """

    check: str
    reason: str
    source: str = ""
    validity: str = ""

    passed = None  # neither pass nor fail

    @property
    def verdict(self) -> str:
        return f"not assessed: {self.reason}"


# ---------------------------------------------------------------------------
# helpers


def _free_curvature(ds) -> np.ndarray:
    """Curvature the strip takes when free at each output time [1/m]."""
    return ds["free_curvature"].values if "free_curvature" in ds else ds["curvature"].values


def _layer_index(scenario) -> np.ndarray:
    return np.concatenate([np.full(layer.cells, i, dtype=np.int64) for i, layer in enumerate(scenario.layers)])


def _cell_dz(scenario) -> np.ndarray:
    return np.concatenate([np.full(layer.cells, layer.thickness / layer.cells) for layer in scenario.layers])


def _layer_label(k, scenario) -> str:
    return f"layer {k} ({scenario.layers[k].name})"


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


def _transverse_eigen_stress(scenario, ds, li):
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


def _life_text(life: float, lo: float, hi: float, known: bool) -> str:
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


# ---------------------------------------------------------------------------
# actuation: large-deflection blocked force, load line, tip load


def _actuation(scenario, ds, cs: CheckSettings, *, elastica: bool):
    from ..elastica import blocked_tip_force, load_line

    L = scenario.strip.free_length
    kappa = _free_curvature(ds)
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
    if cs.tip_force is not None:  # solved with or without the elastica blocked force: it enters the strength check
        out["tip_load"] = _tip_load(L, out["peak_curvature"], out["peak_bending_stiffness"], cs, i_peak)
    if not elastica:
        out["notes"].append("large-deflection (elastica) blocked force not computed (elastica=False)")
        return out
    force = np.full(times.size, np.nan)
    cache: dict = {}
    failed_at = None
    for i, (k, e) in enumerate(zip(kappa, ei)):
        if k == 0.0:
            force[i] = 0.0
            continue
        key = (float(k), float(e))
        if key in cache:
            force[i] = cache[key]
            continue
        try:
            f = blocked_tip_force(length=L, bending_stiffness=float(e), spontaneous_curvature=float(k)).force
        except ActsimInputError as exc:
            if failed_at is None:
                failed_at = (float(times[i]), str(exc))
            f = np.nan
        cache[key] = f
        force[i] = f
    out["blocked_force"] = force
    if failed_at is not None:
        out["notes"].append(f"elastica blocked force not solved from t = {failed_at[0]:g} s on ({failed_at[1]})")
    fin = np.isfinite(force)
    if np.any(fin):
        j = int(np.nanargmax(np.abs(np.where(fin, force, 0.0))))
        out["peak_blocked_force"] = float(force[j])
        out["peak_blocked_force_time"] = float(times[j])
    k_peak, e_peak = out["peak_curvature"], out["peak_bending_stiffness"]
    if k_peak != 0.0:
        try:
            ll = load_line(length=L, bending_stiffness=e_peak, spontaneous_curvature=abs(k_peak))
            out["load_line"] = {
                "time": out["peak_time"],
                "displacement": ll.displacement,
                "force": ll.force,
                "tip_x": ll.tip_x,
                "work": ll.work,
                "_object": ll,
            }
        except ActsimInputError as exc:
            out["notes"].append(f"load line at peak bend not solved ({exc})")
    return out


def _tip_load(L, k_peak, e_peak, cs: CheckSettings, i_peak: int) -> dict:
    """Large-deflection shape under ``[checks].tip_force`` at peak bend, with the bending moment it adds.

    The moment ``EI (theta' - kappa0)`` of the dead tip force is largest at the
    clamp while the strip does not curl back past its tip; the largest
    magnitude along the strip is kept (``largest_moment``) for the strength check.
    """
    from ..elastica import cantilever_shape

    sgn = 1.0 if k_peak >= 0 else -1.0

    def solve(f):
        return cantilever_shape(length=L, bending_stiffness=e_peak, spontaneous_curvature=k_peak, tip_force=(0.0, -sgn * f))

    try:
        shape = solve(cs.tip_force)
    except ActsimInputError as exc:
        # back off by decades to tell the user the largest load that was solved
        solved = None
        f = cs.tip_force
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
            f"checks.tip_force: {cs.tip_force:g} N is too large for the elastica at peak bend ({largest}; {reason})"
        ) from None
    m = np.asarray(shape.bending_moment, dtype=float)
    j = int(np.argmax(np.abs(m)))
    return {
        "tip_force": cs.tip_force,
        "tip_x": shape.tip_x,
        "tip_y": shape.tip_y,
        "tip_angle": shape.tip_angle,
        "clamp_moment": float(m[0]),
        "largest_moment": float(m[j]),
        "largest_moment_at": float(shape.s[j]),
        "time_index": int(i_peak),
        "note": "dead tip force normal to the clamped strip, opposing the bend, at the time of peak bend",
    }


# ---------------------------------------------------------------------------
# joint


def _joint(scenario, ds, js, cs: CheckSettings, act: dict):
    from .. import joint as jt

    sf = cs.required_safety_factor
    phi = np.linspace(js.angle_start, js.angle_end, js.angle_points)
    rot = phi - js.angle_start
    sign_g = 1.0 if js.gravity_direction == "down" else -1.0
    m_req = sign_g * np.atleast_1d(jt.gravity_moment(list(js.payload), phi)) + js.extra_moment
    k0 = abs(act["peak_curvature"])
    ei = act["peak_bending_stiffness"]
    out = {"angle": phi, "required_moment": m_req, "mounting": js.mounting, "safety_factor": sf,
           "time_of_sizing": act["peak_time"], "notes": []}
    if js.mounting == "hinge":
        m1 = np.atleast_1d(jt.hinge_moment(bending_stiffness=ei, spontaneous_curvature=k0, hinge_length=js.hinge_length,
                                           joint_rotation=rot))
        model = (f"strips are the flexure hinge ({js.hinge_length * 1e3:.4g} mm): M = EI (kappa0 - rotation / length), "
                 "pure end moment (circular arc)")
    else:
        if "load_line" not in act:
            return out, [NotAssessed("joint moment (lever)", "no load line at peak bend (elastica not solved or not run)")]
        m1 = np.atleast_1d(jt.lever_moment_over_travel(load_line=act["load_line"]["_object"], lever_arm=js.lever_arm,
                                                      joint_angle=phi, start_angle=js.angle_start))
        model = f"strip tips push a lever of {js.lever_arm * 1e3:.4g} mm with the force of their load line"
    out["moment_per_strip"] = m1
    need = m_req > 0
    reach = need & (m1 <= 0)
    n_needed = None
    if not np.any(reach):
        n_needed = jt.strips_needed(required_moment=m_req, moment_per_strip=m1, safety_factor=sf).n
    out["strips_needed"] = n_needed
    n = js.strips if js.strips is not None else n_needed
    source = "static moment balance of the joint (rigid links, no friction or inertia)"
    validity = (f"{model}; strip moment from the layered-beam model at the time of peak bend "
                f"(t = {act['peak_time']:g} s); angles {math.degrees(js.angle_start):.4g}..{math.degrees(js.angle_end):.4g} deg")
    results = []
    if n is None:
        i = int(np.argmax(reach))
        free = k0 * js.hinge_length if js.mounting == "hinge" else None
        why = (f"the free bend {math.degrees(free):.4g} deg is less than the travel to {math.degrees(phi[i]):.4g} deg"
               if free is not None else f"the strip tips lose contact with the lever before {math.degrees(phi[i]):.4g} deg")
        results.append(CheckResult.upper_bound(
            check="joint moment (no number of strips reaches the end angle)", value=float(m_req[i]), limit=0.0, unit="N m",
            source=source, validity=validity, required_margin=sf,
            note=f"{why}: no number of strips lifts the payload there; lengthen the hinge or raise the curvature",
        ))
        out["strips"] = None
        out["loaded_rotation"] = None
        return out, results
    avail = n * m1
    with np.errstate(divide="ignore", invalid="ignore"):
        factor = np.where(need, avail / np.where(need, m_req, 1.0), np.inf)
    g = int(np.argmin(factor))
    out.update(strips=n, available_moment=avail, achieved_factor=factor, governing_angle=float(phi[g]))
    note = (f"{n} strip{'s' if n != 1 else ''} ({'solved' if js.strips is None else 'given'}); "
            f"{n_needed if n_needed is not None else 'no number of'} needed for a factor {sf:g}; "
            f"governing angle {math.degrees(phi[g]):.4g} deg; smallest factor over the lift {float(factor[g]):.3g}")
    if not np.any(need):
        note += "; gravity drives the joint at every angle: it needs a stop or a brake"
    results.append(CheckResult.upper_bound(
        check=f"joint moment, {n} strip{'s' if n != 1 else ''} ({js.mounting})", value=max(float(m_req[g]), 0.0),
        limit=max(float(avail[g]), 0.0), unit="N m", source=source, validity=validity, required_margin=sf, note=note,
    ))
    results.append(_stack_check(scenario, js, n, out))
    # loaded strip over time: the link rises from its start stop to the first equilibrium (or the end stop)
    kappa = _free_curvature(ds)
    eis = ds["bending_stiffness"].values
    rot_t = np.zeros(kappa.size)
    if js.mounting == "hinge":
        for i, (k, e) in enumerate(zip(kappa, eis)):
            a = n * e * (abs(k) - rot / js.hinge_length) - m_req
            if a[0] < 0:
                rot_t[i] = 0.0
            elif np.all(a >= 0):
                rot_t[i] = rot[-1]
            else:
                j = int(np.argmax(a < 0))
                rot_t[i] = rot[j - 1] + (rot[j] - rot[j - 1]) * a[j - 1] / (a[j - 1] - a[j])
        out["loaded_rotation"] = rot_t
        out["notes"].append("loaded strips: the link rises from its start stop to the first equilibrium angle (or its end stop)")
    else:
        out["loaded_rotation"] = None
    return out, results


#: Most strips a joint is taken to be built of before the design is called implausible (common practice, no source).
_MAX_STRIPS = 1000


def _stack_check(scenario, js, n: int, out: dict) -> CheckResult:
    """Plausibility of n strips stacked in parallel: total thickness against the joint's length scale.

    The moment balance treats the strips as independent, each bending freely; a stack thicker than the hinge
    is long (hinge mounting) or than the lever arm (lever mounting) is no longer a set of thin strips (their
    neighbours' clamps, spacing and shear are not modelled), and neither is a stack of more than
    ``_MAX_STRIPS`` strips (common practice, no source). The check fails there.
    """
    h = float(sum(layer.thickness for layer in scenario.layers))
    stack = n * h
    length, what = ((js.hinge_length, "hinge length") if js.mounting == "hinge" else (js.lever_arm, "lever arm"))
    limit = min(length, _MAX_STRIPS * h)
    out.update(stack_thickness=stack, strip_thickness=h, stack_limit=limit)
    by = what if length <= _MAX_STRIPS * h else f"{_MAX_STRIPS} strips"
    note = (f"{n} strip{'s' if n != 1 else ''} x {h * 1e6:.4g} um = {stack * 1e3:.4g} mm of stacked strips; "
            f"limit the {what} ({length * 1e3:.4g} mm) or {_MAX_STRIPS} strips ({_MAX_STRIPS * h * 1e3:.4g} mm), "
            f"whichever is smaller ({by})")
    plausible = stack <= limit
    out["plausible"] = plausible
    if not plausible:
        reasons = []
        if stack > length:
            reasons.append(f"the stack is thicker than the {what}")
        if n > _MAX_STRIPS:
            reasons.append(f"more than {_MAX_STRIPS} strips")
        note += (f"; the design is not plausible as a stack of strips ({' and '.join(reasons)}): "
                 "raise the strips' moment (curvature, thickness, width) or change the joint")
    return CheckResult.upper_bound(
        check=f"joint stack of {n} strip{'s' if n != 1 else ''} ({js.mounting}): total thickness", value=stack,
        limit=limit, unit="m", source="plausibility of a stack of thin strips (common practice, no source)",
        validity="strips modelled as independent thin strips bending side by side", note=note,
    )


def _loaded_stress(scenario, ds, js, jd, act):
    """Stress of the strips while they carry the joint, per output time [Pa]."""
    sigma = ds["stress"].values
    E = ds["modulus"].values
    z = ds["z"].values
    dz = _cell_dz(scenario)
    zn = (E * z[None, :] * dz[None, :]).sum(axis=1) / (E * dz[None, :]).sum(axis=1)
    kappa = ds["curvature"].values
    if js.mounting == "hinge":
        sgn = np.where(_free_curvature(ds) >= 0, 1.0, -1.0)
        dk = sgn * jd["loaded_rotation"] / js.hinge_length - kappa
        how = "strips held at the loaded hinge angle (curvature = rotation / hinge length)"
    else:
        f = act.get("blocked_force")
        if f is None:
            return None, ""
        f = np.nan_to_num(f, nan=0.0)
        dk = -f * scenario.strip.free_length / ds["bending_stiffness"].values
        how = "strip tips blocked by the lever (clamp moment F_blocked L; conservative)"
    return sigma - E * dk[:, None] * (z[None, :] - zn[:, None]), how


def _tip_loaded_stress(scenario, ds, tip: dict):
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
    dz = _cell_dz(scenario)
    ei = float(ds["bending_stiffness"].values[i])
    m = float(tip["largest_moment"])
    a = float(np.sum(E * dz))
    if not (math.isfinite(ei) and ei > 0 and math.isfinite(a) and a > 0 and math.isfinite(m)):
        return None, (f"the section at peak bend has no positive bending stiffness (EI = {ei:g} N m^2) "
                      "to carry the tip force")
    zn = float(np.sum(E * z * dz)) / a
    dk_load = m / ei
    dk = _free_curvature(ds)[i] + dk_load - ds["curvature"].values[i]
    row = ds["stress"].values[i] - E * dk * (z - zn)
    if not np.all(np.isfinite(row)):
        return None, "the tip-loaded stress is not finite"
    info = {"time": float(ds["time"].values[i]), "tip_force": float(tip["tip_force"]), "moment": m,
            "moment_at": float(tip["largest_moment_at"]), "curvature_change": dk_load, "neutral_axis": zn,
            "stress": row}
    return row, info


# ---------------------------------------------------------------------------
# light and skin


def _exposure_protocol(scenario, ss: SafetySettings):
    from .light_spectrum import spectrum_from_light_source

    steps = []
    for st in scenario.protocol:
        spec = None
        for src, e in zip(scenario.sources, st.irradiance):
            if e > 0:
                s = spectrum_from_light_source(src, irradiance=e)
                spec = s if spec is None else spec + s
        steps.append((st.duration, spec, float(sum(st.irradiance))))
    peak = max(s[2] for s in steps)
    if ss.exposure_irradiance is not None:
        factor = ss.exposure_irradiance / peak
        where = f"{ss.exposure_irradiance:g} W/m^2 at the exposure position during the brightest step"
    elif ss.exposure_distance_factor is not None:
        factor = ss.exposure_distance_factor
        where = f"exposure position receives {factor:g} x the irradiance at the strip"
    else:
        factor = 1.0
        where = "exposure position taken at the strip (no [safety] exposure factor given: conservative)"
    T = scenario.duration
    if ss.exposure_duration is not None:
        D = ss.exposure_duration
        field = f"safety.exposure_duration: {D:g} s"
    else:
        # no duration given: a working day of repeated use (the 8 h daily reference of the ICNIRP/IEC 62471 limits);
        # a protocol longer than that is assessed whole
        D = max(T, _DEFAULT_EXPOSURE)
        where += "; exposure_duration not given: 8 h of repeated use assessed"
        if T > _DEFAULT_EXPOSURE:
            where += " (the protocol is longer: its whole duration)"
        field = f"safety.exposure_duration: not given, so the 8 h default ({D:g} s)"
    seq = []
    t = 0.0
    while t < D * (1 - 1e-12):
        for d, spec, _ in steps:
            d = min(d, D - t)
            if d <= 0:
                break
            sp = None if spec is None else spec.scaled(factor)
            if seq and seq[-1][1] is None and sp is None:
                seq[-1] = (seq[-1][0] + d, None)
            else:
                seq.append((d, sp))
            t += d
        if len(seq) > 200000:
            raise ActsimInputError(f"{field} repeats the protocol too often (> 200000 steps); "
                                   "give a shorter exposure_duration or use a longer protocol")
    reps = D / T
    return seq, factor, where, D, reps


def _light_checks(scenario, ss: SafetySettings):
    from .exposure import protocol_check

    if not scenario.sources or all(sum(st.irradiance) == 0 for st in scenario.protocol):
        return [], {"assessed": False, "reason": "no light in the protocol"}
    wl = np.concatenate([s.band_wavelength for s in scenario.sources])
    if not np.any((wl >= 180e-9) & (wl <= 700e-9)):
        return [NotAssessed("photobiological exposure", "all sources lie outside 180-700 nm: infrared hazards are not modelled")], \
            {"assessed": False}
    try:
        seq, factor, where, D, reps = _exposure_protocol(scenario, ss)
    except ActsimInputError as exc:
        if ss.exposure_duration is not None:
            raise
        # the 8 h default was not chosen by the user: report the check as not made rather than stop the run
        return [NotAssessed("photobiological exposure", f"{exc}; set [safety] exposure_duration",
                            source="ICNIRP 2004 / IEC 62471")], {"assessed": False, "reason": str(exc)}
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        results, summary = protocol_check(seq)
    extra = [str(w.message) for w in caught]
    note = f"{where}; {D:g} s of exposure ({reps:.4g} runs of the protocol)"
    out = []
    for r in results:
        out.append(dataclasses.replace(r, check=f"light at the exposure position: {r.check}",
                                       note="; ".join([r.note, note, *extra])))
    det = {k: summary[k] for k in ("risk_group", "risk_groups", "permissible_time", "actinic_dose", "uva_dose",
                                   "blue_light_dose", "not_assessed", "not_modelled", "lit_duration")}
    det.update(assessed=True, exposure_factor=factor, exposure_duration=D, protocol_runs=reps, position=where)
    return out, det


def _skin_checks(scenario, ds, ss: SafetySettings):
    from .skin import skin_contact_check

    if not ss.skin_contact:
        return [], {"assessed": False, "reason": "safety.skin_contact is false"}
    name = f"surface_temperature_{ss.skin_face}"
    label = f"skin contact temperature, {ss.skin_face} face"
    if name not in ds:
        return [NotAssessed(label, f"temperature not modelled in this scenario (no {name} in the result); "
                                   "add the heat model to assess skin contact",
                            source="IEC 60601-1 / ISO 13732-1")], {"assessed": False}
    temp = ds[name].values
    peak = float(np.max(temp))
    dur = ss.contact_duration or ss.exposure_duration or scenario.duration
    r = skin_contact_check(peak_surface_temperature=peak, contact_duration=dur, material_class=ss.skin_material_class,
                           standard=ss.skin_standard)
    r = dataclasses.replace(r, check=f"{label}: {r.check}")
    return [r], {"assessed": True, "peak_surface_temperature": peak, "contact_duration": dur,
                 "time_of_peak": float(ds["time"].values[int(np.argmax(temp))])}


# ---------------------------------------------------------------------------
# the run


def run_checks(scenario, ds, *, elastica: bool = True):
    """All design checks of a scenario on its simulated result.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
        With optional ``[checks]``, ``[safety]`` and ``[joint]`` sections.
    ds : xarray.Dataset
        Result of :func:`actsim.simulate` for that scenario.
    elastica : bool, optional
        Compute the large-deflection blocked force at every output time and the
        load line (default True).

    Returns
    -------
    results : list of CheckResult and NotAssessed
        In the order strength, fatigue, joint, light, skin.
    details : dict
        ``stress`` (per layer: peak equivalent stress per output time [Pa],
        critical cell), ``fatigue`` (per layer: counted cycles, life in
        actuation cycles per method, governing method), ``actuation``
        (elastica blocked force per output time [N], load line and work [J]),
        ``joint`` (angles [rad], moments [N m], strips), ``light`` and ``skin``.

    Notes
    -----
    Safety factor per layer (von Mises, plane strain :math:`\\sigma_y = \\nu\\sigma_x`
    for plates, :math:`- E\\alpha(T - T_\\mathrm{ref})` added with heat, :math:`E`
    the Young's modulus):

    .. math::

        S_k = \\sigma_{y,k} / \\max_{t, z\\in k} \\sigma_\\mathrm{vM}(t, z)

    Fatigue: :math:`D = (N_\\text{target}/n_\\text{per run}) \\sum_i n_i/N_i \\le D_\\text{limit}`.
    Joint (hinge): :math:`n\\,EI(\\kappa_0 - \\varphi/l_h) \\ge S\\,M_\\text{req}(\\varphi)`
    with :math:`M_\\text{req} = g\\sum m_i r_i\\cos(\\varphi + \\alpha_i)`.

    References
    ----------
    .. [1] N. E. Dowling, *Mechanical Behavior of Materials*, 4th ed., Pearson, 2013.
    .. [2] S. P. Timoshenko and J. M. Gere, *Mechanics of Materials*, Van Nostrand Reinhold, 1972.
    .. [3] IEC 62471:2006, *Photobiological safety of lamps and lamp systems*.
    """
    from .fatigue import fatigue_life
    from .strength import stress_check

    from .settings import checks_settings, joint_settings, safety_settings

    cs = checks_settings(scenario) or CheckSettings()
    ss = safety_settings(scenario) or SafetySettings()
    js = joint_settings(scenario)
    li = _layer_index(scenario)
    if li.size != ds.sizes["z"]:
        raise ActsimInputError(f"run_checks: the result has {ds.sizes['z']} cells but the scenario {li.size}; pass the matching pair")
    results: list = []
    details: dict = {"title": scenario.title, "required_safety_factor": cs.required_safety_factor}

    act = _actuation(scenario, ds, cs, elastica=elastica)
    details["actuation"] = act

    sigma = ds["stress"].values
    stress_how = "free strip as simulated"
    joint_results = []
    if js is not None:
        jd, joint_results = _joint(scenario, ds, js, cs, act)
        details["joint"] = jd
        if jd.get("strips") is not None:
            loaded, how = _loaded_stress(scenario, ds, js, jd, act)
            if loaded is not None:
                sigma = loaded
                stress_how = how
    plate = scenario.strip.section == "plate"
    nu_layer = np.array([layer.material.poisson_ratio for layer in scenario.layers])
    nu_cell = nu_layer[li]
    eig = _transverse_eigen_stress(scenario, ds, li)
    eq = _equivalent_signed(sigma, nu_cell, plate, eig)
    if not plate:
        state = "narrow strip, uniaxial stress"
    elif eig is None:
        state = "wide plate, plane strain (sigma_y = nu sigma_x)"
    else:
        state = ("wide plate, plane strain with isotropic thermal strain "
                 "(sigma_y = nu sigma_x - E alpha (T - T_ref), E = section modulus (1 - nu^2))")
    times = ds["time"].values
    sdet = {"time": times, "state": state, "history": stress_how, "layers": {}}
    # [checks].tip_force: the tip-loaded state at peak bend joins the history as one more state, right after the
    # peak-bend sample (the load is carried at peak bend, once per run of the protocol)
    tip = act.get("tip_load")
    tip_ins, tip_reason = None, ""
    sig_c, eig_c, eq_c, times_c = sigma, eig, eq, times
    if tip is not None:
        row, info = _tip_loaded_stress(scenario, ds, tip)
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
    fdet = {}
    for k, layer in enumerate(scenario.layers):
        label = _layer_label(k, scenario)
        cells = np.flatnonzero(li == k)
        sub = np.abs(eq[:, cells])
        per_time = sub.max(axis=1)
        sdet["layers"][layer.name] = {"peak_equivalent_stress": per_time, "peak": float(per_time.max()),
                                      "cell_of_peak": int(cells[int(np.argmax(sub.max(axis=0)))])}
        per_time_c = np.abs(eq_c[:, cells]).max(axis=1)
        if tip_ins is not None:
            sdet["layers"][layer.name]["tip_loaded_peak"] = float(per_time_c[tip_ins])
        lim = cs.materials.get(layer.material.name)
        # strength
        if lim is None or lim.yield_strength is None:
            results.append(NotAssessed(f"yield strength, {label}",
                                       f"no yield strength for material '{layer.material.name}' in [checks.materials]"))
        else:
            r = stress_check(stress_profile=sig_c[:, cells], layer_index=np.zeros(cells.size, dtype=np.int64),
                             yield_strength_per_layer=[lim.yield_strength], layer_names=[layer.name],
                             poisson_ratio=[layer.material.poisson_ratio] if plate else None,
                             required_safety_factor=cs.required_safety_factor,
                             transverse_eigen_stress=None if eig_c is None else eig_c[:, cells])[0]
            t_note = _temperature_notes(lim.yield_strength, ds, cells)
            kt = int(np.argmax(per_time_c))
            at = (f"peak in the tip-loaded state at t = {times_c[kt]:g} s" if tip_ins is not None and kt == tip_ins
                  else f"peak at t = {times_c[kt]:g} s")
            if tip_ins is not None:  # the time index of stress_check counts the inserted state
                r = dataclasses.replace(r, note=r.note.replace("at time index", "at history index"))
            note = "; ".join(x for x in (f"{stress_how}; {at}", tip_how, r.note, t_note) if x)
            results.append(dataclasses.replace(r, check=f"yield strength, {label}", note=note))
            if tip_reason:
                results.append(NotAssessed(f"yield strength under checks.tip_force, {label}",
                                           f"the tip-loaded stress could not be formed: {tip_reason}",
                                           source=r.source, validity=r.validity))
        # fatigue
        flabel = f"fatigue, {label}"
        if lim is None or lim.fatigue_strength_coefficient is None:
            results.append(NotAssessed(flabel, f"no Basquin constants for material '{layer.material.name}' in [checks.materials]"))
            continue
        if cs.target_passes is None:
            results.append(NotAssessed(flabel, "no target_cycles in [checks]"))
            continue
        if tip_reason:
            results.append(NotAssessed(f"fatigue under checks.tip_force, {label}",
                                       f"the tip-loaded stress could not be formed: {tip_reason}"))
        rng = eq_c[:, cells].max(axis=0) - eq_c[:, cells].min(axis=0)
        c = int(cells[int(np.argmax(rng))])
        hist = _repeat_history(eq_c[:, c])
        methods = [m for m in cs.mean_stress_methods if lim.ultimate_strength is not None or m not in ("goodman", "gerber")]
        if not methods:
            results.append(NotAssessed(flabel, "Goodman/Gerber need ultimate_strength, which is not given"))
            continue
        u_lim = lim.ultimate_strength
        u_val = getattr(u_lim, "value", u_lim)
        peak = float(np.max(np.abs(hist)))
        if u_val is not None and peak >= u_val:
            # the simulated stress itself reaches the ultimate strength: the design fails statically,
            # before any fatigue (a failing check, not bad input)
            results.append(CheckResult.upper_bound(
                check=f"{flabel}: static failure", value=peak, limit=float(u_val), unit="Pa",
                source=getattr(u_lim, "source", "material limits"), validity=getattr(u_lim, "validity", ""),
                note=f"the cyclic stress at {label} reaches the ultimate strength; no fatigue life is computed",
            ))
            continue
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
                 + ("" if tip_ins is None else f"; {tip_how}, once per run")
                 + f"; {cs.target_cycles:g} actuation cycles = {cs.target_passes:g} runs of the protocol")
        t_note = _temperature_notes(lim.fatigue_strength_coefficient, ds, cells)
        freq = cs.cycles_per_protocol / scenario.duration
        f_rng = lim.fatigue_strength_coefficient.valid_range.get("frequency")
        if f_rng is not None and not (f_rng[0] <= freq <= f_rng[1]):
            t_note = "; ".join(x for x in (t_note, f"actuation frequency {freq:.3g} Hz lies outside the constants' range "
                                                    f"of validity {f_rng[0]:g}..{f_rng[1]:g} Hz") if x)
        lo, hi, known = _cycle_range(lim)
        life = {m: fr.passes_to_failure[m] * cs.cycles_per_protocol for m in fr.passes_to_failure}
        life_text = {m: _life_text(life[m], lo, hi, known) for m in life}
        for m_key, r in zip(methods, fr.checks):
            meth = r.check[r.check.find("(") + 1: r.check.rfind(")")]
            # the raw life stays in the details (checks.json); the note shows it only within the fitted range
            raw = f"modelled {fr.passes_to_failure[m_key]:.4g} passes to the damage limit"
            shown = f"modelled life {life_text[m_key]}"
            if cs.cycles_per_protocol != 1.0 and life[m_key] <= hi and math.isfinite(life[m_key]):
                shown += f" ({fr.passes_to_failure[m_key]:.4g} runs of the protocol)"
            note = r.note.replace(raw, shown) if raw in r.note else "; ".join((r.note, shown))
            results.append(dataclasses.replace(r, check=f"fatigue damage ({meth}), {label}",
                                               note="; ".join(x for x in (note, where, t_note) if x)))
        fdet[layer.name] = {
            "critical_cell": c,
            "cycles_per_run": fr.cycles,
            "governing_method": fr.governing_method,
            "life_cycles": life,
            "life_text": life_text,
            "fitted_cycle_range": [lo, hi],
            "fitted_cycle_range_source": "the constants' range of validity" if known else
                                         "usual fitted range of Basquin constants (common practice, no source)",
            "damage_at_target": {m: fr.damage_per_pass[m] * cs.target_passes for m in fr.damage_per_pass},
        }
    details["stress"] = sdet
    details["fatigue"] = fdet
    results.extend(joint_results)
    lr, ldet = _light_checks(scenario, ss)
    results.extend(lr)
    details["light"] = ldet
    kr, kdet = _skin_checks(scenario, ds, ss)
    results.extend(kr)
    details["skin"] = kdet
    return results, details


# ---------------------------------------------------------------------------
# output


def any_failed(results) -> bool:
    """True when any assessed check failed."""
    return any(r.passed is False for r in results)


def _record(r) -> dict:
    if isinstance(r, NotAssessed):
        return {"check": r.check, "value": None, "limit": None, "unit": "", "margin": None, "margin_kind": "",
                "passed": None, "status": "not assessed", "verdict": r.verdict, "source": r.source,
                "validity": r.validity, "note": r.reason}
    d = dataclasses.asdict(r)
    d["status"] = "pass" if r.passed else "fail"
    d["verdict"] = r.verdict
    return d


def _jsonable(x):
    if isinstance(x, dict):
        return {str(k): _jsonable(v) for k, v in x.items() if not str(k).startswith("_")}
    if isinstance(x, (list, tuple)):
        return [_jsonable(v) for v in x]
    if isinstance(x, np.ndarray):
        return _jsonable(x.tolist())
    if isinstance(x, (np.floating, float)):
        v = float(x)
        if math.isnan(v):
            return None
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return v
    if isinstance(x, (np.integer,)):
        return int(x)
    if isinstance(x, (np.bool_,)):
        return bool(x)
    return x


def format_results(results, *, width: int = 100) -> str:
    """Verdict table (check, value, limit, margin, verdict, source), notes, and the caution."""
    header = ("check", "value", "limit", "margin", "verdict", "source")
    rows, notes = [], []
    for r in results:
        if isinstance(r, NotAssessed):
            rows.append((r.check, "-", "-", "-", "not assessed", r.source or "-"))
            notes.append(r.reason)
        else:
            src = r.source if len(r.source) <= 72 else r.source[:69] + "..."
            rows.append((r.check, _fmt_quantity(r.value, r.unit), _fmt_quantity(r.limit, r.unit), _fmt_margin(r),
                         r.verdict_short, src))
            notes.append(r.note)
    widths = [max(len(h), *(len(row[i]) for row in rows)) if rows else len(h) for i, h in enumerate(header)]

    def line(cells):
        return "  ".join(c.ljust(w) for c, w in zip(cells, widths)).rstrip()

    out = [line(header), line(tuple("-" * w for w in widths)), *[line(row) for row in rows]]
    listed = [(i + 1, n) for i, n in enumerate(notes) if n]
    if listed:
        out.append("")
        out += [f"[{i}] {n}" for i, n in listed]
    n_fail = sum(r.passed is False for r in results)
    n_na = sum(isinstance(r, NotAssessed) for r in results)
    n_pass = sum(r.passed is True for r in results)
    out += ["", f"{n_pass} within the modelled limit, {n_fail} not, {n_na} not assessed (full sources in {CHECKS_JSON})",
            "", *caution_lines(width)]
    return "\n".join(out)


def write_checks(results, details, out_dir) -> list[str]:
    """Write ``checks.json`` (records + details) and ``checks.csv`` atomically into ``out_dir``.

    Returns
    -------
    list of str
        The file names written.
    """
    from ..cautions import CAUTION

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    records = [_record(r) for r in results]
    io.write_json(out / CHECKS_JSON, _jsonable({"title": details.get("title", ""), "units": "SI (Pa, N, N m, J, K, s, rad)",
                                                "any_failed": any_failed(results), "caution": CAUTION,
                                                "checks": records, "details": details}))
    cols = ["check", "status", "value", "limit", "unit", "margin", "margin_kind", "verdict", "source", "validity", "note"]
    with io.atomic_path(out / CHECKS_CSV) as tmp:
        with open(tmp, "w", newline="") as fh:
            w = csv.writer(fh)
            w.writerow(cols)
            for rec in records:
                w.writerow(["" if rec[c] is None else (f"{rec[c]:.10g}" if isinstance(rec[c], float) else rec[c]) for c in cols])
    return [CHECKS_JSON, CHECKS_CSV]
