"""Figures of a simulation result (matplotlib, Agg canvas, PNG).

Figures are drawn on :class:`matplotlib.figure.Figure` objects with the Agg canvas, not through
pyplot: no global figure state, no GUI backend chosen for the caller, and pyplot's import time saved.

Text in a figure often comes from the user (scenario title, layer and source names, swept field
paths, column names of data files). :func:`plain_texts` turns every title, axis label, legend entry
and annotation into plain text (no mathtext, no TeX, at most :data:`MAX_FIGURE_TEXT` characters);
:func:`actsim.io.save_figure` calls it before drawing, so a title such as ``$\\undefined$`` or one
a megabyte long is drawn as written (shortened), never parsed. Tick labels keep matplotlib's own
formatting (log axes use mathtext for powers of ten).

Display units: values stay SI in the Dataset; :func:`display_unit` maps an SI unit (and the values
drawn) to the unit a person reads (K -> °C, rad -> °, N -> mN, m -> nm/µm/mm, W/m^2 -> mW/cm^2,
Pa -> MPa) and :func:`field_words` turns a scenario field path into words
(``layers[active film].thickness`` -> "active film thickness"). Every figure function returns its
:func:`figure_record`: the file, a title and a caption generated from what is drawn, which the verbs
store under ``"figures"`` in their summary record.
"""

from __future__ import annotations

from typing import NamedTuple

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


# ----------------------------------------------------------------------------
# display units, words, records
# ----------------------------------------------------------------------------

class Display(NamedTuple):
    """How SI values are shown: ``shown = value * scale + offset`` in ``unit`` ("" for a pure number)."""

    scale: float
    offset: float
    unit: str

    def __call__(self, values):
        """The values in the display unit."""
        return np.asarray(values, dtype=float) * self.scale + self.offset


#: SI unit -> display unit that does not depend on the size of the values: (scale, offset, unit).
FIXED_DISPLAY = {
    "K": (1.0, -273.15, "°C"),
    "rad": (180.0 / np.pi, 0.0, "°"),
    "W/m^2": (0.1, 0.0, "mW/cm^2"), "W m-2": (0.1, 0.0, "mW/cm^2"), "W/m2": (0.1, 0.0, "mW/cm^2"),
    "N m": (1e3, 0.0, "mN m"), "N*m": (1e3, 0.0, "mN m"),
    "Pa": (1e-6, 0.0, "MPa"),
    "1/m": (1e-3, 0.0, "1/mm"), "m-1": (1e-3, 0.0, "1/mm"),
    "J m-2": (1.0, 0.0, "J/m^2"), "J/m^2": (1.0, 0.0, "J/m^2"),
    "1": (1.0, 0.0, ""), "": (1.0, 0.0, ""),
}
#: SI unit -> ladder of (largest magnitude, scale, unit), the first that fits the values is used.
SCALED_DISPLAY = {
    "m": ((1e-6, 1e9, "nm"), (1e-3, 1e6, "µm"), (1.0, 1e3, "mm"), (np.inf, 1.0, "m")),
    "N": ((1e-3, 1e6, "µN"), (1.0, 1e3, "mN"), (np.inf, 1.0, "N")),
    "J": ((1e-3, 1e6, "µJ"), (1.0, 1e3, "mJ"), (np.inf, 1.0, "J")),
    "W": ((1e-3, 1e6, "µW"), (1.0, 1e3, "mW"), (np.inf, 1.0, "W")),
}


def display_unit(unit: str, values=None, *, quantity: str = "") -> Display:
    """The display unit of values in the SI ``unit``.

    Parameters
    ----------
    unit : str
        SI unit of the values ("m", "K", "rad", "N", "W/m^2", "Pa", "s", "1", ...).
    values : array_like, optional
        The values to be shown [``unit``]; picks nm, µm or mm (mN or µN ...) by their largest magnitude.
    quantity : str, optional
        What the values are; a wavelength is always in nm, a temperature difference stays in K
        (``quantity`` containing "difference" or "rise").

    Returns
    -------
    Display
        ``scale``, ``offset`` and ``unit``: shown = value * scale + offset.
    """
    unit = str(unit or "").strip()
    q = quantity.lower()
    if unit == "m" and "wavelength" in q:
        return Display(1e9, 0.0, "nm")
    if unit == "K" and ("difference" in q or "rise" in q or "width" in q):
        return Display(1.0, 0.0, "K")
    if unit in FIXED_DISPLAY:
        return Display(*FIXED_DISPLAY[unit])
    if unit in SCALED_DISPLAY:
        ladder = SCALED_DISPLAY[unit]
        big = 0.0
        if values is not None:
            v = np.abs(np.asarray(values, dtype=float))
            v = v[np.isfinite(v)]
            big = float(v.max()) if v.size else 0.0
        for lim, k, u in ladder:
            if big < lim:
                return Display(k, 0.0, u)
        return Display(ladder[-1][1], 0.0, ladder[-1][2])
    return Display(1.0, 0.0, unit)


