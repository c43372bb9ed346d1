"""Sweeps: a point equals its single simulation, interruption and resume, a dask cluster, bad input, trade-offs.

References: the single-design path of the project (actsim.simulate, actsim.metrics.summarize)
for the values; the Pareto domination definition of Deb, K., Multi-Objective Optimization
using Evolutionary Algorithms, Wiley 2001, ch. 2, checked by brute force.
"""

from __future__ import annotations

import math
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
import xarray as xr

import actsim
from actsim.errors import ActsimInputError
from actsim.metrics import summarize
from actsim.scenario import apply_overrides, parse_scenario
from actsim.study import tradeoff
from actsim.study.sweep import sweep
from actsim.study.values import lin, log, parse_values

from conftest import film_toml

TARGET = math.radians(10)
VARY = {"layers[film].thickness": "lin(8 um, 30 um, 4)", "protocol[0].light.lamp": "20 mW/cm^2,80 mW/cm^2"}


def _text():
    return film_toml(cells=12, substrate={"modulus": "2 GPa", "thickness": "30 um", "cells": 4},
                     duration="6 s", output="0.5 s", step="0.1 s")


@pytest.fixture(scope="module")
def base():
    return parse_scenario(_text())


@pytest.fixture(scope="module")
def local(base):
    return sweep(base, VARY, target_bend_angle=TARGET, scheduler="inprocess", chunk_size=3, progress=False)


def test_grid_point_equals_single_simulation(base, local):
    assert dict(local.sizes) == {"layers_film_thickness": 4, "protocol_0_light_lamp": 2}
    assert local["layers_film_thickness"].attrs["units"] == "m"
    assert local["protocol_0_light_lamp"].attrs["units"] == "W/m^2"
    np.testing.assert_allclose(local["layers_film_thickness"].values, np.linspace(8e-6, 30e-6, 4), rtol=1e-14)
    np.testing.assert_allclose(local["protocol_0_light_lamp"].values, [200.0, 800.0], rtol=1e-14)
    sc = apply_overrides(base, {"layers[film].thickness": "22.666666666666668 um", "protocol[0].light.lamp": "80 mW/cm^2"})
    ref = summarize(actsim.simulate(sc), target_bend_angle=TARGET)
    point = local.isel(layers_film_thickness=2, protocol_0_light_lamp=1)
    for key in ("final_bend_angle", "peak_blocked_force", "peak_blocked_moment", "time_to_target", "optical_dose"):
        np.testing.assert_allclose(float(point[key]), ref[key], rtol=1e-14, err_msg=key)


def test_sampled_sweep_and_ranges(base):
    ds = sweep(base, {"protocol[0].light.lamp": log("10 mW/cm^2", "100 mW/cm^2"), "materials.film.photo_strain": lin(-0.02, -0.005)},
               sampling="lhs", n_samples=6, seed=3, scheduler="inprocess", progress=False)
    assert ds.sizes["design"] == 6
    irr = ds["protocol_0_light_lamp"].values
    assert ((irr >= 100.0 - 1e-9) & (irr <= 1000.0 + 1e-9)).all()
    # Latin hypercube: one sample in each of the 6 equal-probability strata (McKay, Beckman and Conover,
    # Technometrics 21 (1979) 239-245), here of log irradiance
    strata = np.floor(np.log10(irr / 100.0) * 6).clip(0, 5)
    assert sorted(strata) == list(range(6))
    assert (ds["status"] == 0).all()


def test_parse_values():
    r = parse_values("lin(5 um, 200 um, 40)")
    assert (r.kind, r.start, r.stop, r.num) == ("lin", "5 um", "200 um", 40)
    assert parse_values("10 mW/cm^2, 50 mW/cm^2") == ["10 mW/cm^2", "50 mW/cm^2"]
    assert parse_values("1,2") == [1, 2]


def test_dask_cluster_equals_local(base, local):
    from distributed import LocalCluster

    with LocalCluster(n_workers=1, threads_per_worker=2, processes=False, protocol="tcp", dashboard_address=None) as cluster:
        remote = sweep(base, VARY, target_bend_angle=TARGET, scheduler=cluster.scheduler_address, chunk_size=3,
                       progress=False)
    xr.testing.assert_identical(local, remote)


