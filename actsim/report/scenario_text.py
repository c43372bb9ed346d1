"""The scenario of a run in plain words for the report: its sections and every parameter with its unit.

:func:`_scenario_data` gives the structured view the ``_scenario.html`` template lays out; when the scenario
text can no longer be parsed, :func:`_scenario_fallback` shows its tables as they stand.
"""

from __future__ import annotations

import math
import re
import tomllib

import numpy as np

from ..errors import ActsimInputError
from .formatting import _deg, _irr, _length, _modulus_law_text, _num, _pressure

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
