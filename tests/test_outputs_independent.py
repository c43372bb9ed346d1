"""The Dataset variables assembled after the time loop, each against a hand calculation or a closed form.

The fast and the readable paths share the post-processing (mechanics at the output times, face temperatures,
holding resultants, tip position ...), so comparing the two paths cannot catch a bug there. These tests go
through the public API only (a scenario in TOML -> ``actsim.simulate`` -> Dataset) and compare with results
computed here by hand from the scenario's inputs.

Sources cited beside each check:
- [Tim] S. Timoshenko, "Analysis of bi-metal thermostats", J. Opt. Soc. Am. 11 (1925) 233-255 (bimetal curvature).
- [GT] J. M. Gere and S. P. Timoshenko, Mechanics of Materials, 4th ed., PWS 1997: resultants of a composite
  section (parallel-axis theorem, ch. 6) and cantilever deflections (Appendix G).
- [Inc] F. P. Incropera, D. P. DeWitt, T. L. Bergman, A. S. Lavine, Fundamentals of Heat and Mass Transfer,
  6th ed., Wiley, 2007: plane wall with generation and convection at both faces (sec. 3.5; from memory).
- [CJ] H. S. Carslaw, J. C. Jaeger, Conduction of Heat in Solids, 2nd ed., Oxford University Press, 1959, ch. 1
  (steady linear flow with a distributed source).
All scenarios are invented test cases.
"""

from __future__ import annotations

import dataclasses
import math
import textwrap

import numpy as np
import pytest

import actsim
from actsim.scenario import parse_scenario

L_FREE = 10e-3  # free length [m]
WIDTH = 2e-3  # width [m]


# ------------------------------------------------------------------------------------------------
# scenarios
# ------------------------------------------------------------------------------------------------


def _stack_toml(*, layers, protocol, heat="", sources="", step="0.5 s", output="1 s"):
    """A stack of layers (bottom to top), each ``dict(name, thickness_um, cells, material_toml, x0)``."""
    mats = "".join(f"\n[materials.{la['name']}]\n{textwrap.dedent(la['material'])}\n" for la in layers)
    lays = "".join(
        f'\n[[layers]]\nname = "{la["name"]}"\nmaterial = "{la["name"]}"\nthickness = "{la["thickness_um"]} um"\n'
        f'cells = {la["cells"]}\ninitial_conversion = {la.get("x0", 0.0)}\n'
        for la in layers
    )
    return (
        f'title = "independent outputs"\n[strip]\nfree_length = "{L_FREE * 1e3} mm"\nwidth = "{WIDTH * 1e3} mm"\n'
        f"[optics]\nfront_reflection = false\nmax_cell_optical_depth = 20\n"
        f"{textwrap.dedent(heat)}\n{mats}{lays}\n{textwrap.dedent(sources)}\n{textwrap.dedent(protocol)}\n"
        f'[time]\noutput_interval = "{output}"\nstep = "{step}"\n'
    )


# Four holds, one second each; the output at the end of each step belongs to that step.
HOLDS_PROTOCOL = """
[[protocol]]
duration = "1 s"
hold = "free"
[[protocol]]
duration = "1 s"
hold = "stretch"
strain = 0.004
[[protocol]]
duration = "1 s"
hold = "bend"
curvature = "150 1/m"
[[protocol]]
duration = "1 s"
hold = "flat"
"""
STRETCH = 0.004
BEND = 150.0


def _at_step_ends(ds):
    """Indices of the outputs at the end of protocol steps 0..3 (t = 1, 2, 3, 4 s)."""
    return [int(np.argmin(np.abs(ds.time.values - t))) for t in (1.0, 2.0, 3.0, 4.0)]


