"""Liquid-crystal layers end to end: scenario -> kernel -> results, against results from outside the project.

The stage functions have their own tests (test_order.py, test_polarised.py, test_laminate.py); here a whole run
is checked: the isotropic limit against the same stack without the order model, the order strain of a
uniformly heated film against Timoshenko's bimetal with the Maier–Saupe order solved independently, the
dichroic photoselection of the first conversion against the closed-form absorption factor, and the twist of a
uniformly heated twisted-nematic film against the hand integral.
"""

from __future__ import annotations

import math
import textwrap

import numpy as np
import pytest
from scipy import integrate, optimize

import actsim
from actsim.errors import ActsimInputError
from actsim.scenario import parse_scenario


def maier_saupe_order_independent(t):
    """Q at reduced temperature t = T / T_NI from the Maier–Saupe self-consistency, solved with quad and brentq.

    Maier and Saupe, Z. Naturforsch. 14a (1959) 882: Q = <P2> in the field exp(m Q P2(u)), m = U/(kT), and
    k T_NI / U = 0.22019 (de Gennes and Prost, The Physics of Liquid Crystals, 2nd ed., 1993, sec. 2.3; from memory);
    the stable root below T_NI is the largest one.
    """
    m = 1.0 / (0.2201936 * t)

    def mean_p2(q):
        w = lambda u: math.exp(m * q * 0.5 * (3 * u * u - 1))  # noqa: E731
        num = integrate.quad(lambda u: 0.5 * (3 * u * u - 1) * w(u), 0, 1, epsabs=1e-14, epsrel=1e-13)[0]
        return num / integrate.quad(w, 0, 1, epsabs=1e-14, epsrel=1e-13)[0]

    return optimize.brentq(lambda q: mean_p2(q) - q, 0.3, 0.999999, xtol=1e-14)


def timoshenko_curvature(*, mismatch, e1, e2, h1, h2):
    """Timoshenko's bimetal curvature (J. Opt. Soc. Am. 11 (1925) 233), layer 1 below layer 2, mismatch e_1 - e_2.

    Positive when the upper layer shortens against the lower one (it bends toward +z, our sign).
    """
    m, n = h1 / h2, e1 / e2
    return 6 * mismatch * (1 + m) ** 2 / ((h1 + h2) * (3 * (1 + m) ** 2 + (1 + m * n) * (m ** 2 + 1 / (m * n))))


HEATED = """
title = "uniformly warm film"
[strip]
free_length = "5 mm"
width = "{width}"
[heat]
ambient_temperature = "{ambient}"
reference_temperature = "20 degC"
[materials.backing]
modulus = "3 GPa"
poisson_ratio = 0.4
[materials.lcn]
modulus = "1.5 GPa"
poisson_ratio = 0.4
[materials.lcn.liquid_crystal]
network = "glassy"
clearing_temperature = "95 degC"
preparation_temperature = "20 degC"
strain_per_order = 0.05
{layers}
[[protocol]]
duration = "1 s"
[time]
output_interval = "1 s"
step = "0.5 s"
"""


def heated(layers, *, ambient="60 degC", width="1 mm"):
    return parse_scenario(textwrap.dedent(HEATED.format(layers=layers, ambient=ambient, width=width)))


