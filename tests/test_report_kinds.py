"""One report for every result folder kind: run, check, sweep, fit, run with uncertainty bands, run with a mask.

Checks against published formats and the verbs' own outputs, not against the report's code: the HTML end-tag rules
(WHATWG HTML Living Standard, 13.1.2 "Elements", via test_report.StrictHTML), the PNG signature (ISO/IEC 15948:2004,
section 5.2), the numbers `actsim check` prints on the screen, and the result folder's files.
"""

from __future__ import annotations

import json
import math
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from actsim.cautions import CAUTION, caution_lines
from actsim.cli import main
from actsim.folders import read_manifest, write_manifest
from actsim.report import build_report, figure_title, write_report

from conftest import film_toml
from test_report import CHROMIUM_FLAGS, PNG_SIGNATURE, _chromium, parse, table_rows

ROOT = Path(__file__).resolve().parents[1]


def _tiny(**kw):
    return film_toml(cells=6, output="0.5 s", step="0.25 s", duration="6 s",
                     substrate={"modulus": "2 GPa", "thickness": "30 um", "cells": 3}, **kw)


@pytest.fixture(scope="module")
def folders(tmp_path_factory):
    """One small folder of each kind (the fastest paths), and what `actsim check` printed."""
    import sys

    sys.path.insert(0, str(Path(__file__).parent))
    from test_uncertainty import calibrated_text

    base = tmp_path_factory.mktemp("kinds")
    out = {}
    run_toml = base / "run.toml"
    run_toml.write_text(_tiny() + '\n[report]\ntarget_bend_angle = "5 deg"\n')
    assert main(["run", str(run_toml), "-o", str(base / "run")]) == 0
    out["run"] = base / "run"
    mask = base / "mask.toml"
    mask.write_text(_tiny() + '\n[mask]\nregions = [ { start = "3 mm", end = "5 mm", transmission = 1.0 } ]\n')
    assert main(["run", str(mask), "-o", str(base / "mask")]) == 0
    out["mask"] = base / "mask"
    unc = base / "unc.toml"
    unc.write_text(calibrated_text(1.0))
    assert main(["run", str(unc), "--uncertainty", "3", "-o", str(base / "uncertainty")]) == 0
    out["uncertainty"] = base / "uncertainty"
    assert main(["fit", "tensile", str(ROOT / "scenarios" / "calibration" / "tensile_flap_film.csv"),
                 "-o", str(base / "fit")]) == 0
    out["fit"] = base / "fit"
    assert main(["sweep", str(run_toml), "--vary", "layers[film].thickness=lin(10 um, 30 um, 3)",
                 "--target-angle", "5 deg", "--pareto", "--recommend", "layers[film].thickness", "--within", "6 s",
                 "--no-progress", "-o", str(base / "sweep")]) == 0
    out["sweep"] = base / "sweep"
    return out


@pytest.fixture(scope="module")
def check_folder(tmp_path_factory):
    """The gripper demo through `actsim check` (joint, stack, fatigue, load line, light risk group), and its screen."""
    import contextlib
    import io

    dest = tmp_path_factory.mktemp("check") / "hinge"
    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        status = main(["check", str(ROOT / "scenarios" / "gripper_hinge_check.toml"), "-o", str(dest)])
    assert status == 0
    return dest, buf.getvalue()


def _all(folders, check_folder):
    return {**folders, "check": check_folder[0]}


# what the first screen of each kind must answer (words and numbers taken from the folder's own files)
def _first_screen_expectations(kind, folder):
    if kind in ("run", "mask", "uncertainty"):
        m = json.loads((folder / "summary.json").read_text())["metrics"]
        want = ["The answer", "peak bend", f"{math.degrees(m['peak_bend_angle']):.4g}", "peak blocked force",
                f"{m['peak_blocked_force'] * 1e3:.4g}", "peak temperature"]
        if kind == "run":
            want += ["time to 5°", f"{m['time_to_target']:.4g}"]
        if kind == "mask":
            pat = json.loads((folder / "summary.json").read_text())["patterned"]
            want += ["peak fold angle (through the mask)", f"{math.degrees(pat['peak_fold_angle']):.4g}"]
        if kind == "uncertainty":
            want += ["5–95 %", "3 draws"]
        return want
    if kind == "check":
        return ["Verdict: All 15 assessed checks passed", "Tightest margin:", "blocked tip force, large deflection",
                "work the tip can do", "joint: strips (hinge)", "joint: stack of strips", "fatigue life, active film",
                "risk group of the most intense step", "RG1"]
    if kind == "sweep":
        rec = json.loads((folder / "recommendation.json").read_text())
        best = rec["rows"][0]["recommended"] * 1e6
        return ["3 designs", "Recommended design:", f"thickness of film = {best:.4g} µm", "Pareto set"]
    if kind == "fit":
        fit = json.loads((folder / "fit.json").read_text())["regression"]
        return ["Fitted parameters", "modulus", f"{fit['values'][0] / 1e9:.4g}", "± ",
                f"{fit['standard_errors'][0] / 1e9:.4g}", "Residual standard deviation:",
                f"{fit['residual_std'] / 1e3:.4g} kPa"]
    raise AssertionError(kind)


