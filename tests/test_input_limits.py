"""Every scenario input is bounded before work or memory is spent; every refusal is one line naming the field.

The cases are those of issue 12 ("Tracebacks", "Non-finite results", "Unbounded work") that concern the
scenario: each gave a traceback, a non-finite result or minutes of work before these limits.
"""

from __future__ import annotations

import math
import re
import warnings
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import actsim
from actsim.cli import main
from actsim.errors import ActsimError, ActsimInputError, ActsimSimulationError
from actsim.scenario import parse_scenario
from actsim.scenario.limits import LIMITS, SIZE_LIMITS, WORK_LIMIT, limits_markdown, nesting_depth

DOCS = Path(__file__).resolve().parent.parent / "docs" / "scenario.md"


def scenario_text(*, heat=False, time='output_interval = "0.25 s"\nstep = "0.05 s"', strip=None, film=None,
                  layer=None, source=None, step=None):
    """A small active film under one Gaussian source; each keyword replaces one line or section."""
    heat_section = '[heat]\nambient_temperature = "20 degC"\n' if heat else ""
    return f"""
title = "limits"
[strip]
free_length = {strip or '"8 mm"'}
width = "2 mm"
{heat_section}
[materials.film]
modulus = {film or '"1 GPa"'}
chromophore_concentration = "0.5 mol/L"
photo_strain = -0.02
reactant_absorptivity = "1e4 L/(mol*cm)"
forward_quantum_yield = 0.3

[[layers]]
material = "film"
thickness = {layer or '"20 um"'}
cells = 40

[[sources]]
name = "lamp"
kind = "gaussian"
wavelength = "365 nm"
fwhm = {source or '"10 nm"'}
irradiance = "50 mW/cm^2"

[[protocol]]
duration = {step or '"2 s"'}
light = ["lamp"]

[time]
{time}
"""


def one_line_error(exc) -> str:
    text = str(exc)
    assert "\n" not in text, text
    return text


# ---------------------------------------------------------------------------------------------- issue cases
# (the scenario text, the field the one-line error must name); before the limits: OverflowError,
# IndexError, ZeroDivisionError, non-finite outputs or a peak temperature of 1e96 degC
ISSUE_CASES = [
    (dict(step='"1e308 s"'), "protocol[0].duration"),
    (dict(time='output_interval = "1e-320 s"'), "time.output_interval"),
    (dict(time='step = "5e-324 s"'), "time.step"),
    (dict(step='"1e308 s"', time=""), "protocol[0].duration"),
    (dict(film='"1e-300 GPa"'), "materials.film.modulus"),
    (dict(layer='"1e-30 um"', heat=True), "layers[0].thickness"),
    (dict(strip='"1e308 mm"'), "strip.free_length"),
    (dict(source='"1e-30 nm"'), "sources[0].fwhm"),
]


@pytest.mark.parametrize("change,field", ISSUE_CASES)
def test_issue_cases_are_one_line_naming_the_field(change, field):
    with pytest.raises(ActsimInputError) as exc:
        parse_scenario(scenario_text(**change))
    assert one_line_error(exc.value).startswith(field + ":")


def test_huge_irradiance_with_heat_refused():
    text = scenario_text(heat=True).replace('irradiance = "50 mW/cm^2"', 'irradiance = "1e100 W/m^2"')
    with pytest.raises(ActsimInputError, match=r"^sources\[0\]\.irradiance: .*1e\+07 W/m\^2\)$"):
        parse_scenario(text)


def test_huge_ambient_temperature_refused():
    text = scenario_text(heat=True).replace('ambient_temperature = "20 degC"', 'ambient_temperature = "1e308 degC"')
    with pytest.raises(ActsimInputError, match=r"^heat\.ambient_temperature: .*<= 2000 K\)$"):
        parse_scenario(text)


