"""Command-line arguments checked before any work or write (issue 12, part B2).

Each bad option of ``actsim sweep`` / ``actsim fit`` goes through ``actsim.cli.main``: exit status 2, exactly
one line on stderr naming the option, nothing written, and no sweep run or allocated first. The limits are
the project's (common practice, no source): --timeout in (0, 1 day], at most 1,000,000 designs per sweep
(``actsim.study.values.MAX_SWEEP_DESIGNS``), at most 10,000 cells per layer.
"""

from __future__ import annotations

import os
import time
import tracemalloc

import pytest

from actsim.cli import main
from actsim.study.values import MAX_SWEEP_DESIGNS

from conftest import film_toml

FIELD = "layers[film].thickness"


@pytest.fixture
def scen(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(film_toml(duration="1 s", step="0.1 s"), encoding="utf-8")
    return path


def refused(capsys, argv, out, *fragments):
    """``main(argv)`` exits 2 with one stderr line holding every fragment, and leaves ``out`` absent or empty."""
    assert main(argv) == 2
    err = capsys.readouterr().err
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    for f in fragments:
        assert f in lines[0], lines[0]
    assert not out.exists() or not any(out.iterdir()), sorted(os.listdir(out))
    return lines[0]


def sweep(scen, *extra, vary=f"{FIELD}=10 um,20 um"):
    return ["sweep", str(scen), "--vary", vary, "--no-progress", "-o", str(scen.parent / "out"), *extra]


@pytest.mark.parametrize("extra, fragments", [
    (("--timeout", "-1"), ("--timeout: -1 s is outside the allowed range",)),
    (("--timeout", "nan"), ("--timeout: nan s",)),
    (("--timeout", "inf"), ("--timeout: inf s",)),
    (("--timeout", "0"), ("--timeout: 0 s",)),
    (("--recommend", FIELD, "--within", "-5 s"), ("--within: '-5 s' is outside the allowed range (> 0 s",)),
    (("--recommend", FIELD, "--within", "nan s"), ("--within",)),
    (("--recommend", FIELD), ("--recommend: give the time limit with --within",)),
    (("--recommend", "layers[film].nope", "--within", "5 s"), ("--recommend: 'layers[film].nope' is not a swept field",)),
    (("--pareto",), ("--pareto: needs a target bend angle",)),
    (("--target-angle", "inf deg"), ("--target-angle",)),
    (("--seed", "-1"), ("--seed: -1 is outside the allowed range",)),
    (("--chunk-size", "0"), ("--chunk-size: 0",)),
    (("--threads", "0"), ("--threads: 0",)),
    (("--sample", "lhs", "--samples", "0"), ("--samples: 0 is outside the allowed range",)),
])
def test_sweep_options_refused_before_the_sweep(scen, capsys, extra, fragments):
    refused(capsys, sweep(scen, *extra), scen.parent / "out", *fragments)


def test_huge_grid_refused_before_allocation(scen, capsys):
    tracemalloc.start()
    t0 = time.perf_counter()
    refused(capsys, sweep(scen, vary=f"{FIELD}=lin(1 um, 2 um, 1000000000)"), scen.parent / "out",
            f"{FIELD}: 1000000000 points", f"<= {MAX_SWEEP_DESIGNS}")
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    assert peak < 50 * 2**20 and time.perf_counter() - t0 < 10  # 7.5 GiB before this check existed


def test_grid_product_refused_even_with_yes(scen, capsys):
    vary2 = ["--vary", "strip.free_length=lin(5 mm, 10 mm, 2000)", "--yes"]
    refused(capsys, sweep(scen, *vary2, vary=f"{FIELD}=lin(1 um, 2 um, 1000)"), scen.parent / "out",
            "the grid has 2e+06 designs (1000 x 2000)", f"more than the {MAX_SWEEP_DESIGNS} allowed")


def test_large_grid_still_asks_for_yes(scen, capsys):
    vary2 = ["--vary", "strip.free_length=lin(5 mm, 10 mm, 300)"]
    refused(capsys, sweep(scen, *vary2, vary=f"{FIELD}=lin(1 um, 2 um, 300)"), scen.parent / "out",
            "90000 designs (300 x 300)", "pass --yes")


def test_huge_sample_refused_with_yes(scen, capsys):
    tracemalloc.start()
    refused(capsys, sweep(scen, "--sample", "sobol", "--samples", "1000000000000", "--yes",
                          vary=f"{FIELD}=lin(1 um, 2 um)"), scen.parent / "out",
            "--samples: 1000000000000 is outside the allowed range", str(MAX_SWEEP_DESIGNS))
    assert tracemalloc.get_traced_memory()[1] < 50 * 2**20
    tracemalloc.stop()


def test_long_value_list_refused(scen, capsys):
    values = ",".join(["10 um"] * (MAX_SWEEP_DESIGNS + 1))
    refused(capsys, sweep(scen, vary=f"{FIELD}={values}"), scen.parent / "out", "values is more than the")


def test_non_finite_range_end_refused(scen, capsys):
    refused(capsys, sweep(scen, vary=f"{FIELD}=lin(1 um, 1e999 um, 3)"), scen.parent / "out", "must be finite")


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs FIFOs")
def test_every_swept_data_file_checked(tmp_path, capsys):
    spectrum = "wavelength [nm], epsilon10 [L/(mol*cm)]\n300, 1.2e4\n450, 1.2e4\n"
    (tmp_path / "eps.csv").write_text(spectrum)
    os.mkfifo(tmp_path / "pipe.csv")
    text = film_toml(duration="1 s", step="0.1 s").replace(
        'reactant_absorptivity = "1.2e4 L/(mol*cm)"', 'reactant_absorptivity = { file = "eps.csv" }')
    scen = tmp_path / "s.toml"
    scen.write_text(text)
    field = "materials.film.reactant_absorptivity.file"
    many = ",".join(["eps.csv"] * 80)  # more values than the designs built before the sweep
    for bad, fragment in (("pipe.csv", "'pipe.csv' is not a regular file"),
                          ("/dev/zero", "system file under /proc, /sys or /dev"),
                          ("../x.csv", "outside the scenario's folder")):
        refused(capsys, sweep(scen, vary=f"{field}={many},{bad}"), tmp_path / "out", field, fragment)


def test_cells_hint_names_the_cap(tmp_path, capsys):
    path = tmp_path / "s.toml"
    path.write_text(film_toml(cells=1, eps_a="5e5 L/(mol*cm)", thickness="5 mm"))  # needs about 14,400 cells
    line = refused(capsys, ["run", str(path), "-o", str(tmp_path / "out")], tmp_path / "out",
                   "layers[0].cells", "more than the 10000 allowed per layer")
    assert "use cells >=" not in line
    path.write_text(film_toml(cells=1, eps_a="1e5 L/(mol*cm)"))  # within the cap: the number needed
    refused(capsys, ["run", str(path), "-o", str(tmp_path / "out")], tmp_path / "out", "use cells >= ")


@pytest.mark.parametrize("argv, fragment", [
    (["fit", "spectra", "a.csv", "b.csv", "--conversion", "1.5"], "--conversion: 1.5 is outside"),
    (["fit", "spectra", "a.csv", "b.csv", "--absorbance-matrix", "nan"], "--absorbance-matrix: nan"),
    (["fit", "bend", "plan.toml", "--max-iterations", "0"], "--max-iterations: 0 is outside"),
    (["fit", "tensile", "x.csv", "--confidence", "nan"], "--confidence: nan"),
    (["fit", "tensile", "/dev/zero"], "system file"),
    (["fit", "tensile", "missing.csv"], "does not exist"),
])
def test_fit_options_refused(tmp_path, capsys, argv, fragment, monkeypatch):
    monkeypatch.chdir(tmp_path)
    refused(capsys, [*argv, "-o", str(tmp_path / "out")], tmp_path / "out", fragment)


@pytest.mark.parametrize("vary, extra", [
    (f"{FIELD}=lin(-1e308 um, 1e308 um, 3)", ()),
    (f"{FIELD}=lin(-1e308 um, 1e308 um)", ("--sample", "lhs", "--samples", "4")),
])
def test_no_warning_before_the_error_line(scen, capsys, vary, extra):
    # numpy's overflow RuntimeWarning used to print before the error line
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error")  # a warning would fail the run instead of printing
        refused(capsys, sweep(scen, *extra, vary=vary), scen.parent / "out", "spans more than floating point numbers")
