"""The report: one self-contained HTML file for any result folder.

:func:`build_report` reads a result folder written by ``actsim run`` (with or
without its ``uncertainty`` and ``mask`` parts), ``actsim check``, ``actsim
sweep`` or ``actsim fit`` -- the kind and parts are read from the folder's
``manifest.json`` after :func:`actsim.folders.verify_folder` -- and returns one
HTML page that needs nothing else to be read or printed: the figures are
embedded as base64 PNG data URIs, the style sheet is inline, and a
Content-Security-Policy forbids loading anything from outside the file.

Every page opens with the answer (the first screen): for a check the verdict,
the tightest margin and its check and the actuation numbers ``actsim check``
prints; for a run the peak bend, time to target, force and peak temperature;
for a sweep the recommended or best design and the Pareto set; for a fit the
fitted parameters with their uncertainty and the residual with its unit. The
caution follows once; then figures, tables, the scenario, software versions and
the input texts.

The page is built from the jinja2 templates in ``actsim/templates/`` with
autoescaping on (:data:`TEMPLATES`): every text taken from a file reaches the
page escaped; the Python code here only gathers and formats values. The report
is written atomically (:func:`actsim.io.write_text`).
"""

from __future__ import annotations

import base64
import datetime as _dt
import json
import math
import platform
import re
import tomllib
from functools import lru_cache
from importlib import metadata
from pathlib import Path

import numpy as np

from .cautions import CAUTION
from .errors import ActsimInputError
from .inputfiles import read_text_file

__all__ = ["REPORT_FILE", "CHECKS_FILE", "DEPENDENCIES", "TEMPLATES", "build_report", "write_report",
           "package_versions", "report_context", "figure_title"]

#: Default file name of the report inside the result folder.
REPORT_FILE = "report.html"
#: File written by ``actsim check`` (check records and their details).
CHECKS_FILE = "checks.json"
#: Distributions whose versions the report lists (importlib.metadata names).
DEPENDENCIES = ("numpy", "scipy", "numba", "xarray", "pint", "matplotlib", "netCDF4", "dask", "jinja2")
#: The templates of the report (package data in ``actsim/templates/``): the page, its style and script, and
#: one first screen and one body per folder kind.
TEMPLATES = ("report.html", "_macros.html", "report.css", "report.js", "answer_run.html", "answer_check.html",
             "answer_sweep.html", "answer_fit.html", "body_run.html", "body_check.html", "body_sweep.html",
             "body_fit.html", "_scenario.html")

_PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
_HINT = "make it with `actsim run SCENARIO -o RESULT_DIR` (or `actsim check`, `actsim sweep`, `actsim fit`)"
_CHECK_KEYS = ("check", "value", "limit", "unit", "margin", "passed", "source")
_CSP = "default-src 'none'; img-src data:; style-src 'unsafe-inline'; script-src 'unsafe-inline'"
#: Most designs listed one by one in a sweep report; beyond it the best ones, the Pareto set and the winner.
SWEEP_ROWS_SHOWN = 40

#: Titles of the figures actsim draws, by file stem: used when the folder's record gives none. They say what is
#: plotted, never what marks a figure may or may not carry.
_FIGURE_TITLES = {
    "bend_angle": "Bend angle and blocked force against time",
    "temperature": "Temperature against time",
    "profiles": "Conversion and irradiance through the thickness",
    "folded_shape": "Shape of the strip lit through the mask",
    "uncertainty_bend_angle": "Bend angle with its uncertainty band",
    "pareto": "Time to target against force: the Pareto front",
    "bend_family": "Bend angle of every design against time",
    "tensile_fit": "Tensile test and the fitted modulus",
    "dma_fit": "Storage modulus against temperature and the fitted step",
    "spectra_fit": "Absorbance spectra and the fitted absorptivities",
    "bend_fit": "Measured and fitted bend angles",
}


# ---------------------------------------------------------------------------
# formatting helpers (plain text; the templates escape)


def _num(x, digits=4) -> str:
    if x is None:
        return "not reached"
    if isinstance(x, str):
        s = x.strip().lower()
        if s in ("inf", "+inf", "infinity"):
            return "∞"
        if s in ("-inf", "-infinity"):
            return "−∞"
        return x
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


def _float(x):
    """A number from a JSON field (numbers, null, or the words a writer uses for infinities); None otherwise."""
    if isinstance(x, bool) or x is None:
        return None
    if isinstance(x, (int, float)):
        return float(x)
    if isinstance(x, str):
        try:
            return float(x.strip())
        except ValueError:
            return None
    return None


def _length(x) -> tuple[str, str]:
    ax = abs(x)
    if ax >= 1e-3:
        return _num(x * 1e3), "mm"
    if ax >= 1e-6 or ax == 0:
        return _num(x * 1e6), "µm"
    return _num(x * 1e9), "nm"


def _pressure(x) -> tuple[str, str]:
    ax = abs(x)
    for scale, unit in ((1e9, "GPa"), (1e6, "MPa"), (1e3, "kPa")):
        if ax >= scale:
            return _num(x / scale), unit
    return _num(x), "Pa"


def _irr(x) -> str:
    """Irradiance in the customary mW/cm^2 (1 mW/cm^2 = 10 W/m^2)."""
    return f"{_num(x / 10.0)} mW/cm²"


def _deg(rad) -> str:
    return _num(None) if rad is None else _num(math.degrees(float(rad)))


def _quantity(x, unit, difference=False) -> str:
    """A SI value with a prefixed unit, as the check table prints it (a difference: a temperature stays in K)."""
    v = _float(x)
    if v is None:
        return "—" if x is None else str(x)
    try:
        from .checks.verdict import format_quantity

        return format_quantity(v, str(unit), difference=difference).replace("inf", "∞")
    except Exception:  # formatting must never stop a report
        return f"{_num(v)} {unit}".strip()


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


def _card(label, value, unit="", note="", cls=""):
    return {"label": label, "value": value, "unit": unit, "note": note, "cls": cls}


# ---------------------------------------------------------------------------
# reading the folder


def _read_json(path: Path, out: Path, *, what: str):
    try:
        return json.loads(read_text_file(path, field="RESULT_DIR", what="JSON"))
    except json.JSONDecodeError as exc:
        raise ActsimInputError(f"{path.relative_to(out).as_posix()} in '{out}': not valid JSON ({exc}); {what}") from None


def _open_folder(result_dir) -> tuple[Path, dict]:
    from .folders import verify_folder

    out = Path(result_dir)
    if not out.is_dir():
        raise ActsimInputError(f"RESULT_DIR: folder '{out}' does not exist; {_HINT}")
    # one complete folder exactly as written: no manifest (an older actsim, a hand-made folder), a changed, missing
    # or extra file are refused before anything of it is read
    return out, verify_folder(out, field="RESULT_DIR", hint=f"re-run the command that wrote it; {_HINT}")


def _load_summary(out: Path) -> dict:
    rerun = "re-run `actsim run SCENARIO -o RESULT_DIR`"
    if not (out / "summary.json").is_file():
        raise ActsimInputError(f"RESULT_DIR: '{out}' has no summary.json; {rerun}")
    record = _read_json(out / "summary.json", out, what=rerun)
    if not isinstance(record, dict) or not isinstance(record.get("metrics"), dict):
        raise ActsimInputError(f"summary.json in '{out}': no 'metrics' table; {rerun}")
    return record


