"""Liquid-crystal order (actsim.order): Maier–Saupe and Haller order laws, clearing-temperature shift,
spontaneous strains of glassy networks and elastomers, director profiles and the in-plane eigenstrain.

Each check is against a result from outside the module: literature values of the Maier–Saupe transition,
an independent minimisation of its free energy by numerical quadrature (scipy.integrate.quad +
scipy.optimize), hand-worked values of the closed forms, and the eigenstrain tensor rotated by
scipy.spatial.transform.Rotation.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import quad
from scipy.optimize import brentq, minimize_scalar
from scipy.spatial.transform import Rotation

from actsim import order
from actsim.errors import ActsimInputError

finite = dict(allow_nan=False, allow_infinity=False)


# --------------------------------------------------------------------------- independent Maier–Saupe


def _p2(u):
    return 1.5 * u * u - 0.5


def _ms_free_energy(q, tau):
    """Maier–Saupe free energy per molecule over U: Q^2/2 - tau ln int_0^1 exp(Q P2(u) / tau) du (by quad).

    Mean-field form of de Gennes and Prost, The Physics of Liquid Crystals, 2nd ed. 1993, sec. 2.3 (from memory).
    The exponent is shifted by its maximum Q/tau so the integrand stays <= 1.
    """
    shift = q / tau
    z, _ = quad(lambda u: math.exp(q * _p2(u) / tau - shift), 0.0, 1.0, epsabs=0.0, epsrel=1e-13)
    return 0.5 * q * q - tau * (math.log(z) + shift)


def _ms_nematic_minimum(tau):
    """(Q, F) of the nematic minimum at tau = kT/U, by bounded scalar minimisation over Q in [0.25, 1)."""
    res = minimize_scalar(_ms_free_energy, bounds=(0.25, 0.9999), args=(tau,), method="bounded",
                          options={"xatol": 1e-11})
    return res.x, res.fun


@pytest.fixture(scope="module")
def ms_transition_by_quad():
    # the transition: the nematic minimum's free energy equals the isotropic one (F = 0 at Q = 0)
    tau_ni = brentq(lambda tau: _ms_nematic_minimum(tau)[1], 0.215, 0.222, xtol=1e-13)
    return _ms_nematic_minimum(tau_ni)[0], tau_ni


def test_maier_saupe_transition_against_literature_and_quadrature(ms_transition_by_quad):
    q_ni, tau_ni = order.maier_saupe_transition()
    # Maier and Saupe, Z. Naturforsch. 14a (1959) 882; de Gennes and Prost 1993 sec. 2.3: Q_NI = 0.4289 (0.429),
    # k T_NI / U = 0.2202 (from memory; the texts round to these digits)
    assert q_ni == pytest.approx(0.4289, abs=2e-4)
    assert tau_ni == pytest.approx(0.2202, abs=1e-4)
    # independent route: free energy by quadrature, minimised by scipy (no Dawson integral, no self-consistency)
    q_quad, tau_quad = ms_transition_by_quad
    assert tau_ni == pytest.approx(tau_quad, rel=1e-8)
    assert q_ni == pytest.approx(q_quad, abs=1e-6)
    print(f"\nMaier–Saupe: Q_NI = {q_ni:.7f} (quad {q_quad:.7f}), kT_NI/U = {tau_ni:.8f} (quad {tau_quad:.8f})")


@pytest.mark.parametrize("t", [0.1, 0.3, 0.6, 0.9, 0.99, 0.9999])
def test_maier_saupe_order_is_the_free_energy_minimum(t, ms_transition_by_quad):
    # Q at t = T/T_NI minimises F(Q; tau = tau_NI t) (quadrature route), and satisfies Q = <P2> (self-consistency)
    _, tau_ni = ms_transition_by_quad
    q_min, f_min = _ms_nematic_minimum(tau_ni * t)
    q = order.maier_saupe_order(t)
    assert q == pytest.approx(q_min, abs=2e-6)
    assert f_min < 0.0  # below t = 1 the nematic minimum beats the isotropic state (lowest-free-energy root)
    tau = tau_ni * t
    num, _ = quad(lambda u: _p2(u) * math.exp(q * (_p2(u) - 1) / tau), 0, 1, epsabs=0, epsrel=1e-13)
    den, _ = quad(lambda u: math.exp(q * (_p2(u) - 1) / tau), 0, 1, epsabs=0, epsrel=1e-13)
    assert q == pytest.approx(num / den, abs=1e-9)


def test_maier_saupe_order_shape_and_limits():
    t = np.linspace(0.0, 1.2, 2401)
    q = order.maier_saupe_order(t)
    nem = t < 1
    assert np.all(np.diff(q[nem]) < 0)  # Q falls monotonically as t rises (de Gennes and Prost sec. 2.3)
    assert np.all(q[~nem] == 0.0)  # isotropic above t = 1; first-order jump at t = 1
    assert q[0] == 1.0
    q_ni, tau_ni = order.maier_saupe_transition()
    assert order.maier_saupe_order(1 - 1e-12) == pytest.approx(q_ni, abs=1e-5)
    # low-temperature expansion Q = 1 - tau + O(tau^2) (large m: <P2> = 1 - 1/m; from memory)
    assert order.maier_saupe_order(1e-3) == pytest.approx(1 - tau_ni * 1e-3, abs=1e-6)
    with pytest.raises(ActsimInputError, match="^reduced_temperature"):
        order.maier_saupe_order(-0.1)


def test_maier_saupe_table_interpolation_error():
    tt, tq = order.maier_saupe_table()
    assert tt.size == order.MS_TABLE_POINTS and np.all(np.diff(tt) > 0)
    assert tt[0] == 0.0 and tt[-1] == 1.0 and tq[0] == 1.0
    assert tq[-1] == pytest.approx(order.maier_saupe_transition()[0], abs=1e-15)
    assert not tt.flags.writeable
    # linear interpolation within 1e-6 of the solved Q over [0.3, 1) (the brief's requirement)
    t = np.linspace(0.3, 1.0, 100001)[:-1]
    err = np.abs(np.interp(t, tt, tq) - order.maier_saupe_order(t)).max()
    low = np.linspace(0.0, 0.3, 20001)
    err_low = np.abs(np.interp(low, tt, tq) - order.maier_saupe_order(low)).max()
    print(f"\nMaier–Saupe table: max interpolation error {err:.2e} on [0.3, 1), {err_low:.2e} on [0, 0.3]")
    assert err < 1e-6 and err_low < 1e-6


# --------------------------------------------------------------------------- clearing temperature and laws


def test_transition_temperature_shift_and_floor():
    # T_NI(x) = T_NI0 - shift x (linear dilution; Finkelmann et al. PRL 87 (2001) 015501, from memory): by hand
    kw = dict(clearing_temperature=360.0, clearing_shift=40.0)
    np.testing.assert_allclose(order.transition_temperature([0.0, 0.25, 1.0], **kw), [360.0, 350.0, 320.0],
                               rtol=1e-15)
    assert order.transition_temperature(1.0, clearing_temperature=360.0, clearing_shift=400.0) == \
        order.CLEARING_FLOOR
    with pytest.raises(ActsimInputError, match="^liquid_crystal.clearing_temperature"):
        order.transition_temperature(0.0, clearing_temperature=0.0, clearing_shift=1.0)
    with pytest.raises(ActsimInputError, match="^conversion"):
        order.transition_temperature(1.2, **kw)


def test_haller_law_values():
    # Haller, Prog. Solid State Chem. 10 (1975) 103: Q = (1 - T/T_NI)^beta below T_NI, by hand:
    # T_NI = 360 - 40 * 0.5 = 340 K; T = 306 K -> t = 0.9 -> Q = 0.1^0.2 = 0.6309573445; T >= 340 K -> 0
    kw = dict(law="haller", clearing_temperature=360.0, clearing_shift=40.0, exponent=0.2)
    assert order.nematic_order(0.5, 306.0, **kw) == pytest.approx(0.6309573444801932, rel=1e-14)
    assert order.nematic_order(0.5, 340.0, **kw) == 0.0
    assert order.nematic_order(0.5, 400.0, **kw) == 0.0
    # exponent 0.25 at t = 0.5: 0.5^0.25 = 0.8408964152537145
    assert order.nematic_order(0.0, 180.0, **{**kw, "exponent": 0.25}) == pytest.approx(0.8408964152537145,
                                                                                        rel=1e-14)


def test_nematic_order_broadcasts_and_uses_the_shifted_clearing_temperature():
    x = np.array([[0.0], [0.5], [1.0]])
    T = np.array([300.0, 320.0, 345.0])
    q = order.nematic_order(x, T, law="maier-saupe", clearing_temperature=360.0, clearing_shift=40.0)
    assert q.shape == (3, 3)
    t = T[None, :] / (360.0 - 40.0 * x)
    np.testing.assert_allclose(q, np.where(t < 1, order.maier_saupe_order(np.minimum(t, 1.0)), 0.0), atol=1e-6)
    assert q[2, 2] == 0.0 and q[0, 2] > 0.4  # light (x = 1) drives the 345 K cell isotropic
    assert np.all(order.nematic_order(x, T, law="none", clearing_temperature=360.0, clearing_shift=40.0) == 0)


@pytest.mark.parametrize("kwargs, field", [
    (dict(law="smectic"), "liquid_crystal.law"),
    (dict(law="haller", exponent=0.0), "liquid_crystal.exponent"),
    (dict(law="haller", exponent=1.5), "liquid_crystal.exponent"),
    (dict(law="haller", temperature=0.0), "temperature"),
])
def test_nematic_order_refuses_bad_input_in_one_line(kwargs, field):
    args = dict(conversion=0.1, temperature=300.0, clearing_temperature=360.0, clearing_shift=40.0)
    args.update(kwargs)
    with pytest.raises(ActsimInputError) as info:
        order.nematic_order(args.pop("conversion"), args.pop("temperature"), **args)
    assert str(info.value).startswith(field) and "\n" not in str(info.value)


# --------------------------------------------------------------------------- spontaneous strains


def test_glassy_strains_linear_and_volume_conserving_default():
    e_par, e_perp = order.glassy_strains(np.array([0.6, 0.2]), reference_order=0.6, c_par=0.05)
    np.testing.assert_allclose(e_par, [0.0, -0.02], atol=1e-17)  # 0.05 * (0.2 - 0.6), by hand
    # c_perp = -c_par / 2: e_par + 2 e_perp = 0, volume unchanged to first order (common practice, no source)
    np.testing.assert_allclose(e_par + 2 * e_perp, 0.0, atol=1e-17)
    _, e_perp2 = order.glassy_strains(0.2, reference_order=0.6, c_par=0.05, c_perp=-0.01)
    assert e_perp2 == pytest.approx(0.004, rel=1e-14)


def test_elastomer_strains_step_length_tensor():
    # Warner and Terentjev, Liquid Crystal Elastomers (OUP 2003) ch. 6: r = (1 + 2Q)/(1 - Q),
    # lambda_par = (r/r_ref)^(1/3), lambda_perp = (r_ref/r)^(1/6).
    # Full loss of order from Q_ref = 0.5: r_ref = 2/0.5 = 4 -> lambda_par = 4^(-1/3) = 0.6299605249, by hand
    e_par, e_perp = order.elastomer_strains(0.0, reference_order=0.5)
    assert 1 + e_par == pytest.approx(0.6299605249474366, rel=1e-14)
    assert 1 + e_perp == pytest.approx(1.2599210498948732, rel=1e-14)  # 4^(1/6)
    # incompressible: lambda_par lambda_perp^2 = 1 for any Q
    q = np.linspace(-0.4, 0.95, 28)
    e_par, e_perp = order.elastomer_strains(q, reference_order=0.3)
    np.testing.assert_allclose((1 + e_par) * (1 + e_perp) ** 2, 1.0, rtol=1e-14)
    # the reference state is unstrained
    assert order.elastomer_strains(0.3, reference_order=0.3) == (0.0, 0.0)


@pytest.mark.parametrize("q_ref", [0.2, 0.45, 0.7])
def test_elastomer_linearisation_matches_the_hand_derivative(q_ref):
    # d lambda_par / dQ at Q_ref = (1/3) r'/r with r' = 3/(1-Q)^2 -> 1 / ((1 - Q_ref)(1 + 2 Q_ref)) (by hand)
    c_par = 1.0 / ((1 - q_ref) * (1 + 2 * q_ref))
    dq = 1e-7
    e_par, e_perp = order.elastomer_strains(q_ref + dq, reference_order=q_ref)
    assert e_par / dq == pytest.approx(c_par, rel=2e-6)
    assert e_perp / dq == pytest.approx(-c_par / 2, rel=2e-6)  # incompressible: c_perp = -c_par / 2
    # no cancellation at tiny steps (log1p/expm1 on the exact difference)
    q_tiny = q_ref + 1e-13
    e_tiny, _ = order.elastomer_strains(q_tiny, reference_order=q_ref)
    assert e_tiny / (q_tiny - q_ref) == pytest.approx(c_par, rel=1e-9)


def test_elastomer_refuses_order_at_the_limits():
    with pytest.raises(ActsimInputError, match="^order"):
        order.elastomer_strains(1.0, reference_order=0.5)
    with pytest.raises(ActsimInputError, match="^liquid_crystal.reference_order"):
        order.elastomer_strains(0.2, reference_order=-0.5)


# --------------------------------------------------------------------------- director and eigenstrain


def test_inplane_eigenstrain_equals_the_rotated_tensor():
    # independent route: the uniaxial tensor diag(e_par, e_perp, e_perp) in the director frame, rotated by
    # scipy's Rotation (about y by -tilt lifts x toward +z, then about z by phi); in-plane components read off.
    rng = np.random.default_rng(7)
    for _ in range(40):
        e_par, e_perp = rng.uniform(-0.05, 0.05, 2)
        phi, tilt = rng.uniform(-math.pi, math.pi), rng.uniform(-math.pi / 2, math.pi / 2)
        R = Rotation.from_euler("ZY", [phi, -tilt]).as_matrix()
        n = R @ [1.0, 0.0, 0.0]
        assert n == pytest.approx([math.cos(tilt) * math.cos(phi), math.cos(tilt) * math.sin(phi), math.sin(tilt)])
        tensor = R @ np.diag([e_par, e_perp, e_perp]) @ R.T
        assert np.trace(tensor) == pytest.approx(e_par + 2 * e_perp, abs=1e-16)  # invariant
        exx, eyy, gxy = order.inplane_eigenstrain(e_par=e_par, e_perp=e_perp, phi=phi, tilt=tilt)
        assert [exx, eyy, gxy] == pytest.approx([tensor[0, 0], tensor[1, 1], 2 * tensor[0, 1]], abs=1e-16)
        w = order.director_weights(phi, tilt)
        assert order.inplane_eigenstrain_nb(e_par, e_perp, *w) == pytest.approx((exx, eyy, gxy), abs=1e-17)


def test_inplane_eigenstrain_limits():
    # planar along x: exx = e_par, eyy = e_perp; homeotropic: isotropic in the plane, e_perp (by hand)
    assert order.inplane_eigenstrain(e_par=0.02, e_perp=-0.01, phi=0.0, tilt=0.0) == pytest.approx((0.02, -0.01, 0))
    assert order.inplane_eigenstrain(e_par=0.02, e_perp=-0.01, phi=0.3, tilt=math.pi / 2) == \
        pytest.approx((-0.01, -0.01, 0), abs=1e-17)
    # 45 deg: exx = eyy = mean, gxy = e_par - e_perp (Mohr's circle)
    assert order.inplane_eigenstrain(e_par=0.02, e_perp=-0.01, phi=math.pi / 4, tilt=0.0) == \
        pytest.approx((0.005, 0.005, 0.03), abs=1e-17)


def test_director_profiles_at_the_faces():
    z = np.array([0.0, 0.25, 1.0])
    phi, tilt = order.director_profile("twisted", z, angle=-math.pi / 4, angle_top=math.pi / 4)
    np.testing.assert_allclose(phi, [-math.pi / 4, -math.pi / 8, math.pi / 4], atol=1e-16)
    assert np.all(tilt == 0)
    phi, tilt = order.director_profile("splay", z, angle=0.3)
    np.testing.assert_allclose(tilt, [0.0, math.pi / 8, math.pi / 2], atol=1e-16)
    assert np.all(phi == 0.3)
    phi, tilt = order.director_profile("homeotropic", z)
    assert np.all(tilt == math.pi / 2)
    phi, tilt = order.director_profile("planar", z, angle=0.5)
    assert np.all(phi == 0.5) and np.all(tilt == 0)
    phi, tilt = order.director_profile("hybrid", z, angle=0.0, angle_top=1.0, tilt_bottom=0.2, tilt_top=0.6)
    np.testing.assert_allclose(phi, [0.0, 0.25, 1.0], atol=1e-16)
    np.testing.assert_allclose(tilt, [0.2, 0.3, 0.6], atol=1e-16)
    phi, tilt = order.director_profile("table", [0.0, 0.5, 0.75, 1.0], table=([0.0, 0.5, 1.0], [0.0, 1.0, 1.0],
                                                                                [0.0, 0.0, 1.0]))
    np.testing.assert_allclose(phi, [0.0, 1.0, 1.0, 1.0])
    np.testing.assert_allclose(tilt, [0.0, 0.0, 0.5, 1.0])


@pytest.mark.parametrize("args, kwargs, field", [
    (("cholesteric", [0.5]), {}, "director.kind"),
    (("twisted", [0.5]), {}, "director.angle_top"),
    (("planar", [1.5]), {}, "director.zeta"),
    (("planar", [0.5]), dict(angle=10.0), "director.angle"),
    (("splay", [0.5]), dict(tilt_top=2.0), "director.tilt_top"),
    (("table", [0.5]), {}, "director.table"),
    (("table", [0.5]), dict(table=([0.0, 0.0], [0, 0], [0, 0])), "director.table.zeta"),
    (("table", [0.5]), dict(table=([0.0, 1.0], [0, 0], [0, 3.0])), "director.table.tilt"),
])
def test_director_profile_refuses_bad_input_in_one_line(args, kwargs, field):
    with pytest.raises(ActsimInputError) as info:
        order.director_profile(*args, **kwargs)
    assert str(info.value).startswith(field + ":") and "\n" not in str(info.value)


# --------------------------------------------------------------------------- numba and numpy agree


@settings(max_examples=80, deadline=None)
@given(x=st.floats(0, 1, **finite), T=st.floats(150, 450, **finite), law=st.sampled_from(order.ORDER_LAW_NAMES),
       shift=st.floats(0, 100, **finite), beta=st.floats(0.05, 1.0, **finite))
def test_order_kernel_equals_numpy(x, T, law, shift, beta):
    tt, tq = order.maier_saupe_table()
    q = order.nematic_order(x, T, law=law, clearing_temperature=360.0, clearing_shift=shift, exponent=beta)
    q_nb = order.order_nb(x, T, order.ORDER_LAW_NAMES.index(law), 360.0, shift, beta, tt, tq)
    assert q_nb == pytest.approx(q, rel=1e-14, abs=1e-15)


@settings(max_examples=80, deadline=None)
@given(q=st.floats(-0.45, 0.95, **finite), q_ref=st.floats(-0.45, 0.95, **finite),
       kind=st.sampled_from(order.LC_KIND_NAMES), c_par=st.floats(-0.5, 0.5, **finite),
       phi=st.floats(-6.28, 6.28, **finite), tilt=st.floats(-1.57, 1.57, **finite))
def test_strain_and_eigenstrain_kernels_equal_numpy(q, q_ref, kind, c_par, phi, tilt):
    code = order.LC_KIND_NAMES.index(kind)
    e_par, e_perp = order.lc_strains_nb(q, q_ref, code, c_par, -0.5 * c_par)
    if kind == "glassy":
        ref = order.glassy_strains(q, reference_order=q_ref, c_par=c_par)
    elif kind == "elastomer":
        ref = order.elastomer_strains(q, reference_order=q_ref)
    else:
        ref = (0.0, 0.0)
    assert (e_par, e_perp) == pytest.approx(ref, rel=1e-14, abs=1e-17)
    w = order.director_weights(phi, tilt)
    got = order.inplane_eigenstrain_nb(e_par, e_perp, *w)
    assert got == pytest.approx(order.inplane_eigenstrain(e_par=e_par, e_perp=e_perp, phi=phi, tilt=tilt),
                                rel=1e-14, abs=1e-18)
