"""Figures of ``actsim check``: the states behind the verdicts, drawn when their check ran.

* :func:`stress_figure` -- the stress through the thickness at the governing time: von Mises and axial
  stress per cell against height z, each layer's yield strength and the strength divided by the
  required safety factor (:mod:`actsim.checks.mechanical`).
* :func:`fatigue_figure` -- the S-N (Basquin) curve of each assessed layer with its operating point by
  each mean-stress method (Goodman, Gerber, Morrow, Smith-Watson-Topper, as
  :mod:`actsim.checks.fatigue` computes them), the fitted range of the constants and the target cycles.
* :func:`joint_figure` -- the moment the strips deliver against the joint angle, with the payload's
  gravity moment and that moment times the safety factor (:mod:`actsim.checks.joint_checks`).
* :func:`exposure_figure` -- the light dose at the exposure position over the exposure duration as a
  fraction of its limit, per hazard (:mod:`actsim.checks.exposure`).

:func:`write_check_figures` draws those whose check ran and returns their
:func:`actsim.figures.figure_record` entries. Every figure is a :class:`matplotlib.figure.Figure` on
the Agg canvas (no pyplot), saved through :func:`actsim.io.save_figure`.

References
----------
.. [1] N. E. Dowling, *Mechanical Behavior of Materials*, 4th ed., Pearson, 2013 (ch. 7 yielding,
   ch. 9 stress-based fatigue: Basquin, mean-stress corrections).
.. [2] IEC 62471:2006, *Photobiological safety of lamps and lamp systems* (exposure limits).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .figures import axis_label, display_unit, figure_record, fmt, new_figure
from .io import save_figure

__all__ = ["stress_figure", "fatigue_figure", "joint_figure", "exposure_figure", "write_check_figures",
           "METHOD_NAMES"]

#: Mean-stress methods as drawn.
METHOD_NAMES = {"none": "no correction", "goodman": "Goodman", "gerber": "Gerber", "morrow": "Morrow",
                "swt": "Smith-Watson-Topper"}
_METHOD_STYLE = {"none": ("0.4", "o"), "goodman": ("C0", "s"), "gerber": ("C2", "^"), "morrow": ("C1", "D"),
                 "swt": ("C3", "v")}


def _value(x):
    return None if x is None else float(getattr(x, "value", x))


def _layer_cells(ctx, k):
    return np.flatnonzero(ctx.layers == k)


def governing_state(ctx):
    """(state index, layer index, ratio) of the largest von Mises stress over yield strength.

    Layers without a yield strength count with their stress alone when no layer has one.
    """
    eq = np.abs(ctx.stress.equivalent)
    best = None
    for k, layer in enumerate(ctx.scenario.layers):
        cells = _layer_cells(ctx, k)
        lim = ctx.checks.materials.get(layer.material.name)
        ys = _value(getattr(lim, "yield_strength", None)) if lim is not None else None
        peak = eq[:, cells].max(axis=1)
        i = int(np.argmax(peak))
        ratio = peak[i] / ys if ys else None
        key = (ratio is not None, ratio if ratio is not None else peak[i])
        if best is None or key > best[0]:
            best = (key, i, k, ratio)
    return best[1], best[2], best[3]


def stress_figure(ctx, path) -> dict:
    """Von Mises and axial stress through the thickness at the governing time, with the strength limits.

    Parameters
    ----------
    ctx : actsim.checks.context.CheckContext
        The context of the check run (its stress history).
    path : str or os.PathLike
        The PNG file.

    Returns
    -------
    dict
        The figure's record.
    """
    sh, sc = ctx.stress, ctx.scenario
    i, kg, ratio = governing_state(ctx)
    z = ctx.ds["z"].values
    zd = display_unit("m", [sc.thickness])
    sd = display_unit("Pa")
    vm = sd(np.abs(sh.equivalent[i]))
    sx = sd(sh.stress[i])
    fig = new_figure((6.6, 4.6))
    ax = fig.subplots()
    ax.plot(vm, zd(z), color="C3", lw=1.6, label="von Mises stress")
    ax.plot(sx, zd(z), color="C0", lw=1.0, ls="--", label="axial stress sigma_x")
    ax.axvline(0.0, color="0.5", lw=0.6)
    sf = ctx.checks.required_safety_factor
    z0 = 0.0
    limits_txt = []
    shown_y = shown_a = False
    for k, layer in enumerate(sc.layers):
        z1 = z0 + layer.thickness
        if k % 2:
            ax.axhspan(zd(z0), zd(z1), color="0.92", lw=0, zorder=0)
        ax.text(1.0, zd(0.5 * (z0 + z1)), f" {layer.name}", transform=ax.get_yaxis_transform(), fontsize=7,
                va="center", ha="left", clip_on=False)
        lim = ctx.checks.materials.get(layer.material.name)
        ys = _value(getattr(lim, "yield_strength", None)) if lim is not None else None
        if ys:
            ax.plot([sd(ys)] * 2, [zd(z0), zd(z1)], color="k", lw=1.4, label=None if shown_y else "yield strength")
            ax.plot([sd(ys / sf)] * 2, [zd(z0), zd(z1)], color="k", lw=1.0, ls=":",
                    label=None if shown_a else f"yield strength / {fmt(sf)} (required factor)")
            shown_y = shown_a = True
            limits_txt.append(f"{layer.name} {fmt(sd(ys))} {sd.unit}")
        z0 = z1
    t = sh.time[i]
    tip = sh.tip_index is not None and i == sh.tip_index
    where = f"t = {fmt(t)} s" + (" under the tip load" if tip else "")
    ax.set_xlabel(axis_label("stress", sd.unit))
    ax.set_ylabel(axis_label("height z above the bottom face", zd.unit))
    ax.set_ylim(zd(0.0), zd(sc.thickness))
    ax.set_title(f"Stress through the thickness at the governing time ({where})", fontsize=9)
    ax.legend(fontsize=7, loc="best")
    save_figure(fig, path)
    j = int(np.argmax(vm))
    caption = (f"Von Mises stress (solid) and axial stress (dashed) per cell ({sd.unit}) against height above the "
               f"bottom face ({zd.unit}) at {where}, the state of the largest stress over yield strength "
               f"({sc.layers[kg].name}); largest von Mises {fmt(vm[j])} {sd.unit} at z = {fmt(zd(z[j]))} {zd.unit}"
               + (f", {fmt(100 * ratio)} % of the yield strength" if ratio is not None else "")
               + (f"; black lines: yield strength ({', '.join(limits_txt)}), dotted: divided by the required "
                  f"factor {fmt(sf)}" if limits_txt else "; no yield strength given")
               + f"; {sh.details.get('state', '')}")
    return figure_record(path, "Stress through the thickness", caption)


def fatigue_figure(ctx, details, path) -> dict | None:
    """S-N curve of each assessed layer with its operating points by each mean-stress method.

    Parameters
    ----------
    ctx : actsim.checks.context.CheckContext
    details : dict
        ``details["fatigue"]`` of the check run (per layer: ``cycles_per_run``, ``fitted_cycle_range`` ...).
    path : str or os.PathLike

    Returns
    -------
    dict or None
        The figure's record; None when no layer was assessed.

    Notes
    -----
    Basquin's curve and each cycle's life:

    .. math::

        \\sigma_{ar} = \\sigma_f' (2 N_f)^b
    """
    from .checks.fatigue import basquin_life, equivalent_amplitude

    cs, sc = ctx.checks, ctx.scenario
    layers = [(k, layer) for k, layer in enumerate(sc.layers) if layer.name in details]
    if not layers:
        return None
    fig = new_figure((5.2 * len(layers) + 1.0, 4.4))
    axes = np.atleast_1d(fig.subplots(1, len(layers), squeeze=False)[0])
    sd = display_unit("Pa")
    parts = []
    for ax, (k, layer) in zip(axes, layers):
        fd = details[layer.name]
        lim = cs.materials[layer.material.name]
        sf, b = _value(lim.fatigue_strength_coefficient), _value(lim.fatigue_strength_exponent)
        su = _value(lim.ultimate_strength)
        cyc = np.asarray(fd["cycles_per_run"], float).reshape(-1, 3)
        lo, hi = fd.get("fitted_cycle_range", (1e3, 1e7))
        n = np.logspace(1, 12, 200)
        ax.loglog(n, sd(sf * (2 * n) ** b), color="k", lw=1.4, label="Basquin S-N curve")
        ax.axvspan(lo, hi, color="0.9", lw=0, zorder=0, label=f"fitted range {fmt(lo)}-{fmt(hi)} cycles")
        n_target = float(cs.target_passes)  # each run of the protocol loads the critical point once
        ax.axvline(n_target, color="0.3", ls="--", lw=1, label=f"target {fmt(n_target)} runs of the protocol")
        points = []
        if cyc.size:
            c = cyc[int(np.argmax(cyc[:, 0]))]  # the largest counted range
            amp, mean = 0.5 * c[0], c[1]
            methods = [m for m in cs.mean_stress_methods if su is not None or m not in ("goodman", "gerber")]
            for m in ["none", *methods]:
                try:
                    a = float(np.atleast_1d(equivalent_amplitude(
                        stress_amplitude=amp, mean_stress=mean, method=m, ultimate_strength=su,
                        fatigue_strength_coefficient=sf, credit_compressive_mean=cs.credit_compressive_mean))[0])
                except Exception:  # noqa: BLE001 - a method without a finite amplitude is not drawn
                    continue
                life = float(np.atleast_1d(basquin_life(stress_amplitude=a, fatigue_strength_coefficient=sf,
                                                        fatigue_strength_exponent=b))[0])
                col, mk = _METHOD_STYLE.get(m, ("C4", "o"))
                shown_life = min(max(life, n[0]), n[-1])
                ax.plot([shown_life], [sd(a)], mk, color=col, ms=7, mfc="none" if m == "none" else col,
                        label=f"{METHOD_NAMES.get(m, m)}: {fmt(sd(a))} {sd.unit}, N = {fmt(life)}"
                              + (" (off the plot)" if shown_life != life else ""))
                ax.axhline(sd(a), color=col, lw=0.6, ls=":")
                points.append(f"{METHOD_NAMES.get(m, m)} {fmt(sd(a))} {sd.unit} -> {fmt(life)} cycles")
            ttl = (f"{layer.name}: largest cycle amplitude {fmt(sd(amp))} {sd.unit}, mean {fmt(sd(mean))} {sd.unit}")
        else:
            ttl = f"{layer.name}: no stress cycle counted"
        ax.set_xlabel("cycles to failure N")
        ax.set_ylabel(axis_label("stress amplitude (equivalent, fully reversed)", sd.unit))
        ax.set_title(ttl, fontsize=8)
        ax.grid(True, which="both", alpha=0.25)
        from matplotlib.ticker import LogFormatter

        ax.yaxis.set_major_formatter(LogFormatter(labelOnlyBase=False))
        ax.yaxis.set_minor_formatter(LogFormatter(labelOnlyBase=False, minor_thresholds=(2, 0.5)))
        ax.legend(fontsize=6, loc="upper right")
        parts.append(f"{layer.name} (sigma_f' {fmt(sd(sf))} {sd.unit}, b {fmt(b)}; governing "
                     f"{METHOD_NAMES.get(fd.get('governing_method'), fd.get('governing_method'))}): "
                     + ("; ".join(points) if points else "no cycle counted"))
    save_figure(fig, path)
    caption = ("Basquin S-N curve (equivalent fully reversed stress amplitude in MPa against cycles to failure, "
               "log-log) with the largest counted stress cycle placed by each mean-stress method (open circle: "
               f"no correction); grey band: fitted range of the constants; dashed: the target; " + " | ".join(parts))
    return figure_record(path, "Fatigue: S-N curve and operating points", caption)


def joint_figure(jd, path) -> dict | None:
    """Moment the strips deliver against the joint angle, with the load's moment and the required margin.

    Parameters
    ----------
    jd : dict
        ``details["joint"]`` of the check run (``angle`` [rad], ``required_moment``, ``moment_per_strip``,
        ``available_moment`` [N m], ``strips``, ``safety_factor``, ``governing_angle``).
    path : str or os.PathLike

    Returns
    -------
    dict or None
        The figure's record; None without angles.
    """
    if not jd or "angle" not in jd:
        return None
    ang = display_unit("rad")
    phi = ang(jd["angle"])
    req = np.asarray(jd["required_moment"], float)
    per = np.asarray(jd.get("moment_per_strip", req * np.nan), float)
    md = display_unit("N m")
    sfac = float(jd.get("safety_factor", 1.0))
    fig = new_figure((6.6, 4.4))
    ax = fig.subplots()
    n = jd.get("strips")
    if n is not None and "available_moment" in jd:
        avail = np.asarray(jd["available_moment"], float)
        ax.plot(phi, md(avail), color="C0", lw=1.6, label=f"{n} strips deliver")
    ax.plot(phi, md(per), color="C0", lw=0.8, ls=":", label="one strip delivers")
    ax.plot(phi, md(req), color="C3", lw=1.4, label="load: payload's gravity moment")
    ax.plot(phi, md(sfac * req), color="C3", lw=1.0, ls="--", label=f"load x safety factor {fmt(sfac)}")
    ax.axhline(0.0, color="0.5", lw=0.6)
    gtxt = ""
    if jd.get("governing_angle") is not None:
        g = ang(jd["governing_angle"])
        ax.axvline(g, color="0.3", lw=0.8, ls="-.", label=f"governing angle {fmt(g)}°")
        gtxt = f"; dash-dot: governing angle {fmt(g)}°"
    ax.set_xlabel(axis_label("joint angle", ang.unit))
    ax.set_ylabel(axis_label("moment about the joint", md.unit))
    ax.set_title(f"Joint ({jd.get('mounting', '')}): moment against angle", fontsize=9)
    ax.legend(fontsize=7, loc="best")
    save_figure(fig, path)
    if n is not None and "achieved_factor" in jd:
        fac = np.asarray(jd["achieved_factor"], float)
        res = f"{n} strips ({jd.get('strips_needed', n)} needed), smallest factor {fmt(np.nanmin(fac))}"
    else:
        res = "no number of strips lifts the payload through the whole range"
    caption = (f"Moment about the joint ({md.unit}) against the joint angle ({fmt(phi.min())} to {fmt(phi.max())}°): "
               f"delivered by the strips (solid blue; dotted: one strip), the payload's gravity moment (red, "
               f"{fmt(md(np.min(req)))}-{fmt(md(np.max(req)))} {md.unit}) and that times the safety factor "
               f"{fmt(sfac)} (dashed){gtxt}; {res}")
    return figure_record(path, "Joint moment against angle", caption)


def exposure_figure(ctx, light, path) -> dict | None:
    """Light dose at the exposure position over the exposure duration, as a fraction of each hazard's limit.

    Parameters
    ----------
    ctx : actsim.checks.context.CheckContext
    light : dict
        ``details["light"]`` of the check run.
    path : str or os.PathLike

    Returns
    -------
    dict or None
        The figure's record; None when the light check was not assessed.

    Notes
    -----
    From the start of the exposure, with :math:`H(t) = \\int_0^t E\\,dt`, the dose limit
    :math:`H_0` of the window :math:`W` and, for longer exposures, the rate limit :math:`E_0`:

    .. math::

        r(t) = H(t) / \\begin{cases} H_0 & t \\le W \\text{ or no rate limit} \\\\ E_0\\, t & t > W \\end{cases}

    The check itself takes the highest value over any window; the curve from the start is drawn with
    that value marked.
    """
    if not light or not light.get("assessed"):
        return None
    from .checks.exposure import protocol_dose
    from .checks.exposure_limits import HAZARDS
    from .checks.safety import exposure_protocol

    seq, _factor, _where, D, runs = exposure_protocol(ctx.scenario, ctx.safety)
    dose = protocol_dose(seq)
    tb = np.concatenate([[0.0], np.cumsum(dose["step_duration"])])
    hours = D > 7200.0
    tk, tunit = (1 / 3600.0, "h") if hours else (1.0, "s")
    fig = new_figure((6.8, 4.2))
    ax = fig.subplots()
    parts = []
    keys = {"actinic_uv": ("step_actinic_irradiance", "C4"), "uva": ("step_uva_irradiance", "C0"),
            "blue_light": ("step_blue_light_irradiance", "C2")}
    finals = {}
    for key, (col_name, col) in keys.items():
        h = HAZARDS[key]
        e = np.asarray(dose[col_name], float)
        hb = np.concatenate([[0.0], np.cumsum(e * dose["step_duration"])])
        # dense in time so the allowed dose's ramp (rate limit) is drawn smooth between step boundaries
        tt = np.union1d(tb, np.linspace(0.0, tb[-1], 400))
        hh = np.interp(tt, tb, hb)
        allowed = np.full(tt.shape, h.dose.value)
        if h.rate is not None:
            allowed = np.where(tt > h.dose.window, h.rate.value * tt, h.dose.value)
        r = 100.0 * hh / allowed
        ax.plot(tt * tk, r, color=col, lw=1.4, label=f"{h.label}")
        finals[key] = r[-1]
        parts.append(f"{h.label}: {fmt(r[-1])} % at the end")
    ax.axhline(100.0, color="k", lw=1.2, ls="--", label="limit (100 %)")
    ax.set_xlabel(axis_label("time of exposure", tunit))
    ax.set_ylabel("dose from the start / its limit (%)")
    top = max(110.0, max(finals.values()) * 1.1 if finals else 110.0)
    ax.set_ylim(0.0, top)
    ax.set_xlim(0.0, D * tk)
    ax.set_title(f"Light at the exposure position over {fmt(D * tk)} {tunit} ({fmt(runs)} runs; risk group "
                 f"{light.get('risk_group', '?')})", fontsize=9)
    ax.legend(fontsize=7, loc="best")
    save_figure(fig, path)
    caption = (f"Dose at the exposure position from the start of the exposure, as a percentage of its limit, over "
               f"{fmt(D * tk)} {tunit} ({fmt(runs)} runs of the protocol, {light.get('position', '')}); dose limits "
               f"up to each hazard's window, the irradiance limit times the time beyond it; dashed: the limit; "
               + "; ".join(parts) + " (the check takes the highest value over any window, see checks.json)")
    return figure_record(path, "Light exposure against its limit", caption)


def write_check_figures(ctx, results, details, folder) -> list[dict]:
    """Draw the figures of the checks that ran into ``folder``; returns their records.

    Parameters
    ----------
    ctx : actsim.checks.context.CheckContext
        The context of the check run (:func:`actsim.checks.run.build_context`).
    results : list
        The check rows (CheckResult and NotAssessed).
    details : dict
        The details of :func:`actsim.checks.run.dispatch`.
    folder : str or os.PathLike
        The figures folder inside the staging folder of the check.

    Returns
    -------
    list of dict
        :func:`actsim.figures.figure_record` of each figure drawn.
    """
    folder = Path(folder)
    names = [getattr(r, "check", "") for r in results]
    out = []
    ran_yield = any("yield strength" in n and getattr(r, "value", None) is not None  # "von Mises stress vs ..."
                    for n, r in zip(names, results))
    if ran_yield and ctx.stress is not None:
        out.append(stress_figure(ctx, folder / "check_stress.png"))
    fat = {k: v for k, v in (details.get("fatigue") or {}).items() if isinstance(v, dict) and "cycles_per_run" in v}
    if fat:
        rec = fatigue_figure(ctx, fat, folder / "check_fatigue.png")
        if rec:
            out.append(rec)
    if details.get("joint") and any(n.startswith("joint") for n in names):
        rec = joint_figure(details["joint"], folder / "check_joint.png")
        if rec:
            out.append(rec)
    light = details.get("light") or {}
    if light.get("assessed"):
        rec = exposure_figure(ctx, light, folder / "check_exposure.png")
        if rec:
            out.append(rec)
    return out
