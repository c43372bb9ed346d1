"""The report of a sweep folder: the recommended or best design, the Pareto set, the designs and inverse design.

:func:`_sweep_context` reads the sweep's records and data set; at most :data:`SWEEP_ROWS_SHOWN` designs are
listed one by one. :func:`_inverse_data` reads ``inverse.json`` of ``actsim sweep --optimise``.
"""

from __future__ import annotations

import json
import math
import re
from pathlib import Path

import numpy as np

from ..errors import ActsimInputError
from .folder import _read_json
from .formatting import _deg, _float, _num

#: Most designs listed one by one in a sweep report; beyond it the best ones, the Pareto set and the winner.
SWEEP_ROWS_SHOWN = 40

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
    from ..study.tradeoff import format_quantity

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
    from ..study.tradeoff import force_label

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
