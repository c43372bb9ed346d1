"""The ``actsim`` command.

Every verb writes into an output folder it names and prints where. Bad input
prints one line ``actsim: error: ...`` and exits with status 2; nothing is
written in that case. A folder is written whole or not at all, and replaces an
earlier one whole (:mod:`actsim.folders`).
"""

from __future__ import annotations

import argparse
import importlib
import math
import sys
from pathlib import Path

from .errors import ActsimError, ActsimInputError

#: Modules that add further verbs: each has ``register(subparsers)``. A module not
#: present in this installation is skipped (its verb is simply not offered).
VERB_MODULES: list[str] = [
    "actsim.commands.check",
    "actsim.commands.report",
    "actsim.commands.fit",
    "actsim.commands.sweep",
]

EXAMPLES = {
    "demo": "example:\n  actsim demo                 # the vent-flap demo into actsim-out/vent_flap\n  actsim demo --list\n  actsim demo --scenario gripper_two_colour -o out/\n  actsim demo --copy my-scenarios   # then edit and: actsim run my-scenarios/vent_flap.toml",
    "run": "example:\n  actsim run scenarios/vent_flap.toml -o out/vent\n  actsim run my.toml --no-figures\n"
           "  actsim run fitted.toml --set \"layers[active film].thickness=40 um\" --uncertainty 100 -o out/thick",
}


def scenarios_folder() -> Path:
    """The bundled demo scenarios (``scenarios/`` beside the package)."""
    here = Path(__file__).resolve().parent
    for cand in (here.parent / "scenarios", here / "data" / "scenarios"):
        if cand.is_dir():
            return cand
    raise ActsimInputError("demo: the bundled scenarios folder was not found; run from a source checkout (pip install -e .)")


def _fmt_angle(v):
    return "not reached" if v is None else f"{math.degrees(v):.2f} deg"


def _fmt(v, unit, scale=1.0, digits=4):
    return "not reached" if v is None else f"{v * scale:.{digits}g} {unit}"


def model_notes(scenario) -> list[str]:
    """Notes on what the model leaves out where it shapes this run's answer (printed under the summary)."""
    notes = []
    if scenario.heat.enabled:
        memoryless = sorted({layer.material.name for layer in scenario.layers
                             if layer.material.temperature_modulus is not None
                             and getattr(layer.material, "relaxation", None) is None})
        if memoryless:
            notes.append(
                f"note: the modulus of {', '.join(memoryless)} follows the temperature at once, with no memory "
                "(no viscoelastic relaxation): while a layer heats or cools through its glass transition the bend "
                "can swing the other way for that reason alone (docs/models.md)")
    return notes