# Cases: (layers as thickness [m], modulus [Pa], eigenstrain [1], bottom to top), and the scenario.
# "photo": a fully converted active film (initial_conversion = 1, no light, no back reaction), whose modulus is its
# product modulus and whose eigenstrain is its photo strain, on a passive substrate.
# "thermal": Timoshenko's bimetal, two passive layers with different expansion, the whole strip at the ambient
# 20 K above the reference temperature from t = 0 (no gradient, no transient): e* = alpha (T - T_ref).
# "single": one homogeneous fully converted layer.
ACTIVE = """
modulus = "1.4 GPa"
product_modulus = "0.9 GPa"
chromophore_concentration = "0.5 mol/L"
photo_strain = -0.012
reactant_absorptivity = "1.2e4 L/(mol*cm)"
forward_quantum_yield = 0.3
"""
CASES = {
    "photo": (
        [(50e-6, 3.0e9, 0.0), (20e-6, 0.9e9, -0.012)],
        lambda: _stack_toml(
            layers=[dict(name="sub", thickness_um=50, cells=10, material='modulus = "3 GPa"'),
                    dict(name="film", thickness_um=20, cells=8, material=ACTIVE, x0=1.0)],
            protocol=HOLDS_PROTOCOL),
    ),
    "thermal": (
        [(30e-6, 2.0e9, 2.0e-4 * 20.0), (45e-6, 5.0e9, 3.0e-5 * 20.0)],
        lambda: _stack_toml(
            layers=[dict(name="a", thickness_um=30, cells=7, material='modulus = "2 GPa"\nthermal_expansion = "2e-4 1/K"'),
                    dict(name="b", thickness_um=45, cells=9, material='modulus = "5 GPa"\nthermal_expansion = "3e-5 1/K"')],
            heat='[heat]\nambient_temperature = "40 degC"\nreference_temperature = "20 degC"\n',
            protocol=HOLDS_PROTOCOL),
    ),
    "single": (
        [(25e-6, 0.9e9, -0.012)],
        lambda: _stack_toml(layers=[dict(name="film", thickness_um=25, cells=12, material=ACTIVE, x0=1.0)],
                            protocol=HOLDS_PROTOCOL),
    ),
}


# ------------------------------------------------------------------------------------------------
# hand calculations: each layer as a block with uniform modulus and eigenstrain
# ------------------------------------------------------------------------------------------------


def _layers(spec):
    t = np.array([s[0] for s in spec])
    E = np.array([s[1] for s in spec])
    es = np.array([s[2] for s in spec])
    top = np.cumsum(t)
    zbar = top - 0.5 * t  # centroid of each layer above the bottom face
    return t, E, es, zbar, float(top[-1])


def _resultants_about_mid(spec, *, e_mid, kappa):
    """N and M about the mid-thickness per unit width, layer by layer ([GT] ch. 6, parallel-axis theorem).

    Strain e(z) = e_mid - kappa (z - h/2) (beam sign of the project); in layer i the stress
    sigma = E_i (e(z) - e*_i) is linear in z, so its force acts through the layer's centroid:
        F_i = E_i t_i (e_mid - kappa (zbar_i - h/2) - e*_i)
        M_i = F_i (zbar_i - h/2) - E_i kappa t_i^3 / 12      (moment of sigma about z = h/2)
    """
    t, E, es, zbar, h = _layers(spec)
    d = zbar - 0.5 * h
    F = E * t * (e_mid - kappa * d - es)
    M = F * d - E * kappa * t**3 / 12
    return F.sum(), M.sum()


def _mid_strain_at_zero_force(spec, kappa):
    """e_mid with N = 0 at a given curvature: sum E_i t_i (e_mid - kappa d_i - e*_i) = 0."""
    t, E, es, zbar, h = _layers(spec)
    d = zbar - 0.5 * h
    return float(np.sum(E * t * (es + kappa * d)) / np.sum(E * t))


def _timoshenko_curvature(spec):
    """Curvature of a free bimetal strip, [Tim] eq. (4), layer 1 at the bottom, layer 2 on top.

    1/rho = 6 (e*_1 - e*_2) (1 + m)^2 / (h [3 (1 + m)^2 + (1 + m n)(m^2 + 1/(m n))]),  m = t1/t2, n = E1/E2.
    [Tim] writes it for the layer that expands more (here the one with the larger e*) on the convex side;
    with kappa > 0 bending toward +z this is the sign above (the top contracts more -> kappa > 0).
    One layer: no mismatch, kappa = 0.
    """
    t, E, es, _, h = _layers(spec)
    if t.size == 1:
        return 0.0
    m, n = t[0] / t[1], E[0] / E[1]
    return 6 * (es[0] - es[1]) * (1 + m) ** 2 / (h * (3 * (1 + m) ** 2 + (1 + m * n) * (m**2 + 1 / (m * n))))


