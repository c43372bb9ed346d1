"""The check run: strength, fatigue, elastica blocked force, joint sizing, light and skin.

Each value is compared with a hand calculation from a published formula (named beside
the check); the verdicts are shown to flip where the formula says they should.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from actsim.checks.run import NotAssessed, any_failed, format_results, run_checks, write_checks
from actsim.checks.settings import checks_settings, joint_settings
from actsim.errors import ActsimInputError
from actsim.scenario import parse_scenario
from actsim.solver import simulate

from conftest import film_toml

G = 9.80665  # standard gravity [m/s^2] (CGPM 1901)

PROTOCOL = """
[[protocol]]
duration = "4 s"
light = { lamp = "50 mW/cm^2" }
[[protocol]]
duration = "6 s"
"""


def base_text(**kw):
    args = dict(duration="4 s", output="0.5 s", step="0.05 s", cells=20, k_th="0.3 1/s",
                substrate={"modulus": "2 GPa", "thickness": "20 um"}, protocol=PROTOCOL)
    args.update(kw)
    return film_toml(**args)


BASE = base_text()


@pytest.fixture(scope="module")
def ds():
    return simulate(parse_scenario(BASE))


def checks(ds, sections, *, elastica=False, text=BASE):
    sc = parse_scenario(text + "\n" + sections)
    return sc, *run_checks(sc, ds, elastica=elastica)


def by_name(results, start):
    out = [r for r in results if r.check.startswith(start)]
    assert out, f"no check starting with {start!r}"
    return out


def film_cells(ds):
    return np.flatnonzero(ds["layer"].values == "film")


# --------------------------------------------------------------------------- strength


def test_yield_value_is_peak_stress_and_verdict_flips(ds):
    # Uniaxial narrow strip: sigma_vM = |sigma_x| (Dowling, Mechanical Behavior of Materials, 4th ed., 2013, ch. 7),
    # safety factor S = sigma_y / max sigma_vM; the check passes when S >= required.
    peak = float(np.abs(ds["stress"].values[:, film_cells(ds)]).max())
    for factor, ok in ((1.01, True), (0.99, False)):
        ys = 2.0 * peak * factor
        _, res, _ = checks(ds, f"""
