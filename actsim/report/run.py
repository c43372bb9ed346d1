"""The report of a run folder: the first-screen cards, the metrics table, the uncertainty band and the mask.

:func:`_run_context` reads ``summary.json``, the scenario text and the optional ``uncertainty`` and ``mask``
parts into the templates' values.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np

from ..errors import ActsimInputError
from ..inputfiles import read_text_file
from .folder import _load_scenario, _load_summary
from .formatting import _card, _deg, _num
from .scenario_text import _scenario_data, _scenario_fallback

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
    if isinstance(metrics.get("liquid_crystal"), dict):
        from ..liquid_crystal import summary_rows

        rows += [{"name": name, "value": text, "unit": "—"} for name, text in summary_rows(metrics["liquid_crystal"])]
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
    lc = metrics.get("liquid_crystal")
    if isinstance(lc, dict) and "ribbon_shape" in lc:
        geometry = []
        for key, what in (("ribbon_helix_pitch", "pitch"), ("ribbon_helix_radius", "radius")):
            if isinstance(lc.get(key), (int, float)):
                geometry.append(f"{what} {_num(lc[key] * 1e3)} mm")
        cards.append(_card(f"free ribbon, {_num(lc.get('ribbon_width', 0.0) * 1e3)} mm wide", str(lc["ribbon_shape"]),
                           "", f"at t = {_num(lc.get('time_of_largest_ribbon_curvature'))} s"
                           + (f": {', '.join(geometry)}" if geometry else "")))
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


def _along_data(along) -> dict | None:
    """Rows of the ``along_strip`` part of a run's summary (largest tip angle; each step's end), or None."""
    if not isinstance(along, dict) or "steps" not in along:
        return None
    rows = [{"name": "largest tip angle", "value": _deg(along.get("largest_tip_angle")), "unit": "°"},
            {"name": "time of the largest tip angle", "value": _num(along.get("time_of_largest")), "unit": "s"}]
    for st in along["steps"]:
        where = f"end of step {st['step']}" + (f" ({st['label']})" if st.get("label") else "")
        rows += [{"name": f"tip angle, {where}", "value": _deg(st["tip_angle"]), "unit": "°"},
                 {"name": f"settled by the {where}", "value": "yes" if st["settled"] else "no", "unit": "—"},
                 {"name": f"segments lit on the top / bottom face, {where}",
                  "value": f"{_num(100 * st['lit_share_top'])} / {_num(100 * st['lit_share_bottom'])}", "unit": "%"}]
    return {"segments": str(along.get("segments", "")), "mode": str(along.get("mode", "")), "rows": rows}


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
           "written_by": record.get("actsim_version", "unknown"), "uncertainty": None, "mask": None,
           "along": _along_data(record.get("along_strip"))}
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