def test_refusal_names_value_unit_and_range():
    with pytest.raises(ActsimInputError) as exc:
        parse_scenario(scenario_text(layer='"2 cm"'))
    assert str(exc.value) == ("layers[0].thickness: '2 cm' (= 0.02 m) is outside the allowed range "
                              "(>= 1e-09 and <= 0.01 m)")


@pytest.mark.parametrize("opener,closer", [("[", "]"), ("{a = ", "}")])
def test_deep_nesting_is_one_line(opener, closer):
    for depth in (30, 1000, 5000):  # 1000 deep raised RecursionError in the TOML reader
        text = scenario_text() + "\n[checks]\nx = " + opener * depth + "1" + closer * depth + "\n"
        with pytest.raises(ActsimInputError, match=r"nested too deeply \(allowed <= 24 levels\)$") as exc:
            parse_scenario(text)
        one_line_error(exc.value)


def test_nesting_depth_is_iterative():
    deep = 1
    for _ in range(5000):
        deep = [deep]
    assert nesting_depth(deep) == 5000  # no RecursionError
    assert nesting_depth({"a": [1, {"b": 2}]}) == 3
    assert nesting_depth(deep, stop=10) == 11


def test_large_scenario_text_refused(tmp_path):
    text = scenario_text() + "#" * SIZE_LIMITS["file_bytes"] + "\n"
    with pytest.raises(ActsimInputError, match=r"longer than 1000000 bytes"):
        parse_scenario(text)
    big = tmp_path / "big.toml"
    big.write_text(text)
    with pytest.raises(ActsimInputError, match=r"^scenario: '.*big.toml' is larger than 1000000 bytes"):
        actsim.load_scenario(big)


def test_many_sources_refused_quickly():
    # 100,000 sources took over 600 s (a quadratic duplicate-name check); the count is refused first
    more = "".join(f'\n[[sources]]\nname = "s{i}"\nwavelength = "365 nm"\nirradiance = "1 W/m^2"\n'
                   for i in range(SIZE_LIMITS["sources"]))
    text = scenario_text().replace("[[protocol]]", more + "\n[[protocol]]")
    with pytest.raises(ActsimInputError, match=r"^sources: 101 sources is too many \(allowed <= 100\)$"):
        parse_scenario(text)


def test_many_protocol_steps_refused_before_parsing_them():
    steps = '[[protocol]]\nduration = "1 s"\n' * (SIZE_LIMITS["protocol_steps"] + 1)
    text = scenario_text().split("[[protocol]]")[0] + steps
    with pytest.raises(ActsimInputError, match=r"^protocol: 10001 protocol steps is too many"):
        parse_scenario(text)


def test_many_fixed_steps_refused_at_parse():
    # a protocol of 1e6 steps and more was refused only after 70 s and 880 MB; now before allocation
    with pytest.raises(ActsimInputError, match=r"^time.step: 1e-06 s gives \d+ steps .*allowed <= 5e\+06"):
        parse_scenario(scenario_text(step='"100 s"', time='output_interval = "1 s"\nstep = "1 us"'))


def test_long_protocol_in_all_refused():
    text = scenario_text(step='"1e7 s"', time="") + '[[protocol]]\nduration = "1 s"\n'
    with pytest.raises(ActsimInputError, match=r"^protocol: the steps last 1e\+07 s in all .*allowed <= 1e\+07 s\)$"):
        parse_scenario(text)


def large_work_text():
    # 10000 cells x 2e5 fixed steps = 2e9 cell-steps and more: above WORK_LIMIT
    return scenario_text(step='"20 s"', time='output_interval = "1 s"\nstep = "0.1 ms"').replace("cells = 40", "cells = 10000")


