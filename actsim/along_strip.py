"""A strip resolved along its length under light that follows its shape, quasi-static or with inertia.

The free length is cut into ``segments`` equal pieces, each with its own through-thickness state (conversion,
temperature), all marched together by the batch kernel (:func:`actsim.study.batch.run_group`: the segments are
its designs). Every coupling step the light each segment receives on each face is computed from the current
shape (:func:`actsim.shading.incidence`: cosine law, Fresnel entry for unpolarised light, self-shadowing), and
the absorption along the slanted path in the film is taken into account by dividing every absorption coefficient
of that face's beams by the cosine of the refraction angle (Beer–Lambert along the ray: optical depth per unit
depth alpha / cos a_t, and a molecule's rate sigma F with F the flux along the ray). The segments' free
curvatures then give the new shape (quasi-static: no inertia, no load; each segment a circular arc).

The coupling is explicit in the shape: the light of a coupling step is that of the shape at its start, so the
result converges at first order in ``coupling_step`` (tested); choose it well below the time the bend takes
to change by a few degrees. With ``mode="dynamic"`` the free curvatures drive :mod:`actsim.strip_dynamics`
(inertia, Kelvin–Voigt damping, air drag), linear in time over each coupling step.

Not here yet: error control of the coupling step, a scenario section and the command line.

References
----------
.. [1] Born, M. and Wolf, E. Principles of Optics, 7th ed., Cambridge 1999, sec. 1.5 (Fresnel, Snell).
.. [2] Timoshenko, S. P. and Gere, J. M. Theory of Elastic Stability, 2nd ed., McGraw-Hill 1961 (pure bending:
   a circular arc).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import xarray as xr

from .errors import ActsimInputError
from .scenario.model import Step

#: Most segments along the strip.
MAX_SEGMENTS = 400


def _refuse(scenario):
    for layer in scenario.layers:
        m = layer.material
        if m.network_modulus > 0 or m.relaxation is not None or m.strain_law != "linear":
            raise ActsimInputError(f"materials.{m.name}: a light-formed network, a relaxing or a large-strain layer "
                                   "is not modelled along the strip yet (its state does not carry over coupling steps)")
    for i, step in enumerate(scenario.protocol):
        if step.hold != "free":
            raise ActsimInputError(f"protocol[{i}].hold: '{step.hold}': only free steps are modelled along the strip")


def arc_points(curvature, ds):
    """End points of a chain of circular arcs from the clamp (root tangent +x, curvature > 0 toward +z).

    Parameters
    ----------
    curvature : numpy.ndarray, shape (n,)
        Curvature of each segment [m-1].
    ds : float
        Arc length of each segment [m].

    Returns
    -------
    numpy.ndarray, shape (n + 1, 2)
        (x, z) of the segment ends [m]; the chord of each arc is exact.
    """
    k = np.asarray(curvature, float)
    phi0 = np.concatenate([[0.0], np.cumsum(k * ds)[:-1]])
    half = 0.5 * k * ds
    chord = np.where(np.abs(half) > 1e-12, ds * np.sinc(half / math.pi), ds)  # 2 sin(k ds/2)/k
    mid = phi0 + half
    steps = np.column_stack([chord * np.cos(mid), chord * np.sin(mid)])
    return np.vstack([[0.0, 0.0], np.cumsum(steps, axis=0)])


def _doubled(scenario):
    """The scenario with each source twice, entering the top and the bottom face (source s: 2s and 2s + 1)."""
    sources = []
    for src in scenario.sources:
        sources += [dataclasses.replace(src, face="top"), dataclasses.replace(src, face="bottom")]
    return scenario.replace(sources=tuple(sources))


def _macro_problem(doubled, step: Step, duration: float):
    from .solver import build_problem

    n = len(doubled.sources)
    one = dataclasses.replace(step, duration=duration, irradiance=(0.0,) * n, label="")
    sc = doubled.replace(protocol=(one,), output_interval=duration)
    return build_problem(sc)


def _section_stiffness(z_edges, modulus):
    """Bending stiffness per unit width about the neutral axis, D - B^2/A, of each row of ``modulus`` [N m]."""
    z0, z1 = z_edges[:-1], z_edges[1:]
    a = modulus @ (z1 - z0)
    b = modulus @ (0.5 * (z1**2 - z0**2))
    d = modulus @ ((z1**3 - z0**3) / 3.0)
    return d - b * b / a


def _at_hinges(per_segment):
    """Segment values at the hinges s_j = j ds: the clamp takes segment 0's, the others the mean of their two."""
    v = np.asarray(per_segment, float)
    return np.concatenate([v[:1], 0.5 * (v[:-1] + v[1:])])