def summary_table(summary: dict, width: int | None = None) -> str:
    """Plain-text table of the key metrics of a run, its long values wrapped to ``width`` (default: the screen's)."""
    where = ""
    if "step_of_peak_bend" in summary:
        label = summary.get("step_of_peak_bend_label")
        where = f" in step {summary['step_of_peak_bend']}" + (f" ({label})" if label else "")
    rows = [
        ("peak bend angle", _fmt_angle(summary["peak_bend_angle"]) + where),
        ("final bend angle", _fmt_angle(summary["final_bend_angle"])),
        ("time to 90 % of peak bend", _fmt(summary["time_to_90_percent"], "s")),
        ("peak blocked force", _fmt(summary["peak_blocked_force"], "mN", 1e3)),
        ("peak blocked moment", _fmt(summary["peak_blocked_moment"], "uN m", 1e6)),
        ("peak tip travel", _fmt(summary["peak_tip_deflection"], "mm", 1e3)),
    ]
    if "peak_front_depth" in summary:
        level = f"{100 * summary.get('front_conversion', 0.5):g} % of full conversion"
        rows.append(("deepest conversion front", f"{_fmt(summary['peak_front_depth'], 'um', 1e6)} ({level})"
                     if summary.get("front_formed", True) else f"no front (conversion stays below {level})"))
    if "peak_temperature" in summary:
        rows.append(("peak temperature", _fmt(summary["peak_temperature"] - 273.15, "degC")))
    if summary.get("peaks_over", "free steps") != "free steps":
        rows.append(("peaks taken over", summary["peaks_over"]))
    rows.append(("optical dose (incident)", _fmt(summary["optical_dose"], "J/cm^2", 1e-4)))
    if "target_bend_angle" in summary:
        tgt = _fmt_angle(summary["target_bend_angle"])
        rows.append((f"time to {tgt}", _fmt(summary["time_to_target"], "s")))
        if summary.get("time_to_target") is not None:
            rows.append((f"blocked force at {tgt}", _fmt(summary["blocked_force_at_target"], "mN", 1e3)))
            if "front_depth_at_target" in summary:
                rows.append((f"front depth at {tgt}", _fmt(summary["front_depth_at_target"], "um", 1e6)))
    for h in summary.get("held_steps", []):
        if h["quantity"] == "holding_moment":
            load = lambda v: _fmt(v, "uN m", 1e6)  # noqa: E731
        else:
            load = lambda v: _fmt(v, "mN", 1e3)  # noqa: E731
        left = "" if h["share_left"] is None else f" ({100 * h['share_left']:.1f} % of the peak left)"
        rows.append((f"held {h['hold']}, step {h['step']}",
                     f"{h['quantity'].replace('_', ' ')} {load(h['peak'])} at {h['time_of_peak']:.4g} s; "
                     f"{load(h['final'])} at {h['time_of_end']:.4g} s{left}"))
    for c in summary.get("shape_memory_cycles", []):
        what = "strain" if c["kind"] == "stretch" else "curvature"
        ratio = lambda v: "not measured" if v is None else f"{100 * v:.1f} %"  # noqa: E731
        rows.append((f"cycle {c['cycle']} ({c['kind']}) fixity", f"{ratio(c['fixity_ratio'])} of the programmed {what}"))
        rows.append((f"cycle {c['cycle']} ({c['kind']}) recovery", ratio(c["recovery_ratio"])))
        if c.get("bend_angle_after_release") is not None:
            rows.append((f"cycle {c['cycle']} bend after release", _fmt_angle(c["bend_angle_after_release"])))
    if "liquid_crystal" in summary:
        from .liquid_crystal import summary_rows

        rows += summary_rows(summary["liquid_crystal"])
    if summary.get("grid_error_estimate") is not None:
        est = summary["grid_error_estimate"]
        text = f"bend angle within about {100 * est:.2g} % of a finer grid (estimate)"
        if est > GRID_ERROR_HINT:
            text += f"; above {100 * GRID_ERROR_HINT:g} %: use about {_cells_factor(est)}x the cells in each layer"
        rows.append(("grid check", text))
    from .screens import screen_width, wrap

    width = width or screen_width()
    w = max(len(r[0]) for r in rows)
    lines = []
    for k, v in rows:
        lines += wrap(f"{k:<{w}}  {v}", width, indent="  ", hang=" " * (w + 2))
    return "\n".join(lines)


#: Estimated grid error of the bend angle above which `actsim run` suggests more cells (common practice, no source).
GRID_ERROR_HINT = 1e-3


def _cells_factor(est: float) -> int:
    """Whole factor on the cells that brings a second-order grid error below GRID_ERROR_HINT."""
    import math

    return max(2, math.ceil(math.sqrt(est / GRID_ERROR_HINT)))


def parse_set_options(items):
    """``["layers[1].thickness=40 um", ...]`` -> {path: value}; values as in a scenario file."""
    import tomllib

    out = {}
    for item in items or []:
        if "=" not in item:
            raise ActsimInputError(f"--set: '{item}' is not FIELD=VALUE (e.g. --set \"layers[1].thickness=40 um\")")
        path, value = (part.strip() for part in item.split("=", 1))
        try:  # numbers and booleans as TOML reads them; anything else is a unit string
            value = tomllib.loads(f"v = {value}")["v"]
        except (tomllib.TOMLDecodeError, RecursionError):  # nested too deeply: kept as text, refused when parsed
            pass
        out[path] = value
    return out