def _bending_stiffness(spec):
    """EI per unit width about the neutral (modulus-weighted) axis: sum E_i (t_i^3/12 + t_i (zbar_i - z_n)^2) [GT]."""
    t, E, _, zbar, _ = _layers(spec)
    zn = np.sum(E * t * zbar) / np.sum(E * t)
    return float(np.sum(E * (t**3 / 12 + t * (zbar - zn) ** 2)))


@pytest.fixture(scope="module", params=sorted(CASES))
def case(request):
    spec, toml = CASES[request.param]
    ds = actsim.simulate(parse_scenario(toml()))
    return request.param, spec, ds


# ------------------------------------------------------------------------------------------------
# mechanics outputs
# ------------------------------------------------------------------------------------------------


def test_state_is_the_one_the_hand_calculation_assumes(case):
    # Not a check of the assembly, but of the premise of every check below: modulus and eigenstrain per layer.
    name, spec, ds = case
    t, E, es, _, _ = _layers(spec)
    layer = ds.layer.values
    names = list(dict.fromkeys(layer))
    for i, nm in enumerate(names):
        sel = layer == nm
        np.testing.assert_allclose(ds.modulus.values[:, sel], E[i], rtol=1e-12)
        # the heat steps leave round-off of ~1e-11 K in T (measured 2.4e-12 relative in alpha (T - T_ref))
        np.testing.assert_allclose(ds.eigenstrain.values[:, sel], es[i], rtol=1e-10, atol=1e-15)


def test_holding_force_and_moment_against_layer_resultants(case):
    name, spec, ds = case
    i_free, i_str, i_bend, i_flat = _at_step_ends(ds)
    t, E, es, _, h = _layers(spec)
    scale_n = WIDTH * float(np.sum(E * t)) * 0.01  # force of a 1 % strain, for the absolute tolerance of zeros
    scale_m = scale_n * h

    # free: no resultants
    assert abs(float(ds.holding_force[i_free])) < 1e-10 * scale_n
    assert abs(float(ds.holding_moment[i_free])) < 1e-10 * scale_m

    # stretch: e = STRETCH everywhere, kappa = 0; N != 0 and (for the stacks) off-centre, so b(M - N h/2)
    # and b(M + N h/2) differ by b N h
    n_h, m_h = _resultants_about_mid(spec, e_mid=STRETCH, kappa=0.0)
    assert abs(n_h) * h > 1e-3 * scale_m  # the case can tell M - N h/2 from M + N h/2
    assert float(ds.holding_force[i_str]) == pytest.approx(WIDTH * n_h, rel=1e-10)
    assert float(ds.holding_moment[i_str]) == pytest.approx(WIDTH * m_h, rel=1e-10, abs=1e-12 * scale_m)

    # bend: kappa = BEND, N = 0
    e_mid = _mid_strain_at_zero_force(spec, BEND)
    n_h, m_h = _resultants_about_mid(spec, e_mid=e_mid, kappa=BEND)
    assert abs(n_h) < 1e-12 * scale_n / WIDTH
    assert abs(float(ds.holding_force[i_bend])) < 1e-10 * scale_n
    assert float(ds.holding_moment[i_bend]) == pytest.approx(WIDTH * m_h, rel=1e-10)

    # flat: kappa = 0, N = 0
    e_mid = _mid_strain_at_zero_force(spec, 0.0)
    _, m_h = _resultants_about_mid(spec, e_mid=e_mid, kappa=0.0)
    assert abs(float(ds.holding_force[i_flat])) < 1e-10 * scale_n
    assert float(ds.holding_moment[i_flat]) == pytest.approx(WIDTH * m_h, rel=1e-10, abs=1e-12 * scale_m)
    if name != "single":
        # holding flat takes the blocked moment EI kappa_free ([Tim] curvature times [GT] stiffness)
        assert float(ds.holding_moment[i_flat]) == pytest.approx(
            WIDTH * _bending_stiffness(spec) * _timoshenko_curvature(spec), rel=1e-10)


