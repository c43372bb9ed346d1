"""The study report: one self-contained HTML file for a result folder.

:func:`build_report` reads a result folder written by ``actsim run`` (and, when
present, the ``checks.json`` written by ``actsim check``) and returns one HTML
page that needs nothing else to be read or printed: the figures are embedded as
base64 PNG data URIs, the style sheet is inline, and a Content-Security-Policy
forbids loading anything from outside the file.

The page holds, in order: the caution; the scenario in plain words and as a
parameter table with units; the key results; every figure of the folder; every
design check with its value, limit, margin, verdict and source (and the caution
again); the versions of actsim and its dependencies; and the scenario text.

Every piece of text taken from a file is escaped (:func:`html.escape`); the
report is written atomically (:func:`actsim.io.write_text`).
"""

from __future__ import annotations

import base64
import datetime as _dt
import html
import json
import math
import platform
import re
import tomllib
from importlib import metadata
from pathlib import Path

import numpy as np

from .cautions import CAUTION
from .errors import ActsimInputError
from .inputfiles import read_text_file

__all__ = ["REPORT_FILE", "CHECKS_FILE", "DEPENDENCIES", "build_report", "write_report", "package_versions"]

#: Default file name of the report inside the result folder.
REPORT_FILE = "report.html"
#: File written by ``actsim check`` (a list of :func:`actsim.checks.verdict.to_records` dicts).
CHECKS_FILE = "checks.json"
#: Distributions whose versions the report lists (importlib.metadata names).
DEPENDENCIES = ("numpy", "scipy", "numba", "xarray", "pint", "matplotlib", "netCDF4", "dask")

_PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
_RUN_HINT = "make it with `actsim run SCENARIO -o RESULT_DIR`"
_CHECK_KEYS = ("check", "value", "limit", "unit", "margin", "passed", "source")

#: Captions of the standard figures (actsim.figures); other PNGs get one from their file name.
_CAPTIONS = {
    "bend_angle": "Bend angle (left axis, degrees) and small-deflection blocked force (right axis, mN) against "
                  "time; the shaded band marks the time the light is on; a dotted line marks the target angle.",
    "profiles": "Conversion (left) and irradiance (right) against depth below the top face at a few times during "
                "the exposure; grey lines mark the layer interfaces.",
}

# ---------------------------------------------------------------------------
# small formatting helpers (all return escaped HTML or plain text to be escaped)


def _e(text) -> str:
    return html.escape(str(text), quote=True)


def _num(x, digits=4) -> str:
    if x is None:
        return "not reached"
    x = float(x)
    if math.isnan(x):
        return "NaN"
    if math.isinf(x):
        return "∞" if x > 0 else "−∞"
    s = f"{x:.{digits}g}"
    if "e" in s:
        mant, ex = s.split("e")
        s = f"{mant}×10^{int(ex)}"
    return s.replace("-", "−")


def _sup(text: str) -> str:
    """Escape ``text`` and turn ``^n`` exponents into superscripts."""
    out = _e(text)
    return re.sub(r"\^(−?-?\d+)", lambda m: f"<sup>{m.group(1)}</sup>", out)


def _length(x) -> tuple[str, str]:
    ax = abs(x)
    if ax >= 1e-3:
        return _num(x * 1e3), "mm"
    if ax >= 1e-6 or ax == 0:
        return _num(x * 1e6), "µm"
    return _num(x * 1e9), "nm"


def _modulus_law_text(m) -> str:
    """Plain words for a modulus that follows a temperature law (glass transition or DMA table)."""
    law = m.temperature_modulus
    if law is None:
        return "—"
    if law[0] == "glass":
        g, gu = _pressure(law[1])
        r, ru = _pressure(law[2])
        return (f"glass transition from {g} {gu} (glassy) to {r} {ru} (rubbery), Tg {_num(law[3] - 273.15)} °C, "
                f"width {_num(law[4])} K")
    e_lo, u_lo = _pressure(float(np.min(law[2])))
    e_hi, u_hi = _pressure(float(np.max(law[2])))
    return (f"tabulated against temperature ({len(law[1])} points, {_num(law[1][0] - 273.15)}–"
            f"{_num(law[1][-1] - 273.15)} °C, {e_lo} {u_lo} to {e_hi} {u_hi})")


def _pressure(x) -> tuple[str, str]:
    ax = abs(x)
    for scale, unit in ((1e9, "GPa"), (1e6, "MPa"), (1e3, "kPa")):
        if ax >= scale:
            return _num(x / scale), unit
    return _num(x), "Pa"


def _irr(x) -> str:
    """Irradiance in the customary mW/cm^2 (1 mW/cm^2 = 10 W/m^2)."""
    return f"{_num(x / 10.0)} mW/cm²"


# ---------------------------------------------------------------------------
# reading the result folder


