"""The designs of a sweep ranked for the screen: the winner first, with its swept values in display units.

:func:`rank_designs` orders the valid designs of a sweep result by one stated rule:

* with a time limit (``--recommend ... --within``): the designs that reach the target angle within
  the limit, largest force first (the rule of :func:`actsim.study.tradeoff.recommend`), then those
  that reach it later, fastest first, then those that never reach it, largest peak bend first;
* with a target angle only: fastest to the target first (equal times: the larger force), then
  those that never reach it, largest peak bend first;
* without a target: the largest peak blocked force first.

:func:`design_table` prints them as a table that fits the screen: all designs of a small sweep
(at most :data:`SMALL_SWEEP`), else the best :data:`BEST_SHOWN` and the Pareto set of time to
target against force (at most :data:`PARETO_SHOWN` of it, spread along the front).
"""

from __future__ import annotations

import math
import re

import numpy as np

__all__ = ["SMALL_SWEEP", "BEST_SHOWN", "PARETO_SHOWN", "field_words", "rank_designs", "design_table"]

#: A sweep of at most this many designs is printed whole.
SMALL_SWEEP = 20
#: Best designs printed of a larger sweep.
BEST_SHOWN = 10
#: Designs of the Pareto set printed of a larger sweep (spread along the front, its ends kept).
PARETO_SHOWN = 10

_PART = re.compile(r"([A-Za-z_][A-Za-z0-9_]*)(?:\[([^\]]*)\])?")


def field_words(path: str) -> str:
    """A swept field path in words: ``layers[active film].thickness`` -> ``"active film thickness"``.

    ``sources[led].wavelength`` -> ``"led wavelength"``; ``protocol[0].light.led`` ->
    ``"led irradiance (step 1)"``; ``materials.film.photo_strain`` -> ``"film photo strain"``;
    ``sources[0].polarisation`` -> ``"source 1 polarisation"``.
    """
    parts = [m.groups() for m in _PART.finditer(str(path))]
    if not parts:
        return str(path)
    name = parts[-1][0].replace("_", " ")
    if parts[0][0] == "protocol" and len(parts) >= 3 and parts[1][0] == "light":
        step = parts[0][1]
        label = f"step {int(step) + 1}" if step is not None and step.isdigit() else f"step {step}"
        return f"{parts[-1][0].replace('_', ' ')} irradiance ({label})"
    owner = next((p[1] for p in parts[:-1] if p[1]), None)
    if owner is not None and owner.isdigit():  # an index: "sources[0]" -> "source 1", "layers[1]" -> "layer 2"
        owner = f"{parts[0][0].rstrip('s')} {int(owner) + 1}"
    if owner is None and len(parts) >= 3 and parts[0][0] in ("materials", "sources"):
        owner = parts[1][0].replace("_", " ")
    return f"{owner} {name}" if owner else name


def _flat(ds, name, like):
    return np.asarray(ds[name].broadcast_like(like).transpose(*like.dims).values).ravel()


def _fields(ds):
    """(path, coordinate name, unit) of every swept field, in the order of the sweep."""
    import json

    def flat(items):
        for x in items:
            yield from (flat(x) if isinstance(x, (list, tuple)) else (x,))

    order = list(flat(json.loads(ds.attrs.get("swept_fields", "[]"))))
    found = {c.attrs["field"]: (name, c.attrs.get("units", "")) for name, c in ds.coords.items() if "field" in c.attrs}
    paths = [p for p in order if p in found] + [p for p in found if p not in order]
    return [(p, *found[p]) for p in paths]