def test_uniform_heating_of_a_planar_film_bends_as_timoshenko_with_maier_saupe_order():
    # A planar glassy film along the strip on a passive backing, both at a uniform 60 degC (no light): the film's
    # strain along the director is c (Q(333 K) - Q(293 K)) with Q from the Maier–Saupe self-consistency (solved
    # here with quad and brentq, not with actsim's table), across it -c/2 of that; the bend is Timoshenko's
    # bimetal (J. Opt. Soc. Am. 11 (1925) 233). With one Poisson ratio the plate's curvature across the strip is
    # the same bimetal with the strain across (Jones, Mechanics of Composite Materials, 1999, ch. 4).
    layers = """
    [[layers]]
    material = "backing"
    thickness = "25 um"
    cells = 10
    [[layers]]
    material = "lcn"
    thickness = "15 um"
    cells = 30
    director = { kind = "planar", angle = "0 deg" }
    """
    ds = actsim.simulate(heated(layers))
    t_ni = 368.15
    dq = maier_saupe_order_independent(333.15 / t_ni) - maier_saupe_order_independent(293.15 / t_ni)
    e_par, e_perp = 0.05 * dq, -0.025 * dq
    kx = timoshenko_curvature(mismatch=0.0 - e_par, e1=3e9, e2=1.5e9, h1=25e-6, h2=15e-6)
    ky = timoshenko_curvature(mismatch=0.0 - e_perp, e1=3e9, e2=1.5e9, h1=25e-6, h2=15e-6)
    assert dq < -0.01  # the film lost order: its top contracts along the strip
    assert float(ds.curvature[-1]) == pytest.approx(kx, rel=2e-6)  # the table's interpolation error, 2e-7 in Q
    assert float(ds.plate_curvature_x[-1]) == pytest.approx(kx, rel=2e-6)
    assert float(ds.plate_curvature_y[-1]) == pytest.approx(ky, rel=2e-6)
    assert abs(float(ds.twist_rate[-1])) < 1e-9 * abs(kx)
    q_film = ds.order_parameter.values[-1, 10:]
    assert np.allclose(q_film, maier_saupe_order_independent(333.15 / t_ni), rtol=1e-6)
    assert np.all(ds.order_parameter.values[-1, :10] == 0.0)


def test_uniform_heating_of_a_twisted_film_twists_as_the_hand_integral():
    # Twisted nematic, in-plane director from -45 deg to +45 deg through one homogeneous layer, uniform order
    # change: shear eigenstrain g*(z) = (e_par - e_perp) sin 2phi(z) = -(e_par - e_perp) cos(pi z / h), so
    # d2w/dxdy = -(6/h^3) int g* (z - h/2) dz = -12 (e_par - e_perp) / (pi^2 h) (hand integral), and no bend.
    layers = """
    [[layers]]
    material = "lcn"
    thickness = "20 um"
    cells = 200
    director = { kind = "twisted", angle = "-45 deg", angle_top = "45 deg" }
    """
    ds = actsim.simulate(heated(layers))
    t_ni = 368.15
    dq = maier_saupe_order_independent(333.15 / t_ni) - maier_saupe_order_independent(293.15 / t_ni)
    delta = 0.05 * dq * 1.5  # e_par - e_perp with e_perp = -e_par / 2
    expected = -12 * delta / (math.pi ** 2 * 20e-6)
    assert float(ds.twist_rate[-1]) == pytest.approx(expected, rel=2e-5)  # 200 cells: O(dz^2) ~ 2e-5
    assert abs(float(ds.plate_curvature_x[-1])) < 1e-3 * abs(expected)
    assert abs(float(ds.curvature[-1])) < 1e-3 * abs(expected)


def test_the_width_decides_between_helicoid_and_spiral_ribbon():
    # Sawa et al., PNAS 108 (2011) 6364: narrow twisted-nematic ribbons form helicoids, wide ones spiral
    # ribbons (helical, developable). Same film, 0.05 mm and 5 mm wide.
    layers = """
    [[layers]]
    material = "lcn"
    thickness = "20 um"
    cells = 40
    director = { kind = "twisted", angle = "-45 deg", angle_top = "45 deg" }
    """
    narrow = actsim.simulate(heated(layers, width="0.05 mm"))
    wide = actsim.simulate(heated(layers, width="5 mm"))
    assert str(narrow.ribbon_shape.values[-1]) == "helicoid"
    assert float(narrow.ribbon_helix_radius[-1]) < 1e-6 * float(narrow.ribbon_helix_pitch[-1])
    assert str(wide.ribbon_shape.values[-1]) == "spiral ribbon"
    assert float(wide.ribbon_helix_radius[-1]) > 0.1 * float(wide.ribbon_helix_pitch[-1])


