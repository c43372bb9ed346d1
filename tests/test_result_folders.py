"""A result folder is one complete run: staging, swap, manifest, lock, and the readers' check.

The scenarios of issue 12: a check and a run into one folder, two runs at once, kill -9 while a
folder is overwritten, a failed run (exit 3), a file changed after the run, a user's folder given
as the output. The hashes are checked against :mod:`hashlib` (FIPS 180-4 SHA-256), sizes against
``os.stat``.
"""

from __future__ import annotations

import hashlib
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from actsim import folders
from actsim.cli import main
from actsim.errors import ActsimInputError, ActsimSimulationError
from actsim.folders import MANIFEST_FILE, lock_path, result_folder, verify_folder, write_manifest

from conftest import film_toml
from test_check_cli import PASSING, write as write_check_scenario

#: A short run: 2 s of light, 20 cells, fixed steps.
FAST = dict(duration="2 s", output="0.5 s", step="0.05 s", cells=20)


def scenario(tmp_path, title, name=None):
    p = tmp_path / (name or f"{title.replace(' ', '_')}.toml")
    p.write_text(film_toml(**FAST).replace('title = "test film"', f'title = "{title}"'))
    return p


def run(args, capsys):
    status = main(args)
    cap = capsys.readouterr()
    return status, cap.out, cap.err


def cli(args, **kw):
    return subprocess.Popen([sys.executable, "-m", "actsim.cli", *args], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, **kw)


def leftovers(parent: Path, name: str) -> list[str]:
    """Hidden siblings of a result folder (staging, old, lock) and any .part file below the parent."""
    hidden = [p.name for p in parent.iterdir() if p.name.startswith(f".{name}.")]
    parts = [str(p) for p in parent.rglob("*.part")]
    return hidden + parts


def title_of(folder: Path) -> str:
    return json.loads((folder / "summary.json").read_text())["title"]


def wait_for(cond, timeout=60.0):
    deadline = time.time() + timeout
    while not cond():
        assert time.time() < deadline, "timed out"
        time.sleep(0.02)


# ------------------------------------------------------------------------------------------------------------------
# the verbs


def test_check_then_run_then_report_shows_only_the_run(tmp_path, capsys):
    out = tmp_path / "X"
    status, _, err = run(["check", str(write_check_scenario(tmp_path, PASSING)), "-o", str(out), "--no-figures",
                          "--no-elastica"], capsys)
    assert status == 0, err
    assert (out / "checks.json").is_file() and verify_folder(out)["kind"] == "check"
    status, _, err = run(["run", str(scenario(tmp_path, "Second run")), "-o", str(out), "--no-figures"], capsys)
    assert status == 0, err
    # the run replaced the check's folder whole: nothing of the check is left
    assert not (out / "checks.json").exists() and not (out / "checks.csv").exists()
    manifest = verify_folder(out)
    assert manifest["kind"] == "run" and manifest["parts"] == []
    assert sorted(e["path"] for e in manifest["files"]) == ["result.nc", "scenario.toml", "summary.json",
                                                             "timeseries.csv"]
    for e in manifest["files"]:  # size from os.stat, hash from hashlib
        assert e["bytes"] == (out / e["path"]).stat().st_size
        assert e["sha256"] == hashlib.sha256((out / e["path"]).read_bytes()).hexdigest()
    status, _, err = run(["report", str(out)], capsys)
    assert status == 0, err
    page = (out / "report.html").read_text()
    assert "Second run" in page and "Design checks (none run)" in page and "test_check_cli" not in page
    assert leftovers(tmp_path, "X") == []
    verify_folder(out)  # report.html is a reader's file, allowed beside the manifest


