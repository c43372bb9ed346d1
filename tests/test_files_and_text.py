"""Files and text: data files stay in the scenario's folder, only regular UTF-8 files are read, errors never
repeat a file's text, and user strings reach figures as plain text (issue 12, part B2).

Every bad input goes through ``actsim.cli.main``: exit status 2, exactly one line on stderr, nothing written.
The rules are the project's (common practice, no source): a data file named by a scenario is resolved against
the scenario's folder and must stay inside it unless ``ACTSIM_ALLOW_OUTSIDE_FILES=1``; devices, FIFOs,
sockets, folders and files under /proc, /sys, /dev are never opened; at most 50 MiB; strict UTF-8.
"""

from __future__ import annotations

import json
import os
import sys
import threading

import pytest

from actsim.cli import main
from actsim.inputfiles import ALLOW_OUTSIDE_ENV
from actsim.scenario import load_scenario

from conftest import film_toml

SPECTRUM = "wavelength [nm], epsilon10 [L/(mol*cm)]\n300, 1.2e4\n450, 1.2e4\n"
EPS_LINE = 'reactant_absorptivity = "1.2e4 L/(mol*cm)"'


def with_file(name: str) -> str:
    """The small film scenario with its reactant absorptivity read from ``name``."""
    return film_toml(duration="1 s", step="0.1 s").replace(EPS_LINE, f'reactant_absorptivity = {{ file = "{name}" }}')


def refused(capsys, argv, out, *fragments):
    """``main(argv)`` exits 2 with one stderr line holding every fragment, and writes nothing into ``out``."""
    assert main(argv) == 2
    err = capsys.readouterr().err
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    for f in fragments:
        assert f in lines[0], lines[0]
    assert not out.exists() or not any(out.iterdir()), list(out.iterdir())
    return lines[0]


@pytest.fixture
def folder(tmp_path):
    scen = tmp_path / "scen"
    scen.mkdir()
    return scen


def run_with(folder, name, capsys, *fragments):
    path = folder / "s.toml"
    path.write_text(with_file(name), encoding="utf-8")
    out = folder.parent / "out"
    return refused(capsys, ["run", str(path), "-o", str(out), "--no-figures"], out, *fragments)


def test_parent_folder_refused_and_allowed_by_the_user(folder, capsys, monkeypatch):
    (folder.parent / "eps.csv").write_text(SPECTRUM)
    run_with(folder, "../eps.csv", capsys, "materials.film.reactant_absorptivity.file", "outside the scenario's folder",
             ALLOW_OUTSIDE_ENV)
    monkeypatch.setenv(ALLOW_OUTSIDE_ENV, "1")  # the person running actsim allows it explicitly
    (folder / "s.toml").write_text(with_file("../eps.csv"))
    assert load_scenario(folder / "s.toml").layers[0].material.reactant_absorptivity.kind == "table"


def test_absolute_path_outside_refused(folder, capsys):
    other = folder.parent / "elsewhere"
    other.mkdir()
    (other / "eps.csv").write_text(SPECTRUM)
    run_with(folder, str(other / "eps.csv"), capsys, "outside the scenario's folder")


def test_symlink_pointing_outside_refused_inside_accepted(folder, capsys):
    (folder.parent / "eps.csv").write_text(SPECTRUM)
    os.symlink(folder.parent / "eps.csv", folder / "link.csv")
    run_with(folder, "link.csv", capsys, "outside the scenario's folder")
    (folder / "data").mkdir()
    (folder / "data" / "eps.csv").write_text(SPECTRUM)
    os.symlink(folder / "data" / "eps.csv", folder / "inner.csv")  # a link that stays inside is fine
    (folder / "s.toml").write_text(with_file("inner.csv"))
    assert load_scenario(folder / "s.toml").layers[0].material.reactant_absorptivity.kind == "table"