def test_large_work_refused_unless_allowed(monkeypatch):
    sc = parse_scenario(large_work_text())
    with pytest.raises(ActsimInputError, match=r"^time.step: .* cell-steps \(allowed <= 2e\+09 without asking") as exc:
        actsim.simulate(sc)
    one_line_error(exc.value)
    # allowed: the run starts (stopped here at the first stage, so the test stays fast)
    import actsim.solver as solver

    def stop(scenario):
        raise RuntimeError("started")

    monkeypatch.setattr(solver, "build_problem", stop)
    with pytest.raises(RuntimeError, match="started"):
        actsim.simulate(sc, allow_large=True)
    assert WORK_LIMIT == 2e9


def run_cli(capsys, tmp_path, text, *extra):
    path = tmp_path / "s.toml"
    path.write_text(text)
    out = tmp_path / "out"
    code = main(["run", str(path), "-o", str(out), "--no-figures", *extra])
    return code, capsys.readouterr(), out


@pytest.mark.parametrize("change,field", ISSUE_CASES[:4] + ISSUE_CASES[6:7])
def test_cli_exit_2_with_one_line(capsys, tmp_path, change, field):
    code, cap, out = run_cli(capsys, tmp_path, scenario_text(**change))
    lines = cap.err.splitlines()
    assert code == 2 and len(lines) == 1 and lines[0].startswith(f"actsim: error: {field}:")
    assert not out.exists()


def test_cli_large_work_needs_yes(capsys, tmp_path, monkeypatch):
    code, cap, out = run_cli(capsys, tmp_path, large_work_text())
    lines = cap.err.splitlines()
    assert code == 2 and len(lines) == 1 and "actsim run --yes" in lines[0] and not out.exists()
    import actsim.solver as solver

    seen = {}

    def fake_check(scenario, *, allow_large=False):
        seen["allow_large"] = allow_large
        raise ActsimInputError("time.step: stopped here")

    monkeypatch.setattr(solver, "check_work", fake_check)
    run_cli(capsys, tmp_path, large_work_text(), "--yes")
    assert seen == {"allow_large": True}


# -------------------------------------------------------------------------------------- non-finite results
def test_non_finite_kernel_state_names_fields():
    from actsim.solver import build_problem, run_kernel

    p = build_problem(parse_scenario(scenario_text()))
    p.photo.x0[:] = np.nan  # an impossible initial state: the conversion is non-finite
    with pytest.raises(ActsimSimulationError) as exc:
        run_kernel(p)
    text = one_line_error(exc.value)
    assert "non-finite conversion" in text and "sources[].irradiance" in text and "t = " in text


def test_non_finite_strip_response_names_fields(monkeypatch):
    import actsim.solver as solver

    sc = parse_scenario(scenario_text())
    monkeypatch.setattr(solver.mechanics, "blocked_tip_force", lambda **kw: np.full(kw["curvature"].shape, np.inf))
    with pytest.raises(ActsimSimulationError) as exc:
        actsim.simulate(sc)
    assert "strip.free_length" in one_line_error(exc.value)


def hot_text():
    # 1 kW/cm^2 on an insulated film: it would heat by about 1e5 K/s (printed "1.3e+96 degC" at 1e100 W/m^2)
    return scenario_text(heat=True).replace('irradiance = "50 mW/cm^2"', 'irradiance = "1e7 W/m^2"').replace(
        'ambient_temperature = "20 degC"', 'ambient_temperature = "20 degC"\ntop_heat_transfer = "0 W/(m^2*K)"\n'
        'bottom_heat_transfer = "0 W/(m^2*K)"')


def test_a_strip_heated_beyond_the_models_is_an_error():
    with pytest.raises(ActsimSimulationError, match=r"^the strip reaches .* K, above the 2000 K") as exc:
        actsim.simulate(parse_scenario(hot_text()))
    assert "sources[].irradiance" in one_line_error(exc.value)


def test_cli_simulation_error_is_one_line_exit_3(capsys, tmp_path):
    code, cap, out = run_cli(capsys, tmp_path, hot_text())
    lines = cap.err.splitlines()
    assert code == 3 and len(lines) == 1 and "sources[].irradiance" in lines[0]  # no RuntimeWarning before it


