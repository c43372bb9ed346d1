"""Overrides: change any field of a scenario by its dotted path, then parse it again.

Used by ``--set``, sweeps, fits and uncertainty draws. A path addresses the TOML as written
(``"layers[1].thickness"``, ``"protocol[lamp on].light.lamp"``, ``"checks.target_cycles"``), so
job sections are changed the same way as the stage fields.
"""

from __future__ import annotations

import copy
import difflib
import re
import tomllib
from pathlib import Path

import numpy as np

from ..errors import ActsimInputError
from .model import Scenario
from .parse import parse_scenario

__all__ = ["split_field_path", "apply_overrides"]

_PATH_TOKEN = re.compile(r"([^.\[\]]+)|\[([^\]]+)\]")


def split_field_path(path: str):
    """Split ``"layers[1].thickness"`` or ``"layers[active film].thickness"`` into tokens."""
    tokens = []
    for name, index in _PATH_TOKEN.findall(path):
        tokens.append(name if name else ("[", index))
    if not tokens:
        raise ActsimInputError(f"field path '{path}' is empty")
    return tokens


def descend(container, token, path, *, create=False):
    """The container and key that one field-path token names (``layers[film]`` -> the list and the index).

    Parameters
    ----------
    container : dict or list
        The raw TOML node.
    token : str or tuple
        A key, or ``("[", index or name)``.
    path : str
        The whole field path, for the one-line error.
    create : bool
        Create a missing table key (for overrides).
    """
    if isinstance(token, tuple):
        index = token[1].strip()
        if not isinstance(container, list):
            raise ActsimInputError(f"{path}: '[{index}]' used on something that is not a list")
        if index.lstrip("-").isdigit():
            i = int(index)
            if not -len(container) <= i < len(container):
                raise ActsimInputError(f"{path}: index {i} is out of range (the list has {len(container)} entries)")
            return container, i
        names = [item.get("name") if isinstance(item, dict) else None for item in container]
        if index in names:
            return container, names.index(index)
        hint = difflib.get_close_matches(index, [n for n in names if n], n=1)
        extra = f"; did you mean '{hint[0]}'?" if hint else f"; names are: {', '.join(n for n in names if n)}"
        raise ActsimInputError(f"{path}: no entry named '{index}'{extra}")
    if not isinstance(container, dict):
        raise ActsimInputError(f"{path}: '{token}' used on something that is not a table")
    if token not in container and not create:
        hint = difflib.get_close_matches(token, list(container), n=1)
        extra = f"; did you mean '{hint[0]}'?" if hint else f"; fields here: {', '.join(container)}"
        raise ActsimInputError(f"{path}: no field '{token}'{extra}")
    return container, token


def apply_overrides(scenario: Scenario, overrides: dict) -> Scenario:
    """A new scenario with some fields replaced, validated like a file.

    Parameters
    ----------
    scenario : Scenario
        The base scenario (its TOML text is the starting point).
    overrides : dict
        Dotted field path -> value as it would be written in the file, e.g.
        ``{"layers[1].thickness": "30 um", "materials.film.photo_strain": -0.02,
        "protocol[0].light.lamp": "80 mW/cm^2"}``. List entries are addressed
        by index or by ``name``. The last field may be new (an optional field
        not in the file); every table on the way must exist.

    Returns
    -------
    Scenario
        Parsed from the modified TOML, so every value is checked exactly as in
        a scenario file; its ``text`` is the modified TOML.
    """
    import tomli_w

    raw = copy.deepcopy(tomllib.loads(scenario.text))
    for path, value in overrides.items():
        tokens = split_field_path(path)
        node = raw
        for tok in tokens[:-1]:
            parent, key = descend(node, tok, path)
            if key == "light" and isinstance(parent[key], list):
                # the list form ["lamp", ...] means each source at its own irradiance: make it a table
                parent[key] = {name: "on" for name in parent[key]}
            node = parent[key]
        parent, key = descend(node, tokens[-1], path, create=True)
        if hasattr(value, "units") and hasattr(value, "magnitude"):
            value = f"{value.magnitude!r} {value.units:~}"
        elif isinstance(value, (np.floating, np.integer)):
            value = value.item()
        parent[key] = value
    text = tomli_w.dumps(raw)
    base = scenario.base_dir or (Path(scenario.path).parent if scenario.path else Path.cwd())
    return parse_scenario(text, path=scenario.path, base_dir=base)
