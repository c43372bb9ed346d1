"""Sweep designs built by patching (actsim.study.designs) are bitwise the designs built by re-parsing.

Reference: the general path of the project itself, ``build_problem(apply_overrides(base, {field: value}))``,
which re-writes and re-parses the whole scenario TOML; the patched path must give the same arrays bit for bit
(every stage object, every field, same shapes and dtypes) and the same one-line error for an invalid value.
"""

from __future__ import annotations

import textwrap
import warnings

import numpy as np
import pytest

from actsim.errors import ActsimInputError, ActsimWarning
from actsim.scenario import apply_overrides, parse_scenario
from actsim.solver import build_problem
from actsim.study import designs
from actsim.study.designs import DesignBuilder, problems_equal, si_reader


def _text(*, time=True, scheme="tr-bdf2", step="0.05 s"):
    """Two layers, heat, a line source and a Gaussian source, three protocol steps (list and table light forms)."""
    text = f"""
    title = "patched designs"
    [strip]
    free_length = "9 mm"
    width = "2 mm"
    [heat]
    ambient_temperature = "25 degC"
    scheme = "{scheme}"
    [materials.passive]
    modulus = "2.5 GPa"
    poisson_ratio = 0.38
    refractive_index = 1.58
    background_absorption = "20 1/m"
    thermal_expansion = "6e-5 1/K"
    [materials.film]
    modulus = "1.3 GPa"
    product_modulus = "1.0 GPa"
    poisson_ratio = 0.42
    refractive_index = 1.55
    chromophore_concentration = "0.05 mol/L"
    photo_strain = -0.02
    reactant_absorptivity = {{ bands = [ {{ centre = "360 nm", fwhm = "70 nm", peak = "6000 L/(mol*cm)" }} ] }}
    product_absorptivity = "150 L/(mol*cm)"
    forward_quantum_yield = 0.25
    backward_quantum_yield = 0.05
    thermal_back_rate = "0.005 1/s"
    thermal_expansion = "1e-4 1/K"
    [[layers]]
    name = "passive"
    material = "passive"
    thickness = "25 um"
    cells = 6
    [[layers]]
    name = "active"
    material = "film"
    thickness = "60 um"
    cells = 30
    initial_conversion = 0.05
    [[sources]]
    name = "uv"
    wavelength = "365 nm"
    irradiance = "8 mW/cm^2"
    [[sources]]
    name = "blue"
    kind = "gaussian"
    wavelength = "455 nm"
    fwhm = "20 nm"
    bands = 5
    irradiance = "30 mW/cm^2"
    [[protocol]]
    label = "both"
    duration = "4 s"
    light = {{ uv = "10 mW/cm^2", blue = "on" }}
    [[protocol]]
    label = "dark"
    duration = "3 s"
    light = {{}}
    [[protocol]]
    label = "blue"
    duration = "2 s"
    light = ["blue"]
    """
    if time:
        text += """
    [time]
    output_interval = "0.5 s"
    step = "{step}"
    """.format(step=step)
    return textwrap.dedent(text)


#: Field -> values as written, one or more per kind of field the builder patches.
FIELDS = {
    "protocol[0].light.uv": ["12 mW/cm^2", "0.5 W/m^2", "0 mW/cm^2", "on"],
    "protocol[1].light.uv": ["7 mW/cm^2"],  # a source switched on in a step that had it off
    "protocol[2].light.blue": ["3 mW/cm^2"],  # the list form of the light table
    "protocol[1].duration": ["2.5 s", "1 min", "0.37 s"],
    "protocol[-1].duration": ["7 s"],
    "layers[active].thickness": ["5 um", "63.3 um", "0.2 mm"],
    "layers[0].thickness": ["11 um"],
    "layers[0].cells": [3, 17],
    "layers[active].initial_conversion": [0.0, 0.3],
    "strip.free_length": ["12 mm"],
    "strip.width": ["0.5 cm"],
    "sources[uv].wavelength": ["340 nm", "0.4 um"],
    "sources[blue].wavelength": ["470 nm"],
    "materials.film.modulus": ["2.2 GPa", "900 MPa"],
    "materials.passive.modulus": ["3 GPa"],  # no product_modulus in the file: it follows the modulus
    "materials.film.product_modulus": ["0.7 GPa"],
    "materials.film.poisson_ratio": [0.3, "25 %"],
    "materials.film.refractive_index": [1.7],
    "materials.passive.refractive_index": [1.33],
    "materials.film.chromophore_concentration": ["0.02 mol/L", "80 mol/m^3"],
    "materials.film.photo_strain": [-0.03],
    "materials.film.thermal_back_rate": ["0.01 1/s", "0.6 1/min"],
    "materials.film.reactive_fraction": [0.6],
    "materials.film.conductivity": ["0.5 W/(m*K)"],
    "materials.passive.density": ["1.4 g/cm^3"],
    "materials.film.specific_heat": ["1.8 kJ/(kg*K)"],
    "materials.film.heat_fraction": [0.8],
    "materials.film.thermal_expansion": ["2e-4 1/K"],
    "materials.film.back_reaction_activation_energy": ["60 kJ/mol"],
    "materials.film.network_modulus": ["50 MPa"],
    "materials.film.reactant_absorptivity": ["3000 L/(mol*cm)"],
    "materials.film.product_absorptivity": ["0 L/(mol*cm)"],
    "materials.film.forward_quantum_yield": [0.4],
    "materials.film.backward_quantum_yield": [0.1],
    "materials.passive.background_absorption": ["1 1/cm"],
}
CASES = [(path, v) for path, vals in FIELDS.items() for v in vals]


