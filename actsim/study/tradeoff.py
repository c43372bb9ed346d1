"""Trade-offs in a sweep result: the speed/force Pareto front, best values, recommendations, figures.

All functions take the :class:`xarray.Dataset` of :func:`actsim.study.sweep.sweep`.
Speed is the time to the target bend angle (smaller is better); force is, by
default, the magnitude of the blocked force when the target angle is reached
(``blocked_force_at_target``, larger is better): the force the strip can exert
at the moment it is fast enough, independent of how long the protocol goes on
afterwards. The peak blocked force over the whole protocol
(``peak_blocked_force``) can be chosen instead (``force=``); it grows with the
protocol length, so a speed/force trade-off built on it mixes "how fast" with
"how strong after the full exposure". Designs that never reach the target are
left out of the front and counted.

References
----------
.. [1] Deb, K. Multi-Objective Optimization using Evolutionary Algorithms.
   Wiley 2001, ch. 2 (domination, non-dominated set).
"""

from __future__ import annotations

import json
import math

import numpy as np
import xarray as xr

from ..errors import ActsimInputError

#: Force metrics a speed/force trade-off can use: short name -> metric in the sweep.
FORCE_METRICS = {"at-target": "blocked_force_at_target", "peak": "peak_blocked_force"}
#: How each force metric is labelled in reports and figures.
FORCE_LABELS = {"blocked_force_at_target": "blocked force at the target angle",
                "peak_blocked_force": "peak blocked force over the protocol"}


def force_label(metric: str) -> str:
    """Readable name of a force metric (``blocked_force_at_target`` -> "blocked force at the target angle")."""
    return FORCE_LABELS.get(metric, metric.replace("_", " "))


#: SI unit -> (scale, unit) of :func:`format_quantity` (screens; figures use :func:`actsim.figures.display_unit`).
_SCALE = {"rad": (180 / math.pi, "deg"), "N": (1e3, "mN"), "N m": (1e6, "uN m"), "m": (1e6, "um"),
          "W/m^2": (0.1, "mW/cm^2"), "W m-2": (0.1, "mW/cm^2"), "K": (1.0, "K"), "s": (1.0, "s")}


def format_quantity(value, unit: str) -> str:
    """A SI value with its unit in a readable scale: (7.5e-05, "m") -> "75 um", (50.0, "W/m^2") -> "5 mW/cm^2".

    Parameters
    ----------
    value : float or str
        Value in SI [``unit``]; words (categorical fields) are returned as they are.
    unit : str
        SI unit of ``value`` ("m", "W/m^2", "rad", "N", "s", "K", "1", ...).
    """
    if isinstance(value, str) or isinstance(value, bool) or value is None:
        return str(value)
    v = float(value)
    if not math.isfinite(v):
        return f"{v} {unit}".strip()
    a = abs(v)
    if unit == "m":
        for lim, k, u in ((1e-6, 1e9, "nm"), (1e-3, 1e6, "um"), (1.0, 1e3, "mm")):
            if 0 < a < lim:
                return f"{v * k:.4g} {u}"
        return f"{v:.4g} m"
    if unit == "N":
        for lim, k, u in ((1e-3, 1e6, "uN"), (1.0, 1e3, "mN")):
            if 0 < a < lim:
                return f"{v * k:.4g} {u}"
        return f"{v:.4g} N"
    if unit in _SCALE and unit not in ("N", "m"):
        k, du = _SCALE[unit]
        return f"{v * k:.4g} {du}"
    if unit in ("", "1"):
        return f"{v:.4g}"
    return f"{v:.4g} {unit}"


def field_units(ds) -> dict:
    """SI unit of every swept field of a sweep result: field path -> unit."""
    return {c.attrs["field"]: c.attrs.get("units", "") for c in ds.coords.values() if "field" in c.attrs}


def _swept_dims(ds):
    return [d for d in ds["status"].dims]