def test_two_runs_at_once_second_refused_naming_the_lock(tmp_path, capsys):
    out = tmp_path / "R"
    sc = scenario(tmp_path, "Held")
    first = cli(["run", str(sc), "-o", str(out), "--no-figures"],
                env=dict(os.environ, **{folders.PAUSE_ENV: "30"}))
    try:
        wait_for(lambda: lock_path(out).exists() and any(p.name.startswith(".R.staging-") for p in tmp_path.iterdir()))
        wait_for(lambda: any((p / "summary.json").is_file() for p in tmp_path.glob(".R.staging-*")))
        status, _, err = run(["run", str(sc), "-o", str(out), "--no-figures"], capsys)
        lines = err.strip().splitlines()
        assert status == 2 and len(lines) == 1
        assert "being written by another actsim run" in lines[0] and ".R.lock" in lines[0]
        assert f"process {first.pid}" in lines[0]
        assert not out.exists()  # the second run wrote nothing
    finally:
        first.send_signal(signal.SIGKILL)
        first.wait()
    # the kernel dropped the dead run's lock: the next run goes ahead and removes the dead run's staging folder
    status, _, err = run(["run", str(sc), "-o", str(out), "--no-figures"], capsys)
    assert status == 0, err
    verify_folder(out)
    assert leftovers(tmp_path, "R") == []


def test_kill_during_overwrite_leaves_previous_folder(tmp_path, capsys):
    out = tmp_path / "K"
    assert run(["run", str(scenario(tmp_path, "Previous")), "-o", str(out), "--no-figures"], capsys)[0] == 0
    before = {p.name: p.read_bytes() for p in out.iterdir()}
    proc = cli(["run", str(scenario(tmp_path, "Killed")), "-o", str(out), "--no-figures"],
               env=dict(os.environ, **{folders.PAUSE_ENV: "30"}))
    wait_for(lambda: any((p / "summary.json").is_file() for p in tmp_path.glob(".K.staging-*")))
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    # the previous folder is complete and untouched; the new run's files are only in its hidden staging folder
    assert {p.name: p.read_bytes() for p in out.iterdir()} == before
    assert title_of(out) == "Previous" and verify_folder(out)["kind"] == "run"
    assert any(n.startswith(".K.staging-") for n in leftovers(tmp_path, "K"))
    # the next run into the folder cleans up after the killed one
    assert run(["run", str(scenario(tmp_path, "Next")), "-o", str(out), "--no-figures"], capsys)[0] == 0
    assert title_of(out) == "Next" and leftovers(tmp_path, "K") == []


def test_failed_run_exit_3_leaves_no_folder(tmp_path, capsys, monkeypatch):
    import actsim.solver

    def fail(*a, **k):
        raise ActsimSimulationError("non-finite state at t = 0 s (test)")

    monkeypatch.setattr(actsim.solver, "simulate", fail)
    out = tmp_path / "new" / "deeper" / "F"
    status, text, err = run(["run", str(scenario(tmp_path, "Fails")), "-o", str(out)], capsys)
    assert status == 3 and "non-finite" in err
    assert not (tmp_path / "new").exists()  # neither the folder nor the parents this run created
    assert sorted(p.name for p in tmp_path.iterdir()) == ["Fails.toml"]


def test_failure_after_writing_keeps_previous_folder(tmp_path, capsys, monkeypatch):
    out = tmp_path / "P"
    assert run(["run", str(scenario(tmp_path, "Kept")), "-o", str(out), "--no-figures"], capsys)[0] == 0
    import actsim.cli

    def fail(summary):  # fails after every file of the new run is in the staging folder
        raise ActsimSimulationError(f"{sorted(p.name for p in tmp_path.glob('.P.staging-*/*'))}")

    monkeypatch.setattr(actsim.cli, "summary_table", fail)
    status, _, err = run(["run", str(scenario(tmp_path, "Lost")), "-o", str(out), "--no-figures"], capsys)
    assert status == 3 and "result.nc" in err  # the staging folder held the new files when it failed
    assert title_of(out) == "Kept" and verify_folder(out)
    assert leftovers(tmp_path, "P") == []


def test_mask_files_in_the_same_transaction(tmp_path, capsys):
    sc = tmp_path / "mask.toml"
    sc.write_text(film_toml(**FAST) + '\n[mask]\nregions = [{ start = "2 mm", end = "5 mm" }]\n')
    out = tmp_path / "M"
    status, text, err = run(["run", str(sc), "-o", str(out), "--no-figures"], capsys)
    assert status == 0, err
    manifest = verify_folder(out)
    assert manifest["parts"] == ["mask"] and "patterned.nc" in [e["path"] for e in manifest["files"]]
    assert "patterned.nc" in json.loads((out / "summary.json").read_text())["files"]
    assert f"results written to {out}/" in text and ".staging" not in text


