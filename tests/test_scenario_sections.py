"""Job sections: the scenario keeps them as tables, each job parses its own, overrides reach them.

No published source: these are the project's own rules for how data flows from the scenario
stage to the jobs (the scenario imports no job; a job's section error is one line from the verb
that reads it).
"""

from __future__ import annotations

import subprocess
import sys

import pytest

from actsim.calibrate.settings import calibration_settings
from actsim.checks.settings import CheckSettings, checks_settings, joint_settings, safety_settings
from actsim.cli import main
from actsim.errors import ActsimInputError
from actsim.patterned import mask_settings
from actsim.scenario import JOB_SECTIONS, apply_overrides, parse_scenario, section_settings

from conftest import film_toml

BASE = film_toml(duration="2 s", output="1 s", step="0.1 s", cells=10)
CHECKS = '\n[checks]\nrequired_safety_factor = 2.0\n[checks.materials.film]\nyield_strength = "40 MPa"\n'
MASK = '\n[mask]\nregions = [ { start = "4 mm", end = "6 mm" } ]\n'


def test_sections_are_kept_as_read_and_parsed_by_their_job():
    sc = parse_scenario(BASE + CHECKS + MASK)
    assert sc.sections["checks"]["required_safety_factor"] == 2.0
    assert sc.sections["mask"]["regions"][0]["end"] == "6 mm"  # the unit string, not parsed here
    cs = checks_settings(sc)
    assert isinstance(cs, CheckSettings) and cs.required_safety_factor == 2.0
    assert cs.materials["film"].yield_strength.value == pytest.approx(40e6)
    assert checks_settings(sc) is cs  # parsed once per scenario object
    mask = mask_settings(sc)
    assert (mask.regions[0].start, mask.regions[0].end) == pytest.approx((4e-3, 6e-3))
    assert safety_settings(sc) is None and joint_settings(sc) is None and calibration_settings(sc) is None


def test_a_bad_section_is_refused_by_the_job_not_the_scenario():
    sc = parse_scenario(BASE + '\n[checks]\nrequired_safety_factor = 0.5\n' + MASK.replace('"6 mm"', '"16 mm"'))
    with pytest.raises(ActsimInputError, match=r"checks\.required_safety_factor") as exc:
        checks_settings(sc)
    assert "\n" not in str(exc.value)
    with pytest.raises(ActsimInputError, match=r"mask\.regions\[0\]\.end") as exc:
        mask_settings(sc)  # the region ends beyond the 10 mm free length
    assert "\n" not in str(exc.value)


def test_an_error_inside_a_parser_is_not_disguised():
    # the old registry turned an ImportError of a job into "section not supported"; now it surfaces as itself
    sc = parse_scenario(BASE + MASK)

    def broken(data, *, field, base_dir, scenario_info):
        raise ImportError("a module the parser needs is missing")

    with pytest.raises(ImportError, match="parser needs"):
        section_settings(sc, "mask", broken)


def test_unknown_or_malformed_top_level_section_still_refused_at_load():
    with pytest.raises(ActsimInputError, match=r"chekcs: unknown field; did you mean 'checks'\?") as exc:
        parse_scenario(BASE + "\n[chekcs]\nrequired_safety_factor = 2.0\n")
    assert "\n" not in str(exc.value)
    with pytest.raises(ActsimInputError, match=r"^mask: expected a table"):
        parse_scenario("mask = 3\n" + BASE)
    assert set(JOB_SECTIONS) == {"checks", "safety", "joint", "mask", "calibration", "along_strip"}


def test_every_material_name_is_known_to_the_sections():
    # a material that no layer uses may still carry limits (as before the sections moved to the jobs)
    text = BASE.replace("[materials.film]", '[materials.spare]\nmodulus = "2 GPa"\n\n[materials.film]')
    sc = parse_scenario(text + '\n[checks]\n[checks.materials.spare]\nyield_strength = "30 MPa"\n')
    assert sc.material_names == ("spare", "film")
    assert checks_settings(sc).materials["spare"].yield_strength.value == pytest.approx(30e6)


def test_overrides_change_the_raw_sections_and_reparse():
    sc = parse_scenario(BASE + CHECKS + MASK)
    assert checks_settings(sc).required_safety_factor == 2.0
    s2 = apply_overrides(sc, {"checks.required_safety_factor": 3.0, "mask.outside_transmission": 0.25,
                              "checks.materials.film.yield_strength": "50 MPa"})
    assert checks_settings(s2).required_safety_factor == 3.0
    assert checks_settings(s2).materials["film"].yield_strength.value == pytest.approx(50e6)
    assert mask_settings(s2).outside_transmission == 0.25
    assert checks_settings(sc).required_safety_factor == 2.0  # the base is unchanged
    s3 = sc.replace(sections={k: v for k, v in sc.sections.items() if k != "mask"})
    assert mask_settings(s3) is None and checks_settings(s3).required_safety_factor == 2.0
    typo = apply_overrides(sc, {"checks.required_safty_factor": 3.0})  # the last field may be new, so it is the job
    with pytest.raises(ActsimInputError, match="did you mean 'required_safety_factor'"):  # ... that refuses it
        checks_settings(typo)
    with pytest.raises(ActsimInputError, match="no field 'regoins'"):
        apply_overrides(sc, {"mask.regoins[0].end": "5 mm"})  # a table on the way must exist


def test_set_on_a_section_from_the_command_line(tmp_path, capsys):
    p = tmp_path / "masked.toml"
    p.write_text(BASE + MASK)
    out = tmp_path / "out"
    assert main(["run", str(p), "-o", str(out), "--no-figures", "--set", 'mask.regions[0].end="25 mm"']) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "mask.regions[0].end" in err[0]
    assert not out.exists()  # refused before the run


def test_the_scenario_stage_imports_no_job(tmp_path):
    code = ("import sys, actsim.scenario as s; s.parse_scenario(open(sys.argv[1]).read()); "
            "jobs = [m for m in sys.modules if m.split('.')[:2] in (['actsim', 'checks'], ['actsim', 'calibrate'], "
            "['actsim', 'study'], ['actsim', 'patterned'], ['actsim', 'joint'], ['actsim', 'report'])]; print(jobs)")
    f = tmp_path / "s.toml"
    f.write_text(BASE + CHECKS + MASK)
    r = subprocess.run([sys.executable, "-c", code, str(f)], capture_output=True, text=True, check=True)
    assert r.stdout.strip() == "[]", r.stdout
