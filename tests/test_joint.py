"""Tests of actsim.joint: mass items, gravity moment and strip sizing."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

from actsim.elastica import blocked_tip_force, load_line
from actsim.errors import ActsimInputError
from actsim.joint import (
    STANDARD_GRAVITY,
    gravity_moment,
    hinge_moment,
    lever_moment,
    lever_moment_over_travel,
    point_mass,
    rod,
    strips_needed,
    tapered_tube,
    tube,
    width_needed,
)

# --------------------------------------------------------------------------- mass items


def test_tapered_tube_against_hand_calculation():
    # Hand calculation (centre of mass by integration, Meriam and Kraige, Engineering Mechanics:
    # Statics): D0 = 20 mm, D1 = 10 mm, bore 6 mm, length 100 mm, near end 5 mm from the joint,
    # density 2700 kg/m^3.
    #   int D^2 dt / l     = (400 + 200 + 100)/3 = 233.333 mm^2;  minus d^2 = 36      -> 197.333 mm^2
    #   int t D^2 dt / l^2 = (400 + 400 + 300)/12 = 91.6667 mm^2; minus d^2/2 = 18    -> 73.6667 mm^2
    #   r_G = 5 + 100 * 73.6667/197.333 = 5 + 37.331 = 42.331 mm
    #   m   = 2700 * pi/4 * 0.1 m * 197.333e-6 m^2 = 0.041846 kg
    t = tapered_tube(
        length=0.1, outer_diameter_near=0.02, outer_diameter_far=0.01, inner_diameter=0.006, density=2700.0,
        offset=0.005,
    )
    assert t.com_distance == pytest.approx(0.042331, abs=5e-7)
    assert t.mass == pytest.approx(0.041846, abs=5e-7)
    # the same by numerical quadrature of the wall area (scipy.integrate.quad)
    area = lambda s: math.pi / 4 * ((0.02 - 0.1 * s) ** 2 - 0.006**2)  # noqa: E731  (D = 20 mm - 0.1 s)
    m = 2700.0 * quad(area, 0.0, 0.1)[0]
    r = 0.005 + quad(lambda s: s * area(s), 0.0, 0.1)[0] / quad(area, 0.0, 0.1)[0]
    assert t.mass == pytest.approx(m, rel=1e-12)
    assert t.com_distance == pytest.approx(r, rel=1e-12)


def test_cone_and_uniform_tube_limits():
    # Solid cone: centre of mass 3h/4 from the apex, volume pi r^2 h/3 (Meriam and Kraige,
    # Engineering Mechanics: Statics, table of centroids; from memory).
    cone = tapered_tube(length=0.08, outer_diameter_near=0.0, outer_diameter_far=0.01, inner_diameter=0.0,
                        density=1000.0)
    assert cone.com_distance == pytest.approx(0.06, rel=1e-14)
    assert cone.mass == pytest.approx(1000.0 * math.pi * 0.005**2 * 0.08 / 3, rel=1e-14)
    # Uniform tube: mid-length, m = rho pi (D^2 - d^2)/4 l (same source).
    tb = tube(length=0.2, outer_diameter=0.012, inner_diameter=0.01, density=1500.0, offset=0.01)
    assert tb.com_distance == pytest.approx(0.11, rel=1e-14)
    assert tb.mass == pytest.approx(1500.0 * math.pi * (0.012**2 - 0.01**2) / 4 * 0.2, rel=1e-14)
    # Solid rod by density and diameter, or by mass (same source).
    rd = rod(length=0.05, density=7800.0, diameter=0.002)
    assert rd.mass == pytest.approx(7800.0 * math.pi * 0.001**2 * 0.05, rel=1e-14)
    assert rd.com_distance == pytest.approx(0.025)
    assert rod(length=0.05, mass=0.003, offset=0.002).com_distance == pytest.approx(0.027)


# --------------------------------------------------------------------------- gravity moment


def test_gravity_moment_m_g_r_cos():
    # Moment of a weight about a pivot, M = m g r cos(phi) (Meriam and Kraige, Statics).
    phi = np.linspace(0.0, math.pi / 3, 7)
    p = point_mass(mass=0.005, distance=0.03)
    M = gravity_moment([p], phi)
    assert np.allclose(M, 0.005 * STANDARD_GRAVITY * 0.03 * np.cos(phi), rtol=1e-15)
    assert gravity_moment([p], math.pi / 2) == pytest.approx(0.0, abs=1e-18)
    # superposition and the angle offset: an item 90 deg ahead of the link axis
    q = point_mass(mass=0.002, distance=0.01, angle_offset=math.pi / 2)
    M2 = gravity_moment([p, q], phi, gravity=9.81)
    expect = 9.81 * (0.005 * 0.03 * np.cos(phi) - 0.002 * 0.01 * np.sin(phi))
    assert np.allclose(M2, expect, rtol=1e-14)
    # a rod and a tube act through their centres of mass
    r = rod(length=0.04, mass=0.001)
    assert gravity_moment([r], 0.0) == pytest.approx(0.001 * STANDARD_GRAVITY * 0.02, rel=1e-15)


# --------------------------------------------------------------------------- strip moments


def test_lever_and_hinge_moments():
    # M = F r (Meriam and Kraige, Statics); hinge: pure bending M = EI (kappa0 - phi/l)
    # (Timoshenko and Gere, Theory of Elastic Stability: pure moment gives a circular arc).
    assert lever_moment(tip_force=0.002, lever_arm=0.004) == pytest.approx(8e-6)
    ei, k0, lh = 4e-11, 250.0, 4e-3
    assert hinge_moment(bending_stiffness=ei, spontaneous_curvature=k0, hinge_length=lh) == pytest.approx(ei * k0)
    m = hinge_moment(bending_stiffness=ei, spontaneous_curvature=k0, hinge_length=lh,
                     joint_rotation=np.array([0.0, 0.5, 1.0]))
    assert np.allclose(m, ei * (k0 - np.array([0.0, 0.5, 1.0]) / lh))
    assert m[2] == pytest.approx(0.0, abs=1e-24)  # free bend kappa0 l_h = 1 rad
    # the blocked moment of the hinge equals the elastica's fixed-rotation blocked moment
    b = blocked_tip_force(length=lh, bending_stiffness=ei, spontaneous_curvature=k0, rotation="fixed")
    assert b.tip_moment == pytest.approx(ei * k0, rel=1e-7)


def test_lever_moment_over_travel_uses_load_line():
    # Small deflection: P(u) = 3 EI (u_free - u)/L^3 (Timoshenko and Gere, Mechanics of Materials),
    # so M(phi) = r P(r (phi - phi0)), zero once the lever has moved past the free tip.
    L, ei, k = 8e-3, 4e-11, 0.1
    ll = load_line(length=L, bending_stiffness=ei, spontaneous_curvature=k, n=11)
    r = 5e-3
    u_free = ll.displacement[-1]
    phi = np.array([0.0, 0.5, 1.0, 1.5]) * u_free / r
    M = lever_moment_over_travel(load_line=ll, lever_arm=r, joint_angle=phi)
    assert M[0] == pytest.approx(r * 1.5 * ei * k / L, rel=1e-5)
    assert np.allclose(M[:3], r * 3 * ei * (u_free - r * phi[:3]) / L**3, rtol=1e-5, atol=1e-20)
    assert M[3] == 0.0
    with pytest.raises(ActsimInputError, match="^joint_angle"):
        lever_moment_over_travel(load_line=ll, lever_arm=r, joint_angle=-0.1)


# --------------------------------------------------------------------------- sizing


def test_strips_needed_rounding_and_margin():
    # Arithmetic of parallel strips: n = ceil(S M_req / M_1) (common practice, no source).
    req = np.array([0.004, 0.01, 0.006])
    # exactly 5 strips at the governing angle: no spare strip from round-off (0.015/0.003)
    res = strips_needed(required_moment=req, moment_per_strip=0.003, safety_factor=1.5)
    assert res.n == 5 and res.governing_index == 1
    assert np.allclose(res.margin, 5 * 0.003 - 1.5 * req, atol=1e-15)
    assert res.margin[1] == pytest.approx(0.0, abs=1e-15)
    assert np.allclose(res.achieved_factor, 0.015 / req)
    # just above: 6
    assert strips_needed(required_moment=req, moment_per_strip=0.003, safety_factor=1.6).n == 6
    # moment per strip varying with angle: the weakest angle governs
    per = np.array([0.003, 0.004, 0.0009])
    res = strips_needed(required_moment=req, moment_per_strip=per, safety_factor=1.0)
    assert res.n == 7 and res.governing_index == 2  # 0.006/0.0009 = 6.67
    assert np.all(res.margin >= 0)
    # gravity helping everywhere: one strip, infinite factor
    res = strips_needed(required_moment=[-0.001, 0.0], moment_per_strip=0.002, safety_factor=2.0)
    assert res.n == 1 and res.governing_index == -1 and np.all(np.isinf(res.achieved_factor))
    assert "CAUTION" in res.caution


def test_width_needed_is_linear():
    # Bending moment scales linearly with width (beam theory, E b h^3/12; Timoshenko and Gere).
    req = np.array([0.002, 0.005])
    w = width_needed(required_moment=req, moment_per_strip=0.001, strip_width=2e-3, safety_factor=2.0)
    assert w.width == pytest.approx(2e-3 * 2.0 * 5.0, rel=1e-14)
    assert w.margin[1] == pytest.approx(0.0, abs=1e-15)
    w3 = width_needed(required_moment=req, moment_per_strip=0.001, strip_width=2e-3, safety_factor=2.0, n_strips=4)
    assert w3.width == pytest.approx(w.width / 4, rel=1e-14)


def test_gripper_hinge_worked_example():
    # An invented gripper finger: a 5 g part 30 mm from the joint plus a 2 g rod of 40 mm,
    # lifted from 0 to 60 deg; strips of blocked force 1.2 mN on a 6 mm lever, safety factor 2.
    # Required moment at 0 deg: g (0.005*0.03 + 0.002*0.02) = 1.8633e-3 N m (hand calculation);
    # per strip 7.2e-6 N m; n = ceil(2 * 1.8633e-3 / 7.2e-6) = ceil(517.6) = 518.
    phi = np.radians(np.linspace(0, 60, 13))
    items = [point_mass(mass=0.005, distance=0.03), rod(length=0.04, mass=0.002)]
    req = gravity_moment(items, phi)
    assert req[0] == pytest.approx(1.8633e-3, rel=1e-4)
    res = strips_needed(required_moment=req, moment_per_strip=lever_moment(tip_force=1.2e-3, lever_arm=6e-3),
                        safety_factor=2.0)
    assert res.n == 518 and res.governing_index == 0


# --------------------------------------------------------------------------- bad input


def test_bad_input_one_line():
    # Project rule: one-line errors naming the field (no external source).
    cases = [
        (lambda: tube(length=0.1, outer_diameter=0.01, inner_diameter=0.01, density=1000.0), "inner_diameter"),
        (lambda: point_mass(mass=-1.0, distance=0.01), "mass"),
        (lambda: rod(length=-0.1, mass=0.01), "length"),
        (lambda: rod(length=0.1), "rod"),
        (lambda: rod(length=0.1, mass=0.01, density=1000.0, diameter=0.01), "rod"),
        (lambda: gravity_moment([0.005], 0.0), "items[0]"),
        (lambda: strips_needed(required_moment=1.0, moment_per_strip=0.1, safety_factor=0.5), "safety_factor"),
        (lambda: strips_needed(required_moment=[1.0, 1.0], moment_per_strip=[0.1, 0.0], safety_factor=1.5),
         "moment_per_strip"),
        (lambda: strips_needed(required_moment=[1.0, 1.0], moment_per_strip=[0.1, 0.1, 0.1], safety_factor=1.5),
         "moment_per_strip"),
        (lambda: width_needed(required_moment=1.0, moment_per_strip=0.1, strip_width=0.0, safety_factor=1.5),
         "strip_width"),
        (lambda: lever_moment(tip_force=1.0, lever_arm=-1.0), "lever_arm"),
        (lambda: hinge_moment(bending_stiffness=0.0, spontaneous_curvature=1.0, hinge_length=1.0),
         "bending_stiffness"),
    ]
    for fn, field in cases:
        with pytest.raises(ActsimInputError) as exc:
            fn()
        msg = str(exc.value)
        assert msg.startswith(field), msg
        assert "\n" not in msg