def _load_checks(out: Path):
    """(check records, details) of ``checks.json``; (None, {}) when the file is absent."""
    path = out / CHECKS_FILE
    if not path.is_file():
        return None, {}
    rerun = f"rerun `actsim check SCENARIO -o {out}`"
    data = _read_json(path, out, what=rerun)
    details = {}
    if isinstance(data, dict):
        details = data.get("details") if isinstance(data.get("details"), dict) else {}
        for key in ("checks", "results", "records"):
            if isinstance(data.get(key), list):
                data = data[key]
                break
    if not isinstance(data, list):
        raise ActsimInputError(f"{CHECKS_FILE} in '{out}': expected a list of check records; {rerun}")
    for i, rec in enumerate(data):
        if not isinstance(rec, dict):
            raise ActsimInputError(f"{CHECKS_FILE} in '{out}': record {i} is not a table of check fields")
        lack = [k for k in _CHECK_KEYS if k not in rec]
        if lack:
            raise ActsimInputError(f"{CHECKS_FILE} in '{out}': record {i} has no '{lack[0]}' field; {rerun}")
        for key in ("value", "limit", "margin"):  # numbers, null, or the words a JSON writer uses for infinities
            v = rec[key]
            ok = v is None or (isinstance(v, (int, float)) and not isinstance(v, bool)) or (
                isinstance(v, str) and v.strip().lower() in ("inf", "+inf", "-inf", "infinity", "-infinity", "nan"))
            if not ok:
                raise ActsimInputError(f"{CHECKS_FILE} in '{out}': record {i} field '{key}' is not a number; {rerun}")
        for key in ("check", "unit", "source"):
            if not isinstance(rec[key], str):
                raise ActsimInputError(f"{CHECKS_FILE} in '{out}': record {i} field '{key}' is not text; {rerun}")
    return data, details


def _load_scenario(out: Path, text: str, scenario_path):
    """(Scenario or None, reason it could not be re-read or '')."""
    if not text:
        return None, "the result folder holds no scenario text"
    from .scenario import parse_scenario

    orig = Path(str(scenario_path or ""))
    base = orig.parent if str(scenario_path or "") and orig.parent.is_dir() else out
    try:
        return parse_scenario(text, path=str(orig) if scenario_path else out / "scenario.toml", base_dir=base), ""
    except ActsimInputError as exc:
        return None, str(exc)


def package_versions() -> list[tuple[str, str]]:
    """``(name, version)`` of Python, actsim and each of :data:`DEPENDENCIES` ("not installed" if absent)."""
    rows = [("Python", platform.python_version())]
    for name in ("actsim", *DEPENDENCIES):
        try:
            rows.append((name, metadata.version(name)))
        except metadata.PackageNotFoundError:
            rows.append((name, "not installed"))
    return rows


# ---------------------------------------------------------------------------
# figures


def figure_title(path) -> str:
    """The title of a figure from its file name alone (used when the folder's record names none).

    Parameters
    ----------
    path : str or os.PathLike
        The PNG file.

    Returns
    -------
    str
        A title that says what is plotted, e.g. ``"Temperature against time"`` for ``temperature.png``.
    """
    stem = Path(path).stem
    if stem in _FIGURE_TITLES:
        return _FIGURE_TITLES[stem]
    if stem.startswith("heatmap_"):
        return f"Heat map of {stem[len('heatmap_'):].replace('_', ' ')} over the swept fields"
    words = " ".join(stem.replace("_", " ").replace("-", " ").split())
    return words[:1].upper() + words[1:] if words else "Figure"


def _figure_records(out: Path) -> dict:
    """``relative path -> {"title", "caption"}`` from every ``"figures"`` list of the folder's JSON records.

    The records are the verbs' own (``summary.json``, ``fit.json``, a sweep's JSON files); each entry is
    ``{"file": "figures/x.png", "title": ..., "caption": ...}`` with ``file`` relative to its record's folder.
    """
    found = {}
    paths = [p for p in sorted(out.glob("*.json")) if p.name != "manifest.json"] + sorted(out.glob("*/*.json"))
    for p in paths:
        if p.name == "manifest.json" or p.parent.name == "chunks":
            continue
        try:
            data = json.loads(p.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            continue  # the readers of that file say what is wrong with it
        entries = data.get("figures") if isinstance(data, dict) else None
        if not isinstance(entries, list):
            continue
        for e in entries:
            if not isinstance(e, dict) or not isinstance(e.get("file"), str):
                continue
            try:
                rel = (p.parent / e["file"]).resolve().relative_to(out.resolve()).as_posix()
            except ValueError:
                continue  # a record never points outside its folder
            found.setdefault(rel, {"title": str(e.get("title") or ""), "caption": str(e.get("caption") or "")})
    return found


def _figures(out: Path) -> list[dict]:
    """Every PNG of the folder as ``{n, file, title, caption, uri}``: recorded figures first, in their order."""
    records = _figure_records(out)
    listed = [out / rel for rel in records]
    fig_dir = out / "figures"
    first = sorted(fig_dir.glob("*.png")) if fig_dir.is_dir() else []
    rest = sorted(p for p in out.rglob("*.png") if p not in first and not p.name.startswith("."))
    seen, figs = set(), []
    for p in listed + first + rest:
        if p in seen or not p.is_file() or p.suffix.lower() != ".png":
            continue
        seen.add(p)
        data = p.read_bytes()
        if not data.startswith(_PNG_SIGNATURE):
            continue
        rel = p.relative_to(out).as_posix()
        rec = records.get(rel, {})
        figs.append({"n": len(figs) + 1, "file": rel, "title": rec.get("title") or figure_title(p),
                     "caption": rec.get("caption", ""),
                     "uri": "data:image/png;base64," + base64.b64encode(data).decode("ascii")})
    return figs


# ---------------------------------------------------------------------------
# the scenario


def _scenario_data(sc) -> dict:
    """The scenario in plain words (structured for the template)."""
    fl, fu = _length(sc.strip.free_length)
    wd, wu = _length(sc.strip.width)
    th, tu = _length(sc.thickness)
    section = ("a narrow beam (plane stress across the width)" if sc.strip.section == "beam"
               else "a wide plate (plane strain across the width)")
    strip = (f"A cantilever strip with a free length of {fl} {fu} and a width of {wd} {wu}, modelled as {section}. "
             f"The stack is {th} {tu} thick and has {len(sc.layers)} layer(s), listed from the bottom face (z = 0) "
             "up to the top face:")
    layers = []
    for layer in sc.layers:
        m = layer.material
        t, u = _length(layer.thickness)
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
        if layer.initial_conversion:
            what += f", initial conversion {_num(layer.initial_conversion)}"
        layers.append({"name": layer.name, "thickness": f"{t} {u}", "material": m.name, "what": what})
    sources = [{"name": s.name, "text": f"{s.description}, {_irr(s.irradiance)} ({_num(s.irradiance)} W/m²) at the "
                f"{s.face} face unless a protocol step says otherwise"} for s in sc.sources]
    steps = []
    for step in sc.protocol:
        on = [f"{s.name} at {_irr(v)}" for s, v in zip(sc.sources, step.irradiance) if v > 0]
        steps.append({"label": step.label, "text": f"{_num(step.duration)} s, {', '.join(on) if on else 'all light off'}"})
    target = None if sc.target_bend_angle is None else _deg(sc.target_bend_angle)
    return {"strip": strip, "layers": layers, "sources": sources, "steps": steps,
            "duration": _num(sc.duration), "target": target, "params": _param_groups(sc)}


def _param_groups(sc) -> list[dict]:
    """The parameter table as groups of (parameter, value, unit) rows."""
    groups: list[dict] = []
    for g, name, value, unit in _param_rows(sc):
        if not groups or groups[-1]["name"] != g:
            groups.append({"name": g, "rows": []})
        groups[-1]["rows"].append({"name": name, "value": value, "unit": unit, "numeric": _looks_numeric(value)})
    return groups


def _looks_numeric(text: str) -> bool:
    return re.fullmatch(r"[−+-]?[0-9.]+(×10\^−?[0-9]+)?", str(text)) is not None


def _scenario_fallback(text: str) -> list[tuple[str, str]]:
    """Title and description of a scenario text this installation cannot parse."""
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError:
        return []
    return [(k, raw[k]) for k in ("title", "description") if isinstance(raw.get(k), str)]


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




# ---------------------------------------------------------------------------
# run and check folders

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
    "front_conversion": ("conversion level of the front", 100.0, "% of full conversion"),
    "optical_dose": ("optical dose (incident)", 1e-4, "J/cm²"),
    "peak_temperature": ("peak temperature", "degC", "°C"),
    "target_bend_angle": ("target bend angle", "deg", "°"),
    "time_to_target": ("time to the target bend angle", 1.0, "s"),
    "blocked_force_at_target": ("blocked force at the target angle", 1e3, "mN"),
    "front_depth_at_target": ("conversion front depth at the target angle", 1e6, "µm"),
    "step_of_peak_bend": ("protocol step of the peak bend (from 0)", 1.0, "—"),
    "step_of_peak_bend_label": ("label of that step", None, "—"),
    "peaks_over": ("peaks taken over", None, "—"),
    "front_formed": ("a conversion front formed", None, "—"),
    "time_steps_accepted": ("time steps accepted", 1.0, "—"),
    "time_steps_rejected": ("time steps rejected", 1.0, "—"),
}