def _need(ds, name):
    if name not in ds:
        import difflib

        hint = difflib.get_close_matches(name, list(ds.data_vars), n=1)
        extra = f"; did you mean '{hint[0]}'?" if hint else ""
        if name == "time_to_target":
            extra = "; run the sweep with a target bend angle (--target-angle)"
        raise ActsimInputError(f"metric: '{name}' is not in this sweep result{extra}")
    return ds[name]


def pareto_mask(time, force):
    """Non-dominated designs for (minimise ``time``, maximise ``force``); NaN times are never on the front.

    A design is dominated when another is at least as fast and at least as
    strong, and strictly better in one.

    Parameters
    ----------
    time : numpy.ndarray
        Time to target [s] (NaN: never reached).
    force : numpy.ndarray
        Force magnitude [N].
    """
    t = np.asarray(time, float).ravel()
    f = np.asarray(force, float).ravel()
    ok = np.isfinite(t) & np.isfinite(f)
    mask = np.zeros(t.size, bool)
    idx = np.nonzero(ok)[0]
    # sort by time, then by force descending; sweep keeps the running best force
    order = idx[np.lexsort((-f[idx], t[idx]))]
    best = -np.inf
    for i in order:
        if f[i] > best:
            mask[i] = True
            best = f[i]
    # equal (time, force) pairs: all of them are non-dominated
    for i in order:
        if not mask[i]:
            same = mask & (t == t[i]) & (f == f[i])
            if same.any():
                mask[i] = True
    return mask.reshape(np.shape(time))


def pareto_front(ds: xr.Dataset, *, speed="time_to_target", force="blocked_force_at_target") -> dict:
    """Designs on the speed/force Pareto front.

    Parameters
    ----------
    ds : xarray.Dataset
        A sweep result with a target bend angle.
    speed : str
        Time metric to minimise [s].
    force : str
        Force metric to maximise (magnitude) [N]: ``blocked_force_at_target`` (default: the
        force when the target angle is reached) or ``peak_blocked_force`` (over the protocol).

    Returns
    -------
    dict
        ``table`` (list of dict: design, swept field values in SI, time [s], force [N]),
        sorted by time; ``speed`` and ``force`` (the metric names), ``force_label``; ``n_on_front``; ``n_not_reaching`` (designs excluded because
        they never reach the target); ``n_invalid``; ``mask`` (bool array over the sweep dims).
    """
    t = _need(ds, speed)
    f = np.abs(_need(ds, force))
    ok = ds["status"] == 0
    tv = np.where(ok, t.values, np.nan)
    mask = pareto_mask(tv, f.values)
    n_not = int((ok.values & ~np.isfinite(t.values)).sum())
    rows = []
    for flat in np.nonzero(mask.ravel())[0]:
        idx = np.unravel_index(flat, mask.shape)
        sel = dict(zip(t.dims, idx))
        point = ds.isel(sel)
        row = {"design": int(point["design"].values)}
        for name, c in ds.coords.items():
            if "field" in c.attrs and c.dims and set(c.dims) <= set(t.dims):
                v = point[name].values
                row[c.attrs["field"]] = v.item() if hasattr(v, "item") else v
        row[speed] = float(tv[idx])
        row[force] = float(f.values[idx])
        rows.append(row)
    rows.sort(key=lambda r: r[speed])
    return {"table": rows, "speed": speed, "force": force, "force_label": force_label(force),
            "n_on_front": len(rows), "n_not_reaching": n_not,
            "n_invalid": int((ds["status"] != 0).sum()), "mask": mask}


