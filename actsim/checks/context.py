"""What every design check reads: the scenario, its result, its parsed sections and the shared states.

:class:`CheckContext` is built once per check run by :func:`actsim.checks.run.build_context`
and handed to every registered check (:data:`actsim.checks.run.REGISTRY`); a check is a function
``check(context) -> CheckOutput``. The states several checks share are computed once, in the
context, in the order they depend on each other:

1. ``actuation`` (:func:`actsim.checks.actuation.actuation_state`): peak bend, elastica blocked
   force, load line, and the shape under ``[checks].tip_force``;
2. ``joint`` (:func:`actsim.checks.joint_checks.size_joint`, with ``[joint]``): the strips'
   moment against the payload's at each angle, the number of strips and the loaded rotation;
3. ``stress`` (:func:`actsim.checks.mechanical.stress_history`): the stress the yield and
   fatigue checks assess (of the loaded strips when a joint is sized), with the tip-loaded state.

Per-layer checks see ``context.layer`` set to the layer's index (a copy made by
:meth:`CheckContext.for_layer`); scenario-wide checks see None.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any, NamedTuple

import numpy as np

__all__ = ["CheckContext", "CheckOutput", "free_curvature", "layer_index", "cell_thickness", "layer_label"]


class CheckOutput(NamedTuple):
    """What one check contributes: its rows of the verdict table and its details for ``checks.json``.

    Attributes
    ----------
    results : list of CheckResult and NotAssessed
        Rows in the order they are printed.
    details : dict or None
        Stored under the check's ``details_key`` in the details (per layer: under the layer's name
        there); None contributes nothing.
    """

    results: list
    details: dict | None = None


@dataclass(frozen=True, eq=False)
class CheckContext:
    """Inputs and shared states of one check run (built once; never changed by a check).

    Attributes
    ----------
    scenario : actsim.scenario.Scenario
        The scenario checked.
    ds : xarray.Dataset
        Its result of :func:`actsim.simulate`.
    checks : actsim.checks.settings.CheckSettings
        Parsed ``[checks]`` (defaults without the section).
    safety : actsim.checks.settings.SafetySettings
        Parsed ``[safety]`` (defaults without the section).
    joint_settings : actsim.checks.settings.JointSettings or None
        Parsed ``[joint]``, None without the section.
    elastica : bool
        Whether the large-deflection blocked force and load line are computed.
    layers : numpy.ndarray
        Layer index of every cell, bottom to top.
    actuation : dict
        Actuation state (``details["actuation"]``), see :func:`actsim.checks.actuation.actuation_state`.
    joint : actsim.checks.joint_checks.JointSizing or None
        The joint's sizing with ``[joint]``, else None.
    stress : actsim.checks.mechanical.StressHistory or None
        The stress history the yield and fatigue checks assess.
    layer : int or None
        The layer a per-layer check assesses; None for scenario-wide checks.
    """

    scenario: Any
    ds: Any
    checks: Any
    safety: Any
    joint_settings: Any
    elastica: bool
    layers: np.ndarray
    actuation: dict = field(default_factory=dict)
    joint: Any = None
    stress: Any = None
    layer: int | None = None

    def for_layer(self, k: int) -> CheckContext:
        """The same context seen by a per-layer check of layer ``k``."""
        return replace(self, layer=k)

    def has_section(self, name: str) -> bool:
        """Whether the scenario gives the job section ``name`` (``[checks]``, ``[safety]``, ``[joint]``)."""
        return name in (self.scenario.sections or {})


def free_curvature(ds) -> np.ndarray:
    """Curvature the strip takes when free at each output time [1/m]."""
    return ds["free_curvature"].values if "free_curvature" in ds else ds["curvature"].values


def layer_index(scenario) -> np.ndarray:
    """Layer index of every cell, bottom to top."""
    return np.concatenate([np.full(layer.cells, i, dtype=np.int64) for i, layer in enumerate(scenario.layers)])


def cell_thickness(scenario) -> np.ndarray:
    """Thickness of every cell, bottom to top [m]."""
    return np.concatenate([np.full(layer.cells, layer.thickness / layer.cells) for layer in scenario.layers])


def layer_label(k: int, scenario) -> str:
    """``layer k (name)``, as the check names show a layer."""
    return f"layer {k} ({scenario.layers[k].name})"
