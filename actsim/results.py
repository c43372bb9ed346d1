"""A result folder: everything one run writes, and how to read it back.

Layout of ``OUT/``::

    result.nc          the full xarray Dataset (NetCDF)
    timeseries.csv     every (time,) variable, units in the header
    summary.json       key metrics (SI), file list, figures with their titles and captions
    scenario.toml      the scenario text exactly as run
    figures/*.png      bend angle and blocked force; conversion and irradiance profiles
    manifest.json      every file with its size and SHA-256, the actsim version, the kind of folder

The folder is one transaction (:func:`actsim.folders.result_folder`): written into a
hidden staging folder beside it and swapped in whole, so it never mixes two runs;
the readers here refuse a folder that does not match its manifest
(:func:`actsim.folders.verify_folder`).
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


def write_result_folder(ds, scenario, out_dir, *, figures=True, overwrite=False):
    """Write the result folder of one run as one transaction; returns the summary dict.

    ``out_dir`` is replaced whole (see :func:`actsim.folders.result_folder`: a non-empty
    folder actsim did not write is refused unless ``overwrite``).
    """
    from .folders import result_folder

    with result_folder(out_dir, kind="run", overwrite=overwrite, field="out_dir") as stage:
        return write_result_files(ds, scenario, stage, figures=figures)


def write_result_files(ds, scenario, out_dir, *, figures=True):
    """Write the standard files of one run into ``out_dir`` (a staging folder); returns the summary dict."""
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

        figs = write_standard_figures(ds, out / "figures", target_bend_angle=scenario.target_bend_angle,
                                      scenario=scenario)
        files += [f["file"] for f in figs]
    else:
        figs = []
    record = {
        "title": scenario.title,
        "actsim_version": __version__,
        "scenario_path": scenario.path,
        "units": "SI (rad, s, N, N m, m, J m-2, K)",
        "metrics": summary,
        "files": files,
        "figures": figs,
    }
    io.write_json(out / SUMMARY_FILE, record)
    return summary


def read_summary(out_dir) -> dict:
    """The summary record (summary.json) of a result folder, after :func:`~actsim.folders.verify_folder`."""
    from .folders import verify_folder
    from .inputfiles import read_text_file

    verify_folder(out_dir, kinds=("run", "check"), field="out_dir")
    return json.loads(read_text_file(Path(out_dir) / SUMMARY_FILE, field="summary", what="JSON"))


def read_result_folder(out_dir):
    """Read back ``(dataset, summary_record)`` from a result folder, after :func:`~actsim.folders.verify_folder`."""
    out = Path(out_dir)
    record = read_summary(out)
    ds = xr.load_dataset(out / RESULT_FILE)
    return ds, record