def load_with_overrides(scenario_path, set_items=None):
    """Load a scenario and apply ``--set`` overrides."""
    from .scenario import apply_overrides, load_scenario

    sc = load_scenario(scenario_path)
    overrides = parse_set_options(set_items)
    return apply_overrides(sc, overrides) if overrides else sc


def _add_figures(stage, records, *, part=None, summary=None, data_file=None) -> None:
    """Append figure records (file, title, caption) to the summary.json of a staging folder; with ``part``, also
    the part's ``summary`` under that key and its ``data_file``."""
    import json

    from .io import write_json

    if not records and part is None:
        return
    record = json.loads((stage / "summary.json").read_text(encoding="utf-8"))
    if part is not None:
        record[part] = summary
        record["files"] = record.get("files", []) + [data_file]
    record["figures"] = record.get("figures", []) + list(records)
    record["files"] = record.get("files", []) + [r["file"] for r in records if r["file"] not in record.get("files", [])]
    write_json(stage / "summary.json", record)


def _run_and_write(scenario_path, out_dir, *, figures=True, engine="kernel", set_items=None, overwrite=False,
                   uncertainty=0, allow_large=False):
    from .cautions import with_caution
    from .folders import result_folder
    from .results import write_result_files
    from .solver import simulate

    from .patterned import mask_settings

    sc = load_with_overrides(scenario_path, set_items)
    mask = mask_settings(sc)  # a bad [mask] is refused before the run
    from .along_strip import along_strip_settings

    along = along_strip_settings(sc)
    from .jitcache import compile_notice
    from .solver import grid_error_estimate

    parts = ["mask"] * (mask is not None) + ["uncertainty"] * bool(uncertainty) + ["along_strip"] * (along is not None)
    # one transaction: every file of this run (mask, uncertainty bands included) or none, never a mixture
    with result_folder(out_dir, kind="run", overwrite=overwrite, parts=parts) as stage:
        with compile_notice():
            ds = simulate(sc, engine=engine, allow_large=allow_large)
        est = grid_error_estimate(sc, ds)
        if est is not None:
            ds.attrs["grid_error_estimate"] = est
        summary = write_result_files(ds, sc, stage, figures=figures)
        from .screens import fit_text, screen_width, wrap

        width = screen_width()
        print(fit_text(sc.title, width))
        print(summary_table(summary))  # its width: screen_width(), as here
        for note in model_notes(sc) + ([ds.attrs["small_strain_warning"]] if "small_strain_warning" in ds.attrs else []):
            print("\n".join(wrap(note, width, indent="  ")))
        if mask is not None:
            from .patterned import simulate_patterned, write_patterned

            pat = write_patterned(simulate_patterned(sc, engine=engine), stage, figures=figures)
            _add_figures(stage, pat.pop("figures", []), part="patterned", summary=pat, data_file="patterned.nc")
            print("  through the mask (the table above is the strip lit all along its length):")
            print(f"  peak fold angle  {_fmt_angle(pat['peak_fold_angle'])} at t = {pat['time_of_peak_fold']:.4g} s")
            print(f"  peak tip travel  {_fmt(pat['peak_tip_travel_patterned'], 'mm', 1e3)}   (patterned.nc)")
        if along is not None:
            _run_along(sc, along, stage, figures=figures)
        if uncertainty:
            from .calibrate.uncertainty import run_uncertainty

            unc = run_uncertainty(sc, n_draws=uncertainty, out_dir=stage, shown_as=out_dir,
                                  changed=parse_set_options(set_items))
            _add_figures(stage, unc.figures)
    files = f"result.nc, timeseries.csv, summary.json{', figures/' if figures else ''}"
    print(with_caution(fit_text(f"\nresults written to {out_dir}/ ({files})", width), width))
    return 0


