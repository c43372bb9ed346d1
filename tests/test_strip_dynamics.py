"""Tests of actsim.strip_dynamics against beam-vibration closed forms, the elastica and energy balances.

``-s`` prints the measured errors and orders.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import actsim.strip_dynamics as sd
from actsim.elastica import cantilever_shape
from actsim.errors import ActsimInputError

# An invented strip of our own: 10 mm free length, 2 mm wide, 50 um thick, E = 2 GPa, 1200 kg/m^3.
L = 10e-3
EI, RHO_A = sd.strip_section(width=2e-3, thickness=50e-6, modulus=2e9, density=1200.0)
# Clamped-free beam, beta_n L (Blevins, Formulas for Natural Frequency and Mode Shape, 1979, table 8-1);
# more digits from the roots of cos(x) cosh(x) = -1, solved here below.
BETA_L = (1.87510407, 4.69409113, 7.85475744)


def strip(n, **kw):
    return sd.strip_params(length=L, n_segments=n, bending_stiffness=EI, mass_per_length=RHO_A, **kw)


def omega_beam(k):
    return BETA_L[k] ** 2 * math.sqrt(EI / (RHO_A * L**4))


def mode1_state(p, tip_angle):
    """Initial state: the discrete first mode scaled to a tip angle, at rest."""
    _, v = sd.natural_frequencies(p, 1)
    th = v[:, 0] / sd.tip_angle(v[:, 0]) * tip_angle
    return np.concatenate([th, np.zeros_like(th)])


def crossings(t, x):
    """Times where x changes sign, by linear interpolation."""
    i = np.nonzero(np.sign(x[:-1]) * np.sign(x[1:]) < 0)[0]
    return t[i] - x[i] * (t[i + 1] - t[i]) / (x[i + 1] - x[i])


def peaks(t, x):
    """Local maxima of x refined by a parabola through three samples."""
    i = np.nonzero((x[1:-1] > x[:-2]) & (x[1:-1] >= x[2:]))[0] + 1
    a, b, c = x[i - 1], x[i], x[i + 1]
    return b - 0.25 * (a - c) ** 2 / (a - 2 * b + c)


# --------------------------------------------------------------------------- natural frequencies


def test_beta_l_are_roots_of_the_frequency_equation():
    # Clamped-free frequency equation cos(bL) cosh(bL) + 1 = 0 (Blevins 1979, table 8-1).
    from scipy.optimize import brentq

    for b in BETA_L:
        root = brentq(lambda x: math.cos(x) * math.cosh(x) + 1.0, b - 0.1, b + 0.1, xtol=1e-14)
        assert root == pytest.approx(b, abs=1e-8)


def test_frequencies_converge_to_blevins_at_second_order():
    # w_n = (beta_n L)^2 sqrt(EI/(rho_A L^4)), Blevins (1979) table 8-1.
    ns = (10, 20, 40, 80)
    err = np.array([sd.natural_frequencies(strip(n), 3)[0] / [omega_beam(k) for k in range(3)] - 1 for n in ns])
    order = np.log2(np.abs(err[:-1] / err[1:]))
    print("\nrelative frequency error (modes 1-3) at N =", ns, "\n", err, "\norder", order)
    assert np.all(np.abs(err[-1]) < 5e-4)
    assert np.all((order > 1.95) & (order < 2.05))
    f = sd.natural_frequencies(strip(40), 3)[0] / (2 * math.pi)
    print("demo strip, N = 40: f1..f3 =", f, "Hz")


def test_rigid_rotation_kinetic_energy_is_the_rod_about_its_end():
    # A straight rod turning about its end: T = (1/2) (rho_A L^3/3) w^2 (any mechanics text, e.g.
    # Meirovitch 2001, moment of inertia of a slender rod about one end).
    p = strip(7)
    w = 3.0
    assert sd.kinetic_energy(p, np.zeros(7), np.full(7, w)) == pytest.approx(0.5 * RHO_A * L**3 / 3 * w * w, rel=1e-12, abs=0.0)


# --------------------------------------------------------------------------- free and damped vibration


def test_free_vibration_oscillates_at_w1():
    # Period measured from zero crossings of the tip against 2 pi / w1 (Blevins 1979, table 8-1),
    # within the discretisation error of N = 12 segments (the eigenvalue's own error).
    p = strip(12)
    w_disc = sd.natural_frequencies(p, 1)[0][0]
    period = 2 * math.pi / w_disc
    t = np.linspace(0.0, 5.2 * period, 2001)
    sol = sd.integrate_strip(p, 0.0, (0.0, t[-1]), mode1_state(p, 1e-3), rtol=1e-8, atol=1e-14, t_eval=t)
    z = sd.tip_position(sol.y[:12], p.ds)[1]
    tc = crossings(t, z)
    w_meas = math.pi / np.mean(np.diff(tc))
    print(f"\nw1 measured {w_meas:.6f}, discrete {w_disc:.6f}, Blevins {omega_beam(0):.6f} rad/s")
    assert w_meas == pytest.approx(w_disc, rel=2e-5)
    assert abs(w_meas / omega_beam(0) - 1) < 1.05 * abs(w_disc / omega_beam(0) - 1) + 2e-5


@pytest.mark.parametrize("kind", ["kelvin_voigt", "linear_drag"])
def test_damped_vibration_log_decrement_and_energy_balance(kind):
    # Modal damping: Kelvin-Voigt zeta = eta_s w1/2 (stiffness-proportional damping; Meirovitch,
    # Fundamentals of Vibrations, 2001, proportional damping, from memory for the section); linear drag
    # zeta = c_lin/(2 rho_A w1) (mass-proportional). Log decrement delta = 2 pi zeta / sqrt(1 - zeta^2).
    zeta = 0.02
    w1 = sd.natural_frequencies(strip(10), 1)[0][0]
    kw = {"kv_time": 2 * zeta / w1} if kind == "kelvin_voigt" else {"drag_linear": 2 * zeta * RHO_A * w1}
    p = strip(10, **kw)
    t = np.linspace(0.0, 6.3 * 2 * math.pi / w1, 3001)
    y0 = mode1_state(p, 1e-3)
    sol = sd.integrate_strip(p, 0.0, (0.0, t[-1]), y0, rtol=1e-9, atol=1e-15, t_eval=t, dense_output=True)
    z = sd.tip_position(sol.y[:10], p.ds)[1]
    pk = peaks(t, z)
    delta = np.log(pk[:-1] / pk[1:])
    print(f"\n{kind}: log decrements {delta}, expected {2 * math.pi * zeta / math.sqrt(1 - zeta**2):.6f}")
    assert delta == pytest.approx(2 * math.pi * zeta / math.sqrt(1 - zeta**2), rel=2e-4)
    # energy balance: kinetic + elastic + dissipated = initial elastic energy
    n = p.n_segments
    e0 = sd.elastic_energy(p, y0[:n], 0.0)
    e_end = sd.kinetic_energy(p, sol.y[:n, -1], sol.y[n:, -1]) + sd.elastic_energy(p, sol.y[:n, -1], 0.0)
    assert e_end + sd.dissipated_energy(p, sol) == pytest.approx(e0, rel=1e-6, abs=0.0)
    assert e_end < 0.25 * e0


def test_undamped_energy_is_conserved_to_the_tolerance():
    # Conservation of kinetic + elastic energy of an undamped conservative system (Lagrange; e.g.
    # Meirovitch 2001): the drift over 50 periods of a large oscillation (tip angle 0.8 rad) follows rtol.
    p = strip(3)
    n = 3
    w1 = sd.natural_frequencies(p, 1)[0][0]
    y0 = mode1_state(p, 0.8)
    e0 = sd.elastic_energy(p, y0[:n], 0.0)
    t = np.linspace(0.0, 50 * 2 * math.pi / w1, 401)
    drift = {}
    for rtol in (1e-6, 1e-8):
        sol = sd.integrate_strip(p, 0.0, (0.0, t[-1]), y0, rtol=rtol, atol=rtol * 1e-3, method="DOP853", t_eval=t)
        e = [sd.kinetic_energy(p, y[:n], y[n:]) + sd.elastic_energy(p, y[:n], 0.0) for y in sol.y.T]
        drift[rtol] = np.max(np.abs(np.array(e) / e0 - 1))
        assert np.max(np.abs(sd.tip_angle(sol.y[:n]))) > 0.75  # it stays a large oscillation
    print("\nenergy drift over 50 periods against rtol:", drift)
    assert drift[1e-6] < 1e-4
    assert drift[1e-8] < 0.05 * drift[1e-6]


def test_jacobian_matches_finite_differences():
    # Central differences of the right-hand side (common practice, no source), all terms switched on.
    n = 5
    p = strip(n, kv_time=1e-4, drag_linear=1e-4, drag_quadratic=2.4e-3, gravity=(3.0, -9.81),
              tip_force=(1e-7, -2e-7), tip_moment=1e-10, rotary_inertia=1e-12)
    rng = np.random.default_rng(3)
    y = np.concatenate([rng.normal(size=n), 300 * rng.normal(size=n)])
    k0 = 100 * rng.normal(size=n)

    def f(y):
        return np.concatenate([y[n:], sd.generalised_acceleration(p, y[:n], y[n:], k0)])

    jac = sd.strip_jacobian(p, y[:n], y[n:], k0)
    num = np.zeros_like(jac)
    for i in range(2 * n):
        h = 1e-6 * max(1.0, abs(y[i]))
        e = np.zeros(2 * n)
        e[i] = h
        num[:, i] = (f(y + e) - f(y - e)) / (2 * h)
    assert np.max(np.abs(jac - num)) < 1e-7 * np.max(np.abs(num))


# --------------------------------------------------------------------------- statics


@pytest.mark.parametrize("kl", [0.5, 1.5, 3.0])
def test_uniform_natural_curvature_gives_the_circular_arc(kl):
    # Pure bending gives a circular arc (Timoshenko and Gere 1961): tip angle kappa0 L, tip at
    # (sin(kappa0 L)/kappa0, (1 - cos(kappa0 L))/kappa0). The polygon of N chords of length ds is
    # inscribed in a circle of radius ds/(2 sin(kappa0 ds/2)): relative error (kappa0 ds)^2/24.
    k0 = kl / L
    for n in (20, 40):
        p = strip(n)
        th = sd.static_shape(p, k0)
        x, z = sd.tip_position(th, p.ds)
        exact = np.array([math.sin(kl), 1 - math.cos(kl)]) / k0
        rel = np.hypot(x - exact[0], z - exact[1]) / np.hypot(*exact)
        assert sd.tip_angle(th) == pytest.approx(kl, abs=1e-12)
        assert rel == pytest.approx((k0 * p.ds) ** 2 / 24, rel=0.01)
    xs, zs = sd.centreline(th, p.ds)
    r = (p.ds / 2) / math.sin(k0 * p.ds / 2)
    assert np.allclose(np.hypot(xs, zs - r), r, rtol=1e-12)


def test_tip_load_against_the_elastica_and_small_deflection():
    # Large deflection: actsim.elastica (independent BVP code; itself checked against Bisshopp and
    # Drucker 1945) at P L^2/EI = 3, with second-order convergence. Small deflection: P L^3/(3 EI)
    # (Timoshenko and Gere, Mechanics of Materials, 1972, cantilever table).
    P = 3 * EI / L**2
    ref = cantilever_shape(length=L, bending_stiffness=EI, spontaneous_curvature=0.0, tip_force=(0.0, P))
    err = []
    for n in (20, 40, 80):
        p = strip(n, tip_force=(0.0, P))
        th = sd.static_shape(p, 0.0)
        x, z = sd.tip_position(th, p.ds)
        err.append(math.hypot(x - ref.tip_x, z - ref.tip_y) / L)
    print("\ntip load P L^2/EI = 3: tip error / L at N = 20, 40, 80:", err)
    assert err[-1] < 1e-4
    assert math.log2(err[0] / err[1]) == pytest.approx(2.0, abs=0.1)
    p_small = 1e-4 * EI / L**2
    th = sd.static_shape(strip(80, tip_force=(0.0, p_small)), 0.0)
    assert sd.tip_position(th, L / 80)[1] == pytest.approx(p_small * L**3 / (3 * EI), rel=1e-4, abs=0.0)


def test_self_weight_sag_and_linearised_frequency_under_load():
    # Uniform load w: tip deflection w L^4/(8 EI) (Timoshenko and Gere 1972, cantilever table).
    g = 9.81
    p = strip(80, gravity=(0.0, -g))
    th = sd.static_shape(p, 0.0)
    assert sd.tip_position(th, p.ds)[1] == pytest.approx(-RHO_A * g * L**4 / (8 * EI), rel=1e-3, abs=0.0)
    # a tip force pulling along +x stiffens the strip: w1 rises (tension raises beam frequencies;
    # Blevins 1979, beams under axial load), linearised about the loaded static shape
    w0 = sd.natural_frequencies(strip(20), 1)[0][0]
    pt = strip(20, tip_force=(2 * EI / L**2, 0.0))
    assert sd.natural_frequencies(pt, 1, theta=sd.static_shape(pt, 0.0))[0][0] > 1.2 * w0


def test_slow_ramp_follows_the_static_shape():
    # Quasi-static limit (common practice, no source): for a ramp time T >> 1/w1 the shape follows the
    # static one; the lag is the Kelvin-Voigt delay (kappa + eta_s dkappa/dt = kappa0 at the hinges, a tip
    # angle lag of about eta_s max|dkappa0/dt| L) plus inertia ~ (w1 T)^-2, so it falls as 1/T.
    n = 10
    p = strip(n, kv_time=7.6e-5, drag_quadratic=2.4e-3)
    lag = []
    for T in (0.05, 0.5):
        def k0(t, T=T):
            u = min(t / T, 1.0)
            return 200.0 * u * u * (3 - 2 * u)

        ts = np.linspace(0.0, T, 6)
        sol = sd.integrate_strip(p, k0, (0.0, T), np.zeros(2 * n), rtol=1e-8, atol=1e-12, t_eval=ts)
        lag.append(max(np.max(np.abs(sol.y[:n, i] - sd.static_shape(p, k0(t)))) for i, t in enumerate(ts)))
    print("\nlargest angle error against the static shape, ramps of 0.05 and 0.5 s:", lag)
    kv_lag = 7.6e-5 * 200.0 * 1.5 / 0.5 * L  # eta_s max|dkappa0/dt| L, smoothstep slope 1.5/T
    assert lag[1] < 1.1 * kv_lag
    assert lag[1] < 0.12 * lag[0]


# --------------------------------------------------------------------------- input


@pytest.mark.parametrize("kw, field", [
    ({"length": -1.0}, "length"), ({"n_segments": 1}, "n_segments"), ({"bending_stiffness": 0.0}, "bending_stiffness"),
    ({"mass_per_length": [1.0, 2.0]}, "mass_per_length"), ({"kv_time": -1.0}, "kv_time"),
    ({"gravity": (1.0,)}, "gravity"), ({"drag_quadratic": math.nan}, "drag_quadratic"),
])
def test_bad_input_is_one_line_naming_the_field(kw, field):
    args = {"length": L, "n_segments": 4, "bending_stiffness": EI, "mass_per_length": RHO_A, **kw}
    with pytest.raises(ActsimInputError) as e:
        sd.strip_params(**args)
    assert str(e.value).startswith(field) and "\n" not in str(e.value)
    with pytest.raises(ActsimInputError, match="method"):
        sd.integrate_strip(strip(4), 0.0, (0.0, 1.0), np.zeros(8), method="Euler")
    with pytest.raises(ActsimInputError, match="kappa0"):
        sd.static_shape(strip(4), [1.0, 2.0])
