"""The command line end to end, and every kind of bad input (one line, exit 2, no files)."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

from actsim.cli import main

from conftest import film_toml

ROOT = Path(__file__).resolve().parents[1]


def test_demo_end_to_end(tmp_path, capsys):
    out = tmp_path / "demo"
    assert main(["demo", "-o", str(out)]) == 0
    text = capsys.readouterr().out
    assert "peak bend angle" in text and "blocked force" in text and str(out) in text
    assert "CAUTION" in text
    for f in ("result.nc", "timeseries.csv", "summary.json", "scenario.toml", "figures/bend_angle.png", "figures/profiles.png"):
        assert (out / f).is_file(), f
    ds = xr.load_dataset(out / "result.nc")
    for name, var in list(ds.data_vars.items()) + list(ds.coords.items()):
        assert "units" in var.attrs and "long_name" in var.attrs, name
        if var.dtype.kind == "f":
            assert np.all(np.isfinite(var.values)), name
    for name in ("irradiance", "conversion", "eigenstrain", "stress", "curvature", "bend_angle", "tip_deflection",
                 "blocked_moment", "blocked_force"):
        assert name in ds
    assert ds.attrs["scenario"].startswith("# Invented demo")
    assert "actsim_version" in ds.attrs
    summary = json.loads((out / "summary.json").read_text())
    assert summary["metrics"]["peak_bend_angle"] > 0
    header = (out / "timeseries.csv").read_text().splitlines()[0]
    assert header.startswith("time [s],") and "bend_angle [rad]" in header
    assert not list(out.rglob("*.part"))


def test_every_demo_scenario_runs(tmp_path, capsys):
    for p in sorted((ROOT / "scenarios").glob("*.toml")):
        assert main(["run", str(p), "-o", str(tmp_path / p.stem), "--no-figures"]) == 0, p.name


def test_console_script_help():
    r = subprocess.run([sys.executable, "-m", "actsim.cli", "run", "--help"], capture_output=True, text=True)
    assert r.returncode == 0 and "example:" in r.stdout


def test_parser_imports_no_heavy_library():
    # `actsim --help` and the start of every verb must not pay for the libraries only some verbs use
    # (common practice, no source: import cost on start-up is what a user waits for before any output).
    code = (
        "import sys, actsim.cli\n"
        "parser = actsim.cli.build_parser()\n"
        "parser.parse_args(['sweep', 'x.toml', '--force', 'peak'])\n"
        "print(' '.join(sorted(m for m in ('matplotlib', 'dask', 'distributed', 'xarray', 'pint', 'numba', 'scipy',"
        " 'pandas') if m in sys.modules)))\n"
    )
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert r.stdout.split() == []


def test_demo_imports_neither_pyplot_nor_dask_distributed(tmp_path):
    # Figures are drawn on Figure objects with the Agg canvas, and the NetCDF writer does not ask dask for a
    # scheduler: a run pays for neither import (common practice, no source).
    code = (
        "import sys\n"
        "from actsim.cli import main\n"
        f"assert main(['demo', '-o', {str(tmp_path / 'demo')!r}]) == 0\n"
        "print('IMPORTED', ' '.join(m for m in ('matplotlib.pyplot', 'distributed') if m in sys.modules))\n"
    )
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert r.stdout.splitlines()[-1].split() == ["IMPORTED"]
    assert (tmp_path / "demo" / "figures" / "bend_angle.png").is_file()


def test_sweep_force_choices_match_the_tradeoff_metrics():
    from actsim.commands.sweep import FORCE_CHOICES
    from actsim.study.tradeoff import FORCE_METRICS

    assert FORCE_CHOICES == tuple(FORCE_METRICS)


def write(tmp_path, text, name="s.toml"):
    p = tmp_path / name
    p.write_text(text)
    return p


BASE = film_toml()

BAD_CASES = [
    # (description, transform of the base text, expected fragment of the one-line message)
    ("missing field", lambda t: t.replace('thickness = "20 um"\n', ""), "layers[0].thickness: required field is missing"),
    ("unknown field with suggestion", lambda t: t.replace("photo_strain", "photo_strian"), "did you mean 'photo_strain'"),
    ("bare number", lambda t: t.replace('thickness = "20 um"', "thickness = 20"), "bare number 20 has no unit"),
    ("wrong dimension", lambda t: t.replace('thickness = "20 um"', 'thickness = "20 s"'), "a length is required"),
    ("non-positive thickness", lambda t: t.replace('thickness = "20 um"', 'thickness = "-5 um"'), "layers[0].thickness: '-5 um'"),
    ("quantum yield above 1", lambda t: t.replace("forward_quantum_yield = 0.3", "forward_quantum_yield = 1.3"), "allowed range (>= 0 and <= 1)"),
    ("negative irradiance", lambda t: t.replace('light = { lamp = "50 mW/cm^2" }', 'light = { lamp = "-5 mW/cm^2" }'), "protocol[0].light.lamp"),
    ("zero duration", lambda t: t.replace('duration = "20 s"', 'duration = "0 s"'), "protocol[0].duration"),
    ("unknown source", lambda t: t.replace("light = { lamp =", "light = { lamb ="), "did you mean 'lamp'"),
    ("coarse grid", lambda t: t.replace("max_cell_optical_depth = 20", "max_cell_optical_depth = 0.5"), "use cells >="),
    ("spectrum file missing", lambda t: t.replace('reactant_absorptivity = "1.2e4 L/(mol*cm)"', 'reactant_absorptivity = { file = "nope.csv" }'), "does not exist"),
    ("not TOML", lambda t: t + "\n[[[", "not valid TOML"),
]


@pytest.mark.parametrize("desc,transform,fragment", BAD_CASES, ids=[c[0] for c in BAD_CASES])
def test_bad_input_one_line_exit_2(tmp_path, capsys, desc, transform, fragment):
    scen = write(tmp_path, transform(BASE))
    out = tmp_path / "out"
    assert main(["run", str(scen), "-o", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.count("\n") == 0, err
    assert err.startswith("actsim: error: ")
    assert fragment in err, err
    assert not out.exists()


@pytest.mark.parametrize("content,fragment", [
    ("wavelength [nm],epsilon10 [L/(mol*cm)]\n400,100\n350,200\n", "strictly increasing"),
    ("wavelength [nm],epsilon10 [L/(mol*cm)]\n300,100\n350,-2\n400,1\n", "negative"),
    ("wavelength [nm],epsilon10 [L/(mol*cm)]\n300,100\n350,abc\n", "line 3: column 'epsilon10 [L/(mol*cm)]' is not a number"),
    ("wavelength,epsilon10 [L/(mol*cm)]\n300,100\n350,20\n", "gives no unit"),
])
def test_bad_spectrum_files(tmp_path, capsys, content, fragment):
    (tmp_path / "eps.csv").write_text(content)
    text = BASE.replace('reactant_absorptivity = "1.2e4 L/(mol*cm)"', 'reactant_absorptivity = { file = "eps.csv" }')
    scen = write(tmp_path, text)
    assert main(["run", str(scen), "-o", str(tmp_path / "o")]) == 2
    err = capsys.readouterr().err.strip()
    assert fragment in err and err.count("\n") == 0, err


def test_spectrum_table_outside_light(tmp_path, capsys):
    (tmp_path / "eps.csv").write_text("wavelength [nm],epsilon10 [L/(mol*cm)]\n400,100\n500,200\n")
    text = BASE.replace('reactant_absorptivity = "1.2e4 L/(mol*cm)"', 'reactant_absorptivity = { file = "eps.csv" }')
    assert main(["run", str(write(tmp_path, text)), "-o", str(tmp_path / "o")]) == 2
    assert "covers 400 to 500 nm but light at 365 nm" in capsys.readouterr().err


def test_missing_scenario_file(tmp_path, capsys):
    assert main(["run", str(tmp_path / "none.toml")]) == 2
    assert "does not exist" in capsys.readouterr().err


def test_run_with_set_overrides(tmp_path, capsys):
    out = tmp_path / "thick"
    args = ["run", str(ROOT / "scenarios" / "vent_flap.toml"), "-o", str(out), "--no-figures",
            "--set", "layers[active film].thickness=40 um", "--set", "materials.contracting_film.photo_strain=-0.02"]
    assert main(args) == 0
    ds = xr.load_dataset(out / "result.nc")
    assert float(ds.attrs["thickness"]) == pytest.approx(90e-6)
    assert "-0.02" in (out / "scenario.toml").read_text()
    assert main(["run", str(ROOT / "scenarios" / "vent_flap.toml"), "--set", "strip.free_lenght=3 mm", "-o", str(tmp_path / "x")]) == 2
    assert "did you mean 'free_length'" in capsys.readouterr().err


def test_override_of_a_list_form_light_step():
    # protocol[0].light = ["uv_led"] (each source at its own irradiance) can still be overridden per source
    import actsim
    from actsim.scenario import apply_overrides

    sc = actsim.load_scenario(ROOT / "scenarios" / "gripper_two_colour.toml")
    s2 = apply_overrides(sc, {"protocol[0].light.uv_led": "10 mW/cm^2"})
    assert s2.protocol[0].irradiance[0] == pytest.approx(100.0)


@pytest.mark.parametrize("value,kind,fragment", [
    ("5 degC", "temperature_difference", "offset temperature scale"),
    ("1e-4 1/degC", "thermal_expansion", "offset temperature scale"),
    ("10 W/(m^2*degC)", "heat_transfer_coefficient", "offset temperature scale"),
    ("300", "temperature", "has no unit"),
])
def test_offset_units_and_unitless_strings_refused(value, kind, fragment):
    # degC is an offset scale: right for a temperature, wrong for a difference or inside a compound unit
    from actsim.errors import ActsimInputError
    from actsim.units import parse_quantity

    with pytest.raises(ActsimInputError, match=fragment):
        parse_quantity(value, field="f", kind=kind)
    assert parse_quantity("25 degC", field="f", kind="temperature") == pytest.approx(298.15)
    assert parse_quantity("5 delta_degC", field="f", kind="temperature_difference") == pytest.approx(5.0)


def test_run_with_a_mask_reports_the_fold(tmp_path, capsys):
    # A hinge lit over 2 mm of the 8 mm strip folds by the lit curvature times 2 mm (integral of the
    # curvature along the length; the dark parts stay straight).
    text = (ROOT / "scenarios" / "vent_flap.toml").read_text().replace(
        "[report]", '[mask]\nregions = [ { start = "3 mm", end = "5 mm", transmission = 1.0 } ]\n\n[report]')
    scen = write(tmp_path, text)
    out = tmp_path / "masked"
    assert main(["run", str(scen), "-o", str(out), "--no-figures"]) == 0
    assert "peak fold angle" in capsys.readouterr().out
    record = json.loads((out / "summary.json").read_text())
    assert record["patterned"]["peak_fold_angle"] == pytest.approx(record["metrics"]["peak_bend_angle"] * 2 / 8, rel=1e-9)
    assert (out / "patterned.nc").is_file()


def test_output_path_that_is_a_file_and_uncertainty_without_calibration(tmp_path, capsys):
    afile = tmp_path / "afile"
    afile.write_text("x")
    scen = str(ROOT / "scenarios" / "vent_flap.toml")
    assert main(["run", scen, "-o", str(afile), "--no-figures"]) == 2
    assert "is a file, not a folder" in capsys.readouterr().err
    out = tmp_path / "unc"
    assert main(["run", scen, "-o", str(out), "--uncertainty", "5"]) == 2
    assert "[calibration]" in capsys.readouterr().err
    assert not out.exists()  # refused before anything was written


def test_binary_file_as_scenario(tmp_path, capsys):
    bad = tmp_path / "x.toml"
    bad.write_bytes(b"\x89HDF\r\n\x1a\n\xff\xfe")
    assert main(["run", str(bad)]) == 2
    assert "is not UTF-8 text" in capsys.readouterr().err


def test_demo_copy(tmp_path, capsys):
    dest = tmp_path / "mine"
    assert main(["demo", "--copy", str(dest)]) == 0
    assert (dest / "vent_flap.toml").is_file() and (dest / "data").is_dir()
    assert main(["run", str(dest / "microvalve_spectrum.toml"), "-o", str(tmp_path / "o"), "--no-figures"]) == 0
    assert main(["demo", "--copy", str(dest)]) == 2


def test_no_nan_reaches_a_netcdf_file(tmp_path):
    # Entries that do not exist by definition are written as the CF fill value with a `missing_means`
    # attribute (CF conventions 1.8, sec. 2.5.1); any other NaN stops the write.
    from actsim.errors import ActsimSimulationError
    from actsim.io import MISSING_FILL, write_netcdf

    ok = xr.Dataset({"t": ("d", np.array([1.0, np.nan]), {"units": "s", "missing_means": "never reached"})})
    write_netcdf(ok, tmp_path / "ok.nc")
    import netCDF4

    with netCDF4.Dataset(tmp_path / "ok.nc") as nc:
        nc.set_auto_mask(False)
        assert nc["t"][:].tolist() == [1.0, MISSING_FILL]
    bad = xr.Dataset({"t": ("d", np.array([1.0, np.nan]), {"units": "s"})})
    with pytest.raises(ActsimSimulationError, match="NaN"):
        write_netcdf(bad, tmp_path / "bad.nc")
    assert not (tmp_path / "bad.nc").exists()
