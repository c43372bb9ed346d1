"""End-to-end benchmark of the `actsim sweep` command (run: python benchmarks/bench_sweep_cli.py).

Times, wall clock, a fresh ``python -m actsim.cli sweep`` process (start-up, planning, the chunks,
writing ``sweep.nc``, ``metrics.csv`` and the chunk files included) of

    actsim sweep scenarios/thickness_study.toml --vary "layers[active film].thickness=lin(5 um, 200 um, N)"
                 --target-angle "30 deg" --yes --no-progress -o OUT [--scheduler S]

and prints designs per second (median of ``--repeat`` runs) and the CPU time of the run (user + system of
every process it started: on a machine shared with other work the wall clock varies, the CPU time much less). Options: ``--designs N`` (default
20000), ``--repeat R`` (default 3), ``--scheduler S`` (passed through; default none: the
command's own default), ``--threads T`` (NUMBA_NUM_THREADS of the child; default all cores).

Speed claims live here, never in timed tests.
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def run_once(n, scheduler, threads, out):
    cmd = [sys.executable, "-m", "actsim.cli", "sweep", str(ROOT / "scenarios" / "thickness_study.toml"),
           "--vary", f"layers[active film].thickness=lin(5 um, 200 um, {n})", "--target-angle", "30 deg",
           "--yes", "--no-progress", "-o", str(out)]
    if scheduler:
        cmd += ["--scheduler", scheduler]
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + (os.pathsep + env["PYTHONPATH"] if env.get("PYTHONPATH") else "")
    if threads:
        env["NUMBA_NUM_THREADS"] = str(threads)
    r0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    res = subprocess.run(cmd, env=env, capture_output=True, text=True)
    dt = time.perf_counter() - t0
    r1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (r1.ru_utime - r0.ru_utime) + (r1.ru_stime - r0.ru_stime)
    if res.returncode != 0:
        sys.exit(f"actsim sweep failed (exit {res.returncode}):\n{res.stderr[-2000:]}")
    for name in ("sweep.nc", "metrics.csv"):
        if not (out / name).is_file():
            sys.exit(f"actsim sweep wrote no {name}")
    return dt, cpu


def main(argv=None):
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--designs", type=int, default=20000)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--scheduler", default=None)
    ap.add_argument("--threads", type=int, default=None)
    args = ap.parse_args(argv)
    times, cpus = [], []
    with tempfile.TemporaryDirectory() as tmp:
        # one small run first, so the numba caches are loaded from disk (not compiled) in the timed runs
        run_once(16, "inprocess", args.threads, Path(tmp) / "warm")
        for r in range(args.repeat):
            out = Path(tmp) / f"run{r}"
            dt, cpu = run_once(args.designs, args.scheduler, args.threads, out)
            times.append(dt)
            cpus.append(cpu)
            print(f"run {r + 1}: {dt:.2f} s wall, {cpu:.2f} s CPU (all processes), {args.designs / dt:.0f} designs/s "
                  f"(load average {os.getloadavg()[0]:.1f})", flush=True)
    med = statistics.median(times)
    print(f"actsim sweep, {args.designs} designs of thickness_study.toml (scheduler: {args.scheduler or 'default'}, "
          f"{os.cpu_count()} cores): median {med:.2f} s wall clock, {args.designs / med:.0f} designs/s end to end; "
          f"median CPU {statistics.median(cpus):.2f} s ({1e3 * statistics.median(cpus) / args.designs:.2f} ms per design)")


if __name__ == "__main__":
    main()
