"""The quasi-static strip resolved along its length under light that follows its shape (actsim.along_strip)."""

from __future__ import annotations

import dataclasses
import math
import textwrap

import numpy as np
import pytest

import actsim
from actsim.along_strip import arc_points, simulate_along
from actsim.errors import ActsimInputError
from actsim.scenario import parse_scenario

THIN_FILM = """
title = "thin film on an opaque backing"
[strip]
free_length = "10 mm"
width = "2 mm"
[optics]
front_reflection = false
[materials.backing]
modulus = "2 GPa"
refractive_index = 1.0
background_absorption = "2000 1/cm"
[materials.film]
modulus = "2 GPa"
refractive_index = 1.0
chromophore_concentration = "0.05 mol/L"
reactant_absorptivity = "200 L/(mol*cm)"
forward_quantum_yield = 0.5
thermal_back_rate = "0.5 1/s"
photo_strain = -0.08
[[layers]]
material = "backing"
thickness = "20 um"
cells = 4
[[layers]]
material = "film"
thickness = "5 um"
cells = 4
[[sources]]
name = "lamp"
wavelength = "365 nm"
irradiance = "100 mW/cm^2"
[[protocol]]
duration = "{duration}"
light = {{ lamp = "100 mW/cm^2" }}
[time]
output_interval = "0.2 s"
step = "0.05 s"
"""


def thin_film(duration="16 s"):
    return parse_scenario(textwrap.dedent(THIN_FILM.format(duration=duration)))


def test_arc_points_are_the_circular_arc():
    # a uniform curvature k over length L: the clamped circular arc, tip at (sin kL / k, (1 - cos kL) / k)
    # (pure bending gives a circular arc: Timoshenko and Gere, Theory of Elastic Stability, 1961)
    k, L, n = 150.0, 0.01, 16
    p = arc_points(np.full(n, k), L / n)
    assert p[-1] == pytest.approx([math.sin(k * L) / k, (1 - math.cos(k * L)) / k], rel=1e-12)
    assert np.allclose(np.hypot(p[:, 0], p[:, 1] - 1 / k), 1 / k, rtol=1e-12)


def test_normal_beam_on_a_nearly_flat_strip_gives_the_single_strip_result():
    # The check: with the beam normal to the flat strip and small deflections (tip 5e-6 rad, so the cosine
    # law differs from 1 by 1e-11), every segment is the strip of actsim.simulate; the coupling restarts the
    # kernel at the coupling steps with fixed steps that divide them, so the tip angle equals kappa L to 1e-6.
    sc = actsim.load_scenario(next(p for p in (__import__("pathlib").Path(__file__).parents[1] / "scenarios").glob(
        "vent_flap.toml")))
    layers = list(sc.layers)
    layers[0] = dataclasses.replace(layers[0], material=dataclasses.replace(layers[0].material, thermal_expansion=5e-10))
    layers[1] = dataclasses.replace(layers[1], material=dataclasses.replace(layers[1].material, photo_strain=-3e-7,
                                                                            thermal_expansion=1.2e-9))
    protocol = (dataclasses.replace(sc.protocol[0], duration=5.0), dataclasses.replace(sc.protocol[1], duration=5.0))
    sc = sc.replace(layers=tuple(layers), protocol=protocol, time_step=0.05, time_tolerance=0.0, output_interval=0.5)
    along = simulate_along(sc, segments=4, coupling_step=0.5)
    ref = actsim.simulate(sc)
    i = np.searchsorted(ref.time.values, along.time.values)
    scale = float(np.max(np.abs(ref.bend_angle.values)))
    assert 1e-6 < scale < 1e-4
    assert np.max(np.abs(along.tip_angle.values - ref.bend_angle.values[i])) < 1e-6 * scale
    assert np.max(np.abs(along.curvature.values - ref.curvature.values[i][:, None])) < 1e-6 * scale / 0.008


def test_an_oblique_beam_curls_the_strip_until_its_lit_face_turns_edge_on():
    # Hand derivation: an optically thin active film (absorbance 0.01) with index 1 (no refraction, no reflection)
    # on an opaque backing absorbs the same per molecule wherever the beam reaches its face, so every lit segment
    # takes the curvature kappa0 of the strip under normal light, and an unlit one relaxes to 0. A beam travelling
    # at -30 deg (30 deg to the flat face) lights the top face of a segment at tangent angle theta while
    # sin(theta + 30 deg) > 0; the curl grows as a circular arc (kappa0 L = 216 deg here) until the segments reach
    # theta = 180 - 30 = 150 deg, edge-on to the beam, and the rest stays straight along the beam: the tip settles
    # at 150 deg (the arc's lit side is convex, so nothing shades it).
    sc = thin_film()
    kappa0 = float(actsim.simulate(sc).curvature[-1])
    assert math.degrees(kappa0 * 0.01) > 200
    ds = simulate_along(sc, segments=20, beam_angles=[-math.radians(30)], coupling_step=0.2)
    assert math.degrees(float(ds.tip_angle[-1])) == pytest.approx(150.0, abs=0.5)
    k = ds.curvature.values[-1]
    assert np.allclose(k[:12], kappa0, rtol=0.01)  # the lit arc
    assert np.all(np.abs(k[-5:]) < 0.01 * kappa0)  # the tail edge-on to the beam
    assert float(ds.irradiance_top.values[-1, -1]) == pytest.approx(0.0, abs=1e-9)


