"""Linear viscoelasticity per cell (Prony series, time-temperature shift, exact exponential update).

Every check is against a result from outside the code: closed forms of the standard linear solid, the
Fourier transform of a relaxation modulus (by scipy's quadrature), the WLF equation with its published
"universal" constants, and the correspondence principle for a bilayer (Laplace-domain Timoshenko
formula inverted numerically by mpmath). ``pytest -s`` prints the measured errors and orders.
"""

from __future__ import annotations

import math
import textwrap

import numpy as np
import pytest

import actsim
from actsim.errors import ActsimInputError
from actsim.material import (arrhenius_log_shift, prony_relaxation_modulus, prony_storage_loss, table_log_shift,
                             wlf_log_shift)
from actsim.scenario import parse_scenario

E_INF, E_1, TAU = 1.0e9, 2.0e9, 1.0  # Pa, Pa, s: a standard linear solid (E_0 = 3 GPa)


def single_layer(protocol, *, relaxation, tolerance="1e-6", cells=2, modulus="1 GPa", output="0.5 s", base_dir=None):
    """One passive layer with a [relaxation] table, no heat (T = 293.15 K throughout)."""
    return parse_scenario(textwrap.dedent(f"""
    title = "viscoelastic layer"
    [strip]
    free_length = "10 mm"
    width = "2 mm"
    [materials.m]
    modulus = "{modulus}"
    [materials.m.relaxation]
    {relaxation}
    [[layers]]
    name = "a"
    material = "m"
    thickness = "20 um"
    cells = {cells}
    {protocol}
    [time]
    output_interval = "{output}"
    tolerance = {tolerance}
    """), base_dir=base_dir)


SLS = 'terms = [{ modulus = "2 GPa", time = "1 s" }]'


# ----------------------------------------------------------------------------------- standard linear solid
def test_sls_stress_relaxation_under_held_stretch():
    # SLS relaxation under a step strain e0: sigma(t) = (E_inf + E_1 exp(-t/tau)) e0
    # (Findley, Lai and Onaran, Creep and Relaxation of Nonlinear Viscoelastic Materials, 1976, sec. 5.4)
    e0 = 0.01
    sc = single_layer('[[protocol]]\nduration = "6 s"\nhold = "stretch"\nstrain = 0.01', relaxation=SLS)
    for engine in ("kernel", "reference"):
        ds = actsim.simulate(sc, engine=engine)
        t = ds.time.values
        exact = (E_INF + E_1 * np.exp(-t / TAU)) * e0
        err = np.max(np.abs(ds.stress.values[:, 0] - exact)) / (E_INF * e0)
        print(f"SLS relaxation ({engine}): max relative stress error {err:.2e}")
        assert err < 1e-12  # the exponential update is exact for a strain constant in the step
        np.testing.assert_allclose(ds.axial_strain.values, e0, rtol=1e-14)


def test_two_term_relaxation_and_modulus_function():
    # E(t) = E_inf + sum_k E_k exp(-t/tau_k), the generalised Maxwell model (Ferry 1980, ch. 3)
    rel = 'terms = [{ modulus = "2 GPa", time = "0.3 s" }, { modulus = "500 MPa", time = "4 s" }]'
    sc = single_layer('[[protocol]]\nduration = "8 s"\nhold = "stretch"\nstrain = -0.005', relaxation=rel)
    ds = actsim.simulate(sc)
    t = ds.time.values
    exact = -0.005 * (1e9 + 2e9 * np.exp(-t / 0.3) + 5e8 * np.exp(-t / 4.0))
    np.testing.assert_allclose(ds.stress.values[:, 1], exact, rtol=1e-12)
    np.testing.assert_allclose(prony_relaxation_modulus(time=t, long_term_modulus=1e9, moduli=[2e9, 5e8],
                                                        relaxation_times=[0.3, 4.0]), exact / -0.005, rtol=1e-14)


