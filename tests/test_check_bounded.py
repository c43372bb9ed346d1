"""``actsim check`` stays bounded: a strip that curls past a full turn, a time or step limit.

The large-deflection solves (blocked force at every output time, load lines) share one
:class:`actsim.elastica.SolveBudget`; a bend past a full turn is outside the elastica's range (no
contact of the strip with itself) and is not solved. Either way the check run ends with a
"not assessed" row whose reason is in a user's words, never an error naming a solver parameter.
"""

from __future__ import annotations

import json
import math
import time

import numpy as np
import pytest
import xarray as xr

import actsim.elastica as el
from actsim.checks.actuation import ELASTICA_CHECK
from actsim.checks.run import run_checks
from actsim.cli import main
from actsim.elastica import ElasticaLimitError, SolveBudget, bend_beyond_range, circular_arc_tip, load_line
from actsim.errors import ActsimInputError
from actsim.scenario import parse_scenario

from conftest import film_toml

# A 10 um film on a 10 um substrate, 10 mm free length: the free bend grows to about 941 degrees
# in 10 s (2.6 turns). The operator sees 0.1 % of the strip's irradiance, so the light checks pass
# (UV-A mean 0.5 W/m^2 < 10 W/m^2, actinic dose 1.6 J/m^2 < 30 J/m^2 over 8 h; ICNIRP 2004 /
# IEC 62471:2006, from memory) and the exit status depends on the large-deflection part alone.
CURLING = film_toml(substrate={"modulus": "1 GPa", "thickness": "10 um"}, thickness="10 um", cells=10,
                    photo_strain=-0.0224, duration="10 s", output="1 s") + \
    "\n[checks]\n\n[safety]\nexposure_distance_factor = 0.001\n"

#: Words of the solver's own interface that must never reach a check's reason.
INTERNAL = ("spontaneous_curvature", "blocked state", "bending_stiffness", "continuation", "lam", "Traceback")

L_STRIP = 0.01
EI_STRIP = 1e-6


@pytest.fixture(scope="module")
def curling(tmp_path_factory):
    d = tmp_path_factory.mktemp("curl")
    p = d / "curl.toml"
    p.write_text(CURLING)
    return p


def _no_internal_words(text):
    for w in INTERNAL:
        assert f" {w} " not in f" {text} ".replace(":", " ").replace("(", " ").replace(")", " "), w


def test_full_turn_is_the_closed_circle():
    # Pure bending gives a circular arc (Timoshenko and Gere, Theory of Elastic Stability, 1961):
    # at kappa L = 2 pi the tip is back on the clamp, x = sin(kL)/k = 0, y = (1 - cos kL)/k = 0.
    x, y, a = circular_arc_tip(curvature=2 * math.pi / L_STRIP, length=L_STRIP)
    assert abs(x) < 1e-15 and abs(y) < 1e-15 and a == pytest.approx(el.FULL_TURN, rel=1e-15)
    k = el.FULL_TURN / L_STRIP
    assert not bend_beyond_range(curvature=k * (1 - 1e-12), length=L_STRIP)
    assert bend_beyond_range(curvature=-k * (1 + 1e-9), length=L_STRIP)


def test_cli_past_a_full_turn_is_not_assessed_quickly(curling, tmp_path, capsys, monkeypatch):
    # Project rule (issue 12): no solve past a full turn, a "not assessed" row in a user's words, exit 0
    # (every assessed check passes). Before the fix this run took minutes and exited 2 naming
    # "spontaneous_curvature". The time bound is a hang guard, not a speed claim.
    calls = []
    real = el._blocked_solution

    def spy(prof, rotation):
        calls.append(abs(prof.total))
        return real(prof, rotation)

    monkeypatch.setattr(el, "_blocked_solution", spy)
    out = tmp_path / "out"
    t0 = time.monotonic()
    status = main(["check", str(curling), "-o", str(out), "--no-figures"])
    elapsed = time.monotonic() - t0
    cap = capsys.readouterr()
    assert status == 0, cap.err
    assert elapsed < 60.0
    assert calls and max(calls) <= 2 * math.pi  # nothing past a full turn was attempted
    assert "not assessed" in cap.out and ELASTICA_CHECK in cap.out
    _no_internal_words(cap.out + cap.err)
    rec = [r for r in json.loads((out / "checks.json").read_text())["checks"] if r["check"] == ELASTICA_CHECK]
    assert len(rec) == 1 and rec[0]["status"] == "not assessed"
    assert "past a full turn (360 degrees)" in rec[0]["note"] and "\n" not in rec[0]["note"]
    _no_internal_words(rec[0]["note"])
    with xr.open_dataset(out / "load_lines.nc") as lines:
        work = lines["work"].values
        assert np.isnan(work).any() and np.isfinite(work).any()  # early times solved, late ones not
        assert "past a full turn" in lines.attrs["not_solved"]


@pytest.mark.parametrize("value", ["0", "-5", "nan", "soon"])
def test_bad_time_limit_refused_before_any_work(curling, tmp_path, capsys, value):
    # Project rule: bad input -> one line naming the option, exit 2, nothing written.
    out = tmp_path / "out"
    status = main(["check", str(curling), "-o", str(out), "--elastica-time-limit", value])
    err = capsys.readouterr().err
    assert status == 2
    assert err.count("\n") == 1 and "--elastica-time-limit" in err
    assert not out.exists()


def test_step_limit_gives_not_assessed_in_user_words():
    # A 60-degree bend (well inside the range) with a budget of 3 solver steps: the blocked forces
    # stop, the check run goes on, and the row says which limit stopped it. (Project rule.)
    sc = parse_scenario(film_toml(duration="3 s", output="1 s"))
    import actsim

    ds = actsim.simulate(sc)
    budget = SolveBudget(max_solves=3)
    results, details = run_checks(sc, ds, elastica_budget=budget)
    row = [r for r in results if r.check == ELASTICA_CHECK]
    assert len(row) == 1 and row[0].passed is None
    assert "step limit" in row[0].reason
    _no_internal_words(row[0].reason)
    assert budget.solves == 4  # the fourth solve was refused and nothing after it started


def test_time_limit_stops_a_solve_from_inside():
    # The wall-time limit is checked inside the BVP iteration: a load line past the fold
    # (kappa L = 6 rad, a long continuation) with a 0.05 s limit stops within a fraction of a second.
    budget = SolveBudget(time_limit=0.05)
    t0 = time.monotonic()
    with pytest.raises(ElasticaLimitError, match="did not finish within 0.05 s"):
        load_line(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=6.0 / L_STRIP, budget=budget)
    assert time.monotonic() - t0 < 2.0
    # every later solve with the same budget is refused at once
    with pytest.raises(ElasticaLimitError):
        el.blocked_tip_force(length=L_STRIP, bending_stiffness=EI_STRIP, spontaneous_curvature=1.0, budget=budget)


@pytest.mark.parametrize("kw", [dict(time_limit=0.0), dict(time_limit=float("nan")), dict(time_limit="x"),
                                dict(max_solves=0), dict(max_solves=2.5)])
def test_bad_budget_one_line(kw):
    with pytest.raises(ActsimInputError) as exc:
        SolveBudget(**kw)
    assert "\n" not in str(exc.value) and str(exc.value).split(":")[0] in ("time_limit", "max_solves")
