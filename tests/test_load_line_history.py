"""Time-resolved load lines against the small-deflection cantilever formulas."""

from __future__ import annotations

import numpy as np
import pytest

import actsim
from actsim.load_line_history import load_line_history

from conftest import film_toml


def test_small_deflection_load_lines_over_time():
    # Small deflection (Gere and Timoshenko, Mechanics of Materials, cantilever formulas): a uniformly curved
    # cantilever pushes its tip with 3 EI kappa / (2 L) when blocked, the force falls linearly to zero at the
    # free travel kappa L^2 / 2, and the work it can do is their half-product, 3 EI kappa^2 L / 8.
    sc = actsim.scenario.parse_scenario(film_toml(photo_strain=-1e-4, duration="10 s", output="1 s", step="0.1 s",
                                                  substrate={"modulus": "3 GPa", "thickness": "50 um"}))
    ds = actsim.simulate(sc)
    h = load_line_history(ds, n_times=6, n=5)
    assert h.sizes["time"] >= 6
    L = sc.strip.free_length
    for t in h.time.values[1:]:
        i = int(np.argmin(np.abs(ds.time.values - t)))
        k = float(ds.free_curvature[i])
        ei = float(ds.bending_stiffness[i])
        assert k * L < 0.02
        row = h.sel(time=t)
        # The small-deflection formulas leave out terms of relative size O((kappa L)^2) (geometric nonlinearity of
        # the elastica); measured 1.9e-7 (force) and 2.1e-7 (work) at kappa L = 6.2e-3, i.e. 0.005 (kappa L)^2.
        tol = 0.02 * (k * L) ** 2 + 1e-9
        assert float(row.force[0]) == pytest.approx(1.5 * ei * k / L, rel=tol)
        assert float(row.work) == pytest.approx(3 * ei * k**2 * L / 8, rel=tol)
    assert h.force.attrs["units"] == "N" and h.work.attrs["units"] == "J"