def _metric_value(value, scale):
    if isinstance(value, bool):
        return "yes" if value else "no"
    if value is None or not isinstance(value, (int, float)):
        return _num(None) if value is None else str(value)
    if scale == "deg":
        return _num(math.degrees(value))
    if scale == "degC":
        return _num(value - 273.15)
    return _num(value * (scale or 1.0))


def _result_rows(metrics: dict) -> list[dict]:
    rows = []
    for key, (label, scale, unit) in _METRICS.items():
        if key in metrics:
            rows.append({"name": label, "value": _metric_value(metrics[key], scale), "unit": unit})
            if key == "peak_temperature" and isinstance(metrics[key], (int, float)):
                rows.append({"name": "peak temperature (absolute)", "value": _num(metrics[key]), "unit": "K"})
    for key, value in metrics.items():
        if key not in _METRICS and not isinstance(value, (dict, list)):
            rows.append({"name": key.replace("_", " "), "value": _metric_value(value, 1.0), "unit": "SI"})
    return rows


def _run_cards(metrics: dict, has_temperature: bool) -> list[dict]:
    """The first screen of a run: peak bend, time to target, force, peak temperature."""
    cards = []
    if "peak_bend_angle" in metrics:
        where = []
        if isinstance(metrics.get("time_of_peak_bend"), (int, float)):
            where.append(f"at t = {_num(metrics['time_of_peak_bend'])} s")
        if "step_of_peak_bend" in metrics:
            label = metrics.get("step_of_peak_bend_label")
            where.append(f"in step {metrics['step_of_peak_bend']}" + (f" ({label})" if label else ""))
        cards.append(_card("peak bend", _deg(metrics["peak_bend_angle"]), "°", " ".join(where)))
    if "target_bend_angle" in metrics:
        t = metrics.get("time_to_target")
        cards.append(_card(f"time to {_deg(metrics['target_bend_angle'])}°", _num(t), "s" if t is not None else "",
                           "first time the bend angle reaches the target", "" if t is not None else "short"))
    if "peak_blocked_force" in metrics:
        note = "small-deflection estimate 3·EI·κ/(2L)"
        if metrics.get("blocked_force_at_target") is not None:
            note += f"; {_num(metrics['blocked_force_at_target'] * 1e3)} mN at the target angle"
        cards.append(_card("peak blocked force", _num(metrics["peak_blocked_force"] * 1e3), "mN", note))
    if isinstance(metrics.get("peak_temperature"), (int, float)):
        cards.append(_card("peak temperature", _num(metrics["peak_temperature"] - 273.15), "°C",
                           "highest anywhere in the stack"))
    elif not has_temperature:
        cards.append(_card("peak temperature", "not modelled", "", "heat is not modelled in this scenario"))
    return cards


def _uncertainty_data(out: Path) -> dict | None:
    """The bend-angle band of ``uncertainty.nc`` at the time of the nominal peak, or None."""
    path = out / "uncertainty.nc"
    if not path.is_file():
        return None
    import xarray as xr

    try:
        with xr.open_dataset(path) as ds:
            nom = ds["bend_angle_nominal"].values
            i = int(np.nanargmax(np.abs(nom)))
            data = {"time": _num(float(ds["time"].values[i])), "nominal": _deg(nom[i]),
                    "p05": _deg(ds["bend_angle_p05"].values[i]), "p50": _deg(ds["bend_angle_p50"].values[i]),
                    "p95": _deg(ds["bend_angle_p95"].values[i]), "n_draws": str(int(ds.attrs.get("n_draws", 0))),
                    "method": str(ds.attrs.get("method", "")), "note": str(ds.attrs.get("note", "")),
                    "parameters": [str(p) for p in ds["parameter"].values] if "parameter" in ds else [],
                    "rejected": str(int(ds.attrs.get("n_rejected", 0))), "failed": str(int(ds.attrs.get("n_failed", 0)))}
    except (OSError, ValueError, KeyError) as exc:
        raise ActsimInputError(f"uncertainty.nc in '{out}': cannot be read ({exc}); re-run `actsim run SCENARIO "
                               "--uncertainty N -o RESULT_DIR`") from None
    return data


def _mask_cards(pat: dict) -> list[dict]:
    cards = []
    if "peak_fold_angle" in pat:
        cards.append(_card("peak fold angle (through the mask)", _deg(pat["peak_fold_angle"]), "°",
                           f"at t = {_num(pat.get('time_of_peak_fold'))} s" if "time_of_peak_fold" in pat else ""))
    if "peak_tip_travel_patterned" in pat:
        cards.append(_card("peak tip travel (through the mask)", _num(pat["peak_tip_travel_patterned"] * 1e3), "mm"))
    return cards


