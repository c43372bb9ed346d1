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
