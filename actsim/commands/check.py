"""``actsim check``: simulate a scenario, run its design checks, gate a script on the verdict.

Exit status: 0 when every assessed check is within its modelled limit, 1 when
any is not (so a script can stop on it), 2 on bad input (one line on stderr).
``--strict`` also returns 1 when a check could not be assessed.
"""

from __future__ import annotations

import argparse
import math
from pathlib import Path

EPILOG = """example:
  actsim check scenarios/gripper_hinge_check.toml -o out/hinge
  actsim check my.toml --no-figures --strict && echo "within the modelled limits"
  actsim check scenarios/gripper_hinge_check.toml --set "joint.payload_mass=8 g" -o out/hinge8

exit status: 0 all checks within the modelled limits, 1 a check is not, 2 bad input.
The scenario's [checks], [safety] and [joint] sections are described in docs/checks.md."""


def _actuation_lines(details) -> list[str]:
    act = details.get("actuation", {})
    lines = [f"  peak bend {math.degrees(act.get('peak_bend_angle', 0.0)):.4g} deg at t = {act.get('peak_time', 0.0):g} s"]
    if "peak_blocked_force" in act:
        small = act["small_deflection_blocked_force"]
        lines.append(
            f"  blocked tip force (elastica, large deflection): peak {act['peak_blocked_force'] * 1e3:.4g} mN at "
            f"t = {act['peak_blocked_force_time']:g} s (small-deflection 3EI kappa/(2L): {float(max(small, key=abs)) * 1e3:.4g} mN)"
        )
    if "load_line" in act:
        ll = act["load_line"]
        lines.append(f"  load line at peak bend: free tip travel {ll['displacement'][-1] * 1e3:.4g} mm, "
                     f"work the tip can do {ll['work'] * 1e6:.4g} uJ")
    if "tip_load" in act:
        tl = act["tip_load"]
        lines.append(f"  under a {tl['tip_force'] * 1e3:.4g} mN tip load at peak bend: tip at ({tl['tip_x'] * 1e3:.4g}, "
                     f"{tl['tip_y'] * 1e3:.4g}) mm, tip angle {math.degrees(tl['tip_angle']):.4g} deg, "
                     f"clamp moment {abs(tl['clamp_moment']) * 1e3:.4g} mN m (in the yield and fatigue checks)")
    for n in act.get("notes", []):
        lines.append(f"  note: {n}")
    jd = details.get("joint")
    if jd:
        if jd.get("strips") is not None:
            lines.append(f"  joint: {jd['strips']} strips ({jd['mounting']}); {jd['strips_needed']} needed for a factor "
                         f"{jd['safety_factor']:g}; smallest factor {float(min(jd['achieved_factor'])):.3g} at "
                         f"{math.degrees(jd['governing_angle']):.4g} deg")
            if "stack_thickness" in jd:
                lines.append(f"  joint: stack of strips {jd['stack_thickness'] * 1e3:.4g} mm thick (limit "
                             f"{jd['stack_limit'] * 1e3:.4g} mm)"
                             + ("" if jd.get("plausible", True) else ": NOT plausible as a stack of strips"))
        else:
            lines.append("  joint: no number of strips lifts the payload through the whole angle range")
    for name, fd in details.get("fatigue", {}).items():
        m = fd["governing_method"]
        life = fd.get("life_text", {}).get(m)  # never a raw number extrapolated beyond the constants' range
        if life is None:
            life = f"{fd['life_cycles'][m]:.3g} cycles"
        lines.append(f"  fatigue, {name}: modelled life {life} by the most conservative method ({m}); "
                     "raw value in checks.json")
    light = details.get("light", {})
    if light.get("assessed"):
        lines.append(f"  light at the exposure position: risk group of the most intense step {light['risk_group']} "
                     f"(IEC 62471 scheme, from memory)")
    return lines


def _time_limit(text) -> float:
    from ..errors import ActsimInputError

    try:
        v = float(text)
    except (TypeError, ValueError):
        raise ActsimInputError(f"--elastica-time-limit: {text!r} is not a number of seconds (> 0; inf for no limit)") from None
    if math.isnan(v) or v <= 0:
        raise ActsimInputError(f"--elastica-time-limit: {text} s is outside the allowed range (> 0 s; inf for no limit)")
    return v