def test_sls_creep_recovery_after_release():
    # Creep compliance of the SLS under a step stress sigma0 (Findley, Lai and Onaran 1976, sec. 5.4):
    #   J(t) = 1/E_inf - (1/E_inf - 1/E_0) exp(-t/tau_r),  tau_r = tau E_0 / E_inf (retardation time).
    # Held at e0 for 40 tau the SLS is relaxed (stress E_inf e0, Maxwell element unloaded to exp(-40));
    # releasing it is a stress step -E_inf e0 on that state, so by Boltzmann superposition
    #   e(t) = e0 - E_inf e0 J(t) = e0 (1 - E_inf/E_0) exp(-t/tau_r).
    e0, e_0 = 0.01, E_INF + E_1
    tau_r = TAU * e_0 / E_INF
    proto = ('[[protocol]]\nduration = "40 s"\nhold = "stretch"\nstrain = 0.01\n'
             '[[protocol]]\nduration = "12 s"\nhold = "release"')
    ds = actsim.simulate(single_layer(proto, relaxation=SLS, tolerance="1e-5"))
    after = ds.time.values > 40.0
    t = ds.time.values[after] - 40.0
    exact = e0 * (1.0 - E_INF / e_0) * np.exp(-t / tau_r)
    err = np.max(np.abs(ds.axial_strain.values[after] - exact)) / e0
    print(f"SLS creep recovery: max error {err:.2e} of the held strain, {int(ds.attrs['time_steps_accepted'])} steps")
    assert err < 2e-6
    np.testing.assert_allclose(ds.stress.values[after], 0.0, atol=1e-6 * E_INF * e0)  # free: no stress


# ----------------------------------------------------------------------------- dynamic moduli, the shift
def test_storage_and_loss_modulus_are_the_fourier_transform_of_the_relaxation_modulus():
    # E'(w) = E_inf + w int_0^inf (E(t) - E_inf) sin(wt) dt,  E''(w) = w int_0^inf (E(t) - E_inf) cos(wt) dt
    # (Ferry, Viscoelastic Properties of Polymers, 3rd ed., 1980, ch. 3); integrals by scipy's QAWO
    # (weighted oscillatory) quadrature up to 50 x the longest time (the rest is below exp(-50)), term by term,
    # independent of the closed forms in prony_storage_loss.
    from scipy.integrate import quad

    moduli, times, e_inf = [1.2e9, 4e8, 9e7], [0.01, 0.7, 30.0], 5e6
    for w in (0.02, 0.5, 3.0, 80.0):
        s_int = c_int = 0.0
        for e_k, tau_k in zip(moduli, times):
            def term(t, e_k=e_k, tau_k=tau_k):
                return prony_relaxation_modulus(time=t, long_term_modulus=0.0, moduli=[e_k], relaxation_times=[tau_k])

            s_int += quad(term, 0.0, 50 * tau_k, weight="sin", wvar=w, limit=500, epsabs=0.0, epsrel=1e-11)[0]
            c_int += quad(term, 0.0, 50 * tau_k, weight="cos", wvar=w, limit=500, epsabs=0.0, epsrel=1e-11)[0]
        storage, loss = prony_storage_loss(angular_frequency=w, long_term_modulus=e_inf, moduli=moduli,
                                           relaxation_times=times)
        assert storage == pytest.approx(e_inf + w * s_int, rel=1e-8)
        assert loss == pytest.approx(w * c_int, rel=1e-8)
    # limits: E'(0) = E_inf, E'(inf) = E_0, E'' -> 0 at both ends (Ferry 1980, ch. 3)
    s0, l0 = prony_storage_loss(angular_frequency=0.0, long_term_modulus=e_inf, moduli=moduli, relaxation_times=times)
    s_hi, l_hi = prony_storage_loss(angular_frequency=1e12, long_term_modulus=e_inf, moduli=moduli,
                                    relaxation_times=times)
    assert s0 == e_inf and l0 == 0.0
    assert s_hi == pytest.approx(e_inf + sum(moduli), rel=1e-9) and l_hi < 1e-6 * sum(moduli)


def test_wlf_with_the_universal_constants():
    # log10 a_T = -17.44 (T - Tg) / (51.6 + T - Tg) (Williams, Landel and Ferry, J. Am. Chem. Soc. 77 (1955) 3701);
    # values by hand: T - Tg = 0 -> 0; 20 K -> -348.8/71.6 = -4.87151; 51.6 K -> -8.72; -20 K -> +11.0380
    tg = 340.0
    for d, want in ((0.0, 0.0), (20.0, -4.871508), (51.6, -8.72), (-20.0, 11.037975)):
        assert wlf_log_shift(temperature=tg + d, c1=17.44, c2=51.6, reference_temperature=tg) == pytest.approx(
            want, abs=1e-6)
    # at and below Tg - C2 the form diverges: no relaxation at all
    assert wlf_log_shift(temperature=tg - 51.6, c1=17.44, c2=51.6, reference_temperature=tg) == np.inf
    # Arrhenius: ln a_T = Ea/R (1/T - 1/Tr); 100 kJ/mol from 300 K to 310 K: by hand ln a_T = 12027.24 x (-1.075269e-4) = -1.293251
    assert arrhenius_log_shift(temperature=310.0, activation_energy=1e5, reference_temperature=300.0) * math.log(
        10) == pytest.approx(-1.293251, rel=1e-6)


