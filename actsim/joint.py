"""Sizing a revolute joint driven by light-driven strips working in parallel.

A joint at the origin carries a link and payload, described as a list of mass
items (point masses and simple solids). :func:`gravity_moment` gives the
moment the joint must supply to hold them still at each joint angle; the
strips supply moment either through a lever arm (a strip's tip force times
the arm, :func:`lever_moment`, :func:`lever_moment_over_travel`) or by being
the hinge themselves (:func:`hinge_moment`). :func:`strips_needed` and
:func:`width_needed` then size the actuator with a safety factor.

Conventions
-----------
- The joint angle ``phi`` is measured from the horizontal, counter-clockwise
  positive: ``phi = 0`` holds the link horizontal, ``phi = pi/2`` straight up.
  Gravity points down (-vertical).
- A moment is positive counter-clockwise, i.e. in the lifting direction of a
  link at ``0 < phi < pi/2``. The strips are taken to drive the joint in the
  positive direction.
- SI units throughout: kg, m, rad, N, N m, kg/m^3.

Caution
-------
These are static, rigid-link estimates: no inertia, friction, impact or
fatigue, and the strips' moment is taken from the mechanics model, not from
measurement. A joint that lifts over people or is worn on the body needs a
risk assessment to the applicable standards (for machinery, e.g. ISO 12100,
*Safety of machinery - General principles for design - Risk assessment and
risk reduction*; for worn or body-contact devices, the medical-device and
local regulations) and review by qualified people; see
:data:`actsim.cautions.CAUTION`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .cautions import CAUTION
from .errors import ActsimInputError

__all__ = [
    "MassItem",
    "StripCount",
    "WidthNeeded",
    "point_mass",
    "rod",
    "tube",
    "tapered_tube",
    "gravity_moment",
    "lever_moment",
    "lever_moment_over_travel",
    "hinge_moment",
    "strips_needed",
    "width_needed",
]

#: Standard acceleration of gravity [m/s^2] (CGPM 1901, the conventional value).
STANDARD_GRAVITY = 9.80665


# --------------------------------------------------------------------------- checks


def _num(value, name, unit, *, lo=None, lo_open=False):
    if isinstance(value, bool):
        raise ActsimInputError(f"{name}: {value!r} is not a number [{unit}]")
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise ActsimInputError(f"{name}: {value!r} is not a number [{unit}]") from None
    if not math.isfinite(v):
        raise ActsimInputError(f"{name}: {v!r} is not finite [{unit}]")
    if lo is not None and (v < lo or (lo_open and v == lo)):
        rel = ">" if lo_open else ">="
        raise ActsimInputError(f"{name}: {v:g} is outside the allowed range ({rel} {lo:g} {unit})")
    return v


def _arr(value, name, unit):
    try:
        a = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ActsimInputError(f"{name}: {value!r} is not an array of numbers [{unit}]") from None
    if not np.all(np.isfinite(a)):
        raise ActsimInputError(f"{name}: values must be finite [{unit}]")
    return a


# --------------------------------------------------------------------------- mass items


@dataclass(frozen=True)
class MassItem:
    """A rigid mass carried by the joint.

    Attributes
    ----------
    mass : float
        Mass [kg].
    com_distance : float
        Distance of its centre of mass from the joint axis [m].
    angle_offset : float
        Direction of its centre of mass relative to the link axis,
        counter-clockwise positive [rad].
    name : str
        Label for reports.
    """

    mass: float
    com_distance: float
    angle_offset: float = 0.0
    name: str = ""


def point_mass(*, mass, distance, angle_offset=0.0, name="point mass") -> MassItem:
    """A point mass (a payload, a fastener) on the link.

    Parameters
    ----------
    mass : float
        Mass [kg], >= 0.
    distance : float
        Distance from the joint axis [m], >= 0.
    angle_offset : float, optional
        Direction relative to the link axis [rad].
    name : str, optional
        Label.

    Returns
    -------
    MassItem

    Notes
    -----
    .. math:: r_G = d

    References
    ----------
    .. [1] Meriam, J. L. and Kraige, L. G., *Engineering Mechanics: Statics*,
       Wiley (centres of mass).
    """
    return MassItem(
        mass=_num(mass, "mass", "kg", lo=0.0),
        com_distance=_num(distance, "distance", "m", lo=0.0),
        angle_offset=_num(angle_offset, "angle_offset", "rad"),
        name=name,
    )


def rod(*, length, mass=None, density=None, diameter=None, offset=0.0, angle_offset=0.0, name="rod") -> MassItem:
    """A uniform solid rod along the link, its near end ``offset`` from the joint.

    Give either ``mass`` or both ``density`` and ``diameter``.

    Parameters
    ----------
    length : float
        Rod length [m], > 0.
    mass : float, optional
        Rod mass [kg], >= 0.
    density : float, optional
        Material density [kg/m^3], > 0.
    diameter : float, optional
        Rod diameter [m], > 0.
    offset : float, optional
        Distance from the joint axis to the near end [m], >= 0.
    angle_offset : float, optional
        Direction relative to the link axis [rad].
    name : str, optional
        Label.

    Returns
    -------
    MassItem

    Notes
    -----
    .. math:: m = \\rho \\frac{\\pi D^2}{4} \\ell, \\qquad r_G = a + \\frac{\\ell}{2}

    References
    ----------
    .. [1] Meriam, J. L. and Kraige, L. G., *Engineering Mechanics: Statics*,
       Wiley (centres of mass).
    """
    ell = _num(length, "length", "m", lo=0.0, lo_open=True)
    a = _num(offset, "offset", "m", lo=0.0)
    if mass is not None:
        if density is not None or diameter is not None:
            raise ActsimInputError("rod: give either mass, or density and diameter, not both")
        m = _num(mass, "mass", "kg", lo=0.0)
    else:
        if density is None or diameter is None:
            raise ActsimInputError("rod: give mass [kg], or both density [kg/m^3] and diameter [m]")
        rho = _num(density, "density", "kg/m^3", lo=0.0, lo_open=True)
        d = _num(diameter, "diameter", "m", lo=0.0, lo_open=True)
        m = rho * math.pi * d * d / 4.0 * ell
    return MassItem(mass=m, com_distance=a + 0.5 * ell, angle_offset=_num(angle_offset, "angle_offset", "rad"), name=name)


def tube(*, length, outer_diameter, inner_diameter, density, offset=0.0, angle_offset=0.0, name="tube") -> MassItem:
    """A uniform round tube along the link, its near end ``offset`` from the joint.

    Parameters
    ----------
    length : float
        Tube length [m], > 0.
    outer_diameter : float
        Outer diameter [m], > 0.
    inner_diameter : float
        Inner (bore) diameter [m], 0 <= inner < outer.
    density : float
        Material density [kg/m^3], > 0.
    offset : float, optional
        Distance from the joint axis to the near end [m], >= 0.
    angle_offset : float, optional
        Direction relative to the link axis [rad].
    name : str, optional
        Label.

    Returns
    -------
    MassItem

    Notes
    -----
    .. math:: m = \\rho \\frac{\\pi (D^2 - d^2)}{4} \\ell, \\qquad r_G = a + \\frac{\\ell}{2}

    References
    ----------
    .. [1] Meriam, J. L. and Kraige, L. G., *Engineering Mechanics: Statics*,
       Wiley (centres of mass).
    """
    return tapered_tube(
        length=length,
        outer_diameter_near=outer_diameter,
        outer_diameter_far=outer_diameter,
        inner_diameter=inner_diameter,
        density=density,
        offset=offset,
        angle_offset=angle_offset,
        name=name,
    )


def tapered_tube(
    *,
    length,
    outer_diameter_near,
    outer_diameter_far,
    inner_diameter,
    density,
    offset=0.0,
    angle_offset=0.0,
    name="tapered tube",
) -> MassItem:
    """A tube whose outer diameter varies linearly along its length (constant bore).

    Parameters
    ----------
    length : float
        Tube length [m], > 0.
    outer_diameter_near : float
        Outer diameter at the end nearer the joint [m], >= 0.
    outer_diameter_far : float
        Outer diameter at the far end [m], >= 0.
    inner_diameter : float
        Bore diameter, constant [m], >= 0 and smaller than both outer
        diameters (0 for a solid frustum; a solid cone needs it 0 and one
        outer diameter 0).
    density : float
        Material density [kg/m^3], > 0.
    offset : float, optional
        Distance from the joint axis to the near end [m], >= 0.
    angle_offset : float, optional
        Direction relative to the link axis [rad].
    name : str, optional
        Label.

    Returns
    -------
    MassItem

    Notes
    -----
    With ``t`` the distance from the near end, ``D(t) = D_0 + (D_1 - D_0) t/\\ell``
    and the wall area ``A(t) = \\pi (D(t)^2 - d^2)/4``. Integrating the
    quadratic ``D(t)^2`` term by term,

    .. math::

        \\int_0^\\ell D^2\\,dt = \\frac{\\ell}{3}(D_0^2 + D_0 D_1 + D_1^2), \\qquad
        \\int_0^\\ell t\\,D^2\\,dt = \\frac{\\ell^2}{12}(D_0^2 + 2 D_0 D_1 + 3 D_1^2),

    so that

    .. math::

        m = \\rho\\frac{\\pi\\ell}{4}\\Bigl[\\frac{D_0^2 + D_0 D_1 + D_1^2}{3} - d^2\\Bigr], \\qquad
        r_G = a + \\ell\\,\\frac{(D_0^2 + 2 D_0 D_1 + 3 D_1^2)/12 - d^2/2}
                                 {(D_0^2 + D_0 D_1 + D_1^2)/3 - d^2} .

    Checks: ``D_0 = D_1`` gives ``l/2``; a solid cone (``D_0 = 0``, ``d = 0``)
    gives ``3 l/4`` from the apex.

    References
    ----------
    .. [1] Meriam, J. L. and Kraige, L. G., *Engineering Mechanics: Statics*,
       Wiley (centres of mass by integration; the cone, 3h/4 from the apex).
    """
    ell = _num(length, "length", "m", lo=0.0, lo_open=True)
    d0 = _num(outer_diameter_near, "outer_diameter_near", "m", lo=0.0)
    d1 = _num(outer_diameter_far, "outer_diameter_far", "m", lo=0.0)
    di = _num(inner_diameter, "inner_diameter", "m", lo=0.0)
    rho = _num(density, "density", "kg/m^3", lo=0.0, lo_open=True)
    a = _num(offset, "offset", "m", lo=0.0)
    if di > 0.0 and di >= min(d0, d1):
        raise ActsimInputError(
            f"inner_diameter: {di:g} m is outside the allowed range (< the smaller outer diameter, {min(d0, d1):g} m)"
        )
    if max(d0, d1) <= 0.0:
        raise ActsimInputError("outer_diameter_near/outer_diameter_far: at least one must be > 0 m")
    area_int = (d0 * d0 + d0 * d1 + d1 * d1) / 3.0 - di * di  # (4/(pi l)) * int A dt
    first_int = (d0 * d0 + 2.0 * d0 * d1 + 3.0 * d1 * d1) / 12.0 - 0.5 * di * di  # (4/(pi l^2)) * int t A dt
    m = rho * math.pi * ell / 4.0 * area_int
    r = a + ell * first_int / area_int
    return MassItem(mass=m, com_distance=r, angle_offset=_num(angle_offset, "angle_offset", "rad"), name=name)


# --------------------------------------------------------------------------- moments


def gravity_moment(items, joint_angle, *, gravity=STANDARD_GRAVITY):
    """Moment the joint must supply to hold the items still, at each joint angle.

    Parameters
    ----------
    items : sequence of MassItem
        The link and payload (from :func:`point_mass`, :func:`rod`,
        :func:`tube`, :func:`tapered_tube`).
    joint_angle : float or array_like
        Link angle from the horizontal, counter-clockwise positive [rad].
    gravity : float, optional
        Acceleration of gravity [m/s^2], > 0; default the standard value.

    Returns
    -------
    float or ndarray
        Holding moment, counter-clockwise positive (lifting) [N m], same
        shape as ``joint_angle``.

    Notes
    -----
    .. math:: M(\\varphi) = g \\sum_i m_i\\, r_i \\cos(\\varphi + \\alpha_i)

    with ``alpha_i`` the item's ``angle_offset``. The gravity moment itself is
    ``-M``.

    References
    ----------
    .. [1] Meriam, J. L. and Kraige, L. G., *Engineering Mechanics: Statics*,
       Wiley (moment of a force about a point).
    """
    g = _num(gravity, "gravity", "m/s^2", lo=0.0, lo_open=True)
    phi = _arr(joint_angle, "joint_angle", "rad")
    try:
        items = list(items)
    except TypeError:
        raise ActsimInputError("items: give a list of mass items (point_mass, rod, tube, tapered_tube)") from None
    total = np.zeros_like(phi, dtype=float)
    for k, it in enumerate(items):
        if not isinstance(it, MassItem):
            raise ActsimInputError(
                f"items[{k}]: {it!r} is not a mass item; build it with point_mass, rod, tube or tapered_tube"
            )
        total = total + it.mass * it.com_distance * np.cos(phi + it.angle_offset)
    out = g * total
    return float(out) if out.ndim == 0 else out


def lever_moment(*, tip_force, lever_arm):
    """Moment from a strip pushing a lever: force times arm.

    Parameters
    ----------
    tip_force : float or array_like
        Force of the strip tip normal to the lever (e.g. the blocked force of
        :func:`actsim.elastica.blocked_tip_force`) [N].
    lever_arm : float
        Distance from the joint axis to the contact point, measured normal to
        the force [m], > 0.

    Returns
    -------
    float or ndarray
        Moment on the joint [N m].

    Notes
    -----
    .. math:: M = F\\,r

    References
    ----------
    .. [1] Meriam, J. L. and Kraige, L. G., *Engineering Mechanics: Statics*,
       Wiley (moment of a force about a point).
    """
    r = _num(lever_arm, "lever_arm", "m", lo=0.0, lo_open=True)
    f = _arr(tip_force, "tip_force", "N")
    out = f * r
    return float(out) if out.ndim == 0 else out


def lever_moment_over_travel(*, load_line, lever_arm, joint_angle, start_angle=0.0):
    """Moment of a strip that pushes a lever while the joint turns away from it.

    At ``start_angle`` the strip's tip is held blocked by the lever; as the
    joint turns by ``phi - start_angle`` the contact point moves by
    ``u = r (phi - start_angle)`` and the strip pushes with the force of its
    load line at ``u`` (zero once ``u`` passes the free tip travel).

    Parameters
    ----------
    load_line : actsim.elastica.LoadLine
        Force against tip displacement of one strip [N, m].
    lever_arm : float
        Distance from the joint axis to the contact point [m], > 0.
    joint_angle : float or array_like
        Joint angle, >= ``start_angle`` [rad].
    start_angle : float, optional
        Joint angle at which the strip is blocked (flat) [rad].

    Returns
    -------
    float or ndarray
        Moment on the joint [N m].

    Notes
    -----
    .. math:: M(\\varphi) = r\\,P\\bigl(r(\\varphi - \\varphi_0)\\bigr)

    The contact travel is taken as the arc ``r (phi - phi0)`` along the
    strip's y direction: the lever's tilt and the tip's slide along the strip
    axis are neglected, which holds while the travel is small against ``r``.
    The load line is interpolated linearly.

    References
    ----------
    .. [1] Meriam, J. L. and Kraige, L. G., *Engineering Mechanics: Statics*,
       Wiley (moment of a force about a point).
    """
    r = _num(lever_arm, "lever_arm", "m", lo=0.0, lo_open=True)
    phi0 = _num(start_angle, "start_angle", "rad")
    phi = _arr(joint_angle, "joint_angle", "rad")
    try:
        u_line = np.abs(np.asarray(load_line.displacement, float))
        p_line = np.abs(np.asarray(load_line.force, float))
    except AttributeError:
        raise ActsimInputError("load_line: give the result of actsim.elastica.load_line") from None
    if np.any(phi < phi0 - 1e-12):
        raise ActsimInputError(
            f"joint_angle: {float(np.min(phi)):g} rad is outside the allowed range (>= start_angle {phi0:g} rad)"
        )
    u = r * (phi - phi0)
    out = r * np.interp(u, u_line, p_line, right=0.0)
    return float(out) if out.ndim == 0 else out


def hinge_moment(*, bending_stiffness, spontaneous_curvature, hinge_length, joint_rotation=0.0):
    """Moment of a strip that is itself the hinge (a flexure bending with the joint).

    Parameters
    ----------
    bending_stiffness : float
        Bending stiffness EI of the strip, width included [N m^2], > 0.
    spontaneous_curvature : float
        Uniform curvature the lit strip takes without load [1/m].
    hinge_length : float
        Free length of the strip between the two links [m], > 0.
    joint_rotation : float or array_like, optional
        Rotation of the joint away from the position where the strip is flat
        [rad]; 0 gives the blocked moment.

    Returns
    -------
    float or ndarray
        Moment delivered to the joint [N m].

    Notes
    -----
    Clamped to both links, the strip turns its far end by the joint rotation.
    Under the pure end moment it is a circular arc of curvature
    ``phi / l_h`` at any size, so

    .. math:: M = EI\\,\\Bigl(\\kappa_0 - \\frac{\\varphi}{l_h}\\Bigr) ,

    the blocked moment ``EI kappa0`` at ``phi = 0`` (as
    :func:`actsim.elastica.blocked_tip_force` with ``rotation="fixed"``) and
    zero at the free bend ``phi = kappa0 l_h``. The flexure's pivot is taken
    as a fixed axis; a real flexure's centre of rotation moves by a fraction
    of ``l_h``.

    References
    ----------
    .. [1] Timoshenko, S. P. and Gere, J. M., *Theory of Elastic Stability*,
       2nd ed., McGraw-Hill, 1961 (pure bending of the elastica: a circular arc).
    .. [2] Howell, L. L., *Compliant Mechanisms*, Wiley, 2001 (flexure hinges).
    """
    ei = _num(bending_stiffness, "bending_stiffness", "N m^2", lo=0.0, lo_open=True)
    k0 = _num(spontaneous_curvature, "spontaneous_curvature", "1/m")
    lh = _num(hinge_length, "hinge_length", "m", lo=0.0, lo_open=True)
    phi = _arr(joint_rotation, "joint_rotation", "rad")
    out = ei * (k0 - phi / lh)
    return float(out) if out.ndim == 0 else out


# --------------------------------------------------------------------------- sizing


@dataclass(frozen=True)
class StripCount:
    """Result of :func:`strips_needed`.

    Attributes
    ----------
    n : int
        Number of strips in parallel [-].
    margin : ndarray
        ``n * moment_per_strip - safety_factor * required_moment`` at each
        angle [N m]; >= 0 everywhere (to round-off, see Notes).
    achieved_factor : ndarray
        ``n * moment_per_strip / required_moment`` where a moment is
        required, ``inf`` where it is not [-].
    governing_index : int
        Index of the angle that sets ``n`` (-1 if none needs a moment).
    caution : str
        The project caution to print with the result.
    """

    n: int
    margin: np.ndarray
    achieved_factor: np.ndarray
    governing_index: int
    caution: str = field(default=CAUTION, repr=False)


@dataclass(frozen=True)
class WidthNeeded:
    """Result of :func:`width_needed`.

    Attributes
    ----------
    width : float
        Width of each strip [m].
    margin : ndarray
        Moment in excess of ``safety_factor * required_moment`` at each angle
        with that width [N m]; >= 0 (zero at the governing angle).
    governing_index : int
        Index of the angle that sets the width (-1 if none needs a moment).
    caution : str
        The project caution to print with the result.
    """

    width: float
    margin: np.ndarray
    governing_index: int
    caution: str = field(default=CAUTION, repr=False)


def _sizing_inputs(required_moment, moment_per_strip, safety_factor):
    req = np.atleast_1d(_arr(required_moment, "required_moment", "N m"))
    per = _arr(moment_per_strip, "moment_per_strip", "N m")
    if per.ndim and per.shape != req.shape:
        raise ActsimInputError(
            f"moment_per_strip: shape {per.shape} must be a number or match required_moment {req.shape} [N m]"
        )
    per = np.broadcast_to(per, req.shape).astype(float)
    sf = _num(safety_factor, "safety_factor", "-", lo=1.0)
    need = req > 0.0
    bad = need & (per <= 0.0)
    if np.any(bad):
        i = int(np.argmax(bad))
        raise ActsimInputError(
            f"moment_per_strip: {per[i]:g} N m at angle index {i} is outside the allowed range "
            f"(> 0 N m wherever a moment is required; required {req[i]:g} N m there)"
        )
    ratio = np.where(need, sf * req / np.where(per > 0.0, per, 1.0), 0.0)
    return req, per, sf, need, ratio


def strips_needed(*, required_moment, moment_per_strip, safety_factor) -> StripCount:
    """Number of identical strips in parallel that hold the joint at every angle.

    Parameters
    ----------
    required_moment : float or array_like
        Moment the joint must supply at each angle, e.g. from
        :func:`gravity_moment` plus any working load [N m]. Angles where it is
        <= 0 need nothing from the strips.
    moment_per_strip : float or array_like
        Moment one strip delivers, a number or one value per angle [N m];
        > 0 wherever a moment is required.
    safety_factor : float
        Factor on the required moment [-], >= 1.

    Returns
    -------
    StripCount
        ``n``, the margin and the achieved factor at each angle.

    Notes
    -----
    .. math::

        n = \\max\\Bigl(1, \\Bigl\\lceil \\max_\\varphi
            \\frac{S\\,M_\\text{req}(\\varphi)}{M_1(\\varphi)} \\Bigr\\rceil\\Bigr)

    Strips in parallel add their moments (same angle, same mounting). A
    ratio within 1e-9 above an integer is rounded down to it, so a design
    that meets the target exactly is not given a spare strip by round-off.
    The check is one-sided: where gravity drives the joint (required moment
    < 0) the strips' extra moment is not a failure here, but the joint then
    needs a stop or a brake.

    References
    ----------
    .. [1] Meriam, J. L. and Kraige, L. G., *Engineering Mechanics: Statics*,
       Wiley (equilibrium of a rigid body).
    """
    req, per, sf, need, ratio = _sizing_inputs(required_moment, moment_per_strip, safety_factor)
    if np.any(need):
        gi = int(np.argmax(ratio))
        n = max(1, int(math.ceil(float(ratio[gi]) * (1.0 - 1e-9))))
    else:
        gi, n = -1, 1
    margin = n * per - sf * req
    with np.errstate(divide="ignore", invalid="ignore"):
        achieved = np.where(need, n * per / np.where(need, req, 1.0), np.inf)
    return StripCount(n=n, margin=margin, achieved_factor=achieved, governing_index=gi)


def width_needed(*, required_moment, moment_per_strip, strip_width, safety_factor, n_strips=1) -> WidthNeeded:
    """Strip width that holds the joint at every angle (moment linear in width).

    Parameters
    ----------
    required_moment : float or array_like
        Moment the joint must supply at each angle [N m].
    moment_per_strip : float or array_like
        Moment one strip of width ``strip_width`` delivers, per angle or one
        number [N m].
    strip_width : float
        Width at which ``moment_per_strip`` was computed [m], > 0.
    safety_factor : float
        Factor on the required moment [-], >= 1.
    n_strips : int, optional
        Number of strips in parallel [-], >= 1.

    Returns
    -------
    WidthNeeded
        Width of each strip [m] and the margin at each angle [N m].

    Notes
    -----
    Bending stiffness, blocked force and blocked moment of a strip all scale
    with its width ``b`` (beam theory), so

    .. math:: b = b_0\\,\\frac{S}{n}\\,\\max_\\varphi \\frac{M_\\text{req}(\\varphi)}{M_1(\\varphi)} .

    For a strip wide against its length the plate modulus ``E/(1 - nu^2)``
    applies (see the layered-beam module); a width change that crosses from
    beam to plate is not captured by this linear scaling.

    References
    ----------
    .. [1] Timoshenko, S. P. and Gere, J. M., *Mechanics of Materials*,
       Van Nostrand Reinhold, 1972 (bending stiffness E b h^3/12).
    """
    req, per, sf, need, ratio = _sizing_inputs(required_moment, moment_per_strip, safety_factor)
    b0 = _num(strip_width, "strip_width", "m", lo=0.0, lo_open=True)
    if isinstance(n_strips, bool) or not isinstance(n_strips, (int, np.integer)) or n_strips < 1:
        raise ActsimInputError(f"n_strips: {n_strips!r} is outside the allowed range (integer >= 1)")
    if np.any(need):
        gi = int(np.argmax(ratio))
        width = b0 * float(ratio[gi]) / n_strips
    else:
        gi, width = -1, 0.0
    margin = n_strips * (width / b0) * per - sf * req
    return WidthNeeded(width=width, margin=margin, governing_index=gi)
