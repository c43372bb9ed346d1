"""Tests of actsim.calibrate.dma: round trips through the smooth-step model, tables, bad input."""

import numpy as np
import pytest

from actsim.calibrate.dma import dma_table, fit_dma, smooth_step_log_modulus, smooth_step_modulus
from actsim.errors import ActsimInputError

TRUE = dict(glassy_modulus=2.0e9, rubbery_modulus=5.0e6, glass_transition=340.0, width=6.0)  # invented film
NAMES = ("glassy_modulus", "rubbery_modulus", "glass_transition", "width")
T = np.linspace(280.0, 420.0, 71)


def test_smooth_step_limits_and_midpoint():
    # Closed form of the logistic step: E(Tg) = (Eg + Er)/2; plateaus far away.
    assert smooth_step_modulus(340.0, **{k: v for k, v in TRUE.items() if k != "glass_transition"},
                               glass_transition=340.0) == pytest.approx(0.5 * (2e9 + 5e6))
    assert smooth_step_modulus(0.0, **TRUE) == pytest.approx(2e9, rel=1e-12)
    assert smooth_step_modulus(1e4, **TRUE) == pytest.approx(5e6, rel=1e-12)
    # log step: geometric mean at Tg (closed form)
    assert smooth_step_log_modulus(340.0, **TRUE) == pytest.approx(np.sqrt(2e9 * 5e6), rel=1e-12)


def test_log_step_matches_thermal_module():
    # The simulator's glass-transition model (actsim.thermal) must mean the same parameters.
    from actsim.material import glass_transition_modulus

    ref = glass_transition_modulus(temperature=T, glassy_modulus=2e9, rubbery_modulus=5e6,
                                   glass_transition_temperature=340.0, transition_width=6.0)
    np.testing.assert_allclose(smooth_step_log_modulus(T, **TRUE), ref, rtol=1e-12)


@pytest.mark.parametrize("step, model", [("log", smooth_step_log_modulus), ("linear", smooth_step_modulus)])
def test_noiseless_round_trip(step, model):
    # Round trip (simulate -> fit -> recover): exact data must give the parameters back to solver tolerance.
    res = fit_dma((T, model(T, **TRUE)), step=step)
    for n in NAMES:
        assert res.params.value(n) == pytest.approx(TRUE[n], rel=1e-8)
    assert res.params.success and res.params.warnings == []


def test_noisy_fit_within_confidence_intervals():
    # Lognormal scatter of 0.01 decade (about 2.3 %), one fixed seed; truth inside the 95 % CIs
    # (Bates and Watts, Nonlinear Regression Analysis and Its Applications, Wiley, 1988: linearised intervals).
    rng = np.random.default_rng(12345)
    E = smooth_step_log_modulus(T, **TRUE) * 10.0 ** rng.normal(0.0, 0.01, T.size)
    res = fit_dma((T, E))
    for n in NAMES:
        lo, hi = res.params.ci(n)
        assert lo <= TRUE[n] <= hi, (n, lo, TRUE[n], hi)
    assert res.params.residual_std == pytest.approx(0.01, rel=0.25)
    # asymmetric moduli intervals: images of the log10 intervals
    lo, hi = res.params.ci("glassy_modulus")
    l10 = res.fit_space.ci("log10_glassy_modulus")
    assert (lo, hi) == pytest.approx((10 ** l10[0], 10 ** l10[1]))


def test_noisy_fit_coverage_over_seeds():
    # Coverage of the 95 % CIs over 60 seeded sweeps; accepted 0.85-1.0 per parameter (binomial spread of 60
    # trials at 0.95 is about +-0.03; common practice, no source for the band).
    hits = np.zeros(4)
    trials = 60
    for seed in range(trials):
        rng = np.random.default_rng(1000 + seed)
        E = smooth_step_log_modulus(T, **TRUE) * 10.0 ** rng.normal(0.0, 0.02, T.size)
        p = fit_dma((T, E)).params
        hits += [p.ci(n)[0] <= TRUE[n] <= p.ci(n)[1] for n in NAMES]
    cov = hits / trials
    print("DMA 95 % CI coverage over", trials, "trials:", {n: round(float(c), 3) for n, c in zip(NAMES, cov)})
    assert np.all(cov >= 0.85)


def test_fit_from_file_with_units(tmp_path):
    f = tmp_path / "dma.csv"
    E = smooth_step_log_modulus(T, **TRUE)
    lines = ["# synthetic DMA sweep of an invented film", "temperature [degC], storage modulus [MPa], tan delta [1]"]
    lines += [f"{t - 273.15:.6f}, {e / 1e6:.10g}, 0.1" for t, e in zip(T, E)]
    f.write_text("\n".join(lines) + "\n")
    res = fit_dma(f)
    assert res.synthetic
    assert res.glass_transition == pytest.approx(340.0, abs=1e-4)
    assert res.glassy_modulus == pytest.approx(2e9, rel=1e-6)
    assert "glass_transition" in res.to_table()
    tab = dma_table(f)
    # tabulated E(T), log-linear interpolation: exact at the nodes
    assert tab.modulus_at(T[10]) == pytest.approx(E[10], rel=1e-8)
    with pytest.raises(ActsimInputError, match="outside the DMA table range"):
        tab.modulus_at(500.0)


def test_table_sorts_and_averages_repeats():
    tab = dma_table(([300.0, 280.0, 300.0], [1e9, 2e9, 4e9]))
    np.testing.assert_allclose(tab.temperature, [280.0, 300.0])
    np.testing.assert_allclose(tab.storage_modulus, [2e9, 2e9])  # geometric mean of 1e9 and 4e9
    assert tab.notes


def test_bad_input():
    with pytest.raises(ActsimInputError, match="not positive"):
        fit_dma((T, np.where(T > 400, -1.0, 1e9)))
    with pytest.raises(ActsimInputError, match="at least 6"):
        fit_dma((T[:4], np.ones(4) * 1e9))
    with pytest.raises(ActsimInputError, match="width"):
        smooth_step_modulus(300.0, glassy_modulus=1e9, rubbery_modulus=1e6, glass_transition=300.0, width=0.0)
    with pytest.raises(ActsimInputError, match="step"):
        fit_dma((T, smooth_step_log_modulus(T, **TRUE)), step="cubic")