@pytest.mark.parametrize("shift,fields,log10_a", [
    # WLF universal constants, T - Tr = 293.15 - 273.15 = 20 K -> log10 a_T = -4.871508 (Williams et al. 1955)
    ("wlf", 'reference_temperature = "0 degC"', -17.44 * 20.0 / 71.6),
    # Arrhenius, 100 kJ/mol, Tr = 303.15 K -> log10 a_T = 1e5/8.314462618 (1/293.15 - 1/303.15) / ln 10
    ("arrhenius", 'reference_temperature = "30 degC"\nactivation_energy = "100 kJ/mol"',
     1e5 / 8.314462618 * (1 / 293.15 - 1 / 303.15) / math.log(10)),
])
def test_shifted_relaxation_in_the_time_loop(shift, fields, log10_a):
    # time-temperature superposition: at T the relaxation times are tau a_T (Ferry 1980, ch. 11)
    tau_T = TAU * 10.0 ** log10_a
    rel = f'terms = [{{ modulus = "2 GPa", time = "{TAU / tau_T * 2.0!r} s" }}]\nshift = "{shift}"\n{fields}'
    sc = single_layer('[[protocol]]\nduration = "6 s"\nhold = "stretch"\nstrain = 0.01', relaxation=rel)
    ds = actsim.simulate(sc)
    t = ds.time.values
    # tau at T is (TAU / tau_T * 2) * a_T = 2 s
    np.testing.assert_allclose(ds.stress.values[:, 0], 0.01 * (E_INF + E_1 * np.exp(-t / 2.0)), rtol=1e-9)


# ------------------------------------------------------------------------------------ the layered beam
BILAYER = """
title = "viscoelastic bilayer under a step eigenstrain"
[strip]
free_length = "10 mm"
width = "2 mm"
[materials.base]
modulus = "2 GPa"
[materials.film]
modulus = "{e_inf}"
chromophore_concentration = "0.1 mol/L"
reactant_absorptivity = "100 L/(mol*cm)"
product_absorptivity = "100 L/(mol*cm)"
forward_quantum_yield = 0.1
photo_strain = -0.01
{relaxation}
[[layers]]
name = "base"
material = "base"
thickness = "{h2}"
cells = 4
[[layers]]
name = "film"
material = "film"
thickness = "{h1}"
cells = {cells}
initial_conversion = {x0}
{light}
[[protocol]]
duration = "{duration}"
{on}
[time]
output_interval = "{output}"
{stepping}
"""


def bilayer(*, relaxation=f'[materials.film.relaxation]\n{SLS}', e_inf="1 GPa", h1="15 um", h2="25 um", cells=64,
            x0=1.0, light=False, duration="5 s", output="0.25 s", stepping="tolerance = 1e-7"):
    src = '[[sources]]\nname = "lamp"\nwavelength = "365 nm"\nirradiance = "20 mW/cm^2"' if light else ""
    return parse_scenario(textwrap.dedent(BILAYER.format(
        relaxation=relaxation, e_inf=e_inf, h1=h1, h2=h2, cells=cells, x0=x0, light=src, duration=duration,
        on='light = ["lamp"]' if light else "", output=output, stepping=stepping)))


def timoshenko_curvature(*, mismatch, e1, e2, h1, h2):
    """Timoshenko's bimetal curvature (J. Opt. Soc. Am. 11 (1925) 233), layer 1 on layer 2, mismatch e_2 - e_1."""
    m, n = h1 / h2, e1 / e2
    return 6 * mismatch * (1 + m) ** 2 / ((h1 + h2) * (3 * (1 + m) ** 2 + (1 + m * n) * (m ** 2 + 1 / (m * n))))


