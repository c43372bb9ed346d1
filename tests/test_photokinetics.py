"""Coupled Beer–Lambert / first-order photoreaction against closed forms.

The bleaching front: only the reactant absorbs (product transparent, no back
reaction, no background). With u = 1 - x, optical depth zeta = alpha0 * depth
(alpha0 = ln10 eps10 c0) and dimensionless time tau = phi ln10 eps10 q0 t,

    du/dtau = -(q/q0) u,   d(q/q0)/dzeta = -u (q/q0)

has the closed form (Wegscheider's solution of photobleaching; see Corbett,
van Oosten and Warner, Phys. Rev. A 78 (2008) 013823, eqs. for the
"absorption-only" limit; also Tomlinson, J. Phys. Chem. 1952)

    q/q0 = e^tau / (e^tau + e^zeta - 1),   u = e^zeta / (e^tau + e^zeta - 1).

Its cell average over [zeta0, zeta1] is exact:
    <u> = [ln(e^zeta1 + C) - ln(e^zeta0 + C)] / (zeta1 - zeta0),  C = e^tau - 1.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import actsim
from actsim.optics import LN10
from actsim.spectra import photon_flux


def bleach_cell_average(zeta0, zeta1, tau):
    c = math.expm1(tau)
    # ln(e^z + C) = z + log1p(C e^-z), stable for large z
    f = lambda z: z + np.log1p(c * np.exp(-z))  # noqa: E731
    return (f(zeta1) - f(zeta0)) / (zeta1 - zeta0)


def front_error(make_scenario, cells, step, *, t_end=8.0):
    eps10 = 1.2e4 * 0.1  # 1.2e4 L/(mol cm) in m^2/mol
    conc = 500.0
    h = 20e-6
    sc = make_scenario(cells=cells, step=f"{step} s", duration=f"{t_end} s", output=f"{t_end / 4} s", phi_f=0.3)
    ds = actsim.simulate(sc)
    alpha0 = LN10 * eps10 * conc
    q0 = float(photon_flux(irradiance=500.0, wavelength=365e-9))
    k0 = 0.3 * LN10 * eps10 * q0
    edges_depth = h - sc_edges(cells, h)
    zeta = alpha0 * edges_depth  # depth below the top face at each cell face
    err = 0.0
    for it, t in enumerate(ds.time.values):
        exact_u = bleach_cell_average(zeta[1:], zeta[:-1], k0 * t)
        err = max(err, float(np.max(np.abs((1 - ds.conversion.values[it]) - exact_u))))
    return err, ds, (alpha0, q0, k0)


def sc_edges(cells, h):
    return np.linspace(0, h, cells + 1)


def test_bleaching_front_matches_closed_form(make_scenario):
    # Closed form: Wegscheider / Corbett, van Oosten and Warner (2008), see module docstring.
    # Measured max conversion error at the cell centres: 1.06e-4 with 25 cells and 250 steps, 7.4e-6 with 100 cells
    # and 1000 steps (the figures DESIGN.md and docs/models.md quote); second order, so 16x less for 4x the cells
    # and steps. The bounds are about 1.4 times the measured errors.
    err, ds, (alpha0, q0, k0) = front_error(make_scenario, cells=25, step=8.0 / 250)
    print(f"bleaching front: max error {err:.3g} (25 cells, 250 steps)")
    assert err < 1.5e-4
    err2, _, _ = front_error(make_scenario, cells=100, step=8.0 / 1000)
    print(f"bleaching front: max error {err2:.3g} (100 cells, 1000 steps)")
    assert err2 < 1e-5


def test_bleaching_front_second_order(make_scenario):
    # Observed order of the coupled scheme when grid and step are halved together:
    # expected 2 (Wegscheider closed form as the reference).
    errs = [front_error(make_scenario, cells=c, step=8.0 / (10 * c))[0] for c in (32, 64, 128)]
    orders = [math.log2(errs[i] / errs[i + 1]) for i in range(2)]
    print("bleaching-front errors", errs, "observed orders", orders)
    assert all(1.8 < p < 2.3 for p in orders), orders


def test_transmitted_flux_matches_closed_form(make_scenario):
    # Transmission of the bleaching film: q(h)/q0 = e^tau / (e^tau + e^zeta_h - 1) (same closed form).
    err, ds, (alpha0, q0, k0) = front_error(make_scenario, cells=100, step=0.008)
    tau = k0 * ds.time.values
    zeta_h = alpha0 * 20e-6
    exact = q0 * np.exp(tau) / (np.exp(tau) + math.exp(zeta_h) - 1)
    np.testing.assert_allclose(ds.photon_flux_transmitted.values, exact, rtol=2e-3, atol=1e-12 * q0)


def test_photostationary_state_thin_film(make_scenario):
    # Optically thin film, A <-> B with photo back reaction and thermal relaxation:
    # x(t) = x_ss (1 - exp(-t/t_r)), x_ss = k_f/(k_f+k_b), t_r = 1/(k_f+k_b)
    # (Mauser and Gauglitz, Photokinetics, 1998, ch. 2: first-order reversible photoreaction).
    eps_a, eps_b = 1000.0 * 0.1, 400.0 * 0.1  # m^2/mol
    conc = 0.5  # mol/m^3: optical depth ln10*100*0.5*1e-6 ~ 1e-4
    sc = make_scenario(thickness="1 um", cells=4, conc="0.5 mol/m^3", eps_a="1000 L/(mol*cm)", eps_b="400 L/(mol*cm)",
                       phi_f=0.4, phi_b=0.2, k_th="0.02 1/s", duration="60 s", output="2 s", step="0.1 s")
    ds = actsim.simulate(sc)
    q0 = float(photon_flux(irradiance=500.0, wavelength=365e-9))
    k_f = LN10 * 0.4 * eps_a * q0
    k_b = LN10 * 0.2 * eps_b * q0 + 0.02
    x_ss = k_f / (k_f + k_b)
    t = ds.time.values
    exact = x_ss * (1 - np.exp(-(k_f + k_b) * t))
    # optical depth ~1e-4: the thin-film rates are exact to that relative order
    np.testing.assert_allclose(ds.conversion.values.mean(axis=1), exact, rtol=5e-4, atol=1e-9)
    from actsim.kinetics import photostationary_state

    ss, t_relax = photostationary_state(k_forward=k_f, k_backward=k_b)
    assert ss == pytest.approx(x_ss) and t_relax == pytest.approx(1 / (k_f + k_b))


def test_dark_relaxation_is_exponential(make_scenario):
    # Thermal back reaction alone (light off): x(t) = x0 exp(-k_th t), first-order decay (Mauser and Gauglitz 1998).
    protocol = '[[protocol]]\nduration = "50 s"\n'
    sc = make_scenario(k_th="0.05 1/s", protocol=protocol, output="5 s", step="0.5 s")
    sc = actsim.scenario.parse_scenario(
        sc.text.replace('cells = 40', 'cells = 40\ninitial_conversion = 0.8'))
    ds = actsim.simulate(sc)
    np.testing.assert_allclose(ds.conversion.values[:, 0], 0.8 * np.exp(-0.05 * ds.time.values), rtol=1e-12)
