"""What a result holds beyond the time series: the conversion front at an absolute level, peaks over the
free steps only, and the shape-memory ratios per cycle as Dataset variables."""

from __future__ import annotations

import math

import numpy as np
import pytest
import xarray as xr

import actsim
from actsim.io import write_netcdf
from actsim.metrics import summarize
from actsim.scenario import parse_scenario
from conftest import film_toml
from test_shape_memory import E1, E2, STRETCH_CYCLE, smp


def test_front_at_half_conversion_follows_the_bleaching_closed_form():
    # Bleaching of an optically thick film where only the reactant absorbs (Wegscheider's closed form; e.g.
    # Mauser and Gauglitz, Photokinetics, Elsevier 1998): x(d, t) = 1 - e^(a d) / (e^(k0 t) + e^(a d) - 1), with
    # a = ln10 eps c the absorption coefficient and k0 the surface rate. x = 1/2 at a d = ln(e^(k0 t) - 1).
    h, conc, eps = 40e-6, 500.0, 1.2e3  # m, mol/m^3, m^2/mol (1.2e4 L/(mol cm))
    alpha = math.log(10) * eps * conc  # 1/m: optical depth alpha h = 55
    sc = parse_scenario(film_toml(thickness="40 um", cells=400, duration="30 s", output="3 s", step="0.01 s"))
    s = actsim.solve(sc)
    from scipy.constants import Avogadro, Planck, speed_of_light

    q0 = 500.0 * 365e-9 / (Planck * speed_of_light * Avogadro)  # mol photons m-2 s-1 of 50 mW/cm^2 at 365 nm
    k0 = 0.3 * math.log(10) * eps * q0  # surface rate: quantum yield x ln10 eps x photon flux
    tau = k0 * s.time
    expect = np.where(tau > math.log(2), np.log(np.maximum(np.expm1(tau), 1e-300)) / alpha, 0.0)
    got = s.conversion_front_depth
    assert np.abs(got[1:] - expect[1:]).max() < 0.15e-6  # within 1.5 % of the 10 um front, the cell size is 0.1 um
    assert s.front_level == 0.5


def test_weak_uniform_conversion_has_no_front():
    # 8 % conversion through the whole stack: no cell reaches half of full conversion, so there is no front
    # (a front relative to the current maximum would report the whole stack; hand reasoning)
    sc = parse_scenario(film_toml(thickness="20 um", cells=20, conc="0.001 mol/L", duration="1 s", output="0.5 s",
                                  irradiance="5 mW/cm^2"))
    ds = actsim.simulate(sc)
    assert 0 < float(ds.conversion.max()) < 0.5
    assert float(ds.conversion_front_depth.max()) == 0.0
    summary = summarize(ds)
    assert summary["front_formed"] is False
    from actsim.cli import summary_table

    assert "no front (conversion stays below 50 % of full conversion)" in summary_table(summary)


def test_front_level_is_a_scenario_field():
    text = film_toml(thickness="40 um", cells=100, duration="10 s", output="5 s", step="0.05 s")
    low = actsim.solve(parse_scenario(text + '\n[report]\nfront_conversion = 0.2\n'))
    high = actsim.solve(parse_scenario(text + '\n[report]\nfront_conversion = 0.8\n'))
    # conversion falls with depth: the 20 % contour lies deeper than the 80 % one
    assert np.all(low.conversion_front_depth[1:] > high.conversion_front_depth[1:])
    assert "20 % of full conversion" in low.long_name("conversion_front_depth")
    with pytest.raises(actsim.errors.ActsimInputError, match=r"report.front_conversion.*1\.5"):
        parse_scenario(text + '\n[report]\nfront_conversion = 1.5\n')


def test_peaks_skip_the_held_steps():
    # held stretched under light the strip's free curvature (and so the blocked force of the free state) means
    # nothing a support would feel; peaks come from the free steps, and the summary names the step. The bundled
    # two-colour demo is optically thick: its free-state force while held is larger than any after release.
    from pathlib import Path

    sc = actsim.load_scenario(Path(__file__).resolve().parents[1] / "scenarios" / "shape_memory_two_colour.toml")
    ds = actsim.simulate(sc)
    summary = summarize(ds, protocol=sc.protocol)
    free = np.isin(ds.hold.values, ("free", "release"))
    force = ds.blocked_force.values
    assert np.abs(force[~free]).max() > np.abs(force[free]).max()  # the held state would win otherwise
    assert summary["peak_blocked_force"] == force[free][np.argmax(np.abs(force[free]))]
    theta = ds.bend_angle.values
    assert summary["peak_bend_angle"] == theta[free][np.argmax(np.abs(theta[free]))]
    assert summary["peaks_over"] == "free steps"
    assert summary["step_of_peak_bend"] == 2 and summary["step_of_peak_bend_label"] == "recover (254 nm)"
    # time to 90 % of the peak: within the free stretch that holds the peak
    assert ds.time.values[free][0] <= summary["time_to_90_percent"] <= summary["time_of_peak_bend"]


def test_cycle_ratios_are_dataset_variables_and_survive_netcdf(tmp_path):
    sc = smp(protocol=STRETCH_CYCLE)
    ds = actsim.simulate(sc)
    cycles = summarize(ds, protocol=sc.protocol)["shape_memory_cycles"]
    assert ds.sizes["cycle"] == len(cycles) == 1
    assert ds.fixity_ratio.attrs["units"] == "1" and ds.bend_angle_after_release.attrs["units"] == "rad"
    assert float(ds.fixity_ratio[0]) == cycles[0]["fixity_ratio"]
    assert float(ds.recovery_ratio[0]) == cycles[0]["recovery_ratio"]
    # a uniformly crosslinked strip fixes E2 x / (E1 + E2 x) of the stretch (two-network closed form, see
    # tests/test_shape_memory.py); here x -> 1
    assert float(ds.fixity_ratio[0]) == pytest.approx(E2 / (E1 + E2), rel=1e-3)
    # a cycle with only one free step after the hold: no recovery to measure -> missing, written as fill value
    one_free = STRETCH_CYCLE.split('[[protocol]]\nlabel = "recover"')[0]
    ds1 = actsim.simulate(smp(protocol=one_free))
    assert np.isnan(ds1.recovery_ratio.values[0]) and "missing_means" in ds1.recovery_ratio.attrs
    write_netcdf(ds1, tmp_path / "r.nc")
    back = xr.load_dataset(tmp_path / "r.nc")
    assert np.isnan(back.recovery_ratio.values[0])
    assert float(back.fixity_ratio[0]) == float(ds1.fixity_ratio[0])