def axis_label(words: str, unit: str = "") -> str:
    """``words (unit)``, or ``words`` alone for a pure number."""
    return f"{words} ({unit})" if unit else words


#: Words a field's last name is shown as (else its underscores become spaces).
QUANTITY_WORDS = {"epsilon10": "decadic molar absorptivity", "fwhm": "spectral width (FWHM)"}
_ACRONYMS = {"led": "LED", "uv": "UV", "ir": "IR", "uva": "UV-A", "uvb": "UV-B", "uvc": "UV-C"}


def _name_words(name: str) -> str:
    return " ".join(_ACRONYMS.get(w.lower(), w) for w in str(name).replace("_", " ").split())


def field_words(path: str) -> str:
    """Words for a scenario field path.

    ``layers[active film].thickness`` -> "active film thickness";
    ``sources[led].wavelength`` -> "LED wavelength"; ``protocol[0].light.led`` -> "LED irradiance
    (step 1)"; ``materials.film.photo_strain`` -> "film photo strain"; a path that cannot be read is
    returned with its underscores as spaces.
    """
    try:
        from .scenario import split_field_path

        tokens = split_field_path(str(path))
    except Exception:  # noqa: BLE001 - any unreadable path is shown as written
        return str(path).replace("_", " ")
    names = [t[1] if isinstance(t, tuple) else t for t in tokens]
    if not names:
        return str(path)
    if names[0] == "protocol" and len(names) >= 2:
        step = names[1]
        where = f" (step {int(step) + 1})" if str(step).isdigit() else f" ({step})"
        if len(names) >= 4 and names[2] == "light":
            return f"{_name_words(names[3])} irradiance{where}"
        return f"{_name_words(' '.join(names[2:]))}{where}"
    last = QUANTITY_WORDS.get(names[-1], _name_words(names[-1]))
    if names[0] in ("layers", "sources", "materials") and len(names) >= 3:
        owner = names[1]
        owner = f"{names[0][:-1]} {int(owner) + 1}" if str(owner).isdigit() else _name_words(owner)
        middle = " ".join(_name_words(n) for n in names[2:-1])
        return " ".join(x for x in (owner, middle, last) if x)
    if names[0] in ("strip", "heat", "optics", "time", "report") and len(names) >= 2:
        return " ".join(_name_words(n) for n in names[1:-1]) + (" " if len(names) > 2 else "") + last
    return " ".join(_name_words(n) for n in names[:-1]) + (" " if len(names) > 1 else "") + last


def fmt(value, digits: int = 3) -> str:
    """A number with ``digits`` significant figures, no trailing zeros ("45", "0.25", "1.2e+04")."""
    v = float(value)
    if not np.isfinite(v):
        return str(v)
    return f"{v:.{digits}g}"


def shown(value, unit: str, *, quantity: str = "", digits: int = 3) -> str:
    """One SI value with its display unit: (7.5e-05, "m") -> "75 µm", (318.15, "K") -> "45 °C"."""
    if isinstance(value, str):
        return value
    d = display_unit(unit, [value], quantity=quantity)
    text = fmt(d(value), digits)
    if not d.unit:
        return text
    return f"{text}{d.unit}" if d.unit == "°" else f"{text} {d.unit}"


