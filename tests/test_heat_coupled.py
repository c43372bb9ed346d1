"""Heat in the coupled solver: lumped limit, energy balance, second order in time, kernel = reference."""

from __future__ import annotations

import math
import textwrap

import numpy as np
import pytest

import actsim
from actsim.scenario import parse_scenario


def heated(*, absorber="300 1/cm", conc=None, thickness="10 um", cells=10, k="50 W/(m*K)", rho="1000 kg/m^3",
           cp="1000 J/(kg*K)", h_top="20 W/(m^2*K)", h_bot="10 W/(m^2*K)", protocol=None, step="0.1 s",
           output="1 s", scheme="tr-bdf2", extra_mat="", extra_heat="", irradiance="50 mW/cm^2",
           modulus_line='modulus = "1 GPa"'):
    chrom = ""
    if conc:
        chrom = f'''
        chromophore_concentration = "{conc}"
        photo_strain = -0.01
        reactant_absorptivity = "8000 L/(mol*cm)"
        product_absorptivity = "500 L/(mol*cm)"
        forward_quantum_yield = 0.3
        backward_quantum_yield = 0.1
        thermal_back_rate = "0.05 1/s"
        back_reaction_activation_energy = "80 kJ/mol"
        '''
    if protocol is None:
        protocol = '[[protocol]]\nduration = "60 s"\nlight = ["lamp"]\n'
    text = f"""
    [strip]
    free_length = "10 mm"
    width = "2 mm"
    [optics]
    front_reflection = false
    max_cell_optical_depth = 20
    [heat]
    ambient_temperature = "20 degC"
    top_heat_transfer = "{h_top}"
    bottom_heat_transfer = "{h_bot}"
    scheme = "{scheme}"
    {extra_heat}
    [materials.m]
    {modulus_line}
    refractive_index = 1.0
    background_absorption = "{absorber}"
    conductivity = "{k}"
    density = "{rho}"
    specific_heat = "{cp}"
    {chrom}
    {extra_mat}
    [[layers]]
    material = "m"
    thickness = "{thickness}"
    cells = {cells}
    [[sources]]
    name = "lamp"
    wavelength = "365 nm"
    irradiance = "{irradiance}"
    {protocol}
    [time]
    output_interval = "{output}"
    step = "{step}"
    """
    return parse_scenario(textwrap.dedent(text))


def test_lumped_heating_limit():
    # Lumped capacitance (Incropera et al., Fundamentals of Heat and Mass Transfer, 6th ed., sec. 5.3):
    # a thin, highly conducting strip heats as dT = q_abs/(h_t + h_b) (1 - exp(-t/tau)), tau = rho c d/(h_t + h_b).
    sc = heated(step="0.01 s")
    ds = actsim.simulate(sc)
    alpha, d = 3e4, 10e-6
    q_abs = 500.0 * (1 - math.exp(-alpha * d))
    tau = 1000 * 1000 * d / 30.0
    t = ds.time.values
    exact = q_abs / 30.0 * (1 - np.exp(-t / tau))
    rise = ds.temperature.values.mean(axis=1) - 293.15
    # Biot number h d/k = 6e-6: the lumped model is exact to that order; dt/tau = 0.03 bounds the time error
    np.testing.assert_allclose(rise, exact, atol=2e-4 * exact.max())
    assert ds.peak_temperature.attrs["units"] == "K"
    assert float(ds.surface_temperature_top[-1]) == pytest.approx(293.15 + exact[-1], rel=1e-4)


def test_energy_balance_whole_protocol():
    # Energy conservation (Incropera sec. 1.3): heat absorbed = heat stored + heat lost at the faces, over a
    # protocol with light on, off and on again and a converting chromophore (time-varying absorption), 1e-8 rel.
    protocol = """
    [[protocol]]
    duration = "2 s"
    light = ["lamp"]
    [[protocol]]
    duration = "1.5 s"
    top_heat_transfer = "40 W/(m^2*K)"
    [[protocol]]
    duration = "1 s"
    light = { lamp = "800 mW/cm^2" }
    """
    for scheme in ("tr-bdf2", "crank-nicolson"):
        sc = heated(conc="0.2 mol/L", absorber="20 1/cm", thickness="30 um", cells=30, k="0.2 W/(m*K)",
                    protocol=protocol, scheme=scheme, step="2e-4 s", output="0.5 s")
        ds = actsim.simulate(sc)
        rho_c = 1000 * 1000.0
        dz = 30e-6 / 30
        stored = rho_c * dz * (ds.temperature.values - 293.15).sum(axis=1)
        lost = ds.heat_lost_bottom.values + ds.heat_lost_top.values
        absorbed = ds.heat_absorbed.values
        assert absorbed[-1] > 0
        residual = np.abs(absorbed - stored - lost) / absorbed[-1]
        # 12,500 steps: rounding accumulates as about N eps; measured 1.8e-13 (TR-BDF2) and 9.2e-13 (Crank-Nicolson)
        # with the heat state solved as the rise above T_ref (about 4e-9 when the absolute temperature was the state)
        print(f"{scheme}: energy ledger residual {residual.max():.2e} of the absorbed heat")
        assert residual.max() < 5e-12, (scheme, residual.max())