def test_bilayer_curvature_relaxes_as_the_correspondence_principle_predicts():
    # Correspondence principle (Findley, Lai and Onaran 1976, ch. 10; Ferry 1980, ch. 1): under a step
    # eigenstrain eps H(t) the Laplace transform of the curvature is the elastic (Timoshenko) curvature with the
    # film's modulus replaced by its Carson transform s E(s) = E_inf + E_1 s tau / (1 + s tau), divided by s:
    #   kappa(s) = K(s E(s)) eps / s;  inverted numerically by mpmath's Talbot method.
    import mpmath

    h1, h2, e2, eps = 15e-6, 25e-6, 2e9, -0.01
    ds = actsim.simulate(bilayer())
    t = ds.time.values

    def laplace(s):
        e_film = E_INF + E_1 * s * TAU / (1 + s * TAU)
        return timoshenko_curvature(mismatch=-eps, e1=e_film, e2=e2, h1=h1, h2=h2) / s

    exact = np.array([timoshenko_curvature(mismatch=-eps, e1=E_INF + E_1, e2=e2, h1=h1, h2=h2)] +
                     [float(mpmath.invertlaplace(laplace, ti, method="talbot")) for ti in t[1:]])
    k = ds.curvature.values
    err = np.max(np.abs(k - exact)) / np.max(np.abs(exact))
    print(f"bilayer, SLS film on an elastic base: curvature {k[0]:.4g} -> {k[-1]:.4g} 1/m, max rel. error {err:.2e}")
    # t = 0: the glassy Timoshenko curvature exactly; later the Maxwell stresses are kept at the centres of the
    # film's 64 cells (their moment is second order in the cell width), and the time error is 1e-7
    assert k[0] == pytest.approx(exact[0], rel=1e-12)
    assert err < 5e-5
    assert abs(k[-1]) < abs(k[0])  # the film relaxes, the bend follows the softer film


def test_elastic_limit_reproduces_the_elastic_run():
    # tau -> infinity: nothing relaxes, the layer is elastic with E_0 = E_inf + sum E_k (Ferry 1980, ch. 3)
    kw = dict(light=True, duration="4 s", stepping='step = "0.05 s"', cells=12, x0=0.0)
    frozen = bilayer(relaxation='[materials.film.relaxation]\nterms = [{ modulus = "2 GPa", time = "1e30 s" }]', **kw)
    elastic = bilayer(relaxation="", e_inf="3 GPa", **kw)
    zero = bilayer(relaxation='[materials.film.relaxation]\nterms = [{ modulus = "0 GPa", time = "1 s" }]', **kw)
    soft = bilayer(relaxation="", e_inf="1 GPa", **kw)
    for a, b in ((frozen, elastic), (zero, soft)):
        da, db = actsim.simulate(a), actsim.simulate(b)
        for name in ("curvature", "stress", "modulus", "eigenstrain", "blocked_force"):
            scale = np.max(np.abs(db[name].values))
            d = np.max(np.abs(da[name].values - db[name].values)) / scale
            assert d < 1e-9, (name, d)
        assert float(np.max(np.abs(db.curvature.values))) > 1.0  # it bends


@pytest.mark.parametrize("hold", ["free", "flat"])
def test_second_order_in_the_time_step(hold):
    # a smooth strain history (the film converts under light over 4 s while it relaxes, tau = 1 s; free, or held
    # flat so that the axial strain and holding moment follow): fixed steps h, h/2, h/4 against h/32; a
    # second-order scheme shows errors falling by 4 (Simo and Hughes 1998, sec. 10.3: the update is exact for
    # a strain linear in the step, so its local error is O(h^3)).
    runs = {}
    for n in (40, 80, 160, 1280):
        sc = bilayer(light=True, duration="4 s", output="0.5 s", cells=4, x0=0.0, stepping=f'step = "{4.0 / n!r} s"')
        ds = actsim.simulate(parse_scenario(sc.text.replace('light = ["lamp"]', f'light = ["lamp"]\nhold = "{hold}"')))
        runs[n] = np.c_[ds.axial_strain.values / 1e-4, ds.holding_moment.values / 1e-6, ds.curvature.values]
    errs = [np.max(np.abs(runs[n] - runs[1280])) for n in (40, 80, 160)]
    orders = [math.log2(errs[i] / errs[i + 1]) for i in range(2)]
    print(f"{hold} bilayer under light: errors {errs[0]:.2e}, {errs[1]:.2e}, {errs[2]:.2e}: observed orders "
          f"{orders[0]:.2f}, {orders[1]:.2f}")
    assert all(1.8 < p < 2.3 for p in orders)


def test_kernel_matches_reference_with_network_heat_and_relaxation():
    # the readable loop (numpy stage functions) and the numba kernel: same scheme by two routes, rtol 1e-12
    text = bilayer(light=True, duration="3 s", output="0.5 s", cells=6, x0=0.0, stepping="tolerance = 1e-4").text
    text = text.replace("photo_strain = -0.01", 'photo_strain = -0.01\nnetwork_modulus = "200 MPa"\n'
                        'thermal_expansion = "1e-4 1/K"')
    text = text.replace("[materials.film.relaxation]", "[materials.film.relaxation]\nshift = \"wlf\"\n"
                        "reference_temperature = \"25 degC\"")
    text = text.replace('[[protocol]]', '[heat]\nambient_temperature = "20 degC"\n[[protocol]]', 1)
    text += '[[protocol]]\nduration = "1 s"\nhold = "stretch"\nstrain = 0.002\n[[protocol]]\nduration = "1 s"\n'
    text += 'hold = "release"\n'
    sc = parse_scenario(text)
    fast, slow = actsim.simulate(sc), actsim.simulate(sc, engine="reference")
    assert fast.attrs["time_steps_accepted"] == slow.attrs["time_steps_accepted"]
    for name in ("curvature", "stress", "modulus", "eigenstrain", "network_strain", "temperature", "axial_strain"):
        np.testing.assert_allclose(fast[name].values, slow[name].values, rtol=1e-12, atol=1e-12 * float(
            np.max(np.abs(slow[name].values))), err_msg=name)