def _require_result(result_dir) -> tuple[Path, dict]:
    out = Path(result_dir)
    if not out.is_dir():
        raise ActsimInputError(f"RESULT_DIR: folder '{out}' does not exist; {_RUN_HINT}")
    missing = [name for name in ("result.nc", "summary.json") if not (out / name).is_file()]
    if missing:
        raise ActsimInputError(
            f"RESULT_DIR: '{out}' has no {' and no '.join(missing)}, so it is not a result folder; {_RUN_HINT}"
        )
    from .folders import verify_folder

    # one complete run exactly as written: a folder without a manifest (an older actsim), with a changed,
    # missing or extra file, or from another verb is refused before anything of it is read
    verify_folder(out, kinds=("run", "check"), field="RESULT_DIR", hint=f"re-run: {_RUN_HINT}")
    try:
        record = json.loads(read_text_file(out / "summary.json", field="RESULT_DIR", what="JSON"))
    except json.JSONDecodeError as exc:
        raise ActsimInputError(f"summary.json in '{out}': not valid JSON ({exc}); {_RUN_HINT}") from None
    if not isinstance(record, dict) or not isinstance(record.get("metrics"), dict):
        raise ActsimInputError(f"summary.json in '{out}': no 'metrics' table; {_RUN_HINT}")
    return out, record


def _load_checks(out: Path):
    """The check records of ``checks.json``, or None when the file is absent."""
    path = out / CHECKS_FILE
    if not path.is_file():
        return None
    try:
        data = json.loads(read_text_file(path, field="RESULT_DIR", what="JSON"))
    except json.JSONDecodeError as exc:
        raise ActsimInputError(f"{CHECKS_FILE} in '{out}': not valid JSON ({exc}); rerun `actsim check SCENARIO -o {out}`") from None
    if isinstance(data, dict):
        for key in ("checks", "results", "records"):
            if isinstance(data.get(key), list):
                data = data[key]
                break
    if not isinstance(data, list):
        raise ActsimInputError(f"{CHECKS_FILE} in '{out}': expected a list of check records; rerun `actsim check SCENARIO -o {out}`")
    for i, rec in enumerate(data):
        if not isinstance(rec, dict):
            raise ActsimInputError(f"{CHECKS_FILE} in '{out}': record {i} is not a table of check fields")
        lack = [k for k in _CHECK_KEYS if k not in rec]
        if lack:
            raise ActsimInputError(f"{CHECKS_FILE} in '{out}': record {i} has no '{lack[0]}' field; rerun `actsim check SCENARIO -o {out}`")
        for key in ("value", "limit", "margin"):  # numbers, null, or the words a JSON writer uses for infinities
            v = rec[key]
            ok = v is None or (isinstance(v, (int, float)) and not isinstance(v, bool)) or (
                isinstance(v, str) and v.strip().lower() in ("inf", "+inf", "-inf", "infinity", "-infinity", "nan"))
            if not ok:
                raise ActsimInputError(f"{CHECKS_FILE} in '{out}': record {i} field '{key}' is not a number; "
                                       f"rerun `actsim check SCENARIO -o {out}`")
        for key in ("check", "unit", "source"):
            if not isinstance(rec[key], str):
                raise ActsimInputError(f"{CHECKS_FILE} in '{out}': record {i} field '{key}' is not text; "
                                       f"rerun `actsim check SCENARIO -o {out}`")
    return data


def _load_scenario(out: Path, record: dict):
    """(Scenario or None, toml text, reason it could not be re-read or '')."""
    text = ""
    p = out / "scenario.toml"
    if p.is_file():
        text = read_text_file(p, field="RESULT_DIR", what="TOML")
    if not text:
        return None, "", "the result folder holds no scenario.toml"
    from .scenario import parse_scenario

    orig = Path(str(record.get("scenario_path") or ""))
    base = orig.parent if str(orig) and orig.parent.is_dir() else out
    try:
        return parse_scenario(text, path=str(orig) if str(orig) else p, base_dir=base), text, ""
    except ActsimInputError as exc:
        return None, text, str(exc)


def package_versions() -> list[tuple[str, str]]:
    """``(name, version)`` of Python, actsim and each of :data:`DEPENDENCIES` ("not installed" if absent)."""
    rows = [("Python", platform.python_version())]
    for name in ("actsim", *DEPENDENCIES):
        try:
            rows.append((name, metadata.version(name)))
        except metadata.PackageNotFoundError:
            rows.append((name, "not installed"))
    return rows


def _figures(out: Path) -> list[tuple[Path, bytes]]:
    """PNG files of the folder: figures/ first (sorted), then any other PNG below the folder."""
    fig_dir = out / "figures"
    first = sorted(fig_dir.glob("*.png")) if fig_dir.is_dir() else []
    rest = sorted(p for p in out.rglob("*.png") if p not in first and not p.name.startswith("."))
    found = []
    for p in first + rest:
        if not p.is_file():
            continue
        data = p.read_bytes()
        if data.startswith(_PNG_SIGNATURE):
            found.append((p, data))
    return found


def _caption(path: Path, out: Path) -> str:
    rel = path.relative_to(out).as_posix()
    if path.parent == out / "figures" and path.stem in _CAPTIONS:
        return _CAPTIONS[path.stem]
    words = path.stem.replace("_", " ").replace("-", " ").strip()
    return f"{words[:1].upper()}{words[1:]} ({rel})."