def _run_context(out: Path, manifest: dict) -> dict:
    record = _load_summary(out)
    metrics = record["metrics"]
    text = read_text_file(out / "scenario.toml", field="RESULT_DIR", what="TOML") if (out / "scenario.toml").is_file() else ""
    sc, reason = _load_scenario(out, text, record.get("scenario_path"))
    has_temperature = "peak_temperature" in metrics
    if not has_temperature and (out / "result.nc").is_file():
        import xarray as xr

        try:
            with xr.open_dataset(out / "result.nc") as ds:
                has_temperature = "temperature" in ds
        except (OSError, ValueError) as exc:
            raise ActsimInputError(f"result.nc in '{out}': cannot be read ({exc}); re-run `actsim run SCENARIO -o "
                                   "RESULT_DIR`") from None
    notes = ["A positive bend angle bends the strip toward its top face (the top face becomes concave).",
             "The blocked force is the small-deflection estimate 3·EI·κ/(2L) at the free end."]
    notes.append("Heat conduction through the thickness is modelled in this scenario; the peak temperature is the "
                 "highest temperature anywhere in the stack." if has_temperature else
                 "Temperature is not modelled in this scenario: light-induced heating and any thermal expansion are "
                 "left out of these results.")
    ctx = {"title": str(record.get("title") or (sc.title if sc else out.name)),
           "description": sc.description if sc is not None else "",
           "source": record.get("scenario_path") or "scenario.toml",
           "cards": _run_cards(metrics, has_temperature), "results": _result_rows(metrics), "result_notes": notes,
           "scenario": _scenario_data(sc) if sc is not None else None, "scenario_reason": reason,
           "scenario_fallback": _scenario_fallback(text) if sc is None else [],
           "appendix": [{"title": "the scenario TOML exactly as run (scenario.toml)", "text": text}] if text else [],
           "written_by": record.get("actsim_version", "unknown"), "uncertainty": None, "mask": None}
    if "mask" in manifest.get("parts", []) or isinstance(record.get("patterned"), dict):
        pat = record.get("patterned") if isinstance(record.get("patterned"), dict) else {}
        ctx["mask"] = {"rows": [{"name": k.replace("_", " "), "value": _deg(v) if "angle" in k else
                                 (_num(v * 1e3) if "travel" in k else _num(v)),
                                 "unit": "°" if "angle" in k else ("mm" if "travel" in k else "s")}
                                for k, v in pat.items() if isinstance(v, (int, float)) and not isinstance(v, bool)]}
        ctx["cards"] += _mask_cards(pat)
    if "uncertainty" in manifest.get("parts", []):
        unc = _uncertainty_data(out)
        ctx["uncertainty"] = unc
        if unc is not None:
            ctx["cards"].append(_card("bend at the nominal peak, 5–95 %", f"{unc['p05']} … {unc['p95']}", "°",
                                      f"median {unc['p50']}°, nominal {unc['nominal']}° at t = {unc['time']} s; "
                                      f"{unc['n_draws']} draws"))
    return ctx


_FATIGUE_METHODS = {"goodman": "Goodman", "gerber": "Gerber", "morrow": "Morrow", "swt": "Smith-Watson-Topper"}


def _life_text(fd: dict, method: str) -> str:
    text = (fd.get("life_text") or {}).get(method)
    if text:
        return str(text)
    life = _float((fd.get("life_cycles") or {}).get(method))
    return "—" if life is None else ("∞" if math.isinf(life) else f"{life:.3g} cycles")


def _fatigue_life(records, details) -> tuple[list[dict], dict]:
    """Rows of the fatigue-life table and ``check name -> life text`` for the check table."""
    rows, by_check = [], {}
    for layer, fd in (details.get("fatigue") or {}).items():
        if not isinstance(fd, dict):
            continue
        gov = fd.get("governing_method")
        for m, label in _FATIGUE_METHODS.items():
            if m not in (fd.get("life_cycles") or {}) and m not in (fd.get("life_text") or {}):
                continue
            life = _life_text(fd, m)
            dmg = (fd.get("damage_at_target") or {}).get(m)
            raw = _float((fd.get("life_cycles") or {}).get(m))
            rows.append({"layer": layer, "method": label, "governing": m == gov, "life": life,
                         "raw": "—" if raw is None else _num(raw, 3), "damage": _num(dmg, 4) if dmg is not None else "—"})
            for r in records:
                if r["check"].startswith(f"fatigue damage ({label})") and f"({layer})" in r["check"]:
                    by_check[r["check"]] = life
    return rows, by_check


def _actuation_rows(details: dict) -> list[dict]:
    """Every number ``actsim check`` prints above its table, as (quantity, value, unit, where) rows."""
    rows = []

    def add(name, value, unit="", where=""):
        rows.append({"name": name, "value": value, "unit": unit, "where": where})

    act = details.get("actuation") or {}
    if "peak_bend_angle" in act:
        add("peak bend", f"{math.degrees(act['peak_bend_angle']):.4g}", "°", f"at t = {act.get('peak_time', 0.0):g} s")
    if "peak_blocked_force" in act:
        add("blocked tip force, large deflection (elastica)", f"{act['peak_blocked_force'] * 1e3:.4g}", "mN",
            f"peak at t = {act.get('peak_blocked_force_time', 0.0):g} s")
    small = act.get("small_deflection_blocked_force")
    if isinstance(small, list) and small:
        vals = [v for v in (_float(x) for x in small) if v is not None]
        if vals:
            add("blocked tip force, small deflection 3·EI·κ/(2L)", f"{max(vals, key=abs) * 1e3:.4g}", "mN", "peak")
    ll = act.get("load_line")
    if isinstance(ll, dict):
        if ll.get("displacement"):
            add("load line at peak bend: free tip travel", f"{ll['displacement'][-1] * 1e3:.4g}", "mm",
                f"at t = {ll.get('time', act.get('peak_time', 0.0)):g} s")
        if "work" in ll:
            add("load line at peak bend: work the tip can do", f"{ll['work'] * 1e6:.4g}", "µJ")
    tl = act.get("tip_load")
    if isinstance(tl, dict):
        add("tip load carried at peak bend", f"{tl['tip_force'] * 1e3:.4g}", "mN")
        add("tip position under the load (x, y)", f"{tl['tip_x'] * 1e3:.4g}, {tl['tip_y'] * 1e3:.4g}", "mm")
        add("tip angle under the load", f"{math.degrees(tl['tip_angle']):.4g}", "°")
        add("clamp moment under the load", f"{abs(tl['clamp_moment']) * 1e3:.4g}", "mN·m",
            "in the yield and fatigue checks")
    jd = details.get("joint")
    if isinstance(jd, dict) and jd:
        if jd.get("strips") is not None:
            add(f"joint: strips ({jd.get('mounting', '')})", str(jd["strips"]), "",
                f"{jd.get('strips_needed')} needed for a factor {_float(jd.get('safety_factor')) or 0:g}")
            if jd.get("achieved_factor"):
                vals = [v for v in (_float(x) for x in jd["achieved_factor"]) if v is not None]
                add("joint: smallest factor over the lift", f"{min(vals):.3g}", "",
                    f"at {math.degrees(jd.get('governing_angle', 0.0)):.4g}°")
            if "stack_thickness" in jd:
                add("joint: stack of strips, thickness", f"{jd['stack_thickness'] * 1e3:.4g}", "mm",
                    f"limit {jd['stack_limit'] * 1e3:.4g} mm" + ("" if jd.get("plausible", True)
                                                                 else "; NOT plausible as a stack of strips"))
        else:
            add("joint", "no number of strips lifts the payload through the whole angle range")
    for layer, fd in (details.get("fatigue") or {}).items():
        if isinstance(fd, dict) and fd.get("governing_method"):
            m = fd["governing_method"]
            add(f"fatigue life, {layer}", _life_text(fd, m), "",
                f"most conservative method ({_FATIGUE_METHODS.get(m, m)}); damage at the target in the table")
    light = details.get("light") or {}
    if light.get("assessed"):
        add("light at the exposure position: risk group of the most intense step", str(light.get("risk_group")), "",
            "IEC 62471 scheme, from memory")
        names = {"actinic_uv": "actinic UV", "uva": "UV-A", "blue_light": "blue light"}
        for key, g in (light.get("risk_groups") or {}).items():
            t = (light.get("permissible_time") or {}).get(key)
            tv = _float(t)
            tt = "" if tv is None else ("no limit within the model" if math.isinf(tv) else f"permissible time {tv:.4g} s")
            add(f"risk group, {names.get(key, key)}", str(g), "", tt)
    for n in act.get("notes", []) or []:
        add("note", str(n))
    return rows


