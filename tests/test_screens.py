"""What each verb prints: fits the screen (100 columns, or COLUMNS), answers first in display units, one caution.

The rules are the project's screen rules (docs and issue 13; common practice, no source): no line wider
than the screen, the winner of a sweep and the verdict of a check first, engineering units (deg, degC,
mN, um, nm, mW/cm^2), notes once, the caution once per command and only where the work lights, heats or
loads something.
"""

from __future__ import annotations

import csv
import re
import socket
import subprocess
import sys
from pathlib import Path

import pytest

from actsim.cautions import CAUTION
from actsim.cli import build_parser, main
from actsim.errors import ActsimInputError

sys.path.insert(0, str(Path(__file__).parent))
from conftest import film_toml  # noqa: E402
from test_check_cli import PASSING, write  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
CAUTION_HEAD = CAUTION.split(":")[0] + ":"  # "CAUTION:"


def _tiny(**kw):
    return film_toml(cells=6, output="0.5 s", step="0.25 s", duration="6 s",
                     substrate={"modulus": "2 GPa", "thickness": "30 um", "cells": 3}, **kw)


def _wide(text, width):
    return [line for line in text.splitlines() if len(line) > width]


@pytest.fixture(scope="module")
def screens(tmp_path_factory):
    """Every verb's screen at the default width and at COLUMNS=80: {(verb, width): (status, stdout)}."""
    base = tmp_path_factory.mktemp("screens")
    scen = base / "run.toml"
    scen.write_text(_tiny() + '\n[report]\ntarget_bend_angle = "5 deg"\n')
    chk = write(base, PASSING, name="check.toml")
    mp = pytest.MonkeyPatch()
    out = {}
    try:
        for width in (None, 80):
            if width is None:
                mp.delenv("COLUMNS", raising=False)
            else:
                mp.setenv("COLUMNS", str(width))
            tag = str(width)
            verbs = {
                "run": ["run", str(scen), "-o", str(base / f"run{tag}"), "--no-figures"],
                "check": ["check", str(chk), "-o", str(base / f"check{tag}"), "--no-figures"],
                "sweep": ["sweep", str(scen), "--vary", "layers[film].thickness=lin(10 um, 30 um, 3)", "--target-angle",
                          "5 deg", "--pareto", "--recommend", "layers[film].thickness", "--within", "6 s",
                          "--no-progress", "-o", str(base / f"sweep{tag}")],
                "fit": ["fit", "dma", str(ROOT / "scenarios" / "calibration" / "dma_flap_film.csv"),
                        "-o", str(base / f"fit{tag}")],
                "report": ["report", str(base / f"run{tag}")],
            }
            for verb, argv in verbs.items():
                import contextlib
                import io

                buf = io.StringIO()
                with contextlib.redirect_stdout(buf):
                    status = main(argv)
                out[(verb, width or 100)] = (status, buf.getvalue())
    finally:
        mp.undo()
    return out


@pytest.mark.parametrize("width", [100, 80])
@pytest.mark.parametrize("verb", ["run", "check", "sweep", "fit", "report"])
def test_every_verb_fits_the_screen(screens, verb, width):
    status, text = screens[(verb, width)]
    assert status == 0, text[-2000:]
    assert text.strip()
    assert _wide(text, width) == []
    # fitted by wrapping the words, not by cutting lines (a cut line ends with "...")
    assert not [line for line in text.splitlines() if line.endswith("...")]


@pytest.mark.parametrize("verb,expected", [("run", 1), ("check", 1), ("sweep", 1), ("fit", 0), ("report", 0)])
def test_caution_once_per_command_where_the_work_can_hurt(screens, verb, expected):
    # run/check/sweep light, heat and load a strip; a fit reads measured data, a report restates a folder
    for width in (100, 80):
        assert screens[(verb, width)][1].count(CAUTION_HEAD) == expected


def test_run_with_uncertainty_prints_the_caution_once(tmp_path, capsys):
    from test_uncertainty import calibrated_text

    unc = tmp_path / "unc.toml"
    unc.write_text(calibrated_text(1.0))
    assert main(["run", str(unc), "--uncertainty", "3", "-o", str(tmp_path / "u"), "--no-figures"]) == 0
    text = capsys.readouterr().out
    assert text.count(CAUTION_HEAD) == 1
    assert "uncertainty: bend angle" in text and _wide(text, 100) == []


