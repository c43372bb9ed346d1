"""actsim.tables: text columns beside the numbers, and data files shipped in the package.

(The reader's units, errors and comments are tested with the measured data in test_calibrate_tensile.py.)
"""

import numpy as np
import pytest

from actsim.errors import ActsimInputError
from actsim.tables import data_file, read_xy_csv


def test_text_columns_are_kept_row_by_row(tmp_path):
    f = tmp_path / "w.csv"
    f.write_text("# invented table (synthetic)\nwavelength [nm], W [1], origin, note\n"
                 "300, 0.5, from memory, a\n310, 0.25, formula x, b\n")
    d = read_xy_csv(f, x_kind="wavelength", y_kind="dimensionless", text_columns=("origin", 3))
    # 300 nm = 3e-7 m (SI prefix nano = 1e-9, BIPM SI Brochure, 9th ed., 2019)
    np.testing.assert_allclose(d.x, [300e-9, 310e-9], rtol=1e-15)
    np.testing.assert_array_equal(d.y, [0.5, 0.25])
    assert d.text == {"origin": ("from memory", "formula x"), "note": ("a", "b")}
    # without text_columns nothing extra is read
    assert read_xy_csv(f, x_kind="wavelength", y_kind="dimensionless").text == {}


def test_text_column_missing_or_short_row_is_one_line_error(tmp_path):
    f = tmp_path / "w.csv"
    f.write_text("wavelength [nm], W [1], origin\n300, 0.5, from memory\n310, 0.25\n")
    with pytest.raises(ActsimInputError) as exc:
        read_xy_csv(f, x_kind="wavelength", y_kind="dimensionless", text_columns=("origin",))
    assert "line 3" in str(exc.value) and "\n" not in str(exc.value)
    with pytest.raises(ActsimInputError, match="no column named 'source'"):
        read_xy_csv(f, x_kind="wavelength", y_kind="dimensionless", text_columns=("source",))


def test_packaged_data_file_reads_like_the_same_file_on_disk(tmp_path):
    pkg = data_file("blue_light_hazard_b.csv")
    a = read_xy_csv(pkg, x_kind="wavelength", y_kind="dimensionless", y_column="B", text_columns=("origin",))
    copy = tmp_path / "copy.csv"
    copy.write_text(pkg.read_text(encoding="utf-8"), encoding="utf-8")
    b = read_xy_csv(copy, x_kind="wavelength", y_kind="dimensionless", y_column="B", text_columns=("origin",))
    np.testing.assert_array_equal(a.x, b.x)
    np.testing.assert_array_equal(a.y, b.y)
    assert a.text == b.text and a.source == "blue_light_hazard_b.csv"
    with pytest.raises(ActsimInputError, match="does not exist"):
        read_xy_csv(data_file("no_such_table.csv"), x_kind="wavelength", y_kind="dimensionless")