def _check_rows(records, life_by_check):
    rows, validity, notes = [], {}, []
    for i, r in enumerate(records, start=1):
        passed = r["passed"]
        value, limit = _float(r["value"]), _float(r["limit"])
        if passed is None or r.get("status") == "not assessed":
            cls = "na"
        elif passed:
            cls = "pass"
        else:
            cls = "fail" if (value is not None and limit is not None and value > limit) else "short"
        verdict = str(r.get("verdict") or {"pass": "within the modelled limit", "fail": "exceeds the modelled limit",
                                           "short": "short of the required margin", "na": "not assessed"}[cls])
        tail = f" ({r['source']})"
        if verdict.endswith(tail) and len(verdict) > len(tail):
            verdict = verdict[: -len(tail)]  # the source has its own column
        m = _float(r["margin"])
        kind = r.get("margin_kind") or "ratio"
        if r["margin"] is None and cls == "na":
            margin = "—"
        elif m is None:
            margin = str(r["margin"])
        elif kind == "ratio":
            margin = _num(m, 3) + ("×" if math.isfinite(m) else "")
        else:
            margin = _quantity(m, r["unit"], difference=True)
        if r.get("validity"):
            validity.setdefault(str(r["validity"]), []).append(i)
        if r.get("note"):
            notes.append({"n": i, "text": str(r["note"])})
        rows.append({"n": i, "check": r["check"], "value": _quantity(r["value"], r["unit"]) if cls != "na" else "—",
                     "limit": _quantity(r["limit"], r["unit"]) if cls != "na" else "—", "margin": margin,
                     "verdict": verdict, "cls": cls, "mark": {"pass": "✔", "na": "–"}.get(cls, "✘"),
                     "source": r["source"], "life": life_by_check.get(r["check"], ""),
                     "has_note": bool(r.get("note"))})
    shared = [{"checks": _ranges(ns), "text": t} for t, ns in validity.items()]
    return rows, shared, notes


def _ranges(ns) -> str:
    """``[1, 2, 3, 5]`` -> ``"1–3, 5"``."""
    out, start, prev = [], None, None
    for n in ns:
        if start is None:
            start = prev = n
        elif n == prev + 1:
            prev = n
        else:
            out.append(f"{start}–{prev}" if prev > start else f"{start}")
            start = prev = n
    if start is not None:
        out.append(f"{start}–{prev}" if prev > start else f"{start}")
    return ", ".join(out)


def _check_context(out: Path, manifest: dict) -> dict:
    ctx = _run_context(out, manifest)
    records, details = _load_checks(out)
    ctx["checks"] = None
    if records is None:
        ctx["verdict"] = {"cls": "info", "headline": "No design checks were run for this result."}
        return ctx
    fatigue_rows, life_by_check = _fatigue_life(records, details)
    rows, shared, notes = _check_rows(records, life_by_check)
    n_fail = sum(r["cls"] in ("fail", "short") for r in rows)
    n_na = sum(r["cls"] == "na" for r in rows)
    n_pass = sum(r["cls"] == "pass" for r in rows)
    n_exceed = sum(r["cls"] == "fail" for r in rows)
    n_short = sum(r["cls"] == "short" for r in rows)
    if not records:
        headline, cls = "The scenario asked for no checks.", "info"
    elif n_fail:
        headline, cls = f"{n_fail} of {len(rows)} checks failed", "fail"
    else:
        headline, cls = f"All {n_pass} assessed checks passed (within their modelled limits)", "pass"
    if n_na:
        headline += f"; {n_na} not assessed"
    tight = None
    ratio = [(m, r) for r, rec in zip(rows, records) if r["cls"] != "na" and (rec.get("margin_kind") or "ratio") == "ratio"
             for m in [_float(rec["margin"])] if m is not None]
    if ratio:
        m, r = min(ratio, key=lambda x: x[0])
        tight = {"margin": r["margin"], "check": r["check"], "n": r["n"], "cls": r["cls"]}
    tally = [f"{n_pass} passed (within the modelled limit)",
             f"{n_exceed} {'exceeds' if n_exceed == 1 else 'exceed'} the modelled limit"]
    if n_short:
        tally.append(f"{n_short} within the limit but short of the required margin")
    if n_na:
        tally.append(f"{n_na} not assessed")
    ctx["verdict"] = {"cls": cls, "headline": headline, "tight": tight}
    ctx["checks"] = {"rows": rows, "shared": shared, "notes": notes, "tally": tally, "n": len(rows),
                     "actuation": _actuation_rows(details), "fatigue": fatigue_rows,
                     "required_factor": _num(details.get("required_safety_factor"))
                     if _float(details.get("required_safety_factor")) is not None else "",
                     "not_modelled": [str(x) for x in ((details.get("light") or {}).get("not_modelled"),
                                                       (details.get("skin") or {}).get("reason")) if x]}
    return ctx


# ---------------------------------------------------------------------------
# sweep folders

_PATH_PART = re.compile(r"([A-Za-z_][A-Za-z0-9_]*)(?:\[([^\]]*)\])?")


def _field_words(path: str) -> str:
    """A swept field path in words: ``layers[active film].thickness`` -> ``thickness of active film``."""
    parts = [m.groups() for m in _PATH_PART.finditer(str(path))]
    if not parts:
        return str(path)
    name = parts[-1][0].replace("_", " ")
    if parts[0][0] == "protocol" and len(parts) >= 3 and parts[1][0] == "light":
        step = parts[0][1]
        label = f"step {int(step) + 1}" if step is not None and step.isdigit() else f"step {step}"
        return f"irradiance of {parts[-1][0]}, {label}"
    owner = next((p[1] for p in parts[:-1] if p[1]), None)
    if owner is None and len(parts) >= 3 and parts[0][0] == "materials":
        owner = parts[1][0]
    return f"{name} of {owner}" if owner else name