def simulate_along(scenario, *, segments: int = 20, beam_angles=None, coupling_step: float | None = None,
                   samples: int = 5, mode: str = "quasi-static", kv_time: float = 0.0, drag_linear: float = 0.0,
                   drag_quadratic: float = 0.0, rtol: float = 1e-6) -> xr.Dataset:
    """Strip along its length, each segment lit as its shape allows; quasi-static or with inertia.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
        Free steps only; no light-formed network, relaxing or large-strain layer.
    segments : int
        Segments along the free length [1].
    beam_angles : sequence of float, optional
        Direction of travel of each source's collimated beam in the bending plane, from the strip axis [rad]
        (-pi/2: straight down onto the flat strip's top face). Default: normal to the flat strip on the source's
        face.
    coupling_step : float, optional
        Time between updates of the light from the shape [s]; default the scenario's output interval.
    samples : int
        Sample points per segment for the shadow test [1].
    mode : str
        "quasi-static" (the shape is the free curvatures' arcs at once) or "dynamic" (the free curvatures drive
        :mod:`actsim.strip_dynamics`, linear in time over each coupling step: inertia, damping, drag).
    kv_time : float
        "dynamic": Kelvin–Voigt time of the structural damping [s].
    drag_linear : float
        "dynamic": linear air drag per length, -c v_n [N s m-2].
    drag_quadratic : float
        "dynamic": quadratic air drag per length, -c |v_n| v_n [kg m-2].
    rtol : float
        "dynamic": relative tolerance of the motion's integration (scipy Radau) [1].

    Returns
    -------
    xarray.Dataset
        ``curvature`` (the free curvature of each segment) and the light entering each face,
        ``irradiance_top`` / ``irradiance_bottom`` (time, segment) [m-1, W m-2]; the shape ``shape_x``,
        ``shape_z`` (time, point) [m]; ``tip_angle`` [rad] and the tip ``tip_x``, ``tip_z`` [m] (time,);
        "dynamic" adds ``tip_angular_velocity`` [rad s-1].
    """
    from .optics import fresnel_reflectance
    from .shading import Collimated, incidence
    from .spectra import photon_flux
    from .study.batch import run_group

    _refuse(scenario)
    if mode not in ("quasi-static", "dynamic"):
        raise ActsimInputError(f"mode: '{mode}' is not one of 'quasi-static', 'dynamic'")
    dynamic = mode == "dynamic"
    n_seg = int(segments)
    if not 1 <= n_seg <= MAX_SEGMENTS:
        raise ActsimInputError(f"segments: {segments} is outside the allowed range (1 to {MAX_SEGMENTS})")
    n_src = len(scenario.sources)
    if beam_angles is None:
        beam_angles = [-math.pi / 2 if s.face == "top" else math.pi / 2 for s in scenario.sources]
    if len(beam_angles) != n_src:
        raise ActsimInputError(f"beam_angles: {len(beam_angles)} given for {n_src} sources (give one per source)")
    dt_c = float(coupling_step or scenario.output_interval)
    if not (dt_c > 0 and math.isfinite(dt_c)):
        raise ActsimInputError(f"coupling_step: {coupling_step} s is not allowed (a time > 0 s)")
    L = scenario.strip.free_length
    ds = L / n_seg
    doubled = _doubled(scenario)
    n_top = scenario.layers[-1].material.refractive_index
    n_bottom = scenario.layers[0].material.refractive_index
    n_amb = scenario.optics.ambient_refractive_index
    reflect = scenario.optics.front_reflection

    x = None
    T = None
    kappa = np.zeros(n_seg)
    times, curv, irr_t, irr_b = [0.0], [kappa.copy()], [np.zeros(n_seg)], [np.zeros(n_seg)]
    width = scenario.strip.width
    if dynamic:
        from . import strip_dynamics as sd

        if n_seg < 2:
            raise ActsimInputError(f"segments: {segments} is too few for mode 'dynamic' (allowed >= 2)")
        rho_a = width * sum(la.material.density * la.thickness for la in scenario.layers)
        y = np.zeros(2 * n_seg)
        shapes_dyn = [np.zeros((n_seg + 1, 2))]
        shapes_dyn[0][:, 0] = np.arange(n_seg + 1) * ds
        omega_tip = [0.0]
        tips = [0.0]
    t_now = 0.0
    for j, step in enumerate(scenario.protocol):
        n_macro = max(1, math.ceil(step.duration / dt_c - 1e-9))
        for k in range(n_macro):
            dur = min(dt_c, step.duration - k * dt_c) if k < n_macro - 1 else step.duration - (n_macro - 1) * dt_c
            p = _macro_problem(doubled, step, dur)
            if x is None:
                x, T = np.tile(p.photo.x0, (n_seg, 1)), np.tile(p.heat.T0, (n_seg, 1))
            if dynamic:
                points = shapes_dyn[-1]
            else:
                points = arc_points(kappa, ds)
            light_faces = []
            for face, n_in in ((0, n_top), (1, n_bottom)):
                per_src = []
                for s in range(n_src):
                    fl = incidence(points, Collimated(angle=float(beam_angles[s]), irradiance=1.0), n_inside=n_in,
                                   n_outside=n_amb, samples=samples)
                    per_src.append((fl.irradiance[:, face], fl.transmittance[:, face], fl.cos_refracted[:, face]))
                light_faces.append(per_src)
            # the kernel applies the normal-incidence entry 1 - R0 itself: hand it T(a) / (1 - R0)
            entry0 = np.array([1.0 - fresnel_reflectance(n_outside=n_amb, n_inside=n_top if c % 2 == 0 else n_bottom)
                               for c in range(2 * n_src)])
            problems = []
            e_top = np.zeros(n_seg)
            e_bot = np.zeros(n_seg)
            for i in range(n_seg):
                irr = np.zeros(2 * n_src)
                cos_t = np.ones(2 * n_src)
                for s in range(n_src):
                    for face in (0, 1):
                        e, tr, ct = (a[i] for a in light_faces[face][s])
                        c = 2 * s + face
                        trans = tr / entry0[c] if reflect else 1.0
                        irr[c] = step.irradiance[s] * e * trans
                        cos_t[c] = ct
                        (e_top if face == 0 else e_bot)[i] += step.irradiance[s] * e * (tr if reflect else 1.0)
                sched = p.schedule
                flux = np.array([photon_flux(irradiance=irr[c] * p.light.beam_fraction[b],
                                             wavelength=p.light.beam_wavelength[b])
                                 for b, c in enumerate(p.light.beam_source)]).reshape(1, -1)
                sched_i = sched._replace(step_irradiance=irr.reshape(1, -1), step_flux=flux)
                scale = 1.0 / cos_t[p.light.beam_source]
                light_i = p.light._replace(eps_a=p.light.eps_a * scale, eps_b=p.light.eps_b * scale,
                                           alpha_bg=p.light.alpha_bg * scale)
                problems.append(dataclasses.replace(p, light=light_i, schedule=sched_i,
                                                    photo=p.photo._replace(x0=x[i].copy()),
                                                    heat=p.heat._replace(T0=T[i].copy())))
            o = run_group(problems, full=True)["out"]
            x = o.x[:, -1].copy()
            if scenario.heat.enabled:
                T = o.T[:, -1].copy()
            k_start = kappa
            kappa = o.mech[:, -1, 1].copy()
            if dynamic:
                ei = width * _section_stiffness(p.grid.z_edges, o.E[:, -1])
                params = sd.strip_params(length=L, n_segments=n_seg, bending_stiffness=_at_hinges(ei),
                                         mass_per_length=rho_a, kv_time=kv_time, drag_linear=drag_linear,
                                         drag_quadratic=drag_quadratic)
                h0, h1 = _at_hinges(k_start), _at_hinges(kappa)
                t0 = t_now
                sol = sd.integrate_strip(params, lambda t, a=h0, b=h1, t0=t0, d=dur: a + (b - a) * (t - t0) / d,
                                         (t0, t0 + dur), y, rtol=rtol)
                y = sol.y[:, -1].copy()
                px, pz = sd.centreline(y[:n_seg], ds)
                shapes_dyn.append(np.column_stack([px, pz]))
                omega_tip.append(float(y[-1]))
                tips.append(float(sd.tip_angle(y[:n_seg])))
            t_now += dur
            times.append(t_now)
            curv.append(kappa.copy())
            irr_t.append(e_top)
            irr_b.append(e_bot)
    curv = np.array(curv)
    shapes = np.array(shapes_dyn) if dynamic else np.array([arc_points(k, ds) for k in curv])
    tip = np.array(tips) if dynamic else curv.sum(axis=1) * ds
    s_mid = (np.arange(n_seg) + 0.5) * ds
    ds_out = xr.Dataset(
        {"curvature": (("time", "segment"), curv, {"units": "m-1", "long_name": "free curvature of each segment"}),
         "irradiance_top": (("time", "segment"), np.array(irr_t),
                            {"units": "W m-2", "long_name": "irradiance entering the top face (after reflection)"}),
         "irradiance_bottom": (("time", "segment"), np.array(irr_b),
                               {"units": "W m-2", "long_name": "irradiance entering the bottom face"}),
         "shape_x": (("time", "point"), shapes[..., 0], {"units": "m", "long_name": "x of the segment ends"}),
         "shape_z": (("time", "point"), shapes[..., 1], {"units": "m", "long_name": "z of the segment ends"}),
         "tip_angle": (("time",), tip, {"units": "rad", "long_name": "tip rotation"}),
         "tip_x": (("time",), shapes[:, -1, 0], {"units": "m", "long_name": "tip x"}),
         "tip_z": (("time",), shapes[:, -1, 1], {"units": "m", "long_name": "tip z"})},
        coords={"time": ("time", np.array(times), {"units": "s"}), "segment": ("segment", s_mid, {"units": "m"})},
        attrs={"title": scenario.title, "segments": n_seg, "coupling_step": dt_c, "mode": mode,
               "step_ends": np.cumsum([st.duration for st in scenario.protocol]),
               "step_labels": "\n".join(st.label or f"step {k}" for k, st in enumerate(scenario.protocol))})
    if dynamic:
        ds_out["tip_angular_velocity"] = (("time",), np.array(omega_tip),
                                          {"units": "rad s-1", "long_name": "angular velocity of the tip segment"})
    return ds_out