def test_check_rows_name_quantity_and_criterion_and_notes_once(screens):
    for width in (100, 80):
        text = screens[("check", width)][1]
        flat = " ".join(text.split())
        # the strength row compares the von Mises stress with the yield strength, and says so (at 80 columns
        # the words wrap inside their cell)
        assert "von Mises stress vs yield" in flat
        if width == 100:
            assert "von Mises stress vs yield strength" in flat
            assert "fatigue damage (Goodman) vs allowed damage" in flat
            assert "vs exposure limit" in flat
        # the answer first: the verdict is the line after the title
        assert text.splitlines()[1].startswith("verdict: every assessed check is within its modelled limit")
        # a note shared by several rows is printed once, with the rows it belongs to
        shared = "exposure position receives 0.01 x the irradiance at the strip"
        assert flat.count(shared) == 1
        assert re.search(r"\[\d+-\d+\] " + re.escape("exposure position receives"), flat)
        # column titles and the yield row in display units
        if width == 80:
            continue  # the titles and the row's words wrap inside their cell
        assert re.search(r"#\s+check: quantity vs criterion\s+value\s+limit\s+margin\s+verdict", text)
        assert re.search(r"von Mises stress vs yield\s*(strength)?\s+[\d.]+ MPa\s+25 MPa\s+[\d.]+\s+within limit", text)


def test_sweep_table_names_the_winner_in_display_units(tmp_path, capsys):
    # the LED-choice story, two of its LEDs: the winner is the design that reaches 20 deg first (no recommend);
    # checked against metrics.csv (SI), independent of the screen's ranking
    rc = main(["sweep", str(ROOT / "scenarios" / "led_choice.toml"),
               "--vary", "sources[led].wavelength=365 nm,450 nm", "--link", "protocol[0].light.led=41 mW/cm^2,62 mW/cm^2",
               "--target-angle", "20 deg", "--no-progress", "-o", str(tmp_path / "led")])
    text = capsys.readouterr().out
    assert rc == 0
    with open(tmp_path / "led" / "metrics.csv", newline="") as fh:
        rows = list(csv.DictReader(fh))
    tcol = next(c for c in rows[0] if c.startswith("time_to_target"))
    wcol = next(c for c in rows[0] if c.startswith("sources_led_wavelength"))
    best = min(rows, key=lambda r: float(r[tcol]) if r[tcol] else float("inf"))
    nm = f"{float(best[wcol]) * 1e9:.4g} nm"
    irr = f"{float(best['protocol_0_light_led [W/m^2]']) * 0.1:.4g} mW/cm^2"
    assert f"winner: led wavelength = {nm}, led irradiance (step 1) = {irr}" in text
    assert "ranked by: fastest to 20 deg" in text
    table = [line for line in text.splitlines() if re.match(r"^\s+\d+\*?P?\s", line)]
    assert len(table) == 2 and re.match(rf"^\s+1\*P?\s+{re.escape(nm)}\s+{re.escape(irr)}\s", table[0])
    assert "peak temp." in text and "degC" in table[0]


def test_large_sweep_shows_the_best_and_the_pareto_set(tmp_path, capsys):
    from actsim.study.ranking import BEST_SHOWN, SMALL_SWEEP

    scen = tmp_path / "s.toml"
    scen.write_text(_tiny())
    n = SMALL_SWEEP + 5
    rc = main(["sweep", str(scen), "--vary", f"layers[film].thickness=lin(5 um, 40 um, {n})", "--target-angle",
               "3 deg", "--recommend", "layers[film].thickness", "--within", "4 s", "--no-progress",
               "-o", str(tmp_path / "o")])
    text = capsys.readouterr().out
    assert rc == 0
    rows = [line for line in text.splitlines() if re.match(r"^\s+\d+\*?P?\s+[\d.]+ um\s", line)]
    assert BEST_SHOWN <= len(rows) < n
    assert f"{n - len(rows)} more designs in metrics.csv" in " ".join(text.split())
    assert "ranked by: reaches 3 deg within 4 s" in text
    # the recommendation is the winner, rank 1
    rec = re.search(r"recommendation: film thickness ([\d.]+ um)", text).group(1)
    assert re.match(rf"^\s+1\*P?\s+{rec}\s", rows[0])


def test_screen_width_follows_columns(monkeypatch):
    from actsim.screens import DEFAULT_WIDTH, screen_width, table

    monkeypatch.setenv("COLUMNS", "72")
    assert screen_width() == 72
    monkeypatch.setenv("COLUMNS", "300")
    assert screen_width() == 300
    monkeypatch.delenv("COLUMNS")
    assert screen_width() <= DEFAULT_WIDTH
    lines = table(("#", "words"), [("1", "a long text " * 20)], width=50, flex=1)
    assert max(map(len, lines)) <= 50 and len(lines) > 3


def test_check_set_option(tmp_path, capsys):
    # `actsim check --set` as `actsim run --set`: the thicker film changes the result, and the copy of the scenario
    chk = write(tmp_path, PASSING)
    assert main(["check", str(chk), "--set", "layers[film].thickness=30 um", "-o", str(tmp_path / "c"),
                 "--no-figures", "--no-elastica"]) in (0, 1)
    capsys.readouterr()
    assert "30 um" in (tmp_path / "c" / "scenario.toml").read_text() or "3e-05" in (tmp_path / "c" / "summary.json").read_text()
    assert main(["check", str(chk), "--set", "nonsense", "-o", str(tmp_path / "d")]) == 2
    assert "--set: 'nonsense' is not FIELD=VALUE" in capsys.readouterr().err