def rank_designs(ds, *, force: str = "blocked_force_at_target", within: float | None = None) -> dict:
    """The valid designs of a sweep result in order of the rule stated in the module docstring.

    Parameters
    ----------
    ds : xarray.Dataset
        Result of :func:`actsim.study.sweep.sweep`.
    force : str, optional
        Force metric [N] (``blocked_force_at_target`` or ``peak_blocked_force``); without a target
        angle the peak blocked force is used.
    within : float, optional
        Time limit [s] (``--within``); needs a target angle.

    Returns
    -------
    dict
        ``order`` (flat indices of the valid designs, best first), ``rule`` (the rule in words),
        ``values`` (flat arrays: ``time`` [s], ``force`` [N], ``peak_bend`` [rad],
        ``temperature`` [K] or None, ``design``), ``fields`` ((path, flat values, unit) per swept
        field), ``pareto`` (bool per design, or None without a target), ``force``, ``target``
        [rad] or None, ``n_invalid``.
    """
    from .tradeoff import force_label, pareto_mask

    like = ds["status"]
    ok = _flat(ds, "status", like) == 0
    n = ok.size
    target = ds.attrs.get("target_bend_angle") if "time_to_target" in ds else None
    target = None if target is None else float(target)
    if target is None or force not in ds:
        force = "peak_blocked_force"
    t = _flat(ds, "time_to_target", like).astype(float) if target is not None else np.full(n, np.nan)
    f = np.abs(_flat(ds, force, like).astype(float))
    bend = np.abs(_flat(ds, "peak_bend_angle", like).astype(float))
    temp = None
    if int(ds.attrs.get("heat_modelled", 0)) and "peak_temperature" in ds:
        temp = _flat(ds, "peak_temperature", like).astype(float)
    reach = np.isfinite(t)
    big = 1e300

    def clean(x):
        return np.where(np.isfinite(x), x, -big)

    flabel = force_label(force)
    if target is not None and within is not None:
        fast = reach & (t <= within)
        key = np.where(fast, 0, np.where(reach, 1, 2))
        second = np.where(fast, -clean(f), np.where(reach, t, -clean(bend)))
        third = np.where(fast, t, -clean(f))
        rule = (f"reaches {math.degrees(target):.4g} deg within {within:.4g} s with the largest {flabel} "
                "(the recommendation)")
    elif target is not None:
        key = np.where(reach, 0, 1)
        second = np.where(reach, t, -clean(bend))
        third = -clean(f)
        rule = f"fastest to {math.degrees(target):.4g} deg (equal times: the larger force)"
    else:
        key = np.zeros(n)
        second = -clean(f)
        third = -clean(bend)
        rule = "largest peak blocked force (no target angle given)"
    idx = np.nonzero(ok)[0]
    order = idx[np.lexsort((idx, third[idx], second[idx], key[idx]))]
    pareto = None
    if target is not None:
        pareto = pareto_mask(np.where(ok, t, np.nan), np.where(ok, f, np.nan)).ravel()
    fields = [(p, _flat(ds, name, like), unit) for p, name, unit in _fields(ds)]
    return {"order": order, "rule": rule, "force": force, "target": target, "pareto": pareto, "fields": fields,
            "values": {"time": t, "force": f, "peak_bend": bend, "temperature": temp,
                       "design": _flat(ds, "design", like) if "design" in ds.variables else np.arange(n)},
            "n_invalid": int((~ok).sum())}


def _value(v, unit, path):
    from ..screens import display_quantity

    if isinstance(v, (bytes, np.bytes_)):
        v = v.decode()
    if isinstance(v, np.generic):
        v = v.item()
    return display_quantity(v, unit, field=path)


def _spread(items, k, keep=()):
    """At most ``k`` of ``items`` evenly spread (the ends and ``keep`` always in)."""
    if len(items) <= k:
        return list(items)
    pos = np.unique(np.round(np.linspace(0, len(items) - 1, k)).astype(int))
    chosen = [items[i] for i in pos]
    return chosen + [x for x in keep if x in items and x not in chosen]