# --------------------------------------------------------------------------- the [along_strip] section of a run


@dataclasses.dataclass(frozen=True)
class AlongStrip:
    """Parsed ``[along_strip]``: segments, mode, coupling step [s] (0: the output interval), beam directions
    [rad] by source name (missing: normal to the flat strip on the source's face), Kelvin–Voigt time [s]."""

    segments: int = 20
    mode: str = "quasi-static"
    coupling_step: float = 0.0
    beams: tuple = ()
    kv_time: float = 0.0


def parse_along_strip(data, *, field: str = "along_strip", base_dir=None, scenario_info=None) -> AlongStrip:
    """Parse the ``[along_strip]`` section of a scenario.

    Parameters
    ----------
    data : dict
        The TOML table (unitless itself; its values are unit strings): ``segments`` (1 to 400, default 20), ``mode`` ("quasi-static" or "dynamic"),
        ``coupling_step`` (a time), ``beams`` (``{ SOURCE = "angle" }``: each source's direction of travel in the
        bending plane from the strip axis; -90 deg is straight down onto the flat strip), ``kv_time`` (a time;
        "dynamic" only).
    field : str
        Section name for messages.
    base_dir : pathlib.Path
        Unused (a folder, unitless).
    scenario_info : dict
        ``sources`` (names): every beam must name one (unitless).

    Returns
    -------
    AlongStrip
    """
    from .schema import Table

    info = scenario_info or {}
    t = Table(data, field)
    segments = t.integer("segments", default=20, lo=1, hi=MAX_SEGMENTS)
    mode = t.string("mode", default="quasi-static", choices=("quasi-static", "dynamic"))
    step = t.quantity("coupling_step", "time", default=0.0, lo=1e-6, hi=1e4)
    kv = t.quantity("kv_time", "time", default=0.0, lo=0.0, hi=10.0)
    if mode != "dynamic" and t.has("kv_time"):
        raise ActsimInputError(f"{field}.kv_time: used only with mode = 'dynamic' (here '{mode}')")
    if mode == "dynamic" and segments < 2:
        raise ActsimInputError(f"{field}.segments: {segments} is too few for mode 'dynamic' (allowed >= 2)")
    beams = []
    if t.has("beams"):
        bt = t.table("beams")
        for name in list(bt.data):
            if info.get("sources") is not None and name not in info["sources"]:
                raise ActsimInputError(f"{field}.beams.{name}: no source '{name}'; sources are: "
                                       f"{', '.join(info['sources']) or 'none'}")
            beams.append((name, bt.quantity(name, "angle", lo=-2 * math.pi, hi=2 * math.pi)))
        bt.finish()
    t.finish()
    return AlongStrip(segments=segments, mode=mode, coupling_step=step, beams=tuple(beams), kv_time=kv)