# ---------------------------------------------------------------------------
# sections


def _spectral_text(fn, sources, unit_fmt) -> str:
    """A spectral property in words, with its value at each source's mean wavelength."""
    if fn is None:
        return "—"
    if fn.kind == "constant":
        return unit_fmt(fn.constant) + " (all wavelengths)"
    if fn.kind == "table":
        form = f"tabulated, {_num(fn.wavelength[0] * 1e9)}–{_num(fn.wavelength[-1] * 1e9)} nm"
    else:
        form = f"{len(fn.bands)} Gaussian band(s) centred at " + ", ".join(f"{_num(b[0] * 1e9)} nm" for b in fn.bands)
    at = []
    for s in sources:
        lam = float(np.sum(s.band_wavelength * s.band_fraction))
        try:
            v = float(fn(lam)[0])
        except ActsimInputError:
            continue
        at.append(f"{unit_fmt(v)} at {_num(lam * 1e9)} nm")
    return form + ("; " + "; ".join(at) if at else "")


def _eps(v) -> str:
    # decadic molar absorptivity: 1 L/(mol cm) = 0.1 m^2/mol
    return f"{_num(v * 10.0)} L/(mol·cm)"


def _plain(v) -> str:
    return _num(v)


def _scenario_words(sc) -> str:
    parts = []
    fl, fu = _length(sc.strip.free_length)
    wd, wu = _length(sc.strip.width)
    th, tu = _length(sc.thickness)
    section = ("a narrow beam (plane stress across the width)" if sc.strip.section == "beam"
               else "a wide plate (plane strain across the width)")
    parts.append(
        f"<p><strong>Strip.</strong> A cantilever strip with a free length of {fl} {fu} and a width of {wd} {wu}, "
        f"modelled as {section}. The stack is {th} {tu} thick and has {len(sc.layers)} layer(s), listed from the "
        f"bottom face (z = 0) up to the top face:</p>"
    )
    items = []
    for layer in sc.layers:
        m = layer.material
        t, tu = _length(layer.thickness)
        e0, eu = _pressure(m.modulus) if m.modulus is not None else (_modulus_law_text(m), "")
        if m.is_active:
            e1, eu1 = _pressure(m.product_modulus) if m.product_modulus is not None else (
                f"{_num(m.product_modulus_ratio)} x that", "")
            what = (f"photoactive: chromophore {_num(m.chromophore_concentration / 1000.0)} mol/L, eigenstrain "
                    f"{_num(m.photo_strain * 100)} % at full conversion, Young's modulus {e0} {eu} unconverted and "
                    f"{e1} {eu1} fully converted")
            if m.thermal_back_rate > 0:
                what += f", thermal back-reaction {_num(m.thermal_back_rate)} 1/s"
        else:
            what = f"passive: Young's modulus {e0} {eu}"
        what += f", Poisson's ratio {_num(m.poisson_ratio)}"
        init = f", initial conversion {_num(layer.initial_conversion)}" if layer.initial_conversion else ""
        items.append(f"<li><strong>{_e(layer.name)}</strong>: {t} {tu} of material <em>{_e(m.name)}</em> "
                     f"({_e(what)}{_e(init)}).</li>")
    parts.append("<ol class=\"plain\">" + "".join(items) + "</ol>")
    if sc.sources:
        items = [f"<li><strong>{_e(s.name)}</strong>: {_e(s.description)}, {_e(_irr(s.irradiance))} "
                 f"({_e(_num(s.irradiance))} W/m²) at the {_e(s.face)} face unless a protocol step says otherwise.</li>"
                 for s in sc.sources]
        parts.append(f"<p><strong>Light sources.</strong> {len(sc.sources)} source(s):</p>"
                     f"<ul class=\"plain\">{''.join(items)}</ul>")
    else:
        parts.append("<p><strong>Light sources.</strong> None: the strip stays in the dark.</p>")
    items = []
    for i, step in enumerate(sc.protocol):
        on = [f"{s.name} at {_irr(v)}" for s, v in zip(sc.sources, step.irradiance) if v > 0]
        light = ", ".join(on) if on else "all light off"
        items.append(f"<li><strong>{_e(step.label)}</strong>: {_e(_num(step.duration))} s, {_e(light)}.</li>")
    parts.append(f"<p><strong>Protocol.</strong> {len(sc.protocol)} step(s), {_e(_num(sc.duration))} s in total:</p>"
                 f"<ol class=\"plain\">{''.join(items)}</ol>")
    if sc.target_bend_angle is not None:
        parts.append(f"<p><strong>Target.</strong> The time to reach a bend angle of "
                     f"{_e(_num(math.degrees(sc.target_bend_angle)))}° is reported.</p>")
    return "".join(parts)


