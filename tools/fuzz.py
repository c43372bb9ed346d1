"""Mutate the bundled scenarios and count what actsim does with each mutant.

Each case takes one bundled scenario (``scenarios/*.toml``), applies one mutation of a named class
(numbers to extremes, wrong units, deleted or misspelt fields, swapped types, deep nesting, long or
unusual text, duplicated sections, odd data-file paths, huge sizes), and runs the mutant through
actsim's entry points in a pool of worker processes with a time limit per case:

* ``api``: ``actsim.load_scenario`` + ``actsim.simulate`` (every case);
* ``run`` / ``check``: ``actsim run`` / ``actsim check`` into a temporary folder (a sample of cases).

Outcomes:

=================  ===================================================================================
ok                 finite results (for the command line: exit 0 or 1)
clean              an ``ActsimError`` with one line (command line: exit 2/3 and one ``actsim: error`` line)
traceback          any other exception (a worker that dies counts here too)
nonfinite          a returned result holding NaN/inf where no ``missing_means`` attribute allows it
hang               the per-case time limit passed
noisy              command line only: an error exit with more on stderr than the one error line
                   (warnings, several lines)
written_on_error   command line only: an error exit that left files in the output folder
bad_message        an ``ActsimError`` whose message is empty or has several lines
=================  ===================================================================================

Everything that is not ``ok`` or ``clean`` is a failure; each is written to ``--out`` as the
mutant (``NNNNN-outcome-class.toml``) and a note with the outcome, the message and the traceback.
The run is deterministic for a given ``--seed`` and ``--cases`` (case i depends on the seed and i
only, not on ``--jobs``)::

    python3 tools/fuzz.py --cases 2000 --jobs 2 --seed 1 --out fuzz-out
    python3 tools/fuzz.py --cases 200 --classes number_extreme,unit_wrong_kind --cli-fraction 0

Workers import actsim once, run with one numba thread and an address-space limit (``--memory``),
and are replaced after a hang or a crash.
"""

from __future__ import annotations

import argparse
import collections
import contextlib
import io
import json
import math
import multiprocessing as mp
import os
import random
import re
import shutil
import sys
import tempfile
import time
import tomllib
import traceback
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SCEN = ROOT / "scenarios"

OUTCOMES = ("ok", "clean", "traceback", "nonfinite", "hang", "noisy", "written_on_error", "bad_message")
GOOD = ("ok", "clean")

#: Numbers a value is replaced with (class number_extreme); "x" entries scale the original.
EXTREMES = (0.0, -0.0, -1.0, 1e-320, 5e-324, 1e-300, 1e-30, 1e30, 1e100, 1e308, math.inf, -math.inf, math.nan,
            "x-1", "x1e6", "x1e-6", "x1e12", "x1e-12", 2**63, -(2**63), 10**30)
#: Units of other kinds (class unit_wrong_kind).
WRONG_UNITS = ("s", "um", "mm", "nm", "W/m^2", "mW/cm^2", "degC", "K", "1/m", "1/s", "mol/L", "GPa", "L/(mol*cm)",
               "J", "N", "W/(m^2*K)", "kg/m^3", "", "furlong", "%", "deg", "m^2", "Hz", "per second")
#: Text that replaces a string (class unicode).
UNICODE = ("12 µm", "１２ um", "12\u00a0um", "12 um\u200b", "\u202e12 um", "12 um 🙂", "e\u0301\u0301\u0301",
           "\u0000", "tab\there", "line\nbreak", "$\\undefinedcommand$", "$x^2$", "<script>x</script>", "𝟙𝟚 nm",
           "\ufeff365 nm", "३६५ nm", "365\u2009nm")
#: Data-file paths (class data_path).
DATA_PATHS = ("../../../../etc/hostname", "/proc/self/environ", "/dev/null", "/dev/zero", ".", "/", "data",
              "does_not_exist.csv", "data/../data/led_405_spectrum.csv", "~/x.csv", "latin1.csv", "binary.csv",
              "data/led_405_spectrum.csv\u0000x", "", "C:\\\\data\\\\x.csv", "data/", "data/valve_film_absorptivity.csv")