@pytest.mark.parametrize("name", ["/proc/self/environ", "/dev/zero", "/sys/kernel/mm/../mm"])
def test_system_files_refused_even_when_outside_is_allowed(folder, capsys, monkeypatch, name):
    monkeypatch.setenv(ALLOW_OUTSIDE_ENV, "1")
    run_with(folder, name, capsys, "system file under /proc, /sys or /dev")


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs FIFOs")
def test_fifo_refused_without_hanging(folder, capsys):
    os.mkfifo(folder / "pipe.csv")
    done = threading.Event()
    timer = threading.Timer(20.0, lambda: done.is_set() or os.open(folder / "pipe.csv", os.O_WRONLY | os.O_NONBLOCK))
    timer.start()  # should the reader block on the FIFO, a writer opens it so that the test fails instead of hanging
    try:
        run_with(folder, "pipe.csv", capsys, "'pipe.csv' is not a regular file")
    finally:
        done.set()
        timer.cancel()


def test_folder_is_not_a_file(folder, capsys):
    (folder / "eps.csv").mkdir()
    run_with(folder, "eps.csv", capsys, "'eps.csv' is a folder, not a file")


def test_size_limit_checked_before_reading(folder, capsys, monkeypatch):
    import actsim.inputfiles as inputfiles

    monkeypatch.setattr(inputfiles, "MAX_TEXT_FILE_BYTES", 40)
    (folder / "eps.csv").write_text(SPECTRUM)  # 62 bytes
    run_with(folder, "eps.csv", capsys, "more than the", "MiB allowed")


def test_errors_never_echo_file_text(folder, capsys):
    (folder / "secret.csv").write_text("user, password\nlogin, pass123\n")
    line = run_with(folder, "secret.csv", capsys, "secret.csv' column 1 gives no unit")
    for word in ("login", "pass123", "password", "user"):
        assert word not in line
    (folder / "secret.csv").write_text("wavelength [nm], epsilon10 [L/(mol*cm)]\n300, hunter2\n")
    line = run_with(folder, "secret.csv", capsys, "line 2: column 'epsilon10 [L/(mol*cm)]' is not a number")
    assert "hunter2" not in line


def test_latin1_csv_is_one_line(folder, capsys):
    (folder / "eps.csv").write_bytes("# Messung bei 25 \xb0C\n".encode("latin-1") + SPECTRUM.encode())
    run_with(folder, "eps.csv", capsys, "'eps.csv' is not UTF-8 text", "line 1")


def test_utf8_with_bom_accepted(folder):
    (folder / "eps.csv").write_bytes(b"\xef\xbb\xbf" + SPECTRUM.encode())
    (folder / "s.toml").write_bytes(b"\xef\xbb\xbf" + with_file("eps.csv").encode())
    assert load_scenario(folder / "s.toml").layers[0].material.reactant_absorptivity.kind == "table"


def test_latin1_scenario_is_one_line(tmp_path, capsys):
    path = tmp_path / "s.toml"
    path.write_bytes(film_toml().replace('title = "test film"', 'title = "caf\xe9"').encode("latin-1"))
    refused(capsys, ["run", str(path), "-o", str(tmp_path / "out")], tmp_path / "out", "'", "s.toml' is not UTF-8 text")


def test_scenario_folder_is_not_a_file(tmp_path, capsys):
    (tmp_path / "x.toml").mkdir()
    refused(capsys, ["run", str(tmp_path / "x.toml"), "-o", str(tmp_path / "out")], tmp_path / "out",
            "is a folder, not a file")


def test_fit_plan_curve_outside_refused(tmp_path, capsys):
    plan_dir = tmp_path / "plan"
    plan_dir.mkdir()
    (plan_dir / "base.toml").write_text(film_toml())
    (tmp_path / "curve.csv").write_text("time [s], bend angle [deg]\n0, 0\n1, 1\n")
    (plan_dir / "plan.toml").write_text('scenario = "base.toml"\n[[curves]]\nfile = "../curve.csv"\n')
    refused(capsys, ["fit", "bend", str(plan_dir / "plan.toml"), "-o", str(tmp_path / "out")], tmp_path / "out",
            "curves[0].file", "outside the scenario's folder")


def test_fit_data_fifo_and_folder_refused(tmp_path, capsys):
    (tmp_path / "d.csv").mkdir()
    refused(capsys, ["fit", "tensile", str(tmp_path / "d.csv"), "-o", str(tmp_path / "out")], tmp_path / "out",
            "DATA: ", "is a folder, not a file")