def along_strip_settings(scenario) -> AlongStrip | None:
    """The scenario's ``[along_strip]`` section parsed by :func:`parse_along_strip` (None without one).

    Parameters
    ----------
    scenario : actsim.scenario.Scenario

    Returns
    -------
    AlongStrip or None
    """
    from .scenario import section_settings

    return section_settings(scenario, "along_strip", parse_along_strip)


def simulate_along_section(scenario, settings: AlongStrip) -> xr.Dataset:
    """:func:`simulate_along` with the settings of a scenario's ``[along_strip]`` section.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
    settings : actsim.along_strip.AlongStrip

    Returns
    -------
    xarray.Dataset
    """
    given = dict(settings.beams)
    angles = [given.get(s.name, -math.pi / 2 if s.face == "top" else math.pi / 2) for s in scenario.sources]
    ds = simulate_along(scenario, segments=settings.segments, beam_angles=angles,
                        coupling_step=settings.coupling_step or None, mode=settings.mode, kv_time=settings.kv_time)
    import json

    ds.attrs["beam_angles_deg"] = json.dumps([round(math.degrees(a), 6) for a in angles])
    return ds


def along_summary(ds) -> dict:
    """Key numbers of a strip along its length.

    The largest tip angle and its time; at the end of every protocol step the tip angle, whether it has settled
    (the tip turned less than 0.5 deg over the step's last tenth) and the share of the segments lit on each face.
    Angles in rad, times in s.

    Parameters
    ----------
    ds : xarray.Dataset
        From :func:`simulate_along` (a container, unitless: each variable carries its ``units``).

    Returns
    -------
    dict
    """
    tip = ds["tip_angle"].values
    t = ds["time"].values
    i = int(np.argmax(np.abs(tip)))
    steps = []
    start = 0.0
    labels = str(ds.attrs.get("step_labels", "")).split("\n")
    for k, end in enumerate(np.atleast_1d(ds.attrs["step_ends"])):
        j = int(np.argmin(np.abs(t - end)))
        last = (t >= end - 0.1 * (end - start) - 1e-12) & (t <= end + 1e-12)
        steps.append({"step": k, "label": labels[k] if k < len(labels) else "", "time": float(t[j]),
                      "tip_angle": float(tip[j]), "settled": bool(np.ptp(tip[last]) < math.radians(0.5)),
                      "lit_share_top": float(np.mean(ds["irradiance_top"].values[j] > 0)),
                      "lit_share_bottom": float(np.mean(ds["irradiance_bottom"].values[j] > 0))})
        start = float(end)
    return {"segments": int(ds.attrs["segments"]), "mode": str(ds.attrs["mode"]), "largest_tip_angle": float(tip[i]),
            "time_of_largest": float(t[i]), "steps": steps}


