"""Regenerate the figures in figures/ from the bundled demo scenarios.

Run from the repository root:  python3 figures/make_figures.py
"""

from __future__ import annotations

import shutil
import tempfile
from pathlib import Path

import actsim
from actsim.figures import write_standard_figures

ROOT = Path(__file__).resolve().parents[1]


def main():
    for scen in sorted((ROOT / "scenarios").glob("*.toml")):
        sc = actsim.load_scenario(scen)
        ds = actsim.simulate(sc)
        with tempfile.TemporaryDirectory() as tmp:
            for rec in write_standard_figures(ds, tmp, target_bend_angle=sc.target_bend_angle, scenario=sc):
                name = Path(rec["file"]).name
                dest = ROOT / "figures" / f"{scen.stem}_{name}"
                shutil.copyfile(Path(tmp) / name, dest)
                print(f"wrote {dest.relative_to(ROOT)}")


if __name__ == "__main__":
    main()
