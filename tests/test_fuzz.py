"""The scenario fuzzer (tools/fuzz.py): its TOML writer, its determinism, and a bounded run.

The bounded run (marked ``fuzz``) runs in CI with the rest of the suite (``.ci/run`` runs
``pytest -q``): 150 mutants of the bundled scenarios through ``load_scenario`` + ``simulate`` (and a
sample through ``actsim run``/``check``) of every mutation class not listed in :data:`KNOWN_OPEN`,
and no traceback, non-finite result or hang among them. Longer runs are local:
``python3 tools/fuzz.py --cases 10000 --jobs 2``. Project rule (issue 12), no external source.
"""

from __future__ import annotations

import sys
import tomllib
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tools"))

import fuzz  # noqa: E402

#: Mutation classes that still give tracebacks, non-finite results or hangs on the current code,
#: each with what is left and the part of issue 12 that removes it. The bounded run does not
#: assert on them; empty this once those parts are merged (a class listed here that has become
#: clean is harmless, but delete it so the run guards it).
KNOWN_OPEN: dict[str, str] = {}

#: Outcomes the bounded run must not see for a class outside KNOWN_OPEN.
FORBIDDEN = ("traceback", "nonfinite", "hang", "bad_message")


def test_known_open_names_real_classes():
    assert set(KNOWN_OPEN) <= set(fuzz.CLASSES)


def test_toml_writer_round_trips_the_bundled_scenarios():
    # tomllib (the standard library's TOML reader) reads back what the fuzzer's writer wrote.
    bases = fuzz.base_scenarios()
    assert len(bases) >= 5
    for name, doc, _ in bases:
        assert tomllib.loads(fuzz.dumps(doc)) == doc, name


def test_cases_are_deterministic_and_cover_every_class():
    bases = fuzz.base_scenarios()
    a = [fuzz.make_case(7, i, bases, fuzz.CLASSES, 0.05) for i in range(60)]
    b = [fuzz.make_case(7, i, bases, fuzz.CLASSES, 0.05) for i in range(60)]
    c = [fuzz.make_case(8, i, bases, fuzz.CLASSES, 0.05) for i in range(60)]
    assert [x["data"] for x in a] == [x["data"] for x in b]
    assert [x["data"] for x in a] != [x["data"] for x in c]
    # case i does not depend on how many cases are made
    assert fuzz.make_case(7, 59, bases, fuzz.CLASSES, 0.05)["data"] == a[59]["data"]
    many = {fuzz.make_case(1, i, bases, fuzz.CLASSES, 0.05)["class"] for i in range(400)}
    assert many == set(fuzz.CLASSES)


def test_number_mutation_changes_one_value():
    # A mutant of the class number_extreme differs from its base scenario in one value only.
    bases = fuzz.base_scenarios()
    for i in range(20):
        case = fuzz.make_case(3, i, bases, ("number_extreme",), 0.0)
        base = next(doc for name, doc, _ in bases if name == case["base"])
        mutant = tomllib.loads(case["data"].decode())
        diff = [(p, v) for p, v in fuzz._leaves(mutant)
                if not isinstance(v, (dict, list)) and fuzz._get_parent(base, p)[p[-1]] != v
                and v == v]  # NaN never equals itself: counted by the path below
        changed = {p for p, _ in diff} | {p for p, v in fuzz._leaves(mutant) if isinstance(v, float) and v != v}
        assert len(changed) == 1, (case["desc"], changed)


@pytest.mark.fuzz
def test_bounded_fuzz_run(tmp_path):
    # the open classes are left out of the run (they would only spend the time limit on known hangs)
    classes = [c for c in fuzz.CLASSES if c not in KNOWN_OPEN]
    cases, results, summary = fuzz.fuzz(cases=150, seed=12, jobs=2, cli_fraction=0.05,
                                        classes=classes, out=tmp_path / "fuzz-out")
    assert len(results) == 150
    print("\n" + fuzz.format_summary(summary, len(cases), 0.0))
    bad = [r for r in results if r["class"] not in KNOWN_OPEN and r["outcome"] in FORBIDDEN]
    assert not bad, "\n".join(f"{r['id']} {r['class']} {r['desc'][:80]}: {r['outcome']} {r['message'][:200]}"
                              for r in bad)
    # the failing cases are written for inspection
    n_fail = sum(r["outcome"] not in fuzz.GOOD for r in results)
    assert len(list((tmp_path / "fuzz-out").glob("*.toml"))) == n_fail