def _add_check_figures(ctx, results, details, stage) -> None:
    """Draw the figures of the checks that ran and list them in the folder's summary.json."""
    import json

    from ..check_figures import write_check_figures
    from ..io import write_json

    records = write_check_figures(ctx, results, details, stage / "figures")
    record = json.loads((stage / "summary.json").read_text(encoding="utf-8"))
    record["figures"] = record.get("figures", []) + records
    record["files"] = record.get("files", []) + [r["file"] for r in records]
    write_json(stage / "summary.json", record)


def cmd_check(args) -> int:
    from ..checks.run import any_failed, build_context, dispatch, format_results, write_checks
    from ..checks.settings import checks_settings, joint_settings, safety_settings
    from ..errors import ActsimInputError
    from ..folders import result_folder
    from ..results import write_result_files
    from ..solver import simulate

    from ..elastica import SolveBudget

    budget = SolveBudget(time_limit=_time_limit(args.elastica_time_limit))  # a bad option is refused before any work
    from ..cli import load_with_overrides

    sc = load_with_overrides(args.scenario, args.set)
    for read_section in (checks_settings, safety_settings, joint_settings):
        read_section(sc)  # a bad [checks], [safety] or [joint] field is refused before the simulation
    out = Path(args.output or (Path("actsim-out") / (Path(args.scenario).stem + "-check")))
    from ..jitcache import compile_notice

    # one transaction: the folder holds this check's files only, or is left as it was
    with result_folder(out, kind="check", overwrite=args.overwrite) as stage:
        with compile_notice():
            ds = simulate(sc)
        ctx = build_context(sc, ds, elastica=not args.no_elastica, elastica_budget=budget, progress=True)
        results, details = dispatch(ctx)
        if not results:
            raise ActsimInputError("check: nothing to check in this scenario; add a [checks] section (see docs/checks.md)")
        lines = None
        if not args.no_elastica:  # computed before anything is written
            from ..load_line_history import load_line_history

            lines = load_line_history(ds, budget=budget, progress=True)
        write_result_files(ds, sc, stage, figures=not args.no_figures)
        write_checks(results, details, stage)
        if not args.no_figures:
            _add_check_figures(ctx, results, details, stage)
        extra_files = ""
        if lines is not None:
            from ..io import write_netcdf

            write_netcdf(lines, stage / "load_lines.nc")
            extra_files = ", load_lines.nc"
    from ..cautions import with_caution
    from ..checks.run import verdict_line
    from ..screens import screen_width, wrap

    width = screen_width()
    screen = wrap(sc.title, width)
    screen += wrap(verdict_line(results, strict=args.strict), width)
    for line in _actuation_lines(details):
        screen += wrap(line.strip(), width, indent="  ")
    screen += ["", format_results(results, width=width), ""]
    screen += wrap(f"results written to {out}/ (result.nc, timeseries.csv, summary.json, checks.json, checks.csv"
                  f"{extra_files}{', figures/' if not args.no_figures else ''})", width)
    print(with_caution("\n".join(screen), width))
    failed = any_failed(results)
    not_assessed = any(r.passed is None for r in results)
    return 1 if failed or (args.strict and not_assessed) else 0


def register(subparsers) -> None:
    """Add the ``check`` verb."""
    p = subparsers.add_parser(
        "check",
        help="simulate a scenario and check strength, fatigue, joint load, light exposure and skin contact",
        description="Simulate SCENARIO, run its design checks and print the verdict table. Exits 1 when a check "
                    "fails, so it can gate a script.",
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("scenario", help="scenario TOML file (with [checks], [safety], [joint] sections)")
    p.add_argument("-o", "--output", help="output folder (default: actsim-out/<scenario name>-check)")
    p.add_argument("--no-figures", action="store_true", help="skip the PNG figures")
    p.add_argument("--no-elastica", action="store_true",
                   help="skip the large-deflection blocked force and load line (faster)")
    p.add_argument("--elastica-time-limit", default="20", metavar="SECONDS",
                   help="wall-time limit of the large-deflection solves together (default 20 s; inf: none); what "
                        "it does not reach is reported 'not assessed'")
    p.add_argument("--strict", action="store_true", help="exit 1 also when a check could not be assessed")
    from ..cli import add_overwrite_option, add_set_option

    add_set_option(p)
    add_overwrite_option(p)
    p.set_defaults(func=cmd_check)