# ------------------------------------------------------------------------------------------- bad input
@pytest.mark.parametrize("relaxation,match", [
    ('terms = []', r"materials\.m\.relaxation\.terms: give a list"),
    ('terms = [{ modulus = "1 GPa" }]', r"materials\.m\.relaxation\.terms\[0\]\.time: required"),
    ('terms = [{ modulus = "1 GPa", time = "0 s" }]', r"terms\[0\]\.time: .*outside the allowed range"),
    ('terms = [{ modulus = "1 GPa", time = "1 s", tau = 3 }]', r"terms\[0\]\.tau: unknown field"),
    (SLS + '\nshift = "vft"', r"relaxation\.shift: 'vft' is not one of"),
    (SLS + '\nshift = "wlf"', r"relaxation\.reference_temperature: required"),
    (SLS + '\nshift = "wlf"\nreference_temperature = "50 degC"\nwlf_c1 = 0', r"wlf_c1: .*outside the allowed"),
    (SLS + '\nwlf_c1 = 17', r"relaxation\.wlf_c1: not used with shift = 'none'"),
])
def test_bad_relaxation_input_is_one_line(relaxation, match):
    with pytest.raises(ActsimInputError, match=match) as exc:
        single_layer('[[protocol]]\nduration = "1 s"', relaxation=relaxation)
    assert "\n" not in str(exc.value)


def test_relaxation_with_a_temperature_law_is_refused():
    text = single_layer('[[protocol]]\nduration = "1 s"', relaxation=SLS).text
    text = text.replace('modulus = "1 GPa"\n', '', 1).replace(
        "[materials.m.relaxation]", '[materials.m.glass_transition]\nglassy_modulus = "2 GPa"\n'
        'rubbery_modulus = "10 MPa"\ntemperature = "50 degC"\nwidth = "5 K"\n[materials.m.relaxation]')
    with pytest.raises(ActsimInputError, match=r"materials\.m\.relaxation: a relaxing material takes"):
        parse_scenario(text)


def test_moment_left_after_a_held_bend():
    # A homogeneous SLS layer bent onto a mandrel at t = 0 and held: the moment relaxes as the modulus,
    # M(t) = E(t) I kappa_0 with E(t) = E_inf + E_1 exp(-t/tau) (correspondence principle; Findley, Lai and Onaran
    # 1976, sec. 5.4), so the share left at the end of the hold is E(t_end) / E(0). The summary reports it. The
    # relaxing part acts on each cell's centre strain (docs/models.md), so the bending inside a cell (a share 1/n^2
    # of I for n equal cells) stays glassy: an error second order in the cell size, checked here.
    from actsim.metrics import summarize

    exact = (E_INF + E_1 * np.exp(-3.0 / TAU)) / (E_INF + E_1)
    errors = []
    for cells in (10, 20, 40):
        sc = single_layer('[[protocol]]\nlabel = "held"\nduration = "3 s"\nhold = "bend"\ncurvature = "50 1/m"\n'
                          '[[protocol]]\nduration = "1 s"', relaxation=SLS, cells=cells)
        ds = actsim.simulate(sc)
        held = summarize(ds, protocol=sc.protocol)["held_steps"]
        assert len(held) == 1 and held[0]["hold"] == "bend" and held[0]["label"] == "held"
        assert held[0]["time_of_peak"] == 0.0 and held[0]["time_of_end"] == pytest.approx(3.0)
        i_w = 2e-3 * (20e-6) ** 3 / 12  # second moment of the 2 mm x 20 um section
        assert abs(held[0]["peak"]) == pytest.approx((E_INF + E_1) * i_w * 50.0, rel=1e-9)  # glassy at t = 0
        # the discrete answer: the within-cell share 1/n^2 of I keeps the glassy modulus
        assert held[0]["share_left"] == pytest.approx(exact * (1 - cells**-2.0) + cells**-2.0, rel=1e-9)
        errors.append(held[0]["share_left"] - exact)
    assert errors[0] / errors[1] == pytest.approx(4.0, rel=1e-6) and errors[1] / errors[2] == pytest.approx(4.0, rel=1e-6)


