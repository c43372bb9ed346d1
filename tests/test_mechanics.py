"""Layered-beam mechanics against closed forms."""

from __future__ import annotations

import math

import numpy as np
import pytest

from actsim import mechanics


def two_layer(t1, t2, e1, e2, mismatch, n1=1, n2=1):
    """Bottom layer 1 (t1, e1), top layer 2 (t2, e2) with eigenstrain -mismatch (contracting top)."""
    z = np.concatenate([np.linspace(0, t1, n1 + 1), np.linspace(t1, t1 + t2, n2 + 1)[1:]])
    modulus = np.concatenate([np.full(n1, e1), np.full(n2, e2)])
    eig = np.concatenate([np.zeros(n1), np.full(n2, -mismatch)])
    return z, modulus, eig


@pytest.mark.parametrize("m", [0.1, 0.3, 1.0, 2.5, 10.0])
@pytest.mark.parametrize("n", [0.05, 0.5, 1.0, 4.0, 20.0])
def test_timoshenko_bimetal(m, n):
    # Timoshenko, "Analysis of bi-metal thermostats", J. Opt. Soc. Am. 11 (1925) 233, eq. (4):
    # kappa = 6 de (1+m)^2 / (h [3(1+m)^2 + (1+mn)(m^2 + 1/(mn))]),  m = t1/t2, n = E1/E2, h = t1 + t2.
    t2 = 50e-6
    t1 = m * t2
    e2 = 2e9
    e1 = n * e2
    de = 0.01
    z, modulus, eig = two_layer(t1, t2, e1, e2, de)
    _, kappa, _ = mechanics.free_strip_response(z_edges=z, modulus=modulus, eigenstrain=eig)
    h = t1 + t2
    exact = 6 * de * (1 + m) ** 2 / (h * (3 * (1 + m) ** 2 + (1 + m * n) * (m**2 + 1 / (m * n))))
    # contracting top layer -> positive curvature (bends toward the top): DESIGN.md sign convention
    assert kappa == pytest.approx(exact, rel=1e-12)


def test_stoney_limit():
    # Stoney, Proc. R. Soc. Lond. A 82 (1909) 172: kappa = 6 E_f h_f e / (E_s h_s^2) for h_f << h_s;
    # the relative deviation of the exact solution is O(h_f/h_s) (Freund and Suresh, Thin Film
    # Materials, Cambridge 2003, sec. 2.2).
    es, ef, hs, de = 150e9, 70e9, 500e-6, 1e-3
    prev = None
    for ratio in (1e-2, 1e-3, 1e-4):
        hf = ratio * hs
        z, modulus, eig = two_layer(hs, hf, es, ef, de)
        _, kappa, _ = mechanics.free_strip_response(z_edges=z, modulus=modulus, eigenstrain=eig)
        stoney = 6 * ef * hf * de / (es * hs**2)
        rel = abs(kappa / stoney - 1)
        assert rel < 5 * ratio * ef / es + 1e-12
        if prev is not None:
            assert rel < prev / 5
        prev = rel


def graded_exact(h, e0, delta):
    # Homogeneous beam: kappa = -(12/h^3) * int_0^h e*(z) (z - h/2) dz (free strip, force and moment
    # balance; e.g. Timoshenko and Goodier, Theory of Elasticity, 3rd ed., 1970, sec. 150, thermal
    # stresses in a beam), with e*(z) = e0 exp(-(h - z)/delta):
    # int = e0 [delta h - delta^2 (1 - exp(-h/delta))] - (h/2) e0 delta (1 - exp(-h/delta)).
    a = 1 - math.exp(-h / delta)
    integral = e0 * (delta * h - delta**2 * a) - 0.5 * h * e0 * delta * a
    return -12 / h**3 * integral


def test_graded_exponential_eigenstrain_converges_second_order():
    h, e0, delta, E = 80e-6, -0.02, 10e-6, 1.5e9
    exact = graded_exact(h, e0, delta)
    errs = []
    for n in (20, 40, 80, 160):
        z = np.linspace(0, h, n + 1)
        zc = 0.5 * (z[1:] + z[:-1])
        eig = e0 * np.exp(-(h - zc) / delta)  # cell-centre values: midpoint rule, second order
        _, kappa, _ = mechanics.free_strip_response(z_edges=z, modulus=np.full(n, E), eigenstrain=eig)
        errs.append(abs(kappa - exact))
    orders = [math.log2(errs[i] / errs[i + 1]) for i in range(3)]
    print("graded eigenstrain errors", errs, "orders", orders)
    assert exact > 0
    assert all(1.9 < p < 2.1 for p in orders)
    # cell averages of e* are exact for the piecewise-constant section integrals
    n = 7
    z = np.linspace(0, h, n + 1)
    avg = e0 * delta * (np.exp(-(h - z[1:]) / delta) - np.exp(-(h - z[:-1]) / delta)) / np.diff(z)
    # the force resultant of the cell averages equals the exact integral of e*(z)
    s = mechanics.section_integrals(z_edges=z, modulus=np.full(n, E), eigenstrain=avg)
    assert s["N_star"] == pytest.approx(E * e0 * delta * (1 - math.exp(-h / delta)), rel=1e-12)


