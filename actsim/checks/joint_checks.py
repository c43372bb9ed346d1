"""The joint checks of ``[joint]``: the strips' moment against the payload's, and the plausibility of the stack.

:func:`size_joint` is a shared state of the check run (``context.joint``, ``details["joint"]``): the
moment the payload needs at each angle, one strip's moment there (:mod:`actsim.joint`), the number of
strips, the stack they make and the rotation the loaded link reaches over time.
:func:`joint_loaded_stress` gives the stress of those loaded strips, which the yield and fatigue
checks assess instead of the free strip's. :func:`joint_check` turns the sizing into the verdicts
"joint moment" and "joint stack of n strips".

The joint (hinge): :math:`n\\,EI(\\kappa_0 - \\varphi/l_h) \\ge S\\,M_\\text{req}(\\varphi)` with
:math:`M_\\text{req} = g\\sum m_i r_i\\cos(\\varphi + \\alpha_i)`.

References
----------
.. [1] S. P. Timoshenko and J. M. Gere, *Mechanics of Materials*, Van Nostrand Reinhold, 1972.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .context import CheckContext, CheckOutput, cell_thickness, free_curvature
from .settings import CheckSettings
from .verdict import CheckResult, NotAssessed

__all__ = ["JointSizing", "MAX_STRIPS", "size_joint", "stack_of_strips", "stack_check", "joint_loaded_stress",
           "joint_check"]

#: Most strips a joint is taken to be built of before the design is called implausible (common practice, no source).
MAX_STRIPS = 1000


@dataclass(frozen=True, eq=False)
class JointSizing:
    """The joint sized at the time of peak bend.

    Attributes
    ----------
    details : dict
        ``details["joint"]`` of ``checks.json``: ``angle`` [rad], ``required_moment`` [N m],
        ``mounting``, ``safety_factor``, ``time_of_sizing`` [s], ``notes``; when one strip's moment
        is known: ``moment_per_strip`` [N m], ``strips_needed``, ``strips``; with a number of strips:
        ``available_moment`` [N m], ``achieved_factor``, ``governing_angle`` [rad], the stack
        (:func:`stack_of_strips`) and ``loaded_rotation`` [rad] per output time (hinge; None for a lever).
    model : str
        How one strip's moment is modelled (for the verdict's range of validity).
    unavailable : str
        Why no strip moment could be formed (lever without a load line); empty when it was.
    """

    details: dict
    model: str = ""
    unavailable: str = ""


def size_joint(scenario, ds, js, cs: CheckSettings, act: dict) -> JointSizing:
    """The strips' moment against the payload's at each angle, the number of strips and the loaded rotation.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
    ds : xarray.Dataset
        Its result of :func:`actsim.simulate`.
    js : actsim.checks.settings.JointSettings
        Parsed ``[joint]``.
    cs : actsim.checks.settings.CheckSettings
        Parsed ``[checks]`` (``required_safety_factor``).
    act : dict
        Actuation state of :func:`actsim.checks.actuation.actuation_state` (peak bend, load line).

    Returns
    -------
    JointSizing
    """
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
            why = act.get("load_line_not_solved")
            return JointSizing(out, unavailable=(f"no load line at peak bend: {why}" if why else
                                                 "no load line at peak bend (elastica not solved or not run)"))
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
    if n is None:
        out["strips"] = None
        out["loaded_rotation"] = None
        return JointSizing(out, model=model)
    avail = n * m1
    with np.errstate(divide="ignore", invalid="ignore"):
        factor = np.where(need, avail / np.where(need, m_req, 1.0), np.inf)
    g = int(np.argmin(factor))
    out.update(strips=n, available_moment=avail, achieved_factor=factor, governing_angle=float(phi[g]))
    out.update(stack_of_strips(scenario, js, n))
    # loaded strip over time: the link rises from its start stop to the first equilibrium (or the end stop)
    kappa = free_curvature(ds)
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
    return JointSizing(out, model=model)


def stack_of_strips(scenario, js, n: int) -> dict:
    """Thickness of n strips stacked in parallel and its limit.

    Returns
    -------
    dict
        ``stack_thickness`` n h [m], ``strip_thickness`` h [m], ``stack_limit`` [m]: the hinge length
        (hinge) or lever arm (lever), or :data:`MAX_STRIPS` strips, whichever is smaller;
        ``plausible`` (bool).
    """
    h = float(sum(layer.thickness for layer in scenario.layers))
    stack = n * h
    length = js.hinge_length if js.mounting == "hinge" else js.lever_arm
    limit = min(length, MAX_STRIPS * h)
    return {"stack_thickness": stack, "strip_thickness": h, "stack_limit": limit, "plausible": stack <= limit}


def stack_check(js, n: int, jd: dict) -> CheckResult:
    """Plausibility of n strips stacked in parallel: total thickness against the joint's length scale.

    The moment balance treats the strips as independent, each bending freely; a stack thicker than the hinge
    is long (hinge mounting) or than the lever arm (lever mounting) is no longer a set of thin strips (their
    neighbours' clamps, spacing and shear are not modelled), and neither is a stack of more than
    :data:`MAX_STRIPS` strips (common practice, no source). The check fails there.

    Parameters
    ----------
    js : actsim.checks.settings.JointSettings
    n : int
        Number of strips.
    jd : dict
        The joint's details with the numbers of :func:`stack_of_strips`.
    """
    h, stack, limit = jd["strip_thickness"], jd["stack_thickness"], jd["stack_limit"]
    length, what = ((js.hinge_length, "hinge length") if js.mounting == "hinge" else (js.lever_arm, "lever arm"))
    by = what if length <= MAX_STRIPS * h else f"{MAX_STRIPS} strips"
    note = (f"{n} strip{'s' if n != 1 else ''} x {h * 1e6:.4g} um = {stack * 1e3:.4g} mm of stacked strips; "
            f"limit the {what} ({length * 1e3:.4g} mm) or {MAX_STRIPS} strips ({MAX_STRIPS * h * 1e3:.4g} mm), "
            f"whichever is smaller ({by})")
    if not jd["plausible"]:
        reasons = []
        if stack > length:
            reasons.append(f"the stack is thicker than the {what}")
        if n > MAX_STRIPS:
            reasons.append(f"more than {MAX_STRIPS} strips")
        note += (f"; the design is not plausible as a stack of strips ({' and '.join(reasons)}): "
                 "raise the strips' moment (curvature, thickness, width) or change the joint")
    return CheckResult.upper_bound(
        check=f"joint stack of {n} strip{'s' if n != 1 else ''} ({js.mounting}): thickness vs plausible stack", value=stack,
        limit=limit, unit="m", source="plausibility of a stack of thin strips (common practice, no source)",
        validity="strips modelled as independent thin strips bending side by side", note=note,
    )


def joint_check(ctx: CheckContext) -> CheckOutput:
    """The joint moment at the governing angle, and the stack of strips (registered check, ``[joint]``).

    Fails when no number of strips reaches the end angle; the sizing itself is ``ctx.joint``
    (:func:`size_joint`), already in the details.
    """
    js, act, sizing = ctx.joint_settings, ctx.actuation, ctx.joint
    if sizing.unavailable:
        return CheckOutput([NotAssessed("joint moment (lever): payload vs strips", sizing.unavailable)])
    jd = sizing.details
    sf = jd["safety_factor"]
    phi, m_req, m1 = jd["angle"], jd["required_moment"], jd["moment_per_strip"]
    need = m_req > 0
    reach = need & (m1 <= 0)
    k0 = abs(act["peak_curvature"])
    n, n_needed = jd["strips"], jd["strips_needed"]
    source = "static moment balance of the joint (rigid links, no friction or inertia)"
    validity = (f"{sizing.model}; strip moment from the layered-beam model at the time of peak bend "
                f"(t = {act['peak_time']:g} s); angles {math.degrees(js.angle_start):.4g}..{math.degrees(js.angle_end):.4g} deg")
    if n is None:
        i = int(np.argmax(reach))
        free = k0 * js.hinge_length if js.mounting == "hinge" else None
        why = (f"the free bend {math.degrees(free):.4g} deg is less than the travel to {math.degrees(phi[i]):.4g} deg"
               if free is not None else f"the strip tips lose contact with the lever before {math.degrees(phi[i]):.4g} deg")
        return CheckOutput([CheckResult.upper_bound(
            check="joint moment: payload vs strips (no number of strips reaches the end angle)", value=float(m_req[i]), limit=0.0, unit="N m",
            source=source, validity=validity, required_margin=sf,
            note=f"{why}: no number of strips lifts the payload there; lengthen the hinge or raise the curvature",
        )])
    avail, factor = jd["available_moment"], jd["achieved_factor"]
    g = int(np.argmin(factor))
    note = (f"{n} strip{'s' if n != 1 else ''} ({'solved' if js.strips is None else 'given'}); "
            f"{n_needed if n_needed is not None else 'no number of'} needed for a factor {sf:g}; "
            f"governing angle {math.degrees(phi[g]):.4g} deg; smallest factor over the lift {float(factor[g]):.3g}")
    if not np.any(need):
        note += "; gravity drives the joint at every angle: it needs a stop or a brake"
    moment = CheckResult.upper_bound(
        check=f"joint moment, {n} strip{'s' if n != 1 else ''} ({js.mounting}): payload vs strips' moment", value=max(float(m_req[g]), 0.0),
        limit=max(float(avail[g]), 0.0), unit="N m", source=source, validity=validity, required_margin=sf, note=note,
    )
    return CheckOutput([moment, stack_check(js, n, jd)])


def joint_loaded_stress(scenario, ds, js, jd: dict, act: dict):
    """Stress of the strips while they carry the joint, per output time and cell [Pa].

    Hinge: the strips held at the loaded rotation (curvature = rotation / hinge length); lever: the
    strip tips blocked by the lever (clamp moment F_blocked L, conservative). The curvature change
    bends the section about its neutral axis with the current modulus.

    Returns
    -------
    stress : numpy.ndarray or None
        (time, cell) [Pa]; None for a lever without the elastica blocked force.
    how : str
        What the stress history is, for the notes.
    """
    sigma = ds["stress"].values
    E = ds["modulus"].values
    z = ds["z"].values
    dz = cell_thickness(scenario)
    zn = (E * z[None, :] * dz[None, :]).sum(axis=1) / (E * dz[None, :]).sum(axis=1)
    kappa = ds["curvature"].values
    if js.mounting == "hinge":
        sgn = np.where(free_curvature(ds) >= 0, 1.0, -1.0)
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