def test_heated_and_cooled_bilayer_matches_an_independent_ode():
    # The bundled photothermal hinge (a relaxing composite with a WLF shift on an elastic film), heated by light
    # for 20 s and cooled for 40 s, against an independent solution of the same continuum model: Maxwell
    # elements dh_k/dt = E_k de_m/dt - h_k / (tau_k a_T(T)) per cell (Ferry 1980, ch. 3; Williams, Landel and
    # Ferry 1955 for a_T), stress E_inf e_m + sum_k h_k, e_m = e0 - kappa z - alpha (T - T_ref), and the free
    # strip's N = M = 0 (Timoshenko 1925), integrated by scipy's Radau method with the cell temperatures taken
    # from actsim's own output (the heat model is tested elsewhere). Cell-centre quadrature in the reference:
    # the two agree to the cell-size error, well below 1 % of the peak bend.
    from pathlib import Path

    from scipy.integrate import solve_ivp

    text = (Path(__file__).resolve().parents[1] / "scenarios" / "photothermal_hinge.toml").read_text()
    text = text.replace('ambient_temperature = "22 degC"', 'ambient_temperature = "22 degC"\nreference_temperature = "22 degC"')
    text = text.replace("output_interval = \"0.25 s\"", "output_interval = \"0.1 s\"").replace("tolerance = 1e-4", "tolerance = 1e-6")
    sc = parse_scenario(text)
    ds = actsim.simulate(sc)
    t_out, T_out = ds.time.values, ds.temperature.values
    comp = [la for la in sc.layers if la.material.relaxation is not None][0].material
    rel = comp.relaxation
    z_edges = np.concatenate([[0.0], np.cumsum(np.concatenate([la.thickness / la.cells * np.ones(la.cells) for la in sc.layers]))])
    dz, zc = np.diff(z_edges), 0.5 * (z_edges[:-1] + z_edges[1:])
    relaxing = np.concatenate([np.full(la.cells, la.material.relaxation is not None) for la in sc.layers])
    e_inf = np.concatenate([np.full(la.cells, la.material.modulus) for la in sc.layers])
    alpha = np.concatenate([np.full(la.cells, la.material.thermal_expansion) for la in sc.layers])
    E_k, tau = np.asarray(rel.moduli), np.asarray(rel.times)
    e0_mod = e_inf + relaxing * E_k.sum()
    T_ref, nr = sc.heat.reference_temperature, int(relaxing.sum())

    def interval(t):
        j = min(max(int(np.searchsorted(t_out, t, side="right")) - 1, 0), t_out.size - 2)
        return j, (t - t_out[j]) / (t_out[j + 1] - t_out[j])

    def temperature(t):
        j, f = interval(t)
        return T_out[j] + f * (T_out[j + 1] - T_out[j])

    def d_temperature(t):
        j, _ = interval(t)
        return (T_out[j + 1] - T_out[j]) / (t_out[j + 1] - t_out[j])

    def system(modulus):
        return np.array([[np.sum(modulus * dz), -np.sum(modulus * zc * dz)],
                         [np.sum(modulus * zc * dz), -np.sum(modulus * zc**2 * dz)]])

    s_glassy, s_relaxed = np.linalg.inv(system(e0_mod)), np.linalg.inv(system(e_inf))
    # d(e_m)/dt of every cell from the cells' load rates q: [1, -z] S^-1 [sum q dz, sum q z dz] (a rank-2 map)
    dem_map = np.column_stack([np.ones_like(zc), -zc]) @ s_glassy @ np.vstack([dz, zc * dz])

    def shift_rate(t):
        T = temperature(t)[relaxing]
        log_a = -rel.wlf_c1 * (T - rel.reference_temperature) / (rel.wlf_c2 + T - rel.reference_temperature)
        return 1.0 / (tau[None, :] * 10.0 ** log_a[:, None])  # 1 / (tau_k a_T), (relaxing cell, term)

    def rhs(t, y):
        h = y.reshape(nr, E_k.size)
        decay = h * shift_rate(t)
        load = e0_mod * alpha * d_temperature(t)
        load[relaxing] += decay.sum(axis=1)
        dem = dem_map @ load - alpha * d_temperature(t)
        return (E_k[None, :] * dem[relaxing, None] - decay).ravel()

    def jac(t, y):
        r = shift_rate(t)  # d(decay)/dh is diagonal; d(dem)/dh through the history part of the load
        sub = dem_map[np.ix_(relaxing, relaxing)]
        j = np.einsum("k,ij,jl->ikjl", E_k, sub, r).reshape(nr * E_k.size, nr * E_k.size)
        return j - np.diag(r.ravel())

    sol = solve_ivp(rhs, (0.0, t_out[-1]), np.zeros(nr * E_k.size), method="Radau", t_eval=t_out, rtol=1e-8,
                    atol=1e-3, jac=jac)
    bend = []
    for j, t in enumerate(t_out):
        h = sol.y[:, j].reshape(nr, E_k.size)
        hist = np.zeros(zc.size)
        hist[relaxing] = h.sum(axis=1)
        load = e_inf * alpha * (temperature(t) - T_ref) - hist
        _, kap = s_relaxed @ np.array([np.sum(load * dz), np.sum(load * zc * dz)])
        bend.append(kap * sc.strip.free_length)
    bend = np.asarray(bend)
    got = ds.bend_angle.values
    err = np.max(np.abs(got - bend)) / np.max(np.abs(bend))
    print(f"heated bilayer: peak {np.degrees(np.max(np.abs(bend))):.2f} deg, final {np.degrees(bend[-1]):.2f} deg "
          f"(actsim {np.degrees(got[-1]):.2f}); max difference {err:.2e} of the peak")
    assert err < 1e-2


