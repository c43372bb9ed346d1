"""Tests of actsim.thermal against closed-form conduction solutions, scipy and conservation laws.

Sources cited beside each check:
- [Inc] F. P. Incropera, D. P. DeWitt, T. L. Bergman, A. S. Lavine, Fundamentals of Heat and Mass Transfer,
  6th ed., Wiley, 2007 (section numbers from memory).
- [CJ] H. S. Carslaw, J. C. Jaeger, Conduction of Heat in Solids, 2nd ed., Oxford University Press, 1959.
- [CN] J. Crank, P. Nicolson, Proc. Cambridge Philos. Soc. 43, 50-67, 1947.
- [HS] M. E. Hosea, L. F. Shampine, Analysis and implementation of TR-BDF2, Appl. Numer. Math. 20, 21-37, 1996.
- [Arr] S. Arrhenius, Z. Phys. Chem. 4, 226-248, 1889.
All scenarios are invented test cases.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from numba import njit
from scipy.constants import Stefan_Boltzmann
from scipy.linalg import solve_banded
from scipy.optimize import brentq
from scipy.special import erfc

from actsim import thermal as th
from actsim import thermal_reference as thr
from actsim.kinetics import arrhenius_rate_nb
from actsim.material import glass_transition_modulus_nb
from actsim.errors import ActsimInputError

# An invented polymer: k = 0.2 W/(m K), rho*c = 1.5e6 J/(m^3 K) (typical of polymers, from memory).
K_POLY = 0.2
RC_POLY = 1.5e6


def _beer_lambert_cells(z_edges, *, alpha, irradiance, thickness):
    """Cell-averaged source of light entering the top face: q_i = P0 (e^{-a(h-z_{i+1})} - e^{-a(h-z_i)}) / dz_i."""
    e = np.exp(-alpha * (thickness - z_edges))
    return irradiance * (e[1:] - e[:-1]) / np.diff(z_edges)


def _two_layer():
    """Invented stack: 50 um passive bottom layer (20 cells), 20 um active top layer (15 cells)."""
    dz = np.concatenate([np.full(20, 50e-6 / 20), np.full(15, 20e-6 / 15)])
    k = np.concatenate([np.full(20, 0.15), np.full(15, 0.30)])
    rc = np.concatenate([np.full(20, 1.6e6), np.full(15, 1.9e6)])
    return dz, k, rc


def _be_step(T, dz, k, rc, q0, q1, dt, hb, tb, ht, tt, work, out):
    return thr.theta_step(T, dz, k, rc, q0, q1, dt, hb, tb, ht, tt, 1.0, work, out)


def _run(step, T0, dz, k, rc, q_of_t, dt, nsteps, hb, tb, ht, tt):
    """Python loop over a numba stepper; q_of_t(t) -> cell source [W/m^3]."""
    n = dz.size
    work = th.make_work(n)
    T = T0.copy()
    out = np.empty(n)
    for j in range(nsteps):
        step(T, dz, k, rc, q_of_t(j * dt), q_of_t((j + 1) * dt), dt, hb, tb, ht, tt, work, out)
        T, out = out, T
    return T


# ------------------------------------------------------------------------------------------------
# linear algebra and assembly
# ------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("n", [1, 2, 7, 50])
def test_thomas_matches_scipy_solve_banded(n):
    rng = np.random.default_rng(n)
    lower = rng.uniform(-1, 1, n)
    upper = rng.uniform(-1, 1, n)
    diag = 2.5 + rng.uniform(0, 1, n)  # strictly diagonally dominant
    rhs = rng.uniform(-1, 1, n)
    ab = np.zeros((3, n))
    ab[0, 1:] = upper[:-1]
    ab[1] = diag
    ab[2, :-1] = lower[1:]
    expected = solve_banded((1, 1), ab, rhs)  # reference library: scipy.linalg.solve_banded (LAPACK gbsv)
    rhs_copy = rhs.copy()
    out = np.empty(n)
    thr.thomas_solve(lower, diag.copy(), upper, rhs, out)
    np.testing.assert_allclose(out, expected, rtol=1e-13, atol=1e-14)
    np.testing.assert_array_equal(rhs, rhs_copy)  # rhs left unchanged
    thr.thomas_solve(lower, ab[1].copy(), upper, rhs, rhs)  # out may alias rhs
    np.testing.assert_allclose(rhs, expected, rtol=1e-13, atol=1e-14)


def test_face_conductances_are_series_resistances():
    dz = np.array([10e-6, 30e-6, 20e-6])
    k = np.array([0.1, 0.5, 0.2])
    g_int = np.empty(2)
    g_face = np.empty(2)
    th.face_conductances(dz, k, 12.0, 0.0, g_int, g_face)
    # [Inc] sec. 3.1, thermal resistances in series: R = sum(L/k) + 1/h, G = 1/R.
    assert g_int[0] == pytest.approx(1.0 / (5e-6 / 0.1 + 15e-6 / 0.5), rel=1e-15)
    assert g_int[1] == pytest.approx(1.0 / (15e-6 / 0.5 + 10e-6 / 0.2), rel=1e-15)
    assert g_face[0] == pytest.approx(1.0 / (1.0 / 12.0 + 5e-6 / 0.1), rel=1e-15)
    assert g_face[1] == 0.0  # h = 0: insulated face
    th.face_conductances(dz, k, np.inf, 1.0, g_int, g_face)
    assert g_face[0] == pytest.approx(2 * 0.1 / 10e-6, rel=1e-15)  # h = inf: face held at ambient


@pytest.mark.parametrize("theta", [0.5, 1.0, 0.7])
def test_numba_step_matches_readable_reference(theta):
    # The fast path and the readable path must agree (project rule); the reference uses scipy's banded solver.
    dz, k, rc = _two_layer()
    rng = np.random.default_rng(3)
    T = 300 + rng.uniform(0, 5, dz.size)
    q0 = rng.uniform(0, 1e7, dz.size)
    q1 = rng.uniform(0, 1e7, dz.size)
    work = th.make_work(dz.size)
    out = np.empty(dz.size)
    thr.theta_step(T, dz, k, rc, q0, q1, 0.01, 8.0, 295.0, 15.0, 301.0, theta, work, out)
    ref = thr.theta_step_reference(
        temperature=T, dz=dz, conductivity=k, volumetric_heat_capacity=rc, source_old=q0, source_new=q1,
        dt=0.01, h_bottom=8.0, ambient_bottom=295.0, h_top=15.0, ambient_top=301.0, theta=theta,
    )
    np.testing.assert_allclose(out, ref, rtol=1e-13)
    if theta == 0.5:
        out_cn = np.empty(dz.size)
        thr.crank_nicolson_step(T, dz, k, rc, q0, q1, 0.01, 8.0, 295.0, 15.0, 301.0, work, out_cn)
        np.testing.assert_array_equal(out_cn, out)
        thr.crank_nicolson_step(T, dz, k, rc, q0, q1, 0.01, 8.0, 295.0, 15.0, 301.0, work, T)  # out may alias T
        np.testing.assert_array_equal(T, out)


@njit(cache=True)
def _kernel_loop(T, dz, k, rc, q, dt, nsteps, hb, tb, ht, tt, use_trbdf2):
    # Stands in for the solver's time-stepping kernel: the thermal kernels must be callable from njit.
    n = T.shape[0]
    work = np.empty((6, n))
    out = np.empty(n)
    lost = 0.0
    for _ in range(nsteps):
        if use_trbdf2:
            eb, et = thr.trbdf2_step(T, dz, k, rc, q, q, dt, hb, tb, ht, tt, work, out)
        else:
            eb, et = thr.crank_nicolson_step(T, dz, k, rc, q, q, dt, hb, tb, ht, tt, work, out)
        lost += eb + et
        T[:] = out
    lb, lt = th.face_heat_loss(T, dz, k, hb, tb, ht, tt)
    e = arrhenius_rate_nb(T[0], 1e3, 5e4) + glass_transition_modulus_nb(T[0], 2e9, 2e6, 330.0, 4.0)
    return lost, lb + lt, e


@pytest.mark.parametrize("use_trbdf2", [False, True])
def test_kernels_callable_from_njit(use_trbdf2):
    dz, k, rc = _two_layer()
    q = np.full(dz.size, 2e6)
    T = np.full(dz.size, 300.0)
    lost, _, _ = _kernel_loop(T, dz, k, rc, q, 0.01, 50, 5.0, 300.0, 10.0, 300.0, use_trbdf2)
    step = thr.trbdf2_step if use_trbdf2 else thr.crank_nicolson_step
    T_py = _run(step, np.full(dz.size, 300.0), dz, k, rc, lambda t: q, 0.01, 50, 5.0, 300.0, 10.0, 300.0)
    np.testing.assert_allclose(T, T_py, rtol=1e-14)
    assert lost > 0


# ------------------------------------------------------------------------------------------------
# closed-form solutions
# ------------------------------------------------------------------------------------------------


def test_lumped_capacitance_limit():
    """Thin, highly conducting slab with uniform source: T - T_amb = q_abs/(h_t+h_b) (1 - exp(-t/tau))."""
    d, n = 100e-6, 4
    dz = np.full(n, d / n)
    k = np.full(n, 1.0e3)  # Biot number (h_t+h_b) d / k = 3e-6: lumped capacitance applies ([Inc] sec. 5.2)
    rc = np.full(n, RC_POLY)
    h_t, h_b, T_amb = 20.0, 10.0, 300.0
    q_v = 1.0e5  # [W/m^3]
    q_abs = q_v * d  # [W/m^2]
    tau = RC_POLY * d / (h_t + h_b)
    dt, nsteps = tau / 100, 500
    res = thr.march_conduction(
        dz=dz, conductivity=k, volumetric_heat_capacity=rc, initial_temperature=T_amb,
        time=np.arange(nsteps + 1) * dt, source=np.full(n, q_v), h_bottom=h_b, ambient_bottom=T_amb,
        h_top=h_t, ambient_top=T_amb,
    )
    # [Inc] sec. 5.3, general lumped capacitance analysis with generation and convection.
    exact = q_abs / (h_t + h_b) * (1 - np.exp(-res.time / tau))
    rise = res.temperature.mean(axis=1) - T_amb
    err = np.max(np.abs(rise - exact)) / (q_abs / (h_t + h_b))
    print(f"lumped limit: max relative error {err:.2e}")
    # Crank-Nicolson multiplies the decaying part by (1 - z/2)/(1 + z/2) = exp(-z - z^3/12 - ...) per step, z = dt/tau,
    # so after time t its relative error is (t/tau) z^2/12 and the error of the rise peaks at t = tau at
    # e^-1 z^2/12 = 3.07e-6 (hand calculation); the non-uniformity (Bi = 3e-6) adds less. Measured 3.16e-6.
    assert err < 4e-6
    assert np.ptp(res.temperature[-1]) < 1e-5 * rise[-1]  # uniform, as the lumped model assumes


def test_composite_wall_steady_is_exact():
    # [Inc] sec. 3.3, composite wall: q = (T_inf1 - T_inf2) / (1/h1 + L1/k1 + L2/k2 + 1/h2). With no source the
    # profile is piecewise linear, so the finite-volume solution is exact to round-off on any grid.
    dz, k, _ = _two_layer()
    work = th.make_work(dz.size)
    T = np.empty(dz.size)
    h_b, h_t, Tb, Tt = 30.0, 5.0, 320.0, 290.0
    thr.steady_temperature(dz, k, np.zeros(dz.size), h_b, Tb, h_t, Tt, work, T)
    r_total = 1 / h_b + 50e-6 / 0.15 + 20e-6 / 0.30 + 1 / h_t
    flux = (Tb - Tt) / r_total
    lb, lt = th.face_heat_loss(T, dz, k, h_b, Tb, h_t, Tt)
    # tolerance: round-off times the condition number of the conduction matrix (interior conductances ~6e4
    # against face conductances ~5-30 W/(m^2 K)), about 1e-11 relative here
    assert -lb == pytest.approx(flux, rel=1e-9) and lt == pytest.approx(flux, rel=1e-9)
    z = np.concatenate([[0.0], np.cumsum(dz)])
    zc = 0.5 * (z[1:] + z[:-1])
    T_face_b = Tb - flux / h_b
    exact = np.where(zc < 50e-6, T_face_b - flux * zc / 0.15, T_face_b - flux * 50e-6 / 0.15 - flux * (zc - 50e-6) / 0.30)
    np.testing.assert_allclose(T, exact, rtol=0, atol=1e-9)
    sb, st = th.face_temperatures(T, dz, k, h_b, Tb, h_t, Tt)
    assert sb == pytest.approx(T_face_b, abs=1e-9) and st == pytest.approx(Tt + flux / h_t, abs=1e-9)


def _beer_lambert_exact(z, *, thickness, alpha, P0, k, h_b, Tb, h_t, Tt):
    """Steady slab, light entering the top face, convection at both faces.

    -k T'' = alpha P0 exp(-alpha (h - z)),  0 < z < h
    k T'(0) = h_b (T(0) - Tb)                 (heat leaving through the bottom)
    -k T'(h) = h_t (T(h) - Tt)                (heat leaving through the top)

    Integrating twice: T(z) = -P0/(alpha k) exp(-alpha (h - z)) + C1 z + C2, with
    T'(z) = -(P0/k) exp(-alpha (h - z)) + C1. With E0 = exp(-alpha h) the face conditions give
        (k) C1 - h_b C2            = P0 E0 - h_b P0 E0/(alpha k) - h_b Tb
        (-k - h_t h) C1 - h_t C2   = -P0 - h_t P0/(alpha k) - h_t Tt
    a 2x2 linear system for C1, C2 ([CJ] ch. 1, steady linear flow with generation; [Inc] sec. 3.5).
    """
    E0 = math.exp(-alpha * thickness)
    a = np.array([[k, -h_b], [-k - h_t * thickness, -h_t]])
    b = np.array([P0 * E0 - h_b * P0 * E0 / (alpha * k) - h_b * Tb, -P0 - h_t * P0 / (alpha * k) - h_t * Tt])
    c1, c2 = np.linalg.solve(a, b)
    return -P0 / (alpha * k) * np.exp(-alpha * (thickness - z)) + c1 * z + c2


def test_steady_beer_lambert_second_order_in_space():
    thickness, alpha, P0 = 100e-6, 3.0e4, 500.0  # alpha*h = 3; 50 mW/cm^2 absorbed
    h_b, Tb, h_t, Tt = 400.0, 295.0, 1000.0, 300.0  # forced liquid cooling: Biot ~ 0.2-0.5, a visible profile
    pars = dict(thickness=thickness, alpha=alpha, P0=P0, k=K_POLY, h_b=h_b, Tb=Tb, h_t=h_t, Tt=Tt)
    errors = []
    ns = [10, 20, 40, 80, 160]
    for n in ns:
        z = np.linspace(0, thickness, n + 1)
        dz = np.diff(z)
        k = np.full(n, K_POLY)
        q = _beer_lambert_cells(z, alpha=alpha, irradiance=P0, thickness=thickness)
        T = np.empty(n)
        thr.steady_temperature(dz, k, q, h_b, Tb, h_t, Tt, th.make_work(n), T)
        exact = _beer_lambert_exact(0.5 * (z[1:] + z[:-1]), **pars)
        errors.append(np.max(np.abs(T - exact)))
        # energy: all absorbed light leaves through the faces, [Inc] sec. 1.3 (conservation of energy)
        lb, lt = th.face_heat_loss(T, dz, k, h_b, Tb, h_t, Tt)
        assert lb + lt == pytest.approx(P0 * (1 - math.exp(-alpha * thickness)), rel=1e-9)  # round-off x cond(A)
    orders = np.log2(np.array(errors[:-1]) / np.array(errors[1:]))
    span = np.ptp(_beer_lambert_exact(np.linspace(0, thickness, 101), **pars))
    print("Beer-Lambert steady: n", ns, "max error [K]", [f"{e:.2e}" for e in errors], "orders", np.round(orders, 3),
          f"(profile span {span:.3f} K)")
    assert np.all(np.abs(orders - 2.0) < 0.1)
    assert errors[2] < 1e-3 * span  # 40 cells: error below 0.1 % of the temperature span

    # the time-marched profile reaches the same steady state (Crank-Nicolson from ambient)
    n = 40
    z = np.linspace(0, thickness, n + 1)
    dz = np.diff(z)
    q = _beer_lambert_cells(z, alpha=alpha, irradiance=P0, thickness=thickness)
    T_ss = np.empty(n)
    thr.steady_temperature(dz, np.full(n, K_POLY), q, h_b, Tb, h_t, Tt, th.make_work(n), T_ss)
    T_end = _run(thr.crank_nicolson_step, np.full(n, 297.0), dz, np.full(n, K_POLY), np.full(n, RC_POLY),
                 lambda t: q, 2e-3, 2000, h_b, Tb, h_t, Tt)  # 4 s = 35 time constants rho c h/(h_b+h_t)
    np.testing.assert_allclose(T_end, T_ss, rtol=0, atol=1e-9)


def _plane_wall_theta(x_star, fo, bi, n_terms=200):
    """[Inc] sec. 5.5 eq. (5.39a-c) (numbers from memory), [CJ] sec. 3.10: plane wall, convection, uniform start.

    theta* = sum C_n exp(-zeta_n^2 Fo) cos(zeta_n x*), C_n = 4 sin(zeta_n) / (2 zeta_n + sin(2 zeta_n)),
    zeta_n tan(zeta_n) = Bi, roots in ((n-1) pi, (n-1) pi + pi/2).
    """
    roots = [
        brentq(lambda z: z * math.sin(z) - bi * math.cos(z), (m * math.pi) + 1e-14, m * math.pi + math.pi / 2, xtol=1e-15)
        for m in range(n_terms)
    ]
    zeta = np.array(roots)
    c = 4 * np.sin(zeta) / (2 * zeta + np.sin(2 * zeta))
    return np.sum(c[:, None] * np.exp(-zeta[:, None] ** 2 * fo) * np.cos(zeta[:, None] * x_star[None, :]), axis=0)


@pytest.mark.parametrize("method", ["crank-nicolson", "tr-bdf2"])
@pytest.mark.parametrize("bi", [1.0, 5.0])
def test_transient_plane_wall_series_solution(method, bi):
    # Half of a wall of thickness 2L: the bottom face z = 0 is the symmetry plane (insulated), the top face
    # z = L sees convection to an ambient that drops suddenly from T_i to T_inf at t = 0.
    L, n = 100e-6, 50
    dz = np.full(n, L / n)
    alpha_d = K_POLY / RC_POLY
    h = bi * K_POLY / L
    T_i, T_inf = 330.0, 300.0
    t_char = L**2 / alpha_d
    fo_out = np.array([0.05, 0.2, 1.0])
    dt = 1e-4 * t_char
    nsteps = int(round(fo_out[-1] * t_char / dt))
    t = np.arange(nsteps + 1) * dt
    res = thr.march_conduction(
        dz=dz, conductivity=np.full(n, K_POLY), volumetric_heat_capacity=np.full(n, RC_POLY),
        initial_temperature=T_i, time=t, source=np.zeros(n), h_bottom=0.0, ambient_bottom=T_inf,
        h_top=h, ambient_top=T_inf, method=method,
    )
    x_star = (np.arange(n) + 0.5) / n
    worst = 0.0
    for fo in fo_out:
        j = int(round(fo * t_char / dt))
        theta_num = (res.temperature[j] - T_inf) / (T_i - T_inf)
        theta_ex = _plane_wall_theta(x_star, fo, bi)  # [Inc] sec. 5.5; [CJ] sec. 3.10
        worst = max(worst, np.max(np.abs(theta_num - theta_ex)))
    print(f"plane wall Bi={bi} {method}: max |theta* error| {worst:.2e}")
    assert worst < 3e-4  # spatial error ~ (dz/L)^2 = 4e-4 times a constant below 1 (observed 3e-5 at Bi=1, 1.8e-4 at Bi=5)


def test_semi_infinite_constant_surface_flux():
    """[Inc] sec. 5.7 eq. (5.59) (number from memory); [CJ] sec. 2.9:
    T - T_i = (2 q0/k) sqrt(a t/pi) exp(-x^2/(4 a t)) - (q0 x/k) erfc(x / (2 sqrt(a t))).

    The flux q0 is applied on the top face as a source q0/dz in the top cell: in the finite-volume balance this
    is the same algebra as a prescribed face flux. Depth x = h - z. The strip is 13 penetration depths thick
    at the last time, so its insulated bottom does not feel the heating. Graded (non-uniform) cells, finest
    at the heated face.
    """
    q0, T_i = 1000.0, 300.0
    a = K_POLY / RC_POLY
    t_end = 0.1
    dz_top, ratio, m = 1.0e-6, 1.02, 175
    dz = (dz_top * ratio ** np.arange(m))[::-1]  # bottom to top, finest at the top
    thickness = dz.sum()
    assert thickness > 13 * math.sqrt(a * t_end)
    z_edges = np.concatenate([[0.0], np.cumsum(dz)])
    depth = thickness - 0.5 * (z_edges[1:] + z_edges[:-1])
    q = np.zeros(m)
    q[-1] = q0 / dz[-1]
    dt = 5e-5
    t = np.arange(int(round(t_end / dt)) + 1) * dt
    res = thr.march_conduction(
        dz=dz, conductivity=np.full(m, K_POLY), volumetric_heat_capacity=np.full(m, RC_POLY),
        initial_temperature=T_i, time=t, source=q, h_bottom=0.0, ambient_bottom=T_i, h_top=0.0, ambient_top=T_i,
    )
    for t_check in (0.02, 0.1):
        j = int(round(t_check / dt))
        s = math.sqrt(a * t_check)
        exact = 2 * q0 / K_POLY * s / math.sqrt(math.pi) * np.exp(-(depth**2) / (4 * s**2)) - q0 * depth / K_POLY * erfc(
            depth / (2 * s)
        )
        surface = 2 * q0 / K_POLY * s / math.sqrt(math.pi)
        err = np.max(np.abs(res.temperature[j] - T_i - exact)) / surface
        print(f"semi-infinite flux t={t_check}s: max error {err:.2e} of the surface rise {surface:.3f} K")
        # spatial error ~ (dz_top / sqrt(a t))^2 = 4e-4 at 0.02 s times a constant below 1; measured 6.6e-5
        # (t = 0.02 s) and 4.3e-5 (t = 0.1 s)
        assert err < 1e-4
    # all the energy put in is stored (no losses)
    assert res.stored[-1] == pytest.approx(q0 * t_end, rel=1e-9)  # round-off of 2000 steps at T ~ 300 K, rise < 1 K


# ------------------------------------------------------------------------------------------------
# conservation and convergence
# ------------------------------------------------------------------------------------------------


@pytest.mark.parametrize("method", ["crank-nicolson", "tr-bdf2", "backward-euler"])
def test_energy_balance_closes_over_many_steps(method):
    # Conservation of energy for the strip ([Inc] sec. 1.3): absorbed = stored change + lost through faces.
    dz, k, rc = _two_layer()
    z = np.concatenate([[0.0], np.cumsum(dz)])
    thickness = z[-1]
    q_shape = _beer_lambert_cells(z, alpha=4e4, irradiance=1.0, thickness=thickness)
    t = np.linspace(0.0, 5.0, 5001)
    pulse = 0.5 * (1 + np.sin(2 * np.pi * t / 0.5)) * (t < 3.0) + 0.2 * (t >= 4.0)  # on, off, on again
    source = 500.0 * pulse[:, None] * q_shape[None, :]
    h_b = 5.0 + th.linearised_radiation_coefficient(emissivity=0.9, ambient_temperature=295.0)
    h_t = 10.0 + th.linearised_radiation_coefficient(emissivity=0.9, ambient_temperature=300.0)
    res = thr.march_conduction(
        dz=dz, conductivity=k, volumetric_heat_capacity=rc, initial_temperature=297.0, time=t, source=source,
        h_bottom=h_b, ambient_bottom=295.0, h_top=h_t, ambient_top=300.0, method=method,
    )
    lost = res.lost_bottom + res.lost_top
    scale = np.maximum.accumulate(np.maximum(np.abs(res.absorbed), np.abs(lost)))[1:]
    worst = np.max(np.abs(res.absorbed - res.stored - lost)[1:] / scale)
    print(f"energy balance {method}: worst relative residual over 5000 steps {worst:.1e}")
    assert worst < 1e-8
    assert res.balance_residual() < 1e-8
    if method == "crank-nicolson":
        # the losses integrated with the trapezoid rule from face_heat_loss (the readable way) agree
        rate = np.array([sum(th.face_heat_loss(T, dz, k, h_b, 295.0, h_t, 300.0)) for T in res.temperature])
        trap = np.concatenate([[0.0], np.cumsum(0.5 * (rate[1:] + rate[:-1]) * np.diff(t))])
        np.testing.assert_allclose(trap, lost, rtol=1e-12, atol=1e-12 * abs(lost).max())


def _time_convergence(step, dts, dt_ref):
    dz, k, rc = _two_layer()
    z = np.concatenate([[0.0], np.cumsum(dz)])
    q_shape = 500.0 * _beer_lambert_cells(z, alpha=4e4, irradiance=1.0, thickness=z[-1])

    def q_of_t(t):
        return q_shape * (1.0 + 0.5 * np.sin(2 * np.pi * t / 0.2))

    T0 = np.empty(dz.size)
    thr.steady_temperature(dz, k, q_of_t(0.0), 5.0, 295.0, 10.0, 300.0, th.make_work(dz.size), T0)  # smooth start
    t_end = 0.2

    def solve(dt):
        return _run(step, T0, dz, k, rc, q_of_t, dt, int(round(t_end / dt)), 5.0, 295.0, 10.0, 300.0)

    ref = solve(dt_ref)
    errs = np.array([np.max(np.abs(solve(dt) - ref)) for dt in dts])
    return errs, np.log2(errs[:-1] / errs[1:])


@pytest.mark.parametrize(
    "name, step, order",
    [("crank-nicolson", thr.crank_nicolson_step, 2.0), ("tr-bdf2", thr.trbdf2_step, 2.0), ("backward-euler", _be_step, 1.0)],
)
def test_order_in_time(name, step, order):
    # [CN] and [HS]: both schemes are second order in time; backward Euler first order (textbook result).
    # backward Euler is still pre-asymptotic at 10-80 steps per period, so it is checked on finer steps
    dts = 0.2 / (np.array([10, 20, 40, 80]) if order == 2.0 else np.array([80, 160, 320, 640]))
    errs, orders = _time_convergence(step, dts, 0.2 / 2560 if order == 2.0 else 0.2 / 20480)
    print(f"time order {name}: errors [K] {[f'{e:.2e}' for e in errs]} observed orders {np.round(orders, 3)}")
    assert np.all(np.abs(orders - order) < 0.1)


def test_crank_nicolson_rings_trbdf2_does_not():
    """A face suddenly held at an ambient 10 K below the strip, with dt = 100 rho_c dz^2/k.

    Crank-Nicolson's factor (1 - x/2)/(1 + x/2) -> -1 for large x = lambda dt ([CN]; not L-stable), so the
    stiff part of the error flips sign every step; TR-BDF2 is L-stable ([HS]); backward Euler has an M-matrix and
    keeps the discrete maximum principle (textbook result). Measured numbers are quoted in actsim.thermal.
    """
    n = 40
    dz = np.full(n, 2.5e-6)
    k = np.full(n, K_POLY)
    rc = np.full(n, RC_POLY)
    dt = 100 * RC_POLY * dz[0] ** 2 / K_POLY
    zero = lambda t: np.zeros(n)  # noqa: E731
    T0 = np.full(n, 310.0)

    def history(step, dt_, nsteps):
        T = T0.copy()
        out = []
        for j in range(nsteps):
            T = _run(step, T, dz, k, rc, zero, dt_, 1, 0.0, 300.0, np.inf, 300.0)
            out.append(T.copy())
        return np.array(out)

    ref = np.array([_run(thr.trbdf2_step, T0, dz, k, rc, zero, dt / 200, 200 * (j + 1), 0.0, 300.0, np.inf, 300.0)
                    for j in range(10)])
    cn, tb, be = (history(s, dt, 10) for s in (thr.crank_nicolson_step, thr.trbdf2_step, _be_step))
    err_cn = np.abs(cn - ref).max(axis=1) / 10.0
    err_tb = np.abs(tb - ref).max(axis=1) / 10.0
    print(f"ringing: CN undershoot below ambient after step 1: {300 - cn[0].min():.2f} K; CN max error per step"
          f" {np.round(err_cn, 3)}; TR-BDF2 undershoot {300 - tb[0].min():.3f} K, errors {np.round(err_tb, 4)}")
    assert 300 - cn[0].min() > 5.0  # CN: surface cell far below the new ambient (physically impossible)
    signs = np.sign(cn[:, -1] - ref[:, -1])
    assert np.all(signs[1:] == -signs[:-1])  # error flips sign every step
    assert err_cn[-1] > 0.5  # and is still large after 10 steps
    assert 300 - tb[0].min() < 0.02 * 10 and err_tb[3] < 2e-3  # TR-BDF2 damps it (measured 0.181 K, 1.3e-3)
    assert be.min() >= 300.0 - 1e-12 and be.max() <= 310.0 + 1e-12  # maximum principle


# ------------------------------------------------------------------------------------------------
# material laws
# ------------------------------------------------------------------------------------------------


def test_linearised_radiation_coefficient():
    h = th.linearised_radiation_coefficient(emissivity=1.0, ambient_temperature=300.0)
    assert h == pytest.approx(4 * Stefan_Boltzmann * 300.0**3, rel=1e-15)
    assert h == pytest.approx(6.12, abs=0.01)  # about 6 W/(m^2 K) for a black surface near room temperature (from memory)
    # [Inc] sec. 1.2.3: exact h_r = eps sigma (Ts + Tsur)(Ts^2 + Tsur^2) -> 4 eps sigma Tsur^3 as Ts -> Tsur,
    # with relative error ~ 1.5 dT/Tsur (Taylor expansion of Ts^4). With x = dT/Tsur, h_exact = eps sigma Tsur^3
    # (4 + 6x + 4x^2 + x^3), so 1 - h_lin/h_exact = 1.5 x - 1.25 x^2 + ...: the first term is right to a relative
    # 0.83 x (hand calculation), 2.8e-2 at dT = 10 K
    eps, Tsur = 0.9, 300.0
    h_lin = th.linearised_radiation_coefficient(emissivity=eps, ambient_temperature=Tsur)
    for dT in (0.01, 1.0, 10.0):
        Ts = Tsur + dT
        h_exact = eps * Stefan_Boltzmann * (Ts + Tsur) * (Ts**2 + Tsur**2)
        assert 1 - h_lin / h_exact == pytest.approx(1.5 * dT / Tsur, rel=dT / Tsur)
    assert th.linearised_radiation_coefficient_nb(eps, Tsur) == pytest.approx(h_lin, rel=1e-15)
    with pytest.raises(ActsimInputError, match="^emissivity"):
        th.linearised_radiation_coefficient(emissivity=1.2, ambient_temperature=300.0)


# ------------------------------------------------------------------------------------------------
# input checks
# ------------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    "kwargs, field",
    [
        (dict(dz=[1e-6, 0.0]), "dz[1]"),
        (dict(conductivity=[0.2, -0.1]), "conductivity[1]"),
        (dict(conductivity=[0.2]), "conductivity"),
        (dict(volumetric_heat_capacity=[np.nan, 1e6]), "volumetric_heat_capacity[0]"),
        (dict(h_top=-1.0), "h_top"),
        (dict(h_bottom=np.nan), "h_bottom"),
        (dict(ambient_top=0.0), "ambient_top"),
    ],
)
def test_check_conduction_inputs_one_line_errors(kwargs, field):
    args = dict(dz=[1e-6, 2e-6], conductivity=[0.2, 0.3], volumetric_heat_capacity=[1e6, 2e6], h_bottom=5.0,
                h_top=np.inf, ambient_bottom=300.0, ambient_top=300.0)
    args.update(kwargs)
    with pytest.raises(ActsimInputError) as info:
        thr.check_conduction_inputs(**args)
    msg = str(info.value)
    assert msg.startswith(field) and "\n" not in msg


def test_march_conduction_rejects_bad_time_and_source():
    base = dict(dz=[1e-6, 1e-6], conductivity=[0.2, 0.2], volumetric_heat_capacity=[1e6, 1e6],
                initial_temperature=300.0, h_bottom=1.0, ambient_bottom=300.0, h_top=1.0, ambient_top=300.0)
    with pytest.raises(ActsimInputError, match=r"^time\[2\]"):
        thr.march_conduction(time=[0.0, 1.0, 1.0], source=[0.0, 0.0], **base)
    with pytest.raises(ActsimInputError, match="^source"):
        thr.march_conduction(time=[0.0, 1.0], source=np.zeros((2, 3)), **base)
    with pytest.raises(ActsimInputError, match="^method"):
        thr.march_conduction(time=[0.0, 1.0], source=[0.0, 0.0], method="euler", **base)


# ------------------------------------------------------------------------------------------------
# TR-BDF2: the numba step against the readable one, and both against the exact semi-discrete solution
# ------------------------------------------------------------------------------------------------


def _graded_stack(seed):
    """Invented stack with non-uniform cells: 3 layers, cell widths varying by a factor ~10, random k and rho c."""
    rng = np.random.default_rng(seed)
    dz = np.concatenate([np.geomspace(8e-6, 1e-6, 9), rng.uniform(0.5e-6, 3e-6, 12), np.full(7, 2e-6)])
    k = np.concatenate([np.full(9, 0.12), rng.uniform(0.15, 0.6, 12), np.full(7, 1.3)])
    rc = np.concatenate([np.full(9, 1.3e6), rng.uniform(1.5e6, 2.2e6, 12), np.full(7, 2.6e6)])
    return dz, k, rc


@pytest.mark.parametrize("seed, dt, hb, ht", [(1, 1e-4, 8.0, 15.0), (2, 0.05, 0.0, np.inf), (3, 2.0, 500.0, 0.0)])
def test_trbdf2_numba_matches_readable_reference(seed, dt, hb, ht):
    # The fast and the readable paths agree (project rule); the reference assembles the matrices itself and solves
    # them with scipy.linalg.solve_banded (LAPACK gbsv). Steps from well below to far above the cell diffusion
    # times (1e-6 to 0.1 s here); insulated, convective and fixed-temperature faces.
    dz, k, rc = _graded_stack(seed)
    rng = np.random.default_rng(10 + seed)
    T = 300 + rng.uniform(-5, 5, dz.size)
    q0 = rng.uniform(0, 1e8, dz.size)
    q1 = rng.uniform(0, 1e8, dz.size)
    work = th.make_work(dz.size)
    out = np.empty(dz.size)
    eb, et = thr.trbdf2_step(T, dz, k, rc, q0, q1, dt, hb, 295.0, ht, 301.0, work, out)
    ref, (rb, rt) = thr.trbdf2_step_reference(
        temperature=T, dz=dz, conductivity=k, volumetric_heat_capacity=rc, source_old=q0, source_new=q1, dt=dt,
        h_bottom=hb, ambient_bottom=295.0, h_top=ht, ambient_top=301.0, return_losses=True,
    )
    np.testing.assert_allclose(out, ref, rtol=1e-12)
    # the losses agree to round-off of the temperatures (~1e-13 K) times the face conductances
    scale = max(abs(eb), abs(et), abs(rb), abs(rt))
    assert eb == pytest.approx(rb, rel=1e-9, abs=1e-12 * scale) and et == pytest.approx(rt, rel=1e-9, abs=1e-12 * scale)
    # energy of the step ([Inc] sec. 1.3): absorbed (trapezoid, as the scheme integrates it) = stored + lost
    absorbed = 0.5 * dt * np.sum((q0 + q1) * dz)
    stored = np.sum(rc * dz * (ref - T))
    assert absorbed - stored - rb - rt == pytest.approx(0.0, abs=1e-9 * max(abs(absorbed), abs(stored)))


def _modal_exact(dz, k, rc, T0, q_mean, q_amp, omega, t, hb, tb, ht, tt):
    """Exact solution of the cell heat balance C T' = -A T + b(t), b = (q_mean + q_amp sin(omega t)) dz + ambient terms.

    Discrete eigenfunction expansion: A V = C V diag(lam), V^T C V = I (scipy.linalg.eigh, generalised symmetric
    problem); the modal amplitudes c = V^T C T obey c' = -lam c + f + g sin(omega t), whose solution is
        c(t) = f/lam + g (lam sin wt - w cos wt)/(lam^2 + w^2) + (c0 - f/lam + g w/(lam^2 + w^2)) e^{-lam t}
    (first-order linear ODE, integrating factor). Independent of any time stepper.
    """
    from scipy.linalg import eigh

    n = dz.size
    g_int = 1.0 / (dz[:-1] / (2 * k[:-1]) + dz[1:] / (2 * k[1:]))
    gb = 0.0 if hb <= 0 else 1.0 / (1.0 / hb + dz[0] / (2 * k[0]))
    gt = 0.0 if ht <= 0 else 1.0 / (1.0 / ht + dz[-1] / (2 * k[-1]))
    A = np.diag(np.concatenate([g_int, [0.0]]) + np.concatenate([[0.0], g_int]))
    A -= np.diag(g_int, 1) + np.diag(g_int, -1)
    A[0, 0] += gb
    A[-1, -1] += gt
    C = np.diag(rc * dz)
    lam, V = eigh(A, C)
    b_mean = q_mean * dz
    b_mean[0] += gb * tb
    b_mean[-1] += gt * tt
    f, g, c0 = V.T @ b_mean, V.T @ (q_amp * dz), V.T @ (C @ T0)
    w = omega
    den = lam**2 + w**2
    c = f / lam + g * (lam * math.sin(w * t) - w * math.cos(w * t)) / den + (c0 - f / lam + g * w / den) * np.exp(-lam * t)
    assert n == V.shape[0]
    return V @ c


def test_trbdf2_second_order_in_time_against_modal_solution():
    # [HS]: TR-BDF2 is second order. Reference: the exact solution of the same cell equations (discrete
    # eigenfunction expansion), so only the time error is measured. Source varying sinusoidally in time, smooth
    # start from a non-uniform profile; graded cells, three materials, different faces and ambients.
    dz, k, rc = _graded_stack(4)
    z = np.concatenate([[0.0], np.cumsum(dz)])
    q_mean = 2e3 * _beer_lambert_cells(z, alpha=3e4, irradiance=1.0, thickness=z[-1])
    q_amp = 0.5 * q_mean
    omega = 2 * np.pi / 0.02
    hb, tb, ht, tt = 50.0, 295.0, 12.0, 303.0
    zc = 0.5 * (z[1:] + z[:-1])
    T0 = 299.0 + 2.0 * np.cos(np.pi * zc / z[-1])
    t_end = 0.02
    exact = _modal_exact(dz, k, rc, T0, q_mean, q_amp, omega, t_end, hb, tb, ht, tt)

    def q_of_t(t):
        return q_mean + q_amp * math.sin(omega * t)

    errs = {"numba": [], "reference": []}
    counts = [20, 40, 80, 160]
    for m in counts:
        dt = t_end / m
        errs["numba"].append(np.max(np.abs(_run(thr.trbdf2_step, T0, dz, k, rc, q_of_t, dt, m, hb, tb, ht, tt) - exact)))
        T = T0.copy()
        for j in range(m):
            T = thr.trbdf2_step_reference(
                temperature=T, dz=dz, conductivity=k, volumetric_heat_capacity=rc, source_old=q_of_t(j * dt),
                source_new=q_of_t((j + 1) * dt), dt=dt, h_bottom=hb, ambient_bottom=tb, h_top=ht, ambient_top=tt)
        errs["reference"].append(np.max(np.abs(T - exact)))
    for name, e in errs.items():
        e = np.array(e)
        orders = np.log2(e[:-1] / e[1:])
        print(f"TR-BDF2 {name}: steps {counts} max error [K] {[f'{x:.2e}' for x in e]} observed orders {np.round(orders, 3)}")
        assert np.all(np.abs(orders - 2.0) < 0.1), orders
    # the two paths see the same error up to the round-off of up to 160 steps at 300 K (measured 1.3e-11 K)
    np.testing.assert_allclose(errs["numba"], errs["reference"], rtol=0, atol=1e-10)
