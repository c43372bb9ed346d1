"""Figures of a simulation result (matplotlib, Agg canvas, PNG).

Figures are drawn on :class:`matplotlib.figure.Figure` objects with the Agg canvas, not through
pyplot: no global figure state, no GUI backend chosen for the caller, and pyplot's import time saved.

Text in a figure often comes from the user (scenario title, layer and source names, swept field
paths, column names of data files). :func:`plain_texts` turns every title, axis label, legend entry
and annotation into plain text (no mathtext, no TeX, at most :data:`MAX_FIGURE_TEXT` characters);
:func:`actsim.io.save_figure` calls it before drawing, so a title such as ``$\\undefined$`` or one
a megabyte long is drawn as written (shortened), never parsed. Tick labels keep matplotlib's own
formatting (log axes use mathtext for powers of ten).
"""

from __future__ import annotations

import numpy as np

from .io import save_figure

#: Longest text drawn in a figure (title, label, legend entry) [characters]; longer text ends in an ellipsis.
MAX_FIGURE_TEXT = 120


def shorten(text, limit: int = MAX_FIGURE_TEXT) -> str:
    """``text`` on one line of at most ``limit`` characters (ending in an ellipsis when cut)."""
    text = " ".join(str(text).split()) if ("\n" in str(text) and len(str(text)) > limit) else str(text)
    return text if len(text) <= limit else text[: limit - 1] + "\u2026"


def plain_texts(fig, limit: int = MAX_FIGURE_TEXT) -> None:
    """Make every text of ``fig`` except tick labels plain: no mathtext, no TeX, at most ``limit`` characters.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure, changed in place (before it is drawn).
    limit : int
        Longest text kept [characters].
    """
    from matplotlib.axis import Axis, Tick
    from matplotlib.text import Text

    texts, stack, seen = [], [fig], set()
    while stack:  # every artist below the figure, except ticks (their labels come from matplotlib's formatters)
        artist = stack.pop()
        if id(artist) in seen or isinstance(artist, Tick):
            continue
        seen.add(id(artist))
        if isinstance(artist, Text):
            texts.append(artist)
        if isinstance(artist, Axis):
            stack.append(artist.label)  # not the ticks nor the offset text ("1e3", "x10^3")
            continue
        stack.extend(artist.get_children())
    for artist in texts:
        artist.set_usetex(False)
        artist.set_parse_math(False)
        text = artist.get_text()
        if len(text) > limit:
            artist.set_text(shorten(text, limit))