DICHROIC = """
title = "thin dichroic film"
[strip]
free_length = "5 mm"
width = "1 mm"
[optics]
front_reflection = false
[materials.lcn]
modulus = "1.5 GPa"
chromophore_concentration = "0.01 mol/L"
reactant_absorptivity = "1 L/(mol*cm)"
forward_quantum_yield = 0.2
[materials.lcn.liquid_crystal]
clearing_temperature = "95 degC"
preparation_temperature = "20 degC"
strain_per_order = 0.0
[[layers]]
material = "lcn"
thickness = "2 um"
cells = 4
director = {{ kind = "planar", angle = "{director}" }}
[[sources]]
name = "lamp"
kind = "line"
wavelength = "365 nm"
irradiance = "10 mW/cm^2"
polarisation = "{polarisation}"
[[protocol]]
duration = "1 s"
light = {{ lamp = "10 mW/cm^2" }}
[time]
output_interval = "1 s"
tolerance = 1e-9
"""


def first_rate(polarisation, director="0 deg"):
    ds = actsim.simulate(parse_scenario(textwrap.dedent(DICHROIC.format(polarisation=polarisation, director=director))))
    return -np.log1p(-ds.conversion.values[-1]).mean()


def test_photoselection_follows_the_dichroic_absorption_factor():
    # An optically thin planar film (decadic absorbance 2e-6), one-way reaction: -ln(1 - x) = k t with k proportional to
    # the absorption factor g = (1 - S) + 3 S cos^2 b for a transition moment along the long axis (r = 0), S the
    # trans isomers' order = Q_ref. Along / across the director g is 1 + 2S and 1 - S: the dichroic ratio
    # (A_par - A_perp)/(A_par + 2 A_perp) = S (Michl and Thulstrup, Spectroscopy with Polarized Light, VCH 1986,
    # from memory); unpolarised light at normal incidence sees 1 + S/2; at 60 deg the cos^2 law.
    s = maier_saupe_order_independent(293.15 / 368.15)
    along, across, unpol, at60 = (first_rate(p) for p in ("0 deg", "90 deg", "unpolarised", "60 deg"))
    assert along / across == pytest.approx((1 + 2 * s) / (1 - s), rel=1e-4)
    assert (along - across) / (along + 2 * across) == pytest.approx(s, rel=1e-4)
    assert unpol / across == pytest.approx((1 + s / 2) / (1 - s), rel=1e-4)
    assert at60 / across == pytest.approx((1 - s + 3 * s * 0.25) / (1 - s), rel=1e-4)
    # the film turned in its plane: only the angle between polarisation and director counts
    assert first_rate("75 deg", director="45 deg") == pytest.approx(first_rate("30 deg"), rel=1e-9)


PLANAR = open(__file__.replace("tests/test_liquid_crystal.py", "scenarios/lc_planar_polarisation.toml")).read()


def test_isotropic_limit_reproduces_the_stack_without_order():
    # The check: with the order fixed in the mechanics (no strain per order) and isotropic absorption
    # (the species follow no order, no birefringence) the liquid-crystal run equals the same stack without the
    # order model to 1e-9, through the dichroic light pass and both polarisations.
    lc = PLANAR.replace("strain_per_order = 0.02", "strain_per_order = 0.0\nstrain_across_per_order = 0.0\n"
                        "reactant_order = 0.0").replace("birefringence = 0.15", "birefringence = 0.0")
    start = PLANAR.index("[materials.planar_network.liquid_crystal]")
    plain = PLANAR[:start] + PLANAR[PLANAR.index("[[layers]]", start):]
    plain = plain.replace('director = { kind = "planar", angle = "0 deg" }\n', "")
    a = actsim.simulate(parse_scenario(lc))
    b = actsim.simulate(parse_scenario(plain))
    assert "order_parameter" in a and "order_parameter" not in b
    for name in ("conversion", "curvature", "bend_angle", "irradiance", "absorbed_power", "photon_flux_transmitted"):
        np.testing.assert_allclose(a[name].values, b[name].values, rtol=1e-9, atol=1e-9 * float(abs(b[name]).max()))


def test_polarisation_along_the_director_bends_a_planar_film_more():
    # Dichroism (Yu, Nakano and Ikeda, Nature 425 (2003) 145): light polarised along the director is absorbed
    # nearer the lit face, so the same dose bends the planar film more than light polarised across it.
    ds = actsim.simulate(parse_scenario(PLANAR))
    step = ds.protocol_step.values
    along = float(ds.bend_angle.values[step == 0].max())
    across = float(ds.bend_angle.values[step == 2].max())
    assert along > 1.2 * across > 0


