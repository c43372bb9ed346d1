"""The one CSV reader with units (actsim.tables): header units, conversion, spectra and limit tables on it."""

from __future__ import annotations

import numpy as np
import pytest

from actsim.errors import ActsimInputError
from actsim.spectra import read_table_csv
from actsim.tables import read_csv_table, read_xy_csv


def test_square_bracket_unit_may_contain_parentheses(tmp_path):
    # 1 L/(mol cm) = 1e-3 m^3 / (mol * 1e-2 m) = 0.1 m^2/mol (SI definitions of litre and centimetre, BIPM SI brochure 2019)
    f = tmp_path / "eps.csv"
    f.write_text("# invented\nwavelength [nm], epsilon10 [L/(mol*cm)], heat (W/m^2)\n300, 100, 1\n350, 20, 2\n")
    tab = read_csv_table(f)
    assert tab.names == ["wavelength", "epsilon10", "heat"]
    assert tab.units == ["nm", "L/(mol*cm)", "W/m^2"]
    xy = read_xy_csv(tab, x_kind="wavelength", y_kind="molar_absorptivity")
    np.testing.assert_allclose(xy.x, [300e-9, 350e-9], rtol=1e-15)
    np.testing.assert_allclose(xy.y, [10.0, 2.0], rtol=1e-15)


def test_column_in_a_named_unit(tmp_path):
    f = tmp_path / "limits.csv"
    f.write_text("from [min], to [min], limit [degC], origin\n0, 1, 51, from memory\n1, inf, 48, from memory\n")
    tab = read_csv_table(f)
    np.testing.assert_array_equal(tab.column("from", unit="s"), [0.0, 60.0])  # 1 min = 60 s
    np.testing.assert_array_equal(tab.column("to", unit="min", allow_infinite=True), [1.0, np.inf])  # as written
    np.testing.assert_allclose(tab.column("limit", unit="K"), [324.15, 321.15], rtol=1e-15)  # T[K] = T[degC] + 273.15
    with pytest.raises(ActsimInputError, match=r"limits.csv line 3: column 'to \[min\]' value 'inf' is not finite"):
        tab.column("to", unit="s")
    with pytest.raises(ActsimInputError, match=r"'limit \[degC\]' unit 'degC' cannot be converted to 's'"):
        tab.column("limit", unit="s")
    with pytest.raises(ActsimInputError, match="no column named 'lmit'"):
        tab.column("lmit", unit="K")
    with pytest.raises(ActsimInputError, match="has no unit"):
        tab.column("origin", unit="1")


@pytest.mark.parametrize("content, kind, match", [
    ("wavelength,epsilon10 [L/(mol*cm)]\n300,100\n350,20\n", "molar_absorptivity", "column 1 gives no unit"),
    ("wavelength [nm],epsilon10\n300,100\n350,20\n", "molar_absorptivity", "column 2 gives no unit"),
    ("wavelength [nm],epsilon10 [nm]\n300,100\n350,20\n", "molar_absorptivity", "is not a unit of molar_absorptivity"),
    ("wavelength [s],relative [1]\n300,1\n350,2\n", None, "is not a unit of wavelength"),
    ("wavelength [nm],relative [1]\n300,1\n", None, "1 data rows, at least 2"),
    ("wavelength [nm],relative [1]\n300,1\n290,2\n", None, "strictly increasing (row 2 is 290 nm after 300 nm)"),
    ("wavelength [nm],relative [1]\n300,1\n310,-2\n", None, "negative or non-finite value -2 at 310 nm"),
])
def test_spectrum_table_errors_name_the_field(tmp_path, content, kind, match):
    f = tmp_path / "s.csv"
    f.write_text(content)
    with pytest.raises(ActsimInputError, match=r"^sources\[0\]\.file: ") as exc:
        read_table_csv(f, field_name="sources[0].file", value_unit_kind=kind)
    assert match in str(exc.value) and "\n" not in str(exc.value)


def test_spectrum_relative_units(tmp_path):
    f = tmp_path / "led.csv"
    for unit, scale in (("relative", 1.0), ("a.u.", 1.0), ("1", 1.0), ("%", 0.01)):
        f.write_text(f"wavelength [nm],irradiance [{unit}]\n400,50\n410,100\n")
        lam, v = read_table_csv(f, field_name="f")
        np.testing.assert_allclose(v, [50 * scale, 100 * scale], rtol=1e-15)
    f.write_text("wavelength [nm],irradiance\n400,50\n410,100\n")  # no unit: a relative column as written
    np.testing.assert_array_equal(read_table_csv(f, field_name="f")[1], [50.0, 100.0])