[checks]
required_safety_factor = 2.0
[checks.materials.film]
yield_strength = "{ys} Pa"
""")
        r = by_name(res, "von Mises stress vs yield strength, layer 1 (film)")[0]
        assert r.value == pytest.approx(peak, rel=1e-12)
        assert r.margin == pytest.approx(ys / peak, rel=1e-12)
        assert r.passed is ok
        # the layer without limits is reported, never silently passed
        assert isinstance(by_name(res, "von Mises stress vs yield strength, layer 0 (sub)")[0], NotAssessed)
        # (the light check of this unshielded lamp fails over the default 8 h: leave it out here)
        assert any_failed([r for r in res if not r.check.startswith("light")]) is (not ok)


def test_plate_uses_plane_strain_von_mises():
    # Wide plate in cylindrical bending: sigma_y = nu sigma_x, sigma_vM = |sigma_x| sqrt(1 - nu + nu^2)
    # (Timoshenko & Woinowsky-Krieger, Theory of Plates and Shells, 2nd ed., 1959, ch. 1).
    text = base_text().replace('width = "2 mm"', 'width = "2 mm"\nsection = "plate"')
    d = simulate(parse_scenario(text))
    _, res, _ = checks(d, '[checks]\n[checks.materials.film]\nyield_strength = "50 MPa"\n', text=text)
    nu = 0.35  # film default Poisson ratio
    peak = float(np.abs(d["stress"].values[:, film_cells(d)]).max())
    assert by_name(res, "von Mises stress vs yield strength, layer 1")[0].value == pytest.approx(peak * math.sqrt(1 - nu + nu * nu), rel=1e-12)


# --------------------------------------------------------------------------- fatigue

FATIGUE = """
[checks]
target_cycles = {n}
[checks.materials.film]
yield_strength = "{ys}"
ultimate_strength = "{su}"
fatigue_strength_coefficient = "20 MPa"
fatigue_strength_exponent = {b}
"""


def test_fatigue_life_hand_calculation_and_flip(ds):
    # One lit pulse and relaxation repeated: one closed cycle per run at the critical cell, of range
    # max - min and mean (max + min)/2. Goodman: sigma_ar = sigma_a / (1 - sigma_m / sigma_u); Basquin:
    # N = 0.5 (sigma_ar / sigma_f')^(1/b) (Dowling 2013, ch. 9, eqs. for mean stress and Basquin).
    cells = film_cells(ds)
    s = ds["stress"].values[:, cells]
    c = int(np.argmax(s.max(axis=0) - s.min(axis=0)))
    hi, lo = float(s[:, c].max()), float(s[:, c].min())
    sa, sm = 0.5 * (hi - lo), 0.5 * (hi + lo)
    su, b = 30e6, -0.1
    n_hand = 0.5 * ((sa / (1 - sm / su)) / 20e6) ** (1 / b)
    _, res, det = checks(ds, FATIGUE.format(n=1e3, ys="25 MPa", su="30 MPa", b=b))
    fd = det["fatigue"]["film"]
    assert float(np.sum(fd["cycles_per_run"][:, 2])) == pytest.approx(1.0)  # one cycle per run
    assert fd["life_cycles"]["goodman"] == pytest.approx(n_hand, rel=1e-9)
    life = min(fd["life_cycles"].values())
    for frac, ok in ((0.9, True), (1.1, False)):
        _, res, _ = checks(ds, FATIGUE.format(n=frac * life, ys="25 MPa", su="30 MPa", b=b))
        fat = by_name(res, "fatigue damage")
        assert all(r.passed for r in fat) is ok
        gov = [r for r in fat if "most conservative" in r.note]
        assert len(gov) == 1 and gov[0].value == pytest.approx(frac, rel=1e-9)  # damage = target / life


def test_fatigue_not_assessed_without_target(ds):
    _, res, _ = checks(ds, FATIGUE.format(n=1, ys="25 MPa", su="30 MPa", b=-0.1).replace("target_cycles = 1\n", ""))
    assert isinstance(by_name(res, "fatigue (damage vs allowed damage), layer 1")[0], NotAssessed)


def test_stress_beyond_ultimate_fails_statically(ds):
    # Goodman has no finite amplitude for sigma_m >= sigma_u (Dowling 2013, ch. 9); when the simulated stress
    # itself reaches the ultimate strength the design fails statically: a failing check, no fatigue life.
    mean = 0.5 * float(np.abs(ds["stress"].values[:, film_cells(ds)]).max())
    su = f"{0.5 * mean} Pa"
    _, results, _ = checks(ds, FATIGUE.format(n=1e3, ys=su, su=su, b=-0.1))
    static = by_name(results, "fatigue")
    assert any("static failure" in r.check and r.passed is False for r in static)


@pytest.mark.parametrize(
    "section, match",
    [
        ('[checks.materials.film]\nfatigue_strength_coefficient = "20 MPa"\nfatigue_strength_exponent = 0.05\n',
         "fatigue_strength_exponent"),
        ('[checks.materials.film]\nfatigue_strength_coefficient = "20 MPa"\nfatigue_strength_exponent = 0.0\n',
         "fatigue_strength_exponent"),
        ('[checks.materials.flim]\nyield_strength = "20 MPa"\n', "did you mean 'film'"),
        ('[checks.materials.film]\nlimits = "generic_glasy_network"\n', "did you mean 'generic_glassy_network'"),
        ('[checks.materials.film]\nyield_strength = "20 MPa"\nultimate_strength = "10 MPa"\n', "ultimate_strength"),
        ('[checks.materials.film]\nyield_strength = 20\n', "unit"),
    ],
)
def test_bad_checks_section_one_line(section, match):
    sc = parse_scenario(BASE + "\n[checks]\n" + section)  # the scenario keeps [checks] as read
    with pytest.raises(ActsimInputError, match=match) as exc:
        checks_settings(sc)  # the checks parse it (actsim check does so before simulating)
    assert "\n" not in str(exc.value)


def test_limits_group_carries_source_and_validity(ds):
    _, res, _ = checks(ds, '[checks]\n[checks.materials.film]\nlimits = "generic_glassy_network"\n')
    r = by_name(res, "von Mises stress vs yield strength, layer 1")[0]
    assert "from memory" in r.source and "temperature" in r.validity
    assert "temperature not modelled" in r.note  # the validity range could not be checked: said so


# --------------------------------------------------------------------------- elastica


def test_elastica_blocked_force_small_curvature_limit():
    # Small deflection: tip deflection of uniform curvature kappa L^2/2 against F L^3/(3 EI)
    # gives F = 3 EI kappa / (2 L) (Gere & Timoshenko, Mechanics of Materials, cantilever formulas).
    d = simulate(parse_scenario(base_text(photo_strain=-1e-4)))
    _, res, det = checks(d, "", elastica=True, text=base_text(photo_strain=-1e-4))
    act = det["actuation"]
    kappa, ei, L = d["curvature"].values, d["bending_stiffness"].values, 10e-3
    small = 3 * ei * kappa / (2 * L)
    lit = np.abs(kappa) > 0
    assert float(np.max(np.abs(kappa * L))) < 0.01
    assert np.allclose(act["blocked_force"][lit], small[lit], rtol=1e-5)
    assert np.allclose(act["small_deflection_blocked_force"], d["blocked_force"].values)
    # load line work in the same limit: W = 3 EI kappa^2 L / 8 (same cantilever formulas)
    k0, e0 = act["peak_curvature"], act["peak_bending_stiffness"]
    assert act["load_line"]["work"] == pytest.approx(3 * e0 * k0**2 * L / 8, rel=1e-3)


def test_elastica_blocked_force_departs_at_large_bend(ds):
    _, _, det = checks(ds, "", elastica=True)
    act = det["actuation"]
    i = int(np.argmax(np.abs(ds["curvature"].values)))
    ratio = act["blocked_force"][i] / ds["blocked_force"].values[i]
    assert 1.0 < ratio < 1.1  # kappa L ~ 0.6: the large-deflection force is a few percent higher


def test_tip_load_too_large_for_elastica_one_line(ds):
    with pytest.raises(ActsimInputError, match="largest load solved") as exc:
        checks(ds, '[checks]\ntip_force = "5 kN"\n', elastica=True)
    assert "\n" not in str(exc.value) and "checks.tip_force" in str(exc.value)


# --------------------------------------------------------------------------- joint

JOINT = """
[checks]
required_safety_factor = 2.0
[joint]
mounting = "hinge"
strips = {strips}
angle_start = "{a0}"
angle_end = "{a1}"
[[joint.payload]]
kind = "point"
mass = "{m}"
distance = "{r}"
"""


def test_joint_moment_hand_calculation(ds):
    # Static moment of a point mass about the joint: M = m g r cos(phi), phi from the horizontal
    # (Meriam & Kraige, Engineering Mechanics: Statics, moment of a force).
    _, _, det = checks(ds, JOINT.format(strips=1, a0="-15 deg", a1="15 deg", m="5 g", r="20 mm"))
    jd = det["joint"]
    phi = jd["angle"]
    assert phi[0] == pytest.approx(math.radians(-15)) and phi[-1] == pytest.approx(math.radians(15))
    assert np.allclose(jd["required_moment"], 0.005 * G * 0.020 * np.cos(phi), rtol=1e-12)


def test_joint_strips_needed_hand_calculation_and_flip(ds):
    # Hinge flexure under a pure end moment: M1 = EI (kappa0 - rotation / L) per strip (circular arc);
    # strips in parallel add: n = ceil(max S M_req / M1).
    m, r = 0.05e-3, 5e-3
    _, _, det = checks(ds, JOINT.format(strips='"solve"', a0="-15 deg", a1="15 deg", m="0.05 g", r="5 mm"))
    act, jd = det["actuation"], det["joint"]
    phi = np.linspace(math.radians(-15), math.radians(15), 61)
    m1 = act["peak_bending_stiffness"] * (abs(act["peak_curvature"]) - (phi - phi[0]) / 10e-3)
    n_hand = math.ceil(np.max(2.0 * m * G * r * np.cos(phi) / m1))
    assert jd["strips_needed"] == n_hand and n_hand > 1
    for n, ok in ((n_hand, True), (n_hand - 1, False)):
        _, res, _ = checks(ds, JOINT.format(strips=n, a0="-15 deg", a1="15 deg", m="0.05 g", r="5 mm"))
        j = by_name(res, "joint moment")[0]
        assert j.passed is ok
        assert j.margin == pytest.approx(np.min(n * m1 / (m * G * r * np.cos(phi))), rel=1e-9)


def test_joint_unreachable_angle_fails(ds):
    # The free bend kappa0 L (~36 deg here) is less than the 60 deg travel: no count of strips lifts it.
    _, res, det = checks(ds, JOINT.format(strips='"solve"', a0="-30 deg", a1="30 deg", m="0.05 g", r="5 mm"))
    j = by_name(res, "joint moment")[0]
    assert j.passed is False and j.limit == 0.0 and det["joint"]["strips"] is None


def test_joint_bad_input_one_line():
    for bad, match in (('angle_end = "-40 deg"', "angle_end"), ('strips = 0', "strips"), ('mounting = "lver"', "lever")):
        text = BASE + JOINT.format(strips=1, a0="-30 deg", a1="30 deg", m="5 g", r="20 mm")
        key = bad.split(" = ")[0]
        text = "\n".join(ln for ln in text.splitlines() if not ln.startswith(key + " ")) + "\n"
        text = text.replace("[joint]\n", f"[joint]\n{bad}\n")
        sc = parse_scenario(text)
        with pytest.raises(ActsimInputError, match=match) as exc:
            joint_settings(sc)
        assert "\n" not in str(exc.value)


# --------------------------------------------------------------------------- light and skin


def test_uva_dose_hand_calculation_and_flip(ds):
    # UV-A (315-400 nm) radiant exposure H = f E t_lit against 10 kJ/m^2 for exposures up to 1000 s
    # (ICNIRP 2004 / IEC 62471:2006 4.3.2, from memory). 100 s = 10 runs of the protocol, 40 s lit at 500 W/m^2.
    for f, ok in ((0.4, True), (0.6, False)):
        _, res, det = checks(ds, f'[safety]\nexposure_distance_factor = {f}\nexposure_duration = "100 s"\n')
        r = by_name(res, "light at the exposure position: UV-A")[0]
        assert r.value == pytest.approx(f * 500.0 * 40.0, rel=1e-9)
        assert r.limit == 1e4 and r.passed is ok
        assert det["light"]["protocol_runs"] == pytest.approx(10.0)


def test_skin_contact_not_assessed_without_temperature(ds):
    _, res, _ = checks(ds, "[safety]\nskin_contact = true\n")
    r = by_name(res, "skin contact temperature")[0]
    assert isinstance(r, NotAssessed) and "temperature not modelled" in r.reason
    assert r.passed is None and not any_failed([r])
    assert "not assessed" in format_results(res)


def test_skin_contact_with_heat_model():
    heat = '\n[heat]\nambient_temperature = "20 degC"\ntop_heat_transfer = "10 W/(m^2*K)"\nbottom_heat_transfer = "10 W/(m^2*K)"\n'
    text = BASE + heat
    d = simulate(parse_scenario(text))
    _, res, det = checks(d, '[safety]\nskin_contact = true\nskin_face = "top"\ncontact_duration = "10 min"\n', text=text)
    r = by_name(res, "skin contact temperature, top face")[0]
    assert r.value == pytest.approx(float(d["surface_temperature_top"].max()))
    assert r.unit == "K" and r.passed is (r.value <= r.limit)


def test_write_checks_json_and_csv(ds, tmp_path):
    _, res, det = checks(ds, '[checks]\n[checks.materials.film]\nyield_strength = "1 kPa"\n[safety]\nskin_contact = true\n')
    names = write_checks(res, det, tmp_path)
    data = json.loads((tmp_path / names[0]).read_text())
    assert data["any_failed"] is True
    statuses = {rec["check"]: rec["status"] for rec in data["checks"]}
    assert statuses["von Mises stress vs yield strength, layer 1 (film)"] == "fail"
    assert "not assessed" in statuses.values()
    rows = (tmp_path / names[1]).read_text().strip().splitlines()
    assert len(rows) == len(res) + 1 and rows[0].startswith("check,status,value")
    assert not list(tmp_path.glob(".*.part"))  # atomic: no temporary files left


def test_joint_lever_moment_is_arm_times_load_line(ds):
    # Lever mounting: M1 = r P(u) with u = r (phi - phi0) the contact travel (moment of a force,
    # Meriam & Kraige); at the start angle the tip is blocked, P(0) = the elastica blocked force.
    sec = JOINT.format(strips=2, a0="0 deg", a1="5 deg", m="0.01 g", r="5 mm").replace(
        'mounting = "hinge"', 'mounting = "lever"\nlever_arm = "20 mm"')
    _, res, det = checks(ds, sec, elastica=True)
    ll, jd = det["actuation"]["load_line"], det["joint"]
    assert jd["moment_per_strip"][0] == pytest.approx(0.020 * ll["force"][0], rel=1e-12)
    u = 0.020 * (jd["angle"] - jd["angle"][0])
    assert np.allclose(jd["moment_per_strip"], 0.020 * np.interp(u, ll["displacement"], ll["force"], right=0.0))
    assert by_name(res, "joint moment, 2 strips (lever)")[0].passed in (True, False)


def test_light_default_is_a_working_day_of_repeated_use(ds):
    # Without [safety].exposure_duration the light is assessed over 8 h = 28800 s of repeated use, the daily
    # reference of the actinic limit 30 J/m^2 per 8 h (ICNIRP 2004 / IEC 62471:2006 4.3.1, from memory), not one
    # run. The dose is linear in time: 8 h of a 10 s protocol is 2880 runs, so H_8h = 2880 H_run (hand calculation).
    _, res1, _ = checks(ds, '[safety]\nexposure_distance_factor = 0.1\nexposure_duration = "10 s"\n')
    _, res, det = checks(ds, "[safety]\nexposure_distance_factor = 0.1\n")
    one = by_name(res1, "light at the exposure position: actinic UV")[0]
    day = by_name(res, "light at the exposure position: actinic UV")[0]
    assert det["light"]["exposure_duration"] == 28800.0 and det["light"]["protocol_runs"] == pytest.approx(2880.0)
    assert day.value == pytest.approx(2880.0 * one.value, rel=1e-9)
    assert "exposure_duration not given: 8 h of repeated use assessed" in day.note
    # one run is far within the limit, the working day is not: the old one-run default hid this
    assert one.passed is True and day.passed is False
    # and no [safety] section at all gives the same working day
    _, res0, _ = checks(ds, "")
    assert by_name(res0, "light at the exposure position: actinic UV")[0].value == pytest.approx(day.value / 0.1, rel=1e-9)


def test_plate_with_heat_adds_transverse_thermal_stress():
    # A free homogeneous plate held uniformly 20 K above its reference temperature, in the dark: it expands freely
    # along the strip (sigma_x = 0), but plane strain across the width gives sigma_y = nu sigma_x - E alpha dT
    # = -E alpha dT (Hooke's law with eigenstrain; Timoshenko & Goodier, Theory of Elasticity, 3rd ed., 1970, ch. 13),
    # so sigma_vM = E alpha dT = 1 GPa * 1e-4 1/K * 20 K = 2 MPa (hand calculation). The earlier sigma_y = nu sigma_x
    # gave ~0 and passed any yield strength.
    text = film_toml(irradiance="0 mW/cm^2", duration="2 s", output="1 s", step="0.1 s", cells=10)
    text = text.replace('width = "2 mm"', 'width = "2 mm"\nsection = "plate"').replace(
        "photo_strain = -0.01", 'photo_strain = -0.01\nthermal_expansion = "1e-4 1/K"')
    text += ('\n[heat]\nambient_temperature = "40 degC"\nreference_temperature = "20 degC"\n'
             'top_heat_transfer = "10 W/(m^2*K)"\nbottom_heat_transfer = "10 W/(m^2*K)"\n')
    d = simulate(parse_scenario(text))
    assert float(np.abs(d["stress"].values).max()) < 1.0  # sigma_x ~ 0 Pa
    _, res, det = checks(d, '[checks]\n[checks.materials.film]\nyield_strength = "1.5 MPa"\n', text=text)
    r = by_name(res, "von Mises stress vs yield strength, layer 0 (film)")[0]
    assert r.value == pytest.approx(1e9 * 1e-4 * 20.0, rel=1e-6)
    assert r.passed is False and "E alpha (T - T_ref)" in det["stress"]["state"]


# --------------------------------------------------------------------------- tip force in the strength check


def test_tip_force_stress_homogeneous_strip_hand_calculation():
    # A straight homogeneous strip (dark: no eigenstrain, no free stress) carrying a dead tip force F normal to
    # the clamp: statics gives the clamp moment M = F x_tip exactly (moment of a force about the clamp), M ~ F L
    # for a small deflection, and the bending stress sigma = M c / I = 6 M / (b h^2) at the faces (Gere & Timoshenko,
    # Mechanics of Materials, flexure formula). The outermost cell centre sits at c = h/2 - dz/2, so the cell stress
    # is 6 M / (b h^2) (1 - 1/n) for n cells (hand calculation).
    b, h, L, n, F = 2e-3, 20e-6, 10e-3, 40, 1e-6
    text = film_toml(irradiance="0 mW/cm^2", duration="2 s", output="1 s", step="0.1 s", cells=n)
    d = simulate(parse_scenario(text))
    assert float(np.abs(d["stress"].values).max()) == 0.0
    hand = None
    for ys, ok in (("0.5 MPa", True), ("0.05 MPa", False)):
        _, res, det = checks(d, f'[checks]\ntip_force = "{F} N"\n[checks.materials.film]\nyield_strength = "{ys}"\n',
                             text=text)
        tl = det["actuation"]["tip_load"]
        m = abs(tl["clamp_moment"])
        assert m == pytest.approx(F * tl["tip_x"], rel=1e-6)  # statics of the dead tip force
        # small deflection: M = F L, less the tip's shortening x_tip = L (1 - (F L^2/EI)^2 / 15) (hand calculation:
        # the arc-length shortening int y'^2/2 dx of the small-deflection curve y' = F (L x - x^2/2) / EI, Gere &
        # Timoshenko, as above), 3.75e-4 here (F L^2 / EI = 0.075); the rest is O((F L^2/EI)^4), measured 4.0e-7
        alpha_l = F * L**2 / (1e9 * b * h**3 / 12)
        assert m == pytest.approx(F * L * (1 - alpha_l**2 / 15), rel=2e-6)
        hand = 6.0 * m / (b * h * h) * (1.0 - 1.0 / n)
        r = by_name(res, "von Mises stress vs yield strength, layer 0 (film)")[0]
        assert r.value == pytest.approx(hand, rel=1e-9)
        assert r.passed is ok and "tip-loaded state" in r.note
    assert hand == pytest.approx(73.1e3, rel=1e-3)  # 6 * 1e-8 N m / (2e-3 m * 4e-10 m^2) * 0.975 = 73.1 kPa (3 figures)


def test_tip_force_enters_strength_without_elastica_blocked_force():
    # --no-elastica skips the blocked force and load line only: the tip-loaded state is still checked
    # (a skipped load must never read as a pass).
    text = film_toml(irradiance="0 mW/cm^2", duration="2 s", output="1 s", step="0.1 s", cells=40)
    d = simulate(parse_scenario(text))
    _, res, det = checks(d, '[checks]\ntip_force = "1e-6 N"\n[checks.materials.film]\nyield_strength = "0.05 MPa"\n',
                         text=text, elastica=False)
    assert "tip_load" in det["actuation"] and by_name(res, "von Mises stress vs yield strength, layer 0 (film)")[0].passed is False


def test_joint_stack_of_strips_plausibility(ds):
    # n strips of thickness h stacked in parallel are n h thick (geometry); a stack thicker than the hinge is long,
    # or of more than 1000 strips, is not a set of independent thin strips (common practice, no source): the
    # joint check fails then. Here h = 20 um film + 20 um substrate = 40 um.
    d = ds
    h = 40e-6
    # a heavy payload: hundreds of strips solved; their stack (> 10 mm) outgrows the 10 mm hinge
    _, res, det = checks(d, JOINT.format(strips='"solve"', a0="-15 deg", a1="15 deg", m="5 g", r="20 mm"))
    jd = det["joint"]
    n = jd["strips"]
    assert n * h > 10e-3 and jd["stack_thickness"] == pytest.approx(n * h, rel=1e-12)
    st = by_name(res, f"joint stack of {n} strips (hinge)")[0]
    assert st.passed is False and st.limit == pytest.approx(10e-3) and "not plausible as a stack of strips" in st.note
    assert by_name(res, "joint moment")[0].passed is True and any_failed(res)
    # count limit: with a 100 mm hinge, 1000 strips (40 mm) pass, 1001 fail although thinner than the hinge
    for strips, ok in ((1000, True), (1001, False)):
        sec = JOINT.format(strips=strips, a0="-1 deg", a1="1 deg", m="0.01 g", r="5 mm").replace(
            "[joint]\n", '[joint]\nhinge_length = "100 mm"\n')
        _, res, det = checks(d, sec)
        st = by_name(res, f"joint stack of {strips} strips")[0]
        assert st.value == pytest.approx(strips * h, rel=1e-12) and st.limit == pytest.approx(1000 * h, rel=1e-12)
        assert st.passed is ok and det["joint"]["plausible"] is ok
        assert ("more than 1000 strips" in st.note) is (not ok)


# --------------------------------------------------------------------------- fatigue life beyond the fitted range


def test_fatigue_life_beyond_fitted_range_is_not_printed_raw(ds):
    # Basquin constants hold over the life range they were fitted on (Dowling 2013, ch. 9: typically 1e3..1e7
    # cycles); the packaged glassy-network constants carry cycles = [1e3, 1e7] (illustrative, from memory). A life
    # computed beyond 1e7 is an extrapolation: the notes say "> 1e7 cycles (...; extrapolated)", never the raw
    # number, which stays in the details (checks.json).
    from actsim.checks.mechanical import fatigue_life_text

    _, res, det = checks(ds, '[checks]\ntarget_cycles = 1e3\n[checks.materials.film]\nlimits = "generic_glassy_network"\n')
    fd = det["fatigue"]["film"]
    assert fd["fitted_cycle_range"] == [1e3, 1e7] and min(fd["life_cycles"].values()) > 1e7
    for r in by_name(res, "fatigue damage"):
        assert "modelled life > 1e7 cycles (beyond the fitted range of the constants; extrapolated)" in r.note
        assert "passes to the damage limit" not in r.note
    text = format_results(res)
    for life in fd["life_cycles"].values():
        assert f"{life:.4g}" not in text and f"{life:.3g}" not in text
    # within the range (rubbery network, cycles = [1e3, 1e6]) the life is shown as computed
    _, res, det = checks(ds, '[checks]\ntarget_cycles = 1e3\n[checks.materials.film]\nlimits = "generic_rubbery_network"\n')
    fd = det["fatigue"]["film"]
    m = fd["governing_method"]
    assert 1e3 <= fd["life_cycles"][m] <= 1e6
    assert f"modelled life {fd['life_cycles'][m]:.3g} cycles" in [r for r in by_name(res, "fatigue damage")
                                                                   if "most conservative" in r.note][0].note
    # below the range, and constants without a range of their own (the usual 1e3..1e7 is used and named)
    assert fatigue_life_text(200.0, 1e3, 1e7, True).startswith("200 cycles (below the fitted range of the constants")
    assert fatigue_life_text(3.57e19, 1e3, 1e7, False) == "> 1e7 cycles (beyond the usual fitted range of Basquin constants; extrapolated)"


# --------------------------------------------------------------------------- registry and dispatcher


def test_dispatcher_runs_only_checks_whose_section_is_present(ds):
    # The dispatcher's contract (common practice, no source): a registered check with a section runs only when
    # the scenario gives that section; per-layer checks run once per layer, bottom to top, each layer's rows
    # together, before the scenario-wide checks; details land under each check's key.
    from actsim.checks.context import CheckOutput
    from actsim.checks.run import RegisteredCheck, build_context, dispatch

    calls = []

    def recorder(tag):
        def run(ctx):
            calls.append((tag, ctx.layer))
            return CheckOutput([NotAssessed(f"{tag} {ctx.layer}", "test")], {"tag": tag})
        return run

    registry = (
        RegisteredCheck("per layer", recorder("L"), per_layer=True, details_key="per_layer"),
        RegisteredCheck("per layer, no details", recorder("M"), per_layer=True),
        RegisteredCheck("always", recorder("A"), details_key="always"),
        RegisteredCheck("safety", recorder("S"), section="safety", details_key="safety_test"),
        RegisteredCheck("joint", recorder("J"), section="joint"),
        RegisteredCheck("checks", recorder("C"), section="checks"),
    )
    ctx = build_context(parse_scenario(BASE + "\n[checks]\nrequired_safety_factor = 2.0\n"), ds, elastica=False)
    res, det = dispatch(ctx, registry)
    assert calls == [("L", 0), ("M", 0), ("L", 1), ("M", 1), ("A", None), ("C", None)]
    assert [r.check for r in res] == ["L 0", "M 0", "L 1", "M 1", "A None", "C None"]
    assert det["per_layer"] == {"sub": {"tag": "L"}, "film": {"tag": "L"}} and det["always"] == {"tag": "A"}
    assert "safety_test" not in det and "joint" not in det
    calls.clear()
    ctx = build_context(parse_scenario(BASE + "\n[checks]\n[safety]\nskin_contact = false\n"), ds, elastica=False)
    dispatch(ctx, registry)
    assert [c[0] for c in calls] == ["L", "M", "L", "M", "A", "S", "C"]


def test_registry_runs_joint_checks_only_with_a_joint_section(ds):
    # Without [joint] no joint is sized and no joint row is printed; with it, the joint rows follow the
    # per-layer rows and come before the light rows.
    from actsim.checks.run import REGISTRY

    assert [c.section for c in REGISTRY if c.section] == ["joint"]
    _, res, det = checks(ds, "[checks]\nrequired_safety_factor = 2.0\n")
    assert "joint" not in det and not [r for r in res if r.check.startswith("joint")]
    _, res, det = checks(ds, JOINT.format(strips=1, a0="-15 deg", a1="15 deg", m="5 g", r="20 mm"))
    names = [r.check for r in res]
    first_joint = next(i for i, n in enumerate(names) if n.startswith("joint moment"))
    assert names[first_joint + 1].startswith("joint stack of 1 strip")
    assert all(n.startswith(("von Mises", "fatigue")) for n in names[:first_joint])
    assert all(n.startswith(("light", "photobiological", "skin")) for n in names[first_joint + 2:])
    assert list(det)[:5] == ["title", "required_safety_factor", "actuation", "joint", "stress"]