def test_bad_input_writes_nothing(tmp_path, capsys):
    out = tmp_path / "B"
    status, _, err = run(["run", str(scenario(tmp_path, "Bad")), "-o", str(out), "--set", "layers[0].thickness=5 s"],
                         capsys)
    assert status == 2 and len(err.strip().splitlines()) == 1
    assert not out.exists() and leftovers(tmp_path, "B") == []


def test_users_folder_is_not_deleted(tmp_path, capsys):
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / "thesis.tex").write_text("months of work")
    sc = scenario(tmp_path, "Into mine")
    status, _, err = run(["run", str(sc), "-o", str(mine), "--no-figures"], capsys)
    lines = err.strip().splitlines()
    assert status == 2 and len(lines) == 1 and "did not write" in lines[0] and "--overwrite" in lines[0]
    assert sorted(p.name for p in mine.iterdir()) == ["thesis.tex"] and leftovers(tmp_path, "mine") == []
    # a file in place of the folder: refused whatever the options
    f = tmp_path / "afile"
    f.write_text("x")
    status, _, err = run(["run", str(sc), "-o", str(f), "--no-figures", "--overwrite"], capsys)
    assert status == 2 and "is a file" in err and f.read_text() == "x"
    # an empty folder is fine; --overwrite replaces a foreign one whole
    (tmp_path / "empty").mkdir()
    assert run(["run", str(sc), "-o", str(tmp_path / "empty"), "--no-figures"], capsys)[0] == 0
    assert run(["run", str(sc), "-o", str(mine), "--no-figures", "--overwrite"], capsys)[0] == 0
    assert not (mine / "thesis.tex").exists() and verify_folder(mine)


def test_report_refuses_a_changed_or_old_folder(tmp_path, capsys):
    out = tmp_path / "T"
    assert run(["run", str(scenario(tmp_path, "Tampered")), "-o", str(out), "--no-figures"], capsys)[0] == 0

    def report_error():
        status, _, err = run(["report", str(out)], capsys)
        lines = err.strip().splitlines()
        assert status == 2 and len(lines) == 1 and lines[0].startswith("actsim: error: RESULT_DIR:"), err
        assert not (out / "report.html").exists()
        return lines[0]

    csv = out / "timeseries.csv"
    good = csv.read_bytes()
    csv.write_bytes(good.replace(b"0", b"1", 1))  # same size, other bytes: the hash catches it
    assert "'timeseries.csv'" in report_error() and "does not match its manifest" in report_error()
    csv.write_bytes(good + b"\n")
    assert "does not match its manifest" in report_error()
    csv.write_bytes(good)
    (out / "checks.json").write_text("[]")  # a file of another run dropped in
    assert "'checks.json'" in report_error() and "not in its manifest" in report_error()
    (out / "checks.json").unlink()
    (out / "summary.json").unlink()
    (out / "summary.json").write_text("{}")
    assert "does not match" in report_error()
    (out / MANIFEST_FILE).unlink()  # as written by an actsim older than the manifest
    msg = report_error()
    assert "no actsim manifest.json" in msg and "re-run" in msg


# ------------------------------------------------------------------------------------------------------------------
# the module itself (no simulation)


def _transaction(target, text="new", **kw):
    with result_folder(target, kind="run", **kw) as stage:
        (stage / "sub").mkdir(parents=True)
        (stage / "a.txt").write_text(text)
        (stage / "sub" / "b.txt").write_text(text * 2)


