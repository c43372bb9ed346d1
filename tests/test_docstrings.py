"""Docstrings of the physics stage modules match their signatures and carry units.

For every public function of the stage modules (numba dispatchers through ``.py_func``):

* a function with parameters has a numpydoc ``Parameters`` section;
* the section names exactly the function's parameters (grouped entries ``a, b : type`` allowed,
  in any order, no duplicates, none missing, none extra);
* every entry carries a unit in brackets (``[m]``, ``[W m-2]``, ``[1]`` ...) or its type or text says
  it is not a physical quantity (bool, str, int, dimensionless, unitless).

The rule comes from the project's style guide (numpydoc, "each parameter ends with its unit in
brackets"); the signature check is the habit of checking docstring parameters against the signature
that scientific libraries such as fluids use (common practice, no source). Plain omissions were fixed
in the docstrings; the few entries that legitimately cannot carry one unit are in ALLOWED below, each
with its reason, and an entry there that is no longer needed fails the test.
"""

from __future__ import annotations

import importlib
import inspect
import re

import pytest

MODULES = (
    "actsim.optics",
    "actsim.kinetics",
    "actsim.mechanics",
    "actsim.material",
    "actsim.viscoelastic",
    "actsim.hyperelastic",
    "actsim.order",
    "actsim.polarised",
    "actsim.laminate",
    "actsim.shading",
    "actsim.strip_dynamics",
    "actsim.along_strip",
    "actsim.grid",
    "actsim.schedule",
    "actsim.reference",
    "actsim.spectra",
    "actsim.thermal",
    "actsim.thermal_reference",
    "actsim.elastica",
    "actsim.solve_budget",
    "actsim.curvature_profile",
    "actsim.load_line_history",
    "actsim.metrics",
    "actsim.shape_memory",
)

#: (module, function, parameter) -> why the entry has no unit in brackets.
ALLOWED = {
    ("actsim.metrics", "summarize", "ds"): "an xarray.Dataset; each of its variables carries its own 'units' attribute",
    ("actsim.metrics", "summarize", "protocol"): "a sequence of Step dataclasses, SI by construction",
    ("actsim.shape_memory", "shape_memory_cycles", "ds"): "an xarray.Dataset; each variable carries its own 'units'",
    ("actsim.shape_memory", "shape_memory_cycles", "protocol"): "a sequence of Step dataclasses, SI by construction",
    ("actsim.metrics", "first_crossing_time", "values"): "unit-generic signal: any unit, compared by magnitude",
    ("actsim.metrics", "first_crossing_time", "level"): "unit-generic: in the unit of `values`",
    ("actsim.metrics", "first_crossing_times", "values"): "unit-generic signal: any unit, compared by magnitude",
    ("actsim.metrics", "first_crossing_times", "levels"): "unit-generic: in the unit of `values`",
}

_UNIT = re.compile(r"(?<![\w\]])\[[^\[\]]+\]")  # "[m]", "[W/(m^2 K)]"; not an index such as "x[i]"
_NOT_PHYSICAL = re.compile(r"\b(bool|str|int|dimensionless|unitless)\b", re.I)
_PROJECT_OBJECT = re.compile(r"^(actsim\.[\w.]+( or actsim\.[\w.]+)*|Schedule|callable|numpy dtype)$")
_ENTRY = re.compile(r"^(\*{0,2}[A-Za-z_]\w*(?:\s*,\s*\*{0,2}[A-Za-z_]\w*)*)\s*(?::\s*(.*))?$")


def _sections(doc):
    """Numpydoc sections of a docstring: {title: [lines]} (a title line underlined with dashes)."""
    lines = inspect.cleandoc(doc or "").splitlines()
    out, current, i = {}, None, 0
    while i < len(lines):
        line = lines[i]
        if (i + 1 < len(lines) and line.strip() and not line.startswith(" ")
                and re.fullmatch(r"-{3,}", lines[i + 1].strip())):
            current = line.strip()
            out[current] = []
            i += 2
            continue
        if current is not None:
            out[current].append(line)
        i += 1
    return out