def best_value(ds: xr.Dataset, field_dim: str, metric: str, *, maximise=True, where=None) -> xr.Dataset:
    """The best value of one swept field for each combination of the others.

    Parameters
    ----------
    ds : xarray.Dataset
        A grid sweep.
    field_dim : str
        The dimension to optimise over (e.g. ``layers_film_thickness``).
    metric : str
        Metric to maximise (or minimise).
    maximise : bool
        Largest (True) or smallest metric.
    where : xarray.DataArray of bool, optional
        Only designs where this holds are eligible.

    Returns
    -------
    xarray.Dataset
        ``best_<field_dim>`` (the coordinate value, SI; NaN where no design is
        eligible) and ``best_<metric>`` over the other dimensions.
    """
    if field_dim not in ds.dims:
        import difflib

        hint = difflib.get_close_matches(field_dim, list(ds.dims), n=1)
        raise ActsimInputError(f"field: '{field_dim}' is not a swept dimension" + (f"; did you mean '{hint[0]}'?" if hint else
                               f"; dimensions: {', '.join(map(str, ds.dims))}"))
    m = _need(ds, metric)
    if m.dtype == bool:
        m = m.astype(float)
    if "force" in metric or "moment" in metric:  # signed with the bending direction: compare magnitudes
        m = np.abs(m)
    ok = ds["status"] == 0
    if where is not None:
        ok = ok & where
    score = m.where(ok)
    filled = score.fillna(-np.inf if maximise else np.inf)
    arg = filled.argmax(field_dim) if maximise else filled.argmin(field_dim)
    any_ok = score.notnull().any(field_dim)
    best_coord = ds[field_dim][arg].where(any_ok)
    best_metric = score.isel({field_dim: arg}).where(any_ok)
    out = xr.Dataset({f"best_{field_dim}": best_coord.drop_vars(field_dim, errors="ignore"),
                      f"best_{metric}": best_metric.drop_vars(field_dim, errors="ignore")})
    out[f"best_{field_dim}"].attrs = dict(ds[field_dim].attrs)
    out[f"best_{metric}"].attrs = dict(ds[metric].attrs)
    return out


def recommend(ds: xr.Dataset, field_dim: str, *, within: float, maximise="blocked_force_at_target") -> list[dict]:
    """The value of ``field_dim`` that reaches the target angle in under ``within`` with the largest force.

    For each combination of the other swept fields: among the designs whose
    ``time_to_target`` is at most ``within``, the one with the largest ``|maximise|``.

    Parameters
    ----------
    ds : xarray.Dataset
        A grid sweep with a target bend angle.
    field_dim : str
        The swept dimension to choose a value of.
    within : float
        Time limit [s].
    maximise : str
        Metric to maximise among the designs fast enough: ``blocked_force_at_target``
        (default: the force available when the target angle is reached [N]) or
        ``peak_blocked_force`` (the largest force over the whole protocol [N]).

    Returns
    -------
    list of dict
        One row per combination of the other fields: their values, the
        recommended value (or None when no design reaches the target in time),
        its time to target [s] and its force [N].
    """
    t = _need(ds, "time_to_target")
    if not (isinstance(within, (int, float)) and within > 0 and math.isfinite(within)):
        raise ActsimInputError(f"--within: {within!r} s is outside the allowed range (> 0 s)")
    fast = t <= within
    best = best_value(ds, field_dim, maximise, maximise=True, where=fast)
    arg_ok = best[f"best_{field_dim}"]
    rows = []
    other = [d for d in arg_ok.dims]
    it = np.ndindex(*[arg_ok.sizes[d] for d in other]) if other else [()]
    for idx in it:
        sel = dict(zip(other, idx))
        row = {}
        for d in other:
            c = ds[d]
            v = c.values[sel[d]]
            row[c.attrs.get("field", d)] = v.item() if hasattr(v, "item") else v
        val = float(arg_ok.isel(sel).values) if other else float(arg_ok.values)
        if math.isnan(val):
            row.update({"recommended": None, "time_to_target": None, maximise: None})
        else:
            point = ds.sel({field_dim: val}).isel(sel) if other else ds.sel({field_dim: val})
            row.update({"recommended": val, "time_to_target": float(point["time_to_target"].values),
                        maximise: float(abs(point[maximise].values))})
            if maximise != "peak_blocked_force" and "peak_blocked_force" in ds:
                row["peak_blocked_force"] = float(abs(point["peak_blocked_force"].values))
        rows.append(row)
    return rows


