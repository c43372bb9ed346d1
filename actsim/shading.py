"""Light that follows the strip's shape: oblique incidence, Fresnel entry and self-shadowing (bending plane x-z).

The strip's centre line is a polyline :math:`P_0 \\dots P_N` (root at :math:`P_0`); segment *i* has the tangent
angle :math:`\\theta_i` from +x, the top-face normal :math:`\\mathbf n_i = (-\\sin\\theta_i, \\cos\\theta_i)` and the
bottom-face normal :math:`-\\mathbf n_i`. Each segment is sampled at ``samples`` points (midpoints of equal parts).
At a point Q with unit vector :math:`\\mathbf v` towards the source, a face of normal :math:`\\mathbf m` has

.. math:: \\cos a = \\mathbf v \\cdot \\mathbf m, \\qquad
   E = E_0 \\cos a \\ \\text{(collimated)}, \\qquad E = \\frac{I \\cos a}{r^2} \\ \\text{(point source)}

where :math:`\\cos a > 10^{-12}` (light on that face's side), the point is inside the beam's cone, and the ray from Q to
the source crosses no other segment and no support (2-D segment intersection; the strip is a line, opaque).
The light entering the film follows Fresnel's formulae for unpolarised light [1]_ and Snell's law; the path
through the film is lengthened by :math:`1/\\cos a_t`, so a cell's optical depth becomes :math:`\\tau/\\cos a_t`.
Equations, checks and limits: docs/models.md, "Light that follows the shape".

References
----------
.. [1] Born, M. and Wolf, E. Principles of Optics, 7th ed., Cambridge 1999, sec. 1.5.2 (Fresnel formulae).
.. [2] O'Rourke, J. Computational Geometry in C, 2nd ed., Cambridge 1998, sec. 7.2 (segment intersection).
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
from numba import njit

from .errors import ActsimInputError
from .units import check_range

#: A hit on a neighbouring segment closer than this (fraction of its length) to the shared end point is
#: the shared point itself (a grazing ray), not a shadow.
NEIGHBOUR_EPS = 1e-9
#: A face is lit only where cos a exceeds this (grazing light carries nothing and its side is round-off), and
#: a point source's own position (ray parameter within this of 1) shades nothing.
GRAZING_EPS = 1e-12
#: Most segments and sample points per segment :func:`incidence` accepts.
MAX_SEGMENTS = 100_000
MAX_SAMPLES = 1000


class Collimated(NamedTuple):
    """A collimated beam: travel direction ``angle`` from +x in the x-z plane [rad] (light from the top:
    -pi/2) and ``irradiance`` on a plane normal to the beam [W m-2]."""

    angle: float
    irradiance: float


class PointSource(NamedTuple):
    """A point (small) source at ``position`` (x, z) [m] with radiant intensity ``intensity`` [W sr-1];
    light only within ``half_angle`` [rad] of the beam axis, whose direction is ``axis`` from +x [rad]
    (default -pi/2, pointing down; half_angle = pi: every direction)."""

    position: tuple
    intensity: float
    half_angle: float = math.pi
    axis: float = -math.pi / 2


class Support(NamedTuple):
    """An opaque obstacle (a clamp's face): the segment from ``start`` to ``end`` (x, z) [m], or the half-line
    from ``start`` through ``end`` when ``half_line``."""

    start: tuple
    end: tuple
    half_line: bool = False


class FresnelResult(NamedTuple):
    """Fresnel entry for unpolarised light: reflectance R, transmittance T = 1 - R [1], refraction angle [rad]
    (nan under total internal reflection), and the s and p reflectances [1]."""

    reflectance: np.ndarray
    transmittance: np.ndarray
    refraction_angle: np.ndarray
    reflectance_s: np.ndarray
    reflectance_p: np.ndarray


class FaceLight(NamedTuple):
    """Light on each face of each segment; arrays (n_seg, 2), column 0 the top face, 1 the bottom face.

    Attributes
    ----------
    cos_incidence : numpy.ndarray
        cos a at the segment's midpoint, signed (> 0: the light arrives on that face's side) [1].
    lit_fraction : numpy.ndarray
        Fraction of the sample points that receive light (facing, inside the cone, not shadowed) [1].
    irradiance : numpy.ndarray
        Mean irradiance on the face over the sample points (cosine law, inverse square, cone, shadow) [W m-2].
    transmittance : numpy.ndarray
        Irradiance-weighted Fresnel transmittance (irradiance * transmittance enters the film); where no light
        arrives, the transmittance at the midpoint's angle (0 for a face turned away) [1].
    cos_refracted : numpy.ndarray
        cos a_t inside the film, weighted by the entering power; 1 where nothing enters [1].
    """

    cos_incidence: np.ndarray
    lit_fraction: np.ndarray
    irradiance: np.ndarray
    transmittance: np.ndarray
    cos_refracted: np.ndarray


def _fresnel_cos(ci, n1, n2):
    """Fresnel reflectances from cos a (numpy, no checks): (R_s, R_p, sin a_t, cos a_t)."""
    ci = np.asarray(ci, dtype=float)
    st = (n1 / n2) * np.sqrt(np.maximum(1.0 - ci * ci, 0.0))
    ct = np.sqrt(np.maximum(1.0 - st * st, 0.0))
    den_s = n1 * ci + n2 * ct
    den_p = n2 * ci + n1 * ct
    with np.errstate(invalid="ignore", divide="ignore"):
        rs = np.where(den_s > 0.0, (n1 * ci - n2 * ct) / den_s, 1.0) ** 2
        rp = np.where(den_p > 0.0, (n2 * ci - n1 * ct) / den_p, 1.0) ** 2
    tir = st >= 1.0
    return np.where(tir, 1.0, rs), np.where(tir, 1.0, rp), st, ct


def fresnel_unpolarised(*, angle, n_outside, n_inside):
    """Reflectance and transmittance of a flat interface for unpolarised light at oblique incidence.

    .. math:: \\sin a_t = \\frac{n_1}{n_2}\\sin a, \\quad
       r_s = \\frac{n_1\\cos a - n_2\\cos a_t}{n_1\\cos a + n_2\\cos a_t}, \\quad
       r_p = \\frac{n_2\\cos a - n_1\\cos a_t}{n_2\\cos a + n_1\\cos a_t}, \\quad
       T = 1 - \\tfrac12(r_s^2 + r_p^2)

    Past the critical angle (:math:`\\sin a_t \\ge 1`) all light is reflected: R = 1, T = 0, angle nan.

    Parameters
    ----------
    angle : float or numpy.ndarray
        Angle of incidence from the interface normal, 0 .. pi/2 [rad].
    n_outside, n_inside : float
        Refractive indices of the medium the light comes from and of the one it enters [1].

    Returns
    -------
    FresnelResult
        reflectance, transmittance [1], refraction_angle [rad], reflectance_s, reflectance_p [1].

    References
    ----------
    .. [1] Born and Wolf, Principles of Optics, 7th ed., 1999, sec. 1.5.2, eqs. (20)-(21) and (35).
    """
    n1, n2 = _indices(n_outside, n_inside)
    a = np.asarray(angle, dtype=float)
    if a.size and not (np.all(np.isfinite(a)) and a.min() >= 0.0 and a.max() <= math.pi / 2):
        bad = a[~(np.isfinite(a) & (a >= 0.0) & (a <= math.pi / 2))].flat[0]
        raise ActsimInputError(f"angle: {bad:g} is outside the allowed range (>= 0 and <= {math.pi / 2:g} rad)")
    rs, rp, st, _ = _fresnel_cos(np.cos(a), n1, n2)
    r = 0.5 * (rs + rp)
    with np.errstate(invalid="ignore"):
        at = np.where(st >= 1.0, np.nan, np.arcsin(np.minimum(st, 1.0)))
    return FresnelResult(r, 1.0 - r, at, rs, rp)


def segment_normals(points):
    """Tangent angles, lengths and top-face unit normals of the segments of a polyline.

    .. math:: \\theta_i = \\operatorname{atan2}(\\Delta z_i, \\Delta x_i), \\qquad
       \\mathbf n_i = (-\\sin\\theta_i, \\cos\\theta_i)

    Parameters
    ----------
    points : numpy.ndarray, shape (N + 1, 2)
        Centre-line points (x, z) from the root [m].

    Returns
    -------
    (theta, length, normal) : numpy.ndarray, shapes (N,), (N,), (N, 2)
        Tangent angles [rad], segment lengths [m], top-face normals [1].
    """
    d = np.diff(_check_points(points), axis=0)
    theta = np.arctan2(d[:, 1], d[:, 0])
    return theta, np.hypot(d[:, 0], d[:, 1]), np.column_stack((-np.sin(theta), np.cos(theta)))


def clamp_supports(points, *, height, depth=None):
    """The two jaws of a clamp at the root: faces across the strip at P_0 of ``height`` on each side, and
    their outer faces running back from the root (length ``depth``, or half-lines when None).

    Parameters
    ----------
    points : numpy.ndarray, shape (N + 1, 2)
        Centre-line points (x, z) from the root [m].
    height : float
        Height of each jaw above and below the strip's centre line [m].
    depth : float or None
        Length of the jaws behind the root [m]; None: they run back without end.

    Returns
    -------
    tuple of Support
        Four obstacles (front and outer face of the upper jaw, then of the lower jaw).
    """
    theta, _, normal = segment_normals(points)
    check_range(float(height), field="height", unit="m", lo=0.0, lo_open=True)
    if depth is not None:
        check_range(float(depth), field="depth", unit="m", lo=0.0, lo_open=True)
    p0, back, out = np.asarray(points, dtype=float)[0], -np.array([math.cos(theta[0]), math.sin(theta[0])]), []
    for side in (1.0, -1.0):
        corner = p0 + side * height * normal[0]
        far = corner + back * (1.0 if depth is None else depth)
        out += [Support(tuple(p0), tuple(corner)), Support(tuple(corner), tuple(far), half_line=depth is None)]
    return tuple(out)


def _check_points(points):
    p = np.asarray(points, dtype=float)
    if p.ndim != 2 or p.shape[1] != 2 or not 2 <= p.shape[0] <= MAX_SEGMENTS + 1:
        raise ActsimInputError(f"points: shape {p.shape} is not allowed (need (N + 1, 2) with 1 <= N <= "
                               f"{MAX_SEGMENTS} segments, m)")
    if not np.all(np.isfinite(p)):
        raise ActsimInputError("points: a coordinate is not finite (allowed: finite numbers, m)")
    seg = np.hypot(*np.diff(p, axis=0).T)
    if np.any(seg <= 1e-12 * max(np.ptp(p[:, 0]) + np.ptp(p[:, 1]), 1e-300)):
        i = int(np.argmin(seg))
        raise ActsimInputError(f"points: segment {i} has length {seg[i]:g} m (allowed: > 0 m, distinct points)")
    return p


def _indices(n_outside, n_inside):
    return tuple(check_range(float(v), field=f, unit="1", lo=0.0, lo_open=True, hi=10.0)
                 for v, f in ((n_outside, "n_outside"), (n_inside, "n_inside")))


def _finite(value, field, unit):
    v = float(value)
    if not math.isfinite(v):
        raise ActsimInputError(f"{field}: {v:g} is outside the allowed range (a finite number, {unit})")
    return v


def _source_arrays(source):
    """(kind, sx, sz, dx, dz, power, cos_half): kind 0 collimated (d the travel direction), 1 point (d the axis)."""
    if isinstance(source, Collimated):
        ang = _finite(source.angle, "source.angle", "rad")
        e0 = check_range(float(source.irradiance), field="source.irradiance", unit="W/m^2", lo=0.0)
        return 0, 0.0, 0.0, math.cos(ang), math.sin(ang), e0, -2.0
    if isinstance(source, PointSource):
        sx, sz = (_finite(v, "source.position", "m") for v in source.position)
        i0 = check_range(float(source.intensity), field="source.intensity", unit="W/sr", lo=0.0)
        half = check_range(float(source.half_angle), field="source.half_angle", unit="rad", lo=0.0, lo_open=True,
                           hi=math.pi)
        ax = _finite(source.axis, "source.axis", "rad")
        return 1, sx, sz, math.cos(ax), math.sin(ax), i0, (-2.0 if half >= math.pi else math.cos(half))
    raise ActsimInputError(f"source: {type(source).__name__} is not allowed (Collimated or PointSource)")


def _obstacle_arrays(supports):
    sup = (supports,) if isinstance(supports, Support) else tuple(supports or ())
    a, b, ray = np.zeros((len(sup), 2)), np.zeros((len(sup), 2)), np.zeros(len(sup), dtype=np.bool_)
    for k, s in enumerate(sup):
        if not isinstance(s, Support):
            raise ActsimInputError(f"supports[{k}]: {type(s).__name__} is not allowed (a Support)")
        a[k], b[k], ray[k] = s.start, s.end, bool(s.half_line)
        if not (np.all(np.isfinite(a[k])) and np.all(np.isfinite(b[k]))) or np.all(a[k] == b[k]):
            raise ActsimInputError(f"supports[{k}]: start {tuple(a[k])} and end {tuple(b[k])} m are not allowed "
                                   "(finite, distinct points)")
    return a, b, ray


def incidence(points, source, *, n_inside, n_outside=1.0, samples=5, supports=(), method="numba"):
    """Light on both faces of every segment of a bent strip: cosine law, cone, self-shadowing and Fresnel entry.

    .. math:: E_i = \\frac{1}{m}\\sum_{k=1}^{m} \\ell_{ik}\\, E_{ik} \\cos a_{ik}, \\qquad
       T_i = \\frac{\\sum_k \\ell_{ik} E_{ik}\\cos a_{ik}\\, T(a_{ik})}{\\sum_k \\ell_{ik} E_{ik}\\cos a_{ik}}

    with :math:`\\ell_{ik}` = 1 if sample point k of segment i is lit (facing, inside the cone, not shadowed).

    Parameters
    ----------
    points : numpy.ndarray, shape (N + 1, 2)
        Centre-line points (x, z) from the root [m].
    source : Collimated or PointSource
        The light source: irradiance [W m-2] or intensity [W sr-1], position [m], angles [rad].
    n_inside : float
        Refractive index of the film's surface layer [1].
    n_outside : float
        Refractive index of the ambient medium [1].
    samples : int
        Sample points per segment (midpoints of equal parts) for the shadow and the cone.
    supports : Support or sequence of Support
        Opaque obstacles besides the strip, end points [m] (see :func:`clamp_supports`).
    method : str
        "numba" (the compiled kernel :func:`shade_kernel`) or "numpy" (the readable vectorised form).

    Returns
    -------
    FaceLight
        Arrays (N, 2): column 0 the top face, column 1 the bottom face.

    Notes
    -----
    The strip is a line for the shadow test (thickness much smaller than the length) and fully opaque.
    A ray that only grazes the end point shared with a neighbouring segment casts no shadow.
    """
    p = _check_points(points)
    src = _source_arrays(source)
    n1, n2 = _indices(n_outside, n_inside)
    if isinstance(samples, (bool, float, str)) or not isinstance(samples, (int, np.integer)):
        raise ActsimInputError(f"samples: {samples!r} is not allowed (an integer from 1 to {MAX_SAMPLES})")
    m = int(check_range(int(samples), field="samples", unit="1", lo=1, hi=MAX_SAMPLES))
    oa, ob, oray = _obstacle_arrays(supports)
    if method == "numpy":
        return _incidence_numpy(p, src, n1, n2, m, oa, ob, oray)
    if method != "numba":
        raise ActsimInputError(f"method: {method!r} is not allowed (numba or numpy)")
    n = p.shape[0] - 1
    out = np.empty((5, n, 2))
    shade_kernel(np.ascontiguousarray(p), *src, n1, n2, m, oa, ob, oray, out)
    return FaceLight(*out)


def face_power(light, points, *, width):
    """Power falling on each face of each segment: irradiance x segment length x width.

    Parameters
    ----------
    light : FaceLight
        The result of :func:`incidence` for ``points`` (irradiance [W m-2]).
    points : numpy.ndarray, shape (N + 1, 2)
        Centre-line points (x, z) [m].
    width : float
        Width of the strip across the bending plane [m].

    Returns
    -------
    numpy.ndarray, shape (N, 2)
        Power [W] (column 0 top, 1 bottom); times ``light.transmittance``: the power entering the film.
    """
    _, length, _ = segment_normals(points)
    w = check_range(float(width), field="width", unit="m", lo=0.0, lo_open=True)
    return np.asarray(light.irradiance) * length[:, None] * w


# ---------------------------------------------------------------------------------------------------- numpy form


def _incidence_numpy(p, src, n1, n2, m, oa, ob, oray):
    """Readable vectorised form of :func:`shade_kernel` (the same arithmetic on whole arrays)."""
    kind, sx, sz, dx, dz, power, cos_half = src
    n = p.shape[0] - 1
    e = np.diff(p, axis=0)
    length = np.hypot(e[:, 0], e[:, 1])
    nrm = np.column_stack((-e[:, 1] / length, e[:, 0] / length))           # top-face normals
    frac = np.append((np.arange(m) + 0.5) / m, 0.5)                         # m sample points, then the midpoint
    q = p[:-1, None, :] + frac[None, :, None] * e[:, None, :]               # (n, m + 1, 2)
    if kind == 0:                                                           # beam: ray Q - t d, 0 < t
        ray = np.broadcast_to(np.array([-dx, -dz]), q.shape)
        r2, inside, tmax = np.ones(q.shape[:2]), np.ones(q.shape[:2], dtype=bool), np.inf
    else:                                                                   # point: ray Q + t (S - Q), 0 < t < 1
        ray = np.array([sx, sz]) - q
        r2 = ray[..., 0] * ray[..., 0] + ray[..., 1] * ray[..., 1]
        inside = (-(ray[..., 0] * dx + ray[..., 1] * dz) >= cos_half * np.sqrt(r2)) & (r2 > 0.0)
        tmax = 1.0 - GRAZING_EPS
    rr = np.sqrt(r2)
    rr = np.where(rr > 0.0, rr, 1.0)
    cos_top = (ray[..., 0] * nrm[:, None, 0] + ray[..., 1] * nrm[:, None, 1]) / rr
    # shadow: Q + t v = A + u E for every segment and support; u bounds per receiving segment i (rows)
    a = np.concatenate((p[:-1], oa))
    ev = np.concatenate((e, ob - oa))
    lo, hi = np.zeros((n, len(a))), np.ones((n, len(a)))
    hi[:, n:] = np.where(oray, np.inf, 1.0)
    i = np.arange(n)
    lo[i, i] = np.inf                                                       # itself: never
    lo[i[:-1], i[:-1] + 1] = NEIGHBOUR_EPS                                  # next one starts at the shared point
    hi[i[1:], i[1:] - 1] = 1.0 - NEIGHBOUR_EPS                              # previous one ends there
    qs, vs = q[:, :m, None, :], ray[:, :m, None, :]
    den = vs[..., 0] * ev[:, 1] - vs[..., 1] * ev[:, 0]                     # (n, m, K)
    wx, wz = a[:, 0] - qs[..., 0], a[:, 1] - qs[..., 1]
    with np.errstate(invalid="ignore", divide="ignore"):
        t = (wx * ev[:, 1] - wz * ev[:, 0]) / den
        u = (wx * vs[..., 1] - wz * vs[..., 0]) / den
        blocked = ((den != 0.0) & (t > 0.0) & (t < tmax) & (u >= lo[:, None]) & (u <= hi[:, None])).any(axis=-1)
    out = np.empty((5, n, 2))
    for f, sign in enumerate((1.0, -1.0)):
        c = sign * cos_top
        lit = (c[:, :m] > GRAZING_EPS) & inside[:, :m] & ~blocked
        e_k = np.where(lit, power * c[:, :m] / r2[:, :m], 0.0)
        rs, rp, _, ct = _fresnel_cos(np.clip(c, 0.0, 1.0), n1, n2)
        t_k = 1.0 - 0.5 * (rs + rp)
        s_e = e_k.sum(axis=1)
        s_et = (e_k * t_k[:, :m]).sum(axis=1)
        s_etc = (e_k * t_k[:, :m] * ct[:, :m]).sum(axis=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            out[:, :, f] = (c[:, m], lit.sum(axis=1) / m, s_e / m, np.where(s_e > 0.0, s_et / s_e, t_k[:, m]),
                            np.where(s_et > 0.0, s_etc / s_et, 1.0))
    return FaceLight(*out)


# ---------------------------------------------------------------------------------------------------- numba form


@njit(cache=True)
def _fresnel_nb(ci, n1, n2):
    """Scalar :func:`_fresnel_cos`: (T, cos a_t) [1]."""
    st = (n1 / n2) * math.sqrt(max(1.0 - ci * ci, 0.0))
    if st >= 1.0:
        return 0.0, 0.0
    ct = math.sqrt(max(1.0 - st * st, 0.0))
    den_s = n1 * ci + n2 * ct
    den_p = n2 * ci + n1 * ct
    rs = ((n1 * ci - n2 * ct) / den_s) ** 2 if den_s > 0.0 else 1.0
    rp = ((n2 * ci - n1 * ct) / den_p) ** 2 if den_p > 0.0 else 1.0
    return 1.0 - 0.5 * (rs + rp), ct


@njit(cache=True)
def _hit(qx, qz, vx, vz, ax, az, ex, ez, tmax, ulo, uhi):
    """Does the ray Q + t v (0 < t < tmax) cross A + u E (ulo <= u <= uhi)?"""
    den = vx * ez - vz * ex
    if den == 0.0:
        return False
    wx, wz = ax - qx, az - qz
    t = (wx * ez - wz * ex) / den
    u = (wx * vz - wz * vx) / den
    return t > 0.0 and t < tmax and u >= ulo and u <= uhi


@njit(cache=True)
def _blocked(p, i, qx, qz, vx, vz, tmax, oa, ob, oray):
    """Is the ray from a point of segment i blocked by another segment or a support?"""
    n = p.shape[0] - 1
    for j in range(n):
        if j != i and _hit(qx, qz, vx, vz, p[j, 0], p[j, 1], p[j + 1, 0] - p[j, 0], p[j + 1, 1] - p[j, 1], tmax,
                           NEIGHBOUR_EPS if j == i + 1 else 0.0, 1.0 - NEIGHBOUR_EPS if j == i - 1 else 1.0):
            return True
    for j in range(oa.shape[0]):
        if _hit(qx, qz, vx, vz, oa[j, 0], oa[j, 1], ob[j, 0] - oa[j, 0], ob[j, 1] - oa[j, 1], tmax, 0.0,
                np.inf if oray[j] else 1.0):
            return True
    return False


@njit(cache=True)
def shade_kernel(p, kind, sx, sz, dx, dz, power, cos_half, n1, n2, m, oa, ob, oray, out):
    """Kernel of :func:`incidence` (positional, no checks, no allocation but a (4, 2) sum per segment).

    Parameters
    ----------
    p : numpy.ndarray, shape (N + 1, 2)
        Centre-line points [m].
    kind, m : int
        0 collimated, 1 point source; sample points per segment.
    sx, sz, dx, dz : float
        Point source position [m] (unused for a beam); unit travel direction of a beam or cone axis [1].
    power, cos_half : float
        Beam irradiance [W m-2] or point source intensity [W sr-1]; cosine of the cone's half angle (-2: none) [1].
    n1, n2 : float
        Refractive indices outside and inside [1].
    oa, ob, oray : numpy.ndarray, shapes (K, 2), (K, 2), (K,)
        Start and end of each support [m]; True (bool) where it is a half-line from its start through its end.
    out : numpy.ndarray, shape (5, N, 2)
        Filled with the fields of :class:`FaceLight` in order: [1], [1], [W m-2], [1], [1].
    """
    n = p.shape[0] - 1
    acc = np.zeros((4, 2))                              # lit count, sum E, sum E T, sum E T cos a_t
    for i in range(n):
        ex, ez = p[i + 1, 0] - p[i, 0], p[i + 1, 1] - p[i, 1]
        length = math.sqrt(ex * ex + ez * ez)
        nx, nz = -ez / length, ex / length
        acc[:] = 0.0
        for k in range(m + 1):                          # m sample points, then the midpoint (k == m)
            fr = (k + 0.5) / m if k < m else 0.5
            qx, qz = p[i, 0] + fr * ex, p[i, 1] + fr * ez
            if kind == 0:
                vx, vz, r2, inside, tmax = -dx, -dz, 1.0, True, np.inf
            else:
                vx, vz = sx - qx, sz - qz
                r2 = vx * vx + vz * vz
                inside = (-(vx * dx + vz * dz) >= cos_half * math.sqrt(r2)) and r2 > 0.0
                tmax = 1.0 - GRAZING_EPS
            rr = math.sqrt(r2)
            cos_top = (vx * nx + vz * nz) / (rr if rr > 0.0 else 1.0)
            if k == m:
                out[0, i, 0], out[0, i, 1] = cos_top, -cos_top
            elif inside and abs(cos_top) > GRAZING_EPS and not _blocked(p, i, qx, qz, vx, vz, tmax, oa, ob, oray):
                f = 0 if cos_top > 0.0 else 1
                c = abs(cos_top)
                e_k = power * c / r2
                t_k, ct = _fresnel_nb(min(c, 1.0), n1, n2)
                acc[0, f] += 1.0
                acc[1, f] += e_k
                acc[2, f] += e_k * t_k
                acc[3, f] += e_k * t_k * ct
        for f in range(2):
            out[1, i, f] = acc[0, f] / m
            out[2, i, f] = acc[1, f] / m
            if acc[1, f] > 0.0:
                out[3, i, f] = acc[2, f] / acc[1, f]
            else:
                out[3, i, f] = _fresnel_nb(min(max(out[0, i, f], 0.0), 1.0), n1, n2)[0]
            out[4, i, f] = acc[3, f] / acc[2, f] if acc[2, f] > 0.0 else 1.0
