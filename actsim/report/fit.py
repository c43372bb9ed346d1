"""The report of a fit folder: each fit's parameters with their uncertainty, correlations and residual.

:func:`_fit_context` reads ``fit.json`` (one record per fit) into the templates' values.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

from ..errors import ActsimInputError
from ..inputfiles import read_text_file
from .folder import _read_json
from .formatting import _float, _num, _pressure

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