def _param_rows(sc) -> list[tuple[str, str, str, str]]:
    """(group, parameter, value, unit) rows, values in engineering units."""
    rows = []
    fl, fu = _length(sc.strip.free_length)
    wd, wu = _length(sc.strip.width)
    th, tu = _length(sc.thickness)
    rows += [("strip", "free length", fl, fu), ("strip", "width", wd, wu),
             ("strip", "section", sc.strip.section, "—"), ("strip", "total thickness", th, tu)]
    for i, layer in enumerate(sc.layers):
        g = f"layer {i + 1}: {layer.name}"
        t, u = _length(layer.thickness)
        rows += [(g, "thickness", t, u), (g, "material", layer.material.name, "—"), (g, "cells", str(layer.cells), "—")]
        if layer.initial_conversion:
            rows.append((g, "initial conversion", _num(layer.initial_conversion), "1"))
    seen = []
    for layer in sc.layers:
        m = layer.material
        if m.name in seen:
            continue
        seen.append(m.name)
        g = f"material: {m.name}"
        if m.modulus is None:
            rows.append((g, "Young's modulus (unconverted)", _modulus_law_text(m), "—"))
            if m.product_modulus_ratio != 1.0:
                rows.append((g, "fully converted / unconverted modulus", _num(m.product_modulus_ratio), "1"))
        else:
            rows.append((g, "Young's modulus (unconverted)", *_pressure(m.modulus)))
            if m.product_modulus != m.modulus:
                rows.append((g, "Young's modulus (fully converted)", *_pressure(m.product_modulus)))
        rows += [(g, "Poisson's ratio", _num(m.poisson_ratio), "1"), (g, "refractive index", _num(m.refractive_index), "1")]
        if not m.background_absorption.is_zero():
            rows.append((g, "background absorption (natural log)",
                         _spectral_text(m.background_absorption, sc.sources, lambda v: f"{_num(v / 100.0)} 1/cm"), "—"))
        if m.is_active:
            rows += [
                (g, "chromophore concentration", _num(m.chromophore_concentration / 1000.0), "mol/L"),
                (g, "eigenstrain at full conversion", _num(m.photo_strain * 100.0), "%"),
                (g, "thermal back-reaction rate", _num(m.thermal_back_rate), "1/s"),
                (g, "reactant absorptivity (decadic)", _spectral_text(m.reactant_absorptivity, sc.sources, _eps), "—"),
                (g, "product absorptivity (decadic)", _spectral_text(m.product_absorptivity, sc.sources, _eps), "—"),
                (g, "forward quantum yield", _spectral_text(m.forward_quantum_yield, sc.sources, _plain), "—"),
                (g, "backward quantum yield", _spectral_text(m.backward_quantum_yield, sc.sources, _plain), "—"),
            ]
    for s in sc.sources:
        g = f"source: {s.name}"
        lam = float(np.sum(s.band_wavelength * s.band_fraction))
        rows += [(g, "spectrum", s.description, "—"), (g, "mean wavelength", _num(lam * 1e9), "nm"),
                 (g, "wavelength bands", str(len(s.band_wavelength)), "—"),
                 (g, "irradiance", _num(s.irradiance / 10.0), "mW/cm²"), (g, "lit face", s.face, "—")]
    for i, step in enumerate(sc.protocol):
        g = f"step {i + 1}: {step.label}"
        rows.append((g, "duration", _num(step.duration), "s"))
        for s, v in zip(sc.sources, step.irradiance):
            rows.append((g, f"irradiance of {s.name}", _num(v / 10.0), "mW/cm²"))
    rows += [("time", "output interval", _num(sc.output_interval), "s"), ("time", "time step", _num(sc.time_step), "s")]
    o = sc.optics
    rows += [("optics", "front-face reflection", "on" if o.front_reflection else "off", "—"),
             ("optics", "ambient refractive index", _num(o.ambient_refractive_index), "1")]
    if sc.target_bend_angle is not None:
        rows.append(("report", "target bend angle", _num(math.degrees(sc.target_bend_angle)), "°"))
    return rows


def _looks_numeric(text: str) -> bool:
    return re.fullmatch(r"[−+-]?[0-9.]+(×10\^−?[0-9]+)?", str(text)) is not None


def _caution_html() -> str:
    head, sep, rest = CAUTION.partition(":")
    if sep and head.isupper():
        return f"<strong>{_e(head)}:</strong>{_e(rest)}"
    return f"<strong>Caution.</strong> {_e(CAUTION)}"


def _scenario_section(sc, reason, text) -> str:
    if sc is None:
        why = _e(reason)
        words = (f"<p class=\"warn\">The scenario could not be re-read by this actsim installation ({why}); its "
                 f"text is shown in the appendix.</p>")
        table = ""
        if text:
            try:
                raw = tomllib.loads(text)
            except tomllib.TOMLDecodeError:
                raw = {}
            rows = []
            for key in ("title", "description"):
                if isinstance(raw.get(key), str):
                    rows.append(f"<tr><th scope=\"row\">{key}</th><td>{_e(raw[key])}</td></tr>")
            if rows:
                table = "<table class=\"params\"><tbody>" + "".join(rows) + "</tbody></table>"
        return words + table
    rows = _param_rows(sc)
    body = []
    prev = None
    for g, name, value, unit in rows:
        if g != prev:
            body.append(f"<tr class=\"group\"><th colspan=\"3\" scope=\"rowgroup\">{_e(g)}</th></tr>")
            prev = g
        cls = "num" if _looks_numeric(value) else "txt"
        body.append(f"<tr><td>{_e(name)}</td><td class=\"{cls}\">{_sup(value)}</td><td>{_e(unit)}</td></tr>")
    table = ("<table class=\"params\"><caption>Scenario parameters (values as used by the model, in engineering "
             "units)</caption><thead><tr><th scope=\"col\">parameter</th><th scope=\"col\">value</th>"
             "<th scope=\"col\">unit</th></tr></thead><tbody>" + "".join(body) + "</tbody></table>")
    return (f"<h3>In plain words</h3>{_scenario_words(sc)}<h3>Parameter table</h3>{table}")


