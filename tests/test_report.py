"""The study report (actsim report): one self-contained, well-formed HTML file.

The checks here are against published formats, not against the project's own
code: the HTML void-element list and end-tag rules (WHATWG HTML Living Standard,
section 13.1.2 "Elements"), data URIs (RFC 2397, L. Masinter, "The 'data' URL
scheme", 1998), base64 (RFC 4648, S. Josefsson, 2006), the PNG file signature
(ISO/IEC 15948:2004 / W3C PNG specification, section 5.2: the eight bytes
137 80 78 71 13 10 26 10) and the bend angle in degrees (angle = curvature x
length in radians, times 180/pi).
"""

from __future__ import annotations

import base64
import html
import json
import math
import re
import shutil
import subprocess
from html.parser import HTMLParser
from importlib import metadata
from pathlib import Path

import pytest

from actsim.cautions import CAUTION
from actsim.checks.verdict import CheckResult, to_records
from actsim.cli import main
from actsim.errors import ActsimInputError
from actsim.folders import write_manifest
from actsim.report import DEPENDENCIES, build_report, write_report

ROOT = Path(__file__).resolve().parents[1]

# PNG signature: W3C PNG specification (ISO/IEC 15948:2004), section 5.2.
PNG_SIGNATURE = bytes([137, 80, 78, 71, 13, 10, 26, 10])

# Void elements: WHATWG HTML Living Standard, 13.1.2 "Elements" (they have no end tag).
VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source", "track", "wbr"}

# Attributes through which a page loads or links a resource (WHATWG HTML, the element index).
RESOURCE_ATTRS = {"src", "href", "srcset", "poster", "data", "action", "formaction", "background", "manifest"}