def _run_along(sc, along, stage, *, figures) -> None:
    """The ``[along_strip]`` part of a run: the strip along its length under light that follows its shape."""
    import math

    from .along_strip import simulate_along_section, write_along

    summary = write_along(simulate_along_section(sc, along), stage, figures=figures)
    _add_figures(stage, summary.pop("figures", []), part="along_strip", summary=summary, data_file="along_strip.nc")
    print(f"  along the strip ({summary['segments']} segments, {summary['mode']}, light following the shape; the "
          "table above is the strip lit straight on):")
    print(f"  largest tip angle {math.degrees(summary['largest_tip_angle']):.4g} deg at t = "
          f"{summary['time_of_largest']:.4g} s   (along_strip.nc)")
    for st in summary["steps"]:
        state = "settled" if st["settled"] else "still moving"
        print(f"  end of step {st['step']} ({st['label']}), t = {st['time']:.4g} s: tip {math.degrees(st['tip_angle']):.4g} "
              f"deg, {state}; lit: {100 * st['lit_share_top']:.0f} % of the segments on top, "
              f"{100 * st['lit_share_bottom']:.0f} % below")


def cmd_run(args):
    out = args.output or str(Path("actsim-out") / Path(args.scenario).stem)
    if args.uncertainty and args.uncertainty < 2:
        raise ActsimInputError(f"--uncertainty: {args.uncertainty} draws is too few (allowed >= 2)")
    if args.uncertainty:
        from .calibrate.settings import calibration_settings

        if calibration_settings(load_with_overrides(args.scenario, args.set)) is None:
            raise ActsimInputError(
                "--uncertainty: the scenario has no [calibration] section to draw from; fit one with `actsim fit bend` "
                "(see docs/calibration.md)"
            )
    return _run_and_write(args.scenario, out, figures=not args.no_figures, engine=args.engine, set_items=args.set,
                          overwrite=args.overwrite, uncertainty=args.uncertainty, allow_large=args.yes)


def cmd_demo(args):
    folder = scenarios_folder()
    if args.copy:
        import shutil

        dest = Path(args.copy)
        if dest.exists():
            raise ActsimInputError(f"--copy: '{dest}' already exists; give a new folder name")
        shutil.copytree(folder, dest, ignore=shutil.ignore_patterns("__pycache__", "*.pyc"))
        print(f"demo scenarios and their data copied to {dest}/ (edit them, then: actsim run {dest}/vent_flap.toml)")
        return 0
    if args.list:
        for p in sorted(folder.glob("*.toml")):
            first = next((ln for ln in p.read_text(encoding="utf-8").splitlines() if ln.startswith("title")), "")
            print(f"  {p.stem:<24} {first.split('=', 1)[-1].strip().strip(chr(34))}")
        return 0
    path = folder / f"{args.scenario}.toml"
    if not path.is_file():
        import difflib

        names = [p.stem for p in folder.glob("*.toml")]
        hint = difflib.get_close_matches(args.scenario, names, n=1)
        extra = f"; did you mean '{hint[0]}'?" if hint else f"; available: {', '.join(sorted(names))}"
        raise ActsimInputError(f"--scenario: no demo scenario '{args.scenario}'{extra}")
    out = args.output or str(Path("actsim-out") / args.scenario)
    return _run_and_write(path, out, figures=not args.no_figures, overwrite=args.overwrite)


def add_overwrite_option(p) -> None:
    """``--overwrite`` of every verb that writes a result folder (see actsim.folders)."""
    p.add_argument("--overwrite", action="store_true",
                   help="replace the output folder even if it holds files actsim did not write (an actsim result "
                        "folder is always replaced whole)")