KINDS = ("run", "check", "sweep", "fit", "uncertainty", "mask")


def _figure_records(folder):
    """Every figure record ({"file", "title", "caption"}) of the folder's JSON records, by resolved PNG path."""
    out = {}
    for rec_file in folder.rglob("*.json"):
        try:
            data = json.loads(rec_file.read_text(encoding="utf-8"))
        except ValueError:
            continue
        if isinstance(data, dict):
            for rec in data.get("figures", []) or []:
                if isinstance(rec, dict) and "file" in rec and "caption" in rec:
                    out[(rec_file.parent / rec["file"]).resolve()] = rec
    return out


@pytest.mark.parametrize("kind", KINDS)
def test_report_for_every_kind(folders, check_folder, kind):
    folder = _all(folders, check_folder)[kind]
    manifest = read_manifest(folder)
    assert manifest["kind"] == ("run" if kind in ("mask", "uncertainty") else kind)
    if kind in ("mask", "uncertainty"):
        assert manifest["parts"] == [kind]
    text = build_report(folder)
    p = parse(text)
    assert p.errors == [] and p.doctype.lower() == "doctype html"
    plain = p.plain
    # the first screen answers before the caution, the figures and the tables
    first = plain[: plain.index(CAUTION)]
    for words in _first_screen_expectations(kind, folder):
        assert words in first, (kind, words)
    assert plain.count(CAUTION) == 1  # the caution once per page
    assert plain.index(CAUTION) < plain.index("Figures (")
    # every PNG of the folder embedded once, as data (one self-contained file)
    pngs = sorted(q for q in folder.rglob("*.png") if q.read_bytes().startswith(PNG_SIGNATURE))
    assert len(p.images) == len(pngs) >= 1 and all(s.startswith("data:image/png;base64,") for s in p.images)
    # captions never name a mark that is not drawn, never put the file name in the sentence
    assert "dotted line marks the target" not in plain
    assert not re.search(r"\(figures/[^)]*\.png\)", plain)
    recorded = _figure_records(folder)
    for q in pngs:
        rec = recorded.get(q.resolve())
        if rec is None:  # no record of the figure: a neutral title made from the file name
            assert f"{figure_title(q)}." in plain
        else:  # the caption the verb generated from what the figure shows
            assert " ".join(rec["caption"].split())[:60] in plain, (q.name, rec["caption"])
    assert p.resource_refs == []


def test_fit_demo_folder_one_section_per_fit(tmp_path):
    # a fit folder with fits in sub-folders (as `actsim fit demo` writes) and a bend fit with its residual in rad:
    # records written by hand in the verb's format, then sealed as the verb would
    folder = tmp_path / "fitdemo"
    (folder / "bend").mkdir(parents=True)
    rec = {"kind": "bend", "names": ["photo_strain", "thermal_back_rate"], "values": [-0.018, 0.008],
           "standard_errors": [5e-5, 3e-5], "ci_low": [-0.0181, 0.0079], "ci_high": [-0.0179, 0.0081],
           "confidence": 0.95, "units": ["1", "1/s"], "n_points": 183, "dof": 180, "residual_std": 0.00876605,
           "warnings": [], "correlation": [[1.0, -0.39], [-0.39, 1.0]], "curves": []}
    (folder / "bend" / "fit.json").write_text(json.dumps(rec))
    (folder / "bend" / "fitted.toml").write_text('title = "fitted"\n')
    write_manifest(folder, kind="fit")
    plain = parse(build_report(folder)).plain
    # residual with its unit, in degrees and rad: 0.00876605 rad x 180/pi = 0.502 deg
    assert "Residual standard deviation: 0.502° (0.008766 rad) over 183 points" in plain
    assert "photo_strain" in plain and "± 5×10" in plain and "fitted scenario (bend/fitted.toml)" in plain


def test_escaping_of_every_text_from_the_folder(tmp_path):
    # a scenario title, description, layer and source names with markup, ampersands and quotes; a figure record
    # whose caption carries markup: none of it may reach the page as markup
    evil = '<script>alert("x")</script> & \'q\' <b>bold</b>'
    text = _tiny().replace('title = "test film"', f'title = {json.dumps(evil)}\ndescription = "a & b <i>c</i>"')
    text = text.replace('name = "film"', 'name = "film <img src=x onerror=alert(1)> & \\"q\\""')
    scen = tmp_path / "evil.toml"
    scen.write_text(text)
    out = tmp_path / "evil"
    assert main(["run", str(scen), "-o", str(out)]) == 0
    rec = json.loads((out / "summary.json").read_text())
    rec["figures"] = [{"file": "figures/bend_angle.png", "title": "Bend <em>angle</em>",
                       "caption": "caption with </figcaption><script>bad()</script> & \"quotes\""}]
    (out / "summary.json").write_text(json.dumps(rec))
    write_manifest(out, kind="run")
    html_text = build_report(out)
    p = parse(html_text)
    assert p.errors == []
    assert sum(t == "script" for t, _ in p.tags) == 1  # only the report's own script
    assert not any(t in ("b", "i") for t, _ in p.tags)  # (the page itself uses <em> for material names)
    assert sum(t == "img" for t, _ in p.tags) == len(p.images) and all(s.startswith("data:") for s in p.images)
    assert "alert" not in "".join(a.get("onerror", "") for _, a in p.tags)
    plain = p.plain
    assert evil in plain and "a & b <i>c</i>" in plain
    assert 'film <img src=x onerror=alert(1)> & "q"' in plain
    # the recorded title and caption are used (not the file-name fallback), as text
    assert 'Bend <em>angle</em>. caption with </figcaption><script>bad()</script> & "quotes"' in plain
    assert "bad()" not in "".join(p.styles)


