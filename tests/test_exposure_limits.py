"""Exposure limits as data (actsim.checks.exposure_limits): values, windows, validity ranges.

Sources (all values from memory of the documents, as in the module):
[ICNIRP04] ICNIRP, Guidelines on limits of exposure to ultraviolet radiation of wavelengths between
           180 nm and 400 nm, Health Physics 87 (2004) 171-186.
[ICNIRP13] ICNIRP, Guidelines on limits of exposure to incoherent visible and infrared radiation,
           Health Physics 105 (2013) 74-96.
[IEC62471] IEC 62471:2006, Photobiological safety of lamps and lamp systems.
"""

import dataclasses

import pytest

from actsim.checks import exposure_limits as lim
from actsim.checks import weighting as wt
from actsim.errors import ActsimInputError

NM = 1e-9


@pytest.mark.parametrize(
    "hazard, form, value, unit, window, lo_nm, hi_nm",
    [
        ("actinic_uv", "dose", 30.0, "J/m^2", 8 * 3600.0, 200, 400),  # [ICNIRP04]; [IEC62471] 4.3.1, from memory
        ("uva", "dose", 1.0e4, "J/m^2", 1000.0, 315, 400),  # [IEC62471] 4.3.2, from memory
        ("uva", "rate", 10.0, "W/m^2", 1000.0, 315, 400),  # [IEC62471] 4.3.2, from memory
        ("blue_light", "dose", 100.0, "J/m^2", 100.0, 300, 700),  # [ICNIRP13]; [IEC62471] 4.3.4, from memory
        ("blue_light", "rate", 1.0, "W/m^2", 100.0, 300, 700),  # [IEC62471] 4.3.4, from memory
        ("blue_light_radiance", "dose", 1.0e6, "J/(m^2 sr)", 1.0e4, 300, 700),  # [IEC62471] 4.3.3, from memory
        ("blue_light_radiance", "rate", 100.0, "W/(m^2 sr)", 1.0e4, 300, 700),  # [IEC62471] 4.3.3, from memory
    ],
)
def test_limit_values_windows_and_ranges(hazard, form, value, unit, window, lo_nm, hi_nm):
    h = lim.HAZARDS[hazard]
    limit = h.dose if form == "dose" else h.rate
    assert (limit.hazard, limit.form, limit.value, limit.unit) == (hazard, form, value, unit)
    assert limit.window == window
    assert limit.wavelength_min == pytest.approx(lo_nm * NM, rel=1e-15)
    assert limit.wavelength_max == pytest.approx(hi_nm * NM, rel=1e-15)
    assert limit.from_memory and "IEC 62471" in limit.source


def test_actinic_limit_has_no_rate_form_and_risk_group_times():
    # [ICNIRP04]: the actinic limit is a daily dose, no irradiance form; [IEC62471] Table 6.1 (from memory)
    assert lim.HAZARDS["actinic_uv"].rate is None
    assert lim.HAZARDS["actinic_uv"].risk_group_times == (30000.0, 10000.0, 1000.0)
    assert lim.HAZARDS["uva"].risk_group_times == (1000.0, 300.0, 100.0)
    assert lim.HAZARDS["blue_light"].risk_group_times == (10000.0, 100.0, 0.25)
    assert all("Table 6.1" in h.risk_group_source for h in lim.HAZARDS.values())


def test_limits_are_frozen():
    with pytest.raises(dataclasses.FrozenInstanceError):
        lim.HAZARDS["uva"].dose.value = 1.0
    with pytest.raises(dataclasses.FrozenInstanceError):
        lim.HAZARDS["uva"].rate = None


def test_weighted_limits_cover_exactly_their_weighting_tables():
    # the S(lambda) and B(lambda) tables span the limits' ranges: a limit never applies where its weighting is absent
    for key, f in (("actinic_uv", wt.actinic_uv_function()), ("blue_light", wt.blue_light_function()),
                   ("blue_light_radiance", wt.blue_light_function())):
        for limit in lim.HAZARDS[key].limits:
            assert limit.weighting == f.name
            assert limit.wavelength_min == pytest.approx(f.lo, rel=1e-12)
            assert limit.wavelength_max == pytest.approx(f.hi, rel=1e-12)


def test_which_limits_apply_to_a_wavelength_range():
    keys = lambda limits: {(x.hazard, x.form) for x in limits}  # noqa: E731
    # 254 nm: actinic UV only (UV-A starts at 315 nm, blue light at 300 nm)
    assert keys(lim.limits_for(254 * NM)) == {("actinic_uv", "dose")}
    # 365 nm: actinic UV, UV-A and blue light (B = 0.01 over 300-380 nm, [ICNIRP13] from memory)
    assert keys(lim.limits_for(365 * NM)) == {("actinic_uv", "dose"), ("uva", "dose"), ("uva", "rate"),
                                              ("blue_light", "dose"), ("blue_light", "rate"),
                                              ("blue_light_radiance", "dose"), ("blue_light_radiance", "rate")}
    # 450-460 nm: blue light only; 850 nm: nothing modelled (infrared hazards are not)
    assert {h.key for h in lim.hazards_for(450 * NM, 460 * NM)} == {"blue_light", "blue_light_radiance"}
    assert lim.limits_for(850 * NM) == () and lim.hazards_for(800 * NM, 900 * NM) == ()
    # a range that only touches a limit's end is inside it (band ends inclusive)
    assert keys(lim.limits_for(700 * NM, 800 * NM)) == {("blue_light", "dose"), ("blue_light", "rate"),
                                                        ("blue_light_radiance", "dose"),
                                                        ("blue_light_radiance", "rate")}
    assert {h.key for h in lim.hazards_for(150 * NM, 250 * NM)} == {"actinic_uv"}


def test_limits_for_rejects_nm_and_reversed_ranges():
    for args in ((365.0,), (400 * NM, 300 * NM), (float("nan"),)):
        with pytest.raises(ActsimInputError) as exc:
            lim.limits_for(*args)
        assert "\n" not in str(exc.value) and "in m" in str(exc.value)


def test_duration_decides_between_dose_and_rate_form():
    # [IEC62471] 4.3.2 (from memory): dose form up to 1000 s, irradiance form beyond
    uva = lim.HAZARDS["uva"]
    assert uva.dose.applies_to_duration(1000.0) and not uva.rate.applies_to_duration(1000.0)
    assert uva.rate.applies_to_duration(1000.1) and not uva.dose.applies_to_duration(1000.1)
