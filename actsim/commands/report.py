"""``actsim report RESULT_DIR``: the study report of a result folder as one HTML file."""

from __future__ import annotations

import argparse

EPILOG = """\
The report is one self-contained HTML file (figures embedded, no external
resources) of any result folder: a run (with its uncertainty bands or mask),
a check, a sweep or a fit. It opens with the answer (the verdict and the
tightest margin of a check; peak bend, time to target, force and peak
temperature of a run; the recommended design and the Pareto set of a sweep;
the fitted parameters and residual of a fit), then the caution, every figure
of the folder, the tables, the scenario and the software versions.

example:
  actsim run scenarios/vent_flap.toml -o out/vent
  actsim report out/vent                      # writes out/vent/report.html
  actsim check scenarios/vent_flap.toml -o out/vent && actsim report out/vent
  actsim report out/vent -o vent_report.html
  actsim sweep scenarios/thickness_study.toml --vary "layers[active film].thickness=lin(5 um, 200 um, 40)" \\
      --target-angle "30 deg" --pareto -o out/thick && actsim report out/thick
"""


def cmd_report(args) -> int:
    from ..report import write_report
    from ..screens import fit_text

    path = write_report(args.result_dir, args.output)
    # the caution is on the report's first screen; the command that made the folder printed it already
    print(fit_text(f"report written to {path}"))
    return 0


def register(subparsers) -> None:
    """Add the ``report`` verb to the ``actsim`` command line."""
    p = subparsers.add_parser(
        "report",
        help="write the study report of a result folder (one self-contained HTML file)",
        description="Write the study report of a result folder as one self-contained HTML file.",
        epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("result_dir", metavar="RESULT_DIR", help="result folder written by `actsim run`, `check`, `sweep` or `fit`")
    p.add_argument("-o", "--output", metavar="FILE", help="report file (default: RESULT_DIR/report.html)")
    p.set_defaults(func=cmd_report)