def test_curvature_axial_strain_and_stress_per_hold(case):
    name, spec, ds = case
    i_free, i_str, i_bend, i_flat = _at_step_ends(ds)
    k_free = _timoshenko_curvature(spec)
    k_scale = 1.0  # 1/m: the curvatures here are 10-300 1/m
    expected_kappa = {i_free: k_free, i_str: 0.0, i_bend: BEND, i_flat: 0.0}
    expected_mid = {
        i_free: _mid_strain_at_zero_force(spec, k_free),
        i_str: STRETCH,
        i_bend: _mid_strain_at_zero_force(spec, BEND),
        i_flat: _mid_strain_at_zero_force(spec, 0.0),
    }
    t, E, es, zbar, h = _layers(spec)
    z = ds.z.values
    lay = np.searchsorted(np.cumsum(t), z)  # layer of each cell centre
    for i in (i_free, i_str, i_bend, i_flat):
        assert float(ds.curvature[i]) == pytest.approx(expected_kappa[i], rel=1e-10, abs=1e-10 * k_scale)
        assert float(ds.axial_strain[i]) == pytest.approx(expected_mid[i], rel=1e-10, abs=1e-14)
        # sigma = E (e_mid - kappa (z - h/2) - e*) at the cell centres
        sig = E[lay] * (expected_mid[i] - expected_kappa[i] * (z - 0.5 * h) - es[lay])
        np.testing.assert_allclose(ds.stress.values[i], sig, rtol=1e-9, atol=1e-9 * np.max(np.abs(E * 0.01)))
    # the free curvature is the state's, whatever the hold
    np.testing.assert_allclose(ds.free_curvature.values[1:], k_free, rtol=1e-10, atol=1e-10 * k_scale)


def test_tip_position_is_the_circular_arc(case):
    # A uniformly curved cantilever is a circular arc of radius 1/kappa: x = sin(kL)/k, y = (1 - cos(kL))/k
    # (geometry); bend angle kappa L. kL reaches 1.5 rad on the mandrel, far from the small-angle range.
    name, spec, ds = case
    i_free, i_str, i_bend, i_flat = _at_step_ends(ds)
    for i, k in ((i_free, _timoshenko_curvature(spec)), (i_bend, BEND), (i_str, 0.0)):
        kl = k * L_FREE
        x = L_FREE if k == 0 else math.sin(kl) / k
        y = 0.0 if k == 0 else (1 - math.cos(kl)) / k
        assert float(ds.bend_angle[i]) == pytest.approx(kl, rel=1e-10, abs=1e-14)
        assert float(ds.tip_position_x[i]) == pytest.approx(x, rel=1e-10)
        assert float(ds.tip_deflection[i]) == pytest.approx(y, rel=1e-10, abs=1e-14 * L_FREE)
    assert float(BEND * L_FREE) == pytest.approx(1.5)


def test_blocked_moment_and_force_against_timoshenko(case):
    # Blocked moment EI kappa_free; blocked tip force 3 EI kappa_free / (2 L), from kappa L^2 / 2 = F L^3 / (3 EI)
    # ([GT] Appendix G), with [Tim]'s curvature and the composite EI about the neutral axis ([GT] ch. 6).
    name, spec, ds = case
    ei = WIDTH * _bending_stiffness(spec)
    k = _timoshenko_curvature(spec)
    np.testing.assert_allclose(ds.bending_stiffness.values, ei, rtol=1e-10)
    if name == "single":
        assert np.all(np.abs(ds.blocked_moment.values) < 1e-12 * ei * 100)
        assert np.all(np.abs(ds.blocked_force.values) < 1e-12 * ei * 100 / L_FREE)
        return
    np.testing.assert_allclose(ds.blocked_moment.values, ei * k, rtol=1e-10)
    np.testing.assert_allclose(ds.blocked_force.values, 1.5 * ei * k / L_FREE, rtol=1e-10)