@pytest.mark.parametrize("edit, field", [
    ('network = "glassy"', "materials.lcn.liquid_crystal.strain_per_order"),
    ('preparation_temperature = "20 degC"\n', "materials.lcn.liquid_crystal.preparation_temperature"),
])
def test_bad_liquid_crystal_input_is_one_line(edit, field):
    text = textwrap.dedent(HEATED.format(layers='[[layers]]\nmaterial = "lcn"\nthickness = "10 um"', ambient="20 degC",
                                         width="1 mm"))
    if "network" in edit:
        text = text.replace("strain_per_order = 0.05\n", "")
    else:
        text = text.replace(edit, 'preparation_temperature = "100 degC"\n')
    with pytest.raises(ActsimInputError) as err:
        parse_scenario(text)
    assert str(err.value).startswith(field) and "\n" not in str(err.value)


def test_refused_combinations_name_the_field():
    base = textwrap.dedent(HEATED.format(layers='[[layers]]\nmaterial = "backing"\nthickness = "10 um"\n'
                                         'director = "planar"', ambient="20 degC", width="1 mm"))
    with pytest.raises(ActsimInputError, match=r"^layers\[0\]\.director: given but"):
        parse_scenario(base)
    text = textwrap.dedent(HEATED.format(layers='[[layers]]\nmaterial = "lcn"\nthickness = "10 um"', ambient="20 degC",
                                         width="1 mm")).replace('poisson_ratio = 0.4\n[materials.lcn.liquid',
                                                                'poisson_ratio = 0.4\nstrain_law = "gent"\n'
                                                                'extensibility = 50\n[materials.lcn.liquid')
    with pytest.raises(ActsimInputError, match=r"^materials\.lcn\.liquid_crystal: a 'gent' layer"):
        parse_scenario(text)
    ok = textwrap.dedent(HEATED.format(layers='[[layers]]\nmaterial = "lcn"\nthickness = "10 um"', ambient="20 degC",
                                       width="1 mm"))
    with pytest.raises(ActsimInputError, match="^engine: the reference engine has no liquid-crystal layers"):
        actsim.solve(parse_scenario(ok), engine="reference")


def test_wide_strip_takes_the_order_strain_in_plane_strain():
    # Plane strain across the width (section = "plate"): eps_yy = 0, so sigma_xx = E/(1 - nu^2) (eps_xx - e_xx -
    # nu e_yy) (Timoshenko and Woinowsky-Krieger, Theory of Plates and Shells, 1959, sec. 14): with one Poisson
    # ratio the bend is Timoshenko's bimetal with the mismatch e_par + nu e_perp.
    layers = """
    [[layers]]
    material = "backing"
    thickness = "25 um"
    cells = 10
    [[layers]]
    material = "lcn"
    thickness = "15 um"
    cells = 30
    """
    text = textwrap.dedent(HEATED.format(layers=layers, ambient="60 degC", width="1 mm"))
    ds = actsim.simulate(parse_scenario(text.replace('width = "1 mm"', 'width = "1 mm"\nsection = "plate"')))
    t_ni = 368.15
    dq = maier_saupe_order_independent(333.15 / t_ni) - maier_saupe_order_independent(293.15 / t_ni)
    kx = timoshenko_curvature(mismatch=-(0.05 * dq + 0.4 * (-0.025 * dq)), e1=3e9, e2=1.5e9, h1=25e-6, h2=15e-6)
    assert float(ds.curvature[-1]) == pytest.approx(kx, rel=2e-6)


def test_planar_films_bend_toward_the_light_and_homeotropic_films_away():
    # Kondo, Yu and Ikeda, Angew. Chem. Int. Ed. 45 (2006) 1378: a planar film contracts along its director on the
    # lit face and bends toward the light; a homeotropic one expands in the plane there and bends away.
    text = open(__file__.replace("tests/test_liquid_crystal.py", "scenarios/lc_splay_curl.toml")).read()
    splay = 'director = { kind = "splay", angle = "0 deg", tilt_bottom = "90 deg", tilt_top = "0 deg" }'
    planar = actsim.simulate(parse_scenario(text.replace(splay, 'director = "planar"')))
    homeotropic = actsim.simulate(parse_scenario(text.replace(splay, 'director = "homeotropic"')))
    assert float(planar.bend_angle.max()) > 0.1 and float(planar.bend_angle.min()) >= 0.0
    assert float(homeotropic.bend_angle.min()) < -0.01 and float(homeotropic.bend_angle.max()) <= 0.0