# ----------------------------------------------------------------------------
# Figures
# ----------------------------------------------------------------------------

#: Words of the sweep metrics in figures.
METRIC_WORDS = {"time_to_target": "time to the target angle", "reached_target": "target reached",
                "peak_temperature": "peak temperature", "peak_bend_angle": "peak bend angle",
                "final_bend_angle": "final bend angle", "time_of_peak_bend": "time of the peak bend",
                "time_of_peak_force": "time of the peak force", "peak_blocked_moment": "peak blocked moment",
                "peak_tip_deflection": "peak tip travel", "optical_dose": "optical dose",
                "optical_energy": "optical energy", "peak_optical_power": "peak optical power",
                "mechanical_work": "mechanical work", "efficiency": "efficiency", **FORCE_LABELS}
#: A colour scale (or a value axis) spanning more than this ratio is logarithmic [1] (1.5 decades; common practice, no source).
LOG_SPAN = 10 ** 1.5


def metric_words(metric: str) -> str:
    """Words for a sweep metric (``time_to_target`` -> "time to the target angle")."""
    return METRIC_WORDS.get(metric, metric.replace("_", " "))


def _field_of(ds, dim):
    return ds[dim].attrs.get("field", dim)


def _spaced(v, geometric=False):
    v = np.asarray(v, float)
    if v.size < 3:
        return True
    if geometric:
        if np.any(v <= 0):
            return False
        v = np.log(v)
    d = np.diff(v)
    return bool(np.allclose(d, d[0], rtol=1e-3, atol=0.0))


def is_categorical(ds, dim) -> bool:
    """Whether a swept dimension is a set of choices (words, wavelengths of sources, a few unevenly spaced values)."""
    v = ds[dim].values
    if v.dtype.kind not in "fiu":
        return True
    if str(_field_of(ds, dim)).endswith("wavelength"):
        return True
    return v.size <= 6 and not (_spaced(v) or _spaced(v, geometric=True))


def _is_log(values) -> bool:
    v = np.asarray(values, float)
    v = v[np.isfinite(v)]
    return bool(v.size >= 2 and np.all(v > 0) and v.max() / v.min() > LOG_SPAN)


def _axis(ds, dim):
    """(positions, labels or None, axis label, display, log, caption text) of a swept dimension."""
    from ..figures import axis_label, display_unit, field_words, fmt

    field = _field_of(ds, dim)
    words = field_words(field)
    v = ds[dim].values
    if v.dtype.kind not in "fiu":
        labels = [str(x) for x in v]
        return np.arange(v.size), labels, words, None, False, f"{words} ({', '.join(labels)})"
    d = display_unit(ds[dim].attrs.get("units", ""), v, quantity=field)
    shown_v = d(v)
    if is_categorical(ds, dim):
        labels = [fmt(x, 4) for x in shown_v]
        return (np.arange(v.size), labels, axis_label(words, d.unit), d, False,
                f"{words} ({', '.join(labels)} {d.unit})".replace(" )", ")"))
    log = _is_log(shown_v) and not _spaced(shown_v)
    return (shown_v, None, axis_label(words, d.unit), d, log,
            f"{words} ({fmt(shown_v.min())}-{fmt(shown_v.max())} {d.unit}, {v.size} values{', log axis' if log else ''})")


def _rest_text(ds, fixed):
    from ..figures import field_words, shown

    parts = []
    for d, i in fixed.items():
        c = ds[d]
        parts.append(f"{field_words(_field_of(ds, d))} = {shown(c.values[i], c.attrs.get('units', ''), quantity=_field_of(ds, d))}")
    return ("; other swept fields at " + ", ".join(parts)) if parts else ""


