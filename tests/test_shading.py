"""Light that follows the strip's shape (actsim.shading): Fresnel at oblique incidence, cosine and inverse-square
laws, self-shadowing of a frozen arc and of a hook, a clamp's shadow, energy, and the numba kernel against the
readable numpy form."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from actsim import optics
from actsim.errors import ActsimInputError
from actsim.shading import (Collimated, PointSource, Support, clamp_supports, face_power, fresnel_unpolarised,
                            incidence, segment_normals)

MM = 1e-3


def fresnel_sine_tangent(a, n1, n2):
    """Fresnel's sine and tangent laws (Born and Wolf, Principles of Optics, 7th ed., sec. 1.5.2, eq. (21a)):
    R_s = sin^2(a - t) / sin^2(a + t), R_p = tan^2(a - t) / tan^2(a + t), n1 sin a = n2 sin t (Snell).
    A different algebraic form from the cosine form the module uses (valid for 0 < a < pi/2, a != t)."""
    t = np.arcsin(n1 / n2 * np.sin(a))
    return np.sin(a - t) ** 2 / np.sin(a + t) ** 2, np.tan(a - t) ** 2 / np.tan(a + t) ** 2, t


def polyline(*corners, step):
    """Points every `step` along straight legs between the corners (each leg a whole number of steps)."""
    pts = [np.asarray(corners[0], float)]
    for a, b in zip(corners[:-1], corners[1:]):
        a, b = np.asarray(a, float), np.asarray(b, float)
        k = int(round(np.hypot(*(b - a)) / step))
        pts += [a + (b - a) * (j / k) for j in range(1, k + 1)]
    return np.array(pts)


def beam(travel_x, travel_z, irradiance=100.0):
    return Collimated(math.atan2(travel_z, travel_x), irradiance)


# ------------------------------------------------------------------------------------------------------- Fresnel


@pytest.mark.parametrize("n1, n2", [(1.0, 1.5), (1.0, 1.33), (1.33, 1.6), (1.5, 1.0)])
def test_fresnel_normal_incidence(n1, n2):
    # R = ((n1 - n2)/(n1 + n2))^2 at a = 0 (Born and Wolf, sec. 1.5.2, eq. (36)), and the optics stage's value.
    f = fresnel_unpolarised(angle=0.0, n_outside=n1, n_inside=n2)
    assert f.reflectance == pytest.approx(((n1 - n2) / (n1 + n2)) ** 2, rel=1e-14)
    assert f.reflectance == pytest.approx(optics.fresnel_reflectance(n_outside=n1, n_inside=n2), rel=1e-14)
    assert f.reflectance_s == pytest.approx(f.reflectance_p, rel=1e-14) and f.refraction_angle == 0.0


@pytest.mark.parametrize("n1, n2", [(1.0, 1.5), (1.5, 1.0), (1.0, 2.4)])
def test_fresnel_brewster_angle(n1, n2):
    # R_p = 0 at Brewster's angle tan a_B = n2/n1 (Born and Wolf, sec. 1.5.3), where a + t = pi/2.
    a_b = math.atan(n2 / n1)
    f = fresnel_unpolarised(angle=a_b, n_outside=n1, n_inside=n2)
    assert f.reflectance_p < 1e-28 and f.reflectance_s > 0.01
    assert a_b + f.refraction_angle == pytest.approx(math.pi / 2, abs=1e-14)


def test_fresnel_oblique_against_sine_and_tangent_laws():
    a = np.radians([5.0, 20.0, 45.0, 60.0, 75.0, 85.0, 89.0])
    for n1, n2 in [(1.0, 1.5), (1.0, 1.7), (1.33, 1.5)]:
        f = fresnel_unpolarised(angle=a, n_outside=n1, n_inside=n2)
        rs, rp, t = fresnel_sine_tangent(a, n1, n2)
        np.testing.assert_allclose(f.reflectance_s, rs, rtol=1e-12)
        np.testing.assert_allclose(f.reflectance_p, rp, rtol=1e-10)
        np.testing.assert_allclose(f.refraction_angle, t, rtol=1e-14)
        np.testing.assert_allclose(f.reflectance, 0.5 * (rs + rp), rtol=1e-12)
        np.testing.assert_allclose(f.reflectance + f.transmittance, 1.0, rtol=0, atol=1e-15)  # R + T = 1
    # glass n = 1.5 at 45 deg: R_s = 0.092, R_p = 0.0085 (tabulated worked values, from memory)
    f = fresnel_unpolarised(angle=math.radians(45.0), n_outside=1.0, n_inside=1.5)
    assert f.reflectance_s == pytest.approx(0.092, abs=5e-4) and f.reflectance_p == pytest.approx(0.0085, abs=2e-4)


def test_fresnel_grazing_and_total_internal_reflection():
    # grazing incidence reflects everything (Born and Wolf, sec. 1.5.2: r_s, r_p -> -1 as a -> pi/2)
    f = fresnel_unpolarised(angle=np.array([math.pi / 2 - 1e-6, math.pi / 2]), n_outside=1.0, n_inside=1.5)
    assert np.all(f.reflectance > 1 - 1e-5) and f.reflectance[1] == pytest.approx(1.0, abs=1e-12)
    # from the denser side past the critical angle asin(n2/n1) all light is reflected (sec. 1.5.4)
    crit = math.asin(1.0 / 1.5)
    f = fresnel_unpolarised(angle=np.array([crit - 1e-3, crit + 1e-3, 1.2]), n_outside=1.5, n_inside=1.0)
    assert f.reflectance[0] < 1.0 and f.refraction_angle[0] > math.radians(85.0)
    np.testing.assert_array_equal(f.reflectance[1:], 1.0)
    np.testing.assert_array_equal(f.transmittance[1:], 0.0)
    assert np.all(np.isnan(f.refraction_angle[1:]))


# ------------------------------------------------------------------------------------------------ cosine law


@pytest.mark.parametrize("tilt_deg", [0.0, 30.0, 60.0, 85.0])
def test_flat_strip_cosine_law_and_snell(tilt_deg):
    # A flat strip along +x (top face up) under a beam tilted by a from the vertical: E = E0 cos a on the lit
    # face, 0 on the other (Lambert's cosine law); T and cos a_t from Fresnel and Snell (Born and Wolf, 1.5.2).
    a = math.radians(tilt_deg)
    p = polyline((0, 0), (4 * MM, 0), step=MM)
    for travel_z, lit, dark in [(-1.0, 0, 1), (1.0, 1, 0)]:       # from above lights the top, from below the bottom
        light = incidence(p, beam(math.sin(a), travel_z * math.cos(a), 80.0), n_inside=1.5)
        np.testing.assert_allclose(light.irradiance[:, lit], 80.0 * math.cos(a), rtol=1e-13)
        np.testing.assert_array_equal(light.irradiance[:, dark], 0.0)
        np.testing.assert_array_equal(light.lit_fraction[:, lit], 1.0)
        np.testing.assert_array_equal(light.lit_fraction[:, dark], 0.0)
        np.testing.assert_allclose(light.cos_incidence[:, lit], math.cos(a), rtol=1e-13)
        np.testing.assert_allclose(light.cos_incidence[:, dark], -math.cos(a), rtol=1e-13)
        if tilt_deg > 0:
            rs, rp, _ = fresnel_sine_tangent(a, 1.0, 1.5)
            np.testing.assert_allclose(light.transmittance[:, lit], 1 - 0.5 * (rs + rp), rtol=1e-12)
        np.testing.assert_allclose(light.cos_refracted[:, lit], math.sqrt(1 - (math.sin(a) / 1.5) ** 2), rtol=1e-13)
        np.testing.assert_array_equal(light.cos_refracted[:, dark], 1.0)     # nothing enters: path factor 1


def test_segment_normals_of_a_square_path():
    # tangent angles and top normals n = (-sin th, cos th) of +x, +z, -x legs (the convention of the brief)
    th, length, n = segment_normals(np.array([[0, 0], [1, 0], [1, 1], [0, 1.0]]))
    np.testing.assert_allclose(th, [0, math.pi / 2, math.pi])
    np.testing.assert_allclose(length, 1.0)
    np.testing.assert_allclose(n, [[0, 1], [-1, 0], [0, -1]], atol=1e-15)


# ------------------------------------------------------------------------------------------------ frozen arc


def arc_points(kappa, length, n_seg):
    """Circular arc from the root along +x bending toward +z: x = sin(k s)/k, z = (1 - cos(k s))/k."""
    s = np.linspace(0.0, length, n_seg + 1)
    return np.column_stack((np.sin(kappa * s) / kappa, (1 - np.cos(kappa * s)) / kappa))


def test_frozen_arc_beyond_a_half_turn():
    # Hand calculation. Arc of radius R = 1/k, turned 1.5 pi, in N = 24 chords; chord i joins the points at
    # th = i pi/16 and (i+1) pi/16, so its tangent angle is exactly th_i = (i + 1/2) pi/16 (chord of a circle).
    # The beam travels at phi = pi/4 (up and to the right), d = (1, 1)/sqrt(2). The light arrives on the top
    # face where cos a_top = -d.n = sin(th - phi) > 0, i.e. th in (pi/4, 5pi/4), on the bottom elsewhere.
    # Circle: centre (0, R). The rays are the lines z - x = c. The gap of the 3/4 circle runs from the root
    # (0, 0), c = 0, to the tip (-R, R), c = 2R, facing the light. Hence:
    # * th in (0, pi/4): bottom (outer) face lit, near side of lines c in ((1 - sqrt 2) R, 0); pi/4 is where the
    #   ray grazes the arc (c = (1 - sqrt 2) R, the tangent line).
    # * th in (pi/4, pi/2): top face turned to the light, but its lines (c < 0) cross the arc first near the
    #   root (th in (0, pi/4)): shadowed. The boundary pi/2 is where the line through the root, z = x, meets
    #   the circle again: x^2 + (x - R)^2 = R^2 -> x = R, z = R, th = pi/2.
    # * th in (pi/2, pi): lines c in (0, 2R) enter through the gap: top face lit. pi is where the line through
    #   the tip, z = x + 2R, meets the circle again: x = 0, z = 2R.
    # * th in (pi, 5pi/4): top face turned to the light, lines c in (2R, (1 + sqrt 2) R) cross the arc first at
    #   th in (5pi/4, 3pi/2): shadowed. 5pi/4 is the second grazing point (c = (1 + sqrt 2) R).
    # * th in (5pi/4, 3pi/2): bottom face lit (near side).
    # Every boundary is a chord end (multiples of pi/16), so each chord is wholly lit or dark; the polygon is
    # convex like the circle, so the same chords are lit. Irradiance on a lit face: E0 |sin(th_i - pi/4)|.
    r, e0 = 2 * MM, 50.0
    p = arc_points(1 / r, 1.5 * math.pi * r, 24)
    light = incidence(p, Collimated(math.pi / 4, e0), n_inside=1.6, samples=7)
    th = (np.arange(24) + 0.5) * math.pi / 16
    top = (th > math.pi / 2) & (th < math.pi)
    bottom = (th < math.pi / 4) | (th > 5 * math.pi / 4)
    np.testing.assert_array_equal(light.lit_fraction[:, 0], top.astype(float))
    np.testing.assert_array_equal(light.lit_fraction[:, 1], bottom.astype(float))
    expected = np.column_stack((top, bottom)) * e0 * np.abs(np.sin(th - math.pi / 4))[:, None]
    np.testing.assert_allclose(light.irradiance, expected, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(light.cos_incidence[:, 0], np.sin(th - math.pi / 4), atol=1e-14)
    a = np.arccos(np.abs(np.sin(th - math.pi / 4)))
    rs, rp, t = fresnel_sine_tangent(a, 1.0, 1.6)
    lit = top | bottom
    np.testing.assert_allclose(light.transmittance[lit].max(axis=1), (1 - 0.5 * (rs + rp))[lit], rtol=1e-11)
    np.testing.assert_allclose(light.cos_refracted[lit].min(axis=1), np.cos(t)[lit], rtol=1e-12)


def test_unshadowed_arc_gets_the_beam_it_intercepts():
    # An arc turned less than a half turn, lit from above: nothing shadows; cos a = cos th_i on the top face and
    # the power received is E0 w times the arc's extent across the beam, R sin(kL) (geometry: each vertical ray
    # between x = 0 and the tip meets the arc once).
    r, w, e0 = 3 * MM, 2 * MM, 40.0
    p = arc_points(1 / r, math.pi / 3 * r, 30)
    light = incidence(p, Collimated(-math.pi / 2, e0), n_inside=1.5)
    th = (np.arange(30) + 0.5) * (math.pi / 3) / 30
    np.testing.assert_allclose(light.irradiance[:, 0], e0 * np.cos(th), rtol=1e-12)
    assert face_power(light, p, width=w).sum() == pytest.approx(e0 * w * r * math.sin(math.pi / 3), rel=1e-12)


# --------------------------------------------------------------------------------------------- hook and clamp


def hook():
    # lower arm (0,0)-(4,0) mm in 8 segments, up (4,0)-(4,1) in 2, upper arm back (4,1)-(1.5,1) in 5: the tip
    # curls back over the root part.
    return polyline((0, 0), (4 * MM, 0), (4 * MM, 1 * MM), (1.5 * MM, 1 * MM), step=0.5 * MM)


def test_hook_tip_shadows_the_root_part():
    # Beam travelling along (0.62, -1): a point (x, 1 mm) of the upper arm shades (x + 0.62 mm, 0) of the lower
    # arm, so the lower arm is dark for x in (1.5 + 0.62, 4) mm = (2.12, 4) mm. Hand count of the 5 sample
    # points of the lower segments (at 0.05, 0.15, ... 0.45 mm into each): [2.0, 2.5] has 2.05 lit and
    # 2.15 ... 2.45 dark: 1/5; [2.5, 4] all dark; [0, 2] all lit. The vertical leg faces the light (its top
    # normal is -x) but a ray back from height z meets z = 1 mm at x = 4 - 0.62 (1 - z) mm > 1.5 mm: all dark,
    # its upper samples shaded by the neighbouring first segment of the upper arm (the shared corner excluded).
    # The upper arm's bottom face (facing +z) is lit whole; cos a = 1/|d| on all lit faces.
    d = math.hypot(0.62, 1.0)
    light = incidence(hook(), beam(0.62, -1.0, 100.0), n_inside=1.5)
    np.testing.assert_array_equal(light.lit_fraction[:, 0], [1, 1, 1, 1, 0.2, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0])
    np.testing.assert_array_equal(light.lit_fraction[:, 1], [0] * 10 + [1] * 5)
    assert light.cos_incidence[8, 0] == pytest.approx(0.62 / d, rel=1e-14)       # vertical leg faces the light
    np.testing.assert_allclose(light.irradiance[4, 0], 0.2 * 100 / d, rtol=1e-13)
    np.testing.assert_allclose(light.irradiance[10:, 1], 100 / d, rtol=1e-13)


def test_hook_energy_equals_the_beam_it_intercepts():
    # With shadows, every ray that meets the hook delivers its power once: the total equals E0 w times the
    # hook's extent across the beam, (max - min of x + 0.62 z)/|d| = 4.62 mm/|d| (geometry). With 100 samples
    # per 0.5 mm the shadow edge at 2.12 mm falls between samples 23 and 24 of its segment: exact.
    w, d = 1 * MM, math.hypot(0.62, 1.0)
    light = incidence(hook(), beam(0.62, -1.0, 100.0), n_inside=1.5, samples=100)
    assert light.lit_fraction[4, 0] == 0.24
    assert face_power(light, hook(), width=w).sum() == pytest.approx(100 * w * 4.62 * MM / d, rel=1e-12)


def test_clamp_shadows_the_root():
    # Jaws 0.3 mm high at the root of a flat strip; beam travelling along (1, -1): the upper jaw's corner
    # (0, 0.3 mm) shades x < 0.3 mm. Segments of 0.25 mm, samples every 0.05 mm: segment 0 dark, segment 1 has
    # 0.275 dark and 0.325 ... 0.475 lit (4/5). Light from the other side is not blocked by jaws behind the root.
    p = polyline((0, 0), (2 * MM, 0), step=0.25 * MM)
    expected = [0, 0.8, 1, 1, 1, 1, 1, 1]
    for depth in (None, 1 * MM):
        jaws = clamp_supports(p, height=0.3 * MM, depth=depth)
        light = incidence(p, beam(1, -1), n_inside=1.5, supports=jaws)
        np.testing.assert_array_equal(light.lit_fraction[:, 0], expected)
        light = incidence(p, beam(-1, -1), n_inside=1.5, supports=jaws)
        np.testing.assert_array_equal(light.lit_fraction[:, 0], 1.0)
    front = Support((0.0, 0.0), (0.0, 0.3 * MM))                   # the jaw's front face alone: the same shadow
    light = incidence(p, beam(1, -1), n_inside=1.5, supports=front)
    np.testing.assert_array_equal(light.lit_fraction[:, 0], expected)
    # a ray back from (x, 0) crosses x = 0 at height x: a wall from 0.1 mm upwards (half-line) shades x > 0.1 mm
    # (segment 0: 0.025 and 0.075 lit, 2/5; the rest dark); the piece from 0.1 to 0.2 mm only x in (0.1, 0.2) mm
    wall = incidence(p, beam(1, -1), n_inside=1.5, supports=Support((0, 0.1 * MM), (0, 0.2 * MM), half_line=True))
    piece = incidence(p, beam(1, -1), n_inside=1.5, supports=Support((0, 0.1 * MM), (0, 0.2 * MM)))
    np.testing.assert_array_equal(wall.lit_fraction[:, 0], [0.4, 0, 0, 0, 0, 0, 0, 0])
    np.testing.assert_array_equal(piece.lit_fraction[:, 0], [0.6, 1, 1, 1, 1, 1, 1, 1])


# ------------------------------------------------------------------------------------------------ point source


def test_point_source_inverse_square_and_cosine():
    # E = I cos a / r^2 = I H / (x^2 + H^2)^(3/2) on a flat strip under a source at height H (inverse-square and
    # cosine laws; e.g. Born and Wolf, sec. 4.8.1 on photometric quantities, from memory).
    h, i0 = 2 * MM, 0.05
    p = polyline((-5 * MM, 0), (5 * MM, 0), step=0.5 * MM)
    xm = 0.5 * (p[:-1, 0] + p[1:, 0])
    light = incidence(p, PointSource((0.0, h), i0), n_inside=1.5, samples=1)
    np.testing.assert_allclose(light.irradiance[:, 0], i0 * h / (xm ** 2 + h ** 2) ** 1.5, rtol=1e-13)
    assert np.all(light.irradiance[:, 1] == 0)
    # the source above the middle lights the middle most, falling off on both sides
    e = light.irradiance[:, 0]
    assert set(np.argsort(e)[-2:]) == {9, 10} and np.all(np.diff(e[:10]) > 0) and np.all(np.diff(e[10:]) < 0)
    # the segment mean against the closed-form integral: (1/dx) int I H/(x^2+H^2)^1.5 dx = I/(H dx) [x/sqrt(x^2+H^2)]
    fine = incidence(p, PointSource((0.0, h), i0), n_inside=1.5, samples=400)
    g = p[:, 0] / np.sqrt(p[:, 0] ** 2 + h ** 2)
    np.testing.assert_allclose(fine.irradiance[:, 0], i0 / (h * 0.5 * MM) * np.diff(g), rtol=2e-6)
    # doubling the distance straight below quarters the irradiance (cos a = 1)
    one = polyline((-1e-3 * MM, 0), (1e-3 * MM, 0), step=2e-3 * MM)
    e1 = incidence(one, PointSource((0.0, h), i0), n_inside=1.5, samples=1).irradiance[0, 0]
    e2 = incidence(one, PointSource((0.0, 2 * h), i0), n_inside=1.5, samples=1).irradiance[0, 0]
    assert e1 / e2 == pytest.approx(4.0, rel=1e-9)


def test_point_source_cone_and_side():
    # A cone of half angle 30 deg about the downward axis reaches |x| <= H tan 30 deg only; a source below the
    # strip lights the bottom face (geometry).
    h = 2 * MM
    p = polyline((-5 * MM, 0), (5 * MM, 0), step=0.5 * MM)
    xm = 0.5 * (p[:-1, 0] + p[1:, 0])
    full = incidence(p, PointSource((0.0, h), 0.05), n_inside=1.5, samples=1)
    cone = incidence(p, PointSource((0.0, h), 0.05, half_angle=math.radians(30)), n_inside=1.5, samples=1)
    inside = np.abs(xm) <= h * math.tan(math.radians(30))
    np.testing.assert_array_equal(cone.irradiance[:, 0], np.where(inside, full.irradiance[:, 0], 0.0))
    assert 0 < inside.sum() < len(xm)
    below = incidence(p, PointSource((0.0, -h), 0.05, axis=math.pi / 2), n_inside=1.5, samples=1)
    np.testing.assert_allclose(below.irradiance[:, 1], full.irradiance[:, 0], rtol=1e-14)
    assert np.all(below.irradiance[:, 0] == 0)


# ------------------------------------------------------------------------------------------------ energy


@pytest.mark.parametrize("phi_deg", [-90.0, -60.0, -20.0, 15.0, 135.0])
def test_flat_strip_receives_the_projected_beam(phi_deg):
    # Power on a flat unshadowed strip = E0 x projected length L |sin phi| x width (geometry of a collimated beam).
    p = polyline((0, 0), (6 * MM, 0), step=0.5 * MM)
    phi = math.radians(phi_deg)
    light = incidence(p, Collimated(phi, 120.0), n_inside=1.5)
    assert face_power(light, p, width=2 * MM).sum() == pytest.approx(120 * 6 * MM * abs(math.sin(phi)) * 2 * MM,
                                                                      rel=1e-12)


# ------------------------------------------------------------------------------------------------ numba = numpy


@settings(max_examples=60, deadline=None)
@given(turns=st.lists(st.floats(-2.8, 2.8), min_size=1, max_size=14),
       lengths=st.lists(st.floats(0.2, 1.0), min_size=14, max_size=14),
       kind=st.sampled_from(["beam", "point", "cone"]), angle=st.floats(-math.pi, math.pi),
       pos=st.tuples(st.floats(-3, 3), st.floats(-3, 3)), samples=st.integers(1, 9), clamp=st.booleans())
def test_numba_kernel_equals_numpy_form(turns, lengths, kind, angle, pos, samples, clamp):
    th = np.cumsum(turns)
    steps = np.column_stack((np.cos(th), np.sin(th))) * np.array(lengths[: len(th)])[:, None] * MM
    p = np.vstack(([0.0, 0.0], np.cumsum(steps, axis=0)))
    if kind == "beam":
        src = Collimated(angle, 75.0)
    else:
        src = PointSource((pos[0] * MM, pos[1] * MM), 0.02, half_angle=1.0 if kind == "cone" else math.pi,
                          axis=angle)
    sup = clamp_supports(p, height=0.4 * MM) if clamp else ()
    a = incidence(p, src, n_inside=1.55, n_outside=1.2, samples=samples, supports=sup)
    b = incidence(p, src, n_inside=1.55, n_outside=1.2, samples=samples, supports=sup, method="numpy")
    for name, x, y in zip(a._fields, a, b):
        np.testing.assert_allclose(x, y, rtol=1e-12, atol=1e-12 * max(1.0, float(np.abs(y).max())), err_msg=name)


# ------------------------------------------------------------------------------------------------ bad input


@pytest.mark.parametrize("call, field", [
    (lambda p: incidence(p[:1], beam(0, -1), n_inside=1.5), "points"),
    (lambda p: incidence(np.vstack((p, p[-1:])), beam(0, -1), n_inside=1.5), "points"),
    (lambda p: incidence(p, Collimated(-1.0, -5.0), n_inside=1.5), "source.irradiance"),
    (lambda p: incidence(p, PointSource((0, 1), 1.0, half_angle=0.0), n_inside=1.5), "source.half_angle"),
    (lambda p: incidence(p, (0, -1), n_inside=1.5), "source"),
    (lambda p: incidence(p, beam(0, -1), n_inside=-1.5), "n_inside"),
    (lambda p: incidence(p, beam(0, -1), n_inside=1.5, samples=0), "samples"),
    (lambda p: incidence(p, beam(0, -1), n_inside=1.5, samples=2.5), "samples"),
    (lambda p: incidence(p, PointSource((0, math.inf), 1.0), n_inside=1.5), "source.position"),
    (lambda p: incidence(p, beam(0, -1), n_inside=1.5, method="fast"), "method"),
    (lambda p: incidence(p, beam(0, -1), n_inside=1.5, supports=[Support((0, 0), (0, 0))]), "supports[0]"),
    (lambda p: fresnel_unpolarised(angle=2.0, n_outside=1.0, n_inside=1.5), "angle"),
])
def test_bad_input_is_one_line(call, field):
    with pytest.raises(ActsimInputError) as e:
        call(polyline((0, 0), (1 * MM, 0), step=0.5 * MM))
    assert str(e.value).startswith(field + ":") and "\n" not in str(e.value)