def _sweep_value(value, unit):
    from .study.tradeoff import format_quantity

    if isinstance(value, (bytes, np.bytes_)):
        value = value.decode()
    if isinstance(value, np.generic):
        value = value.item()
    return format_quantity(value, unit).replace("um", "µm").replace("uN", "µN").replace("W/cm^2", "W/cm²")


def _sweep_context(out: Path, manifest: dict) -> dict:
    import xarray as xr

    ctx = {"appendix": [], "scenario": None, "inverse": None, "sweep": None}
    if "inverse" in manifest.get("parts", []) or (out / "inverse.json").is_file():
        ctx["inverse"] = _inverse_data(out)
    if not (out / "sweep.nc").is_file():
        if ctx["inverse"] is None:
            raise ActsimInputError(f"RESULT_DIR: '{out}' has no sweep.nc; re-run `actsim sweep SCENARIO ... -o RESULT_DIR`")
        ctx.update(title=ctx["inverse"]["title"], description="", source=ctx["inverse"]["source"], written_by="unknown")
        return ctx
    try:
        with xr.open_dataset(out / "sweep.nc") as ds:
            ds = ds.load()
    except (OSError, ValueError) as exc:
        raise ActsimInputError(f"sweep.nc in '{out}': cannot be read ({exc}); re-run `actsim sweep`") from None
    status = ds["status"]
    dims = list(status.dims)

    def flat(name):
        v = ds[name]
        return v.broadcast_like(status).transpose(*dims).values.ravel()

    fields = [(n, str(v.attrs["field"]), str(v.attrs.get("units", ""))) for n, v in ds.variables.items()
              if "field" in v.attrs and set(v.dims) <= set(dims)]
    n = int(status.size)
    design = flat("design") if "design" in ds.variables else np.arange(n)
    has_target = "time_to_target" in ds
    pareto = _read_json(out / "pareto.json", out, what="re-run `actsim sweep ... --pareto`") \
        if (out / "pareto.json").is_file() else None
    rec = _read_json(out / "recommendation.json", out, what="re-run `actsim sweep ... --recommend`") \
        if (out / "recommendation.json").is_file() else None
    force = (pareto or {}).get("force") or (rec or {}).get("maximised") or (
        "blocked_force_at_target" if has_target else "peak_blocked_force")
    force = force if force in ds else "peak_blocked_force"
    from .study.tradeoff import force_label

    values = {f: flat(name) for name, f, _ in fields}
    units = {f: u for _, f, u in fields}
    col = {k: flat(k) for k in ("time_to_target", force, "peak_bend_angle", "peak_temperature", "reached_target")
           if k in ds}
    on_front = {int(r["design"]) for r in (pareto or {}).get("table", []) if isinstance(r, dict) and "design" in r}
    recommended = set()
    for row in (rec or {}).get("rows", []):
        if not isinstance(row, dict) or row.get("recommended") is None:
            continue
        for i in range(n):
            ok = _same(values.get(rec.get("field"), [None] * n)[i], row["recommended"])
            ok = ok and all(_same(values[k][i], v) for k, v in row.items() if k in values and k != rec.get("field"))
            if ok:
                recommended.add(i)
    ok_status = (flat("status") == 0)

    def key(i):
        if not ok_status[i]:
            return (2, 0.0)
        if has_target:
            t = col["time_to_target"][i]
            return (0, float(t)) if np.isfinite(t) else (1, -abs(float(col["peak_bend_angle"][i])))
        return (0, -abs(float(col["peak_bend_angle"][i])))

    order = sorted(range(n), key=key)
    best = next((i for i in order if i in recommended), order[0] if order and ok_status[order[0]] else None)
    rank = {i: r + 1 for r, i in enumerate(order)}
    show = order if n <= SWEEP_ROWS_SHOWN else sorted(set(order[:25]) | {i for i in range(n) if int(design[i]) in on_front}
                                                        | recommended, key=lambda i: rank[i])

    def row(i):
        t = col.get("time_to_target", [math.nan] * n)[i]
        temp = col.get("peak_temperature", [math.nan] * n)[i]
        return {"rank": rank[i], "design": str(int(design[i])),
                "fields": [_sweep_value(values[f][i], units[f]) for _, f, _ in fields],
                "time": ("never" if not np.isfinite(t) else _num(t)) if has_target else "",
                "force": _sweep_value(col[force][i], "N") if np.isfinite(col[force][i]) else "—",
                "bend": _deg(col["peak_bend_angle"][i]) if "peak_bend_angle" in col else "—",
                "temperature": _num(temp - 273.15) if np.isfinite(temp) else "not modelled",
                "status": "finished" if ok_status[i] else "failed or invalid",
                "winner": i == best, "recommended": i in recommended, "pareto": int(design[i]) in on_front}

    target = _float(ds.attrs.get("target_bend_angle"))
    n_reach = int(np.sum(col["reached_target"])) if "reached_target" in col else None
    headline = f"{n} designs"
    if n_reach is not None and target is not None:
        headline += f", {n_reach} reach {_deg(target)}°"
    if int(ds.attrs.get("n_failed", 0)) or int(ds.attrs.get("n_invalid", 0)):
        headline += f" ({int(ds.attrs.get('n_failed', 0))} failed, {int(ds.attrs.get('n_invalid', 0))} invalid)"
    winner = None
    if best is not None:
        r = row(best)
        why = ("recommended: reaches the target within " + _num((rec or {}).get("within")) + " s with the largest "
               + str((rec or {}).get("maximised_label") or force_label(force))) if best in recommended else (
               "fastest to the target" if has_target else "largest peak bend")
        winner = {"fields": [{"name": _field_words(f), "path": f, "value": v} for (_, f, _), v in zip(fields, r["fields"])],
                  "why": why, "row": r}
    rec_rows = []
    for rrow in (rec or {}).get("rows", []):
        if not isinstance(rrow, dict):
            continue
        others = ", ".join(f"{_field_words(k)} = {_sweep_value(v, units.get(k, ''))}" for k, v in rrow.items()
                           if k in units and k != rec.get("field"))
        if rrow.get("recommended") is None:
            rec_rows.append({"where": others, "text": f"no {_field_words(rec.get('field'))} reaches the target within "
                             f"{_num(rec.get('within'))} s"})
        else:
            rec_rows.append({"where": others, "text": f"{_field_words(rec.get('field'))} = "
                             f"{_sweep_value(rrow['recommended'], rec.get('units', ''))}: target in "
                             f"{_num(rrow.get('time_to_target'), 3)} s, {rec.get('maximised_label', '')} "
                             f"{_sweep_value(rrow.get(rec.get('maximised')), 'N')}"})
    front = []
    for prow in (pareto or {}).get("table", []):
        if isinstance(prow, dict):
            front.append({"fields": [_sweep_value(prow.get(f), units[f]) if f in prow else "—" for _, f, _ in fields],
                          "time": _num(prow.get("time_to_target"), 3), "force": _sweep_value(prow.get(force), "N"),
                          "design": str(prow.get("design", ""))})
    text = str(ds.attrs.get("scenario", ""))
    if text:
        ctx["appendix"].append({"title": "the base scenario TOML of the sweep", "text": text})
    title = str(ds.attrs.get("title", out.name))
    ctx.update(title=title, description="", source=str(ds.attrs.get("scenario_path", "")),
               written_by=str(ds.attrs.get("actsim_version", "unknown")))
    ctx["sweep"] = {
        "headline": headline, "sampling": str(ds.attrs.get("sampling", "")), "n": n,
        "fields": [{"name": _field_words(f), "path": f, "unit": units[f],
                    "values": ", ".join(json.loads(ds[name].attrs["values_as_written"]))
                    if "values_as_written" in ds[name].attrs else ""} for name, f, _ in fields],
        "target": None if target is None else _deg(target), "has_target": has_target,
        "force_label": force_label(force), "winner": winner, "recommendations": rec_rows,
        "within": _num((rec or {}).get("within")) if rec else "",
        "front": front, "n_front": (pareto or {}).get("n_on_front"), "n_not_reaching": (pareto or {}).get("n_not_reaching"),
        "rows": [row(i) for i in show], "n_hidden": n - len(show),
        "peak_temperature": _num(float(np.nanmax(col["peak_temperature"])) - 273.15)
        if "peak_temperature" in col and np.isfinite(col["peak_temperature"]).any() else None,
    }
    return ctx