def figure_record(path, title: str, caption: str) -> dict:
    """The entry of a figure in a verb's summary record.

    Parameters
    ----------
    path : str or os.PathLike
        The PNG file; recorded relative to the result folder (``figures/x.png``: its folder's name and its name).
    title : str
        Short title.
    caption : str
        What the figure shows, generated from what is drawn (quantities, units, numbers, marks).

    Returns
    -------
    dict
        ``{"file": "figures/x.png", "title": ..., "caption": ...}``.
    """
    from pathlib import Path

    p = Path(path)
    rel = f"{p.parent.name}/{p.name}" if p.parent.name else p.name
    return {"file": rel, "title": str(title), "caption": str(caption)}


# ----------------------------------------------------------------------------
# light sources: colours, lit intervals, shading
# ----------------------------------------------------------------------------

_UV_COLOURS = ("#7b3294", "#c51b7d", "#542788", "#de77ae", "#40004b")


def wavelength_colour(wavelength: float, uv_rank: int = 0):
    """RGB colour of a light source of centre ``wavelength`` [m] (UV sources from a purple palette by rank)."""
    nm = float(wavelength) * 1e9
    if nm < 380.0:
        return _UV_COLOURS[uv_rank % len(_UV_COLOURS)]
    # piecewise-linear approximation of spectral colours (common practice, no source)
    pts = [(380, (0.45, 0.0, 0.7)), (420, (0.3, 0.0, 1.0)), (440, (0.0, 0.0, 1.0)), (490, (0.0, 0.8, 1.0)),
           (510, (0.0, 0.8, 0.2)), (580, (0.9, 0.8, 0.0)), (645, (1.0, 0.1, 0.0)), (780, (0.6, 0.0, 0.0))]
    xs = [p[0] for p in pts]
    rgb = tuple(float(np.interp(min(nm, 780.0), xs, [p[1][i] for p in pts])) for i in range(3))
    return rgb


def _source_info(sources):
    """(name, centre wavelength [m], colour) per source."""
    out = []
    cw = [float(np.sum(np.asarray(s.band_wavelength) * np.asarray(s.band_fraction))) for s in sources]
    uv = sorted(i for i, w in enumerate(cw) if w < 380e-9)
    for i, (s, w) in enumerate(zip(sources, cw)):
        out.append((s.name, w, wavelength_colour(w, uv.index(i) if i in uv else 0)))
    return out


def lit_intervals(ds, scenario=None):
    """Intervals when each source is on.

    Parameters
    ----------
    ds : xarray.Dataset
        A simulation result (``time``, ``incident_irradiance``).
    scenario : actsim.scenario.Scenario, optional
        Its scenario (else read from ``ds.attrs["scenario"]`` when present).

    Returns
    -------
    list of dict
        Per source that is ever on: ``name``, ``wavelength`` [m], ``colour``, ``intervals`` (list of
        (start, end) [s]); with no scenario, one entry "light" from ``incident_irradiance`` > 0.
    """
    if scenario is None and ds.attrs.get("scenario"):
        try:
            from .scenario import parse_scenario

            scenario = parse_scenario(ds.attrs["scenario"], path=ds.attrs.get("scenario_path", ""))
        except Exception:  # noqa: BLE001 - a figure never fails on a scenario it cannot read back
            scenario = None
    if scenario is None or not getattr(scenario, "sources", None):
        t = ds["time"].values
        lit = ds["incident_irradiance"].values > 0 if "incident_irradiance" in ds else np.zeros(t.size, bool)
        spans, start = [], None
        for k in range(t.size):
            if lit[k] and start is None:
                start = t[max(k - 1, 0)]
            if not lit[k] and start is not None:
                spans.append((float(start), float(t[k - 1])))
                start = None
        if start is not None:
            spans.append((float(start), float(t[-1])))
        return [{"name": "light", "wavelength": float("nan"), "colour": "gold", "intervals": spans}] if spans else []
    info = _source_info(scenario.sources)
    out = []
    for j, (name, w, col) in enumerate(info):
        spans, t0 = [], 0.0
        for st in scenario.protocol:
            if st.irradiance[j] > 0:
                if spans and abs(spans[-1][1] - t0) < 1e-12:
                    spans[-1] = (spans[-1][0], t0 + st.duration)
                else:
                    spans.append((t0, t0 + st.duration))
            t0 += st.duration
        if spans:
            out.append({"name": name, "wavelength": w, "colour": col, "intervals": spans})
    return out


