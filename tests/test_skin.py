"""Tests of actsim.checks.skin against the published contact-temperature tables.

Sources (values from memory of the documents, as in the data files):
[IEC60601] IEC 60601-1:2005 (3rd ed.), Table 24, applied parts in contact with the patient.
[ISO13732] ISO 13732-1:2006, burn thresholds for contact periods of 1 min and longer.
"""

import math

import numpy as np
import pytest

from actsim.cautions import caution_lines
from actsim.checks import skin
from actsim.errors import ActsimInputError

C0 = 273.15


@pytest.mark.parametrize(
    "t, material, limit_c",
    [
        (30.0, "metal", 51.0),  # [IEC60601] t < 1 min, metal, from memory
        (30.0, "glass", 56.0),  # [IEC60601] t < 1 min, glass/porcelain, from memory
        (30.0, "plastic", 60.0),  # [IEC60601] t < 1 min, moulded material/plastic/rubber/wood, from memory
        (300.0, "plastic", 48.0),  # [IEC60601] 1 min <= t < 10 min, from memory
        (600.0, "plastic", 43.0),  # [IEC60601] 10 min <= t, from memory
        (36000.0, "metal", 43.0),  # [IEC60601] 10 min <= t, from memory
    ],
)
def test_iec_bands(t, material, limit_c):
    lim = skin.skin_contact_limit(contact_duration=t, material_class=material, standard="IEC 60601-1")
    assert lim.value == pytest.approx(limit_c + C0, abs=1e-12)
    assert lim.unit == "K" and "IEC 60601-1" in lim.source


def test_iso_log_time_interpolation():
    # [ISO13732] plastics 60 degC at 1 min, 48 degC at 10 min (from memory). At the geometric mean of
    # 60 s and 600 s, log-time interpolation gives the arithmetic mean, 54 degC, by hand.
    t = math.sqrt(60.0 * 600.0)
    lim = skin.skin_contact_limit(contact_duration=t, material_class="plastic", standard="ISO 13732-1")
    assert lim.value == pytest.approx(54.0 + C0, abs=1e-9)
    # tabulated points: 10 min 48 degC, 8 h 43 degC (from memory); beyond 8 h the 8 h value
    assert skin.skin_contact_limit(contact_duration=600.0, standard="ISO 13732-1").value == pytest.approx(48.0 + C0)
    assert skin.skin_contact_limit(contact_duration=8 * 3600.0, standard="ISO 13732-1").value == pytest.approx(43.0 + C0)
    assert skin.skin_contact_limit(contact_duration=1e6, standard="ISO 13732-1").value == pytest.approx(43.0 + C0)
    # metals at 1 min: 51 degC (from memory)
    assert skin.skin_contact_limit(contact_duration=60.0, material_class="metal", standard="ISO 13732-1").value == pytest.approx(51.0 + C0)


def test_governing_is_the_lower_limit():
    for t in (20.0, 60.0, 189.7, 599.0, 600.0, 3600.0, 50000.0):
        for m in skin.MATERIAL_CLASSES:
            g = skin.skin_contact_limit(contact_duration=t, material_class=m)
            a = skin.skin_contact_limit(contact_duration=t, material_class=m, standard="IEC 60601-1")
            b = skin.skin_contact_limit(contact_duration=t, material_class=m, standard="ISO 13732-1")
            assert g.value == min(a.value, b.value)


def test_verdict_flips_exactly_at_limit():
    # 5 min on plastic: governing limit 48 degC ([IEC60601] band 1-10 min, from memory)
    lim = skin.skin_contact_limit(contact_duration=300.0, material_class="plastic").value
    at = skin.skin_contact_check(peak_surface_temperature=lim, contact_duration=300.0)
    assert at.passed and at.margin == 0.0 and at.margin_kind == "difference" and at.unit == "K"
    over = skin.skin_contact_check(peak_surface_temperature=np.nextafter(lim, np.inf), contact_duration=300.0)
    assert not over.passed and over.margin < 0
    below = skin.skin_contact_check(peak_surface_temperature=lim - 2.5, contact_duration=300.0)
    assert below.passed and below.margin == pytest.approx(2.5)
    assert below.note.startswith("within the modelled limit of IEC 60601-1")
    assert over.note.startswith("exceeds the modelled limit of")
    assert "safe" not in below.verdict.lower()


def test_disclosure_note_above_41_degC():
    # [IEC60601] asks for disclosure above 41 degC (from memory)
    r = skin.skin_contact_check(peak_surface_temperature=42.0 + C0, contact_duration=120.0)
    assert "41 degC" in r.note
    r = skin.skin_contact_check(peak_surface_temperature=35.0 + C0, contact_duration=120.0)
    assert "41 degC" not in r.note


def test_bad_inputs_one_line_errors():
    with pytest.raises(ActsimInputError, match="in K") as exc:
        skin.skin_contact_check(peak_surface_temperature=45.0, contact_duration=60.0)  # degC given by mistake
    assert "\n" not in str(exc.value)
    with pytest.raises(ActsimInputError, match="contact_duration"):
        skin.skin_contact_check(peak_surface_temperature=310.0, contact_duration=0.0)
    with pytest.raises(ActsimInputError, match="material_class"):
        skin.skin_contact_check(peak_surface_temperature=310.0, contact_duration=60.0, material_class="felt")
    with pytest.raises(ActsimInputError, match="standard"):
        skin.skin_contact_limit(contact_duration=60.0, standard="somewhere")


def test_caution_in_format_output():
    r = skin.skin_contact_check(peak_surface_temperature=312.0, contact_duration=900.0)
    text = skin.format_skin(r)
    assert "\n".join(caution_lines()) in text
    assert "within the modelled limit" in text
