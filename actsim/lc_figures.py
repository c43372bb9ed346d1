"""Figures of a run with liquid-crystal layers: the free ribbon's shape in 3-D, and the plate's curvatures,
twist and nematic order over time.

Each function draws from a result Dataset (:func:`actsim.simulate`) and returns the figure's record
(:func:`actsim.figures.figure_record`) with a caption generated from what is drawn.
"""

from __future__ import annotations

import math

import numpy as np

from .figures import (axis_label, display_unit, figure_record, fmt, lit_intervals, new_figure, shade_sources)
from .io import save_figure


def _ribbon_times(ds) -> list[int]:
    """Output times drawn: the largest ribbon curvature and the end (one if they coincide)."""
    k = np.hypot(ds["ribbon_curvature"].values, ds["ribbon_twist_rate"].values)
    i = int(np.argmax(k))
    last = ds.sizes["time"] - 1
    return [i] if i == last else [i, last]


def ribbon_figure(ds, path, *, scenario=None) -> dict:
    """The free ribbon of the strip's width and free length in 3-D, at its largest curvature and at the end.

    Parameters
    ----------
    ds : xarray.Dataset
        A run with liquid-crystal layers (``ribbon_curvature`` and the other ribbon variables).
    path : str or os.PathLike
        PNG file to write.
    scenario : actsim.scenario.Scenario, optional
        Not used; accepted for a uniform call.

    Returns
    -------
    dict
        The figure's record.
    """
    from .laminate import ribbon_surface

    L = float(ds.attrs["free_length"])
    w = float(ds.attrs["width"])
    idx = _ribbon_times(ds)
    fig = new_figure((4.2 * len(idx) + 0.6, 4.4))
    words = []
    for j, i in enumerate(idx):
        ax = fig.add_subplot(1, len(idx), j + 1, projection="3d")
        k = (float(ds["ribbon_curvature"].values[i]), float(ds["ribbon_curvature_across"].values[i]),
             float(ds["ribbon_twist_rate"].values[i]))
        X, Y, Z = (1e3 * a for a in ribbon_surface(k, length=L, width=w, n_along=120, n_across=9))
        ax.plot_surface(X, Y, Z, color="#6baed6", edgecolor="#2171b5", linewidth=0.2, alpha=0.9)
        ax.plot(X[:, X.shape[1] // 2], Y[:, X.shape[1] // 2], Z[:, X.shape[1] // 2], color="k", lw=0.8)
        span = max(np.ptp(X), np.ptp(Y), np.ptp(Z), 1e-9)
        for setter, a in ((ax.set_xlim, X), (ax.set_ylim, Y), (ax.set_zlim, Z)):
            mid = 0.5 * (a.max() + a.min())
            setter(mid - 0.55 * span, mid + 0.55 * span)
        ax.set_xlabel("x (mm)", fontsize=7)
        ax.set_ylabel("y (mm)", fontsize=7)
        ax.set_zlabel("z (mm)", fontsize=7)
        ax.tick_params(labelsize=6)
        shape = str(ds["ribbon_shape"].values[i])
        t = float(ds["time"].values[i])
        pitch, radius = float(ds["ribbon_helix_pitch"].values[i]), float(ds["ribbon_helix_radius"].values[i])
        geometry = ("" if not math.isfinite(pitch) else f"pitch {fmt(pitch * 1e3)} mm, radius {fmt(radius * 1e3)} mm")
        ax.set_title(f"t = {fmt(t)} s: {shape}" + (f"\n{geometry}" if geometry else ""), fontsize=8)
        words.append(f"at t = {fmt(t)} s a {shape}" + (f" ({geometry})" if geometry else ""))
    fig.suptitle(f"Free ribbon, {fmt(w * 1e3)} mm wide, {fmt(L * 1e3)} mm long (clamped end at the origin)",
                 fontsize=9)
    save_figure(fig, path)
    caption = (f"The mid-surface of the free ribbon ({fmt(w * 1e3)} mm wide, {fmt(L * 1e3)} mm long, lengths in mm) "
               f"with the curvature it adopts (bend, curvature across and twist from the laminate section and the "
               f"width's stretching penalty): {'; '.join(words)}; black line: the centre line")
    return figure_record(path, "Free ribbon shape", caption)


def plate_figure(ds, path, *, scenario=None) -> dict:
    """Free-plate curvatures along and across the strip and its twist against time; the order through the
    thickness at five times.

    Parameters
    ----------
    ds : xarray.Dataset
        A run with liquid-crystal layers.
    path : str or os.PathLike
        PNG file to write.
    scenario : actsim.scenario.Scenario, optional
        For the names and colours of the lit sources.

    Returns
    -------
    dict
        The figure's record.
    """
    fig = new_figure((6.6, 6.4))
    top, bottom = fig.subplots(2, 1)
    t = ds["time"].values
    kd = display_unit("m-1")
    top.plot(t, kd(ds["plate_curvature_x"].values), label="curvature along the strip")
    top.plot(t, kd(ds["plate_curvature_y"].values), ls="--", label="curvature across")
    twist = np.degrees(ds["twist_rate"].values) * 1e-3
    top.plot(t, twist, ls=":", color="C3", label="twist (deg/mm)")
    top.axhline(0.0, color="0.6", lw=0.6)
    handles = []
    lit_txt = shade_sources(top, lit_intervals(ds, scenario), legend_handles=handles)
    top.set_xlim(t[0], t[-1])
    top.set_xlabel("time (s)")
    top.set_ylabel(axis_label("curvature", kd.unit) + " / twist (deg/mm)")
    h, _ = top.get_legend_handles_labels()
    top.legend(h + handles, [x.get_label() for x in h + handles], fontsize=7)
    top.set_title("Free plate (laminate section)", fontsize=10)
    q = ds["order_parameter"].values
    cells = np.any(q != 0, axis=0)
    z_um = ds["z"].values * 1e6
    picks = np.unique(np.linspace(0, t.size - 1, 5).round().astype(int))
    for n, i in enumerate(picks):
        bottom.plot(np.where(cells, q[i], np.nan), z_um, color=f"C{n}", label=f"t = {fmt(t[i])} s")
    bottom.set_xlabel("nematic order parameter Q")
    bottom.set_ylabel(axis_label("height above the bottom face", "µm"))
    bottom.legend(fontsize=7)
    bottom.set_title("Order through the thickness (liquid-crystal layers)", fontsize=10)
    fig.tight_layout()
    save_figure(fig, path)
    ix = int(np.argmax(np.abs(ds["plate_curvature_x"].values)))
    it = int(np.argmax(np.abs(twist)))
    caption = (f"Top: the free plate's curvature along (solid) and across (dashed) the strip ({kd.unit}) and its "
               f"twist (dotted, deg/mm) over {fmt(t[-1] - t[0])} s; largest curvature along "
               f"{fmt(kd(ds['plate_curvature_x'].values[ix]))} {kd.unit} at {fmt(t[ix])} s, largest twist "
               f"{fmt(twist[it])} deg/mm at {fmt(t[it])} s" + (f"; shaded: {lit_txt}" if lit_txt else "")
               + f". Bottom: the order parameter Q through the liquid-crystal layers at {len(picks)} times "
               f"(from {fmt(float(q[:, cells].min()) if cells.any() else 0.0)} to "
               f"{fmt(float(q[:, cells].max()) if cells.any() else 0.0)})")
    return figure_record(path, "Plate curvatures, twist and order", caption)
