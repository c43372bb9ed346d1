"""The report of a design-check folder: the verdict, the check table, the actuation numbers and fatigue lives.

:func:`_check_context` adds to the run's values (:func:`actsim.report.run._run_context`) what ``checks.json``
holds.
"""

from __future__ import annotations

import math
from pathlib import Path

from .folder import _load_checks
from .formatting import _float, _num, _quantity
from .run import _run_context

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
