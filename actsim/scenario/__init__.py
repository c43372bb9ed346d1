"""Scenario files: parse and validate TOML with units into frozen SI dataclasses.

Every dimensional field is a string with a unit (``"0.2 mm"``, ``"50 mW/cm^2"``,
``"365 nm"``); a bare number is refused unless the field is dimensionless. Every
problem is reported as one line naming the field, the value, the unit and the
allowed range (:class:`~actsim.errors.ActsimInputError`). The field reference
is ``docs/scenario.md``.

Modules: :mod:`.model` (the frozen dataclasses), :mod:`.parse` (TOML -> :class:`Scenario`),
:mod:`.overrides` (change fields by dotted path), :mod:`.sections` (job sections, parsed by
the job that reads them). Field tables are read with :class:`actsim.schema.Table`.
"""

from ..schema import Table
from .model import (HOLDS, HeatSettings, Layer, LightSource, Material, OpticsSettings, Relaxation, Scenario,
                    SpectralFunction, Step, Strip)
from .overrides import apply_overrides, descend, split_field_path
from .parse import JOB_SECTIONS, load_scenario, parse_scenario
from .sections import scenario_info, section_settings

__all__ = [
    "load_scenario",
    "parse_scenario",
    "apply_overrides",
    "split_field_path",
    "descend",
    "section_settings",
    "scenario_info",
    "JOB_SECTIONS",
    "Scenario",
    "Material",
    "Relaxation",
    "Layer",
    "Strip",
    "Step",
    "HOLDS",
    "HeatSettings",
    "OpticsSettings",
    "LightSource",
    "SpectralFunction",
    "Table",
]