def _assert_same(base, overrides, builder):
    """The builder's design equals the re-parsed one; or both refuse it with the same one-line error."""
    ref_sc = apply_overrides(base, overrides)
    try:
        ref = build_problem(ref_sc)
    except ActsimInputError as exc:  # e.g. a Crank-Nicolson step too long for the thinner cells
        with pytest.raises(ActsimInputError) as got:
            builder.build(overrides)
        assert str(got.value) == str(exc)
        return False
    problem, sc = builder.build(overrides)
    assert problems_equal(problem, ref) is None, problems_equal(problem, ref)
    assert sc.strip == ref_sc.strip and sc.heat == ref_sc.heat
    assert (sc.output_interval, sc.time_step, sc.duration) == (ref_sc.output_interval, ref_sc.time_step, ref_sc.duration)
    return True


@pytest.fixture(scope="module", params=[dict(time=True), dict(time=False), dict(scheme="crank-nicolson", step="1 ms")],
                ids=["time-given", "time-default", "crank-nicolson"])
def base(request):
    return parse_scenario(_text(**request.param))


@pytest.mark.parametrize("path,value", CASES)
def test_patched_design_is_bitwise_the_reparsed_one(base, path, value):
    builder = DesignBuilder(base, [path], check=False)
    assert builder.mapped[path], f"{path} should be built without re-parsing"
    _assert_same(base, {path: value}, builder)


def test_duration_keeps_a_fixed_step_and_its_crank_nicolson_limit():
    """With a fixed [time] step, a longer protocol step keeps the step: the Crank-Nicolson limit still holds."""
    base = apply_overrides(parse_scenario(_text(scheme="crank-nicolson", step="1 ms")),
                           {"materials.film.conductivity": "0.02 W/(m*K)", "materials.passive.conductivity": "0.05 W/(m*K)"})
    path = "protocol[1].duration"
    builder = DesignBuilder(base, [path], check=False)
    assert builder.mapped[path]
    assert _assert_same(base, {path: "1 s"}, builder)
    assert _assert_same(base, {path: "1000 s"}, builder)


def test_base_that_is_not_a_valid_design():
    """A base refused by a stage (here the optical depth per cell) can still be swept to valid values."""
    base = parse_scenario(_text().replace('thickness = "60 um"', 'thickness = "3 mm"'))
    path = "layers[active].thickness"
    builder = DesignBuilder(base, [path])
    assert _assert_same(base, {path: "50 um"}, builder)


def test_several_fields_at_once(base):
    ov = {"layers[active].thickness": "40 um", "sources[uv].wavelength": "380 nm", "protocol[0].light.uv": "20 mW/cm^2",
          "protocol[0].duration": "3 s", "materials.film.modulus": "1.1 GPa", "materials.film.product_modulus": "0.8 GPa",
          "layers[passive].cells": 9, "strip.width": "3 mm"}
    builder = DesignBuilder(base, list(ov), check=False)
    assert all(builder.mapped.values())
    _assert_same(base, ov, builder)
    # many designs through one builder: each equals its re-parsed self (no state leaks between designs)
    for t in ("7 um", "150 um", "33.3 um"):
        _assert_same(base, dict(ov, **{"layers[active].thickness": t}), builder)