def test_coupled_solver_second_order_in_time():
    # Coupled optics + kinetics + heat (Arrhenius back reaction, 80 kJ/mol) with the light switching at a step
    # boundary: halving the step quarters the error against a fine reference (observed order ~2).
    protocol = '[[protocol]]\nduration = "4 s"\nlight = ["lamp"]\n[[protocol]]\nduration = "2 s"\n'
    kw = dict(conc="0.3 mol/L", absorber="10 1/cm", thickness="20 um", cells=12, k="0.2 W/(m*K)",
              protocol=protocol, output="2 s", irradiance="300 mW/cm^2", h_top="5 W/(m^2*K)", h_bot="5 W/(m^2*K)")
    ref = actsim.simulate(heated(step="0.0025 s", **kw))
    errs = []
    for dt in (0.08, 0.04, 0.02):
        ds = actsim.simulate(heated(step=f"{dt} s", **kw))
        errs.append(max(float(np.abs(ds.conversion - ref.conversion).max()),
                        float(np.abs(ds.temperature - ref.temperature).max()) / 10.0))
    orders = [math.log2(errs[i] / errs[i + 1]) for i in range(2)]
    print("coupled errors", errs, "orders", orders)
    assert all(1.7 < p < 2.4 for p in orders), orders


def test_kernel_matches_reference_with_heat_and_temperature_laws():
    # Fast path = readable path (rtol 1e-12) with Crank–Nicolson heat, glass-transition modulus, thermal strain.
    extra_mat = """
    thermal_expansion = "2e-4 1/K"
    [materials.m.glass_transition]
    glassy_modulus = "2 GPa"
    rubbery_modulus = "20 MPa"
    temperature = "30 degC"
    width = "4 K"
    """
    sc = heated(conc="0.2 mol/L", absorber="50 1/cm", thickness="20 um", cells=10, k="0.2 W/(m*K)",
                scheme="crank-nicolson", step="0.0005 s", output="0.1 s", extra_mat=extra_mat, modulus_line="",
                irradiance="3 W/cm^2",
                protocol='[[protocol]]\nduration = "0.6 s"\nlight = ["lamp"]\n[[protocol]]\nduration = "0.2 s"\n')
    fast = actsim.simulate(sc)
    slow = actsim.simulate(sc, engine="reference")
    for name in ("conversion", "temperature", "modulus", "eigenstrain", "heat_absorbed", "heat_lost_top"):
        np.testing.assert_allclose(fast[name].values, slow[name].values, rtol=1e-12, atol=1e-14, err_msg=name)
    # curvature is a difference of near-equal section integrals (the thermal strain is nearly uniform), so
    # round-off of 1e-13 in the states grows to ~5e-12 in it; the states themselves agree to 1e-12 above
    np.testing.assert_allclose(fast.curvature.values, slow.curvature.values, rtol=1e-10)
    assert float(fast.peak_temperature.max()) > 303.15  # crossed the glass transition


def test_crank_nicolson_step_too_long_is_refused():
    with pytest.raises(actsim.ActsimInputError, match="tr-bdf2"):
        actsim.simulate(heated(scheme="crank-nicolson", step="0.1 s"))


@pytest.mark.parametrize("change,fragment", [
    (dict(k="0 W/(m*K)"), "conductivity"),
    (dict(cp="-5 J/(kg*K)"), "specific_heat"),
])
def test_bad_thermal_input(change, fragment):
    with pytest.raises(actsim.ActsimInputError, match=fragment):
        heated(**change)


def test_glass_transition_width_zero_refused():
    extra = '[materials.m.glass_transition]\nglassy_modulus = "2 GPa"\nrubbery_modulus = "20 MPa"\ntemperature = "30 degC"\nwidth = "0 K"\n'
    with pytest.raises(actsim.ActsimInputError, match="width"):
        heated(extra_mat=extra)


def test_plate_thermal_strain_carries_one_plus_poisson():
    # Plane strain across the width with an isotropic thermal strain e_th: sigma_x = E/(1-nu^2) (e_x - (1+nu) e_th)
    # (Timoshenko and Woinowsky-Krieger, Theory of Plates and Shells, 1959, sec. 14), so a free uniform plate
    # stretches by (1 + nu) alpha dT along the strip, a beam by alpha dT.
    extra = 'thermal_expansion = "1e-4 1/K"\npoisson_ratio = 0.4'
    beam = actsim.simulate(heated(extra_mat=extra, step="0.01 s"))
    plate_sc = heated(extra_mat=extra, step="0.01 s")
    plate = actsim.simulate(actsim.scenario.apply_overrides(plate_sc, {"strip.section": "plate"}))
    dT = float(beam.temperature.values[-1].mean()) - 293.15
    assert float(beam.axial_strain[-1]) == pytest.approx(1e-4 * dT, rel=1e-6)
    assert float(plate.axial_strain[-1]) == pytest.approx(1.4e-4 * dT, rel=1e-6)


def test_tabulated_modulus_table_enters_the_solver(tmp_path, monkeypatch):
    # A DMA-style table (temperature, storage modulus) is interpolated linearly in ln E (common practice, no
    # source); with a uniform strip at the ambient temperature the section modulus is the table value there.
    (tmp_path / "dma.csv").write_text("# synthetic\ntemperature [degC],storage modulus [MPa]\n10,2000\n30,20\n")
    monkeypatch.chdir(tmp_path)
    sc = heated(modulus_line="", extra_mat='[materials.m.modulus_table]\nfile = "dma.csv"', irradiance="0 mW/cm^2")
    ds = actsim.simulate(sc)
    expected = math.exp(math.log(2e9) + (20.0 - 10.0) / 20.0 * (math.log(20e6) - math.log(2e9)))
    np.testing.assert_allclose(ds.modulus.values[0], expected, rtol=1e-12)