POLY = """
title = "polydomain film"
[strip]
free_length = "5 mm"
width = "1 mm"
[optics]
front_reflection = false
[materials.backing]
modulus = "3 GPa"
poisson_ratio = 0.4
[materials.lcn]
modulus = "1.5 GPa"
poisson_ratio = 0.4
chromophore_concentration = "0.01 mol/L"
reactant_absorptivity = "1 L/(mol*cm)"
forward_quantum_yield = 0.2
[materials.lcn.liquid_crystal]
clearing_temperature = "95 degC"
clearing_shift = "60 K"
preparation_temperature = "20 degC"
strain_per_order = 0.05
[[layers]]
material = "backing"
thickness = "200 um"
cells = 4
[[layers]]
material = "lcn"
thickness = "1.2 um"
cells = 12
director = {{ kind = "polydomain", families = 6 }}
[[sources]]
name = "lamp"
kind = "line"
wavelength = "365 nm"
irradiance = "10 mW/cm^2"
polarisation = "{polarisation}"
[[protocol]]
duration = "1 s"
light = {{ lamp = "10 mW/cm^2" }}
[time]
output_interval = "1 s"
tolerance = 1e-9
"""


def test_a_polydomain_film_bends_along_the_polarisation():
    # Yu, Nakano and Ikeda, Nature 425 (2003) 145: a polydomain film bends along the light's polarisation, and
    # turning the polarisation by 90 deg turns the bend. Photoselection in an optically thin film at small
    # conversion: the order of the domains at angle phi to the polarisation falls in proportion to their absorption
    # factor g(phi) = (1 - S) + 3 S cos^2 phi, so the film's mean strains are (closed-form averages over phi)
    #   <e_xx> ~ c_perp <g> + (c_par - c_perp) <g cos^2>,  <e_yy> ~ c_perp <g> + (c_par - c_perp) <g sin^2>
    # with <g> = 1 - S + 3S/2, <g cos^2> = (1 - S)/2 + 9S/8, <g sin^2> = (1 - S)/2 + 3S/8. On a thick backing the
    # curvatures follow the film's mean strains (Stoney's limit), so kappa_x / kappa_y = <e_xx> / <e_yy>.
    s = maier_saupe_order_independent(293.15 / 368.15)
    g, gc, gs = 1 - s + 1.5 * s, 0.5 * (1 - s) + 9 * s / 8, 0.5 * (1 - s) + 3 * s / 8
    ratio = (-0.5 * g + 1.5 * gc) / (-0.5 * g + 1.5 * gs)
    along = actsim.simulate(parse_scenario(textwrap.dedent(POLY.format(polarisation="0 deg"))))
    across = actsim.simulate(parse_scenario(textwrap.dedent(POLY.format(polarisation="90 deg"))))
    unpol = actsim.simulate(parse_scenario(textwrap.dedent(POLY.format(polarisation="unpolarised"))))
    kx, ky = float(along.plate_curvature_x[-1]), float(along.plate_curvature_y[-1])
    assert kx / ky == pytest.approx(ratio, rel=0.02)  # the domains sit at different depths of the 1.2 um film
    assert kx > 0 and abs(ky) < 0.5 * kx  # it bends along the polarisation, toward the light
    # turned by 90 deg: the bend turns with it (to the stacking order of the domain families)
    assert float(across.plate_curvature_y[-1]) == pytest.approx(kx, rel=0.02)
    assert float(across.plate_curvature_x[-1]) == pytest.approx(ky, rel=0.05)
    # unpolarised: no direction in the plane
    assert float(unpol.plate_curvature_x[-1]) == pytest.approx(float(unpol.plate_curvature_y[-1]), rel=0.02)