#: Keys whose values name a data file.
FILE_KEYS = ("file",)

CLASSES = ("number_extreme", "unit_wrong_kind", "field_deleted", "field_renamed", "type_swapped", "deep_nesting",
           "long_string", "unicode", "duplicate_section", "data_path", "size_extreme", "section_deleted",
           "empty_value", "invalid_utf8")

_NUM = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*)$")
_BARE = re.compile(r"^[A-Za-z0-9_-]+$")


# --------------------------------------------------------------------------- TOML text


def _key(k: str) -> str:
    return k if _BARE.match(k) else json.dumps(k, ensure_ascii=False)


def _scalar(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if math.isnan(v):
            return "nan"
        if math.isinf(v):
            return "inf" if v > 0 else "-inf"
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, list):
        return "[" + ", ".join(_scalar(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{_key(k)} = {_scalar(x)}" for k, x in v.items()) + " }"
    raise TypeError(type(v))


def _is_table_array(v) -> bool:
    return isinstance(v, list) and bool(v) and all(isinstance(x, dict) for x in v)


def dumps(doc: dict) -> str:
    """TOML text of a parsed document (tables as sections, arrays of tables as ``[[...]]``)."""
    out: list[str] = []

    def table(d: dict, prefix: list[str]):
        simple = [(k, v) for k, v in d.items() if not isinstance(v, dict) and not _is_table_array(v)]
        for k, v in simple:
            out.append(f"{_key(k)} = {_scalar(v)}")
        for k, v in d.items():
            if isinstance(v, dict):
                name = ".".join(_key(p) for p in prefix + [k])
                out.append(f"\n[{name}]")
                table(v, prefix + [k])
            elif _is_table_array(v):
                name = ".".join(_key(p) for p in prefix + [k])
                for item in v:
                    out.append(f"\n[[{name}]]")
                    # nested tables inside an array entry go inline (keeps the writer simple)
                    for kk, vv in item.items():
                        out.append(f"{_key(kk)} = {_scalar(vv)}")

    table(doc, [])
    return "\n".join(out) + "\n"


# --------------------------------------------------------------------------- mutations


def _leaves(node, path=()):
    """(path, value) of every non-container value, and of every container too (for deletion and swaps)."""
    if isinstance(node, dict):
        for k, v in node.items():
            yield path + (k,), v
            yield from _leaves(v, path + (k,))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield path + (i,), v
            yield from _leaves(v, path + (i,))


def _get_parent(doc, path):
    node = doc
    for p in path[:-1]:
        node = node[p]
    return node


def _set(doc, path, value):
    _get_parent(doc, path)[path[-1]] = value


def _fmt_num(x) -> str:
    if isinstance(x, float):
        if math.isnan(x):
            return "nan"
        if math.isinf(x):
            return "inf" if x > 0 else "-inf"
        return repr(x)
    return str(x)


def _extreme(rng, original: float):
    e = rng.choice(EXTREMES)
    if isinstance(e, str):
        factor = -1.0 if e == "x-1" else float(e[1:])
        return original * factor
    return e


def _path_text(path) -> str:
    return ".".join(str(p) for p in path)


def mutate(rng: random.Random, doc: dict, text: str, klass: str):
    """One mutant of ``doc`` (``text`` is its TOML): returns (description, bytes)."""
    doc = json.loads(json.dumps(doc, allow_nan=True))  # deep copy (floats survive; TOML has no dates here)
    leaves = list(_leaves(doc))
    scalars = [(p, v) for p, v in leaves if not isinstance(v, (dict, list))]
    if klass == "number_extreme":
        cands = [(p, v) for p, v in scalars if isinstance(v, (int, float)) and not isinstance(v, bool)
                 or isinstance(v, str) and _NUM.match(v)]
        p, v = rng.choice(cands)
        if isinstance(v, str):
            num, unit = _NUM.match(v).groups()
            new = _extreme(rng, float(num))
            value = f"{_fmt_num(new)} {unit}".strip() if rng.random() < 0.8 else new
        else:
            value = _extreme(rng, float(v))
            if isinstance(v, int) and isinstance(value, float) and math.isfinite(value) and rng.random() < 0.5:
                value = int(value) if abs(value) < 1e300 else value
        _set(doc, p, value)
        return f"{_path_text(p)}: {v!r} -> {value!r}", dumps(doc).encode()
    if klass == "unit_wrong_kind":
        cands = [(p, v) for p, v in scalars if isinstance(v, str) and _NUM.match(v) and _NUM.match(v).group(2)]
        if not cands:
            return mutate(rng, doc, text, "number_extreme")
        p, v = rng.choice(cands)
        num, unit = _NUM.match(v).groups()
        new = f"{num} {rng.choice([u for u in WRONG_UNITS if u != unit])}".strip()
        _set(doc, p, new)
        return f"{_path_text(p)}: {v!r} -> {new!r}", dumps(doc).encode()
    if klass == "field_deleted":
        cands = [(p, v) for p, v in leaves if isinstance(p[-1], str)]
        p, v = rng.choice(cands)
        del _get_parent(doc, p)[p[-1]]
        return f"{_path_text(p)} deleted", dumps(doc).encode()
    if klass == "field_renamed":
        cands = [(p, v) for p, v in leaves if isinstance(p[-1], str) and len(p[-1]) > 1]
        p, v = rng.choice(cands)
        k = p[-1]
        how = rng.randrange(5)
        if how == 0:
            i = rng.randrange(len(k) - 1)
            new = k[:i] + k[i + 1] + k[i] + k[i + 2:]
        elif how == 1:
            i = rng.randrange(len(k))
            new = k[:i] + k[i + 1:]
        elif how == 2:
            new = k + "s"
        elif how == 3:
            new = k.upper()
        else:
            new = k.replace("_", "-") if "_" in k else k + "_x"
        parent = _get_parent(doc, p)
        if new in parent or not new:
            new = k + "_typo"
        parent[new] = parent.pop(k)
        return f"{_path_text(p)} renamed {new!r}", dumps(doc).encode()
    if klass == "type_swapped":
        p, v = rng.choice(leaves)
        if isinstance(v, str):
            m = _NUM.match(v)
            value = float(m.group(1)) if m else rng.choice([1.0, True, [v], {"value": v}])
        elif isinstance(v, bool):
            value = rng.choice(["true", "yes", 1])
        elif isinstance(v, (int, float)):
            value = rng.choice([str(v), f"{v} um", [v], True])
        elif isinstance(v, list):
            value = rng.choice([v[0] if v else 1, "list", {"x": 1}])
        else:
            value = rng.choice(["table", 1.5, [1, 2]])
        _set(doc, p, value)
        return f"{_path_text(p)}: {type(v).__name__} -> {value!r:.60}", dumps(doc).encode()
    if klass == "deep_nesting":
        p, v = rng.choice(scalars)
        depth = rng.choice([64, 400, 1000, 5000])
        marker = "__FUZZ_DEEP__"
        _set(doc, p, marker)
        if rng.random() < 0.5:
            deep = "[" * depth + "1" + "]" * depth
        else:
            deep = "{ a = " * depth + "1" + " }" * depth
        return f"{_path_text(p)}: nested {depth} deep", dumps(doc).replace(json.dumps(marker), deep).encode()
    if klass == "long_string":
        cands = [(p, v) for p, v in scalars if isinstance(v, str)] or scalars
        p, v = rng.choice(cands)
        n = rng.choice([10_000, 300_000, 1_000_000])
        value = (str(v) + " ") * (n // max(len(str(v)) + 1, 1)) if rng.random() < 0.5 else "x" * n
        _set(doc, p, value)
        return f"{_path_text(p)}: string of {len(value)} characters", dumps(doc).encode()
    if klass == "unicode":
        cands = [(p, v) for p, v in scalars if isinstance(v, str)] or scalars
        p, v = rng.choice(cands)
        value = rng.choice(UNICODE)
        if rng.random() < 0.3 and isinstance(p[-1], str):  # a key in unicode
            parent = _get_parent(doc, p)
            parent[p[-1] + rng.choice(["µ", "\u200b", "ü", "😀"])] = parent.pop(p[-1])
            return f"{_path_text(p)}: key with a non-ASCII character", dumps(doc).encode()
        _set(doc, p, value)
        return f"{_path_text(p)}: {value!r}", dumps(doc).encode()
    if klass == "duplicate_section":
        tables = [(p, v) for p, v in leaves if isinstance(v, dict) and len(p) == 1]
        arrays = [(p, v) for p, v in leaves if _is_table_array(v) and len(p) == 1]
        if arrays and (rng.random() < 0.5 or not tables):
            p, v = rng.choice(arrays)
            i = rng.randrange(len(v))
            v.insert(i, json.loads(json.dumps(v[i])))
            return f"{_path_text(p)}[{i}] duplicated", dumps(doc).encode()
        t = dumps(doc)
        headers = re.findall(r"^\[[^\[\]]+\]$", t, flags=re.M)
        h = rng.choice(headers) if headers else "[strip]"
        return f"section {h} written twice", (t + f"\n{h}\nfuzz_extra = 1\n").encode()
    if klass == "data_path":
        path = rng.choice(DATA_PATHS)
        files = [(p, v) for p, v in scalars if p[-1] in FILE_KEYS]
        if files and rng.random() < 0.7:
            p, v = rng.choice(files)
            _set(doc, p, path)
            return f"{_path_text(p)}: {path!r}", dumps(doc).encode()
        mats = doc.get("materials") or {}
        if mats:
            name = rng.choice(sorted(mats))
            field = rng.choice(["reactant_absorptivity", "product_absorptivity"])
            mats[name][field] = {"file": path}
            return f"materials.{name}.{field}: file {path!r}", dumps(doc).encode()
        return mutate(rng, doc, text, "number_extreme")
    if klass == "size_extreme":
        arrays = [(p, v) for p, v in leaves if _is_table_array(v)]
        ints = [(p, v) for p, v in scalars if isinstance(v, int) and not isinstance(v, bool)]
        if arrays and (rng.random() < 0.5 or not ints):
            p, v = rng.choice(arrays)
            k = rng.choice([50, 500, 5000])
            _set(doc, p, [json.loads(json.dumps(v[i % len(v)])) for i in range(k)])
            return f"{_path_text(p)}: {k} entries", dumps(doc).encode()
        if ints:
            p, v = rng.choice(ints)
            value = rng.choice([10**4, 10**6, 10**9, 10**18, 2**63 - 1, 10**400, -1, 0])
            _set(doc, p, value)
            return f"{_path_text(p)}: {v!r} -> {value!r:.40}", dumps(doc).encode()
        return mutate(rng, doc, text, "number_extreme")
    if klass == "section_deleted":
        tops = [k for k, v in doc.items() if isinstance(v, dict) or _is_table_array(v)]
        k = rng.choice(tops)
        del doc[k]
        return f"[{k}] deleted", dumps(doc).encode()
    if klass == "empty_value":
        p, v = rng.choice(leaves)
        value = rng.choice(["", [], {}, " ", "   um"])
        _set(doc, p, value)
        return f"{_path_text(p)}: {value!r}", dumps(doc).encode()
    if klass == "invalid_utf8":
        data = dumps(doc).encode()
        how = rng.randrange(3)
        if how == 0:
            return "title in Latin-1", data.replace(b'title = "', b'title = "caf\xe9 ', 1)
        if how == 1:
            i = rng.randrange(len(data))
            return f"byte 0xff at offset {i}", data[:i] + b"\xff" + data[i:]
        return "UTF-16 encoded file", dumps(doc).encode("utf-16")
    raise ValueError(f"unknown mutation class {klass!r}")


def base_scenarios() -> list[tuple[str, dict, str]]:
    """(name, parsed document, text) of every bundled scenario."""
    out = []
    for p in sorted(SCEN.glob("*.toml")):
        text = p.read_text(encoding="utf-8")
        out.append((p.stem, tomllib.loads(text), text))
    return out


def make_case(seed: int, i: int, bases, classes, cli_fraction: float) -> dict:
    """Case ``i`` of the run with ``seed``: the same for any number of jobs."""
    rng = random.Random(f"actsim-fuzz-{seed}-{i}")
    name, doc, text = bases[rng.randrange(len(bases))]
    klass = classes[rng.randrange(len(classes))]
    desc, data = mutate(rng, doc, text, klass)
    mode = "api"
    if rng.random() < cli_fraction:
        mode = rng.choice(["run", "check"])
    return {"id": i, "base": name, "class": klass, "desc": desc, "data": data, "mode": mode}


# --------------------------------------------------------------------------- running a case (in a worker)


def _actsim_frame(tb) -> str:
    """The innermost frame inside actsim of a traceback, as ``module.function``."""
    where = "?"
    for fs in traceback.extract_tb(tb):
        f = fs.filename.replace("\\", "/")
        if "/actsim/" in f:
            where = f"{f.split('/actsim/')[-1]}:{fs.name}"
    return where


def _nonfinite(ds) -> str:
    import numpy as np

    for name, var in ds.variables.items():
        if var.dtype.kind != "f":
            continue
        v = np.asarray(var.values)
        if np.isinf(v).any() or (np.isnan(v).any() and "missing_means" not in var.attrs):
            return name
    return ""


def _run_api(path: Path) -> tuple[str, str, str]:
    import warnings

    import actsim
    from actsim.errors import ActsimError

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            sc = actsim.load_scenario(path)
            ds = actsim.simulate(sc)
        except ActsimError as exc:
            msg = str(exc)
            if msg.strip() and "\n" not in msg:
                return "clean", msg, ""
            return "bad_message", msg, f"{type(exc).__name__} at {_actsim_frame(exc.__traceback__)}"
        except BaseException as exc:  # noqa: BLE001 - a fuzzer counts every escape
            if isinstance(exc, KeyboardInterrupt):
                raise
            return "traceback", f"{type(exc).__name__}: {str(exc)[:300]}", \
                "".join(traceback.format_exception(type(exc), exc, exc.__traceback__))[-4000:]
    bad = _nonfinite(ds)
    if bad:
        return "nonfinite", f"variable {bad} is not finite", ""
    return "ok", "", ""


def _run_cli(path: Path, mode: str, work: Path) -> tuple[str, str, str]:
    from actsim.cli import main
    from actsim.jitcache import COMPILE_NOTICE

    out = work / "out"
    if out.exists():
        shutil.rmtree(out)
    argv = [mode, str(path), "-o", str(out), "--no-figures"]
    if mode == "check":
        argv += ["--elastica-time-limit", "5"]
    so, se = io.StringIO(), io.StringIO()
    try:
        with contextlib.redirect_stdout(so), contextlib.redirect_stderr(se):
            rc = main(argv)
    except SystemExit as exc:  # argparse
        rc = exc.code if isinstance(exc.code, int) else 2
    except BaseException as exc:  # noqa: BLE001
        if isinstance(exc, KeyboardInterrupt):
            raise
        return "traceback", f"{type(exc).__name__}: {str(exc)[:300]}", \
            "".join(traceback.format_exception(type(exc), exc, exc.__traceback__))[-4000:]
    lines = [ln for ln in se.getvalue().splitlines() if ln.strip() and ln.strip() != COMPILE_NOTICE]
    if rc in (0, 1):
        return "ok", "", ""
    written = out.exists() and any(out.rglob("*"))
    if written:
        return "written_on_error", f"exit {rc}; left {sorted(p.name for p in out.rglob('*'))[:8]}", "\n".join(lines)[-2000:]
    if len(lines) == 1 and lines[0].startswith("actsim: error: "):
        return "clean", lines[0], ""
    first = next((ln for ln in lines if not ln.startswith("actsim: error")), lines[0] if lines else "(nothing)")
    return "noisy", f"exit {rc}; {len(lines)} lines on stderr, e.g. {first[:200]}", "\n".join(lines)[-2000:]


def _worker(conn, memory: int):
    os.environ["NUMBA_NUM_THREADS"] = "1"
    os.environ.setdefault("CI", "1")  # no progress bars
    try:
        import resource

        if memory > 0:
            resource.setrlimit(resource.RLIMIT_AS, (memory, memory))
    except (ImportError, ValueError, OSError):
        pass
    sys.setrecursionlimit(max(sys.getrecursionlimit(), 1000))
    import actsim  # noqa: F401 - once per worker
    import actsim.cli  # noqa: F401

    work = Path(tempfile.mkdtemp(prefix="actsim-fuzz-"))
    # the mutants' data files resolve against their own folder: give it the bundled data and two bad files
    shutil.copytree(SCEN / "data", work / "data")
    (work / "latin1.csv").write_bytes("# synthetique donn\xe9es\nwavelength (nm),value (1)\n400,1\n".encode("latin-1"))
    (work / "binary.csv").write_bytes(bytes(range(256)) * 4)
    os.chdir(work)
    conn.send("ready")
    while True:
        case = conn.recv()
        if case is None:
            break
        path = work / "case.toml"
        path.write_bytes(case["data"])
        if case["mode"] == "api":
            res = _run_api(path)
        else:
            res = _run_cli(path, case["mode"], work)
        conn.send(res)
    shutil.rmtree(work, ignore_errors=True)


class _Slot:
    def __init__(self, ctx, memory):
        self.ctx, self.memory = ctx, memory
        self.start()

    def start(self):
        parent, child = self.ctx.Pipe()
        self.proc = self.ctx.Process(target=_worker, args=(child, self.memory), daemon=True)
        self.proc.start()
        child.close()
        self.conn = parent
        self.ready = False
        self.case = None
        self.deadline = None

    def kill(self):
        with contextlib.suppress(Exception):
            self.proc.kill()
            self.proc.join(5)
        with contextlib.suppress(Exception):
            self.conn.close()


#: Seconds without an answer that count as a hang: a valid scenario within every size limit may take up to
#: about a minute of time loop before actsim asks for --yes (actsim.scenario.limits.WORK_LIMIT), so a shorter
#: limit would count legitimate work (5,000 protocol steps of a heated strip) as a hang.
HANG_SECONDS = 90.0


def run_cases(cases, *, jobs: int = 2, timeout: float = HANG_SECONDS, memory: int = 3 << 30, progress=None):
    """Run the cases in ``jobs`` worker processes; returns one result dict per case, in case order."""
    from multiprocessing.connection import wait

    ctx = mp.get_context("spawn")
    slots = [_Slot(ctx, memory) for _ in range(max(1, jobs))]
    pending = collections.deque(cases)
    results: dict[int, dict] = {}
    start_grace = 120.0  # importing actsim and loading the numba caches
    for s in slots:
        s.deadline = time.monotonic() + start_grace

    def finish(slot, outcome, message, detail):
        c = slot.case
        results[c["id"]] = {**{k: c[k] for k in ("id", "base", "class", "desc", "mode")}, "outcome": outcome,
                            "message": message, "detail": detail, "seconds": time.monotonic() - slot.t0}
        slot.case = None
        if progress:
            progress(len(results))

    try:
        while len(results) < len(cases):
            for s in slots:
                if s.ready and s.case is None and pending:
                    s.case = pending.popleft()
                    s.t0 = time.monotonic()
                    s.deadline = s.t0 + timeout
                    s.conn.send(s.case)
            busy = [s for s in slots if not s.ready or s.case is not None]
            now = time.monotonic()
            ready = wait([s.conn for s in busy], timeout=max(0.01, min(s.deadline for s in busy) - now)) if busy else []
            for s in busy:
                if s.conn in ready:
                    try:
                        msg = s.conn.recv()
                    except (EOFError, OSError):
                        if s.case is not None:
                            finish(s, "traceback", f"worker died (exit code {s.proc.exitcode})", "")
                        s.kill()
                        s.start()
                        s.deadline = time.monotonic() + start_grace
                        continue
                    if msg == "ready":
                        s.ready = True
                    else:
                        finish(s, *msg)
                elif time.monotonic() > s.deadline:
                    if s.case is not None:
                        finish(s, "hang", f"no answer within {timeout:g} s", "")
                    elif not s.ready:
                        raise RuntimeError("a fuzz worker did not start within 120 s")
                    s.kill()
                    s.start()
                    s.deadline = time.monotonic() + start_grace
    finally:
        for s in slots:
            with contextlib.suppress(Exception):
                if s.proc.is_alive() and s.ready and s.case is None:
                    s.conn.send(None)
                    s.proc.join(2)
            s.kill()
    return [results[c["id"]] for c in cases]


# --------------------------------------------------------------------------- report


def signature(r: dict) -> str:
    """A failure's group: outcome, and the exception and where (numbers and paths blanked)."""
    text = r["message"]
    if r["outcome"] == "traceback" and r["detail"]:
        last = [ln for ln in r["detail"].splitlines() if ln.strip()]
        files = [ln.strip() for ln in last if ln.strip().startswith("File ")]
        where = [ln for ln in files if "/actsim/" in ln]
        if where:
            loc = where[-1].split("/actsim/")[-1]
        elif files:
            loc = re.sub(r'File ".*/', 'File "', files[-1])
        else:
            loc = ""
        loc = re.sub(r"line \d+", "line N", loc)
        text = f"{r['message'].split(':')[0]} at {loc}"
    text = re.sub(r"[-+]?\d+(\.\d+)?(e[-+]?\d+)?", "N", text)
    text = re.sub(r"'[^']*'", "'…'", text)
    return f"{r['outcome']}: {text[:160]}"


def summarize(results) -> dict:
    counts = collections.Counter(r["outcome"] for r in results)
    by_class: dict[str, collections.Counter] = collections.defaultdict(collections.Counter)
    for r in results:
        by_class[r["class"]][r["outcome"]] += 1
    sigs = collections.Counter(signature(r) for r in results if r["outcome"] not in GOOD)
    return {"counts": {o: counts.get(o, 0) for o in OUTCOMES}, "by_class": {k: dict(v) for k, v in by_class.items()},
            "signatures": sigs.most_common()}


def write_failures(cases, results, out: Path) -> int:
    out.mkdir(parents=True, exist_ok=True)
    n = 0
    for c, r in zip(cases, results):
        if r["outcome"] in GOOD:
            continue
        stem = f"{c['id']:05d}-{r['outcome']}-{c['class']}"
        (out / f"{stem}.toml").write_bytes(c["data"])
        (out / f"{stem}.txt").write_text(
            f"base scenario: {c['base']}\nmutation: {c['class']}: {c['desc']}\nentry point: {c['mode']}\n"
            f"outcome: {r['outcome']} ({r['seconds']:.2f} s)\nmessage: {r['message']}\n\n{r['detail']}\n",
            encoding="utf-8")
        n += 1
    return n


def format_summary(summary: dict, n_cases: int, seconds: float, top: int = 15) -> str:
    lines = [f"{n_cases} cases in {seconds:.0f} s"]
    lines.append("  ".join(f"{o} {summary['counts'][o]}" for o in OUTCOMES))
    lines.append("")
    lines.append(f"{'class':<20}" + "".join(f"{o[:10]:>11}" for o in OUTCOMES))
    for k in sorted(summary["by_class"]):
        row = summary["by_class"][k]
        lines.append(f"{k:<20}" + "".join(f"{row.get(o, 0):>11}" for o in OUTCOMES))
    if summary["signatures"]:
        lines.append("")
        lines.append("top failure signatures:")
        for sig, n in summary["signatures"][:top]:
            lines.append(f"  {n:5d}  {sig}")
    return "\n".join(lines)


def fuzz(*, cases: int = 200, seed: int = 0, jobs: int = 2, timeout: float = HANG_SECONDS, classes=CLASSES,
         cli_fraction: float = 0.05, memory: int = 3 << 30, out: Path | None = None, progress: bool = False):
    """Generate and run ``cases`` mutants; returns (cases, results, summary)."""
    bases = base_scenarios()
    classes = tuple(classes)
    case_list = [make_case(seed, i, bases, classes, cli_fraction) for i in range(cases)]
    bar = None
    if progress:
        from tqdm import tqdm

        bar = tqdm(total=cases, unit="case", file=sys.stderr, disable=not sys.stderr.isatty())
    done = [0]

    def tick(n):
        if bar is not None:
            bar.update(n - done[0])
            if bar.disable and (n % 100 == 0 or n == cases):  # not a terminal: a line every 100 cases
                print(f"fuzz: {n}/{cases} cases", file=sys.stderr, flush=True)
        done[0] = n

    try:
        results = run_cases(case_list, jobs=jobs, timeout=timeout, memory=memory, progress=tick)
    finally:
        if bar is not None:
            bar.close()
    summary = summarize(results)
    if out is not None:
        write_failures(case_list, results, Path(out))
        (Path(out) / "summary.json").write_text(json.dumps(summary, indent=1, ensure_ascii=False), encoding="utf-8")
    return case_list, results, summary


def main(argv=None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0],
                                formatter_class=argparse.RawDescriptionHelpFormatter,
                                epilog="outcomes: " + ", ".join(OUTCOMES) + "\nclasses: " + ", ".join(CLASSES))
    p.add_argument("--cases", type=int, default=200, help="number of mutants (default 200)")
    p.add_argument("--seed", type=int, default=0, help="seed; the same seed gives the same mutants (default 0)")
    p.add_argument("--jobs", type=int, default=max(1, min(2, os.cpu_count() or 1)), help="worker processes")
    p.add_argument("--timeout", type=float, default=HANG_SECONDS,
                   help=f"seconds per case before it counts as a hang (default {HANG_SECONDS:g}: the work actsim runs without asking)")
    p.add_argument("--classes", default=",".join(CLASSES), help="comma-separated mutation classes")
    p.add_argument("--cli-fraction", type=float, default=0.05,
                   help="share of cases run through `actsim run`/`check` instead of the Python API")
    p.add_argument("--memory", type=float, default=3.0, help="address-space limit per worker [GiB] (0: none)")
    p.add_argument("--out", default="fuzz-out", help="folder for the failing cases (default fuzz-out)")
    args = p.parse_args(argv)
    classes = [c.strip() for c in args.classes.split(",") if c.strip()]
    unknown = sorted(set(classes) - set(CLASSES))
    if unknown:
        p.error(f"unknown classes {unknown}; choose from {', '.join(CLASSES)}")
    out = Path(args.out)
    if out.exists():
        shutil.rmtree(out)
    t0 = time.monotonic()
    cases, results, summary = fuzz(cases=args.cases, seed=args.seed, jobs=args.jobs, timeout=args.timeout,
                                   classes=classes, cli_fraction=args.cli_fraction, memory=int(args.memory * (1 << 30)),
                                   out=out, progress=True)
    print(format_summary(summary, len(cases), time.monotonic() - t0))
    bad = sum(v for k, v in summary["counts"].items() if k not in GOOD)
    print(f"\nfailing cases written to {out}/ ({bad})")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