# --- result folders read by `actsim report` ------------------------------------------------------------------

@pytest.fixture(scope="module")
def checked_folder(tmp_path_factory):
    """A result folder written by `actsim run` of a tiny scenario (no figures)."""
    root = tmp_path_factory.mktemp("checked")
    scen = root / "s.toml"
    scen.write_text(film_toml(duration="1 s", step="0.1 s"), encoding="utf-8")
    out = root / "out"
    assert main(["run", str(scen), "-o", str(out), "--no-figures"]) == 0
    return out


def _copy(folder, dest):
    import shutil

    shutil.copytree(folder, dest)
    return dest


def _seal(folder):
    """Accept the folder as it is now (a folder changed by hand fails its manifest check first)."""
    from actsim.folders import write_manifest

    write_manifest(folder, kind="check" if (folder / "checks.json").exists() else "run")


def test_report_refuses_checks_json_with_text_value(checked_folder, tmp_path, capsys):
    out = _copy(checked_folder, tmp_path / "r")
    records = [{"check": "strength", "value": "login,pass123", "limit": 1.0, "unit": "Pa", "margin": 1.0,
                "passed": True, "source": "x"}]
    (out / "checks.json").write_text(json.dumps(records))
    _seal(out)
    assert main(["report", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "record 0 field 'value' is not a number" in err[0] and "pass123" not in err[0], err
    assert not (out / "report.html").exists()


def test_report_refuses_non_utf8_scenario_and_checks(checked_folder, tmp_path, capsys):
    out = _copy(checked_folder, tmp_path / "r")
    (out / "scenario.toml").write_bytes('title = "caf\xe9"\n'.encode("latin-1"))
    (out / "checks.json").unlink(missing_ok=True)
    _seal(out)
    assert main(["report", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "scenario.toml' is not UTF-8 text" in err[0], err
    (out / "scenario.toml").write_text("title = 'x'\n")
    (out / "checks.json").write_bytes(b'[{"check": "\xff"}]')
    _seal(out)
    assert main(["report", str(out)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "checks.json' is not UTF-8 text" in err[0], err


# --- user strings in figures ------------------------------------------------------------------------------------

@pytest.mark.parametrize("title", ["$\\undefinedcommand$", "x" * 900_000, "{$\\frac$} 50 % $"],
                         ids=["undefined-command", "900-kB", "odd-dollars"])  # 900 kB: the scenario file itself is limited to 1 MB
def test_titles_reach_figures_as_plain_text(tmp_path, capsys, title):
    text = film_toml(duration="1 s", step="0.1 s").replace('title = "test film"', f"title = {json.dumps(title)}")
    text = text.replace('name = "lamp"', 'name = "$\\\\lamp$"').replace('lamp = "50', '"$\\\\lamp$" = "50')
    path = tmp_path / "s.toml"
    path.write_text(text, encoding="utf-8")
    out = tmp_path / "out"
    assert main(["run", str(path), "-o", str(out)]) == 0, capsys.readouterr().err
    pngs = list((out / "figures").glob("*.png")) if (out / "figures").is_dir() else list(out.glob("*.png"))
    assert pngs and all(p.stat().st_size > 1000 for p in pngs)


def test_plain_texts_keeps_tick_mathtext_and_shortens():
    from actsim.figures import MAX_FIGURE_TEXT, new_figure, plain_texts

    fig = new_figure((3, 2))
    ax = fig.subplots()
    ax.plot([1, 10, 100], [1, 2, 3], label="$\\x$")
    ax.set_xscale("log")
    ax.set_title("t" * 5000)
    ax.legend()
    plain_texts(fig)
    assert len(ax.get_title()) == MAX_FIGURE_TEXT and ax.get_title().endswith("\u2026")
    assert ax.title.get_parse_math() is False and ax.get_legend().texts[0].get_parse_math() is False
    fig.canvas.draw()  # log-axis tick labels still use mathtext (10^k)
    assert all(t.get_parse_math() for t in ax.xaxis.get_majorticklabels())


if sys.platform == "win32":  # pragma: no cover
    pytestmark = pytest.mark.skip(reason="POSIX file types")
