"""Property tests of the core stages (hypothesis): invariants that hold for any valid input."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from actsim import kinetics, mechanics, optics

finite = dict(allow_nan=False, allow_infinity=False)


@settings(max_examples=60, deadline=None)
@given(
    alpha=st.lists(st.floats(0, 1e7, **finite), min_size=1, max_size=30),
    dz=st.floats(1e-8, 1e-4, **finite),
    q=st.floats(1e-9, 10, **finite),
    from_top=st.booleans(),
)
def test_photons_conserved_for_any_stack(alpha, dz, q, from_top):
    # Beer–Lambert with exact per-cell attenuation: absorbed + transmitted = incident to round-off
    # (conservation of photons; Swinehart 1962), and every cell absorbs a non-negative amount.
    a = np.array(alpha)
    mf, ab, tr = optics.attenuate(alpha=a, dz=np.full(a.size, dz), flux_in=q, from_top=from_top)
    assert np.all(ab >= 0) and tr >= 0 and np.all(mf <= q * (1 + 1e-12))
    assert abs(ab.sum() + tr - q) <= 1e-12 * q


@settings(max_examples=80, deadline=None)
@given(
    x=st.floats(0, 1, **finite), kf=st.floats(0, 1e3, **finite), kb=st.floats(0, 1e3, **finite),
    dt=st.floats(1e-6, 1e3, **finite),
)
def test_conversion_stays_in_unit_interval(x, kf, kb, dt):
    # The exact first-order update is a convex combination of x and the photostationary x_ss in [0, 1].
    out = kinetics.exact_first_order_update(conversion=np.array([x]), k_forward=np.array([kf]),
                                            k_backward=np.array([kb]), dt=dt)[0]
    assert -1e-15 <= out <= 1 + 1e-15


@settings(max_examples=60, deadline=None)
@given(
    moduli=st.lists(st.floats(1e6, 1e11, **finite), min_size=2, max_size=8),
    strains=st.lists(st.floats(-0.05, 0.05, **finite), min_size=8, max_size=8),
    scale=st.floats(-5, 5, **finite),
)
def test_curvature_linear_in_eigenstrain_and_free_of_resultants(moduli, strains, scale):
    # Linear elasticity (superposition): scaling the eigenstrain scales e0 and kappa; the free strip carries no
    # net force or moment (Timoshenko 1925 generalised; exact section integrals per cell).
    n = len(moduli)
    z = np.linspace(0, 100e-6, n + 1)
    E = np.array(moduli)
    eig = np.array(strains[:n])
    e0, k, _ = mechanics.free_strip_response(z_edges=z, modulus=E, eigenstrain=eig)
    e0s, ks, _ = mechanics.free_strip_response(z_edges=z, modulus=E, eigenstrain=scale * eig)
    assert abs(e0s - scale * e0) <= 1e-9 * abs(scale) * (abs(e0) + abs(k) * 1e-4) + 1e-18
    assert abs(ks * 1e-4 - scale * k * 1e-4) <= 1e-9 * abs(scale) * (abs(e0) + abs(k) * 1e-4) + 1e-18
    _, _, N, M = mechanics.held_strip_response(z_edges=z, modulus=E, eigenstrain=eig, hold="free")
    scale_f = float(np.abs(E * eig).max() * 1e-4) + 1e-30
    assert abs(N) <= 1e-8 * scale_f and abs(M) <= 1e-8 * scale_f * 1e-4