class StrictHTML(HTMLParser):
    """A small strict checker: every non-void element closed in order, nothing left open."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.errors: list[str] = []
        self.images: list[str] = []
        self.resource_refs: list[str] = []
        self.text: list[str] = []
        self.tags: list[tuple[str, dict]] = []
        self.doctype = None
        self._in = {"style": 0, "script": 0}
        self.styles: list[str] = []

    def handle_decl(self, decl):
        self.doctype = decl

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append((tag, a))
        for k, v in a.items():
            if k in RESOURCE_ATTRS and v and not v.startswith(("#", "data:")):
                self.resource_refs.append(f"{tag} {k}={v[:60]}")
        if tag == "img":
            self.images.append(a.get("src", ""))
        if tag in self._in:
            self._in[tag] += 1
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        if tag not in VOID:
            self.errors.append(f"self-closing non-void <{tag}/>")
        self.handle_starttag(tag, attrs)
        if tag not in VOID:
            self.stack.pop()

    def handle_endtag(self, tag):
        if tag in VOID:
            self.errors.append(f"end tag for void element </{tag}>")
            return
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes <{self.stack[-1] if self.stack else 'nothing'}>")
            return
        self.stack.pop()
        if tag in self._in:
            self._in[tag] -= 1

    def handle_data(self, data):
        if self._in["style"]:
            self.styles.append(data)
        elif not self._in["script"]:
            self.text.append(data)

    def close(self):
        super().close()
        if self.stack:
            self.errors.append(f"unclosed elements: {self.stack}")

    @property
    def plain(self) -> str:
        return " ".join("".join(self.text).split())


def parse(text: str) -> StrictHTML:
    p = StrictHTML()
    p.feed(text)
    p.close()
    return p


class Rows(HTMLParser):
    """Rows (class, [cell texts]) of the table with a given class."""

    def __init__(self, table_class):
        super().__init__(convert_charrefs=True)
        self.want = table_class
        self.depth = 0
        self.rows: list[tuple[str, list[str]]] = []
        self.cell = None
        self.in_body = False

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "table" and self.want in (a.get("class") or "").split():
            self.depth = 1
        elif self.depth and tag == "tbody":
            self.in_body = True
        elif self.depth and self.in_body and tag == "tr":
            self.rows.append((a.get("class", ""), []))
        elif self.depth and self.in_body and tag == "td":
            self.cell = []

    def handle_endtag(self, tag):
        if tag == "td" and self.cell is not None:
            self.rows[-1][1].append(" ".join("".join(self.cell).split()))
            self.cell = None
        elif tag == "table" and self.depth:
            self.depth = 0
            self.in_body = False

    def handle_data(self, data):
        if self.cell is not None:
            self.cell.append(data)


def table_rows(text, table_class):
    p = Rows(table_class)
    p.feed(text)
    p.close()
    return p.rows


@pytest.fixture(scope="module")
def result_dir(tmp_path_factory):
    out = tmp_path_factory.mktemp("report") / "vent"
    assert main(["run", str(ROOT / "scenarios" / "vent_flap.toml"), "-o", str(out)]) == 0
    return out


@pytest.fixture()
def fresh(result_dir, tmp_path):
    """A private copy of the result folder (tests add files to it)."""
    dst = tmp_path / "res"
    shutil.copytree(result_dir, dst)
    return dst


def seal(folder):
    """Re-write the manifest of a folder a test edited, so the report reads it as a complete run."""
    write_manifest(folder, kind="run")


def fake_checks():
    # Invented records, one within its limit and one beyond it.
    return to_records([
        CheckResult.upper_bound(check="yield strength, layer 2 (active film)", value=21e6, limit=50e6, unit="Pa",
                                source="illustrative limits file, generic network", validity="temperature 0..40 degC",
                                note="von Mises stress at the top face"),
        CheckResult.upper_bound(check="actinic UV exposure <8 h>", value=250.0, limit=30.0, unit="J/m^2",
                                source="test limit & source", validity="180-400 nm"),
    ])


def test_report_is_well_formed_self_contained_html(fresh, capsys):
    # An extra PNG in a sub-folder (as an uncertainty run writes) and a file that only pretends to be one.
    (fresh / "uncertainty").mkdir()
    shutil.copy(fresh / "figures" / "bend_angle.png", fresh / "uncertainty" / "bend_angle_band.png")
    (fresh / "figures" / "broken.png").write_bytes(b"not a png")
    seal(fresh)
    path = write_report(fresh)
    assert path == fresh / "report.html"
    text = path.read_text(encoding="ascii")  # pure ASCII: non-ASCII text is written as character references
    assert not list(fresh.rglob("*.part"))
    p = parse(text)
    assert p.errors == []
    assert p.doctype and p.doctype.lower() == "doctype html"
    # Every figure of the folder, each a data URI (RFC 2397) of base64 (RFC 4648) PNG bytes (PNG spec 5.2).
    pngs = sorted(q for q in fresh.rglob("*.png") if q.read_bytes().startswith(PNG_SIGNATURE))
    assert len(p.images) == len(pngs) >= 3
    decoded = []
    for src in p.images:
        assert src.startswith("data:image/png;base64,")
        data = base64.b64decode(src.split(",", 1)[1], validate=True)
        assert data.startswith(PNG_SIGNATURE)
        decoded.append(data)
    assert sorted(decoded) == sorted(q.read_bytes() for q in pngs)
    # Nothing is loaded from outside the file.
    assert p.resource_refs == []
    assert "http://" not in "".join(p.styles) and "https://" not in "".join(p.styles)
    assert "@import" not in "".join(p.styles) and "url(" not in "".join(p.styles)
    assert not any(t == "link" for t, _ in p.tags)
    assert all("src" not in a for t, a in p.tags if t == "script")
    assert "@media print" in "".join(p.styles)
    # The caution near the top (before the scenario section) and with the checks.
    plain = p.plain
    assert CAUTION in plain
    assert plain.index(CAUTION) < plain.index("Figures (")
    assert plain.count(CAUTION) == 1  # once per page
    assert "Key results" in plain and "Scenario" in plain


def test_report_content_scenario_results_versions(result_dir, tmp_path):
    text = build_report(result_dir)
    p = parse(text)
    plain = p.plain
    # Scenario in words: strip, each layer with thickness and material, the source, the protocol steps.
    for words in ("free length of 8 mm", "width of 3 mm", "50 µm of material backing",
                  "20 µm of material contracting_film", "Gaussian band at 365 nm", "50 mW/cm²",
                  "lamp on: 60 s, uv_lamp at 50 mW/cm²", "dark: 120 s, all light off"):
        assert words in plain, words
    params = {(r[1][0], r[1][2]): r[1][1] for r in table_rows(text, "params") if len(r[1]) == 3}
    assert params[("free length", "mm")] == "8"
    assert params[("chromophore concentration", "mol/L")] == "0.5"
    # Key results with units: angle in degrees (rad x 180/pi), force in mN, tip travel in mm.
    metrics = json.loads((result_dir / "summary.json").read_text())["metrics"]
    res = {r[1][0]: (r[1][1], r[1][2]) for r in table_rows(text, "results")}
    assert res["peak bend angle"] == (f"{metrics['peak_bend_angle'] * 180 / math.pi:.4g}", "°")
    assert res["peak blocked force (small deflection)"] == (f"{metrics['peak_blocked_force'] * 1e3:.4g}", "mN")
    assert res["peak tip travel"] == (f"{metrics['peak_tip_deflection'] * 1e3:.4g}", "mm")
    assert ("peak temperature", (f"{metrics['peak_temperature'] - 273.15:.4g}", "°C")) in res.items() or \
        "peak temperature" in plain  # the vent-flap demo models heat
    # Versions of actsim and each dependency, from the installed distributions.
    vers = dict(r[1] for r in table_rows(text, "versions"))
    for name in ("actsim", *DEPENDENCIES):
        try:
            expected = metadata.version(name)
        except metadata.PackageNotFoundError:
            expected = "not installed"
        assert vers[name] == expected, name
    # The scenario text, in a collapsible block, escaped but complete.
    m = re.search(r"<details>.*?<pre>(.*?)</pre></details>", text, re.S)
    assert m and html.unescape(m.group(1)) == (result_dir / "scenario.toml").read_text()


def test_report_check_table_rows(fresh):
    (fresh / "checks.json").write_text(json.dumps(fake_checks(), indent=2))
    seal(fresh)
    text = build_report(fresh)
    p = parse(text)
    assert p.errors == []
    rows = table_rows(text, "checks")
    assert [cls for cls, _ in rows] == ["pass", "fail"]
    first, second = rows[0][1], rows[1][1]
    assert first[1].startswith("yield strength, layer 2 (active film)")
    assert first[2:5] == ["21 MPa", "50 MPa", f"{50 / 21:.3g}×"]
    assert "within the modelled limit" in first[5] and first[6] == "illustrative limits file, generic network"
    assert second[1] == "actinic UV exposure <8 h>"  # escaped text, not a tag
    assert second[2:5] == ["250 J/m2", "30 J/m2", f"{30 / 250:.3g}×"]
    assert "exceeds the modelled limit" in second[5] and second[6] == "test limit & source"
    plain = p.plain
    assert "checks 1: temperature 0..40 degC" in plain and "checks 2: 180-400 nm" in plain and "von Mises stress at the top face" in plain
    assert plain.count(CAUTION) == 1
    assert "No design checks were run" not in plain
    assert "2 check(s): 1 passed (within the modelled limit), 1 exceeds the modelled limit." in plain
    assert "Verdict: 1 of 2 checks failed" in plain and "Tightest margin: 0.12× — check 2, actinic UV exposure <8 h>" in plain
    # A record as written by json with an infinite margin (value 0) still renders.
    recs = fake_checks() + to_records([CheckResult.upper_bound(check="zero load", value=0.0, limit=1.0, unit="N",
                                                               source="s", validity="")])
    (fresh / "checks.json").write_text(json.dumps(recs))
    seal(fresh)
    assert "∞" in parse(build_report(fresh)).plain
    recs[-1]["margin"] = "inf"  # as stored by a writer that refuses infinite JSON numbers
    (fresh / "checks.json").write_text(json.dumps({"checks": recs}, allow_nan=False))
    seal(fresh)
    rows = table_rows(build_report(fresh), "checks")
    assert len(rows) == 3 and rows[-1][1][4] == "∞"


def test_report_escapes_text(fresh):
    rec = json.loads((fresh / "summary.json").read_text())
    rec["title"] = "<script>alert(1)</script> & <b>bold</b>"
    (fresh / "summary.json").write_text(json.dumps(rec))
    seal(fresh)
    p = parse(build_report(fresh))
    assert p.errors == []
    assert sum(t == "script" for t, _ in p.tags) == 1  # only the report's own image counter
    assert not any(t == "b" for t, _ in p.tags)
    assert "<script>alert(1)</script> & <b>bold</b>" in p.plain


def test_report_when_scenario_cannot_be_reread(fresh):
    # A scenario text this installation cannot parse: the report still comes out, says so, and shows the text.
    (fresh / "scenario.toml").write_text((fresh / "scenario.toml").read_text() + "\n[no_such_section]\nx = 1\n")
    seal(fresh)
    p = parse(build_report(fresh))
    assert p.errors == []
    assert "could not be re-read" in p.plain and "no_such_section" in p.plain


def test_bad_result_folders(tmp_path, fresh):
    with pytest.raises(ActsimInputError, match=r"does not exist; .*actsim run SCENARIO -o RESULT_DIR"):
        build_report(tmp_path / "nowhere")
    empty = tmp_path / "empty"
    empty.mkdir()
    with pytest.raises(ActsimInputError, match=r"has no actsim manifest.json, so it is not a complete result folder") as exc:
        build_report(empty)
    assert "\n" not in str(exc.value)
    (fresh / "checks.json").write_text("{not json")
    seal(fresh)
    with pytest.raises(ActsimInputError, match=r"checks.json .*not valid JSON") as exc:
        build_report(fresh)
    assert "\n" not in str(exc.value)
    (fresh / "checks.json").write_text(json.dumps([{"check": "x"}]))
    seal(fresh)
    with pytest.raises(ActsimInputError, match=r"record 0 has no 'value' field"):
        build_report(fresh)


def test_cli_report(result_dir, tmp_path, capsys):
    capsys.readouterr()
    assert main(["report", str(result_dir)]) == 0
    out = capsys.readouterr().out
    assert f"report written to {result_dir / 'report.html'}" in out and "CAUTION" not in out  # the caution is on the page
    assert (result_dir / "report.html").is_file()
    dest = tmp_path / "sub" / "my.html"
    assert main(["report", str(result_dir), "-o", str(dest)]) == 0
    assert str(dest) in capsys.readouterr().out and dest.is_file()
    assert main(["report", str(tmp_path / "missing")]) == 2
    cap = capsys.readouterr()
    err = cap.err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("actsim: error: RESULT_DIR:") and "actsim run SCENARIO" in err[0]
    assert not (tmp_path / "missing").exists()


def test_cli_report_help(capsys):
    with pytest.raises(SystemExit) as exc:
        main(["report", "--help"])
    assert exc.value.code == 0
    assert "example:" in capsys.readouterr().out


def _chromium():
    for name in ("chromium", "chromium-browser"):
        path = shutil.which(name)
        if path:
            return path
    return None


CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync"]


@pytest.mark.browser
def test_report_renders_in_headless_browser(result_dir, tmp_path):
    exe = _chromium()
    if exe is None:
        pytest.skip("no chromium on PATH (Debian: apt-get install chromium); the browser test needs it")
    path = write_report(result_dir, tmp_path / "report.html")
    n_img = len(parse(path.read_text()).images)
    assert n_img >= 2
    url = path.resolve().as_uri()
    flags = CHROMIUM_FLAGS + [f"--user-data-dir={tmp_path / 'profile'}"]
    dom = subprocess.run([exe, *flags, "--virtual-time-budget=5000", "--dump-dom", url],
                         capture_output=True, text=True, timeout=60)
    assert dom.returncode == 0, dom.stderr[-2000:]
    page = dom.stdout
    assert "Greenhouse vent flap" in page and page.count("data:image/png;base64,") == n_img
    # The report's own script counts images that are complete with a natural width (i.e. decoded).
    assert f'data-images-total="{n_img}"' in page, page[-500:]
    assert f'data-images-loaded="{n_img}"' in page, page[-500:]
    shot = tmp_path / "shot.png"
    r = subprocess.run([exe, *flags, f"--screenshot={shot}", "--window-size=1200,3000", url],
                       capture_output=True, text=True, timeout=60)
    assert r.returncode == 0, r.stderr[-2000:]
    assert shot.read_bytes().startswith(PNG_SIGNATURE)