def new_figure(figsize):
    """A matplotlib Figure of ``figsize`` (inches) drawn by the Agg canvas, without pyplot."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize)
    FigureCanvasAgg(fig)
    return fig


def bend_angle_figure(ds, path, *, target_bend_angle=None):
    """Bend angle [deg] and blocked force [mN] against time."""
    fig = new_figure((6.4, 3.8))
    ax = fig.subplots()
    t = ds["time"].values
    ax.plot(t, np.degrees(ds["bend_angle"].values), color="C0", label="bend angle")
    if target_bend_angle is not None:
        ax.axhline(np.degrees(target_bend_angle), color="C0", ls=":", lw=1, label="target")
    ax.set_xlabel("time [s]")
    ax.set_ylabel("bend angle [deg]", color="C0")
    ax2 = ax.twinx()
    ax2.plot(t, 1e3 * ds["blocked_force"].values, color="C3", ls="--", label="blocked force")
    ax2.set_ylabel("blocked force [mN]", color="C3")
    lit = ds["incident_irradiance"].values > 0
    if lit.any():
        ax.fill_between(t, 0, 1, where=lit, transform=ax.get_xaxis_transform(), color="gold", alpha=0.15, lw=0, label="light on")
    ax.set_title(ds.attrs.get("title", ""), fontsize=10)
    h1, l1 = ax.get_legend_handles_labels()
    h2, l2 = ax2.get_legend_handles_labels()
    ax.legend(h1 + h2, l1 + l2, fontsize=8, loc="best")
    save_figure(fig, path)


def profiles_figure(ds, path, n_times=5):
    """Conversion and irradiance against depth below the top face at a few times."""
    fig = new_figure((8.4, 3.6))
    a1, a2 = fig.subplots(1, 2, sharey=True)
    z = ds["z"].values
    h = float(ds.attrs.get("thickness", z.max() + (z[-1] - z[-2]) / 2 if z.size > 1 else z.max() * 2))
    depth_um = (h - z) * 1e6
    lit_idx = np.nonzero(ds["incident_irradiance"].values > 0)[0]
    end = int(lit_idx[-1]) if lit_idx.size else ds.sizes["time"] - 1
    idx = np.unique(np.linspace(0, end, n_times).round().astype(int))
    for k, i in enumerate(idx):
        lab = f"t = {ds['time'].values[i]:.3g} s"
        a1.plot(ds["conversion"].values[i], depth_um, color=f"C{k}", label=lab)
        a2.plot(ds["irradiance"].values[i] / 10.0, depth_um, color=f"C{k}", label=lab)
    for lz in _layer_interfaces(ds, h):
        a1.axhline(lz * 1e6, color="0.6", lw=0.8)
        a2.axhline(lz * 1e6, color="0.6", lw=0.8)
    a1.set_xlabel("conversion [1]")
    a1.set_ylabel("depth below top face [um]")
    a1.invert_yaxis()
    a2.set_xlabel("irradiance [mW/cm^2]")
    a1.legend(fontsize=7)
    fig.suptitle("Conversion and irradiance through the thickness (light on)", fontsize=10)
    save_figure(fig, path)


def _layer_interfaces(ds, h):
    names = ds["layer"].values
    z = ds["z"].values
    out = []
    for i in range(1, names.size):
        if names[i] != names[i - 1]:
            out.append(h - 0.5 * (z[i] + z[i - 1]))
    return out


def shape_memory_figure(ds, path):
    """Axial strain, bend angle and mean light-formed network density through a programming cycle."""
    fig = new_figure((6.4, 6.6))
    axes = fig.subplots(3, 1, sharex=True)
    t = ds["time"].values
    axes[0].plot(t, 100 * ds["axial_strain"].values, color="C0")
    axes[0].set_ylabel("axial strain [%]")
    axes[1].plot(t, np.degrees(ds["bend_angle"].values), color="C1")
    axes[1].set_ylabel("bend angle [deg]")
    net = ds["network_density"].values
    active = np.any(net > 0, axis=0) | (ds["network_strain"].values != 0).any(axis=0)
    axes[2].plot(t, net[:, active].mean(axis=1) if active.any() else net.mean(axis=1), color="C2", label="mean")
    if active.any():
        axes[2].plot(t, net[:, active].max(axis=1), color="C2", ls=":", label="top/bottom extremes")
        axes[2].plot(t, net[:, active].min(axis=1), color="C2", ls=":")
    axes[2].set_ylabel("network density [1]")
    axes[2].set_xlabel("time [s]")
    axes[2].legend(fontsize=7)
    steps = ds["protocol_step"].values
    for ax in axes:
        for k in np.nonzero(np.diff(steps))[0]:
            ax.axvline(t[k], color="0.7", lw=0.8)
    fig.suptitle("Programming and recovery (grey lines: protocol steps)", fontsize=10)
    save_figure(fig, path)


def temperature_figure(ds, path):
    """Peak and face temperatures against time [degC]."""
    fig = new_figure((6.4, 3.6))
    ax = fig.subplots()
    t = ds["time"].values
    ax.plot(t, ds["peak_temperature"].values - 273.15, label="peak (inside)")
    ax.plot(t, ds["surface_temperature_top"].values - 273.15, ls="--", label="top face")
    ax.plot(t, ds["surface_temperature_bottom"].values - 273.15, ls=":", label="bottom face")
    ax.set_xlabel("time [s]")
    ax.set_ylabel("temperature [degC]")
    ax.legend(fontsize=8)
    ax.set_title("Photothermal heating", fontsize=10)
    save_figure(fig, path)


def write_standard_figures(ds, folder, *, target_bend_angle=None):
    """Write the standard figures into ``folder``; returns their paths."""
    from pathlib import Path

    folder = Path(folder)
    paths = [folder / "bend_angle.png", folder / "profiles.png"]
    bend_angle_figure(ds, paths[0], target_bend_angle=target_bend_angle)
    profiles_figure(ds, paths[1])
    if "network_density" in ds:
        paths.append(folder / "shape_memory.png")
        shape_memory_figure(ds, paths[-1])
    if "temperature" in ds:
        paths.append(folder / "temperature.png")
        temperature_figure(ds, paths[-1])
    return paths