def test_the_coupling_converges_at_first_order_in_its_step():
    # The light of a coupling step is that of the shape at its start (explicit coupling): the error of the tip
    # angle at t = 1.6 s falls in proportion to the step (against a run with a step 16 times smaller).
    sc = thin_film("1.6 s")
    tips = {h: float(simulate_along(sc, segments=10, beam_angles=[-math.radians(30)], coupling_step=h).tip_angle[-1])
            for h in (0.4, 0.2, 0.1, 0.025)}
    errors = [abs(tips[h] - tips[0.025]) for h in (0.4, 0.2, 0.1)]
    orders = [math.log2(errors[i] / errors[i + 1]) for i in range(2)]
    assert errors[0] > errors[1] > errors[2] > 0
    assert all(0.7 < p < 1.5 for p in orders), orders


def test_refused_input_is_one_line():
    sc = thin_film()
    with pytest.raises(ActsimInputError, match=r"^segments: 0 is outside"):
        simulate_along(sc, segments=0)
    with pytest.raises(ActsimInputError, match=r"^beam_angles: 2 given for 1 sources"):
        simulate_along(sc, beam_angles=[0.0, 1.0])
    held = sc.replace(protocol=(dataclasses.replace(sc.protocol[0], hold="flat"),))
    with pytest.raises(ActsimInputError, match=r"^protocol\[0\]\.hold"):
        simulate_along(held)


def test_dynamic_mode_follows_the_quasi_static_strip_through_the_kelvin_voigt_lag():
    # With inertia and Kelvin–Voigt damping (time eta) a strip driven slowly (the curl takes seconds, the first
    # mode's period is about 20 ms) obeys EI (kappa - kappa0) + eta EI dkappa/dt = 0 to leading order, i.e.
    # kappa(t) = kappa0(t - eta): the quasi-static strip, late by eta. So the gap to the quasi-static tip angle
    # is eta times its rate (doubling eta doubles it), and once the lag is taken out what remains is the
    # discretisation along the length (chords at hinges against arcs), halving with twice the segments.
    sc = thin_film("4 s")
    angle = [-math.radians(30)]

    def gaps(n, eta):
        qs = simulate_along(sc, segments=n, beam_angles=angle, coupling_step=0.05)
        dy = simulate_along(sc, segments=n, beam_angles=angle, coupling_step=0.05, mode="dynamic", kv_time=eta)
        t, q = qs.time.values, qs.tip_angle.values
        return np.max(np.abs(dy.tip_angle.values - q)), np.max(np.abs(dy.tip_angle.values - np.interp(t - eta, t, q)))

    raw_10, lagged_10 = gaps(10, 6e-3)
    raw_20, lagged_20 = gaps(20, 6e-3)
    raw_20b, _ = gaps(20, 12e-3)
    assert raw_20b / raw_20 == pytest.approx(2.0, rel=0.1)  # the lag is eta x rate
    assert lagged_20 < 0.6 * lagged_10  # first order in the segment length
    assert lagged_20 < 0.5 * raw_20


def test_the_along_strip_section_runs_with_actsim_run(tmp_path, capsys):
    # the demo scenario end to end: its [along_strip] part is written into the run's folder, with its summary
    from pathlib import Path

    from actsim.cli import main
    from actsim.results import read_summary

    scenario = Path(__file__).parents[1] / "scenarios" / "flap_oblique_lamp.toml"
    assert main(["run", str(scenario), "-o", str(tmp_path / "out"), "--no-figures"]) == 0
    shown = capsys.readouterr().out
    assert "along the strip (20 segments, quasi-static" in shown and "end of step 0 (lamp on)" in shown
    record = read_summary(tmp_path / "out")
    along = record["along_strip"]
    lit = along["steps"][0]
    assert lit["settled"] and 120 < math.degrees(lit["tip_angle"]) < 150  # short of edge-on to the 30-deg beam
    assert (tmp_path / "out" / "along_strip.nc").is_file() and "along_strip.nc" in record["files"]
    assert main(["report", str(tmp_path / "out")]) == 0
    html = (tmp_path / "out" / "report.html").read_text(encoding="utf-8")
    assert "Along the strip, light following its shape" in html and "tip angle, end of step 0 (lamp on)" in html


@pytest.mark.parametrize("section, message", [
    ('segments = 0', r"^along_strip\.segments: 0"),
    ('beams = { sun = "-30 deg" }', r"^along_strip\.beams\.sun: no source 'sun'"),
    ('kv_time = "5 ms"', r"^along_strip\.kv_time: used only with mode = 'dynamic'"),
    ('mode = "wobbly"', r"^along_strip\.mode: 'wobbly' is not one of"),
])
def test_bad_along_strip_section_is_one_line(section, message):
    from actsim.along_strip import along_strip_settings

    sc = parse_scenario(textwrap.dedent(THIN_FILM.format(duration="1 s")) + f"\n[along_strip]\n{section}\n")
    with pytest.raises(ActsimInputError, match=message) as err:
        along_strip_settings(sc)
    assert "\n" not in str(err.value)
