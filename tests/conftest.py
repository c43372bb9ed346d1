"""Shared helpers for the tests: build small scenarios from TOML text."""

from __future__ import annotations

import textwrap

import pytest

from actsim.scenario import parse_scenario


def film_toml(*, thickness="20 um", cells=40, conc="0.5 mol/L", eps_a="1.2e4 L/(mol*cm)", eps_b="0 L/(mol*cm)",
              phi_f=0.3, phi_b=0.0, k_th="0 1/s", irradiance="50 mW/cm^2", wavelength="365 nm",
              duration="20 s", output="1 s", step="0.05 s", reflection="false", substrate=None,
              photo_strain=-0.01, background="0 1/m", extra_sources="", face="top", protocol=None, tolerance=None):
    """A single active film (optionally on a substrate) under one line source.

    Fixed steps of ``step``; with ``tolerance``, error-controlled steps instead.
    """
    sub_layer = ""
    sub_mat = ""
    if substrate:
        sub_mat = f"""
        [materials.sub]
        modulus = "{substrate['modulus']}"
        refractive_index = 1.0
        background_absorption = "{substrate.get('background', '0 1/m')}"
        """
        sub_layer = f"""
        [[layers]]
        name = "sub"
        material = "sub"
        thickness = "{substrate['thickness']}"
        cells = {substrate.get('cells', 10)}
        """
    if protocol is None:
        protocol = f"""
        [[protocol]]
        duration = "{duration}"
        light = {{ lamp = "{irradiance}" }}
        """
    text = f"""
    title = "test film"
    [strip]
    free_length = "10 mm"
    width = "2 mm"
    [optics]
    front_reflection = {reflection}
    max_cell_optical_depth = 20
    {sub_mat}
    [materials.film]
    modulus = "1 GPa"
    refractive_index = 1.0
    chromophore_concentration = "{conc}"
    photo_strain = {photo_strain}
    reactant_absorptivity = "{eps_a}"
    product_absorptivity = "{eps_b}"
    forward_quantum_yield = {phi_f}
    backward_quantum_yield = {phi_b}
    thermal_back_rate = "{k_th}"
    background_absorption = "{background}"
    {sub_layer}
    [[layers]]
    name = "film"
    material = "film"
    thickness = "{thickness}"
    cells = {cells}
    [[sources]]
    name = "lamp"
    wavelength = "{wavelength}"
    irradiance = "{irradiance}"
    face = "{face}"
    {extra_sources}
    {protocol}
    [time]
    output_interval = "{output}"
    {f'tolerance = {tolerance}' if tolerance is not None else f'step = "{step}"'}
    """
    return textwrap.dedent(text)


@pytest.fixture
def make_scenario():
    def _make(**kw):
        return parse_scenario(film_toml(**kw))

    return _make
