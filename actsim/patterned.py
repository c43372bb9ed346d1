"""Patterned light along the strip: a mask of lit regions, curvature kappa(s, t) and the folded shape.

A ``[mask]`` section lists the lit regions along the free length (arc length
``s`` from the clamp), each with the fraction of the light it lets through;
the rest of the strip receives ``outside_transmission`` (0 by default: dark)::

    [mask]
    regions = [ { start = "8 mm", end = "10 mm", transmission = 1.0 } ]   # a lit hinge
    outside_transmission = 0.0

:func:`simulate_patterned` solves the through-thickness problem once for each
distinct transmission level (the protocol's irradiances scaled by it), takes
each level's free curvature as the spontaneous curvature of the regions that
receive it, and integrates the piecewise-constant curvature exactly into the
folded shape at every output time (no load: each region is a circular arc).

Assumptions: the regions bend independently (no coupling across region edges;
the transition zone, of the order of the thickness, is neglected), no light
is scattered or guided along the strip, and the mask edges are sharp.

References
----------
.. [1] S. P. Timoshenko and J. M. Gere, *Theory of Elastic Stability*, 2nd ed.,
   McGraw-Hill, 1961 (pure bending: a circular arc; the elastica).
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np
import xarray as xr

from .errors import ActsimInputError

__all__ = ["MaskRegion", "Mask", "parse_mask", "mask_settings", "mask_segments", "piecewise_arc_shape", "simulate_patterned"]


@dataclass(frozen=True)
class MaskRegion:
    """One region of the mask: arc length from ``start`` to ``end`` [m], transmission [-]."""

    start: float
    end: float
    transmission: float


@dataclass(frozen=True)
class Mask:
    """Parsed ``[mask]``: regions sorted along the strip, and the transmission elsewhere [-]."""

    regions: tuple
    outside_transmission: float = 0.0


def parse_mask(data, *, field: str = "mask", base_dir=None, scenario_info=None) -> Mask:
    """Parse the ``[mask]`` section.

    Parameters
    ----------
    data : dict
        The TOML table: ``regions`` (list of ``{start, end, transmission}``;
        lengths with units, transmission 0..1, default 1) and
        ``outside_transmission`` (0..1, default 0).
    field : str
        Section name for messages.
    base_dir : pathlib.Path
        Unused.
    scenario_info : dict
        ``free_length`` [m]: regions must lie within it.

    Returns
    -------
    Mask
    """
    from .schema import Table

    info = scenario_info or {}
    L = info.get("free_length")
    t = Table(data, field)
    raw = t.raw("regions")
    if not isinstance(raw, list) or not raw:
        raise ActsimInputError(f"{field}.regions: must be a non-empty list of {{ start, end, transmission }} tables")
    regions = []
    for i, d in enumerate(raw):
        rt = Table(d, f"{field}.regions[{i}]")
        a = rt.quantity("start", "length", lo=0.0)
        hi = L if L is not None else None
        b = rt.quantity("end", "length", lo=0.0, hi=hi)
        if not b > a:
            raise ActsimInputError(f"{field}.regions[{i}].end: {b * 1e3:g} mm is outside the allowed range (> start = {a * 1e3:g} mm)")
        tr = rt.number("transmission", default=1.0, lo=0.0, hi=1.0)
        rt.finish()
        regions.append(MaskRegion(start=a, end=b, transmission=tr))
    regions.sort(key=lambda r: r.start)
    for r0, r1 in zip(regions[:-1], regions[1:]):
        if r1.start < r0.end - 1e-15:
            raise ActsimInputError(
                f"{field}.regions: the region {r1.start * 1e3:g}..{r1.end * 1e3:g} mm overlaps {r0.start * 1e3:g}..{r0.end * 1e3:g} mm"
            )
    out = t.number("outside_transmission", default=0.0, lo=0.0, hi=1.0)
    t.finish()
    return Mask(regions=tuple(regions), outside_transmission=out)


def mask_settings(scenario) -> Mask | None:
    """The scenario's ``[mask]`` section parsed by :func:`parse_mask`, or None without one.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario

    Returns
    -------
    Mask or None
        Parsed once per scenario object.

    Raises
    ------
    ActsimInputError
        A bad field of the section (one line), e.g. a region beyond the free length.
    """
    from .scenario import section_settings

    return section_settings(scenario, "mask", parse_mask)


def mask_segments(mask: Mask, *, free_length: float):
    """Edges [m] and transmission [-] of the segments that tile ``[0, free_length]``."""
    edges, trans = [0.0], []
    pos = 0.0
    for r in mask.regions:
        if r.start > pos:
            edges.append(r.start)
            trans.append(mask.outside_transmission)
        edges.append(min(r.end, free_length))
        trans.append(r.transmission)
        pos = r.end
    if pos < free_length:
        edges.append(free_length)
        trans.append(mask.outside_transmission)
    return np.array(edges), np.array(trans)


def piecewise_arc_shape(*, s_edges, curvature, s):
    """Exact shape of a clamped strip whose curvature is constant on each segment (no load).

    Parameters
    ----------
    s_edges : array_like, shape (n_seg + 1,)
        Segment edges from the clamp (first edge 0) [m].
    curvature : array_like, shape (..., n_seg)
        Curvature of each segment, any leading shape (e.g. time) [1/m].
    s : array_like, shape (n_s,)
        Arc lengths where the shape is wanted, within the edges [m].

    Returns
    -------
    theta, x, y : numpy.ndarray, shape (..., n_s)
        Tangent angle [rad] and position [m]; clamp at the origin with its
        tangent along +x, positive curvature turning toward +y.

    Notes
    -----
    On a segment of curvature :math:`\\kappa` starting at angle
    :math:`\\theta_0`, a length :math:`\\ell` along it,

    .. math::

        \\theta = \\theta_0 + \\kappa\\ell, \\quad
        \\Delta x = \\ell\\,\\mathrm{sinc}(\\kappa\\ell/2)\\cos(\\theta_0 + \\kappa\\ell/2), \\quad
        \\Delta y = \\ell\\,\\mathrm{sinc}(\\kappa\\ell/2)\\sin(\\theta_0 + \\kappa\\ell/2),

    with :math:`\\mathrm{sinc}(u) = \\sin u / u`: the chord of a circular arc
    (exact, and free of 0/0 as :math:`\\kappa \\to 0`).

    References
    ----------
    .. [1] S. P. Timoshenko and J. M. Gere, *Theory of Elastic Stability*,
       2nd ed., McGraw-Hill, 1961 (pure bending: a circular arc).
    """
    e = np.asarray(s_edges, float)
    k = np.asarray(curvature, float)
    s = np.asarray(s, float)
    if e.ndim != 1 or e.size < 2 or np.any(np.diff(e) <= 0):
        raise ActsimInputError("s_edges: need at least 2 strictly increasing edges [m]")
    if k.shape[-1] != e.size - 1:
        raise ActsimInputError(f"curvature: last axis has {k.shape[-1]} values for {e.size - 1} segments [1/m]")
    if np.any(s < e[0] - 1e-15) or np.any(s > e[-1] * (1 + 1e-12)):
        raise ActsimInputError(f"s: values must lie within {e[0]:g}..{e[-1]:g} m")

    def chord(theta0, kap, ell):
        half = 0.5 * kap * ell
        c = ell * np.sinc(half / np.pi)
        return c * np.cos(theta0 + half), c * np.sin(theta0 + half)

    seg_len = np.diff(e)
    dth = k * seg_len
    th_e = np.concatenate([np.zeros(k.shape[:-1] + (1,)), np.cumsum(dth, axis=-1)], axis=-1)
    dx, dy = chord(th_e[..., :-1], k, seg_len)
    x_e = np.concatenate([np.zeros(k.shape[:-1] + (1,)), np.cumsum(dx, axis=-1)], axis=-1)
    y_e = np.concatenate([np.zeros(k.shape[:-1] + (1,)), np.cumsum(dy, axis=-1)], axis=-1)
    j = np.clip(np.searchsorted(e, s, side="right") - 1, 0, e.size - 2)
    ell = s - e[j]
    th0 = th_e[..., j]
    kj = k[..., j]
    ddx, ddy = chord(th0, kj, ell)
    return th0 + kj * ell, x_e[..., j] + ddx, y_e[..., j] + ddy


def _scaled(scenario, level: float):
    steps = tuple(dataclasses.replace(st, irradiance=tuple(level * e for e in st.irradiance)) for st in scenario.protocol)
    sections = {k: v for k, v in scenario.sections.items() if k != "mask"}
    return scenario.replace(protocol=steps, sections=sections)


def simulate_patterned(scenario, *, engine: str = "kernel", n_points: int = 201) -> xr.Dataset:
    """Simulate a strip lit through a mask: curvature along the length and the folded shape over time.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
        With a ``[mask]`` section (read with :func:`mask_settings`).
    engine : {"kernel", "reference"}
        Passed to :func:`actsim.simulate`.
    n_points : int
        Points along the strip (the segment edges are added) [-], >= 2.

    Returns
    -------
    xarray.Dataset
        Coordinates ``time`` [s], ``s`` [m] (arc length from the clamp) and
        ``level`` (distinct transmissions [-]); ``curvature`` (time, s) [1/m],
        ``tangent_angle``, ``x``, ``y`` (time, s) [rad, m]; ``tip_x``,
        ``tip_y``, ``tip_angle`` (time,); ``level_curvature`` and
        ``level_bending_stiffness`` (level, time); ``transmission`` (s,).

    Notes
    -----
    Each distinct transmission :math:`T` is one through-thickness solve with
    the protocol's irradiances multiplied by :math:`T`. The fold angle is

    .. math::

        \\theta_\\text{tip}(t) = \\sum_j \\kappa_{T_j}(t)\\,\\ell_j ,

    so a hinge of length :math:`\\ell_h` lit fully on a dark strip folds by
    :math:`\\kappa_1(t)\\,\\ell_h`.

    References
    ----------
    .. [1] S. P. Timoshenko and J. M. Gere, *Theory of Elastic Stability*,
       2nd ed., McGraw-Hill, 1961.
    """
    from .solver import simulate

    mask = mask_settings(scenario)
    if mask is None:
        raise ActsimInputError("mask: the scenario has no [mask] section; add one with regions = [ { start, end, transmission } ]")
    if isinstance(n_points, bool) or not isinstance(n_points, (int, np.integer)) or n_points < 2:
        raise ActsimInputError(f"n_points: {n_points!r} is outside the allowed range (integer >= 2)")
    L = scenario.strip.free_length
    edges, trans = mask_segments(mask, free_length=L)
    levels = np.unique(trans)
    results = [simulate(_scaled(scenario, float(T)), engine=engine) for T in levels]
    times = results[0]["time"].values
    kap = np.array([(d["free_curvature"] if "free_curvature" in d else d["curvature"]).values for d in results])
    ei = np.array([d["bending_stiffness"].values for d in results])
    seg_level = np.searchsorted(levels, trans)
    k_seg = kap[seg_level].T  # (time, seg)
    s = np.union1d(np.linspace(0.0, L, int(n_points)), edges)
    theta, x, y = piecewise_arc_shape(s_edges=edges, curvature=k_seg, s=s)
    j = np.clip(np.searchsorted(edges, s, side="right") - 1, 0, edges.size - 2)
    # the shape's tip values come from the last point
    ds = xr.Dataset(
        data_vars={
            "curvature": (("time", "s"), k_seg[:, j], {"units": "m-1", "long_name": "curvature along the strip (free, per region)"}),
            "tangent_angle": (("time", "s"), theta, {"units": "rad", "long_name": "tangent angle from the clamped direction"}),
            "x": (("time", "s"), x, {"units": "m", "long_name": "position along the clamped direction"}),
            "y": (("time", "s"), y, {"units": "m", "long_name": "position normal to the clamped direction (toward +z)"}),
            "tip_x": (("time",), x[:, -1], {"units": "m", "long_name": "tip position along the clamped direction"}),
            "tip_y": (("time",), y[:, -1], {"units": "m", "long_name": "tip position normal to the clamped direction"}),
            "tip_angle": (("time",), theta[:, -1], {"units": "rad", "long_name": "fold angle of the tip"}),
            "transmission": (("s",), trans[j], {"units": "1", "long_name": "mask transmission along the strip"}),
            "level_curvature": (("level", "time"), kap, {"units": "m-1", "long_name": "free curvature of a uniformly lit strip at each level"}),
            "level_bending_stiffness": (("level", "time"), ei, {"units": "N m2", "long_name": "bending stiffness at each level"}),
        },
        coords={
            "time": ("time", times, {"units": "s", "long_name": "time since the start of the protocol"}),
            "s": ("s", s, {"units": "m", "long_name": "arc length from the clamp"}),
            "level": ("level", levels, {"units": "1", "long_name": "mask transmission level"}),
        },
        attrs={**results[0].attrs, "mask_edges": edges, "mask_transmission": trans,
               "model": "independent regions, each a circular arc of its level's free curvature; no load"},
    )
    return ds


def patterned_summary(ds) -> dict:
    """Key numbers of a patterned run: peak fold angle [rad] and its time [s], peak tip travel [m]."""
    angle = ds["tip_angle"].values
    i = int(np.argmax(np.abs(angle)))
    y = ds["tip_y"].values
    j = int(np.argmax(np.abs(y)))
    return {
        "peak_fold_angle": float(angle[i]),
        "time_of_peak_fold": float(ds["time"].values[i]),
        "final_fold_angle": float(angle[-1]),
        "peak_tip_travel_patterned": float(y[j]),
    }


def folded_shape_figure(ds, path, n_times: int = 6) -> dict:
    """Folded shape y(x) (mm) of the masked strip at a few times, with the lit regions marked; returns its record."""
    from .figures import figure_record, fmt, new_figure
    from .io import save_figure

    fig = new_figure((6.0, 4.2))
    ax = fig.subplots()
    nt = ds.sizes["time"]
    ipk = int(np.argmax(np.abs(ds["tip_angle"].values)))
    idx = np.unique(np.linspace(0, ipk, n_times).round().astype(int)) if ipk > 0 else np.array([0, nt - 1])
    lit = ds["transmission"].values > 0
    for k, i in enumerate(idx):
        x = 1e3 * ds["x"].values[i]
        y = 1e3 * ds["y"].values[i]
        ax.plot(x, y, color=f"C{k}", lw=1.2, label=f"t = {fmt(ds['time'].values[i])} s")
        ax.plot(np.where(lit, x, np.nan), np.where(lit, y, np.nan), color=f"C{k}", lw=3.5, alpha=0.5)
    ax.set_aspect("equal", adjustable="datalim")
    ax.set_xlabel("x along the clamped direction (mm)")
    ax.set_ylabel("y toward +z (mm)")
    ax.set_title("Folded shape through the mask (thick: lit regions)", fontsize=10)
    ax.legend(fontsize=7)
    save_figure(fig, path)
    caption = (f"Folded shape of the masked strip, y (mm) against x along the clamped direction (mm, equal scales), at "
               f"t = {', '.join(fmt(ds['time'].values[i]) for i in idx)} s up to the peak fold; thick segments: lit "
               f"regions ({fmt(100 * lit.mean())} % of the length); peak tip angle "
               f"{fmt(np.degrees(ds['tip_angle'].values[ipk]))}° at {fmt(ds['time'].values[ipk])} s")
    return figure_record(path, "Folded shape through the mask", caption)


def write_patterned(ds, out_dir, *, figures=True) -> dict:
    """Write ``patterned.nc`` (and ``figures/folded_shape.png``) into a result folder; returns the summary
    (with ``figures``: the figure's record, when drawn)."""
    from pathlib import Path

    from .io import write_netcdf

    out = Path(out_dir)
    clean = ds.copy()
    clean.attrs = {k: (v.tolist() if isinstance(v, np.ndarray) else v) for k, v in ds.attrs.items()}
    write_netcdf(clean, out / "patterned.nc")
    summary = patterned_summary(ds)
    if figures:
        summary["figures"] = [folded_shape_figure(ds, out / "figures" / "folded_shape.png")]
    return summary