def source_label(src) -> str:
    """"365 nm (uv_led)" for a source entry of :func:`lit_intervals`."""
    if not np.isfinite(src["wavelength"]):
        return src["name"]
    return f"{src['wavelength'] * 1e9:.0f} nm ({src['name']})"


def _span_text(spans) -> str:
    parts = [f"{fmt(a)}-{fmt(b)} s" for a, b in spans[:4]]
    return ", ".join(parts) + (f" and {len(spans) - 4} more" if len(spans) > 4 else "")


def shade_sources(ax, sources, *, legend_handles=None):
    """Shade the intervals of each source in its colour (sources on together share the height); returns the caption part."""
    from matplotlib.patches import Patch

    if not sources:
        return ""
    together = any(a1 < b2 and a2 < b1 for i, s1 in enumerate(sources) for s2 in sources[i + 1:]
                   for a1, b1 in s1["intervals"] for a2, b2 in s2["intervals"])
    n = len(sources) if together else 1
    for k, src in enumerate(sources):
        lo, hi = ((k / n, (k + 1) / n) if together else (0.0, 1.0))
        for a, b in src["intervals"]:
            # sources on together get a band of the height each, so both stay readable
            ax.axvspan(a, b, ymin=lo, ymax=hi, color=src["colour"], alpha=0.18, lw=0)
        if legend_handles is not None:
            legend_handles.append(Patch(facecolor=src["colour"], alpha=0.35, label=f"{source_label(src)} on"))
    return "; ".join(f"{source_label(s)} on {_span_text(s['intervals'])}" for s in sources)


def align_zero(*axes) -> None:
    """Set the y limits of twin axes so that zero sits at the same height on each (limits only widened)."""
    lims = []
    for ax in axes:
        lo, hi = ax.get_ylim()
        lims.append((min(lo, 0.0), max(hi, 0.0)))
    below = max((-lo / (hi - lo)) if hi > lo else 0.0 for lo, hi in lims)
    above = max((hi / (hi - lo)) if hi > lo else 0.0 for lo, hi in lims)
    tot = below + above
    if tot <= 0:
        return
    fb, fa = below / tot, above / tot
    for ax, (lo, hi) in zip(axes, lims):
        s = max((-lo / fb) if fb > 0 else 0.0, (hi / fa) if fa > 0 else 0.0)
        if s <= 0:
            s = 1.0
        ax.set_ylim(-fb * s, fa * s)


# ----------------------------------------------------------------------------
# the figures of one run
# ----------------------------------------------------------------------------

def bend_angle_figure(ds, path, *, target_bend_angle=None, scenario=None) -> dict:
    """Bend angle (°, left) and blocked force (mN, right) against time, lit steps shaded per source.

    Returns
    -------
    dict
        The figure's :func:`figure_record`.
    """
    fig = new_figure((6.8, 3.9))
    ax = fig.subplots()
    t = ds["time"].values
    ang = display_unit("rad")
    force = ds["blocked_force"].values
    fd = display_unit("N", force)
    ax.plot(t, ang(ds["bend_angle"].values), color="C0", lw=1.6, label="bend angle")
    target_txt = ""
    if target_bend_angle is not None:
        ax.axhline(ang(target_bend_angle), color="C0", ls="--", lw=1, label=f"target {fmt(ang(target_bend_angle))}°")
        target_txt = f"; dashed: target {fmt(ang(target_bend_angle))}°"
    ax.set_xlabel("time (s)")
    ax.set_ylabel(axis_label("bend angle", ang.unit), color="C0")
    ax2 = ax.twinx()
    ax2.plot(t, fd(force), color="C3", lw=1.2, label="blocked force")
    ax2.set_ylabel(axis_label("blocked force", fd.unit), color="C3")
    ax2.axhline(0.0, color="0.5", lw=0.6)
    align_zero(ax, ax2)
    handles = []
    sources = lit_intervals(ds, scenario)
    lit_txt = shade_sources(ax, sources, legend_handles=handles)
    ax.set_xlim(t[0], t[-1])
    title = ds.attrs.get("title", "") or "Bend angle and blocked force"
    ax.set_title(title, fontsize=10)
    h1, _ = ax.get_legend_handles_labels()
    h2, _ = ax2.get_legend_handles_labels()
    ax.legend(h1 + h2 + handles, [h.get_label() for h in h1 + h2 + handles], fontsize=7, loc="best")
    save_figure(fig, path)
    a = ang(ds["bend_angle"].values)
    free = np.ones(t.size, bool)
    if scenario is not None and "protocol_step" in ds:
        holds = np.array([st.hold in ("free", "release") for st in scenario.protocol])
        free = holds[np.clip(ds["protocol_step"].values.astype(int), 0, holds.size - 1)]
        free = free if free.any() else np.ones(t.size, bool)
    ipk = int(np.flatnonzero(free)[np.argmax(np.abs(a[free]))])
    caption = (f"Bend angle (left, degrees) and blocked force (right, {fd.unit}) over {fmt(t[-1] - t[0])} s; "
               f"peak bend {fmt(a[ipk])}° at {fmt(t[ipk])} s{'' if free.all() else ' (free steps)'}, peak force {fmt(np.max(np.abs(fd(force))))} {fd.unit}; "
               f"zero of both axes aligned"
               + (f"; shaded: {lit_txt}" if lit_txt else "; no light") + target_txt)
    return figure_record(path, "Bend angle and blocked force", caption)