def heatmap(ds: xr.Dataset, metric: str, x: str, y: str, path, *, select=None) -> dict:
    """Heat map of ``metric`` over two swept dimensions (other dimensions fixed by ``select`` or at index 0).

    Display units on both axes and the colour bar, categorical axes for choices (e.g. LED wavelengths),
    a logarithmic colour scale when the values span more than :data:`LOG_SPAN`, each cell's value written
    in it on small grids. Returns the figure's :func:`actsim.figures.figure_record`.
    """
    from matplotlib.colors import LogNorm

    from ..figures import axis_label, display_unit, figure_record, fmt, new_figure
    from ..io import save_figure

    for d in (x, y):
        if d not in ds.dims:
            raise ActsimInputError(f"heatmap: '{d}' is not a swept dimension (dimensions: {', '.join(map(str, ds.dims))})")
    m = _need(ds, metric)
    rest = {d: 0 for d in m.dims if d not in (x, y)}
    rest.update(select or {})
    m = m.isel(rest).transpose(y, x)
    if m.dtype == bool:
        m = m.astype(float)
    vals = np.abs(m.values) if ("force" in metric or "moment" in metric) else m.values.astype(float)
    dm = display_unit(m.attrs.get("units", ""), vals, quantity=metric)
    z = dm(vals)
    finite = z[np.isfinite(z)]
    log = _is_log(finite)
    fig = new_figure((6.6, 4.6))
    ax = fig.subplots()
    xp, xl, xlab, _, xlog, xtxt = _axis(ds, x)
    yp, yl, ylab, _, ylog, ytxt = _axis(ds, y)
    norm = LogNorm(vmin=finite.min(), vmax=finite.max()) if log else None
    pc = ax.pcolormesh(xp, yp, np.ma.masked_invalid(z), shading="nearest", cmap="viridis", norm=norm)
    words = metric_words(metric)
    fig.colorbar(pc, ax=ax, label=axis_label(words, dm.unit) + (", log scale" if log else ""))
    for axis, pos, lab, lg in ((ax.xaxis, xp, xl, xlog), (ax.yaxis, yp, yl, ylog)):
        if lab is not None:
            axis.set_ticks(pos)
            axis.set_ticklabels(lab)
        elif lg:
            (ax.set_xscale if axis is ax.xaxis else ax.set_yscale)("log")
    ax.set_xlabel(xlab)
    ax.set_ylabel(ylab)
    if z.size <= 64:  # small grids: the value in each cell
        for i in range(z.shape[0]):
            for j in range(z.shape[1]):
                if np.isfinite(z[i, j]):
                    ax.text(xp[j], yp[i], fmt(z[i, j]), ha="center", va="center", fontsize=7, color="w",
                            path_effects=_outline())
    n_blank = int((~np.isfinite(z)).sum())
    ax.set_title(f"{words[:1].upper() + words[1:]}" + (f" ({n_blank} blank: not reached or invalid)" if n_blank else ""),
                 fontsize=9)
    save_figure(fig, path)
    rng = f"{fmt(finite.min())}-{fmt(finite.max())} {dm.unit}".strip() if finite.size else "no finite values"
    caption = (f"{words[:1].upper() + words[1:]} ({dm.unit or 'fraction'}; {'logarithmic' if log else 'linear'} colour scale, "
               f"{rng}) over {xtxt} and {ytxt}"
               + (f"; {n_blank} blank cells: the design never reaches the target or is invalid" if n_blank else "")
               + _rest_text(ds, {d: i for d, i in rest.items() if d in ds.dims and d not in (x, y)}))
    return figure_record(path, f"Heat map of {words}", caption)


def _outline():
    from matplotlib import patheffects

    return [patheffects.withStroke(linewidth=1.5, foreground="0.2")]


