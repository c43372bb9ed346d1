"""Patterned light along the strip: mask parsing, exact piecewise-arc shape, hinge fold."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

from actsim.errors import ActsimInputError
from actsim.patterned import mask_settings, piecewise_arc_shape, simulate_patterned
from actsim.scenario import parse_scenario
from actsim.solver import simulate

from conftest import film_toml


def _masked(mask_text, **kw):
    return parse_scenario(film_toml(duration="4 s", output="1 s", step="0.05 s", cells=20, **kw) + "\n[mask]\n" + mask_text)


def test_hinge_fold_closed_form():
    # A strip lit only over a 2 mm hinge (4..6 mm of a 10 mm strip) folds by the hinge's
    # curvature times its length, and the unlit parts stay straight. Closed form: two straight
    # segments joined by a circular arc (pure bending gives a circular arc, Timoshenko & Gere,
    # Theory of Elastic Stability, 2nd ed., 1961).
    sc = _masked('regions = [ { start = "4 mm", end = "6 mm", transmission = 1.0 } ]\n')
    ds = simulate_patterned(sc, n_points=101)
    k = simulate(sc)["curvature"].values  # uniformly lit strip, same protocol
    a, lh, b = 4e-3, 2e-3, 4e-3
    assert np.allclose(ds["tip_angle"].values, k * lh, rtol=1e-12, atol=0)
    th = k[-1] * lh
    assert th > 0.1  # the test means something: a visible fold
    x_tip = a + math.sin(th) / k[-1] + b * math.cos(th)
    y_tip = (1 - math.cos(th)) / k[-1] + b * math.sin(th)
    assert ds["tip_x"].values[-1] == pytest.approx(x_tip, rel=1e-12)
    assert ds["tip_y"].values[-1] == pytest.approx(y_tip, rel=1e-12)
    # unlit parts: zero curvature; two levels were solved (dark, lit)
    assert ds.sizes["level"] == 2
    s = ds["s"].values
    assert np.all(ds["curvature"].values[:, (s < 3.9e-3) | (s > 6.1e-3)] == 0.0)


def test_half_transmission_is_half_irradiance():
    # A region at transmission 0.5 bends like the uniform strip under half the irradiance
    # (the mask only scales the light; consistency with an independent full run).
    sc = _masked('regions = [ { start = "0 mm", end = "10 mm", transmission = 0.5 } ]\n')
    ds = simulate_patterned(sc, n_points=11)
    half = parse_scenario(film_toml(duration="4 s", output="1 s", step="0.05 s", cells=20, irradiance="25 mW/cm^2"))
    k_half = simulate(half)["curvature"].values
    assert np.allclose(ds["tip_angle"].values, k_half * 10e-3, rtol=1e-10)


def test_piecewise_arc_against_quadrature():
    # x(s) = int cos(theta), y(s) = int sin(theta) with theta(s) = int kappa: scipy quad reference.
    edges = np.array([0.0, 3e-3, 5e-3, 9e-3])
    kap = np.array([40.0, -300.0, 150.0])

    def theta(s):
        th, pos = 0.0, 0.0
        for e0, e1, k in zip(edges[:-1], edges[1:], kap):
            ell = min(max(s - e0, 0.0), e1 - e0)
            th += k * ell
        return th

    s = np.array([0.0, 1e-3, 3e-3, 4.2e-3, 7e-3, 9e-3])
    th, x, y = piecewise_arc_shape(s_edges=edges, curvature=kap, s=s)
    for si, ti, xi, yi in zip(s, th, x, y):
        pts = [p for p in edges if 0 < p < si]
        xq = quad(lambda u: math.cos(theta(u)), 0, si, points=pts or None, epsabs=1e-15, epsrel=1e-13)[0]
        yq = quad(lambda u: math.sin(theta(u)), 0, si, points=pts or None, epsabs=1e-15, epsrel=1e-13)[0]
        assert ti == pytest.approx(theta(si), abs=1e-13)
        assert xi == pytest.approx(xq, abs=1e-12)
        assert yi == pytest.approx(yq, abs=1e-12)


def test_zero_curvature_is_straight():
    th, x, y = piecewise_arc_shape(s_edges=[0.0, 1.0], curvature=[0.0], s=[0.0, 0.5, 1.0])
    assert np.allclose(x, [0.0, 0.5, 1.0]) and np.allclose(y, 0.0) and np.allclose(th, 0.0)


@pytest.mark.parametrize(
    "mask, match",
    [
        ('regions = [ { start = "4 mm", end = "6 mm" }, { start = "5 mm", end = "7 mm" } ]\n', "overlaps"),
        ('regions = [ { start = "4 mm", end = "12 mm" } ]\n', r"mask\.regions\[0\]\.end"),
        ('regions = [ { start = "4 mm", end = "6 mm", transmission = 1.5 } ]\n', "transmission"),
        ('regions = [ { start = "6 mm", end = "4 mm" } ]\n', "start"),
        ('regions = []\n', "non-empty"),
        ('regions = [ { start = "4 mm", end = "6 mm", transmision = 1 } ]\n', "did you mean"),
    ],
)
def test_bad_mask_one_line(mask, match):
    sc = _masked(mask)  # the scenario keeps [mask] as read; the job parses it
    with pytest.raises(ActsimInputError, match=match) as exc:
        mask_settings(sc)
    assert "\n" not in str(exc.value)