def _same(a, b) -> bool:
    if isinstance(a, (bytes, np.bytes_)):
        a = a.decode()
    if isinstance(a, str) or isinstance(b, str):
        return str(a) == str(b)
    try:
        return bool(np.isclose(float(a), float(b), rtol=1e-9, atol=0.0))
    except (TypeError, ValueError):
        return False


def _inverse_data(out: Path) -> dict | None:
    path = out / "inverse.json"
    if not path.is_file():
        return None
    res = _read_json(path, out, what="re-run `actsim sweep ... --optimise`")
    if not isinstance(res, dict):
        raise ActsimInputError(f"inverse.json in '{out}': expected a table; re-run `actsim sweep ... --optimise`")
    val = _float(res.get("objective_value"))
    unit = str(res.get("objective_unit", ""))
    cons = []
    for c in res.get("constraints", []) or []:
        if isinstance(c, dict):
            cons.append({"name": str(c.get("name", "")), "kind": str(c.get("kind", "")), "limit": _num(c.get("limit")),
                         "unit": str(c.get("unit", "")), "value": "never" if c.get("value") is None else _num(c.get("value")),
                         "slack": "n/a" if c.get("slack") is None else _num(c.get("slack"), 3),
                         "active": bool(c.get("active")), "met": bool(c.get("met", True))})
    return {"title": str(res.get("title") or out.name), "source": str(res.get("scenario_path") or ""),
            "feasible": bool(res.get("feasible", True)),
            "optimum": [{"name": _field_words(k), "path": str(k), "value": str(v)}
                        for k, v in (res.get("optimum") or {}).items()],
            "objective": ("least peak optical power on the strip" if res.get("objective") == "power"
                          else "largest peak blocked force"),
            "value": "—" if val is None else f"{_num(val * 1e3)} m{unit}", "constraints": cons,
            "n_evaluations": str(res.get("n_evaluations", ""))}


# ---------------------------------------------------------------------------
# fit folders

_FIT_TITLES = {"tensile": "Tensile test", "dma": "Storage modulus against temperature (DMA)",
               "spectra": "Absorptivities from absorbance spectra", "bend": "Bend-angle curves"}


def _fit_value(value, unit) -> tuple[str, str]:
    """A fitted value in the unit a person reads (Pa scaled; K of a temperature also in °C elsewhere)."""
    v = _float(value)
    if v is None:
        return "—", str(unit)
    if unit == "Pa":
        return _pressure(v)
    return _num(v, 5), str(unit)


def _residual_unit(rec: dict) -> str:
    """The unit of a fit's residual standard deviation (the record's own when it names one)."""
    reg = rec.get("regression") if isinstance(rec.get("regression"), dict) else rec
    for source in (reg, rec):
        for key in ("residual_unit", "residual_std_unit"):
            if isinstance(source.get(key), str):
                return source[key]
    kind = rec.get("kind")
    if kind == "tensile":
        return "Pa"
    if kind == "dma":
        return "decades of E (log10)" if rec.get("step", "log") == "log" else "Pa"
    if kind == "bend":
        return "rad"
    return ""


def _fit_data(rec: dict, rel: str) -> dict:
    kind = str(rec.get("kind", ""))
    reg = rec.get("regression") if isinstance(rec.get("regression"), dict) else rec
    conf = _float(reg.get("confidence"))
    params = []
    names = reg.get("names") if isinstance(reg.get("names"), list) else []
    for i, name in enumerate(names):
        def at(key):
            seq = reg.get(key)
            return seq[i] if isinstance(seq, list) and i < len(seq) else None

        unit = at("units") or ""
        value, u = _fit_value(at("values"), unit)
        scale = 1.0
        if unit == "Pa" and _float(at("values")) is not None:
            scale = {"GPa": 1e9, "MPa": 1e6, "kPa": 1e3}.get(u, 1.0)
        se, lo, hi = (_float(at(k)) for k in ("standard_errors", "ci_low", "ci_high"))
        fmt = (lambda x: "—" if x is None else _num(x / scale, 4))
        params.append({"name": str(name), "path": str((rec.get("paths") or [None] * len(names))[i] or ""),
                       "value": value, "se": fmt(se), "ci": f"{fmt(lo)} … {fmt(hi)}" if lo is not None else "—",
                       "unit": u if u not in ("", "1") else "1",
                       "celsius": _num(_float(at("values")) - 273.15, 5) if unit == "K" and "transition" in str(name) else ""})
    extra = []
    if kind == "tensile":
        for key, label in (("chord_modulus_Pa", "chord modulus (ISO 527-1, 0.05–0.25 %)"),
                           ("yield_strength_Pa", "offset yield strength"), ("ultimate_strength_Pa", "ultimate strength")):
            if _float(rec.get(key)) is not None:
                extra.append({"name": label, "value": " ".join(_pressure(rec[key]))})
        if _float(rec.get("yield_strain")) is not None:
            extra.append({"name": "strain at the offset yield", "value": f"{_num(rec['yield_strain'] * 100)} %"})
    if kind == "spectra":
        if _float(rec.get("conversion")) is not None:
            extra.append({"name": "conversion of the 'after' spectrum", "value": f"{_num(rec['conversion'])} ({rec.get('conversion_method', '')})"})
        iso = rec.get("isosbestic_points_m") or []
        if iso:
            extra.append({"name": "isosbestic points", "value": ", ".join(f"{_num(x * 1e9)} nm" for x in iso)})
        lam = rec.get("wavelength_m") or []
        for key, label in (("epsilon10_reactant_m2_per_mol", "reactant"), ("epsilon10_product_m2_per_mol", "product")):
            e = rec.get(key) or []
            vals = [(_float(v), _float(w)) for v, w in zip(e, lam)]
            vals = [(v, w) for v, w in vals if v is not None and w is not None]
            if vals:
                v, w = max(vals)
                extra.append({"name": f"largest {label} absorptivity (decadic)", "value": f"{_num(v * 10.0)} L/(mol·cm) at {_num(w * 1e9)} nm"})
    if kind == "bend":
        for c in rec.get("curves") or []:
            if isinstance(c, dict) and _float(c.get("rms_residual_rad")) is not None:
                extra.append({"name": f"rms residual, curve {c.get('label', '')}",
                              "value": f"{_num(math.degrees(c['rms_residual_rad']), 3)}° ({_num(c['rms_residual_rad'], 3)} rad)"})
    rs = _float(reg.get("residual_std"))
    unit = _residual_unit(rec)
    residual = None
    if rs is not None:
        residual = f"{_num(rs, 4)} {unit}".strip()
        if unit == "rad":
            residual = f"{_num(math.degrees(rs), 3)}° ({_num(rs, 4)} rad)"
        elif unit == "Pa":
            residual = " ".join(_pressure(rs))
    return {"kind": kind, "title": _FIT_TITLES.get(kind, f"{kind} fit"), "folder": rel,
            "data": ", ".join(Path(str(d)).name for d in (rec.get("data") if isinstance(rec.get("data"), list)
                                                          else [rec.get("data") or rec.get("plan") or ""])),
            "synthetic": bool(rec.get("synthetic")), "params": params, "extra": extra, "residual": residual,
            "confidence": _num(conf * 100) if conf is not None else "", "n_points": str(reg.get("n_points", "")),
            "dof": str(reg.get("dof", "")), "warnings": [str(w) for w in (reg.get("warnings") or []) + (
                rec.get("warnings") if rec is not reg and isinstance(rec.get("warnings"), list) else [])],
            "notes": [str(n) for n in rec.get("notes") or []],
            "correlation": _correlation(reg, names)}


