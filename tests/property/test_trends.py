"""Property: in the optics-limited regime the time to a fixed small bend angle falls as irradiance rises.

With no thermal back reaction and no heat, first-order photokinetics make the state a function of
the dose only (Bunsen-Roscoe reciprocity law: Bunsen, R. W. and Roscoe, H. E., "Photochemische
Untersuchungen", Annalen der Physik und Chemie, 1855-1862 -- citation from memory): t(I) * I is constant, up to the time-step and output-interpolation error, and t falls
strictly as I rises.
"""

from __future__ import annotations

import math

from hypothesis import given, settings
from hypothesis import strategies as st

from actsim.scenario import apply_overrides, parse_scenario
from actsim.solver import build_problem
from actsim.study.batch import run_batch

import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
from conftest import film_toml  # noqa: E402

BASE = parse_scenario(film_toml(cells=12, substrate={"modulus": "2 GPa", "thickness": "30 um", "cells": 4},
                                duration="20 s", output="0.05 s", step="0.01 s"))
ANGLE = math.radians(3)


@settings(max_examples=15, deadline=None)
@given(st.floats(10.0, 80.0), st.floats(1.05, 3.0))
def test_time_to_small_angle_falls_with_intensity(irr_mw, factor):
    scs = [apply_overrides(BASE, {"protocol[0].light.lamp": f"{v!r} mW/cm^2"}) for v in (irr_mw, irr_mw * factor)]
    r = run_batch([build_problem(s) for s in scs], free_length=BASE.strip.free_length, width=BASE.strip.width,
                  target_bend_angle=ANGLE)
    t_lo, t_hi = r["metrics"]["time_to_target"]
    assert t_hi < t_lo
    # reciprocity within 3 % (time step 0.01 s, output interpolation every 0.05 s): common practice, no source
    assert abs(t_hi * factor / t_lo - 1.0) < 0.03