# metric key -> (label, scale, unit); angles are converted with math.degrees
_METRICS = {
    "peak_bend_angle": ("peak bend angle", "deg", "°"),
    "time_of_peak_bend": ("time of peak bend", 1.0, "s"),
    "final_bend_angle": ("final bend angle (end of protocol)", "deg", "°"),
    "time_to_90_percent": ("time to 90 % of peak bend", 1.0, "s"),
    "peak_blocked_force": ("peak blocked force (small deflection)", 1e3, "mN"),
    "peak_blocked_moment": ("peak blocked moment", 1e6, "µN·m"),
    "peak_tip_deflection": ("peak tip travel", 1e3, "mm"),
    "peak_front_depth": ("deepest conversion front", 1e6, "µm"),
    "final_front_depth": ("conversion front depth at the end", 1e6, "µm"),
    "optical_dose": ("optical dose (incident)", 1e-4, "J/cm²"),
    "peak_temperature": ("peak temperature", "degC", "°C"),
    "target_bend_angle": ("target bend angle", "deg", "°"),
    "time_to_target": ("time to the target bend angle", 1.0, "s"),
    "blocked_force_at_target": ("blocked force at the target angle", 1e3, "mN"),
    "front_depth_at_target": ("conversion front depth at the target angle", 1e6, "µm"),
}


def _metric_value(value, scale):
    if value is None or isinstance(value, bool) or not isinstance(value, (int, float)):
        return _num(None) if value is None else str(value)
    if scale == "deg":
        return _num(math.degrees(value))
    if scale == "degC":
        return _num(value - 273.15)
    return _num(value * scale)


def _results_section(metrics: dict, has_temperature: bool) -> str:
    rows = []
    for key, (label, scale, unit) in _METRICS.items():
        if key in metrics:
            rows.append((label, _metric_value(metrics[key], scale), unit))
            if key == "peak_temperature" and isinstance(metrics[key], (int, float)):
                rows.append(("peak temperature (absolute)", _num(metrics[key]), "K"))
    for key, value in metrics.items():
        if key not in _METRICS:
            rows.append((key.replace("_", " "), _metric_value(value, 1.0), "SI"))
    body = "".join(f"<tr><td>{_e(a)}</td><td class=\"num\">{_sup(b)}</td><td>{_e(c)}</td></tr>" for a, b, c in rows)
    table = ("<table class=\"results\"><caption>Key results (from summary.json)</caption><thead><tr>"
             "<th scope=\"col\">quantity</th><th scope=\"col\">value</th><th scope=\"col\">unit</th></tr></thead>"
             f"<tbody>{body}</tbody></table>")
    notes = ["A positive bend angle bends the strip toward its top face (the top face becomes concave).",
             "The blocked force is the small-deflection estimate 3·EI·κ/(2L) at the free end."]
    if has_temperature:
        notes.append("Heat conduction through the thickness is modelled in this scenario; the peak temperature is "
                     "the highest temperature anywhere in the stack.")
    else:
        notes.append("Temperature is not modelled in this scenario: light-induced heating and any thermal "
                     "expansion are left out of these results.")
    return table + "<ul class=\"notes\">" + "".join(f"<li>{_e(n)}</li>" for n in notes) + "</ul>"


def _figures_section(out: Path) -> tuple[str, int]:
    figs = _figures(out)
    if not figs:
        return ("<p>This result folder holds no figures (the run was made with <code>--no-figures</code>, or the "
                "figures were removed). Rerun <code>actsim run SCENARIO -o RESULT_DIR</code> to draw them.</p>", 0)
    parts = []
    for i, (path, data) in enumerate(figs, start=1):
        uri = "data:image/png;base64," + base64.b64encode(data).decode("ascii")
        rel = path.relative_to(out).as_posix()
        cap = _caption(path, out)
        parts.append(f"<figure id=\"fig-{i}\"><img src=\"{uri}\" alt=\"{_e(rel)}\">"
                     f"<figcaption><strong>Figure {i}.</strong> {_e(cap)} <span class=\"file\">[{_e(rel)}]</span>"
                     f"</figcaption></figure>")
    return "".join(parts), len(figs)


def _fmt_check_quantity(x, unit) -> str:
    try:
        from .checks.verdict import format_quantity

        return format_quantity(float(x), str(unit))
    except Exception:  # formatting must never stop a report
        return f"{_num(x)} {unit}".strip()