def test_uniform_eigenstrain_gives_no_curvature():
    # A uniform eigenstrain in any stack with any moduli only stretches it (no bending): e0 = e*, kappa = 0.
    z = np.array([0, 10e-6, 30e-6, 35e-6])
    modulus = np.array([1e9, 5e9, 0.3e9])
    e0, kappa, _ = mechanics.free_strip_response(z_edges=z, modulus=modulus, eigenstrain=np.full(3, 0.004))
    assert e0 == pytest.approx(0.004, rel=1e-12)
    assert abs(kappa) < 1e-9


def test_free_stress_has_zero_resultants():
    z = np.linspace(0, 70e-6, 71)
    zc = 0.5 * (z[1:] + z[:-1])
    modulus = np.where(zc > 50e-6, 1.2e9, 2.5e9)
    eig = np.where(zc > 50e-6, -0.01 * (zc - 50e-6) / 20e-6, 0.0)
    e0, kappa, _ = mechanics.free_strip_response(z_edges=z, modulus=modulus, eigenstrain=eig)
    # stress is linear within a cell, so the cell-centre value times dz integrates it exactly
    sig = mechanics.stress_profile(z_centres=zc, modulus=modulus, eigenstrain=eig, strain_bottom=e0, curvature=kappa)
    dz = np.diff(z)
    force = np.sum(sig * dz)
    moment = np.sum(modulus * ((e0 - eig) * 0.5 * (z[1:] ** 2 - z[:-1] ** 2) - kappa * (z[1:] ** 3 - z[:-1] ** 3) / 3))
    scale = 2.5e9 * 0.01 * 70e-6
    assert abs(force) < 1e-12 * scale
    assert abs(moment) < 1e-12 * scale * 70e-6


def test_blocked_force_and_moment_small_deflection():
    # Cantilever end load: tip deflection F L^3/(3 EI) (Gere and Timoshenko, Mechanics of Materials, App. G);
    # uniform curvature: tip deflection kappa L^2/2. Equal deflections give F = 3 EI kappa/(2L).
    ei_per_width, kappa, b, L = 2e-6, 30.0, 3e-3, 8e-3
    f = mechanics.blocked_tip_force(bending_stiffness=ei_per_width, curvature=kappa, width=b, free_length=L)
    assert f * L**3 / (3 * b * ei_per_width) == pytest.approx(kappa * L**2 / 2, rel=1e-14)
    m = mechanics.blocked_moment(bending_stiffness=ei_per_width, curvature=kappa, width=b)
    assert m == pytest.approx(b * ei_per_width * kappa)


def test_blocked_moment_equals_section_moment_when_held_flat():
    # Holding kappa = 0 (axial strain free): e0 = N*/A and the section moment B e0 - M* equals the
    # free curvature times D - B^2/A (derivation in actsim.mechanics.blocked_moment).
    z = np.linspace(0, 60e-6, 61)
    zc = 0.5 * (z[1:] + z[:-1])
    modulus = np.where(zc > 40e-6, 1.0e9, 3.0e9)
    eig = np.where(zc > 40e-6, -0.008, 0.0)
    s = mechanics.section_integrals(z_edges=z, modulus=modulus, eigenstrain=eig)
    _, kappa, d_eff = mechanics.free_strip_response(z_edges=z, modulus=modulus, eigenstrain=eig)
    held = s["B"] * s["N_star"] / s["A"] - s["M_star"]
    assert held == pytest.approx(d_eff * kappa, rel=1e-12)


def test_arc_tip_position():
    # Circular arc of radius 1/kappa: x = sin(kL)/k, y = (1 - cos(kL))/k (plane geometry).
    L = 8e-3
    k = np.array([0.0, 1e-3, 10.0, 196.35, 500.0, -50.0])
    x, y = mechanics.arc_tip_position(curvature=k, free_length=L)
    for ki, xi, yi in zip(k, x, y):
        if abs(ki * L) > 1e-3:
            assert xi == pytest.approx(math.sin(ki * L) / ki, rel=1e-12)
            assert yi == pytest.approx((1 - math.cos(ki * L)) / ki, rel=1e-12)
    assert x[0] == L and y[0] == 0
    assert y[1] == pytest.approx(1e-3 * L**2 / 2, rel=1e-6)


