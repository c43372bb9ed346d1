"""Temperature laws of the material-state and photoreaction stages: glass transition, DMA table, Arrhenius."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.constants import R
from scipy.interpolate import interp1d

from actsim import kinetics, material
from actsim.errors import ActsimInputError


def test_arrhenius_ratio_and_gas_constant():
    A, Ea = 1.0e9, 80e3
    T1, T2 = 300.0, 330.0
    k1 = kinetics.arrhenius_rate(temperature=T1, pre_factor=A, activation_energy=Ea)
    k2 = kinetics.arrhenius_rate(temperature=T2, pre_factor=A, activation_energy=Ea)
    # [Arr]: k2/k1 = exp(-Ea/R (1/T2 - 1/T1))
    assert k2 / k1 == pytest.approx(math.exp(-Ea / R * (1 / T2 - 1 / T1)), rel=1e-13)
    assert R == pytest.approx(8.314462618, rel=1e-10)  # CODATA 2018 exact value of R (from memory)
    assert kinetics.arrhenius_rate_nb(T2, A, Ea) == pytest.approx(k2, rel=1e-14)
    arr = kinetics.arrhenius_rate(temperature=np.array([T1, T2]), pre_factor=A, activation_energy=Ea)
    np.testing.assert_allclose(arr, [k1, k2], rtol=1e-15)
    with pytest.raises(ActsimInputError, match="^temperature"):
        kinetics.arrhenius_rate(temperature=-5.0, pre_factor=A, activation_energy=Ea)


def test_glass_transition_step_limits_and_midpoint():
    Eg, Er, Tg, w = 2.5e9, 3.0e6, 340.0, 5.0
    kw = dict(glassy_modulus=Eg, rubbery_modulus=Er, glass_transition_temperature=Tg, transition_width=w)
    # Properties of the chosen smooth step in ln E (common practice, no source): plateaus far from Tg,
    # geometric mean at Tg, symmetric in ln E about Tg, monotone.
    assert material.glass_transition_modulus(temperature=Tg - 40 * w, **kw) == pytest.approx(Eg, rel=1e-12)
    assert material.glass_transition_modulus(temperature=Tg + 40 * w, **kw) == pytest.approx(Er, rel=1e-12)
    assert material.glass_transition_modulus(temperature=Tg, **kw) == pytest.approx(math.sqrt(Eg * Er), rel=1e-14)
    lo = material.glass_transition_modulus(temperature=Tg - 7.0, **kw)
    hi = material.glass_transition_modulus(temperature=Tg + 7.0, **kw)
    assert lo * hi == pytest.approx(Eg * Er, rel=1e-12)
    T = np.linspace(250, 450, 201)
    E = material.glass_transition_modulus(temperature=T, **kw)
    assert np.all(np.diff(E) < 0)
    # the logistic form quoted in the docstring
    np.testing.assert_allclose(np.log(E), np.log(Er) + (np.log(Eg) - np.log(Er)) / (1 + np.exp((T - Tg) / w)), rtol=1e-14)
    assert material.glass_transition_modulus_nb(Tg + 3.0, Eg, Er, Tg, w) == pytest.approx(
        material.glass_transition_modulus(temperature=Tg + 3.0, **kw), rel=1e-14
    )


@pytest.mark.parametrize("width", [0.0, -2.0])
def test_glass_transition_width_must_be_positive(width):
    with pytest.raises(ActsimInputError) as info:
        material.glass_transition_modulus(
            temperature=300.0, glassy_modulus=2e9, rubbery_modulus=2e6, glass_transition_temperature=330.0,
            transition_width=width,
        )
    msg = str(info.value)
    assert msg.startswith("transition_width") and "\n" not in msg and "K" in msg


def test_tabulated_modulus_log_linear_and_clamped():
    table_T = np.array([280.0, 310.0, 330.0, 350.0, 380.0])
    table_E = np.array([2.8e9, 2.2e9, 4.0e8, 2.0e7, 1.2e7])
    T = np.linspace(260, 400, 57)
    E = material.tabulated_modulus(temperature=T, table_T=table_T, table_E=table_E)
    # reference library: scipy interp1d on ln E, constant beyond the ends
    ref = np.exp(interp1d(table_T, np.log(table_E), bounds_error=False, fill_value=(np.log(2.8e9), np.log(1.2e7)))(T))
    np.testing.assert_allclose(E, ref, rtol=1e-13)
    np.testing.assert_allclose(material.tabulated_modulus(temperature=table_T, table_T=table_T, table_E=table_E), table_E, rtol=1e-14)
    # midway between two points: geometric mean
    assert material.tabulated_modulus(temperature=340.0, table_T=table_T, table_E=table_E) == pytest.approx(
        math.sqrt(4.0e8 * 2.0e7), rel=1e-13
    )
    log_E = np.log(table_E)
    for Ti in (250.0, 280.0, 300.0, 349.0, 380.0, 500.0):
        assert material.tabulated_modulus_nb(Ti, table_T, log_E) == pytest.approx(
            material.tabulated_modulus(temperature=Ti, table_T=table_T, table_E=table_E), rel=1e-13
        )
    with pytest.raises(ActsimInputError, match=r"^table_T\[2\]"):
        material.tabulated_modulus(temperature=300.0, table_T=[280.0, 310.0, 305.0], table_E=[1e9, 1e8, 1e7])
    with pytest.raises(ActsimInputError, match="^table_E"):
        material.tabulated_modulus(temperature=300.0, table_T=[280.0, 310.0], table_E=[1e9, -1e8])