def _checks_section(records, out: Path) -> str:
    caution = f"<p class=\"caution small\" role=\"note\">{_caution_html()}</p>"
    if records is None:
        return ("<p class=\"nochecks\"><strong>No design checks were run for this result.</strong> The strength, "
                "fatigue, light-exposure and skin-contact checks are made by <code>actsim check SCENARIO -o "
                "RESULT_DIR</code>, which writes <code>checks.json</code> into this folder; make the report again "
                f"afterwards.</p>{caution}")
    if not records:
        return f"<p class=\"nochecks\">checks.json lists no checks: the scenario asked for none.</p>{caution}"
    n_pass = sum(bool(r["passed"]) for r in records)
    body = []
    notes = []
    classes = []
    for i, r in enumerate(records, start=1):
        passed = bool(r["passed"])
        try:
            exceeds = float(r["value"]) > float(r["limit"])
        except (TypeError, ValueError):
            exceeds = not passed
        cls = "pass" if passed else ("fail" if exceeds else "short")
        classes.append(cls)
        verdict = str(r.get("verdict") or ("within the modelled limit" if passed else "exceeds the modelled limit"))
        tail = f" ({r['source']})"
        if verdict.endswith(tail) and len(verdict) > len(tail):
            verdict = verdict[: -len(tail)]  # the source has its own column
        mark = "✔" if passed else "✘"
        kind = r.get("margin_kind", "ratio")
        m = r["margin"]
        try:  # a writer that refuses infinities may store "inf" as text or null
            m = math.inf if m is None else float(m)
        except (TypeError, ValueError):
            m = None
        if m is None:
            margin = str(r["margin"])
        elif kind == "ratio":
            margin = _num(m, 3) + ("×" if math.isfinite(m) else "")
        else:
            margin = _fmt_check_quantity(m, r["unit"])
        ref = ""
        if r.get("note") or r.get("validity"):
            notes.append((i, r.get("validity", ""), r.get("note", "")))
            ref = f"<sup><a href=\"#check-note-{i}\">[{i}]</a></sup>"
        body.append(
            f"<tr class=\"{cls}\"><td class=\"num\">{i}</td><td>{_e(r['check'])}{ref}</td>"
            f"<td class=\"num\">{_sup(_fmt_check_quantity(r['value'], r['unit']))}</td>"
            f"<td class=\"num\">{_sup(_fmt_check_quantity(r['limit'], r['unit']))}</td>"
            f"<td class=\"num\">{_sup(margin)}</td>"
            f"<td class=\"verdict {cls}\"><span class=\"mark\">{mark}</span> {_e(verdict)}</td>"
            f"<td class=\"src\">{_e(r['source'])}</td></tr>"
        )
    table = ("<table class=\"checks\"><caption>Design checks (from checks.json): the modelled value against the "
             "modelled limit</caption><thead><tr><th scope=\"col\">#</th><th scope=\"col\">check</th>"
             "<th scope=\"col\">value</th><th scope=\"col\">limit</th><th scope=\"col\">margin</th>"
             "<th scope=\"col\">verdict</th><th scope=\"col\">source of the limit</th></tr></thead>"
             f"<tbody>{''.join(body)}</tbody></table>")
    n_exceed = sum(cls == "fail" for cls in classes)
    n_short = sum(cls == "short" for cls in classes)
    tally = [f"<span class=\"pass\">{n_pass} passed (within the modelled limit)</span>",
             f"<span class=\"{'fail' if n_exceed else 'pass'}\">{n_exceed} {'exceeds' if n_exceed == 1 else 'exceed'} the modelled limit</span>"]
    if n_short:
        tally.append(f"<span class=\"short\">{n_short} within the limit but short of the required margin</span>")
    summary = (f"<p class=\"tally\"><strong>{len(records)} check(s):</strong> {', '.join(tally)}. "
               "Margin: limit ÷ value for a ratio (above 1 means below the limit), limit − value for a "
               "difference.</p>")
    nl = "".join(
        f"<li id=\"check-note-{i}\"><strong>[{i}]</strong> "
        + (f"<em>Validity:</em> {_e(v)}. " if v else "") + (f"<em>Note:</em> {_e(n)}" if n else "") + "</li>"
        for i, v, n in notes
    )
    return caution + summary + table + (f"<ul class=\"checknotes\">{nl}</ul>" if nl else "")


def _versions_section(record: dict) -> str:
    rows = "".join(f"<tr><td>{_e(n)}</td><td class=\"num\">{_e(v)}</td></tr>" for n, v in package_versions())
    wrote = record.get("actsim_version", "unknown")
    return (f"<p>The result was computed by actsim {_e(wrote)}; this report was made with the versions below.</p>"
            "<table class=\"versions\"><thead><tr><th scope=\"col\">package</th><th scope=\"col\">version</th>"
            f"</tr></thead><tbody>{rows}</tbody></table>")