# ---------------------------------------------------------------------------------------------
# The fused per-time forms used when a result is assembled
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize("m, n", [(1.0, 1.0), (0.5, 3.0), (2.0, 0.2)])
def test_section_series_reproduces_timoshenko(m, n):
    # Timoshenko (1925), J. Opt. Soc. Am. 11, 233, eq. for a bimetal strip with thickness ratio m = h1/h2 and
    # modulus ratio n = E1/E2 under a mismatch strain de: kappa = 6 de (1 + m)^2 / (h (3 (1 + m)^2 + (1 + m n)
    # (m^2 + 1/(m n)))); here the bottom layer (h1, E1) carries the eigenstrain de
    h, de, e2 = 100e-6, 1e-3, 1e9
    h1, h2 = h * m / (1 + m), h / (1 + m)
    cells = 400
    z = np.concatenate([np.linspace(0, h1, cells + 1), np.linspace(h1, h, cells + 1)[1:]])
    modulus = np.where(np.arange(2 * cells) < cells, n * e2, e2)[None, :].repeat(3, axis=0)
    eig = np.where(np.arange(2 * cells) < cells, de, 0.0)[None, :] * np.array([[0.0], [1.0], [-2.0]])
    zc = 0.5 * (z[:-1] + z[1:])
    e_star, stress = np.empty_like(eig), np.empty_like(eig)
    e0, kap, _ = mechanics.free_strip_response(z_edges=z, modulus=modulus, eigenstrain=eig)
    kappa_free, stiff, finite = mechanics.section_series(z, zc, modulus, modulus * eig, e0, kap, e_star, stress)
    expect = 6 * de * (1 + m) ** 2 / (h * (3 * (1 + m) ** 2 + (1 + m * n) * (m**2 + 1 / (m * n))))
    # an expanding bottom layer bends the strip toward +z: kappa > 0 (DESIGN.md sign convention)
    assert finite
    np.testing.assert_allclose(kappa_free, np.array([0.0, 1.0, -2.0]) * expect, rtol=1e-9, atol=1e-9)
    # the same numbers as the numpy forms (free_strip_response, stress_profile), to rounding
    _, kap_np, d_np = mechanics.free_strip_response(z_edges=z, modulus=modulus, eigenstrain=eig)
    np.testing.assert_allclose(kappa_free, kap_np, rtol=1e-12, atol=1e-12 * np.abs(kap_np).max())
    np.testing.assert_allclose(stiff, d_np, rtol=1e-12)
    np.testing.assert_allclose(e_star, eig, rtol=1e-15, atol=0)
    s_np = mechanics.stress_profile(z_centres=zc, modulus=modulus, eigenstrain=eig, strain_bottom=e0, curvature=kap)
    np.testing.assert_allclose(stress, s_np, rtol=0, atol=1e-12 * np.abs(s_np).max())


def test_section_series_flags_non_finite_results():
    z = np.linspace(0, 1e-4, 5)
    zc = 0.5 * (z[:-1] + z[1:])
    modulus = np.ones((2, 4)) * 1e9
    modulus[1, 2] = 0.0  # a cell without stiffness gives 0/0 in its eigenstrain
    out = np.empty_like(modulus), np.empty_like(modulus)
    *_, finite = mechanics.section_series(z, zc, modulus, modulus * 1e-3, np.zeros(2), np.zeros(2), *out)
    assert not finite


@pytest.mark.parametrize("kappa_l", [0.0, 1e-9, 0.3, -1.0, math.pi, 2 * math.pi, 7.0])
def test_arc_tip_series_is_the_circular_arc(kappa_l):
    # x = sin(kL)/k, y = (1 - cos kL)/k (exact circular arc; Timoshenko & Gere, Theory of Elastic Stability,
    # 2nd ed. 1961); the limits x -> L, y -> k L^2 / 2 as k -> 0 (series)
    L = 0.02
    k = np.array([kappa_l / L])
    x, y = mechanics.arc_tip_series(k, L)
    if kappa_l == 0.0:
        assert x[0] == L and y[0] == 0.0
    elif abs(kappa_l) < 1e-6:
        np.testing.assert_allclose([x[0], y[0]], [L, k[0] * L**2 / 2], rtol=1e-12)
    else:
        np.testing.assert_allclose([x[0], y[0]], [math.sin(kappa_l) / k[0], (1 - math.cos(kappa_l)) / k[0]],
                                   rtol=1e-12, atol=1e-15)
    xr_, yr_ = mechanics.arc_tip_position(curvature=k, free_length=L)
    np.testing.assert_allclose([x[0], y[0]], [xr_[0], yr_[0]], rtol=1e-14, atol=1e-18)