# ------------------------------------------------------------------------------------- tabulated shift a_T
def write_shift_table(folder, temperatures_c, column, *, header="log10 shift [1]"):
    rows = "\n".join(f"{float(t)!r}, {float(v)!r}" for t, v in zip(temperatures_c, column))
    (folder / "shift.csv").write_text(f"temperature [degC], {header}\n{rows}\n")


def test_two_point_table_is_a_straight_line_in_log_shift():
    # by hand: (0 degC, +0.5) and (40 degC, -1.5) -> slope -0.05 per K; at 20 degC log10 a_T = 0.5 - 20 * 0.05 = -0.5;
    # clamped at the end values outside 0..40 degC
    t, v = [273.15, 313.15], [0.5, -1.5]
    assert table_log_shift(temperature=293.15, table_temperature=t, table_log10_shift=v) == pytest.approx(-0.5, abs=1e-12)
    assert table_log_shift(temperature=303.15, table_temperature=t, table_log10_shift=v) == pytest.approx(-1.0, abs=1e-12)
    np.testing.assert_allclose(table_log_shift(temperature=[200.0, 400.0], table_temperature=t, table_log10_shift=v),
                               [0.5, -1.5])


@pytest.mark.parametrize("header,column,log10_a", [
    # two points, straight line in log10 a_T vs T: at 20 degC (the run's 293.15 K) -0.5, by hand as above
    ("log10 shift [1]", [0.5, -1.5], -0.5),
    # the same as a_T itself: 10^0.5 and 10^-1.5
    ("shift factor [1]", [10.0 ** 0.5, 10.0 ** -1.5], -0.5),
])
def test_tabulated_shift_in_the_time_loop(tmp_path, header, column, log10_a):
    # time-temperature superposition: at T the relaxation times are tau a_T (Ferry 1980, ch. 11)
    write_shift_table(tmp_path, [0.0, 40.0], column, header=header)
    tau_T = TAU * 10.0 ** log10_a
    rel = (f'terms = [{{ modulus = "2 GPa", time = "{TAU / tau_T * 2.0!r} s" }}]\nshift = "table"\n'
           'shift_table = { file = "shift.csv" }')
    sc = single_layer('[[protocol]]\nduration = "6 s"\nhold = "stretch"\nstrain = 0.01', relaxation=rel,
                      base_dir=tmp_path)
    assert sc.layers[0].material.relaxation.shift_table_log10 == pytest.approx((0.5, -1.5), abs=1e-12)
    ds = actsim.simulate(sc)
    t = ds.time.values
    np.testing.assert_allclose(ds.stress.values[:, 0], 0.01 * (E_INF + E_1 * np.exp(-t / 2.0)), rtol=1e-9)


