"""The conversion cap (``materials.NAME.reactive_fraction``) against closed forms and a quadrature.

Model (actsim.kinetics): only a fraction x_max of the chromophore can react; the conversion x is the
fraction of all chromophore in the product form, the unreactive part 1 - x_max stays in the reactant
form and keeps absorbing:

    dx/dt = k_f (x_max - x) - k_b x,   k_f = ln10 sum phi_f eps10_A q   (per reactant molecule).

Solid cinnamate films stop near 50 % conversion (Egerton, Pitts and Reiser, Macromolecules 14 (1981)
95), hence the x_max = 0.5 used below.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

import actsim
from actsim.errors import ActsimInputError
from actsim.kinetics import photostationary_state
from actsim.optics import LN10
from actsim.scenario import parse_scenario
from actsim.spectra import photon_flux

from conftest import film_toml

Q0 = float(photon_flux(irradiance=500.0, wavelength=365e-9))  # 50 mW/cm^2 at 365 nm [mol m-2 s-1]


def capped(text, x_max, *, initial_conversion=None):
    """The film_toml text with ``reactive_fraction`` on the film material (and an initial conversion)."""
    text = text.replace("[materials.film]\n", f"[materials.film]\nreactive_fraction = {x_max}\n", 1)
    if initial_conversion is not None:
        text = text.replace('name = "film"\nmaterial = "film"\n',
                            f'name = "film"\nmaterial = "film"\ninitial_conversion = {initial_conversion}\n', 1)
    return text


# ----------------------------------------------------------------------------------------------
# (a) thin film, no back reaction
# ----------------------------------------------------------------------------------------------


def test_thin_film_rises_to_the_cap():
    # Optically thin film, k_b = 0: the flux is q0 everywhere, so dx/dt = k_f (x_max - x) with constant k_f and
    # x(t) = x_max (1 - exp(-k_f t))  (first-order kinetics, Mauser and Gauglitz, Photokinetics, 1998, ch. 2,
    # with the reacting population x_max in place of 1).
    x_max = 0.5
    sc = parse_scenario(capped(film_toml(thickness="1 um", cells=4, conc="0.005 mol/m^3", eps_a="1000 L/(mol*cm)",
                                         phi_f=0.4, duration="30 s", output="1 s", step="0.1 s"), x_max))
    ds = actsim.simulate(sc)
    k_f = LN10 * 0.4 * 100.0 * Q0  # eps10_A = 1000 L/(mol cm) = 100 m^2/mol
    t = ds.time.values
    exact = x_max * (1 - np.exp(-k_f * t))
    x = ds.conversion.values
    # optical depth ln10 * 100 * 0.005 * 1e-6 ~ 1.2e-6: the thin-film rate is exact to that relative order
    err = float(np.max(np.abs(x - exact[:, None])))
    print("thin film, cap 0.5: max |x - closed form|", err)
    np.testing.assert_allclose(x, np.broadcast_to(exact[:, None], x.shape), rtol=5e-6, atol=1e-12)
    assert x[-1].max() <= x_max and x[-1].min() > 0.98 * x_max  # k_f t = 4.2 at 30 s: 98.5 % of the cap


# ----------------------------------------------------------------------------------------------
# (b) bleaching front with the cap (transparent product, no back reaction)
# ----------------------------------------------------------------------------------------------
#
# Derivation. Only form A absorbs; with c0 the chromophore concentration, s = ln10 eps10_A [m^2 mol-1] and
# alpha0 = s c0 [m-1], split the reactant fraction 1 - x into the reactive part a = x_max - x and the
# unreactive part u = 1 - x_max (constant). At depth d below the lit face, with photon flux q(d, t):
#
#     optics:    dq/dd = -alpha0 (a + u) q                                  (Beer-Lambert)
#     kinetics:  da/dt = -phi s q a                                         (k_f = phi s q acts on a only)
#
# With the fluence F(d, t) = int_0^t q dt' the kinetics integrates to a = a0 exp(-phi s F). Integrating the
# optics over time, and using a q = -(1/(phi s)) da/dt,
#
#     dF/dd = -alpha0 [u F + int_0^t a q dt'] = -alpha0 [u F + (a0/(phi s)) (1 - exp(-phi s F))].
#
# In the dimensionless dose G = phi s F and optical depth zeta = alpha0 d this is the separable ODE
#
#     dG/dzeta = -[u G + a0 (1 - e^-G)],   G(0) = tau = phi s q0 t      (the lit face has fluence q0 t),
#
# so  zeta(G) = int_G^tau dG' / (u G' + a0 (1 - e^-G')),  and x = x_max - a0 e^-G at that depth.
# With u = 0, a0 = 1 this gives e^G - 1 = (e^tau - 1) e^-zeta, i.e. the Wegscheider bleaching front
# 1 - x = e^zeta / (e^tau + e^zeta - 1) used in tests/test_photokinetics.py (Corbett, van Oosten and Warner,
# Phys. Rev. A 78 (2008) 013823). The integral is taken in ln G' (integrand bounded: 1/(u + a0) as G' -> 0,
# 1/u as G' -> inf) with scipy.integrate.quad, and inverted for G with scipy.optimize.brentq.

EPS10 = 1.2e4 * 0.1  # 1.2e4 L/(mol cm) in m^2/mol (film_toml's default)
CONC = 500.0  # 0.5 mol/L
THICK = 20e-6
PHI = 0.3


def _depth_of_dose(G, tau, u, a0):
    """zeta(G) = int_G^tau dG'/(u G' + a0 (1 - e^-G')), integrated in ln G'."""
    f = lambda s: math.exp(s) / (u * math.exp(s) - a0 * math.expm1(-math.exp(s)))  # noqa: E731
    val, _ = quad(f, math.log(G), math.log(tau), epsabs=1e-14, epsrel=1e-13, limit=200)
    return val


def capped_front(zeta, tau, *, x_max):
    """Conversion at optical depths ``zeta`` (from the lit face) after dimensionless dose ``tau``."""
    u, a0 = 1.0 - x_max, x_max
    if tau == 0.0:
        return np.zeros_like(zeta)
    out = np.empty_like(zeta)
    for j, z in enumerate(zeta):
        # zeta(G) falls from +inf (G -> 0) to 0 (G = tau); bracket the root in ln G
        lo = math.log(tau) - (u + a0 + 1.0) * (z + 1.0) - 5.0
        lo = min(lo, math.log(tau) - 1.0)
        while _depth_of_dose(math.exp(lo), tau, u, a0) < z:
            lo -= 10.0
        s = brentq(lambda s: _depth_of_dose(math.exp(s), tau, u, a0) - z, lo, math.log(tau), xtol=1e-14, rtol=1e-14)
        out[j] = x_max - a0 * math.exp(-math.exp(s))
    return out


def capped_front_error(cells, step, *, x_max=0.5, t_end=8.0):
    sc = parse_scenario(capped(film_toml(cells=cells, step=f"{step} s", duration=f"{t_end} s",
                                         output=f"{t_end / 2} s", phi_f=PHI), x_max))
    ds = actsim.simulate(sc)
    alpha0 = LN10 * EPS10 * CONC
    k0 = PHI * LN10 * EPS10 * Q0
    h = THICK / cells
    depth_centres = THICK - (np.arange(cells) + 0.5) * h  # cell 0 is at the bottom, light from the top
    err = 0.0
    for it, t in enumerate(ds.time.values):
        exact = capped_front(alpha0 * depth_centres, k0 * t, x_max=x_max)
        err = max(err, float(np.max(np.abs(ds.conversion.values[it] - exact))))
    return err, ds


def test_front_quadrature_reduces_to_wegscheider():
    # u = 0 (x_max = 1): the quadrature must give the Wegscheider closed form 1 - x = e^zeta/(e^tau + e^zeta - 1)
    # (Corbett, van Oosten and Warner 2008), checked to the quadrature's own accuracy.
    zeta = np.array([0.0, 0.3, 2.0, 7.0, 20.0])
    tau = 4.0
    wegscheider = 1 - np.exp(zeta) / (math.exp(tau) + np.exp(zeta) - 1)
    np.testing.assert_allclose(capped_front(zeta, tau, x_max=1.0), wegscheider, rtol=1e-10, atol=1e-14)


def test_capped_bleaching_front_matches_quadrature():
    # Reference: the quadrature above (derived in the comment; reduces to Wegscheider for x_max = 1).
    # Bound from the measured discretisation error of this scheme (2.6e-4 at 128 cells and 1280 steps,
    # 3.9e-3 at 32 and 320; second order, see next test).
    err, ds = capped_front_error(cells=128, step=8.0 / 1280)
    print("capped front, 128 cells / 1280 steps: max |x - quadrature| at cell centres", err)
    assert err < 4e-4
    assert float(ds.conversion.max()) <= 0.5  # never above the cap
    assert float(ds.conversion.values[-1, -1]) > 0.49  # the lit face is at the cap


def test_capped_bleaching_front_second_order():
    # Observed order when grid and step are halved together: expected 2 (the coupled scheme is second order
    # in both; cell-centre sampling adds an O(h^2) term of its own).
    errs = [capped_front_error(cells=c, step=8.0 / (10 * c))[0] for c in (32, 64, 128)]
    orders = [math.log2(errs[i] / errs[i + 1]) for i in range(2)]
    print("capped bleaching-front errors", errs, "observed orders", orders)
    assert all(1.8 < p < 2.3 for p in orders), orders


# ----------------------------------------------------------------------------------------------
# (c) photostationary state with a back reaction
# ----------------------------------------------------------------------------------------------


def test_photostationary_state_with_cap():
    # Thin film with photo and thermal back reaction: dx/dt = k_f (x_max - x) - k_b x, so
    # x(t) = x_ss (1 - exp(-(k_f + k_b) t)),  x_ss = x_max k_f/(k_f + k_b)
    # (first-order reversible photoreaction, Mauser and Gauglitz 1998, ch. 2, reacting population x_max).
    x_max = 0.5
    sc = parse_scenario(capped(film_toml(thickness="1 um", cells=4, conc="0.005 mol/m^3", eps_a="1000 L/(mol*cm)",
                                         eps_b="400 L/(mol*cm)", phi_f=0.4, phi_b=0.2, k_th="0.02 1/s",
                                         duration="60 s", output="2 s", step="0.1 s"), x_max))
    ds = actsim.simulate(sc)
    k_f = LN10 * 0.4 * 100.0 * Q0
    k_b = LN10 * 0.2 * 40.0 * Q0 + 0.02
    x_ss = x_max * k_f / (k_f + k_b)
    t = ds.time.values
    exact = x_ss * (1 - np.exp(-(k_f + k_b) * t))
    err = float(np.max(np.abs(ds.conversion.values.mean(axis=1) - exact)))
    print("photostationary state with cap: x_ss", x_ss, "max |x - closed form|", err)
    np.testing.assert_allclose(ds.conversion.values.mean(axis=1), exact, rtol=5e-6, atol=1e-12)
    ss, t_relax = photostationary_state(k_forward=k_f, k_backward=k_b, reactive_fraction=x_max)
    assert ss == pytest.approx(x_ss, rel=1e-15) and t_relax == pytest.approx(1 / (k_f + k_b), rel=1e-15)


# ----------------------------------------------------------------------------------------------
# (d) kernel == reference with the cap; x_max = 1 is the uncapped model bit for bit
# ----------------------------------------------------------------------------------------------


def test_kernel_matches_reference_with_cap():
    # The kernel folds the cap into the rates (k_f' = x_max k_f, k_b' = k_b + (1 - x_max) k_f) while the
    # readable path applies x_ss = x_max k_f/(k_f + k_b) in the update: two different routes must agree
    # (fast path / readable path habit, STYLE.md; rtol 1e-12 as in tests/test_kernels.py).
    extra = """
    [[sources]]
    name = "blue"
    wavelength = "450 nm"
    irradiance = "30 mW/cm^2"
    face = "bottom"
    """
    protocol = """
    [[protocol]]
    duration = "3 s"
    light = ["lamp", "blue"]
    [[protocol]]
    duration = "2 s"
    """
    text = film_toml(reflection="true", extra_sources=extra, protocol=protocol, eps_b="5000 L/(mol*cm)", phi_b=0.2,
                     k_th="0.1 1/s", output="0.5 s", step="0.1 s", cells=15,
                     substrate={"modulus": "3 GPa", "thickness": "30 um", "background": "40 1/cm", "cells": 5})
    sc = parse_scenario(capped(text, 0.5, initial_conversion=0.1))
    fast = actsim.simulate(sc)
    slow = actsim.simulate(sc, engine="reference")
    for name in ("conversion", "irradiance", "absorbed_power", "curvature", "photon_flux_absorbed",
                 "photon_flux_transmitted"):
        np.testing.assert_allclose(fast[name].values, slow[name].values, rtol=1e-12, atol=1e-300, err_msg=name)
    assert 0.3 < float(fast.conversion.max()) <= 0.5


def test_reactive_fraction_one_is_the_uncapped_model():
    # x_max = 1 must leave every number as it was (bitwise), on both engines.
    text = film_toml(cells=10, duration="4 s", output="1 s", step="0.1 s", phi_b=0.1, eps_b="3000 L/(mol*cm)")
    for engine in ("kernel", "reference"):
        a = actsim.simulate(parse_scenario(text), engine=engine)
        b = actsim.simulate(parse_scenario(capped(text, 1.0)), engine=engine)
        for name in ("conversion", "curvature", "photon_flux_transmitted"):
            assert np.array_equal(a[name].values, b[name].values), (engine, name)


# ----------------------------------------------------------------------------------------------
# (e) bad input
# ----------------------------------------------------------------------------------------------


@pytest.mark.parametrize("value", ["0", "1.5", "-0.2"])
def test_reactive_fraction_out_of_range(value):
    with pytest.raises(ActsimInputError) as e:
        parse_scenario(capped(film_toml(), value))
    msg = str(e.value)
    assert "\n" not in msg and "materials.film.reactive_fraction" in msg and "allowed range" in msg, msg


def test_initial_conversion_above_the_cap():
    with pytest.raises(ActsimInputError) as e:
        parse_scenario(capped(film_toml(), 0.5, initial_conversion=0.6))
    msg = str(e.value)
    assert "\n" not in msg and "layers[0].initial_conversion" in msg and "reactive_fraction" in msg, msg
    parse_scenario(capped(film_toml(), 0.5, initial_conversion=0.5))  # at the cap is allowed


def test_reactive_fraction_refused_for_a_passive_material():
    text = film_toml(conc="0 mol/L", photo_strain=0.0)
    text = text.replace("reactant_absorptivity", "#").replace("product_absorptivity", "#")
    text = text.replace("forward_quantum_yield", "#").replace("backward_quantum_yield", "#")
    with pytest.raises(ActsimInputError) as e:
        parse_scenario(capped(text, 0.5))
    assert "\n" not in str(e.value) and "materials.film.reactive_fraction" in str(e.value)
