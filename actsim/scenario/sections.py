"""Job sections of a scenario: each job parses its own table, when it needs it.

The scenario stage keeps ``[checks]``, ``[safety]``, ``[joint]``, ``[mask]`` and
``[calibration]`` as the TOML tables the file gave (``Scenario.sections``) and imports no
job. A job reads its section through :func:`section_settings` with its own parser, e.g.::

    def mask_settings(scenario):
        return section_settings(scenario, "mask", parse_mask)

so a bad field is reported (one line) by the verb that reads it, and a scenario that no job
reads a section of simulates the same with or without it.
"""

from __future__ import annotations

import copy
from pathlib import Path

__all__ = ["section_settings", "scenario_info"]


def scenario_info(scenario) -> dict:
    """Facts about a scenario that section parsers check against.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario

    Returns
    -------
    dict
        ``materials`` (every material name), ``layers`` and ``sources`` (names), ``n_steps``
        (protocol steps), ``free_length`` and ``width`` of the strip [m].
    """
    return {
        "materials": list(scenario.material_names),
        "layers": [layer.name for layer in scenario.layers],
        "sources": [s.name for s in scenario.sources],
        "n_steps": len(scenario.protocol),
        "free_length": scenario.strip.free_length,
        "width": scenario.strip.width,
    }


def section_settings(scenario, name: str, parser):
    """The job section ``name`` of a scenario, parsed by the job's ``parser``; None when absent.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
    name : str
        Top-level section name (a key of :data:`actsim.scenario.JOB_SECTIONS`).
    parser : callable
        ``parser(data, *, field, base_dir, scenario_info)`` -> a frozen settings object; raises
        :class:`~actsim.errors.ActsimInputError` (one line) on bad input. ``data`` is a deep copy
        of the table, ``base_dir`` the folder data files are resolved against, ``scenario_info``
        the dict of :func:`scenario_info`.

    Returns
    -------
    object or None
        The parser's result, computed once per scenario object (cached on it; a scenario made
        by ``replace`` or :func:`~actsim.scenario.apply_overrides` parses again).
    """
    sections = scenario.sections or {}
    if name not in sections:
        return None
    cache = scenario._settings
    key = (name, parser)
    if key not in cache:
        if scenario.base_dir:
            base = Path(scenario.base_dir)
        else:
            base = Path(scenario.path).parent if scenario.path else Path.cwd()
        cache[key] = parser(copy.deepcopy(sections[name]), field=name, base_dir=base,
                            scenario_info=scenario_info(scenario))
    return cache[key]
