"""Tests of actsim.checks.verdict: result wording, table and records, limits data file loading.

These are checks of the project's own contract (no external source needed, common practice, no source), plus the
rule from the brief that a verdict never calls a design safe.
"""

import json
import math

import pytest

from actsim.checks.verdict import CheckResult, Limit, format_table, load_limits, load_material_limits, to_records
from actsim.errors import ActsimInputError


def _r(**kw):
    base = dict(check="c", value=2.0, limit=4.0, unit="Pa", source="src A", validity="v")
    base.update(kw)
    return CheckResult.upper_bound(**base)


def test_verdict_wording_never_says_safe():
    ok, bad = _r(), _r(value=5.0)
    assert ok.passed and ok.margin == 2.0 and ok.verdict == "within the modelled limit (src A)"
    assert not bad.passed and bad.verdict == "exceeds the modelled limit (src A)"
    short = _r(required_margin=3.0)
    assert not short.passed and "short of the required margin" in short.verdict
    for r in (ok, bad, short):
        assert "safe" not in r.verdict.lower()


def test_difference_margin_and_zero_value():
    d = _r(value=310.0, limit=313.0, unit="K", margin_kind="difference")
    assert d.margin == pytest.approx(3.0) and d.passed
    z = _r(value=0.0)
    assert z.margin == math.inf and z.passed


def test_nan_and_bad_kind_rejected():
    with pytest.raises(ActsimInputError, match="value"):
        _r(value=float("nan"))
    with pytest.raises(ActsimInputError, match="margin_kind"):
        _r(margin_kind="percent")


def test_table_and_records():
    rs = [_r(check="yield, layer 0", value=20e6, limit=55e6, note="a note"), _r(check="damage", value=0.1, limit=1.0, unit="1")]
    t = format_table(rs)
    lines = t.splitlines()
    assert lines[0].split() == ["check", "value", "limit", "margin", "verdict", "source"]
    assert "20 MPa" in t and "55 MPa" in t and "2.75" in t and "[1] a note" in t
    recs = to_records(rs)
    assert recs[0]["verdict"] == "within the modelled limit (src A)"
    json.dumps(recs)  # JSON-ready


def test_packaged_material_limits():
    """The packaged file holds illustrative values from memory for invented classes, flagged as not design data."""
    table = load_material_limits()
    assert len(table) >= 3
    for name, props in table.items():
        assert name.startswith("generic_")
        for key in ("yield_strength", "ultimate_strength", "fatigue_strength_coefficient", "fatigue_strength_exponent"):
            lim = props[key]
            assert "from memory" in lim.source and "not design data" in lim.source
            assert "temperature" in lim.valid_range
        assert props["fatigue_strength_exponent"].value < 0
        assert props["yield_strength"].unit == "Pa"
        assert props["yield_strength"].value <= props["ultimate_strength"].value
        assert "cycles" in props["fatigue_strength_coefficient"].valid_range


def test_limit_validity_as_data(tmp_path):
    p = tmp_path / "lim.toml"
    p.write_text(
        '[groups.g.skin]\nkind = "temperature"\nvalue = "43 degC"\nsource = "s"\n'
        'valid = { time = ["10 s", "8 h"], frequency = ["1 Hz", "2 Hz"], cycles = [10, 100] }\n'
    )
    lim = load_limits(p)["g"]["skin"]
    assert lim.value == pytest.approx(316.15) and lim.unit == "K"
    assert lim.valid_range["time"] == pytest.approx((10.0, 28800.0))
    assert lim.out_of_range(time=5.0, cycles=50) == [lim.out_of_range(time=5.0)[0]]
    assert lim.out_of_range(time=60.0, other=1.0) == []


@pytest.mark.parametrize(
    "text, field",
    [
        ('[groups.g.x]\nkind = "pressure"\nvalue = 5\nsource = "s"\n', "groups.g.x.value"),
        ('[groups.g.x]\nkind = "pressure"\nvalue = "5 MPa"\n', "groups.g.x.source"),
        ('[groups.g.x]\nkind = "colour"\nvalue = "5 MPa"\nsource = "s"\n', "kind"),
        ('[groups.g.x]\nkind = "pressure"\nvalue = "5 MPa"\nsource = "s"\nvalid = { temperature = ["50 degC", "0 degC"] }\n',
         "valid.temperature"),
        ("not = [toml", "TOML"),
        ("[other]\na = 1\n", "groups"),
    ],
)
def test_limits_file_errors_one_line(tmp_path, text, field):
    p = tmp_path / "bad.toml"
    p.write_text(text)
    with pytest.raises(ActsimInputError) as e:
        load_limits(p)
    assert field in str(e.value) and "\n" not in str(e.value)


def test_limit_is_frozen_and_hashable():
    lim = Limit(name="x", value=1.0, unit="Pa", source="s", valid_range={"temperature": (280.0, 300.0)})
    hash(lim)
    with pytest.raises(Exception):
        lim.value = 2.0