def test_timoshenko_formula_agrees_with_the_layer_resultants():
    # The two hand calculations above are independent routes; at the free curvature of [Tim] the layer resultants
    # must vanish (N = 0 and M = 0), which checks the test's own algebra.
    for name in ("photo", "thermal"):
        spec = CASES[name][0]
        k = _timoshenko_curvature(spec)
        n, m = _resultants_about_mid(spec, e_mid=_mid_strain_at_zero_force(spec, k), kappa=k)
        t, E, _, _, h = _layers(spec)
        assert abs(n) < 1e-12 * np.sum(E * t) * 0.01 and abs(m) < 1e-12 * np.sum(E * t) * 0.01 * h


def test_protocol_bookkeeping_and_dose():
    # optical dose = irradiance x time lit, by hand; the step index and hold name of each output time.
    toml = _stack_toml(
        layers=[dict(name="film", thickness_um=20, cells=10, material=ACTIVE)],
        sources='[[sources]]\nname = "lamp"\nwavelength = "365 nm"\nirradiance = "40 mW/cm^2"\n',
        protocol="""
        [[protocol]]
        duration = "2 s"
        light = { lamp = "40 mW/cm^2" }
        [[protocol]]
        duration = "1.5 s"
        hold = "flat"
        [[protocol]]
        duration = "1 s"
        light = { lamp = "10 mW/cm^2" }
        hold = "release"
        """,
        output="0.5 s", step="0.05 s")
    ds = actsim.simulate(parse_scenario(toml))
    t = ds.time.values
    np.testing.assert_allclose(t, np.arange(10) * 0.5, atol=1e-12)
    irr = np.where(t <= 2.0 + 1e-12, 400.0, np.where(t <= 3.5 + 1e-12, 0.0, 100.0))
    dose = 400.0 * np.minimum(t, 2.0) + 100.0 * np.clip(t - 3.5, 0, None)
    np.testing.assert_allclose(ds.incident_irradiance.values[1:], irr[1:], rtol=1e-14)
    np.testing.assert_allclose(ds.optical_dose.values, dose, rtol=1e-12, atol=1e-12)
    assert list(ds.protocol_step.values) == [0, 0, 0, 0, 0, 1, 1, 1, 2, 2]
    assert list(ds.hold.values) == ["free"] * 5 + ["flat"] * 3 + ["release"] * 2


# ------------------------------------------------------------------------------------------------
# face temperatures
# ------------------------------------------------------------------------------------------------

K_SLAB = 0.2  # W/(m K)
RHO, CP = 1200.0, 1500.0  # kg/m^3, J/(kg K)
H_B, H_T = 300.0, 60.0  # W/(m^2 K), different on the two faces (forced cooling below, still air above)
TA_B, TA_T = 288.15, 303.15  # K, different ambients below and above
P0 = 2000.0  # W/m^2 entering the top face (no reflection)


def _slab_exact(z, *, thickness, alpha):
    """Steady slab, light entering the top face and absorbed as q(z) = alpha P0 exp(-alpha (h - z)), Robin faces.

    -k T'' = q(z) on 0 < z < h; heat leaving through the bottom k T'(0) = h_b (T(0) - T_b); through the top
    -k T'(h) = h_t (T(h) - T_t) ([Inc] sec. 3.5, [CJ] ch. 1). Integrating twice,
        T(z) = -P0/(alpha k) exp(-alpha (h - z)) + C1 z + C2,   T'(z) = -(P0/k) exp(-alpha (h - z)) + C1,
    and with E0 = exp(-alpha h), r = P0/(alpha k) the face conditions read
        bottom:  k C1 - P0 E0 = h_b (C2 - r E0 - T_b)
        top:     P0 - k C1    = h_t (C1 h + C2 - r - T_t)
    i.e. [[k, -h_b], [-(k + h_t h), -h_t]] (C1, C2) = (P0 E0 - h_b r E0 - h_b T_b, -P0 - h_t r - h_t T_t).
    As alpha h -> 0 this tends to the uniform-generation wall of [Inc] sec. 3.5.
    """
    e0 = math.exp(-alpha * thickness)
    r = P0 / (alpha * K_SLAB)
    a = np.array([[K_SLAB, -H_B], [-(K_SLAB + H_T * thickness), -H_T]])
    b = np.array([P0 * e0 - H_B * r * e0 - H_B * TA_B, -P0 - H_T * r - H_T * TA_T])
    c1, c2 = np.linalg.solve(a, b)
    return -r * np.exp(-alpha * (thickness - z)) + c1 * z + c2


