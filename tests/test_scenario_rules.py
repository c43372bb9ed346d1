"""Scenario rules that refuse inputs which would otherwise be silently ignored or silently wrong."""

from __future__ import annotations

import pytest

import actsim
from actsim.scenario import parse_scenario

from conftest import film_toml

SUB = {"modulus": "3 GPa", "thickness": "30 um"}


def test_duplicate_layer_names_refused():
    text = film_toml(substrate=SUB).replace('name = "sub"', 'name = "film"')
    with pytest.raises(actsim.ActsimInputError, match=r"layers\[1\].name: 'film' is already used"):
        parse_scenario(text)


def test_initial_conversion_on_a_passive_layer_refused():
    text = film_toml(substrate=SUB).replace('name = "sub"', 'name = "sub"\ninitial_conversion = 0.5')
    with pytest.raises(actsim.ActsimInputError, match="has no chromophore"):
        parse_scenario(text)


def test_thermal_expansion_without_heat_refused():
    text = film_toml().replace('[materials.film]', '[materials.film]\nthermal_expansion = "1e-4 1/K"')
    with pytest.raises(actsim.ActsimInputError, match="only when heat is modelled"):
        parse_scenario(text)


def test_quantum_yield_bands_adding_above_one_refused():
    text = film_toml().replace(
        "forward_quantum_yield = 0.3",
        'forward_quantum_yield = { bands = [ { centre = "365 nm", fwhm = "40 nm", peak = 0.7 }, '
        '{ centre = "370 nm", fwhm = "40 nm", peak = 0.7 } ] }')
    with pytest.raises(actsim.ActsimInputError, match="forward_quantum_yield: .* allowed range 0 to 1"):
        actsim.simulate(parse_scenario(text))


def test_surroundings_persist_from_step_to_step():
    heat = '[heat]\nambient_temperature = "20 degC"\n'
    protocol = """
    [[protocol]]
    duration = "1 s"
    [[protocol]]
    duration = "1 s"
    ambient_temperature = "30 degC"
    top_heat_transfer = "50 W/(m^2*K)"
    [[protocol]]
    duration = "1 s"
    """
    sc = parse_scenario(film_toml(protocol=protocol, output="0.5 s", step="0.1 s").replace("[optics]", heat + "[optics]"))
    last = sc.protocol[2]
    assert last.ambient_top == pytest.approx(303.15) and last.convection_top == pytest.approx(50.0)
    assert sc.protocol[0].convection_top == pytest.approx(10.0)


def test_a_very_short_step_is_never_dropped():
    # A 10 us flash after a 20000 s dark step: the protocol boundary must survive (dose = E * t exactly).
    protocol = """
    [[protocol]]
    duration = "20000 s"
    [[protocol]]
    duration = "10 us"
    light = { lamp = "1000 W/cm^2" }
    [[protocol]]
    duration = "10 s"
    """
    sc = parse_scenario(film_toml(protocol=protocol, output="1000 s", step="100 s"))
    ds = actsim.simulate(sc)
    # times are absolute (20000 s + 10 us), so the flash length carries round-off of ~1e-12 s / 1e-5 s
    assert float(ds.optical_dose[-1]) == pytest.approx(1e7 * 1e-5, rel=1e-6)
    assert 1 in set(ds.protocol_step.values.tolist())
    assert float(ds.conversion.max()) > 0


def test_too_many_output_times_refused():
    with pytest.raises(actsim.ActsimInputError, match=r"time.output_interval: .* output times"):
        parse_scenario(film_toml(duration="1000 s", output="1 us", step="100 s"))


@pytest.mark.parametrize("change,fragment", [
    (lambda t: t.replace('light = { lamp = "50 mW/cm^2" }', "light = [1]"), "is not a source name"),
    (lambda t: t.replace('light = { lamp = "50 mW/cm^2" }', 'hold = "bend"\nmandrel_radius = "1 um"'), "surface strain of"),
])
def test_more_bad_protocol_input(change, fragment):
    with pytest.raises(actsim.ActsimInputError, match=fragment):
        parse_scenario(change(film_toml()))


def test_nan_in_a_spectrum_table_refused(tmp_path):
    (tmp_path / "eps.csv").write_text("wavelength [nm],epsilon10 [L/(mol*cm)]\n300,100\nnan,5\n400,1\n")
    text = film_toml().replace('reactant_absorptivity = "1.2e4 L/(mol*cm)"', 'reactant_absorptivity = { file = "eps.csv" }')
    with pytest.raises(actsim.ActsimInputError, match=r"eps.csv line 3: column 'wavelength \[nm\]' value 'nan' is not finite"):
        parse_scenario(text, base_dir=tmp_path)


def test_source_table_outside_the_optical_range_refused(tmp_path):
    (tmp_path / "led.csv").write_text("wavelength [nm],relative [1]\n-20,0\n0,1\n20,0\n")
    text = film_toml().replace('wavelength = "365 nm"\nirradiance', 'kind = "table"\nfile = "led.csv"\nirradiance')
    with pytest.raises(actsim.ActsimInputError, match=r"sources\[0\].file: .* outside the allowed range"):
        parse_scenario(text, base_dir=tmp_path)


def test_overrides_keep_the_data_folder(tmp_path, monkeypatch):
    (tmp_path / "eps.csv").write_text("wavelength [nm],epsilon10 [L/(mol*cm)]\n300,100\n400,1\n")
    text = film_toml().replace('reactant_absorptivity = "1.2e4 L/(mol*cm)"', 'reactant_absorptivity = { file = "eps.csv" }')
    sc = parse_scenario(text, base_dir=tmp_path)
    monkeypatch.chdir("/")
    s2 = actsim.scenario.apply_overrides(sc, {"strip.free_length": "12 mm"})
    assert s2.strip.free_length == pytest.approx(12e-3)


def test_angle_needs_a_unit():
    from actsim.units import parse_quantity

    with pytest.raises(actsim.ActsimInputError, match="has no unit"):
        parse_quantity("2", field="report.target_bend_angle", kind="angle")
    assert parse_quantity("2 rad", field="a", kind="angle") == pytest.approx(2.0)