def filmstrip_figure(ds, path, n_frames: int = 8) -> dict:
    """The strip's shape at ``n_frames`` times, side by side along one axis, with the beam's direction.

    Parameters
    ----------
    ds : xarray.Dataset
        From :func:`simulate_along` (a container, unitless: each variable carries its ``units``).
    path : str or os.PathLike
        PNG file.
    n_frames : int
        Frames [1].

    Returns
    -------
    dict
        The figure's record (:func:`actsim.figures.figure_record`).
    """
    import json

    from .figures import figure_record, fmt, new_figure
    from .io import save_figure

    t = ds["time"].values
    picks = np.unique(np.linspace(0, t.size - 1, n_frames).round().astype(int))
    fig = new_figure((min(2.0 * len(picks), 14.0), 2.9))
    axes = fig.subplots(1, len(picks), sharey=True)
    axes = np.atleast_1d(axes)
    L = float(ds["shape_x"].values[0, -1])
    angles = json.loads(ds.attrs.get("beam_angles_deg", "[]"))
    for ax, i in zip(axes, picks):
        ax.plot(ds["shape_x"].values[i] * 1e3, ds["shape_z"].values[i] * 1e3, color="C0", lw=2)
        ax.plot([-0.15 * L * 1e3, 0], [0, 0], color="0.3", lw=4)  # the clamp
        for a in angles:
            d = np.array([math.cos(math.radians(a)), math.sin(math.radians(a))])
            start = np.array([0.5 * L, 0.5 * L]) * 1e3 - 0.45 * L * 1e3 * d
            ax.annotate("", xy=start + 0.3 * L * 1e3 * d, xytext=start,
                        arrowprops={"arrowstyle": "->", "color": "#c51b7d", "lw": 1})
        ax.set_aspect("equal")
        ax.set_xlim(-0.2 * L * 1e3, 1.1 * L * 1e3)
        ax.set_ylim(-0.6 * L * 1e3, 1.1 * L * 1e3)
        ax.set_title(f"{fmt(t[i])} s\n{math.degrees(float(ds['tip_angle'].values[i])):.0f}°", fontsize=8)
        ax.tick_params(labelsize=6)
    axes[0].set_ylabel("z (mm)", fontsize=8)
    fig.supxlabel("x (mm)", fontsize=8)
    save_figure(fig, path)
    caption = (f"The strip's centre line (mm) at {len(picks)} times from {fmt(t[0])} to {fmt(t[-1])} s, "
               f"{ds.attrs['segments']} segments, {ds.attrs['mode']}; titles: time and tip angle; grey: the clamp; "
               f"arrows: the beams' direction of travel ({', '.join(f'{a:g}°' for a in angles)} from the strip axis)")
    return figure_record(path, "Shape over time (filmstrip)", caption)


def write_along(ds, out_dir, *, figures=True) -> dict:
    """Write ``along_strip.nc`` (and ``figures/filmstrip.png``) into a result folder; returns the summary (with
    ``figures``: the figure's record, when drawn).

    Parameters
    ----------
    ds : xarray.Dataset
        From :func:`simulate_along` (a container, unitless: each variable carries its ``units``).
    out_dir : str or os.PathLike
        The (staging) result folder.
    figures : bool
        Draw the filmstrip.

    Returns
    -------
    dict
    """
    from pathlib import Path

    from .io import write_netcdf

    out = Path(out_dir)
    write_netcdf(ds, out / "along_strip.nc")
    summary = along_summary(ds)
    if figures:
        summary["figures"] = [filmstrip_figure(ds, out / "figures" / "filmstrip.png")]
    return summary
