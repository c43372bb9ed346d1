"""The batch kernel against the single-design path, and its metrics against the Dataset of simulate().

The reference for every check here is the single-design path of the project
(actsim.solver.run_kernel / actsim.simulate / actsim.metrics.summarize): the batch
kernel calls the same numba function per design, so the raw outputs must agree
bitwise, and the metrics use the same formulas (blocked tip force 3 E I kappa / (2 L),
Gere and Timoshenko, Mechanics of Materials, 4th ed., 1997, App. G), to rtol 1e-14.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import actsim
from actsim.errors import ActsimInputError
from actsim.metrics import summarize
from actsim.scenario import apply_overrides, parse_scenario
from actsim.solver import build_problem, run_kernel
from actsim.study.batch import group_problems, run_batch, run_group

from conftest import film_toml

TARGET = math.radians(10)


def _base(heat=False, cells=12):
    text = film_toml(cells=cells, substrate={"modulus": "2 GPa", "thickness": "30 um", "cells": 4},
                     duration="6 s", output="0.5 s", step="0.1 s")
    if heat:
        text += "\n[heat]\nambient_temperature = \"20 degC\"\n"
    return parse_scenario(text)


@pytest.fixture(scope="module")
def designs():
    out = []
    for heat in (False, True):
        base = _base(heat)
        for irr, h in (("10 mW/cm^2", "20 um"), ("60 mW/cm^2", "12 um"), ("150 mW/cm^2", "30 um")):
            out.append(apply_overrides(base, {"protocol[0].light.lamp": irr, "layers[film].thickness": h}))
    return out


def test_raw_outputs_bitwise_equal_single_kernel(designs):
    problems = [build_problem(s) for s in designs]
    o = run_group(problems, full=True)
    assert (o["bad"] == -1).all()
    for k, p in enumerate(problems):
        ref = run_kernel(p)
        for name, arr in ref._asdict().items():
            full = getattr(o["out"], name)[k]
            if arr.shape[0] == 1 and full.shape[0] > 1:  # a field the single run does not keep: its last row
                full = full[-1:]
            assert np.array_equal(full, arr), name  # bitwise


def test_metrics_equal_simulate(designs):
    problems = [build_problem(s) for s in designs]
    res = run_batch(problems, free_length=[s.strip.free_length for s in designs],
                    width=[s.strip.width for s in designs], target_bend_angle=TARGET,
                    heat=[s.heat.enabled for s in designs])
    m = res["metrics"]
    for k, sc in enumerate(designs):
        ds = actsim.simulate(sc)
        ref = summarize(ds, target_bend_angle=TARGET)
        for key in ("final_bend_angle", "peak_bend_angle", "time_of_peak_bend", "peak_blocked_force",
                    "peak_blocked_moment", "peak_tip_deflection", "optical_dose", "time_to_target",
                    "blocked_force_at_target"):
            np.testing.assert_allclose(m[key][k], ref[key], rtol=1e-14, atol=0, err_msg=key)
        if sc.heat.enabled:
            np.testing.assert_allclose(m["peak_temperature"][k], ref["peak_temperature"], rtol=1e-14)
        else:
            assert np.isnan(m["peak_temperature"][k])
        # efficiency by its stated definition, recomputed from the Dataset
        f = ds["blocked_force"].values
        i = int(np.argmax(np.abs(f)))
        kf = ds["free_curvature"].values[i]
        L, b = sc.strip.free_length, sc.strip.width
        y_free = (1 - math.cos(kf * L)) / kf
        work = 0.5 * abs(f[i]) * abs(y_free)
        eff = work / (ds["optical_dose"].values[i] * L * b)
        np.testing.assert_allclose(m["mechanical_work"][k], work, rtol=1e-12)
        np.testing.assert_allclose(m["efficiency"][k], eff, rtol=1e-12)


def test_groups_by_shape_and_keeps_order():
    a = _base(cells=8)
    b = _base(cells=12)
    scs = [a, b, apply_overrides(a, {"protocol[0].light.lamp": "20 mW/cm^2"}), b]
    problems = [build_problem(s) for s in scs]
    assert group_problems(problems) == [[0, 2], [1, 3]]
    res = run_batch(problems, free_length=0.01, width=0.002)
    for k, sc in enumerate(scs):
        ref = summarize(actsim.simulate(sc))
        assert res["metrics"]["final_bend_angle"][k] == pytest.approx(ref["final_bend_angle"], rel=1e-14)


def test_series_need_common_times():
    a = _base()
    b = apply_overrides(a, {"protocol[0].duration": "4 s"})
    with pytest.raises(ActsimInputError, match="same output times"):
        run_batch([build_problem(a), build_problem(b)], free_length=0.01, width=0.002, keep_series=True)