def test_verify_folder_kinds_and_paths(tmp_path):
    target = tmp_path / "V"
    _transaction(target)
    m = verify_folder(target, kinds=("run",))
    assert [e["path"] for e in m["files"]] == ["a.txt", "sub/b.txt"]
    with pytest.raises(ActsimInputError, match="output of `actsim run`"):
        verify_folder(target, kinds=("sweep",))
    (target / "sub" / "b.txt").unlink()
    with pytest.raises(ActsimInputError, match="listed in its manifest but missing"):
        verify_folder(target)
    with pytest.raises(ActsimInputError, match="does not exist"):
        verify_folder(tmp_path / "nowhere")
    # a manifest listing a path outside the folder is refused, not followed
    rec = json.loads((target / MANIFEST_FILE).read_text())
    rec["files"] = [{"path": "../outside", "bytes": 0, "sha256": ""}]
    (target / MANIFEST_FILE).write_text(json.dumps(rec))
    with pytest.raises(ActsimInputError, match="outside the folder"):
        verify_folder(target)


def test_rerun_replaces_whole_and_cleans_leftovers(tmp_path):
    target = tmp_path / "W"
    _transaction(target, "old")
    (target / "extra.txt").write_text("from the old run")  # ours (manifest present): replaced whole anyway
    stale = tmp_path / ".W.staging-1-deadbeef"
    stale.mkdir()
    (stale / "half.nc").write_text("partial")
    lock_path(target).write_text("12345\n")  # a lock file left by a killed run: nobody holds its flock
    _transaction(target, "new")
    assert sorted(p.name for p in target.iterdir()) == ["a.txt", MANIFEST_FILE, "sub"]
    assert (target / "a.txt").read_text() == "new"
    assert [p.name for p in tmp_path.iterdir()] == ["W"]


def test_swap_without_exchange_and_its_recovery(tmp_path, monkeypatch):
    target = tmp_path / "S"
    _transaction(target, "old")
    monkeypatch.setattr(folders, "_exchange", lambda a, b: False)  # file systems without renameat2
    _transaction(target, "new")
    assert (target / "a.txt").read_text() == "new" and [p.name for p in tmp_path.iterdir()] == ["S"]
    # a swap cut between its two renames leaves the old folder complete under a hidden name: the next run
    # into the folder puts it back before anything else (and then replaces it as usual)
    os.rename(target, tmp_path / ".S.old-1-cafe")
    seen = {}
    with result_folder(target, kind="run") as stage:
        seen["restored"] = (target / "a.txt").read_text()
        (stage / "a.txt").parent.mkdir(parents=True)
        (stage / "a.txt").write_text("newer")
    assert seen["restored"] == "new" and (target / "a.txt").read_text() == "newer"
    assert [p.name for p in tmp_path.iterdir()] == ["S"]


def test_exception_in_block_removes_staging(tmp_path):
    target = tmp_path / "E"
    _transaction(target, "kept")
    with pytest.raises(KeyboardInterrupt):
        with result_folder(target, kind="run") as stage:
            stage.mkdir()
            (stage / "a.txt").write_text("half")
            raise KeyboardInterrupt
    assert (target / "a.txt").read_text() == "kept" and [p.name for p in tmp_path.iterdir()] == ["E"]
    write_manifest(target, kind="run")  # a hand-assembled folder can be sealed as it is
    verify_folder(target)


@pytest.mark.parametrize("failure", ["netcdf", "disk full"])
def test_a_full_disk_is_one_line_and_leaves_no_folder(tmp_path, capsys, monkeypatch, failure):
    # a full disk while result.nc is written: the NetCDF library raises RuntimeError("NetCDF: HDF error") naming no
    # file (issue 12), a plain write OSError(ENOSPC); either is one line naming the file, exit 3, nothing kept
    import errno

    from actsim import io
    from actsim.cli import main
    from conftest import film_toml

    def full(*args, **kwargs):
        if failure == "netcdf":
            raise RuntimeError("NetCDF: HDF error")
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(io, "_to_netcdf", full)
    scen = tmp_path / "s.toml"
    scen.write_text(film_toml(duration="1 s", step="0.1 s"))
    out = tmp_path / "out"
    assert main(["run", str(scen), "-o", str(out), "--no-figures"]) == 3
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "result.nc" in err[0] and "could not be written" in err[0] and "disk full" in err[0], err
    assert not out.exists() and not any(p.name.startswith(".out") for p in tmp_path.iterdir())
