"""Inverse design recovers the optimum of a constructed problem.

Construction: with no thermal back reaction and no heat, a film's time to a fixed
bend angle falls monotonically as irradiance rises (more photons per second, first-order
photokinetics; Bunsen-Roscoe reciprocity: the state depends on the dose only). So the
least irradiance that reaches the angle within t* = t(I*) is I* itself: the optimiser
must return I* and report the time constraint as active with zero slack.
"""

from __future__ import annotations

import math

import pytest

import actsim
from actsim.errors import ActsimInputError
from actsim.metrics import summarize
from actsim.scenario import apply_overrides, parse_scenario
from actsim.study.inverse import format_inverse, inverse_design

from conftest import film_toml

TARGET = math.radians(20)


@pytest.fixture(scope="module")
def base():
    return parse_scenario(film_toml(cells=12, substrate={"modulus": "2 GPa", "thickness": "30 um", "cells": 4},
                                    duration="10 s", output="0.25 s", step="0.05 s"))


def test_recovers_known_optimum(base):
    star = apply_overrides(base, {"protocol[0].light.lamp": "20 mW/cm^2"})
    t_star = summarize(actsim.simulate(star), target_bend_angle=TARGET)["time_to_target"]
    res = inverse_design(base, {"protocol[0].light.lamp": ("1 mW/cm^2", "200 mW/cm^2")}, target_bend_angle=TARGET,
                         within=t_star, seed=1, maxiter=30)
    assert res["optimum_si"]["protocol[0].light.lamp"] == pytest.approx(200.0, rel=1e-4)  # 20 mW/cm^2 in W/m^2
    assert res["feasible"]
    (c,) = res["constraints"]
    assert c["name"] == "time_to_target" and c["active"] and c["slack"] == pytest.approx(0.0, abs=1e-3)
    # objective: incident optical power on the strip area, I* L b
    assert res["objective_value"] == pytest.approx(200.0 * base.strip.free_length * base.strip.width, rel=1e-4)
    assert "active" in format_inverse(res)


def test_force_objective_with_two_fields(base):
    res = inverse_design(base, {"protocol[0].light.lamp": "5 mW/cm^2..50 mW/cm^2",
                                "layers[film].thickness": "5 um..30 um"},
                         objective="force", target_bend_angle=TARGET, within=8.0, seed=2, maxiter=8, popsize=6)
    assert res["feasible"]
    assert res["metrics"]["time_to_target"] <= 8.0


def test_bad_inverse_input(base):
    with pytest.raises(ActsimInputError, match="needs a target"):
        inverse_design(base, {"protocol[0].light.lamp": ("1 mW/cm^2", "200 mW/cm^2")})
    with pytest.raises(ActsimInputError, match="no \\[heat\\]|models no heat"):
        inverse_design(base, {"protocol[0].light.lamp": ("1 mW/cm^2", "2 mW/cm^2")}, max_temperature=320.0)
    with pytest.raises(ActsimInputError, match="above the low bound"):
        inverse_design(base, {"protocol[0].light.lamp": ("5 mW/cm^2", "2 mW/cm^2")}, within=3.0, target_bend_angle=TARGET)