def profiles_figure(ds, path, n_times=5) -> dict:
    """Conversion and irradiance (mW/cm^2) against depth below the top face (µm) at a few times."""
    fig = new_figure((8.4, 3.6))
    a1, a2 = fig.subplots(1, 2, sharey=True)
    z = ds["z"].values
    h = float(ds.attrs.get("thickness", z.max() + (z[-1] - z[-2]) / 2 if z.size > 1 else z.max() * 2))
    dz = display_unit("m", [h])
    depth = dz(h - z)
    lit_idx = np.nonzero(ds["incident_irradiance"].values > 0)[0]
    end = int(lit_idx[-1]) if lit_idx.size else ds.sizes["time"] - 1
    idx = np.unique(np.linspace(0, end, n_times).round().astype(int))
    irr = display_unit("W/m^2")
    times = []
    for k, i in enumerate(idx):
        ti = ds["time"].values[i]
        times.append(fmt(ti))
        lab = f"t = {fmt(ti)} s"
        a1.plot(ds["conversion"].values[i], depth, color=f"C{k}", label=lab)
        a2.plot(irr(ds["irradiance"].values[i]), depth, color=f"C{k}", label=lab)
    faces = _layer_interfaces(ds, h)
    for lz in faces:
        a1.axhline(dz(lz), color="0.6", lw=0.8)
        a2.axhline(dz(lz), color="0.6", lw=0.8)
    a1.set_xlabel("conversion (fraction)")
    a1.set_ylabel(axis_label("depth below the top face", dz.unit))
    a1.invert_yaxis()
    a2.set_xlabel(axis_label("irradiance", irr.unit))
    a1.legend(fontsize=7)
    fig.suptitle("Conversion and irradiance through the thickness (light on)", fontsize=10)
    save_figure(fig, path)
    caption = (f"Conversion (left, fraction) and irradiance (right, {irr.unit}) against depth below the top face "
               f"({dz.unit}, {fmt(dz(h))} {dz.unit} thick) at t = {', '.join(times)} s"
               + (f"; grey lines: layer interfaces at {', '.join(fmt(dz(x)) for x in faces)} {dz.unit} depth" if faces else ""))
    return figure_record(path, "Conversion and irradiance through the thickness", caption)


def _layer_interfaces(ds, h):
    names = ds["layer"].values
    z = ds["z"].values
    out = []
    for i in range(1, names.size):
        if names[i] != names[i - 1]:
            out.append(h - 0.5 * (z[i] + z[i - 1]))
    return out


