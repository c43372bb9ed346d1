"""Tests of actsim.elastica against closed forms of the elastica and beam theory."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq
from scipy.special import ellipe, ellipeinc, ellipk, ellipkinc

import actsim.elastica as el
from actsim.elastica import (
    blocked_tip_force,
    cantilever_shape,
    circular_arc_tip,
    load_line,
    piecewise_curvature,
)
from actsim.errors import ActsimInputError

# An invented strip of our own: 8 mm free length, 2 mm wide, 50 um thick, E = 2 GPa.
L_STRIP = 8e-3
EI_STRIP = 2e9 * 2e-3 * (50e-6) ** 3 / 12  # E b h^3 / 12 [N m^2]


def bisshopp_drucker(alpha):
    """Tip of a cantilever under a transverse dead end load P, alpha = P L^2/EI.

    Closed form of Bisshopp and Drucker, "Large deflection of cantilever beams",
    Q. Appl. Math. 3 (1945) 272-275: with k = sqrt((1 + sin theta0)/2) and
    sin(phi1) = 1/(k sqrt 2),
        sqrt(alpha) = K(k) - F(phi1, k),
        y_tip/L     = 1 - (2/sqrt(alpha)) [E(k) - E(phi1, k)],
        x_tip/L     = sqrt(2 sin(theta0) / alpha).
    scipy's elliptic integrals take the parameter m = k^2.
    Returns (theta0, x_tip/L, y_tip/L).
    """

    def k_of(t0):
        return math.sqrt((1.0 + math.sin(t0)) / 2.0)

    def f(t0):
        k = k_of(t0)
        phi1 = math.asin(1.0 / (k * math.sqrt(2.0)))
        return ellipk(k * k) - ellipkinc(phi1, k * k) - math.sqrt(alpha)

    t0 = brentq(f, 1e-12, math.pi / 2 - 1e-14, xtol=1e-15, rtol=1e-15)
    k = k_of(t0)
    phi1 = math.asin(1.0 / (k * math.sqrt(2.0)))
    y = 1.0 - 2.0 / math.sqrt(alpha) * (ellipe(k * k) - ellipeinc(phi1, k * k))
    x = math.sqrt(2.0 * math.sin(t0) / alpha)
    return t0, x, y


# --------------------------------------------------------------------------- large deflection, end load


def test_closed_form_reproduces_table_values_at_alpha_1():
    # Bisshopp and Drucker (1945), table of tip deflections: at P L^2/EI = 1,
    # vertical deflection 0.302 L and horizontal shortening 0.056 L (from memory,
    # to the 3 decimals quoted). Our evaluation of their closed form gives
    # 0.30172 and 0.05643; tip angle 0.46135 rad (26.43 deg).
    t0, x, y = bisshopp_drucker(1.0)
    assert y == pytest.approx(0.302, abs=1e-3)
    assert 1.0 - x == pytest.approx(0.056, abs=1e-3)
    # The same closed form evaluated by direct quadrature of the first integral
    # of the elastica (Timoshenko and Gere, Theory of Elastic Stability, 1961, sec. 2.7):
    # y/L = int_0^t0 sin(t) dt / sqrt(2 alpha (sin t0 - sin t)).
    yq = quad(lambda t: math.sin(t) / math.sqrt(math.sin(t0) - math.sin(t)), 0.0, t0)[0] / math.sqrt(2.0)
    assert y == pytest.approx(yq, rel=1e-9)


@pytest.mark.parametrize("alpha", [0.25, 1.0, 3.0, 10.0])
def test_end_load_matches_bisshopp_drucker(alpha):
    # Bisshopp and Drucker, Q. Appl. Math. 3 (1945) 272-275, elliptic-integral closed form.
    t0, x, y = bisshopp_drucker(alpha)
    P = alpha * EI_STRIP / L_STRIP**2
    r = cantilever_shape(
        length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=0.0, tip_force=(0.0, -P)
    )
    assert r.success
    # downward load: the tip goes to -y and turns clockwise
    assert r.tip_y / L_STRIP == pytest.approx(-y, abs=1e-8)
    assert r.tip_x / L_STRIP == pytest.approx(x, abs=1e-8)
    assert r.tip_angle == pytest.approx(-t0, abs=1e-8)
    # free-end condition: no bending moment at the tip; clamp moment = P * x_tip
    assert abs(r.bending_moment[-1]) < 1e-9 * P * L_STRIP
    assert r.bending_moment[0] == pytest.approx(-P * r.tip_x, rel=1e-7)


# --------------------------------------------------------------------------- small-deflection limits


def test_small_end_load_limit():
    # Timoshenko and Gere, Mechanics of Materials (cantilever with end load):
    # tip deflection P L^3/(3 EI), tip slope P L^2/(2 EI). At P L^2/EI = 1e-4 the
    # large-deflection correction is of relative size ~1e-9 (Bisshopp-Drucker series).
    P = 1e-4 * EI_STRIP / L_STRIP**2
    r = cantilever_shape(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=0.0, tip_force=(0.0, P))
    assert r.tip_y == pytest.approx(P * L_STRIP**3 / (3 * EI_STRIP), rel=1e-6)
    assert r.tip_angle == pytest.approx(P * L_STRIP**2 / (2 * EI_STRIP), rel=1e-6)


def test_self_weight_small_deflection():
    # Timoshenko and Gere, Mechanics of Materials (cantilever, uniform load w):
    # tip deflection w L^4/(8 EI), tip slope w L^3/(6 EI).
    w = 1e-4 * EI_STRIP / L_STRIP**3
    r = cantilever_shape(
        length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=0.0, weight_per_length=w
    )
    assert r.tip_y == pytest.approx(-w * L_STRIP**4 / (8 * EI_STRIP), rel=1e-5)
    assert r.tip_angle == pytest.approx(-w * L_STRIP**3 / (6 * EI_STRIP), rel=1e-5)
    # gravity along +x (strip hanging up-side down in tension) gives no bending
    r2 = cantilever_shape(
        length=L_STRIP,
        bending_stiffness=EI_STRIP,
        spontaneous_curvature=0.0,
        weight_per_length=w,
        gravity_direction=(1.0, 0.0),
    )
    assert np.max(np.abs(r2.y)) < 1e-12


@pytest.mark.parametrize("ml_over_ei", [1.0, 4.0])
def test_tip_moment_gives_exact_circular_arc(ml_over_ei):
    # Pure bending: a constant moment M bends an elastic strip into a circular arc of
    # curvature M/EI at any size (Timoshenko and Gere, Theory of Elastic Stability, 1961).
    # M L/EI = 4 rad turns the tip beyond 180 degrees.
    M = ml_over_ei * EI_STRIP / L_STRIP
    r = cantilever_shape(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=0.0, tip_moment=M)
    kappa = M / EI_STRIP
    assert r.tip_angle == pytest.approx(ml_over_ei, abs=1e-9)
    assert np.allclose(r.x, np.sin(kappa * r.s) / kappa, atol=1e-8 * L_STRIP, rtol=0)
    assert np.allclose(r.y, (1 - np.cos(kappa * r.s)) / kappa, atol=1e-8 * L_STRIP, rtol=0)
    assert np.allclose(r.bending_moment, M, rtol=1e-8)


@pytest.mark.parametrize("kl", [0.5, 4.0, -2.5])
def test_unloaded_uniform_curvature_is_circular_arc(kl):
    # Geometry of a circle: with theta = kappa s, x = sin(kappa s)/kappa, y = (1 - cos(kappa s))/kappa.
    # kappa L = 4 rad curls the strip beyond 180 degrees.
    kappa = kl / L_STRIP
    r = cantilever_shape(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=kappa)
    assert np.allclose(r.theta, kappa * r.s, atol=1e-12)
    # measured: 1.3e-8 L at |kappa L| = 2.5 and 4 (solver tolerance 1e-6 on the residual)
    assert np.allclose(r.x, np.sin(kappa * r.s) / kappa, atol=5e-8 * L_STRIP, rtol=0)
    assert np.allclose(r.y, (1 - np.cos(kappa * r.s)) / kappa, atol=5e-8 * L_STRIP, rtol=0)
    xt, yt, at = circular_arc_tip(curvature=kappa, length=L_STRIP)
    assert (r.tip_x, r.tip_y) == pytest.approx((xt, yt), abs=5e-8 * L_STRIP)
    assert r.tip_angle == pytest.approx(at, abs=1e-12)
    assert np.allclose(r.bending_moment, 0.0, atol=1e-12)


def test_curled_strip_with_load_beyond_180_degrees():
    # Superposition of the pure-moment arc (Timoshenko and Gere, 1961): a strip curled by
    # kappa0 L = 4 rad and loaded by the end moment -EI kappa0 / 2 is an arc of curvature
    # kappa0 / 2 (tip at 2 rad); with +EI kappa0 / 4 an arc of 5 rad (beyond 180 deg + 90 deg).
    k0 = 4.0 / L_STRIP
    for m_frac, angle in ((-0.5, 2.0), (0.25, 5.0)):
        r = cantilever_shape(
            length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=k0, tip_moment=m_frac * EI_STRIP * k0
        )
        assert r.tip_angle == pytest.approx(angle, abs=1e-9)
        xt, yt, _ = circular_arc_tip(curvature=angle / L_STRIP, length=L_STRIP)
        assert (r.tip_x, r.tip_y) == pytest.approx((xt, yt), abs=1e-8 * L_STRIP)
    # and a dead end force on the curled strip converges by continuation (no closed form:
    # checked by moment balance at the clamp, M(0) = x_L F_y - y_L F_x)
    F = (-20 * EI_STRIP / L_STRIP**2, 5 * EI_STRIP / L_STRIP**2)
    r = cantilever_shape(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=k0, tip_force=F)
    assert r.success and r.tip_angle > math.pi
    assert r.bending_moment[0] == pytest.approx(r.tip_x * F[1] - r.tip_y * F[0], rel=1e-7)


# --------------------------------------------------------------------------- patterned light


def test_hinge_lit_strip_folds_by_kappa_h_times_l_h():
    # Integral of curvature: the fold angle is int kappa0 ds = kappa_h l_h, and unlit
    # parts stay straight; the tip follows from plane geometry (straight - arc - straight).
    a, lh, kh = 3e-3, 1.5e-3, 1.2 / 1.5e-3  # fold 1.2 rad
    hinge = piecewise_curvature([a, a + lh], [kh])
    r = cantilever_shape(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=hinge)
    phi = kh * lh
    assert r.tip_angle == pytest.approx(phi, abs=1e-12)
    before = r.s < a - 1e-12
    after = r.s > a + lh + 1e-12
    assert np.allclose(r.theta[before], 0.0, atol=1e-12)
    assert np.allclose(r.theta[after], phi, atol=1e-12)
    assert np.allclose(r.y[before], 0.0, atol=1e-9 * L_STRIP)
    rest = L_STRIP - a - lh
    x_tip = a + math.sin(phi) / kh + rest * math.cos(phi)
    y_tip = (1 - math.cos(phi)) / kh + rest * math.sin(phi)
    assert (r.tip_x, r.tip_y) == pytest.approx((x_tip, y_tip), abs=1e-8 * L_STRIP)


def test_curvature_as_array_and_callable():
    # Linear curvature kappa0 = c s gives theta = c s^2/2 without load (integral of curvature);
    # tip position by scipy.integrate.quad of cos/sin theta.
    c = 3.0 / L_STRIP**2  # tip angle 1.5 rad
    n = 201
    s = np.linspace(0, L_STRIP, n)
    xt = quad(lambda t: math.cos(c * t * t / 2), 0, L_STRIP, epsabs=1e-15)[0]
    yt = quad(lambda t: math.sin(c * t * t / 2), 0, L_STRIP, epsabs=1e-15)[0]
    for spec in (c * s, lambda t: c * t):
        r = cantilever_shape(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=spec, n_points=n)
        assert np.allclose(r.theta, c * r.s**2 / 2, atol=1e-12)
        assert (r.tip_x, r.tip_y) == pytest.approx((xt, yt), abs=1e-8 * L_STRIP)


# --------------------------------------------------------------------------- blocked force and load line


def test_blocked_force_small_deflection():
    # Timoshenko and Gere, Mechanics of Materials: equating the free tip rise kappa L^2/2 with the
    # end-load deflection F L^3/(3 EI) gives F = 3 EI kappa/(2 L) (tip free to rotate).
    kappa = 1e-3 / L_STRIP
    b = blocked_tip_force(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=kappa)
    assert b.force == pytest.approx(1.5 * EI_STRIP * kappa / L_STRIP, rel=1e-5)
    assert abs(b.shape.tip_y) < 1e-10 * L_STRIP
    assert b.tip_moment == 0.0


@pytest.mark.parametrize("rotation", ["free", "fixed"])
def test_blocked_hinge_small_deflection_moment_area(rotation):
    # Moment-area theorems (Timoshenko and Gere, Mechanics of Materials): tip slope = int kappa ds,
    # tip deflection = int kappa (L - s) ds, with kappa = kappa0 + M(s)/EI and, for applied tip
    # force F and moment M_L, M(s)/EI = (F (L - s) + M_L)/EI. A hinge lit on [a, b] gives
    # I0 = kh (b - a), I1 = kh ((L - a)^2 - (L - b)^2)/2.
    a, b, kh = 2e-3, 3.5e-3, 1e-3 / 1.5e-3  # 1 mrad fold: small deflection
    I0 = kh * (b - a)
    I1 = kh * ((L_STRIP - a) ** 2 - (L_STRIP - b) ** 2) / 2
    hinge = piecewise_curvature([a, b], [kh])
    res = blocked_tip_force(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=hinge, rotation=rotation)
    L, EI = L_STRIP, EI_STRIP
    if rotation == "free":
        F, M = -3 * EI * I1 / L**3, 0.0  # I1 + F L^3/(3 EI) = 0
    else:
        A = np.array([[L**2 / (2 * EI), L / EI], [L**3 / (3 * EI), L**2 / (2 * EI)]])
        F, M = np.linalg.solve(A, [-I0, -I1])
    # the result is what the strip exerts on the support: minus the applied loads
    assert res.force == pytest.approx(-F, rel=1e-5)
    assert res.tip_moment == pytest.approx(-M, rel=1e-5, abs=1e-12 * EI / L)


def test_blocked_fixed_rotation_uniform_curvature_is_pure_moment():
    # Pure bending (Timoshenko and Gere): the moment EI kappa0 undoes a uniform curvature exactly,
    # so a tip held on the axis at zero rotation needs no force, at any size (here 2 rad).
    kappa = 2.0 / L_STRIP
    b = blocked_tip_force(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=kappa, rotation="fixed")
    assert abs(b.force) < 1e-7 * EI_STRIP * kappa / L_STRIP
    assert b.tip_moment == pytest.approx(EI_STRIP * kappa, rel=1e-7)
    assert np.allclose(b.shape.y, 0.0, atol=1e-9 * L_STRIP)


def test_blocked_force_large_curl_round_trip():
    # Round trip (no external source; consistency of the two solvers): the blocked force of a
    # strip curled by 2 rad, applied as a dead load, brings the tip back to y = 0. (Above about
    # 2.4 rad the dead load can find another equilibrium; see blocked_tip_force Notes.)
    kappa = 2.0 / L_STRIP
    b = blocked_tip_force(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=kappa)
    assert b.force > 1.5 * EI_STRIP * kappa / L_STRIP  # stiffens beyond the small-deflection value
    r = cantilever_shape(
        length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=kappa, tip_force=(0.0, -b.force)
    )
    assert abs(r.tip_y) < 5e-8 * L_STRIP  # measured 1.3e-8 L
    assert r.tip_x == pytest.approx(b.shape.tip_x, abs=5e-8 * L_STRIP)


def test_load_line_small_deflection():
    # Timoshenko and Gere, Mechanics of Materials: linear spring P = 3 EI (u_free - u)/L^3 with
    # u_free = kappa L^2/2, so the work from blocked to free is 3 EI kappa^2 L/8.
    kappa = 1e-3 / L_STRIP
    ll = load_line(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=kappa, n=11)
    u_free = kappa * L_STRIP**2 / 2
    assert ll.displacement[0] == 0.0
    assert ll.displacement[-1] == pytest.approx(u_free, rel=1e-6)
    u_end = ll.displacement[-1]  # = u_free (1 - (kappa L)^2/12 + ...) at large deflection
    assert np.allclose(ll.force, 3 * EI_STRIP * (u_end - ll.displacement) / L_STRIP**3, rtol=1e-5,
                       atol=1e-8 * EI_STRIP * kappa / L_STRIP)
    assert ll.work == pytest.approx(3 * EI_STRIP * kappa**2 * L_STRIP / 8, rel=1e-5)
    b = blocked_tip_force(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=kappa)
    assert ll.force[0] == pytest.approx(b.force, rel=1e-8)


@pytest.mark.parametrize("kl", [2.0, 3.0])
def test_load_line_large_curl_ends_match(kl):
    # End points: free tip rise of the circular arc (1 - cos kL)/k (geometry) and the blocked
    # force (same model). At 3 rad the path from blocked folds and snaps to the branch of the
    # free shape (a snap-through under displacement control; no external source).
    kappa = kl / L_STRIP
    ll = load_line(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=kappa, n=9)
    _, yt, _ = circular_arc_tip(curvature=kappa, length=L_STRIP)
    assert ll.displacement[-1] == pytest.approx(yt, rel=1e-7)
    assert ll.force[-1] == 0.0
    b = blocked_tip_force(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=kappa)
    assert ll.force[0] == pytest.approx(b.force, rel=1e-7)
    assert np.all(np.diff(ll.displacement) > 0) and np.all(ll.force >= 0)
    assert ll.work > 0
    if kl < 2.4:
        assert math.isnan(ll.snap_displacement)
        assert np.all(np.diff(ll.force) < 0)
    else:
        assert 0 < ll.snap_displacement < yt


# --------------------------------------------------------------------------- circular arc helper


def test_circular_arc_tip_series_and_zero():
    # Taylor series of sin and 1 - cos: x = L - k^2 L^3/6, y = k L^2/2 - k^3 L^4/24 (+ O(k^4), O(k^5)).
    L = 0.01
    for k in (1e-9, 1e-6, 1e-3):
        x, y, a = circular_arc_tip(curvature=k, length=L)
        assert x == pytest.approx(L - k**2 * L**3 / 6, rel=1e-15, abs=0)
        assert y == pytest.approx(k * L**2 / 2 - k**3 * L**4 / 24, rel=1e-14)
        assert a == pytest.approx(k * L)
    assert circular_arc_tip(curvature=0.0, length=L) == (L, 0.0, 0.0)
    xs, ys, _ = circular_arc_tip(curvature=np.array([0.0, 100.0, -300.0]), length=L)
    assert xs[2] == pytest.approx(math.sin(-3.0) / -300.0, rel=1e-14)
    assert ys[1] == pytest.approx((1 - math.cos(1.0)) / 100.0, rel=1e-14)


# --------------------------------------------------------------------------- bad input


@pytest.mark.parametrize(
    "kw, field",
    [
        (dict(length=-1e-3), "length"),
        (dict(length=0.0), "length"),
        (dict(bending_stiffness=-1.0), "bending_stiffness"),
        (dict(bending_stiffness=float("nan")), "bending_stiffness"),
        (dict(tip_force=(1.0, 2.0, 3.0)), "tip_force"),
        (dict(weight_per_length=-1.0), "weight_per_length"),
        (dict(spontaneous_curvature=float("inf")), "spontaneous_curvature"),
        (dict(spontaneous_curvature=np.ones(7)), "spontaneous_curvature"),
        (dict(gravity_direction=(0.0, 0.0)), "gravity_direction"),
    ],
)
def test_bad_input_one_line(kw, field):
    # common practice, no source: one-line input errors naming the field (project rule)
    args = dict(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=0.0)
    args.update(kw)
    with pytest.raises(ActsimInputError) as exc:
        cantilever_shape(**args)
    msg = str(exc.value)
    assert msg.startswith(field) and "\n" not in msg


def test_bad_input_other_functions():
    with pytest.raises(ActsimInputError, match="^length"):
        blocked_tip_force(length=-1.0, bending_stiffness=EI_STRIP, spontaneous_curvature=1.0)
    with pytest.raises(ActsimInputError, match="^rotation"):
        blocked_tip_force(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=1.0, rotation="pinned")
    with pytest.raises(ActsimInputError, match="^bending_stiffness"):
        load_line(length=L_STRIP, bending_stiffness=0.0, spontaneous_curvature=1.0)
    with pytest.raises(ActsimInputError, match="^s_edges"):
        piecewise_curvature([2e-3, 1e-3], [5.0])
    with pytest.raises(ActsimInputError, match="^curvatures"):
        piecewise_curvature([1e-3, 2e-3], [5.0, 6.0])


def test_load_beyond_range_is_refused_in_one_line():
    # Beyond |F| L^2/EI = 1e6 the clamp boundary layer is shorter than L/1000 (common practice, no source:
    # slender-beam theory needs lengths well above the thickness).
    P = 1e9 * EI_STRIP / L_STRIP**2
    with pytest.raises(ActsimInputError) as exc:
        cantilever_shape(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=0.0, tip_force=(0, P))
    msg = str(exc.value)
    assert msg.startswith("tip_force") and "\n" not in msg and "1e+06" in msg


def test_no_convergence_reports_largest_load_fraction(monkeypatch):
    # Forced failure of the BVP solver above 30 % of the load (a stand-in for a snap-through):
    # the error is one line and names the fraction and load reached; raise_on_failure=False
    # returns the last converged shape instead. (Project rule; no external source.)
    P = 10.0 * EI_STRIP / L_STRIP**2
    real = el._solve

    def failing(system, bc, guess, p0=None):
        if abs(system.force[1]) > 0.3 * 10.0 + 1e-9:
            return None
        return real(system, bc, guess, p0)

    monkeypatch.setattr(el, "_solve", failing)
    with pytest.raises(ActsimInputError) as exc:
        cantilever_shape(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=0.0, tip_force=(0, P))
    msg = str(exc.value)
    assert "\n" not in msg and "did not converge beyond" in msg
    r = cantilever_shape(
        length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=0.0, tip_force=(0, P), raise_on_failure=False
    )
    assert not r.success and 0.25 <= r.load_fraction <= 0.3
    assert f"{100 * r.load_fraction:.3g} %" in r.message
    # the returned shape is the converged one at that fraction: compare with the closed form
    _, _, y = bisshopp_drucker(10.0 * r.load_fraction)
    assert r.tip_y / L_STRIP == pytest.approx(y, abs=1e-8)