def test_fine_table_of_the_universal_wlf_reproduces_the_wlf_run(tmp_path):
    # The bundled photothermal hinge (WLF about 45 degC with the universal constants C1 = 17.44, C2 = 51.6 K,
    # Williams, Landel and Ferry, J. Am. Chem. Soc. 77 (1955) 3701), fixed steps, against the same run with a_T
    # from a table of that WLF law every 0.1 K. Piecewise-linear interpolation errs by at most h^2/8 max|f''|
    # (f = log10 a_T, f'' = 2 C1 C2 / (C2 + T - Tr)^3, largest at the coldest cell, 22 degC: 0.077 K^-2), i.e.
    # 9.6e-5 in log10 a_T, 2.2e-4 in ln a_T: the reduced times differ by a factor within 1 +- 2.2e-4, and the
    # curvature (its sensitivity to ln xi is at most order one) by less than 2.2e-4 of its peak (measured:
    # 2.7e-6; with a 1 K table 2.5e-4, the h^2 scaling). The readable engine agrees with the kernel to 1e-9.
    from pathlib import Path

    text = (Path(__file__).resolve().parents[1] / "scenarios" / "photothermal_hinge.toml").read_text()
    text = text.replace("tolerance = 1e-4", 'step = "0.05 s"').replace('output_interval = "0.25 s"',
                                                                      'output_interval = "1 s"')
    wlf = parse_scenario(text, base_dir=tmp_path)
    rel = [la.material for la in wlf.layers][1].relaxation
    assert (rel.wlf_c1, rel.wlf_c2) == (17.44, 51.6)
    temps_c = np.round(np.arange(0.0, 120.0 + 1e-9, 0.1), 10)
    log10_a = wlf_log_shift(temperature=temps_c + 273.15, c1=17.44, c2=51.6, reference_temperature=318.15)
    write_shift_table(tmp_path, temps_c, log10_a)
    tab_text = text.replace('shift = "wlf"\nreference_temperature = "45 degC"\nwlf_c1 = 17.44\nwlf_c2 = "51.6 K"',
                            'shift = "table"\nshift_table = { file = "shift.csv" }')
    assert tab_text != text
    tab = parse_scenario(tab_text, base_dir=tmp_path)
    a, b = actsim.simulate(wlf), actsim.simulate(tab)
    T = a.temperature.values
    assert 273.15 < T.min() and T.max() < 393.15  # inside the table: no clamping
    k_a, k_b = a.curvature.values, b.curvature.values
    peak = np.max(np.abs(k_a))
    assert peak > 10.0  # a real bend [1/m]
    assert np.max(np.abs(k_b - k_a)) < 2.2e-4 * peak
    c = actsim.simulate(tab, engine="reference")
    np.testing.assert_allclose(c.curvature.values, k_b, rtol=0, atol=1e-9 * peak)


@pytest.mark.parametrize("rows,match", [
    ("0, 1\n20, 0\n10, -1\n", r"shift_table\.file: 'shift\.csv' temperatures must increase strictly"),
    ("0, 1\n", r"shift_table\.file: .*shift\.csv"),
    ("0, 1\n20, nan\n", r"shift_table\.file: .*shift\.csv"),
    ("0, 1\n20, 400\n", r"shift_table\.file: 'shift\.csv' has a log10 a_T from 1 to 400, outside the allowed"),
    ("-300, 1\n20, 0\n", r"shift_table\.file: 'shift\.csv' has a temperature from .* K, outside the allowed"),
])
def test_bad_shift_table_is_one_line(tmp_path, rows, match):
    (tmp_path / "shift.csv").write_text("temperature [degC], log10 shift [1]\n" + rows)
    rel = SLS + '\nshift = "table"\nshift_table = { file = "shift.csv" }'
    with pytest.raises(ActsimInputError, match=match) as exc:
        single_layer('[[protocol]]\nduration = "1 s"', relaxation=rel, base_dir=tmp_path)
    assert "\n" not in str(exc.value)


@pytest.mark.parametrize("relaxation,header,match", [
    (SLS + '\nshift = "table"', "log10 shift [1]", r"relaxation\.shift_table: required"),
    (SLS + '\nshift = "wlf"\nreference_temperature = "45 degC"\nshift_table = { file = "shift.csv" }',
     "log10 shift [1]", r"relaxation\.shift_table: not used with shift = 'wlf'"),
    (SLS + '\nshift = "table"\nreference_temperature = "45 degC"\nshift_table = { file = "shift.csv" }',
     "log10 shift [1]", r"relaxation\.reference_temperature: not used with shift = 'table'"),
    (SLS + '\nshift = "table"\nshift_table = { file = "../shift.csv" }', "log10 shift [1]", r"shift_table\.file"),
    (SLS + '\nshift = "table"\nshift_table = { file = "shift.csv" }', "strain [1]", r"second column 'strain': name it 'log10 shift"),
])
def test_bad_shift_table_fields_are_one_line(tmp_path, relaxation, header, match):
    (tmp_path / "shift.csv").write_text(f"temperature [degC], {header}\n0, 1\n20, 0\n")
    with pytest.raises(ActsimInputError, match=match) as exc:
        single_layer('[[protocol]]\nduration = "1 s"', relaxation=relaxation, base_dir=tmp_path)
    assert "\n" not in str(exc.value)