def design_table(ds, *, force: str = "blocked_force_at_target", within: float | None = None,
                 recommended=(), width: int | None = None) -> tuple[list[str], dict]:
    """The ranked table of a sweep's designs for the screen, and the ranking it shows.

    Parameters
    ----------
    ds : xarray.Dataset
        Result of :func:`actsim.study.sweep.sweep`.
    force : str, optional
        Force metric (``blocked_force_at_target`` or ``peak_blocked_force``).
    within : float, optional
        Time limit [s] of ``--within``.
    recommended : sequence of int, optional
        Design numbers recommended by :func:`actsim.study.tradeoff.recommend` (marked ``*``; without
        them the first of the ranking is the winner).
    width : int, optional
        Widest line [characters] (default :func:`actsim.screens.screen_width`).

    Returns
    -------
    lines : list of str
        The winner in one sentence, the table, and a line on the marks and the rows left out.
    ranking : dict
        Of :func:`rank_designs`, with ``winner`` (flat indices of the marked designs).
    """
    from ..screens import display_quantity, screen_width, table, wrap

    width = width or screen_width()
    rk = rank_designs(ds, force=force, within=within)
    order = list(rk["order"])
    v = rk["values"]
    design = v["design"]
    if recommended:
        winners = [i for i in order if int(design[i]) in set(int(x) for x in recommended)]
    else:
        winners = order[:1]
    rk["winner"] = winners
    if not order:
        return wrap("no valid design to rank (every design was invalid or failed; see sweep.nc status)", width), rk
    pareto = rk["pareto"]
    on_front = [i for i in order if pareto is not None and pareto[i]]
    if len(order) <= SMALL_SWEEP:
        shown = order
    else:
        front = sorted(on_front, key=lambda i: v["time"][i])
        keep = set(order[:BEST_SHOWN]) | set(winners) | set(_spread(front, PARETO_SHOWN, keep=winners))
        shown = [i for i in order if i in keep]
    rank_of = {i: k + 1 for k, i in enumerate(order)}
    target = rk["target"]
    tgt = None if target is None else f"{math.degrees(target):.4g} deg"
    header = ["rank"] + [field_words(p) for p, _, _ in rk["fields"]]
    if tgt is not None:
        header += [f"time to {tgt}", "force at " + tgt if rk["force"] == "blocked_force_at_target" else "peak force"]
    else:
        header += ["peak bend", "peak force"]
    if v["temperature"] is not None:
        header.append("peak temp.")
    rows = []
    for i in shown:
        mark = ("*" if i in winners else "") + ("P" if pareto is not None and pareto[i] else "")
        row = [f"{rank_of[i]}{mark}"] + [_value(vals[i], unit, p) for p, vals, unit in rk["fields"]]
        if tgt is not None:
            row.append("not reached" if not math.isfinite(v["time"][i]) else f"{v['time'][i]:.3g} s")
            row.append(display_quantity(v["force"][i], "N"))
        else:
            row += [display_quantity(v["peak_bend"][i], "rad"), display_quantity(v["force"][i], "N")]
        if v["temperature"] is not None:
            row.append(display_quantity(v["temperature"][i], "K"))
        rows.append(row)
    w0 = winners[0]
    what = ", ".join(f"{field_words(p)} = {_value(vals[w0], unit, p)}" for p, vals, unit in rk["fields"])
    got = []
    if tgt is not None:
        got.append(f"{tgt} in {v['time'][w0]:.3g} s" if math.isfinite(v["time"][w0]) else f"{tgt} not reached")
        got.append(f"force {display_quantity(v['force'][w0], 'N')}")
    else:
        got += [f"peak bend {display_quantity(v['peak_bend'][w0], 'rad')}",
                f"peak force {display_quantity(v['force'][w0], 'N')}"]
    if v["temperature"] is not None:
        got.append(f"peak {display_quantity(v['temperature'][w0], 'K')}")
    lines = wrap(f"winner: {what} ({'; '.join(got)})", width)
    lines += wrap(f"ranked by: {rk['rule']}", width, indent="  ")
    lines.append("")
    lines += table(header, rows, width=width, flex=len(header) - 1 if len(header) > 1 else 0, indent="  ",
                   align="r" + "r" * (len(header) - 1))
    notes = ["* winner" + (" (one per value of the other fields)" if len(winners) > 1 else "")]
    if pareto is not None:
        notes.append(f"P on the Pareto front of time to target vs force ({len(on_front)} designs)")
    if len(shown) < len(order):
        notes.append(f"{len(order) - len(shown)} more designs in metrics.csv")
    if rk["n_invalid"]:
        notes.append(f"{rk['n_invalid']} invalid or failed designs not ranked")
    lines += wrap("; ".join(notes), width, indent="  ")
    return lines, rk