def _numbers(text: str) -> list[str]:
    return re.findall(r"\d+(?:\.\d+)?(?:e[-+]?\d+)?", text)


def _report_numbers(html_text: str) -> tuple[str, list[float]]:
    # 2.88×10<sup>4</sup> as written by the report is 2.88e4
    norm = re.sub(r"×10<sup>(−?-?\d+)</sup>", lambda m: "e" + m.group(1).replace("−", "-"), html_text)
    plain = parse(norm.replace("<", " <")).plain.replace("−", "-")  # table cells apart
    return plain, [float(t) for t in _numbers(plain)]


def _shown_in(token: str, plain: str, values: list[float]) -> bool:
    if re.search(rf"(?<![\d.]){re.escape(token)}(?![\d])", plain):
        return True
    x = float(token)
    mant = token.split("e")[0]
    exp = int(token.split("e")[1]) if "e" in token else 0
    decimals = len(mant.split(".")[1]) if "." in mant else 0
    half = 0.5 * 10.0 ** (exp - decimals) * (1 + 1e-9)  # half a unit in the last printed digit
    return any(abs(v - x) <= half for v in values)


def test_every_number_check_prints_is_in_the_check_report(check_folder):
    folder, screen = check_folder
    plain, values = _report_numbers(build_report(folder))
    skip = set(caution_lines(100)) | set(CAUTION.split("\n"))
    caution = " ".join(CAUTION.split())
    missing = []
    for line in screen.splitlines():
        s = line.strip()
        if not s or s in skip or s in caution or s.startswith(("results written to", "verdict:")) or set(s) <= {"-", " "}:
            continue
        for token in _numbers(s):
            if not _shown_in(token, plain, values):
                missing.append((token, s[:90]))
    assert missing == [], "\n".join(map(str, missing))


def test_cli_report_on_a_sweep_and_a_fit(folders, capsys):
    for kind in ("sweep", "fit"):
        assert main(["report", str(folders[kind])]) == 0
        assert (folders[kind] / "report.html").is_file()
    out = capsys.readouterr().out
    assert out.count("CAUTION") == 0  # on the report's page; the command that made the folder printed it


@pytest.mark.browser
def test_first_screen_of_every_kind_in_headless_browser(folders, check_folder, tmp_path):
    exe = _chromium()
    if exe is None:
        pytest.skip("no chromium on PATH (Debian: apt-get install chromium); the browser test needs it")
    from matplotlib.image import imread

    flags = CHROMIUM_FLAGS + [f"--user-data-dir={tmp_path / 'profile'}"]
    for kind, folder in _all(folders, check_folder).items():
        path = write_report(folder, tmp_path / f"{kind}.html")
        url = path.resolve().as_uri()
        for width in (1300, 760):
            dom = subprocess.run([exe, *flags, "--virtual-time-budget=5000", f"--window-size={width},1000",
                                  "--dump-dom", url], capture_output=True, text=True, timeout=60)
            assert dom.returncode == 0, dom.stderr[-2000:]
            sw = re.search(r'data-scroll-width="(\d+)"', dom.stdout)
            cw = re.search(r'data-client-width="(\d+)"', dom.stdout)
            assert sw and cw, (kind, dom.stdout[-300:])
            # nothing wider than the window: wide tables scroll inside their own box
            assert int(sw.group(1)) <= int(cw.group(1)), (kind, width, sw.group(1), cw.group(1))
        shot = tmp_path / f"{kind}.png"
        r = subprocess.run([exe, *flags, f"--screenshot={shot}", "--window-size=1300,900", url],
                           capture_output=True, text=True, timeout=60)
        assert r.returncode == 0, r.stderr[-2000:]
        assert shot.read_bytes().startswith(PNG_SIGNATURE)
        img = imread(shot)[..., :3]
        # the first screen is not blank: a fair share of the pixels is not the white page, and it has ink
        ink = (img.mean(axis=2) < 0.6).mean()
        not_white = (img.mean(axis=2) < 0.97).mean()
        assert ink > 0.005 and not_white > 0.03, (kind, ink, not_white)