def shape_memory_figure(ds, path, *, scenario=None) -> dict:
    """Axial strain (%), bend angle (°) and light-formed network density through a programming cycle."""
    fig = new_figure((6.6, 6.8))
    axes = fig.subplots(3, 1, sharex=True)
    t = ds["time"].values
    ang = display_unit("rad")
    axes[0].plot(t, 100 * ds["axial_strain"].values, color="C0")
    axes[0].set_ylabel("axial strain (%)")
    axes[1].plot(t, ang(ds["bend_angle"].values), color="C1")
    axes[1].set_ylabel(axis_label("bend angle", ang.unit))
    net = ds["network_density"].values
    active = np.any(net > 0, axis=0) | (ds["network_strain"].values != 0).any(axis=0)
    axes[2].plot(t, net[:, active].mean(axis=1) if active.any() else net.mean(axis=1), color="C2", label="mean")
    if active.any():
        axes[2].plot(t, net[:, active].max(axis=1), color="C2", ls=":", label="top/bottom extremes")
        axes[2].plot(t, net[:, active].min(axis=1), color="C2", ls=":")
    axes[2].set_ylabel("network density (fraction)")
    axes[2].set_xlabel("time (s)")
    steps = ds["protocol_step"].values
    bounds = [float(t[k]) for k in np.nonzero(np.diff(steps))[0]]
    sources = lit_intervals(ds, scenario)
    handles = []
    lit_txt = ""
    for k, ax in enumerate(axes):
        for b in bounds:
            ax.axvline(b, color="0.7", lw=0.8)
        txt = shade_sources(ax, sources, legend_handles=handles if k == 2 else None)
        lit_txt = lit_txt or txt
    h, _ = axes[2].get_legend_handles_labels()
    axes[2].legend(h + handles, [x.get_label() for x in h + handles], fontsize=7)
    fig.suptitle("Programming and recovery (grey lines: protocol steps)", fontsize=10)
    save_figure(fig, path)
    caption = (f"Axial strain (%), bend angle (degrees) and light-formed network density (fraction; dotted: "
               f"extremes over the cells) over {fmt(t[-1] - t[0])} s; grey lines: step boundaries at "
               f"{', '.join(fmt(b) for b in bounds) or 'none'} s" + (f"; shaded: {lit_txt}" if lit_txt else ""))
    return figure_record(path, "Programming and recovery", caption)


def temperature_figure(ds, path, *, scenario=None) -> dict:
    """Peak and face temperatures (°C) against time, lit steps shaded per source."""
    fig = new_figure((6.6, 3.7))
    ax = fig.subplots()
    t = ds["time"].values
    d = display_unit("K")
    peak = d(ds["peak_temperature"].values)
    ax.plot(t, peak, label="peak (inside)")
    ax.plot(t, d(ds["surface_temperature_top"].values), ls="--", label="top face")
    ax.plot(t, d(ds["surface_temperature_bottom"].values), ls=":", label="bottom face")
    handles = []
    lit_txt = shade_sources(ax, lit_intervals(ds, scenario), legend_handles=handles)
    ax.set_xlim(t[0], t[-1])
    ax.set_xlabel("time (s)")
    ax.set_ylabel(axis_label("temperature", d.unit))
    h, _ = ax.get_legend_handles_labels()
    ax.legend(h + handles, [x.get_label() for x in h + handles], fontsize=7)
    ax.set_title("Photothermal heating", fontsize=10)
    save_figure(fig, path)
    i = int(np.argmax(peak))
    caption = (f"Peak (solid), top-face (dashed) and bottom-face (dotted) temperature ({d.unit}) over {fmt(t[-1] - t[0])} s; "
               f"highest {fmt(peak[i])} {d.unit} at {fmt(t[i])} s, start {fmt(peak[0])} {d.unit}"
               + (f"; shaded: {lit_txt}" if lit_txt else ""))
    return figure_record(path, "Temperature", caption)


def write_standard_figures(ds, folder, *, target_bend_angle=None, scenario=None) -> list[dict]:
    """Write the standard figures into ``folder``.

    Returns
    -------
    list of dict
        One :func:`figure_record` per figure written (``file`` relative to the result folder).
    """
    from pathlib import Path

    folder = Path(folder)
    records = [bend_angle_figure(ds, folder / "bend_angle.png", target_bend_angle=target_bend_angle, scenario=scenario),
               profiles_figure(ds, folder / "profiles.png")]
    if "network_density" in ds:
        records.append(shape_memory_figure(ds, folder / "shape_memory.png", scenario=scenario))
    if "temperature" in ds:
        records.append(temperature_figure(ds, folder / "temperature.png", scenario=scenario))
    if "ribbon_shape" in ds:
        from .lc_figures import plate_figure, ribbon_figure

        records.append(plate_figure(ds, folder / "plate_curvatures.png", scenario=scenario))
        records.append(ribbon_figure(ds, folder / "ribbon_shape.png", scenario=scenario))
    return records