def _design_text(ds, row, skip):
    from ..figures import shown

    units = field_units(ds)
    return ", ".join(shown(v, units.get(k, ""), quantity=k) for k, v in row.items() if k not in skip)


def pareto_plot(ds: xr.Dataset, path, *, speed="time_to_target", force="blocked_force_at_target", within=None,
                recommend_dim=None) -> dict:
    """All designs (time to target against force) with the Pareto front, its swept values, the time limit
    ``within`` [s] and the recommended design of ``recommend_dim`` marked.

    Returns the figure's :func:`actsim.figures.figure_record`.
    """
    from ..figures import axis_label, display_unit, figure_record, fmt, new_figure
    from ..io import save_figure

    pf = pareto_front(ds, speed=speed, force=force)
    t = ds[speed].values.ravel().astype(float)
    fraw = np.abs(ds[force].values.ravel().astype(float))
    fd = display_unit("N", fraw)
    fig = new_figure((6.8, 4.6))
    ax = fig.subplots()
    ax.scatter(t, fd(fraw), s=12, c="0.65", label=f"designs ({int(np.isfinite(t).sum())} reach the target)")
    front = sorted(pf["table"], key=lambda r: r[speed])
    ft = np.array([r[speed] for r in front])
    ff = fd(np.array([r[force] for r in front]))
    ax.plot(ft, ff, "o-", c="C3", ms=5, label=f"Pareto front ({len(front)} designs)")
    skip = ("design", speed, force)
    n = len(front)
    show = range(n) if n <= 12 else sorted(set(np.linspace(0, n - 1, 10).round().astype(int)))
    for i in show:
        ax.annotate(_design_text(ds, front[i], skip), (ft[i], ff[i]), textcoords="offset points", xytext=(5, 4),
                    fontsize=7, color="C3")
    if _is_log(t[np.isfinite(t)]):
        ax.set_xscale("log")
    if _is_log(ff):
        ax.set_yscale("log")
    limit_txt = rec_txt = ""
    if within is not None:
        ax.axvline(within, color="0.3", ls="--", lw=1, label=f"limit {fmt(within)} s")
        right = ax.get_xlim()[1]
        ax.axvspan(within, max(right, within * 1.05), color="0.5", alpha=0.08, lw=0)
        ax.set_xlim(right=max(right, within * 1.05))
        limit_txt = f"; dashed line: the {fmt(within)} s limit (grey beyond it: too slow)"
    if recommend_dim is not None and within is not None:
        rows = [r for r in recommend(ds, recommend_dim, within=within, maximise=force) if r["recommended"] is not None]
        unit = ds[recommend_dim].attrs.get("units", "")
        field = _field_of(ds, recommend_dim)
        from ..figures import field_words, shown

        for k, r in enumerate(rows):
            ax.plot([r["time_to_target"]], [fd(r[force])], "*", ms=16, mfc="gold", mec="k", zorder=5,
                    label="recommended" if k == 0 else None)
            ax.annotate(f"recommended: {shown(r['recommended'], unit, quantity=field)}", (r["time_to_target"], fd(r[force])),
                        textcoords="offset points", xytext=(8, -18), ha="left", fontsize=8, fontweight="bold")
        if rows:
            rec_txt = "; star: recommended " + "; ".join(
                f"{field_words(field)} {shown(r['recommended'], unit, quantity=field)} (target in {fmt(r['time_to_target'])} s, "
                f"{fmt(fd(r[force]))} {fd.unit})" for r in rows[:3])
    ax.set_xlabel(axis_label("time to the target angle", "s"))
    ax.set_ylabel(axis_label(force_label(force), fd.unit))
    ax.set_title(f"{pf['n_on_front']} on the front; {pf['n_not_reaching']} never reach the target (not shown)", fontsize=9)
    ax.legend(fontsize=7)
    save_figure(fig, path)
    caption = (f"Time to the target angle (s) against {force_label(force)} ({fd.unit}) of every design (grey) and the "
               f"Pareto front (red, {len(front)} designs"
               + (f", {fmt(ft.min())}-{fmt(ft.max())} s, {fmt(ff.min())}-{fmt(ff.max())} {fd.unit}" if len(front) else "")
               + ", labelled with their swept values)"
               + f"; {pf['n_not_reaching']} designs never reach the target (not shown)" + limit_txt + rec_txt)
    return figure_record(path, "Speed against force: Pareto front", caption)