def _correlation(reg: dict, names) -> dict | None:
    c = reg.get("correlation")
    if not isinstance(c, list) or len(names) < 2 or len(c) != len(names):
        return None
    return {"names": [str(n) for n in names],
            "rows": [[_num(_float(v), 3) if _float(v) is not None else "—" for v in row] for row in c]}


def _fit_context(out: Path, manifest: dict) -> dict:
    paths = ([out / "fit.json"] if (out / "fit.json").is_file() else []) + sorted(out.glob("*/fit.json"))
    if not paths:
        raise ActsimInputError(f"RESULT_DIR: '{out}' has no fit.json; re-run `actsim fit KIND DATA -o RESULT_DIR`")
    fits, appendix = [], []
    for p in paths:
        rec = _read_json(p, out, what="re-run `actsim fit`")
        if not isinstance(rec, dict):
            raise ActsimInputError(f"{p.relative_to(out).as_posix()} in '{out}': expected a table of fit results")
        rel = p.parent.relative_to(out).as_posix()
        fits.append(_fit_data(rec, "" if rel == "." else rel))
        toml = p.parent / "fitted.toml"
        if toml.is_file():
            appendix.append({"title": f"the fitted scenario ({toml.relative_to(out).as_posix()})",
                             "text": read_text_file(toml, field="RESULT_DIR", what="TOML")})
    kinds = ", ".join(f["kind"] for f in fits)
    first = json.loads((paths[0]).read_text(encoding="utf-8"))
    return {"title": f"Fit of measured data: {kinds}", "description": "", "source": ", ".join(f["data"] for f in fits),
            "fits": fits, "appendix": appendix, "written_by": str(first.get("actsim_version", "unknown"))}


# ---------------------------------------------------------------------------
# the page

_KIND_LABELS = {"run": "run", "check": "design check", "sweep": "design sweep", "fit": "fit of measured data"}


def _sup(text):
    """Escape ``text`` and turn ``^n`` exponents into superscripts (a jinja2 filter; returns safe markup)."""
    from markupsafe import Markup, escape

    out = str(escape(text))
    return Markup(re.sub(r"\^(−?-?\d+)", lambda m: f"<sup>{m.group(1)}</sup>", out))


@lru_cache(maxsize=1)
def _environment():
    import jinja2

    env = jinja2.Environment(loader=jinja2.PackageLoader("actsim", "templates"),
                             autoescape=jinja2.select_autoescape(["html"]), undefined=jinja2.StrictUndefined,
                             trim_blocks=True, lstrip_blocks=True, keep_trailing_newline=True)
    env.filters["sup"] = _sup
    return env


def report_context(result_dir) -> dict:
    """Everything the report shows, read from a result folder: the templates' context (plain text and numbers).

    Parameters
    ----------
    result_dir : str or os.PathLike
        A result folder of any kind (run, check, sweep, fit; runs with the uncertainty or mask part).

    Returns
    -------
    dict
        ``kind``, ``parts``, ``title``, ``figures``, ``caution`` and the kind's own entries
        (``cards`` and ``results`` of a run, ``checks`` and ``verdict`` of a check, ``sweep`` or ``inverse``
        of a sweep, ``fits`` of a fit).

    Raises
    ------
    ActsimInputError
        The folder is missing, is not a complete result folder, or a record in it is unreadable.
    """
    out, manifest = _open_folder(result_dir)
    kind = manifest.get("kind")
    parts = list(manifest.get("parts") or [])
    if kind == "run":
        ctx = _run_context(out, manifest)
        if (out / CHECKS_FILE).is_file():
            ctx = _check_context(out, manifest)
            kind = "check"
    elif kind == "check":
        ctx = _check_context(out, manifest)
    elif kind == "sweep":
        ctx = _sweep_context(out, manifest)
    elif kind == "fit":
        ctx = _fit_context(out, manifest)
    else:  # pragma: no cover - verify_folder accepts only known kinds
        raise ActsimInputError(f"RESULT_DIR: '{out}' is a folder of unknown kind {kind!r}; {_HINT}")
    from . import __version__

    label = _KIND_LABELS.get(kind, kind)
    if "uncertainty" in parts:
        label += " with uncertainty bands"
    if "mask" in parts:
        label += " through a mask"
    if "inverse" in parts:
        label = "inverse design"
    head, sep, rest = CAUTION.partition(":")
    ctx.update(kind=kind, parts=parts, kind_label=label, folder=out.name, version=__version__,
               made=_dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"), csp=_CSP,
               caution={"head": head if sep and head.isupper() else "Caution", "text": rest.strip() if sep else CAUTION},
               figures=_figures(out), versions=package_versions())
    return ctx


def build_report(result_dir) -> str:
    """The report of a result folder, as one self-contained HTML page.

    Parameters
    ----------
    result_dir : str or os.PathLike
        A folder written by ``actsim run`` (with or without ``--uncertainty`` or a ``[mask]``),
        ``actsim check``, ``actsim sweep`` or ``actsim fit``; its kind is read from its manifest.

    Returns
    -------
    str
        The HTML text (UTF-8, no external resources).

    Raises
    ------
    ActsimInputError
        The folder is missing or is not a complete result folder, or a record in it is unreadable.
    """
    ctx = report_context(result_dir)
    return _environment().get_template("report.html").render(**ctx)


def write_report(result_dir, path=None) -> Path:
    """Write the report of ``result_dir`` atomically.

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

    dest = Path(path) if path is not None else Path(result_dir) / REPORT_FILE
    if dest.is_dir():
        raise ActsimInputError(f"-o: '{dest}' is a folder; give a file name such as {dest / REPORT_FILE}")
    # Character references keep the file pure ASCII, readable whatever the locale's encoding.
    text = build_report(result_dir).encode("ascii", "xmlcharrefreplace").decode("ascii")
    write_text(dest, text)
    return dest
