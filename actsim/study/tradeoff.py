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

_SCALE = {"rad": (180 / math.pi, "deg"), "N": (1e3, "mN"), "N m": (1e6, "uN m"), "m": (1e6, "um"),
          "W/m^2": (0.1, "mW/cm^2"), "W m-2": (0.1, "mW/cm^2"), "K": (1.0, "K"), "s": (1.0, "s")}


def _display(var):
    u = var.attrs.get("units", "")
    k, du = _SCALE.get(u, (1.0, u))
    return k, du


def _label(ds, name):
    var = ds[name]
    k, du = _display(var)
    title = var.attrs.get("field", name)
    return f"{title} [{du}]" if du and du != "1" else title


def heatmap(ds: xr.Dataset, metric: str, x: str, y: str, path, *, select=None):
    """Heat map of ``metric`` over two swept dimensions (other dimensions fixed by ``select`` or at index 0)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

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
    k, du = _display(m)
    fig, ax = plt.subplots(figsize=(6, 4.2))
    kx, _ = _display(ds[x])
    ky, _ = _display(ds[y])
    pc = ax.pcolormesh(ds[x].values * kx, ds[y].values * ky, np.abs(m.values) * k if "force" in metric else m.values * k,
                       shading="nearest", cmap="viridis")
    fig.colorbar(pc, ax=ax, label=f"{metric} [{du}]")
    ax.set_xlabel(_label(ds, x))
    ax.set_ylabel(_label(ds, y))
    if ds[x].attrs.get("units") in ("W/m^2",) and ds[x].values.min() > 0 and ds[x].values.max() / ds[x].values.min() > 20:
        ax.set_xscale("log")
    if ds[y].attrs.get("units") in ("W/m^2",) and ds[y].values.min() > 0 and ds[y].values.max() / ds[y].values.min() > 20:
        ax.set_yscale("log")
    ax.set_title(f"{metric} (NaN/blank: not reached or invalid)", fontsize=9)
    save_figure(fig, path)
    plt.close(fig)
    return path


def pareto_plot(ds: xr.Dataset, path, *, speed="time_to_target", force="blocked_force_at_target"):
    """All designs (time to target against force) with the Pareto front highlighted."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from ..io import save_figure

    pf = pareto_front(ds, speed=speed, force=force)
    t = ds[speed].values.ravel()
    f = np.abs(ds[force].values.ravel()) * 1e3
    fig, ax = plt.subplots(figsize=(6, 4.2))
    ax.scatter(t, f, s=12, c="0.6", label="designs")
    front = sorted(pf["table"], key=lambda r: r[speed])
    ax.plot([r[speed] for r in front], [r[force] * 1e3 for r in front], "o-", c="C3", ms=5, label="Pareto front")
    ax.set_xlabel("time to target angle [s]")
    ax.set_ylabel(f"{force_label(force)} [mN]")
    ax.set_title(f"{pf['n_on_front']} on the front; {pf['n_not_reaching']} never reach the target (not shown)", fontsize=9)
    ax.legend()
    save_figure(fig, path)
    plt.close(fig)
    return path


def bend_family(ds: xr.Dataset, path, *, along: str, select=None):
    """Bend angle against time for every value of ``along`` (other dimensions fixed by ``select`` or index 0)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from ..io import save_figure

    if "series_bend_angle" not in ds:
        raise ActsimInputError("bend_family: the sweep kept no time series; run it with --series (keep_series=True)")
    if along not in ds.dims:
        raise ActsimInputError(f"bend_family: '{along}' is not a swept dimension (dimensions: {', '.join(map(str, ds.dims))})")
    s = ds["series_bend_angle"]
    rest = {d: 0 for d in s.dims if d not in (along, "time")}
    rest.update(select or {})
    s = s.isel(rest)
    k, du = _display(ds[along])
    fig, ax = plt.subplots(figsize=(6, 4.2))
    cmap = plt.get_cmap("viridis")
    n = ds.sizes[along]
    for i in range(n):
        ax.plot(ds["time"].values, np.degrees(s.isel({along: i}).values), c=cmap(i / max(1, n - 1)),
                label=f"{ds[along].values[i] * k:.4g} {du}")
    if "target_bend_angle" in ds.attrs:
        ax.axhline(math.degrees(ds.attrs["target_bend_angle"]), ls="--", c="0.4", lw=0.8)
    ax.set_xlabel("time [s]")
    ax.set_ylabel("bend angle [deg]")
    ax.set_title(f"along {ds[along].attrs.get('field', along)}", fontsize=9)
    if n <= 12:
        ax.legend(fontsize=7)
    save_figure(fig, path)
    plt.close(fig)
    return path


def swept_fields(ds):
    """Field paths of the sweep, in order."""
    return json.loads(ds.attrs.get("swept_fields", "[]"))


__all__ = ["pareto_mask", "pareto_front", "best_value", "recommend", "heatmap", "pareto_plot", "bend_family",
           "swept_fields", "format_quantity", "field_units", "force_label", "FORCE_METRICS", "FORCE_LABELS"]