def _entries(lines):
    """Parameter entries: (names, type, description) from the unindented ``name : type`` lines."""
    entries = []
    for line in lines:
        if not line.strip():
            continue
        if not line.startswith(" "):
            m = _ENTRY.match(line.strip())
            if m:
                names = [n.strip().lstrip("*") for n in m.group(1).split(",")]
                entries.append((names, m.group(2) or "", []))
                continue
        if entries:
            entries[-1][2].append(line.strip())
    return [(names, typ, " ".join(desc)) for names, typ, desc in entries]


def _public_functions():
    found = []
    for modname in MODULES:
        mod = importlib.import_module(modname)
        for name, obj in sorted(vars(mod).items()):
            if name.startswith("_"):
                continue
            func = getattr(obj, "py_func", obj)  # numba dispatcher -> the Python function
            if inspect.isfunction(func) and func.__module__ == modname:
                found.append((modname, name, func))
    return found


FUNCTIONS = _public_functions()


def test_the_stage_modules_have_public_functions():
    # guards against the discovery silently finding nothing
    assert len(FUNCTIONS) > 40
    assert {m for m, _, _ in FUNCTIONS} == set(MODULES)


@pytest.mark.parametrize("modname, name, func", FUNCTIONS, ids=[f"{m}.{n}" for m, n, _ in FUNCTIONS])
def test_parameters_section_names_exactly_the_signature(modname, name, func):
    params = list(inspect.signature(func).parameters)
    secs = _sections(func.__doc__)
    if not params:
        return
    assert "Parameters" in secs, f"{modname}.{name}: no numpydoc Parameters section for {params}"
    documented = [n for names, _, _ in _entries(secs["Parameters"]) for n in names]
    dup = sorted({n for n in documented if documented.count(n) > 1})
    assert not dup, f"{modname}.{name}: documented twice: {dup}"
    missing = [p for p in params if p not in documented]
    extra = [p for p in documented if p not in params]
    assert not missing and not extra, f"{modname}.{name}: missing from the docstring {missing}, not in the signature {extra}"


def _offenders():
    bad = []
    for modname, name, func in FUNCTIONS:
        secs = _sections(func.__doc__)
        for names, typ, desc in _entries(secs.get("Parameters", [])):
            text = f"{typ} {desc}"
            if _UNIT.search(text) or _NOT_PHYSICAL.search(typ) or _NOT_PHYSICAL.search(desc):
                continue
            if _PROJECT_OBJECT.match(typ.strip()):
                continue  # a project object (scenario, grid, a stage's parameters): its fields carry their units
            for n in names:
                bad.append((modname, name, n))
    return bad


def test_every_parameter_carries_a_unit():
    bad = [b for b in _offenders() if b not in ALLOWED]
    assert not bad, "parameters without a unit in brackets (or bool/str/int/dimensionless): " + ", ".join(
        f"{m}.{f}({p})" for m, f, p in bad)


def test_allow_list_is_still_needed():
    stale = set(ALLOWED) - set(_offenders())
    assert not stale, f"ALLOWED entries that now carry a unit (remove them): {sorted(stale)}"


def test_parser_reads_grouped_entries_and_units():
    # the parser itself, on a docstring written for the purpose
    doc = """Summary.

    Parameters
    ----------
    a, b : float
        Lengths [m].
    flag : bool
        Switch.
    x : numpy.ndarray
        Values at x[i], no unit.

    Returns
    -------
    float
        [m].
    """
    entries = _entries(_sections(doc)["Parameters"])
    assert [e[0] for e in entries] == [["a", "b"], ["flag"], ["x"]]
    assert _UNIT.search(entries[0][2]) and not _UNIT.search(entries[2][2])
    assert _NOT_PHYSICAL.search(entries[1][1])