def bend_family(ds: xr.Dataset, path, *, along: str, select=None) -> dict:
    """Bend angle against time for every value of ``along`` (other dimensions fixed by ``select`` or index 0).

    A colour bar of the swept value (a legend for a few categories). Returns the figure's
    :func:`actsim.figures.figure_record`.
    """
    from matplotlib import colormaps
    from matplotlib.cm import ScalarMappable
    from matplotlib.colors import BoundaryNorm, LogNorm, Normalize

    from ..figures import display_unit, figure_record, fmt, new_figure
    from ..io import save_figure

    if "series_bend_angle" not in ds:
        raise ActsimInputError("bend_family: the sweep kept no time series; run it with --series (keep_series=True)")
    if along not in ds.dims:
        raise ActsimInputError(f"bend_family: '{along}' is not a swept dimension (dimensions: {', '.join(map(str, ds.dims))})")
    s = ds["series_bend_angle"]
    rest = {d: 0 for d in s.dims if d not in (along, "time")}
    rest.update(select or {})
    s = s.isel(rest)
    pos, labels, label, d, log, txt = _axis(ds, along)
    ang = display_unit("rad")
    fig = new_figure((6.8, 4.4))
    ax = fig.subplots()
    cmap = colormaps["viridis"]
    n = ds.sizes[along]
    if labels is not None:
        norm = BoundaryNorm(np.arange(n + 1) - 0.5, cmap.N)
        values = np.arange(n)
    else:
        values = np.asarray(pos, float)
        norm = LogNorm(values.min(), values.max()) if log else Normalize(values.min(), values.max())
    t = ds["time"].values
    for i in range(n):
        ax.plot(t, ang(s.isel({along: i}).values), c=cmap(norm(values[i])), lw=1.0)
    sm = ScalarMappable(norm=norm, cmap=cmap)
    cb = fig.colorbar(sm, ax=ax, label=label + (", log scale" if log else ""))
    if labels is not None:
        cb.set_ticks(np.arange(n))
        cb.set_ticklabels(labels)
    tgt = ""
    if "target_bend_angle" in ds.attrs:
        ta = ang(ds.attrs["target_bend_angle"])
        ax.axhline(ta, ls="--", c="0.3", lw=0.9, label=f"target {fmt(ta)}°")
        ax.legend(fontsize=7, loc="best")
        tgt = f"; dashed: target {fmt(ta)}°"
    ax.set_xlabel("time (s)")
    ax.set_ylabel(f"bend angle ({ang.unit})")
    ax.set_title(f"Bend angle for each {label}", fontsize=9)
    save_figure(fig, path)
    caption = (f"Bend angle (degrees) over {fmt(t[-1] - t[0])} s for {n} values of {txt}, coloured by the colour bar"
               + tgt + _rest_text(ds, {k: i for k, i in rest.items() if k in ds.dims and k != along}))
    return figure_record(path, "Bend angle against time, family", caption)


def swept_fields(ds):
    """Field paths of the sweep, in order."""
    return json.loads(ds.attrs.get("swept_fields", "[]"))


__all__ = ["pareto_mask", "pareto_front", "best_value", "recommend", "heatmap", "pareto_plot", "bend_family",
           "swept_fields", "is_categorical", "metric_words", "METRIC_WORDS", "LOG_SPAN", "format_quantity", "field_units", "force_label", "FORCE_METRICS", "FORCE_LABELS"]
