"""Save, or compare against, the outputs of every bundled scenario and of one sweep, fit and check.

Before a refactor::

    python3 tools/snapshot.py save SNAPSHOT_DIR

after it::

    python3 tools/snapshot.py compare SNAPSHOT_DIR [--rtol 1e-12]

``save`` runs ``simulate()`` on every scenario in ``scenarios/`` (kernel and,
for the small ones, the reference engine) and ``actsim run`` / ``sweep`` /
``check`` / ``fit`` on small invocations, and keeps every number they write
(NetCDF variables, JSON numbers, CSV columns). ``compare`` re-runs the same
into a temporary folder and prints, per file and variable, the largest
difference relative to the variable's own scale, ``max|a - b| / max(max|a|,
tiny)``; it exits 1 if any exceeds ``--rtol``.
"""

from __future__ import annotations

import argparse
import json
import shutil
import sys
import tempfile
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
SCEN = ROOT / "scenarios"

#: CLI runs (verb arguments; "{out}" is the output folder).
CLI_RUNS = {
    "run_vent_flap": ["run", str(SCEN / "vent_flap.toml"), "-o", "{out}", "--no-figures"],
    "sweep_thickness": ["sweep", str(SCEN / "thickness_study.toml"), "--vary",
                        "layers[active film].thickness=lin(5 um, 200 um, 6)", "--target-angle", "30 deg", "--pareto",
                        "--scheduler", "inprocess", "--no-progress", "-o", "{out}"],
    "check_hinge": ["check", str(SCEN / "gripper_hinge_check.toml"), "-o", "{out}", "--no-figures"],
    "fit_demo": ["fit", "demo", "-o", "{out}"],
}


def _simulate_all(dest: Path) -> None:
    import actsim

    dest.mkdir(parents=True, exist_ok=True)
    for path in sorted(SCEN.glob("*.toml")):
        sc = actsim.load_scenario(path)
        ds = actsim.simulate(sc)
        arrays = {k: np.asarray(v.values) for k, v in ds.variables.items() if np.asarray(v.values).dtype.kind in "fiu"}
        np.savez(dest / f"simulate_{path.stem}.npz", **arrays)
        if path.stem in ("vent_flap", "shape_memory_two_colour", "photothermal_hinge"):
            ds = actsim.simulate(sc, engine="reference")
            arrays = {k: np.asarray(v.values) for k, v in ds.variables.items() if np.asarray(v.values).dtype.kind in "fiu"}
            np.savez(dest / f"reference_{path.stem}.npz", **arrays)


def _cli_all(dest: Path) -> None:
    from actsim.cli import main

    for name, argv in CLI_RUNS.items():
        out = dest / name
        if out.exists():
            shutil.rmtree(out)
        args = [a.replace("{out}", str(out)) for a in argv]
        rc = main(args)
        print(f"{name}: exit {rc}", file=sys.stderr)


def produce(dest: Path) -> None:
    _simulate_all(dest)
    _cli_all(dest)


def _numbers(path: Path) -> dict[str, np.ndarray]:
    """Every numeric array or number a result file holds, by name."""
    out: dict[str, np.ndarray] = {}
    if path.suffix == ".npz":
        with np.load(path) as z:
            return {k: z[k] for k in z.files}
    if path.suffix == ".nc":
        import xarray as xr

        with xr.open_dataset(path, decode_times=False) as ds:
            for k, v in ds.variables.items():
                a = np.asarray(v.values)
                if a.dtype.kind in "fiu":
                    out[k] = a
        return out
    if path.suffix == ".json":
        def walk(obj, key):
            if isinstance(obj, bool) or obj is None:
                return
            if isinstance(obj, (int, float)):
                out[key] = np.array([obj], float)
            elif isinstance(obj, dict):
                for k, v in obj.items():
                    walk(v, f"{key}.{k}")
            elif isinstance(obj, list):
                for i, v in enumerate(obj):
                    walk(v, f"{key}[{i}]")
        data = json.loads(path.read_text())
        if isinstance(data, dict) and data.get("format") == "actsim result folder":
            return out  # a result folder's manifest: file sizes and hashes, not results
        walk(data, "")
        return out
    if path.suffix == ".csv":
        import pandas as pd

        df = pd.read_csv(path, comment="#")
        for c in df.columns:
            col = pd.to_numeric(df[c], errors="coerce")
            if col.notna().any():
                out[str(c)] = col.to_numpy(float)
        return out
    return out


def compare(a_dir: Path, b_dir: Path, rtol: float) -> int:
    worst = 0.0
    failed = 0
    files = sorted(p for p in a_dir.rglob("*") if p.is_file() and p.suffix in (".npz", ".nc", ".json", ".csv"))
    for fa in files:
        rel = fa.relative_to(a_dir)
        fb = b_dir / rel
        if not fb.exists():
            print(f"MISSING {rel}")
            failed += 1
            continue
        na, nb = _numbers(fa), _numbers(fb)
        file_worst, where = 0.0, ""
        for k, va in na.items():
            if k not in nb:
                print(f"MISSING {rel}:{k}")
                failed += 1
                continue
            vb = nb[k]
            if va.shape != vb.shape:
                print(f"SHAPE {rel}:{k} {va.shape} != {vb.shape}")
                failed += 1
                continue
            va = va.astype(float)
            vb = vb.astype(float)
            same_nan = np.isnan(va) == np.isnan(vb)
            if not same_nan.all():
                print(f"NAN {rel}:{k}")
                failed += 1
                continue
            ok = ~np.isnan(va)
            if not ok.any():
                continue
            scale = max(float(np.max(np.abs(va[ok]))), 1e-300)
            d = float(np.max(np.abs(va[ok] - vb[ok]))) / scale
            if d > file_worst:
                file_worst, where = d, k
        extra = sorted(set(nb) - set(na))
        note = f" (+{len(extra)} new: {', '.join(extra[:6])})" if extra else ""
        flag = "FAIL" if file_worst > rtol else "ok  "
        failed += file_worst > rtol
        worst = max(worst, file_worst)
        print(f"{flag} {rel}: max rel diff {file_worst:.2e} {('at ' + where) if where else ''}{note}")
    print(f"{len(files)} files, worst relative difference {worst:.2e} (allowed {rtol:g}); {failed} failing")
    return 1 if failed else 0


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("mode", choices=("save", "compare"))
    ap.add_argument("folder")
    ap.add_argument("--rtol", type=float, default=1e-12)
    args = ap.parse_args(argv)
    folder = Path(args.folder)
    if args.mode == "save":
        produce(folder)
        print(f"saved to {folder}")
        return 0
    with tempfile.TemporaryDirectory() as tmp:
        produce(Path(tmp))
        return compare(folder, Path(tmp), args.rtol)


if __name__ == "__main__":
    sys.exit(main())