@pytest.mark.parametrize("path,value", [
    ("layers[active].thickness", "-5 um"), ("layers[active].thickness", "0.2 m"), ("layers[active].thickness", "5 s"),
    ("layers[active].thickness", "5 mm"), ("layers[active].thickness", 5), ("layers[0].cells", 0),
    ("layers[0].cells", 2.5), ("protocol[0].light.uv", "-1 mW/cm^2"), ("protocol[0].light.uv", "off"),
    ("sources[uv].wavelength", "50 nm"), ("sources[blue].wavelength", "30 nm"), ("materials.film.poisson_ratio", 0.5),
    ("materials.film.reactive_fraction", 0.01), ("materials.film.modulus", "0 GPa"),
    ("materials.film.chromophore_concentration", "0 mol/L"), ("protocol[1].duration", "0 s"),
    ("protocol[1].duration", "1e9 s"), ("materials.film.forward_quantum_yield", 1.5),
    ("layers[active].initial_conversion", 1.2),
])
def test_invalid_value_gives_the_parser_error(base, path, value):
    builder = DesignBuilder(base, [path], check=False)
    try:
        ref = build_problem(apply_overrides(base, {path: value}))
    except ActsimInputError as exc:
        with pytest.raises(ActsimInputError) as got:
            builder.build({path: value})
        assert str(got.value) == str(exc)
    else:  # a value the scenario accepts (e.g. a thick layer on this grid): the same design
        assert problems_equal(builder.build({path: value})[0], ref) is None


def test_unmapped_fields_go_the_general_way(base):
    for path, value in (("optics.front_reflection", False), ("heat.top_heat_transfer", "20 W/(m^2*K)"),
                        ("sources[uv].irradiance", "3 mW/cm^2"), ("materials.film.temperature", "1 K")):
        builder = DesignBuilder(base, [path])
        assert not builder.mapped[path]
        try:
            ref = build_problem(apply_overrides(base, {path: value}))
        except ActsimInputError as exc:
            with pytest.raises(ActsimInputError, match=str(exc)[:30].replace("[", r"\[").replace("]", r"\]")):
                builder.build({path: value})
        else:
            assert problems_equal(builder.build({path: value})[0], ref) is None


def test_a_wrong_field_map_is_caught_by_the_first_design_check(base, monkeypatch):
    """If a stage reads a field the map does not know about, the first design disagrees: warn, then re-parse."""
    entry = list(designs._MATERIAL_FIELDS["modulus"])
    entry[1] = {"light"}  # pretend the modulus fed only the optics: the material stage would not be rebuilt
    monkeypatch.setitem(designs._MATERIAL_FIELDS, "modulus", tuple(entry))
    path = "materials.film.modulus"
    builder = DesignBuilder(base, [path])
    with pytest.warns(ActsimWarning, match="differs from the re-parsed one in material"):
        first, _ = builder.build({path: "2 GPa"})
    assert problems_equal(first, build_problem(apply_overrides(base, {path: "2 GPa"}))) is None
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        later, _ = builder.build({path: "3 GPa"})
    assert problems_equal(later, build_problem(apply_overrides(base, {path: "3 GPa"}))) is None


def test_unit_factor_read_is_the_full_parse():
    """A number times the factor of its unit, parsed once, is bitwise the full pint parse of the string."""
    from actsim.units import parse_quantity

    read = si_reader("length", lo=0.0, lo_open=True)
    for v in np.linspace(5.0, 200.0, 397):
        text = f"{float(v)!r} um"
        assert read(text) == parse_quantity(text, field="x", kind="length")
    read = si_reader("irradiance", lo=0.0)
    for v in np.geomspace(0.01, 300.0, 101):
        text = f"{float(v)!r} mW/cm^2"
        assert read(text) == parse_quantity(text, field="x", kind="irradiance")
    read_t = si_reader("temperature")
    assert read_t("25 degC") == parse_quantity("25 degC", field="x", kind="temperature")


def test_si_values_of_an_axis_are_those_of_si_of():
    """The swept coordinates in SI: each unit parsed once, bitwise the per-value conversion (and words, plain numbers)."""
    from actsim.study.values import si_of, si_values

    vals = [f"{float(v)!r} um" for v in np.linspace(5.0, 200.0, 301)]
    vals += ["10 mW/cm^2", "0.25 W/cm^2", "30 deg", "25 degC", "3 %", 0.3, 7, "word", "1e-3 mol/L", "5um",
             "1.5 L/(mol*cm)", "2 GPa"]
    assert si_values(vals) == [si_of(v) for v in vals]


def test_a_missing_range_check_is_caught_by_the_first_design_check(base, monkeypatch):
    """A reader that forgot the parser's range lets a bad first design through: warn, give the parser's error."""
    plain = designs.si_reader
    monkeypatch.setattr(designs, "si_reader", lambda kind, **kw: plain(kind))  # no lo/hi
    path = "materials.film.poisson_ratio"
    builder = DesignBuilder(base, [path])
    with pytest.warns(ActsimWarning, match="the parser refuses it"):
        with pytest.raises(ActsimInputError, match="poisson_ratio: 0.6 is outside the allowed range"):
            builder.build({path: 0.6})
    with pytest.raises(ActsimInputError, match="poisson_ratio: 0.7 is outside the allowed range"):
        builder.build({path: 0.7})  # now the general way