def _slab_run(*, thickness_um, cells, alpha):
    toml = _stack_toml(
        layers=[dict(name="slab", thickness_um=thickness_um, cells=cells,
                     material=f'modulus = "1 GPa"\nconductivity = "{K_SLAB} W/(m*K)"\ndensity = "{RHO} kg/m^3"\n'
                              f'specific_heat = "{CP} J/(kg*K)"\nbackground_absorption = "{alpha} 1/m"\n')],
        heat=f'[heat]\nambient_temperature = "{TA_T} K"\ntop_heat_transfer = "{H_T} W/(m^2*K)"\n'
             f'bottom_heat_transfer = "{H_B} W/(m^2*K)"\n',
        sources=f'[[sources]]\nname = "lamp"\nwavelength = "450 nm"\nirradiance = "{P0} W/m^2"\n',
        protocol='[[protocol]]\nduration = "120 s"\nlight = ["lamp"]\n',
        output="60 s", step="0.5 s")
    sc = parse_scenario(toml)
    # The scenario format gives both faces one ambient; a step may carry its own per face (public dataclass).
    step = dataclasses.replace(sc.protocol[0], ambient_bottom=TA_B, ambient_top=TA_T)
    return actsim.simulate(sc.replace(protocol=(step,)))


@pytest.mark.parametrize("alpha", [2.0e3, 2.0e4])  # alpha h = 0.2 (nearly uniform heating), 2 (skin heating)
def test_face_temperatures_against_steady_slab(alpha):
    thickness = 100e-6
    # slowest decay time about rho c h / (h_b + h_t) = 0.5 s and h^2/(pi^2 a) = 6 ms: 120 s is steady to round-off
    errs = []
    for cells in (20, 40):
        ds = _slab_run(thickness_um=100, cells=cells, alpha=alpha)
        exact_b = _slab_exact(0.0, thickness=thickness, alpha=alpha)
        exact_t = _slab_exact(thickness, thickness=thickness, alpha=alpha)
        sb, st = float(ds.surface_temperature_bottom[-1]), float(ds.surface_temperature_top[-1])
        # the light source is what the closed form assumes: all of P0 (1 - e^{-alpha h}) is absorbed
        assert float(ds.absorbed_power_total[-1]) == pytest.approx(P0 * -math.expm1(-alpha * thickness), rel=1e-12)
        # energy: at steady state each face loses h (T_s - T_amb), and the two add up to the absorbed power
        lost = H_B * (sb - TA_B) + H_T * (st - TA_T)
        assert lost == pytest.approx(P0 * -math.expm1(-alpha * thickness), rel=1e-9)
        errs.append(max(abs(sb - exact_b), abs(st - exact_t)))
        rise = max(exact_b - TA_B, exact_t - TA_T)
        print(f"alpha h = {alpha * thickness:g}, {cells} cells: face temperatures {sb:.6f}, {st:.6f} K; exact "
              f"{exact_b:.6f}, {exact_t:.6f} K; error {errs[-1]:.2e} K of a {rise:.3f} K rise")
        # Finite volumes with a half-cell face resistance miss q dz^2/(8k) per face cell (the curvature of the
        # profile in the half cell next to the face), at most alpha P0 dz^2/(8k) with the peak source at the top.
        # Measured at 20 / 40 cells: 6.1e-6 / 1.5e-6 K (alpha h = 0.2), 2.9e-4 / 7.3e-5 K (alpha h = 2), against
        # bounds of 6.3e-5 / 1.6e-5 K and 6.3e-4 / 1.6e-4 K. The half-cell drop the face temperature adds to the
        # cell next to the face is about 1e-2 K (bottom) and the two ambients differ by 15 K, so a dropped or
        # swapped term is caught by one order of magnitude or more.
        dz = thickness / cells
        assert errs[-1] < alpha * P0 * dz**2 / (8 * K_SLAB)
    assert errs[0] / errs[1] > 3.5  # second order in the cell size: the difference is discretisation error
