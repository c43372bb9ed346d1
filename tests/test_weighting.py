"""The packaged hazard weighting tables (actsim.checks.weighting) against an independent tabulation.

The blue-light hazard function B(lambda) of IEC 62471:2006 Table 4.2 is also tabulated, 380-500 nm in
5 nm steps, in the photobiology toolbox of the lighting and colour library luxpy (module
``luxpy/toolboxes/photbiochem/blue_light_hazard_IEC62471_IECTR62778.py``, array ``BLH1`` of ``_get_BLH``,
luxpy 1.12.5). Our table, entered from memory, must match it at all 25 points.

luxpy is read, not imported: it is a test-only extra, and luxpy 1.12.5 fails at import with numpy >= 2.4
(its colour-rendering module converts a 1-element array to float while importing); the table is a
literal in its source, so the test parses that literal (numbers and arithmetic only). The test is
skipped, with the reason, where luxpy is not installed.

luxpy carries no actinic UV S(lambda) table (its "actinic" quantities are the CIE S 026 alpha-opic
ones), so S(lambda) and the B(lambda) rows outside 380-500 nm stay checked by hand only ("from memory").
"""

import ast
import importlib.util
from pathlib import Path

import numpy as np
import pytest

from actsim.checks import weighting as wt

NM = 1e-9

_OPS = {ast.Add: np.add, ast.Sub: np.subtract, ast.Mult: np.multiply, ast.Div: np.divide, ast.Pow: np.power}


def _number(node):
    """Value of a numeric literal or of arithmetic on literals; anything else is refused."""
    if isinstance(node, ast.Constant) and isinstance(node.value, (int, float)):
        return float(node.value)
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, ast.USub):
        return -_number(node.operand)
    if isinstance(node, ast.BinOp) and type(node.op) in _OPS:
        return float(_OPS[type(node.op)](_number(node.left), _number(node.right)))
    raise ValueError(f"not a numeric literal: {ast.dump(node)[:80]}")


def _luxpy_blue_light_table():
    """(wavelength [nm], B [-]) of luxpy's IEC 62471 blue-light hazard table, read from its source."""
    spec = importlib.util.find_spec("luxpy")  # locates the package without importing it
    if spec is None or not spec.submodule_search_locations:
        pytest.skip("luxpy is not installed (it is in the 'test' extra: pip install -e '.[test]')")
    path = Path(spec.submodule_search_locations[0], "toolboxes", "photbiochem", "blue_light_hazard_IEC62471_IECTR62778.py")
    if not path.is_file():
        pytest.skip(f"this luxpy has no {path.name} (luxpy 1.12 keeps the IEC 62471 table there)")
    tree = ast.parse(path.read_text(encoding="utf-8"))
    for node in ast.walk(tree):
        if isinstance(node, ast.Assign) and any(isinstance(t, ast.Name) and t.id == "BLH1" for t in node.targets):
            rows = node.value.args[0].elts  # np.array([[wavelengths], [values]])
            wl = np.array([_number(e) for e in rows[0].elts])
            b = np.array([_number(e) for e in rows[1].elts])
            return wl, b
    pytest.skip(f"no BLH1 table found in luxpy's {path.name}")


def test_blue_light_table_matches_luxpy_at_all_25_points():
    # IEC 62471:2006 Table 4.2 as tabulated in luxpy (see module docstring)
    wl_nm, b_lux = _luxpy_blue_light_table()
    assert wl_nm.size == 25 and wl_nm[0] == 380 and wl_nm[-1] == 500
    ours = wt.blue_light_weighting(wl_nm * NM)
    np.testing.assert_allclose(ours, b_lux, rtol=1e-12, atol=0)
    # the rows are table rows, not interpolated values
    f = wt.blue_light_function()
    tab = dict(zip(np.round(f.wavelength / NM, 6), f.value))
    assert all(float(w) in tab for w in wl_nm)


def test_rows_marked_as_agreeing_with_luxpy_are_the_compared_rows():
    wl_nm, _ = _luxpy_blue_light_table()
    f = wt.blue_light_function()
    marked = {float(w) for w, o in zip(np.round(f.wavelength / NM, 6), f.origin) if "agrees with luxpy" in o}
    assert marked == {float(w) for w in wl_nm}


def test_every_row_says_where_it_comes_from():
    # values entered from memory stay marked so; nothing in the tables is unmarked
    for f in (wt.actinic_uv_function(), wt.blue_light_function()):
        assert len(f.origin) == f.wavelength.size
        assert all("from memory" in o for o in f.origin)
    assert not any("luxpy" in o for o in wt.actinic_uv_function().origin)  # no library carries S(lambda)


def test_tables_are_read_in_si_with_their_units():
    # the CSV header gives "wavelength [nm]": 200 nm -> 2e-7 m; S = 1 at 270 nm (ICNIRP 2004, from memory)
    s = wt.actinic_uv_function()
    assert s.lo == pytest.approx(200 * NM, rel=1e-15) and s.hi == pytest.approx(400 * NM, rel=1e-15)
    assert s(270 * NM) == pytest.approx(1.0, rel=1e-15)
    b = wt.blue_light_function()
    assert b.lo == pytest.approx(300 * NM, rel=1e-15) and b.hi == pytest.approx(700 * NM, rel=1e-15)
    assert np.all(np.diff(s.wavelength) > 0) and np.all(np.diff(b.wavelength) > 0)
