"""Polarised light and dichroic absorption (actsim.polarised) against closed forms and the isotropic pass."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from actsim import optics
from actsim.errors import ActsimInputError
from actsim.polarised import (absorption_factor, absorption_factor_nb, polar_params, polarised_light_field,
                              polarised_light_pass, transmitted_polarisation)


def _light(n, nb, *, c0=0.0, eps_a=0.0, eps_b=0.0, bg=0.0, from_top=True, wavelength=550e-9, entry=1.0):
    """LightParams of a uniform film (or per-cell arrays where given as arrays)."""
    def cells(v):
        v = np.asarray(v, float)
        return np.broadcast_to(v if v.ndim != 1 else v[:, None], (n, nb)).copy()
    return optics.LightParams(
        c0=np.broadcast_to(np.asarray(c0, float), (n,)).copy(), eps_a=cells(eps_a), eps_b=cells(eps_b),
        alpha_bg=cells(bg), from_top=np.broadcast_to(np.asarray(from_top, np.bool_), (nb,)).copy(),
        entry=np.broadcast_to(np.asarray(entry, float), (nb,)).copy(), beam_emol=np.ones(nb),
        beam_source=np.zeros(nb, np.int64), beam_wavelength=np.broadcast_to(np.asarray(wavelength, float), (nb,)).copy(),
        beam_fraction=np.ones(nb))


def _kernel(x, Q, dz, light, pol, q):
    n, nb = light.eps_a.shape
    outs = [np.full((n, nb), np.nan) for _ in range(4)]
    tr = polarised_light_pass(np.asarray(x, float), np.asarray(Q, float), dz, light, pol, np.asarray(q, float), *outs)
    return (*outs, tr)


def _random_film(rng, n, nb, *, isotropic=False):
    top = rng.random(nb) < 0.5
    light = optics.LightParams(
        c0=rng.uniform(0, 800, n), eps_a=rng.uniform(0, 4, (n, nb)), eps_b=rng.uniform(0, 4, (n, nb)),
        alpha_bg=rng.uniform(0, 300, (n, nb)), from_top=top, entry=rng.uniform(0.9, 1, nb), beam_emol=np.ones(nb),
        beam_source=np.zeros(nb, np.int64), beam_wavelength=rng.uniform(300e-9, 700e-9, nb), beam_fraction=np.ones(nb))
    pol = polar_params(
        n_cell=n, n_beam=nb, director_angle=rng.uniform(-4, 4, n), director_tilt=rng.uniform(-1.5, 1.5, n),
        birefringence=0.0 if isotropic else rng.uniform(-0.2, 0.3, n), order_reference=rng.uniform(0.3, 1, n),
        refractive_index=rng.uniform(1.3, 1.8, n), order_factor_a=0.0 if isotropic else rng.uniform(-0.5, 1, n),
        order_factor_b=0.0 if isotropic else rng.uniform(-0.5, 1, n), ratio_a=rng.uniform(0, 3, n),
        ratio_b=rng.uniform(0, 3, n), polarised=rng.random(nb) < 0.5, polarisation_angle=rng.uniform(-4, 4, nb))
    x, Q = rng.uniform(0, 1, n), rng.uniform(0, 1, n)
    dz = rng.uniform(0.2, 1.0, n) * 60e-6 / n
    return light, pol, x, Q, dz, rng.uniform(1e-3, 3e-3, nb)


def test_absorption_factor_against_orientational_average():
    # <(e.m)^2> over a Maier-Saupe distribution f(theta) ~ exp(a cos^2 theta) about n, by quadrature, with
    # S = <P2(cos theta)>; eps(e)/eps_iso = e.[r I + (1 - r) <m m>].e / ((1 + 2r)/3) (tensor average of the
    # absorptivity; Michl and Thulstrup, Spectroscopy with Polarized Light, VCH 1986 - "from memory").
    ct, wt = np.polynomial.legendre.leggauss(200)
    phi = np.linspace(0, 2 * np.pi, 256, endpoint=False)
    for a, r, b in ((2.0, 0.0, 0.3), (5.0, 0.2, 1.1), (-1.5, 0.7, 0.0), (0.0, 0.4, 0.8)):
        f = np.exp(a * ct ** 2) * wt
        f /= f.sum()
        S = float(np.sum(f * (1.5 * ct ** 2 - 0.5)))
        st_ = np.sqrt(1 - ct ** 2)
        # m = (sin th cos ph, sin th sin ph, cos th) about n = z; e in the x-z plane at angle b from n
        em = np.sin(b) * st_[:, None] * np.cos(phi)[None, :] + np.cos(b) * ct[:, None]
        mean_em2 = float(np.sum(f[:, None] * em ** 2) / phi.size)
        expected = (r + (1 - r) * mean_em2) / ((1 + 2 * r) / 3)
        assert absorption_factor(order=S, cos2_angle=math.cos(b) ** 2, ratio=r) == pytest.approx(expected, rel=1e-12)
        assert absorption_factor_nb(S, math.cos(b) ** 2, r) == pytest.approx(expected, rel=1e-12)
    # isotropic limit exactly 1, and the mean over three orthogonal directions is 1 (trace of <m m>)
    assert absorption_factor(order=0.0, cos2_angle=0.37, ratio=0.25) == 1.0
    g_par, g_perp = (absorption_factor(order=0.6, cos2_angle=c2, ratio=0.1) for c2 in (1.0, 0.0))
    assert (g_par + 2 * g_perp) / 3 == pytest.approx(1.0, rel=1e-15)


@pytest.mark.parametrize("polarised,angle", [(False, 0.0), (True, 0.0), (True, 1.1), (True, -2.7)])
def test_isotropic_limit_equals_light_pass(polarised, angle):
    # Q = 0 (and order factors nonzero) or order factors 0 with dn = 0: the film is isotropic, so the pass
    # must be Beer-Lambert per cell exactly as optics.light_pass (Swinehart, J. Chem. Educ. 39 (1962) 333).
    rng = np.random.default_rng(3)
    n, nb = 60, 3
    light, pol, x, Q, dz, q = _random_film(rng, n, nb, isotropic=True)
    pol = pol._replace(polarised=np.full(nb, polarised), polarisation_angle=np.full(nb, angle))
    mf0, ab0 = np.zeros((n, nb)), np.zeros((n, nb))
    tr0 = optics.light_pass(x, dz, light, q, mf0, ab0)
    for order, factor in ((Q, 0.0), (np.zeros(n), 0.8)):
        p = pol._replace(order_factor_a=np.full(n, factor), order_factor_b=np.full(n, factor / 2))
        mf, ab, fa, fb, tr = _kernel(x, order, dz, light, p, q)
        np.testing.assert_allclose(mf, mf0, rtol=1e-14, atol=0)
        np.testing.assert_allclose(ab, ab0, rtol=1e-14, atol=0)
        assert tr == pytest.approx(tr0, rel=1e-14)
        np.testing.assert_array_equal(fa, mf)
        np.testing.assert_array_equal(fb, mf)


def test_kernel_matches_jones_reference():
    # The kernel (coherency matrix, one pass) against the readable Jones-vector path (unpolarised beams as two
    # incoherent halves): two formulations of Jones calculus (Jones, J. Opt. Soc. Am. 31 (1941) 488).
    rng = np.random.default_rng(7)
    for _ in range(3):
        light, pol, x, Q, dz, q = _random_film(rng, 80, 4)
        mf, ab, fa, fb, tr = _kernel(x, Q, dz, light, pol, q)
        ref = polarised_light_field(conversion=x, order=Q, dz=dz, light=light, pol=pol, surface_flux=q)
        for got, want in ((mf, ref.mean_flux), (ab, ref.absorbed), (fa, ref.flux_a), (fb, ref.flux_b)):
            np.testing.assert_allclose(got, want, rtol=1e-12, atol=1e-14 * want.max())
        assert tr == pytest.approx(ref.transmitted.sum(), rel=1e-12)


@pytest.mark.parametrize("p", [0.0, 0.6, -1.2])
def test_cos2_law_single_dichroic_cell(p):
    # A perfect dichroic cell (r = 0, S = 1, planar director at p, dn = 0) is a partial polariser with principal
    # transmittances exp(-3 alpha dz) along the director and 1 across it: T = cos^2 exp(-3 alpha dz) + sin^2
    # (Malus's law for a dichroic plate; Born and Wolf, Principles of Optics, sec. 15.6 - "from memory" for the
    # section). For a thin cell this is 1 - exp(-alpha dz 3 cos^2(psi - p)) to first order in alpha dz.
    alpha, dz = 2.0e3, 1.0e-6
    light = _light(1, 1, c0=1.0, eps_a=alpha / math.log(10))
    for psi in np.linspace(-math.pi, math.pi, 13):
        pol = polar_params(n_cell=1, n_beam=1, director_angle=p, order_factor_a=1.0, polarised=True,
                           polarisation_angle=psi)
        mf, ab, fa, fb, tr = _kernel([0.0], [1.0], np.array([dz]), light, pol, [1.0])
        c2 = math.cos(psi - p) ** 2
        assert ab[0, 0] == pytest.approx(c2 * -math.expm1(-3 * alpha * dz), rel=1e-13, abs=1e-16)
        assert ab[0, 0] == pytest.approx(-math.expm1(-3 * alpha * dz * c2), rel=2 * 3 * alpha * dz, abs=1e-16)
        # the reactant sees g = 3 in the e channel and 0 in the o channel
        assert fa[0, 0] == pytest.approx(3 * c2 * -math.expm1(-3 * alpha * dz) / (3 * alpha * dz), rel=1e-13, abs=1e-16)


@pytest.mark.parametrize("S", [0.0, 0.35, 0.8, 1.0])
def test_dichroic_ratio_gives_order(S):
    # (A_par - A_perp)/(A_par + 2 A_perp) = S for r = 0 (Michl and Thulstrup, Spectroscopy with Polarized Light,
    # VCH 1986 - "from memory"), absorbances -log10 T of a birefringent film of 40 cells with light polarised
    # along and across the planar director, from the kernel and from the Jones reference.
    n, p = 40, 0.4
    light = _light(n, 2, c0=300.0, eps_a=40.0, from_top=[True, False], wavelength=[400e-9, 500e-9])
    dz = np.full(n, 25e-6 / n)
    absorbance = {}
    for name, psi in (("par", p), ("perp", p + math.pi / 2)):
        pol = polar_params(n_cell=n, n_beam=2, director_angle=p, birefringence=0.15, order_factor_a=S,
                           polarised=True, polarisation_angle=psi)
        tr = _kernel(np.zeros(n), np.ones(n), dz, light, pol, [1.0, 0.0])[-1]
        ref = polarised_light_field(conversion=np.zeros(n), order=np.ones(n), dz=dz, light=light, pol=pol,
                                    surface_flux=np.array([0.0, 1.0]))
        absorbance[name] = (-math.log10(tr), -math.log10(ref.transmitted[1]))
    for k in range(2):
        a_par, a_perp = absorbance["par"][k], absorbance["perp"][k]
        assert (a_par - a_perp) / (a_par + 2 * a_perp) == pytest.approx(S, abs=1e-13)  # absorbances ~0.2 to 2.4


def _twisted(n, *, u, wavelength=550e-9, dn=0.1, from_top=True, twist=math.pi / 2):
    """A non-absorbing twisted layer: director 0 at the entry face, ``twist`` at the exit face."""
    d = u * wavelength / (2 * dn)
    zc = (np.arange(n) + 0.5) / n
    angle = twist * (1 - zc) if from_top else twist * zc
    light = _light(n, 1, from_top=from_top, wavelength=wavelength)
    pol = polar_params(n_cell=n, n_beam=1, director_angle=angle, birefringence=dn, order_reference=0.5,
                       polarised=True, polarisation_angle=0.0)
    return dict(conversion=np.zeros(n), order=np.full(n, 0.5), dz=np.full(n, d / n), light=light, pol=pol, beam=0)


@pytest.mark.parametrize("from_top", [True, False])
def test_gooch_tarry_twisted_nematic(from_top):
    # 90-degree twisted nematic, input along the entry director, analyser parallel to the input polariser:
    # T_par = sin^2((pi/2) sqrt(1 + u^2)) / (1 + u^2), u = 2 dn d / lambda (Gooch and Tarry, J. Phys. D 8 (1975)
    # 1575). The staircase of cells converges at second order in the cell count (fourth at the first minimum).
    for u in (0.5, math.sqrt(3), 3.0, 6.0):
        exact = math.sin(math.pi / 2 * math.sqrt(1 + u * u)) ** 2 / (1 + u * u)
        errs = []
        for n in (50, 100, 200, 400):
            state = transmitted_polarisation(**_twisted(n, u=u, from_top=from_top))
            assert state.transmittance_x + state.transmittance_y == pytest.approx(1.0, rel=1e-12)
            errs.append(abs(state.transmittance_x - exact))
        assert errs[2] < 1e-4 and errs[3] < 1e-4
        if errs[0] > 1e-9:
            orders = np.log2(np.array(errs[:-1]) / np.array(errs[1:]))
            print(f"Gooch-Tarry u = {u:.3g}: errors {errs}, orders {orders}")
            assert np.all(orders > 1.8)


def test_mauguin_limit_turns_polarisation_by_twist():
    # Mauguin regime u >> 1: the polarisation follows the director through the twist (Yariv and Yeh, Optical Waves
    # in Crystals, Wiley 1984, ch. 5; Gooch and Tarry 1975), so a 90-degree twist turns it by 90 degrees and a
    # 45-degree twist by 45 degrees; thin layers (u << 1) leave it nearly unturned.
    state = transmitted_polarisation(**_twisted(400, u=40.0))
    assert abs(math.degrees(state.rotation)) == pytest.approx(90.0, abs=0.2)
    assert state.transmittance_y == pytest.approx(1.0, abs=1e-3)
    assert state.degree_of_polarisation == pytest.approx(1.0, rel=1e-12)
    state = transmitted_polarisation(**_twisted(400, u=40.0, twist=math.pi / 4, from_top=False))
    assert math.degrees(state.rotation) == pytest.approx(45.0, abs=0.2)
    assert abs(math.degrees(transmitted_polarisation(**_twisted(400, u=0.01)).rotation)) < 0.1


def test_quarter_wave_plate_ellipticity():
    # A quarter-wave plate (dn d = lambda/4) with its slow axis (the director, dn > 0) along x and light polarised
    # at +45 degrees gives circular light whose x component lags by a quarter period, so the field turns from +y to
    # +x (Hecht, Optics, 4th ed. 2002, sec. 8.7 - "from memory"): chi = +45 degrees; at -45 degrees input, chi = -45.
    n, lam, dn = 10, 500e-9, 0.05
    dz = np.full(n, lam / (4 * dn) / n)
    for psi, sign in ((math.pi / 4, 1), (-math.pi / 4, -1)):
        pol = polar_params(n_cell=n, n_beam=1, birefringence=dn, polarised=True, polarisation_angle=psi)
        state = transmitted_polarisation(conversion=np.zeros(n), order=np.ones(n), dz=dz,
                                         light=_light(n, 1, wavelength=lam), pol=pol, beam=0)
        assert math.degrees(state.ellipticity) == pytest.approx(sign * 45.0, abs=1e-9)
        assert state.transmittance_x == pytest.approx(0.5, rel=1e-12)


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 2 ** 32 - 1), n=st.integers(1, 120), nb=st.integers(1, 4))
def test_photon_balance_random_films(seed, n, nb):
    # Conservation of photons: absorbed + transmitted = entering, to round-off (exact per-cell attenuation of two
    # orthogonal channels; Beer-Lambert, Swinehart 1962).
    light, pol, x, Q, dz, q = _random_film(np.random.default_rng(seed), n, nb)
    mf, ab, fa, fb, tr = _kernel(x, Q, dz, light, pol, q)
    incident = float(np.sum(q * light.entry))
    assert abs(ab.sum() + tr - incident) <= 1e-13 * incident
    assert np.all(ab >= 0) and np.all(mf >= 0) and np.all(fa >= 0) and np.all(fb >= 0)


def test_homeotropic_film_independent_of_polarisation():
    # Director along the normal (tilt 90 deg): both eigenwaves are polarised across the director, cos^2 b = 0, so
    # absorption is the same for every polarisation and equals Beer-Lambert with alpha_iso g(S, 0, r), g(S, 0, r) =
    # 1 - S (1 - r)/(1 + 2r) (orientational average of the absorptivity tensor; Michl and Thulstrup 1986 - "from
    # memory"). Birefringence plays no part along the optic axis.
    n, S, r = 30, 0.7, 0.1
    light = _light(n, 1, c0=200.0, eps_a=2.0)
    dz = np.full(n, 40e-6 / n)
    alpha = math.log(10) * 200.0 * 2.0 * (1 - S * (1 - r) / (1 + 2 * r))
    results = []
    for polarised, psi in ((False, 0.0), (True, 0.0), (True, 0.9), (True, 2.0)):
        for p in (0.0, 1.3):
            pol = polar_params(n_cell=n, n_beam=1, director_angle=p, director_tilt=math.pi / 2, birefringence=0.2,
                               order_factor_a=S, ratio_a=r, polarised=polarised, polarisation_angle=psi)
            results.append(_kernel(np.zeros(n), np.ones(n), dz, light, pol, [1.0])[-1])
    np.testing.assert_allclose(results, math.exp(-alpha * 40e-6), rtol=1e-13)


def test_bottom_light_mirrors_top_light():
    # Mirror symmetry: a film lit from the bottom is the same film flipped and lit from the top (common practice,
    # no source).
    rng = np.random.default_rng(11)
    light, pol, x, Q, dz, q = _random_film(rng, 50, 1)
    light = light._replace(from_top=np.array([True]))
    flip = lambda a: a[::-1].copy()  # noqa: E731
    light_b = light._replace(from_top=np.array([False]), c0=flip(light.c0), eps_a=flip(light.eps_a),
                             eps_b=flip(light.eps_b), alpha_bg=flip(light.alpha_bg))
    pol_b = pol._replace(**{f: flip(getattr(pol, f)) for f in pol._fields if f not in ("polarised", "polarisation_angle")})
    top = _kernel(x, Q, dz, light, pol, q)
    bottom = _kernel(flip(x), flip(Q), flip(dz), light_b, pol_b, q)
    for a, b in zip(top[:4], bottom[:4]):
        np.testing.assert_allclose(a, b[::-1], rtol=1e-13)


def test_bad_input_is_one_line():
    with pytest.raises(ActsimInputError, match=r"^order_factor_a\[1\]: 1.5 is outside the allowed range"):
        polar_params(n_cell=3, n_beam=1, order_factor_a=[0.0, 1.5, 0.0])
    with pytest.raises(ActsimInputError, match=r"^order_reference\[0\]: 0 where birefringence"):
        polar_params(n_cell=2, n_beam=1, birefringence=0.1, order_reference=0.0)
    with pytest.raises(ActsimInputError, match=r"^director_tilt: shape"):
        polar_params(n_cell=2, n_beam=1, director_tilt=[0.0, 0.1, 0.2])
    with pytest.raises(ActsimInputError, match=r"^ratio_b\[0\]: nan is not finite"):
        polar_params(n_cell=1, n_beam=1, ratio_b=float("nan"))
    with pytest.raises(ActsimInputError, match=r"^beam: 2 is outside"):
        transmitted_polarisation(**{**_twisted(4, u=1.0), "beam": 2})
