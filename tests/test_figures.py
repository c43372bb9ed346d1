"""Figures read by a person: display units, words, categorical and log scales, colour bars, shading per source,
twin axes sharing zero, generated captions; the figures of ``actsim check`` and their records.

Checked with matplotlib's own objects (axis labels, tick labels, norms, patches, legends, limits), never pixels:
each figure function's Figure is captured where it is saved.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import pytest
import xarray as xr

import actsim.calibrate.rates as rates
import actsim.calibrate.tensile as tensile
import actsim.check_figures as check_figures
import actsim.figures as figures
import actsim.io as aio
from actsim.figures import display_unit, field_words, figure_record
from actsim.study import tradeoff

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture
def captured(monkeypatch):
    """Figures saved through save_figure, by file name (written as usual)."""
    figs = {}
    original = aio.save_figure

    def keep(fig, path, *a, **k):
        figs[Path(path).name] = fig
        return original(fig, path, *a, **k)

    for mod in (aio, figures, check_figures, tensile, rates):  # modules that bind save_figure when imported
        monkeypatch.setattr(mod, "save_figure", keep)
    return figs


# ---------------------------------------------------------------------------- units and words

def test_display_units():
    # 0 degC = 273.15 K (SI Brochure, 9th ed., 2019, sec. 2.3.1)
    d = display_unit("K")
    assert d.unit == "°C" and d(np.array([273.15, 318.15])) == pytest.approx([0.0, 45.0])
    assert display_unit("rad").unit == "°" and display_unit("rad")(math.pi) == pytest.approx(180.0)
    assert display_unit("m", [75e-6]).unit == "µm" and display_unit("m", [75e-6])(75e-6) == pytest.approx(75.0)
    assert display_unit("m", [2e-3]).unit == "mm"
    assert display_unit("m", [3.65e-7], quantity="sources[led].wavelength").unit == "nm"
    assert display_unit("N", [4e-3]).unit == "mN" and display_unit("N", [3e-5]).unit == "µN"
    # 1 W/m^2 = 0.1 mW/cm^2 (1 m^2 = 1e4 cm^2)
    assert display_unit("W/m^2")(500.0) == pytest.approx(50.0) and display_unit("W/m^2").unit == "mW/cm^2"
    assert display_unit("Pa")(22.5e6) == pytest.approx(22.5) and display_unit("Pa").unit == "MPa"
    assert display_unit("1").unit == ""


def test_field_words():
    assert field_words("layers[active film].thickness") == "active film thickness"
    assert field_words("sources[led].wavelength") == "LED wavelength"
    assert field_words("protocol[0].light.led") == "LED irradiance (step 1)"
    assert field_words("materials.film.photo_strain") == "film photo strain"
    assert figure_record("/x/stage/figures/a.png", "T", "C") == {"file": "figures/a.png", "title": "T", "caption": "C"}


# ---------------------------------------------------------------------------- run figures

def _source(name, nm):
    return SimpleNamespace(name=name, band_wavelength=np.array([nm * 1e-9]), band_fraction=np.array([1.0]))


def _run_ds():
    t = np.linspace(0.0, 60.0, 61)
    step = (t > 30).astype(int)
    angle = np.radians(60.0) * np.sin(np.pi * t / 60.0)
    force = -2e-3 + 5e-3 * t / 60.0  # negative then positive: zero inside both ranges, at other heights
    ds = xr.Dataset({"bend_angle": ("time", angle), "blocked_force": ("time", force),
                     "incident_irradiance": ("time", np.full(t.size, 100.0)),
                     "protocol_step": ("time", step),
                     "peak_temperature": ("time", 293.15 + 20 * t / 60),
                     "surface_temperature_top": ("time", 293.15 + 18 * t / 60),
                     "surface_temperature_bottom": ("time", 293.15 + 15 * t / 60)},
                    coords={"time": t}, attrs={"title": "two-colour test"})
    sc = SimpleNamespace(sources=(_source("uv_led", 365), _source("blue_led", 450)),
                         protocol=(SimpleNamespace(duration=30.0, irradiance=(100.0, 0.0), hold="free"),
                                   SimpleNamespace(duration=30.0, irradiance=(0.0, 80.0), hold="free")))
    return ds, sc


def test_bend_angle_figure_units_zero_aligned_shading_caption(tmp_path, captured):
    ds, sc = _run_ds()
    rec = figures.bend_angle_figure(ds, tmp_path / "figures" / "bend_angle.png", target_bend_angle=math.radians(45),
                                    scenario=sc)
    fig = captured["bend_angle.png"]
    ax, ax2 = fig.axes
    assert ax.get_ylabel() == "bend angle (°)" and ax2.get_ylabel() == "blocked force (mN)"
    assert ax.get_xlabel() == "time (s)"
    # zero at the same height of both axes: the same fraction of each range lies below zero
    (a0, a1), (b0, b1) = ax.get_ylim(), ax2.get_ylim()
    assert -a0 / (a1 - a0) == pytest.approx(-b0 / (b1 - b0), abs=1e-9)
    assert -b0 / (b1 - b0) > 0.05  # the force is negative at first: zero is above the bottom
    # one shaded span per source, in the source's colour, with a legend entry each
    from matplotlib.colors import to_rgba

    spans = [p for p in ax.patches]
    colours = {to_rgba(p.get_facecolor())[:3] for p in spans}
    assert len(spans) == 2 and len(colours) == 2
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    assert "365 nm (uv_led) on" in legend and "450 nm (blue_led) on" in legend and "target 45°" in legend
    assert rec["file"] == "figures/bend_angle.png"
    cap = rec["caption"]
    assert "degrees" in cap and "(right, mN)" in cap and "365 nm (uv_led) on 0-30 s" in cap
    assert "450 nm (blue_led) on 30-60 s" in cap and "dashed: target 45°" in cap and "peak bend 60°" in cap


def test_sources_on_together_split_the_height(tmp_path, captured):
    ds, sc = _run_ds()
    sc.protocol = (SimpleNamespace(duration=60.0, irradiance=(100.0, 80.0), hold="free"),)
    figures.bend_angle_figure(ds, tmp_path / "b.png", scenario=sc)
    ax = captured["b.png"].axes[0]
    # axvspan(ymin, ymax) in axes fractions: the two sources share the height, one band each
    bands = sorted((round(p.get_y(), 6), round(p.get_height(), 6)) for p in ax.patches)
    assert bands == [(0.0, 0.5), (0.5, 0.5)]


def test_temperature_figure_in_degc(tmp_path, captured):
    ds, sc = _run_ds()
    rec = figures.temperature_figure(ds, tmp_path / "t.png", scenario=sc)
    ax = captured["t.png"].axes[0]
    assert ax.get_ylabel() == "temperature (°C)"
    assert ax.lines[0].get_ydata()[-1] == pytest.approx(40.0)  # 313.15 K
    assert "highest 40 °C at 60 s" in rec["caption"]


# ---------------------------------------------------------------------------- sweep figures

def _grid_sweep():
    wl = np.array([365e-9, 405e-9, 450e-9])
    irr = np.geomspace(100.0, 10000.0, 5)  # W/m^2: 10 .. 1000 mW/cm^2
    ttt = 30.0 / (irr[None, :] / 100.0) * np.array([1.0, 1.5, 20.0])[:, None]
    ttt[2, 0] = np.nan  # never reached
    ds = xr.Dataset(
        {"status": (("wl", "irr"), np.zeros((3, 5), int)),
         "time_to_target": (("wl", "irr"), ttt, {"units": "s"}),
         "peak_temperature": (("wl", "irr"), 300.0 + 25.0 * np.linspace(0, 1, 15).reshape(3, 5), {"units": "K"})},
        coords={"wl": ("wl", wl, {"units": "m", "field": "sources[led].wavelength"}),
                "irr": ("irr", irr, {"units": "W/m^2", "field": "protocol[0].light.led"}),
                "design": (("wl", "irr"), np.arange(15).reshape(3, 5))})
    return ds


def test_heatmap_categorical_axis_log_norm_units(tmp_path, captured):
    from matplotlib.colors import LogNorm

    ds = _grid_sweep()
    rec = tradeoff.heatmap(ds, "time_to_target", "wl", "irr", tmp_path / "figures" / "h.png")
    fig = captured["h.png"]
    ax, cax = fig.axes
    assert [t.get_text() for t in ax.get_xticklabels()] == ["365", "405", "450"]
    assert ax.get_xlabel() == "LED wavelength (nm)" and ax.get_ylabel() == "LED irradiance (step 1) (mW/cm^2)"
    assert ax.get_yscale() == "log"
    assert isinstance(ax.collections[0].norm, LogNorm)  # 0.45 .. 600 s spans > 1.5 decades
    assert "(s)" in cax.get_ylabel()
    assert "logarithmic colour scale" in rec["caption"] and "365, 405, 450 nm" in rec["caption"]
    assert "1 blank cells" in rec["caption"]


def test_heatmap_temperature_colour_bar_in_degc_linear(tmp_path, captured):
    from matplotlib.colors import LogNorm

    ds = _grid_sweep()
    rec = tradeoff.heatmap(ds, "peak_temperature", "wl", "irr", tmp_path / "p.png")
    ax, cax = captured["p.png"].axes
    assert cax.get_ylabel() == "peak temperature (°C)"
    assert not isinstance(ax.collections[0].norm, LogNorm)
    data = np.ma.getdata(ax.collections[0].get_array())
    assert np.nanmin(data) == pytest.approx(300.0 - 273.15) and np.nanmax(data) == pytest.approx(325.0 - 273.15)
    assert "26.9-51.9 °C" in rec["caption"]


def _thickness_sweep(n=40):
    h = np.linspace(5e-6, 200e-6, n)
    t_target = np.where(h <= 110e-6, 2.0 + 0.3 * h * 1e6, np.nan)  # thick films never reach the target
    force = 3e-3 * (h / 100e-6) ** 2
    t = np.linspace(0, 40, 41)
    series = np.radians(80.0) * (1 - np.exp(-t[None, :] / (1 + h[:, None] * 1e5)))
    return xr.Dataset(
        {"status": ("h", np.zeros(n, int)), "time_to_target": ("h", t_target, {"units": "s"}),
         "blocked_force_at_target": ("h", np.where(np.isfinite(t_target), force, np.nan), {"units": "N"}),
         "series_bend_angle": (("h", "time"), series, {"units": "rad"})},
        coords={"h": ("h", h, {"units": "m", "field": "layers[active film].thickness"}), "time": t,
                "design": ("h", np.arange(n))},
        attrs={"target_bend_angle": math.radians(30.0)})


def test_bend_family_has_a_colour_bar_of_the_swept_value(tmp_path, captured):
    ds = _thickness_sweep()
    rec = tradeoff.bend_family(ds, tmp_path / "f.png", along="h")
    fig = captured["f.png"]
    assert len(fig.axes) == 2  # the plot and its colour bar
    ax, cax = fig.axes
    assert cax.get_ylabel() == "active film thickness (µm)" and len(ax.lines) == 41  # 40 curves + target
    assert ax.get_ylabel() == "bend angle (°)"
    assert "40 values of active film thickness (5-200 µm" in rec["caption"] and "target 30°" in rec["caption"]


def test_pareto_front_labelled_with_limit_and_recommendation(tmp_path, captured):
    ds = _thickness_sweep()
    rec = tradeoff.pareto_plot(ds, tmp_path / "p.png", within=21.0, recommend_dim="h")
    ax = captured["p.png"].axes[0]
    texts = [t.get_text() for t in ax.texts]
    assert "5 µm" in texts
    # the force grows with h, so the recommendation is the thickest design within 21 s (by hand):
    # t = 2 s + 0.3 s/um * h <= 21 s -> h <= 63.3 um; on the 5 um grid: 60 um
    assert "recommended: 60 µm" in texts
    assert any(list(line.get_xdata()) == [21.0, 21.0] for line in ax.lines)  # the 21 s limit
    assert ax.get_ylabel() == "blocked force at the target angle (mN)"
    assert "the 21 s limit" in rec["caption"] and "recommended active film thickness 60 µm" in rec["caption"]


def test_categorical_rule():
    ds = _grid_sweep()
    assert tradeoff.is_categorical(ds, "wl") and not tradeoff.is_categorical(ds, "irr")
    assert not tradeoff.is_categorical(_thickness_sweep(), "h")


# ---------------------------------------------------------------------------- fits

def test_residual_std_has_its_unit():
    from actsim.calibrate.fitstats import fit_statistics

    jac = np.vstack([np.ones(5), np.arange(5.0)]).T
    res = fit_statistics(jac, np.array([0.01, -0.01, 0.005, 0.0, -0.005]), values=np.array([1.0, 2.0]),
                         names=("a", "b"), units=("rad", "rad/s"), residual_unit="rad")
    assert "residual std = " in res.to_table() and " rad (" in res.to_table() and "deg)" in res.to_table()


def test_tensile_figure_record(tmp_path, captured):
    from actsim.calibrate.tensile import fit_tensile, plot_tensile

    res = fit_tensile(ROOT / "scenarios" / "calibration" / "tensile_flap_film.csv")
    recs = []
    plot_tensile(res, tmp_path / "figures" / "tensile_fit.png", records=recs)
    ax = captured["tensile_fit.png"].axes[0]
    assert ax.get_xlabel().startswith("strain (%)") and ax.get_ylabel() == "stress (MPa)"
    assert recs[0]["file"] == "figures/tensile_fit.png"
    assert f"E = {res.modulus / 1e9:.4g} GPa" in recs[0]["caption"]


def test_uncertainty_curves_shown_only_under_the_same_conditions():
    from actsim.calibrate.uncertainty import _same_conditions

    assert _same_conditions({}, {})
    assert not _same_conditions({"layers[active film].thickness": "20 um"}, {})
    assert not _same_conditions({}, {"layers[active film].thickness": "40 um"})
    assert _same_conditions({"layers[active film].thickness": "40  um"}, {"layers[active film].thickness": "40 um"})


# ---------------------------------------------------------------------------- actsim check

def test_check_writes_its_figures_with_records(tmp_path, captured, capsys):
    from actsim.cli import main

    out = tmp_path / "c"
    status = main(["check", str(ROOT / "scenarios" / "gripper_hinge_check.toml"), "--no-elastica", "-o", str(out)])
    capsys.readouterr()
    assert status == 0
    rec = json.loads((out / "summary.json").read_text())
    files = {f["file"]: f for f in rec["figures"]}
    for name in ("check_stress", "check_fatigue", "check_joint", "check_exposure", "bend_angle"):
        assert f"figures/{name}.png" in files and (out / "figures" / f"{name}.png").is_file()
        assert f"figures/{name}.png" in rec["files"]
    checks = json.loads((out / "checks.json").read_text())
    peak = checks["details"]["stress"]["layers"]["active film"]["peak"]
    assert f"largest von Mises {peak / 1e6:.3g} MPa" in files["figures/check_stress.png"]["caption"]
    assert "Goodman" in files["figures/check_fatigue.png"]["caption"]
    assert "15 strips" in files["figures/check_joint.png"]["caption"]
    # the stress figure: stress in MPa against height in µm, yield strength drawn per layer
    sax = captured["check_stress.png"].axes[0]
    assert sax.get_xlabel() == "stress (MPa)" and sax.get_ylabel() == "height z above the bottom face (µm)"
    vm = sax.lines[0].get_xdata()
    assert vm.max() == pytest.approx(peak / 1e6, rel=1e-9)
    # the S-N panels: log-log, one marker per method and the uncorrected point
    fax = captured["check_fatigue.png"].axes
    assert all(a.get_xscale() == "log" and a.get_yscale() == "log" for a in fax)
    legend = [t.get_text() for t in fax[1].get_legend().get_texts()]
    assert sum(x.split(":")[0] in ("Goodman", "Gerber", "Morrow", "Smith-Watson-Topper") for x in legend) == 4
    # the joint figure in degrees and mN m
    jax = captured["check_joint.png"].axes[0]
    assert jax.get_xlabel() == "joint angle (°)" and jax.get_ylabel() == "moment about the joint (mN m)"
    # no figures when asked for none
    main(["check", str(ROOT / "scenarios" / "gripper_hinge_check.toml"), "--no-elastica", "--no-figures",
          "-o", str(tmp_path / "n")])
    capsys.readouterr()
    assert json.loads((tmp_path / "n" / "summary.json").read_text())["figures"] == []