_CSS = """
:root { --ink:#1b1f24; --muted:#5b6570; --rule:#d5dae0; --head:#eef1f5; --accent:#1f4e79;
        --pass:#e3f4e6; --pass-ink:#1d6b2c; --fail:#fbe3e1; --fail-ink:#a1261b; --short:#fff1d6; --short-ink:#8a5a00; }
* { box-sizing: border-box; }
html { font-size: 15px; }
body { margin: 0 auto; max-width: 60rem; padding: 2rem 2.2rem 3rem; color: var(--ink); background: #fff;
       font-family: "DejaVu Sans", "Segoe UI", Helvetica, Arial, sans-serif; line-height: 1.45; }
header.title { border-bottom: 3px solid var(--accent); padding-bottom: .8rem; margin-bottom: 1.2rem; }
header.title .kicker { text-transform: uppercase; letter-spacing: .08em; font-size: .78rem; color: var(--muted); margin: 0; }
h1 { font-size: 1.7rem; margin: .2rem 0 .3rem; color: var(--accent); }
h2 { font-size: 1.25rem; margin: 2rem 0 .6rem; padding-bottom: .2rem; border-bottom: 1px solid var(--rule); color: var(--accent); }
h3 { font-size: 1.02rem; margin: 1.2rem 0 .4rem; }
.meta { color: var(--muted); font-size: .88rem; margin: .2rem 0 0; }
.caution { border: 2px solid #b35900; background: #fff6e8; padding: .7rem .9rem; border-radius: 4px; margin: 1rem 0; }
.caution.small { font-size: .88rem; border-width: 1px; }
.caution strong { color: #8a4300; }
nav.toc { font-size: .92rem; background: #f7f8fa; border: 1px solid var(--rule); padding: .5rem 1rem; border-radius: 4px; }
nav.toc ol { margin: .2rem 0; padding-left: 1.3rem; columns: 2; }
a { color: var(--accent); }
table { border-collapse: collapse; width: 100%; margin: .6rem 0 1rem; font-size: .9rem; }
caption { text-align: left; font-weight: 600; padding: .2rem 0 .4rem; color: var(--muted); font-size: .86rem; }
th, td { border: 1px solid var(--rule); padding: .28rem .5rem; text-align: left; vertical-align: top; }
thead th { background: var(--head); font-weight: 600; }
tr.group th { background: #f7f8fa; font-weight: 600; color: var(--accent); }
td.txt { text-align: left; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
table.params td:first-child, table.results td:first-child { width: 55%; }
table.params td:last-child, table.results td:last-child { width: 12%; }
table.versions { width: auto; min-width: 22rem; }
table.checks td.src { font-size: .82rem; color: var(--muted); }
td.verdict { font-weight: 600; }
td.verdict.pass { background: var(--pass); color: var(--pass-ink); }
td.verdict.fail { background: var(--fail); color: var(--fail-ink); }
td.verdict.short { background: var(--short); color: var(--short-ink); }
.tally .pass { color: var(--pass-ink); } .tally .fail { color: var(--fail-ink); } .tally .short { color: var(--short-ink); }
.mark { font-size: 1.05em; }
ol.plain, ul.plain { margin: .3rem 0 .8rem; }
ul.notes, ul.checknotes { font-size: .86rem; color: var(--muted); }
ul.checknotes { list-style: none; padding-left: .4rem; }
table.checks th:nth-child(2) { width: 26%; } table.checks th:nth-child(6) { width: 22%; }
table.checks th:nth-child(7) { width: 20%; }
.nochecks { background: #f7f8fa; border-left: 4px solid var(--muted); padding: .6rem .9rem; }
.warn { background: var(--short); padding: .5rem .8rem; }
figure { margin: 1rem 0 1.6rem; text-align: center; }
figure img { max-width: 100%; height: auto; border: 1px solid var(--rule); }
figcaption { text-align: left; font-size: .88rem; color: var(--ink); margin-top: .35rem; }
figcaption .file { color: var(--muted); font-size: .8rem; }
code, pre { font-family: "DejaVu Sans Mono", Menlo, Consolas, monospace; font-size: .86rem; }
code { background: #f1f3f5; padding: 0 .2rem; border-radius: 2px; }
pre { background: #f7f8fa; border: 1px solid var(--rule); padding: .7rem; overflow-x: auto; white-space: pre-wrap; }
details summary { cursor: pointer; font-weight: 600; }
footer { margin-top: 2.5rem; font-size: .8rem; color: var(--muted); border-top: 1px solid var(--rule); padding-top: .5rem; }
@media print {
  @page { size: A4; margin: 16mm 14mm; }
  html { font-size: 10.5pt; }
  body { max-width: none; padding: 0; }
  nav.toc { display: none; }
  h2 { break-after: avoid; page-break-after: avoid; }
  figure, table.checks tr, table.results, table.versions, .caution { break-inside: avoid; page-break-inside: avoid; }
  thead { display: table-header-group; }
  a { color: inherit; text-decoration: none; }
  td.verdict.pass, td.verdict.fail, td.verdict.short, .caution { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  details > summary { list-style: none; }
}
"""