def _wrapped(text: str) -> str:
    """A help description wrapped by hand (the verbs use RawDescriptionHelpFormatter for their examples)."""
    import textwrap

    return textwrap.fill(text, width=78)


def add_set_option(p) -> None:
    """``--set FIELD=VALUE`` of every verb that simulates one scenario (read by :func:`load_with_overrides`)."""
    p.add_argument("--set", action="append", metavar="FIELD=VALUE",
                   help="change a scenario field for this run, e.g. \"layers[1].thickness=40 um\" (repeatable)")


def build_parser() -> argparse.ArgumentParser:
    from . import __version__

    parser = argparse.ArgumentParser(
        prog="actsim",
        description="Simulate light-driven bending actuators: light, photochemistry, heat and layered-beam mechanics.",
    )
    parser.add_argument("--version", action="version", version=f"actsim {__version__}")
    sub = parser.add_subparsers(dest="verb", metavar="VERB")
    sub.required = True

    p = sub.add_parser("demo", help="run a bundled demo scenario", epilog=EXAMPLES["demo"],
                       description=_wrapped("Simulate one of the bundled invented demo scenarios (default: the vent flap) and "
                                   "write its results, summary and figures into an output folder; --list shows them, "
                                   "--copy copies them to edit."),
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--scenario", default="vent_flap", help="demo scenario name (default: vent_flap)")
    p.add_argument("--list", action="store_true", help="list the demo scenarios and exit")
    p.add_argument("--copy", metavar="FOLDER", help="copy the demo scenarios (and their data files) into a new FOLDER and exit")
    p.add_argument("-o", "--output", help="output folder (default: actsim-out/<scenario>)")
    p.add_argument("--no-figures", action="store_true", help="skip the PNG figures")
    add_overwrite_option(p)
    p.set_defaults(func=cmd_demo)

    p = sub.add_parser("run", help="simulate a scenario file", epilog=EXAMPLES["run"],
                       description=_wrapped("Simulate SCENARIO (light, photoreaction, heat, layered-beam mechanics) and write "
                                   "result.nc, timeseries.csv, summary.json and figures into an output folder; print "
                                   "the key numbers (peak bend, time to target, force, temperature)."),
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("scenario", help="scenario TOML file")
    p.add_argument("-o", "--output", help="output folder (default: actsim-out/<scenario name>)")
    p.add_argument("--no-figures", action="store_true", help="skip the PNG figures")
    p.add_argument("--engine", choices=("kernel", "reference"), default="kernel",
                   help="numba kernel (default) or the slow readable reference path")
    add_set_option(p)
    p.add_argument("--uncertainty", type=int, metavar="N", default=0,
                   help="also draw N parameter sets from the scenario's [calibration] covariance and write 5-95 %% bands")
    p.add_argument("--yes", action="store_true",
                   help="run even when the work estimate (cells x time steps) is above the limit (docs/scenario.md)")
    add_overwrite_option(p)
    p.set_defaults(func=cmd_run)

    for mod in VERB_MODULES:
        try:
            module = importlib.import_module(mod)
        except ModuleNotFoundError as exc:
            if exc.name == mod:
                continue
            raise
        module.register(sub)
    return parser


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.func(args) or 0)
    except ActsimInputError as exc:
        print(f"actsim: error: {exc}", file=sys.stderr)
        return 2
    except ActsimError as exc:
        print(f"actsim: error: {exc}", file=sys.stderr)
        return 3
    except OSError as exc:
        if isinstance(exc, BrokenPipeError):
            import os

            # output piped into a command that stopped reading (e.g. `| head`): not an error of ours
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
            return 0
        print(f"actsim: error: {exc.strerror or exc}: {exc.filename or ''}".rstrip(": "), file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("actsim: interrupted; the output folder was left as it was (a sweep resumes from its finished chunks)",
              file=sys.stderr)
        return 130


if __name__ == "__main__":
    sys.exit(main())