def _cli(args, **kw):
    return subprocess.run([sys.executable, "-m", "actsim.cli", *args], capture_output=True, text=True, **kw)


def test_interrupted_sweep_resumes(tmp_path):
    scen = tmp_path / "s.toml"
    scen.write_text(_text())
    args = ["sweep", str(scen), "--vary", "layers[film].thickness=lin(8 um, 30 um, 6)", "--vary",
            "protocol[0].light.lamp=20 mW/cm^2,80 mW/cm^2", "--target-angle", "10 deg", "--chunk-size", "2",
            "--scheduler", "inprocess", "--no-progress"]
    full = _cli(args + ["-o", str(tmp_path / "full")])
    assert full.returncode == 0, full.stderr
    out = tmp_path / "cut"
    env = dict(os.environ, ACTSIM_SWEEP_PAUSE="0.5")
    proc = subprocess.Popen([sys.executable, "-m", "actsim.cli", *args, "-o", str(out)], env=env,
                            stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    work = tmp_path / ".cut.sweep-work"  # the chunk store beside the folder while the sweep runs
    deadline = time.time() + 60
    while not list(work.glob("chunk_*.nc")) and time.time() < deadline:
        time.sleep(0.02)
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    first = sorted(work.glob("chunk_*.nc"))
    assert 1 <= len(first) < 6 and not out.exists()
    # a different sweep into the same folder does not touch the interrupted one
    other = _cli(["sweep", str(scen), "--vary", "protocol[0].light.lamp=30 mW/cm^2", "-o", str(out),
                  "--scheduler", "inprocess"])
    assert other.returncode == 2 and "different sweep" in other.stderr
    again = _cli(args + ["-o", str(out)])
    assert again.returncode == 0, again.stderr
    assert len(list((out / "chunks").glob("chunk_*.nc"))) == 6 and not work.exists()
    a = xr.load_dataset(tmp_path / "full" / "sweep.nc")
    b = xr.load_dataset(out / "sweep.nc")
    xr.testing.assert_identical(a, b)


def test_unknown_field_suggests(base):
    with pytest.raises(ActsimInputError, match="did you mean 'thickness'"):
        sweep(base, {"layers[film].thicknes": "10 um,20 um"}, scheduler="inprocess", progress=False)


def test_wrong_unit(base):
    with pytest.raises(ActsimInputError, match="thickness"):
        sweep(base, {"layers[film].thickness": "10 s,20 s"}, scheduler="inprocess", progress=False)


def test_grid_too_large_needs_yes(tmp_path):
    scen = tmp_path / "s.toml"
    scen.write_text(_text())
    r = _cli(["sweep", str(scen), "--vary", "layers[film].thickness=lin(8 um, 30 um, 200)", "--vary",
              "protocol[0].light.lamp=lin(10 mW/cm^2, 90 mW/cm^2, 101)", "-o", str(tmp_path / "o")])
    assert r.returncode == 2
    assert r.stderr.strip().count("\n") == 0 and "--yes" in r.stderr and "20200" in r.stderr


def test_scheduler_that_does_not_answer(base):
    import socket

    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    port = s.getsockname()[1]
    s.close()
    t0 = time.time()
    with pytest.raises(ActsimInputError, match="no dask scheduler answered"):
        sweep(base, VARY, scheduler=f"tcp://127.0.0.1:{port}", connect_timeout=2, progress=False)
    assert time.time() - t0 < 8


def test_pareto_front_by_brute_force():
    rng = np.random.default_rng(1)
    t = rng.random(60)
    f = rng.random(60)
    t[::7] = np.nan
    mask = tradeoff.pareto_mask(t, f)
    for i in range(60):
        if not np.isfinite(t[i]):
            assert not mask[i]
            continue
        dominated = any(np.isfinite(t[j]) and t[j] <= t[i] and f[j] >= f[i] and (t[j] < t[i] or f[j] > f[i])
                        for j in range(60))
        assert mask[i] == (not dominated)


def test_tradeoff_on_grid(local, tmp_path):
    pf = tradeoff.pareto_front(local)
    assert pf["n_on_front"] >= 1
    assert pf["n_on_front"] + pf["n_not_reaching"] <= 8
    rows = tradeoff.recommend(local, "layers_film_thickness", within=3.0)
    assert len(rows) == 2
    for row in rows:
        if row["recommended"] is not None:
            assert row["time_to_target"] <= 3.0
            lamp = row["protocol[0].light.lamp"]
            cand = local.sel(protocol_0_light_lamp=lamp)
            ok = cand["time_to_target"] <= 3.0
            # default: the largest blocked force at the target angle among the designs fast enough
            assert row["blocked_force_at_target"] == pytest.approx(
                float(np.abs(cand["blocked_force_at_target"]).where(ok).max()))
    rows_peak = tradeoff.recommend(local, "layers_film_thickness", within=3.0, maximise="peak_blocked_force")
    for row in rows_peak:
        if row["recommended"] is not None:
            cand = local.sel(protocol_0_light_lamp=row["protocol[0].light.lamp"])
            ok = cand["time_to_target"] <= 3.0
            assert row["peak_blocked_force"] == pytest.approx(float(np.abs(cand["peak_blocked_force"]).where(ok).max()))
    tradeoff.heatmap(local, "time_to_target", "layers_film_thickness", "protocol_0_light_lamp", tmp_path / "h.png")
    tradeoff.pareto_plot(local, tmp_path / "p.png")
    assert (tmp_path / "h.png").stat().st_size > 1000 and (tmp_path / "p.png").stat().st_size > 1000


def test_cli_story3(tmp_path):
    root = Path(__file__).resolve().parents[1]
    r = _cli(["sweep", str(root / "scenarios" / "thickness_study.toml"), "--vary",
              "layers[active film].thickness=lin(5 um, 200 um, 12)", "--target-angle", "30 deg", "--pareto",
              "--recommend", "layers[active film].thickness", "--within", "20 s", "--series", "--scheduler",
              "inprocess", "-o", str(tmp_path / "o")])
    assert r.returncode == 0, r.stderr
    assert "recommendation" in r.stdout and "sweep written to" in r.stdout
    for f in ("sweep.nc", "metrics.csv", "pareto.json", "recommendation.json", "figures/pareto.png", "figures/bend_family.png"):
        assert (tmp_path / "o" / f).is_file(), f


def test_speed_force_tradeoff_uses_force_at_target_independent_of_protocol_length(base):
    # The force available when the target angle is reached is fixed by the state at that moment, so lengthening
    # the exposure after it (6 s -> 12 s) must not change the recommendation; the peak force over the protocol
    # does change. Closed form of the value: a cantilever whose free curvature is kappa needs the tip force
    # F = 3 EI kappa / (2 L) to keep its tip on the axis (tip deflection of a tip load P L^3/(3EI) equal to the
    # arc's kappa L^2/2; S. Timoshenko and J. Gere, Mechanics of Materials, cantilever with end load), and at the
    # target kappa = theta_target / L, with EI taken at the time the target is reached.
    vary = {"layers[film].thickness": "lin(8 um, 30 um, 4)"}
    long = parse_scenario(film_toml(cells=12, substrate={"modulus": "2 GPa", "thickness": "30 um", "cells": 4},
                                    duration="12 s", output="0.5 s", step="0.1 s"))
    short_ds = sweep(base, vary, target_bend_angle=TARGET, scheduler="inprocess", progress=False)
    long_ds = sweep(long, vary, target_bend_angle=TARGET, scheduler="inprocess", progress=False)
    (r_short,) = tradeoff.recommend(short_ds, "layers_film_thickness", within=3.0)
    (r_long,) = tradeoff.recommend(long_ds, "layers_film_thickness", within=3.0)
    assert r_short["recommended"] is not None
    assert r_long["recommended"] == r_short["recommended"]
    assert r_long["blocked_force_at_target"] == pytest.approx(r_short["blocked_force_at_target"], rel=1e-12)
    assert r_long["peak_blocked_force"] > 1.05 * r_short["peak_blocked_force"]
    # closed form at the recommended thickness
    sc = apply_overrides(base, {"layers[film].thickness": f"{r_short['recommended'] * 1e6!r} um"})
    ds = actsim.simulate(sc)
    t_star = r_short["time_to_target"]
    ei = float(np.interp(t_star, ds["time"].values, ds["bending_stiffness"].values))
    L = sc.strip.free_length
    assert r_short["blocked_force_at_target"] == pytest.approx(3 * ei * TARGET / (2 * L * L), rel=1e-3)
    # the Pareto front is built on the same force by default, and labelled so
    pf = tradeoff.pareto_front(short_ds)
    assert pf["force"] == "blocked_force_at_target" and pf["force_label"] == "blocked force at the target angle"
    assert all("blocked_force_at_target" in row for row in pf["table"])


def test_format_quantity_readable_units():
    # unit conversions (SI definitions, BIPM SI Brochure, 9th ed., 2019): 1 um = 1e-6 m, 1 mW/cm^2 = 10 W/m^2
    assert tradeoff.format_quantity(7.5e-05, "m") == "75 um"
    assert tradeoff.format_quantity(365e-9, "m") == "365 nm"
    assert tradeoff.format_quantity(50.0, "W/m^2") == "5 mW/cm^2"
    assert tradeoff.format_quantity(1.241e-3, "N") == "1.241 mN"
    assert tradeoff.format_quantity(3.759e-7, "N") == "0.3759 uN"
    assert tradeoff.format_quantity(math.radians(30), "rad") == "30 deg"
    assert tradeoff.format_quantity("365 nm LED", "") == "365 nm LED"


def test_cli_pareto_front_is_marked_in_the_ranked_table(tmp_path, capsys):
    # 16 thicknesses that all reach 10 deg: a thicker film is slower but pushes harder at the target angle
    # (F = 3 EI theta / (2 L^2) with EI growing as h^3), so every design is on the front (Deb 2001, ch. 2).
    # A sweep of at most 20 designs prints every design, ranked, each on the front marked P.
    import re

    from actsim.cli import main

    scen = tmp_path / "s.toml"
    scen.write_text(_text())
    rc = main(["sweep", str(scen), "--vary", "layers[film].thickness=lin(8 um, 20 um, 16)", "--target-angle", "10 deg",
               "--pareto", "--scheduler", "inprocess", "--no-progress", "-o", str(tmp_path / "o")])
    out = capsys.readouterr().out
    assert rc == 0
    import json

    pf = json.loads((tmp_path / "o" / "pareto.json").read_text())
    n = pf["n_on_front"]
    assert n == 16
    rows = [line for line in out.splitlines() if re.match(r"^\s+\d+\*?P\s+\d+(\.\d+)? um\s", line)]
    assert len(rows) == 16
    assert f"P on the Pareto front of time to target vs force ({n} designs)" in " ".join(out.split())
    # fastest first: the thinnest film (8 um) wins
    assert re.match(r"^\s+1\*P\s+8 um\s", rows[0])


def test_cli_heatmap_refused_when_it_cannot_be_drawn(tmp_path, capsys):
    from actsim.cli import main

    scen = tmp_path / "s.toml"
    scen.write_text(_text())
    one = ["sweep", str(scen), "--vary", "layers[film].thickness=lin(8 um, 20 um, 3)", "--target-angle", "10 deg",
           "--scheduler", "inprocess", "--no-progress", "-o", str(tmp_path / "o")]
    two = one + ["--vary", "protocol[0].light.lamp=20 mW/cm^2,80 mW/cm^2"]
    for args, expect in ((one + ["--heatmap", "peak_temperature"], "needs two or more swept fields"),
                         (two + ["--heatmap", "time_to_targt"], "did you mean 'time_to_target'")):
        assert main(args) == 2
        err = capsys.readouterr().err.strip()
        assert err.count("\n") == 0 and expect in err, err
        if args[-1] == "time_to_targt":
            assert "valid: final_bend_angle" in err and "efficiency" in err
    assert not (tmp_path / "o" / "sweep.nc").exists()  # refused before running
    assert main(two + ["--heatmap", "peak_blocked_force"]) == 0
    assert (tmp_path / "o" / "figures" / "heatmap_peak_blocked_force.png").is_file()


def test_resume_hash_covers_data_file_contents(tmp_path):
    # A resumed sweep must not mix chunks computed with an old spectrum and chunks computed with an edited one:
    # the definition hash includes the bytes of every file named by `file = "..."` (resolved against the
    # scenario's folder). Reference: SHA-256 of the file bytes (hashlib, FIPS 180-4).
    import hashlib
    import shutil

    from actsim.scenario import load_scenario
    from actsim.study.plan import data_file_digests, plan_sweep

    root = Path(__file__).resolve().parents[1] / "scenarios"
    shutil.copy(root / "microvalve_spectrum.toml", tmp_path / "valve.toml")
    shutil.copytree(root / "data", tmp_path / "data")
    vary = {"layers[1].thickness": "80 um,100 um"}
    sc = load_scenario(tmp_path / "valve.toml")
    digests = data_file_digests(sc)
    spec = tmp_path / "data" / "valve_film_absorptivity.csv"
    assert set(digests) == {"data/valve_film_absorptivity.csv", "data/led_405_spectrum.csv"}
    assert digests["data/valve_film_absorptivity.csv"] == hashlib.sha256(spec.read_bytes()).hexdigest()
    h1 = plan_sweep(sc, vary).hash
    assert plan_sweep(load_scenario(tmp_path / "valve.toml"), vary).hash == h1  # same files: resumable
    # edit one absorptivity value; the scenario text is unchanged
    text = spec.read_text()
    lines = text.splitlines()
    i = next(k for k, line in enumerate(lines) if line.startswith("310,"))
    lines[i] = "310,1200.0"
    spec.write_text("\n".join(lines) + "\n")
    sc2 = load_scenario(tmp_path / "valve.toml")
    assert sc2.text == sc.text
    assert plan_sweep(sc2, vary).hash != h1
    # and a store written before the edit is refused instead of being resumed
    store = tmp_path / "chunks"
    spec.write_text(text)
    sweep(load_scenario(tmp_path / "valve.toml"), vary, store=store, scheduler="inprocess", progress=False)
    spec.write_text("\n".join(lines) + "\n")
    with pytest.raises(ActsimInputError, match="different sweep.*data file"):
        sweep(load_scenario(tmp_path / "valve.toml"), vary, store=store, scheduler="inprocess", progress=False)


def test_default_runs_in_this_process_on_the_threads_given(base, monkeypatch):
    """No dask cluster unless asked: the chunks run here, numba on --threads cores (restored afterwards)."""
    import numba

    from actsim.study import execute

    def no_cluster(n):
        raise AssertionError("a local dask cluster was started without --scheduler local")

    monkeypatch.setattr(execute, "_local_cluster", no_cluster)
    seen = []
    real = execute.run_chunk

    def spy(*args):
        seen.append(args[-1])
        return real(*args)

    monkeypatch.setattr(execute, "run_chunk", spy)
    before = numba.get_num_threads()
    ds = sweep(base, {"layers[film].thickness": "lin(8 um, 30 um, 4)"}, target_bend_angle=TARGET, chunk_size=2,
               progress=False, threads=1)
    assert seen == [1, 1] and numba.get_num_threads() == before
    assert (ds["status"].values == 0).all()
    with pytest.raises(ActsimInputError, match="threads: 0 is outside the allowed range"):
        sweep(base, {"layers[film].thickness": "8 um,9 um"}, progress=False, threads=0)


def test_units_survive_several_chunks(local, tmp_path):
    # 8 designs in chunks of 3: every metric keeps the unit and meaning of its table entry after the chunks join
    from actsim.study.store import METRIC_INFO

    for name, (unit, long_name) in METRIC_INFO.items():
        if name in local:
            assert local[name].attrs["units"] == unit, name
            assert local[name].attrs["long_name"].startswith(long_name.split(" (")[0]), name
    scen = tmp_path / "s.toml"
    scen.write_text(_text())
    r = _cli(["sweep", str(scen), "--vary", "layers[film].thickness=lin(8 um, 30 um, 5)", "--chunk-size", "2",
              "--scheduler", "inprocess", "--no-progress", "-o", str(tmp_path / "out")])
    assert r.returncode == 0, r.stderr
    header = (tmp_path / "out" / "metrics.csv").read_text().splitlines()[0]
    assert "[]" not in header and "[rad]" in header and "[N]" in header
    ds = xr.load_dataset(tmp_path / "out" / "sweep.nc")
    assert ds["peak_bend_angle"].attrs["units"] == "rad"
