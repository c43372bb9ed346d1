"""Large strain: neo-Hookean and Gent layers, the plane-section section law, two networks at large stretch,
and the small-strain warning. Each check names its source."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

import actsim
from actsim.material import STRAIN_PLANE, STRAIN_UNIAXIAL, hyperelastic_stress
from actsim.mechanics import HOLD_BEND, HOLD_FREE, HOLD_STRETCH, section_solve_hyper
from actsim.scenario import parse_scenario

MU = 1.0e6  # Pa


def _section(n, h, law, *, jm=0.0, eigenstretch=1.0):
    """A homogeneous hyperelastic section of n cells over thickness h: its arrays for section_solve_hyper."""
    z = np.linspace(0.0, h, n + 1)
    c = 3.0 * MU if law == STRAIN_UNIAXIAL else 4.0 * MU  # small-strain section modulus 3 mu (beam), 4 mu (plate)
    E = np.full(n, c)
    hs = np.zeros((4, n))
    hs[0], hs[1] = c, np.asarray(eigenstretch) - 1.0  # C_p, eigenstrain
    return z, E, E * (np.asarray(eigenstretch) - 1.0), np.full(n, law), np.full(n, jm), hs


def test_neo_hookean_uniaxial_treloar():
    # Treloar, The Physics of Rubber Elasticity, 3rd ed., 1975, ch. 5 (eq. 5.8 in the nominal form):
    # simple extension of an incompressible neo-Hookean solid, nominal stress f = G (l - l^-2) per undeformed
    # area, hence Cauchy (true) stress t = f l = G (l^2 - 1/l). hyperelastic_stress returns the Cauchy stress.
    for lam in (0.6, 1.0, 1.5, 2.0, 3.0):
        assert hyperelastic_stress(stretch=lam, shear_modulus=MU) == pytest.approx(MU * (lam**2 - 1 / lam), rel=1e-14)
    # pure shear (plane strain, width held): t = G (l^2 - l^-2) (Treloar 1975, ch. 5, pure shear)
    assert hyperelastic_stress(stretch=2.0, shear_modulus=MU, section="plate") == pytest.approx(MU * (4 - 0.25))
    # the section solve held at a stretch carries the nominal force h G (l - l^-2) per unit width
    h = 1e-4
    for lam in (0.7, 1.3, 2.0):
        z, E, Ee, law, jm, hs = _section(8, h, STRAIN_UNIAXIAL)
        e0, kappa, N, M = section_solve_hyper(z, E, Ee, law, jm, hs, HOLD_STRETCH, lam - 1.0, 0.0, 0.0)
        assert N == pytest.approx(h * MU * (lam - lam**-2), rel=1e-12)
        assert M == pytest.approx(N * h / 2, rel=1e-12)
    # an eigenstretch is multiplicative: a free homogeneous layer takes it up exactly, stress-free (lambda = lambda_s)
    z, E, Ee, law, jm, hs = _section(8, h, STRAIN_UNIAXIAL, eigenstretch=0.8)
    e0, kappa, N, M = section_solve_hyper(z, E, Ee, law, jm, hs, HOLD_FREE, 0.0, -0.2, 0.0)
    assert e0 == pytest.approx(-0.2, abs=1e-13) and abs(kappa) < 1e-9


def _rivlin_moment(alpha, H, mu):
    """Pure bending of an incompressible neo-Hookean block, plane strain (R. S. Rivlin, Proc. R. Soc. A 195
    (1949) 463, and Ogden, Non-linear Elastic Deformations, 1984, sec. 5.2.3): the fibre at radius r has the
    stretch l = alpha r (alpha: bend angle per undeformed length), incompressibility gives l_b^2 - l_a^2 =
    2 alpha H, free faces give l_a l_b = 1, sigma_rr = (mu/2)(l^2 - l_a^2 + l^-2 - l_a^-2), and the moment (the
    net force vanishes) is M = -int r sigma_rr dr = -(1/alpha^2) int_{l_a}^{l_b} l sigma_rr dl per unit width."""
    lb = math.sqrt(alpha * H + math.sqrt((alpha * H) ** 2 + 1.0))  # l_b^2 - l_b^-2 = 2 alpha H
    la = 1.0 / lb
    srr = lambda l: 0.5 * mu * (l * l - la * la + 1 / (l * l) - 1 / (la * la))  # noqa: E731
    return -quad(lambda l: l * srr(l), la, lb, epsabs=0, epsrel=1e-13)[0] / alpha**2, la, lb


def test_pure_bending_against_rivlin():
    # Rivlin 1949 (exact, plane strain) against the plane-section law (lambda linear in the undeformed height,
    # Reissner 1972) of a homogeneous neo-Hookean layer held at a bend. Rivlin's stretch squared is linear in the
    # undeformed height, ours the stretch itself: the two agree to second order in alpha H, and the outer and inner
    # stretches agree to O((alpha H)^3); the moment differs by about (alpha H)^2 / 4 relative (measured below).
    H = 1e-3
    for aH, tol in ((0.05, 1e-3), (0.2, 1.2e-2), (0.5, 7.5e-2)):
        alpha = aH / H
        m_exact, la, lb = _rivlin_moment(alpha, H, MU)
        z, E, Ee, law, jm, hs = _section(400, H, STRAIN_PLANE)
        e0, kappa, N, M = section_solve_hyper(z, E, Ee, law, jm, hs, HOLD_BEND, alpha, 0.0, 0.0)
        assert abs(N) < 1e-9 * MU * H
        # our kappa > 0 shortens the top fibres: the bottom face is Rivlin's outer (stretched) face
        stretch_bottom, stretch_top = 1 + e0, 1 + e0 - kappa * H
        rel = abs(-M - m_exact) / m_exact
        print(f"alpha H = {aH}: moment {-M:.6g} vs Rivlin {m_exact:.6g} N (rel {rel:.2e}); outer stretch "
              f"{stretch_bottom:.5f} vs {lb:.5f}, inner {stretch_top:.5f} vs {la:.5f}")
        assert rel < tol
        assert stretch_bottom == pytest.approx(lb, rel=tol) and stretch_top == pytest.approx(la, rel=tol)
        # small curvature: the linear plate moment (4 mu) H^3 / 12 alpha (Timoshenko and Woinowsky-Krieger 1959, ch. 1)
    m_lin = 4 * MU * H**3 / 12 * (0.01 / H)
    assert _rivlin_moment(0.01 / H, H, MU)[0] == pytest.approx(m_lin, rel=1e-4)


def test_gent_limits():
    # Gent, Rubber Chem. Technol. 69 (1996) 59: W = -(mu J_m / 2) ln(1 - (I1 - 3)/J_m); t = mu J_m/(J_m - I1 + 3)
    # (l^2 - 1/l) in simple extension. J_m -> infinity gives back the neo-Hookean law.
    lam = np.array([0.7, 1.5, 2.5])
    nh = hyperelastic_stress(stretch=lam, shear_modulus=MU)
    g = hyperelastic_stress(stretch=lam, shear_modulus=MU, extensibility=1e7)
    assert np.allclose(g, nh, rtol=1e-6)
    # stiffening: at I1 - 3 = 0.9 J_m the stress is 10 x the neo-Hookean one, and infinite at the limit
    jm = 30.0
    lam_lim = brentq(lambda l: l * l + 2 / l - 3 - jm, 1.0, 10.0)
    lam9 = brentq(lambda l: l * l + 2 / l - 3 - 0.9 * jm, 1.0, 10.0)
    assert hyperelastic_stress(stretch=lam9, shear_modulus=MU, extensibility=jm) == pytest.approx(
        10 * MU * (lam9**2 - 1 / lam9), rel=1e-12)
    assert hyperelastic_stress(stretch=lam_lim * 1.001, shear_modulus=MU, extensibility=jm) == math.inf
    # the section held at lam9 carries the nominal force h mu g (l - l^-2) with g = 10
    h = 1e-4
    z, E, Ee, law, jm_a, hs = _section(4, h, STRAIN_UNIAXIAL, jm=jm)
    N = section_solve_hyper(z, E, Ee, law, jm_a, hs, HOLD_STRETCH, lam9 - 1.0, 0.0, 0.0)[2]
    assert N == pytest.approx(h * 10 * MU * (lam9 - lam9**-2), rel=1e-12)


BILAYER = """
title = "bilayer"
[strip]
free_length = "10 mm"
width = "2 mm"
[materials.act]
modulus = "3 MPa"
{law}
chromophore_concentration = "20 mol/m^3"
reactant_absorptivity = "10 m^2/mol"
forward_quantum_yield = 0.3
photo_strain = {strain}
[materials.back]
modulus = "3 MPa"
{law}
[[layers]]
material = "back"
thickness = "40 um"
cells = 8
[[layers]]
material = "act"
thickness = "40 um"
cells = 8
[[sources]]
name = "uv"
wavelength = "365 nm"
irradiance = "2000 mW/cm^2"
[[protocol]]
duration = "10 s"
light = ["uv"]
[[protocol]]
duration = "5 s"
hold = "bend"
curvature = "{bend} 1/m"
[[protocol]]
duration = "5 s"
hold = "stretch"
strain = "1e-11"
[time]
output_interval = "2.5 s"
step = "0.05 s"
{report}
"""


def _run(law="", strain=-0.02, report="", bend=20.0):
    return actsim.simulate(parse_scenario(BILAYER.format(law=law, strain=strain, report=report, bend=bend)))


def test_small_strain_limit_reproduces_linear():
    # a hyperelastic layer of shear modulus mu = E/3 at a tiny eigenstrain is the linear layer of modulus E (its
    # tangent at zero strain; Treloar 1975, ch. 4): free, bend and stretch steps agree to 1e-9 relative (the bend
    # held small too: a held curvature kappa shifts the hyperelastic axial strain by O((kappa h)^2)).
    lin = _run(strain=-1e-9, bend=1e-5)
    hyp = _run(law='strain_law = "neo-hookean"', strain=-1e-9, bend=1e-5)
    for name in ("curvature", "axial_strain", "free_curvature", "holding_force", "holding_moment"):
        a, b = lin[name].values, hyp[name].values
        assert np.max(np.abs(a - b)) <= 1e-9 * np.max(np.abs(a)), name
    assert np.max(np.abs(lin.stress.values - hyp.stress.values)) <= 1e-9 * np.max(np.abs(lin.stress.values))
    assert np.max(np.abs(lin.bending_stiffness.values - hyp.bending_stiffness.values)) <= 1e-9 * float(
        lin.bending_stiffness.max())


def test_large_photo_strain_bends_less_than_linear_and_warns():
    # 20 % contraction of the top half: the neo-Hookean strip bends less than the linear one (common practice,
    # no source: the contracting layer stiffens in compression less than the stretched backing) -- and the
    # linear run warns, naming the layer and the strain; the hyperelastic run does not.
    lin = _run(strain=-0.3)
    hyp = _run(law='strain_law = "neo-hookean"', strain=-0.3)
    assert "act" in lin.attrs["small_strain_warning"] and "%" in lin.attrs["small_strain_warning"]
    assert "small_strain_warning" not in hyp.attrs
    assert float(hyp.curvature[4]) != pytest.approx(float(lin.curvature[4]), rel=1e-3)
    # below the limit no warning; a raised limit silences it
    assert "small_strain_warning" not in _run(strain=-0.02).attrs
    assert "small_strain_warning" not in _run(strain=-0.3, report='[report]\nsmall_strain_limit = "50 %"').attrs


TWO_NETWORK = """
title = "two networks at large stretch"
[strip]
free_length = "10 mm"
width = "2 mm"
[materials.film]
modulus = "3 MPa"
network_modulus = "9 MPa"
{law}
chromophore_concentration = "1 mol/m^3"
reactant_absorptivity = "10 m^2/mol"
forward_quantum_yield = 1.0
[[layers]]
material = "film"
thickness = "10 um"
cells = 2
[[sources]]
name = "uv"
wavelength = "365 nm"
irradiance = "2000 mW/cm^2"
[[protocol]]
duration = "20 s"
hold = "stretch"
strain = "{pre} %"
light = ["uv"]
[[protocol]]
duration = "1 s"
hold = "release"
[time]
output_interval = "1 s"
step = "0.01 s"
"""


@pytest.mark.parametrize("pre", [100, 50])
def test_two_networks_at_large_stretch(pre):
    # Two-network fixity (Long et al., J. Mech. Phys. Solids 57 (2009) 1103, linear; the neo-Hookean form here):
    # the primary network mu1 is stress-free at l = 1, the light-formed one mu2 (= 3 mu1 fully formed) at the
    # programming stretch l_m. On release (uniaxial, plane stress) the Cauchy stresses cancel:
    #     mu1 (l^2 - 1/l) + mu2 ((l/l_m)^2 - l_m/l) = 0  ->  l^3 = (mu1 + mu2 l_m) / (mu1 + mu2 / l_m^2)
    # (multiplying by l: the same root from the nominal stresses). With mu2 = 3 mu1, l_m = 2: l^3 = 7 / 1.75 = 4,
    # l = 1.5874; l_m = 1.5: l = 1.3305. The linear model gives l = 1 + 3/4 (l_m - 1): 1.75 and 1.375
    # (10.2 % and 3.3 % above). (The plane-strain form, mu (l^2 - l^-2), gives 1.651 at 100 %.)
    lm = 1 + pre / 100
    closed = ((1 + 3 * lm) / (1 + 3 / lm**2)) ** (1 / 3)
    if pre == 100:
        assert closed == pytest.approx(4 ** (1 / 3), rel=1e-15)
        assert round(closed, 3) == 1.587
    hyp = actsim.simulate(parse_scenario(TWO_NETWORK.format(law='strain_law = "neo-hookean"', pre=pre)))
    lin = actsim.simulate(parse_scenario(TWO_NETWORK.format(law="", pre=pre)))
    x_end = float(hyp.conversion[20].min())
    assert x_end > 1 - 1e-9
    l_hyp, l_lin = 1 + float(hyp.axial_strain[-1]), 1 + float(lin.axial_strain[-1])
    print(f"{pre} %: neo-Hookean {l_hyp:.5f} (closed form {closed:.5f}), linear {l_lin:.5f}, "
          f"{100 * (l_lin / l_hyp - 1):.2f} % off")
    assert l_hyp == pytest.approx(closed, rel=1e-6)
    assert l_lin == pytest.approx(1 + 0.75 * (lm - 1), rel=1e-6)


def test_tip_of_a_contracted_strip_is_the_arc_of_the_contracted_length():
    # the mid-plane is an arc of angle theta = kappa L and length L (1 + e_mid): x = L (1 + e) sin(theta)/theta,
    # y = L (1 + e) (1 - cos theta)/theta (circular arc; Timoshenko and Gere 1961)
    from pathlib import Path

    import actsim

    sc = actsim.load_scenario(Path(__file__).resolve().parents[1] / "scenarios" / "elastomer_contraction.toml")
    s = actsim.solve(sc)
    L = sc.strip.free_length
    th = s.bend_angle
    i = int(np.argmax(np.abs(th)))
    length = L * (1 + s.axial_strain[i])
    assert s.axial_strain[i] < -0.1  # the demo contracts by about 20 %
    assert s.tip_position_x[i] == pytest.approx(length * np.sin(th[i]) / th[i], rel=1e-12)
    assert s.tip_deflection[i] == pytest.approx(length * (1 - np.cos(th[i])) / th[i], rel=1e-12)


def test_paths_without_large_strain_refuse_it():
    from pathlib import Path

    import actsim
    from actsim.errors import ActsimInputError
    from actsim.study.sweep import sweep

    sc = actsim.load_scenario(Path(__file__).resolve().parents[1] / "scenarios" / "elastomer_contraction.toml")
    with pytest.raises(ActsimInputError, match=r"^engine: the reference engine has no large-strain layers"):
        actsim.solve(sc, engine="reference")
    with pytest.raises(ActsimInputError, match=r"strain_law: a sweep's metrics .* are small-strain"):
        sweep(sc, {"strip.free_length": "10 mm,20 mm"}, progress=False)