# Counts images that have loaded (complete and with a width) into data attributes on <body>
# (read by the browser test) and opens every collapsed block before printing.
_SCRIPT = """
(function () {
  function count() {
    var imgs = document.images, n = 0;
    for (var i = 0; i < imgs.length; i++) { if (imgs[i].complete && imgs[i].naturalWidth > 0) { n++; } }
    document.body.dataset.imagesLoaded = String(n);
    document.body.dataset.imagesTotal = String(imgs.length);
  }
  count();
  window.addEventListener("load", count);
  window.addEventListener("beforeprint", function () {
    var d = document.querySelectorAll("details");
    for (var i = 0; i < d.length; i++) { d[i].open = true; }
  });
})();
"""

_CSP = "default-src 'none'; img-src data:; style-src 'unsafe-inline'; script-src 'unsafe-inline'"


def build_report(result_dir) -> str:
    """The study report of a result folder, as one self-contained HTML page.

    Parameters
    ----------
    result_dir : str or os.PathLike
        A folder written by ``actsim run`` (holding ``result.nc`` and
        ``summary.json``); ``checks.json`` from ``actsim check`` is used when present.

    Returns
    -------
    str
        The HTML text (UTF-8, no external resources).

    Raises
    ------
    ActsimInputError
        The folder is missing or is not a result folder, or ``checks.json`` is unreadable.
    """
    out, record = _require_result(result_dir)
    checks = _load_checks(out)
    sc, text, reason = _load_scenario(out, record)
    metrics = record["metrics"]
    has_temperature = "peak_temperature" in metrics
    if not has_temperature:
        try:
            import xarray as xr

            with xr.open_dataset(out / "result.nc") as ds:
                has_temperature = "temperature" in ds
        except (OSError, ValueError) as exc:
            raise ActsimInputError(f"result.nc in '{out}': cannot be read ({exc}); {_RUN_HINT}") from None

    from . import __version__

    title = str(record.get("title") or (sc.title if sc else out.name))
    desc = sc.description if sc is not None else ""
    when = _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    figures_html, n_fig = _figures_section(out)
    n_checks = "none run" if checks is None else str(len(checks))
    sections = [
        ("scenario", "Scenario", _scenario_section(sc, reason, text)),
        ("results", "Key results", _results_section(metrics, has_temperature)),
        ("figures", f"Figures ({n_fig})", figures_html),
        ("checks", f"Design checks ({n_checks})", _checks_section(checks, out)),
        ("versions", "Software versions", _versions_section(record)),
        ("scenario-text", "Appendix: scenario file",
         "<details><summary>Show the scenario TOML exactly as run (scenario.toml)</summary>"
         f"<pre>{_e(text) if text else 'not available'}</pre></details>"),
    ]
    toc = "".join(f"<li><a href=\"#{sid}\">{_e(name)}</a></li>" for sid, name, _ in sections)
    body = "".join(f"<section id=\"{sid}\"><h2>{i}. {_e(name)}</h2>{content}</section>"
                   for i, (sid, name, content) in enumerate(sections, start=1))
    src = record.get("scenario_path") or "scenario.toml"
    return (
        "<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
        f"<meta http-equiv=\"Content-Security-Policy\" content=\"{_CSP}\">"
        "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
        f"<meta name=\"generator\" content=\"actsim {_e(__version__)}\">"
        f"<title>{_e(title)} — actsim study report</title><style>{_CSS}</style></head>"
        "<body><header class=\"title\"><p class=\"kicker\">actsim study report</p>"
        f"<h1>{_e(title)}</h1>" + (f"<p>{_e(desc)}</p>" if desc else "")
        + f"<p class=\"meta\">Result folder <code>{_e(out.name)}</code> · scenario <code>{_e(src)}</code> · "
        f"made {_e(when)} with actsim {_e(__version__)}</p></header>"
        f"<div class=\"caution\" role=\"note\">{_caution_html()}</div>"
        f"<nav class=\"toc\"><strong>Contents</strong><ol>{toc}</ol></nav>"
        f"<main>{body}</main>"
        "<footer>Made by <code>actsim report</code>. Model predictions under the stated assumptions; see the caution "
        "above.</footer>"
        f"<script>{_SCRIPT}</script></body></html>\n"
    )


def write_report(result_dir, path=None) -> Path:
    """Write the study report of ``result_dir`` atomically.

    Parameters
    ----------
    result_dir : str or os.PathLike
        The result folder (see :func:`build_report`).
    path : str or os.PathLike, optional
        Output file (default ``result_dir/report.html``).

    Returns
    -------
    pathlib.Path
        Where the report was written.
    """
    from .io import write_text

    # Character references keep the file pure ASCII, readable whatever the locale's encoding.
    text = build_report(result_dir).encode("ascii", "xmlcharrefreplace").decode("ascii")
    dest = Path(path) if path is not None else Path(result_dir) / REPORT_FILE
    if dest.is_dir():
        raise ActsimInputError(f"-o: '{dest}' is a folder; give a file name such as {dest / REPORT_FILE}")
    write_text(dest, text)
    return dest