def test_no_elastica_is_said_in_words(screens, tmp_path, capsys):
    chk = write(tmp_path, PASSING)
    main(["check", str(chk), "-o", str(tmp_path / "c"), "--no-figures", "--no-elastica"])
    text = capsys.readouterr().out
    assert "elastica=False" not in text and "skipped (--no-elastica)" in text


def test_run_and_demo_help_have_a_description():
    parser = build_parser()
    sub = next(a for a in parser._actions if a.dest == "verb")
    for verb in ("run", "demo", "check", "sweep", "fit", "report"):
        assert (sub.choices[verb].description or "").strip(), verb


def test_lin_with_two_values_asks_for_the_count():
    from actsim.study.values import parse_values

    with pytest.raises(ActsimInputError, match=r"lin\(start, stop, count\) needs three values") as exc:
        parse_values("lin(5 um, 200)", "layers[film].thickness")
    assert "unit" not in str(exc.value).split("needs three values")[0]
    # a sampled range keeps its two ends
    assert parse_values("lin(5 um, 200 um)", "x").num is None


def test_misspelt_required_field_gets_did_you_mean(tmp_path):
    from actsim.scenario import load_scenario

    p = tmp_path / "s.toml"
    p.write_text(_tiny().replace("forward_quantum_yield", "forward_quantum_yeild"))
    with pytest.raises(ActsimInputError) as exc:
        load_scenario(p)
    msg = str(exc.value)
    assert "forward_quantum_yield: required field is missing" in msg
    assert "did you mean 'forward_quantum_yield' for 'forward_quantum_yeild'?" in msg
    assert "\n" not in msg


def test_compile_notice_says_how_long_and_when_done(tmp_path):
    # a fresh numba module in a child process: it compiles (notice + done line), then loads from the cache (silent)
    (tmp_path / "kernel_probe.py").write_text("from numba import njit\n\n@njit(cache=True)\ndef twice(x):\n"
                                              "    return 2.0 * x\n")
    probe = ("import io, sys\nsys.path.insert(0, sys.argv[1])\nfrom kernel_probe import twice\n"
             "from actsim.jitcache import compile_notice\nheard = io.StringIO()\n"
             "with compile_notice(heard, package='kernel_probe'):\n    twice(1.5)\nprint(repr(heard.getvalue()))\n")
    first = subprocess.run([sys.executable, "-c", probe, str(tmp_path)], capture_output=True, text=True, check=True)
    text = eval(first.stdout)
    assert "compiling the solver once for this machine (usually about 20 s)" in text
    assert re.search(r"actsim: solver compiled in \d+ s", text)
    second = subprocess.run([sys.executable, "-c", probe, str(tmp_path)], capture_output=True, text=True, check=True)
    assert eval(second.stdout) == ""


def test_local_scheduler_prints_no_port_warning(tmp_path):
    # dask's dashboard would ask for port 8787 and warn on stderr when it is taken: hold it, run --scheduler local
    sock = socket.socket()
    try:
        sock.bind(("127.0.0.1", 8787))
        sock.listen(1)
    except OSError:
        pass  # already taken by someone else: the condition holds anyway
    scen = tmp_path / "s.toml"
    scen.write_text(_tiny())
    try:
        r = subprocess.run([sys.executable, "-m", "actsim.cli", "sweep", str(scen), "--vary",
                            "layers[film].thickness=10 um,20 um", "--scheduler", "local", "--threads", "1",
                            "--no-progress", "-o", str(tmp_path / "o")], capture_output=True, text=True, cwd=ROOT,
                           timeout=180)
    finally:
        sock.close()
    assert r.returncode == 0, r.stderr[-2000:]
    assert "8787" not in r.stderr and "already in use" not in r.stderr


def test_a_modulus_without_memory_is_said_on_screen():
    # issue 13: a heated layer whose modulus follows the temperature with no memory swings through Tg; the screen
    # says so. The bundled hinge now relaxes (a Prony series), so it gets no note; the same hinge with a
    # history-free glass-transition law does.
    import dataclasses
    from pathlib import Path

    import actsim
    from actsim.cli import model_notes

    root = Path(__file__).resolve().parents[1] / "scenarios"
    sc = actsim.load_scenario(root / "photothermal_hinge.toml")
    assert model_notes(sc) == []
    layers = []
    for layer in sc.layers:
        m = layer.material
        if m.relaxation is not None:
            m = dataclasses.replace(m, relaxation=None, temperature_modulus=("glass", 1.8e9, 15e6, 318.15, 5.0))
        layers.append(dataclasses.replace(layer, material=m))
    notes = model_notes(dataclasses.replace(sc, layers=tuple(layers)))
    assert len(notes) == 1 and "no memory" in notes[0] and "absorbing_composite" in notes[0]
    assert model_notes(actsim.load_scenario(root / "vent_flap.toml")) == []