# ----------------------------------------------------------------------- random in-range values (property)
def _in_range(key, frac):
    """A value inside LIMITS[key], log-uniform (frac in [0, 1]) between the limits (or 1e-3 x hi and hi)."""
    lim = LIMITS[key]
    lo = lim.lo if lim.lo > 0 else lim.hi * 1e-3
    return math.exp(math.log(lo) + frac * (math.log(lim.hi) - math.log(lo)))


unit = st.floats(0.0, 1.0)


@settings(max_examples=25, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(t=unit, e=unit, irr=unit, length=unit, fwhm=unit, heat=st.booleans())
def test_in_range_values_run_finite_or_one_line(t, e, irr, length, fwhm, heat):
    text = scenario_text(
        heat=heat, layer=f'"{_in_range("layers[].thickness", t)!r} m"', film=f'"{_in_range("materials.NAME.modulus", e)!r} Pa"',
        strip=f'"{_in_range("strip.free_length", length)!r} m"', source=f'"{min(_in_range("sources[].fwhm", fwhm), 150e-9)!r} m"',
    ).replace('irradiance = "50 mW/cm^2"', f'irradiance = "{_in_range("sources[].irradiance", irr)!r} W/m^2"')
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)  # no floating-point warning escapes a run
        try:
            ds = actsim.simulate(parse_scenario(text))
        except ActsimError as exc:
            assert re.match(r"^[\w.\[\]]+: ", one_line_error(exc)) or "non-finite" in str(exc)
            return
    for name, var in ds.data_vars.items():
        if var.dtype.kind == "f":
            assert np.all(np.isfinite(var.values)), name


# ------------------------------------------------------------------------------------------ documentation
def test_docs_table_is_the_code_table():
    text = DOCS.read_text(encoding="utf-8")
    start = text.index("<!-- limits table:")
    start = text.index("\n", start) + 1
    end = text.index("<!-- end of limits table -->")
    assert text[start:end].strip() == limits_markdown().strip(), "regenerate: python -m actsim.scenario.limits"


def test_every_numeric_field_of_the_parser_has_a_limit():
    # every range the scenario parser checks comes from LIMITS (no literal bounds left in the parser)
    src = (Path(actsim.__file__).parent / "scenario" / "parse.py").read_text(encoding="utf-8")
    literal = [ln for ln in src.splitlines() if re.search(r"\b(lo|hi)=(-?[\d.]+)", ln) and "lo=1," not in ln]
    assert literal == []
    for key, lim in LIMITS.items():
        assert lim.lo < lim.hi and math.isfinite(lim.lo) and math.isfinite(lim.hi) and lim.reason, key


def test_optics_cell_cap_is_the_scenario_limit():
    from actsim.optics import MAX_LAYER_CELLS

    assert MAX_LAYER_CELLS == LIMITS["layers[].cells"].hi


def test_overlong_quantity_text_is_refused_before_the_unit_parser():
    # a quantity is a number and a unit; 300,000 characters once kept the unit parser busy for 20 s (issue 12)
    import time

    from actsim.units import MAX_QUANTITY_CHARS, parse_dimensionless, parse_quantity

    text = "1" * 300_000 + " um"
    t0 = time.perf_counter()
    with pytest.raises(ActsimInputError, match=rf"layers\[0\].thickness: a quantity of 300003 characters is too long "
                                               rf"\(allowed <= {MAX_QUANTITY_CHARS}"):
        parse_quantity(text, field="layers[0].thickness", kind="length")
    with pytest.raises(ActsimInputError, match="too long"):
        parse_dimensionless("1" * 300_000 + " %", field="x")
    assert time.perf_counter() - t0 < 1.0


def test_a_line_break_in_user_text_stays_on_one_line():
    err = ActsimInputError("sources[0].face: 'top\nbottom' is not one of 'top', 'bottom'")
    assert "\n" not in str(err) and "top\\nbottom" in str(err)
