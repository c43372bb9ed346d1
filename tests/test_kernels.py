"""The numba kernel and the readable reference path agree (rtol 1e-12).

The reference path is built from the stage functions in actsim.optics and
actsim.kinetics; this is the fast-path/readable-path agreement habit of
pvlib and fluids (see STYLE.md).
"""

from __future__ import annotations

import numpy as np

import actsim


def test_kernel_matches_reference(make_scenario):
    extra = """
    [[sources]]
    name = "blue"
    kind = "gaussian"
    wavelength = "450 nm"
    fwhm = "20 nm"
    bands = 5
    irradiance = "30 mW/cm^2"
    face = "bottom"
    """
    protocol = """
    [[protocol]]
    duration = "3 s"
    light = ["lamp"]
    [[protocol]]
    duration = "2 s"
    light = { blue = "30 mW/cm^2" }
    [[protocol]]
    duration = "2 s"
    """
    sc = make_scenario(reflection="true", extra_sources=extra, protocol=protocol, eps_b="5000 L/(mol*cm)", phi_b=0.2,
                       k_th="0.1 1/s", output="0.5 s", step="0.1 s", cells=15,
                       substrate={"modulus": "3 GPa", "thickness": "30 um", "background": "40 1/cm", "cells": 5})
    fast = actsim.simulate(sc)
    slow = actsim.simulate(sc, engine="reference")
    for name in ("conversion", "irradiance", "absorbed_power", "curvature", "photon_flux_absorbed", "photon_flux_transmitted"):
        np.testing.assert_allclose(fast[name].values, slow[name].values, rtol=1e-12, atol=1e-300, err_msg=name)
    assert float(fast.conversion.max()) > 0.1  # something happened
