"""A result folder: everything one run writes, and how to read it back.

Layout of ``OUT/``::

    result.nc          the full xarray Dataset (NetCDF)
    timeseries.csv     every (time,) variable, units in the header
    summary.json       key metrics (SI) and file list
    scenario.toml      the scenario text exactly as run
    figures/*.png      bend angle and blocked force; conversion and irradiance profiles

Every file is written atomically.
"""

from __future__ import annotations

import json
from pathlib import Path

import xarray as xr

from . import io
from .errors import ActsimInputError
from .metrics import summarize

RESULT_FILE = "result.nc"
SUMMARY_FILE = "summary.json"


def write_result_folder(ds, scenario, out_dir, *, figures=True):
    """Write the standard files of one run into ``out_dir``; returns the summary dict."""
    from . import __version__

    out = Path(out_dir)
    if out.exists() and not out.is_dir():
        raise ActsimInputError(f"-o/--output: '{out}' is a file, not a folder; give a folder for the results")
    out.mkdir(parents=True, exist_ok=True)
    summary = summarize(ds, target_bend_angle=scenario.target_bend_angle, protocol=scenario.protocol)
    files = [RESULT_FILE, "timeseries.csv", "scenario.toml", SUMMARY_FILE]
    io.write_netcdf(ds, out / RESULT_FILE)
    io.write_timeseries_csv(ds, out / "timeseries.csv")
    io.write_text(out / "scenario.toml", scenario.text)
    if figures:
        from .figures import write_standard_figures

        paths = write_standard_figures(ds, out / "figures", target_bend_angle=scenario.target_bend_angle)
        files += [str(p.relative_to(out)) for p in paths]
    record = {
        "title": scenario.title,
        "actsim_version": __version__,
        "scenario_path": scenario.path,
        "units": "SI (rad, s, N, N m, m, J m-2, K)",
        "metrics": summary,
        "files": files,
    }
    io.write_json(out / SUMMARY_FILE, record)
    return summary


def read_summary(out_dir) -> dict:
    """The summary record (summary.json) of a result folder."""
    from .inputfiles import read_text_file

    return json.loads(read_text_file(Path(out_dir) / SUMMARY_FILE, field="summary", what="JSON"))


def read_result_folder(out_dir):
    """Read back ``(dataset, summary_record)`` from a result folder."""
    out = Path(out_dir)
    ds = xr.load_dataset(out / RESULT_FILE)
    return ds, read_summary(out)
