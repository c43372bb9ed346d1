"""Reading a result folder for the report: its records, its figures and the software versions.

:func:`_open_folder` refuses anything but one complete result folder (:func:`actsim.folders.verify_folder`);
the loaders read ``summary.json``, ``checks.json`` (:data:`CHECKS_FILE`) and the scenario text with one-line
errors; :func:`_figures` embeds every PNG of the folder with the title and caption its record gives, else
:func:`figure_title`; :func:`package_versions` lists Python, actsim and :data:`DEPENDENCIES`.
"""

from __future__ import annotations

import base64
import json
import platform
from importlib import metadata
from pathlib import Path

from ..errors import ActsimInputError
from ..inputfiles import read_text_file

#: File written by ``actsim check`` (check records and their details).
CHECKS_FILE = "checks.json"
#: Distributions whose versions the report lists (importlib.metadata names).
DEPENDENCIES = ("numpy", "scipy", "numba", "xarray", "pint", "matplotlib", "netCDF4", "dask", "jinja2")

_PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
_HINT = "make it with `actsim run SCENARIO -o RESULT_DIR` (or `actsim check`, `actsim sweep`, `actsim fit`)"
_CHECK_KEYS = ("check", "value", "limit", "unit", "margin", "passed", "source")

#: Titles of the figures actsim draws, by file stem: used when the folder's record gives none. They say what is
#: plotted, never what marks a figure may or may not carry.
_FIGURE_TITLES = {
    "bend_angle": "Bend angle and blocked force against time",
    "temperature": "Temperature against time",
    "profiles": "Conversion and irradiance through the thickness",
    "folded_shape": "Shape of the strip lit through the mask",
    "uncertainty_bend_angle": "Bend angle with its uncertainty band",
    "pareto": "Time to target against force: the Pareto front",
    "bend_family": "Bend angle of every design against time",
    "tensile_fit": "Tensile test and the fitted modulus",
    "dma_fit": "Storage modulus against temperature and the fitted step",
    "spectra_fit": "Absorbance spectra and the fitted absorptivities",
    "bend_fit": "Measured and fitted bend angles",
}


def _read_json(path: Path, out: Path, *, what: str):
    try:
        return json.loads(read_text_file(path, field="RESULT_DIR", what="JSON"))
    except json.JSONDecodeError as exc:
        raise ActsimInputError(f"{path.relative_to(out).as_posix()} in '{out}': not valid JSON ({exc}); {what}") from None


def _open_folder(result_dir) -> tuple[Path, dict]:
    from ..folders import verify_folder

    out = Path(result_dir)
    if not out.is_dir():
        raise ActsimInputError(f"RESULT_DIR: folder '{out}' does not exist; {_HINT}")
    # one complete folder exactly as written: no manifest (an older actsim, a hand-made folder), a changed, missing
    # or extra file are refused before anything of it is read
    return out, verify_folder(out, field="RESULT_DIR", hint=f"re-run the command that wrote it; {_HINT}")


def _load_summary(out: Path) -> dict:
    rerun = "re-run `actsim run SCENARIO -o RESULT_DIR`"
    if not (out / "summary.json").is_file():
        raise ActsimInputError(f"RESULT_DIR: '{out}' has no summary.json; {rerun}")
    record = _read_json(out / "summary.json", out, what=rerun)
    if not isinstance(record, dict) or not isinstance(record.get("metrics"), dict):
        raise ActsimInputError(f"summary.json in '{out}': no 'metrics' table; {rerun}")
    return record


def _load_checks(out: Path):
    """(check records, details) of ``checks.json``; (None, {}) when the file is absent."""
    path = out / CHECKS_FILE
    if not path.is_file():
        return None, {}
    rerun = f"rerun `actsim check SCENARIO -o {out}`"
    data = _read_json(path, out, what=rerun)
    details = {}
    if isinstance(data, dict):
        details = data.get("details") if isinstance(data.get("details"), dict) else {}
        for key in ("checks", "results", "records"):
            if isinstance(data.get(key), list):
                data = data[key]
                break
    if not isinstance(data, list):
        raise ActsimInputError(f"{CHECKS_FILE} in '{out}': expected a list of check records; {rerun}")
    for i, rec in enumerate(data):
        if not isinstance(rec, dict):
            raise ActsimInputError(f"{CHECKS_FILE} in '{out}': record {i} is not a table of check fields")
        lack = [k for k in _CHECK_KEYS if k not in rec]
        if lack:
            raise ActsimInputError(f"{CHECKS_FILE} in '{out}': record {i} has no '{lack[0]}' field; {rerun}")
        for key in ("value", "limit", "margin"):  # numbers, null, or the words a JSON writer uses for infinities
            v = rec[key]
            ok = v is None or (isinstance(v, (int, float)) and not isinstance(v, bool)) or (
                isinstance(v, str) and v.strip().lower() in ("inf", "+inf", "-inf", "infinity", "-infinity", "nan"))
            if not ok:
                raise ActsimInputError(f"{CHECKS_FILE} in '{out}': record {i} field '{key}' is not a number; {rerun}")
        for key in ("check", "unit", "source"):
            if not isinstance(rec[key], str):
                raise ActsimInputError(f"{CHECKS_FILE} in '{out}': record {i} field '{key}' is not text; {rerun}")
    return data, details


def _load_scenario(out: Path, text: str, scenario_path):
    """(Scenario or None, reason it could not be re-read or '')."""
    if not text:
        return None, "the result folder holds no scenario text"
    from ..scenario import parse_scenario

    orig = Path(str(scenario_path or ""))
    base = orig.parent if str(scenario_path or "") and orig.parent.is_dir() else out
    try:
        return parse_scenario(text, path=str(orig) if scenario_path else out / "scenario.toml", base_dir=base), ""
    except ActsimInputError as exc:
        return None, str(exc)


def package_versions() -> list[tuple[str, str]]:
    """``(name, version)`` of Python, actsim and each of :data:`DEPENDENCIES` ("not installed" if absent)."""
    rows = [("Python", platform.python_version())]
    for name in ("actsim", *DEPENDENCIES):
        try:
            rows.append((name, metadata.version(name)))
        except metadata.PackageNotFoundError:
            rows.append((name, "not installed"))
    return rows


def figure_title(path) -> str:
    """The title of a figure from its file name alone (used when the folder's record names none).

    Parameters
    ----------
    path : str or os.PathLike
        The PNG file.

    Returns
    -------
    str
        A title that says what is plotted, e.g. ``"Temperature against time"`` for ``temperature.png``.
    """
    stem = Path(path).stem
    if stem in _FIGURE_TITLES:
        return _FIGURE_TITLES[stem]
    if stem.startswith("heatmap_"):
        return f"Heat map of {stem[len('heatmap_'):].replace('_', ' ')} over the swept fields"
    words = " ".join(stem.replace("_", " ").replace("-", " ").split())
    return words[:1].upper() + words[1:] if words else "Figure"


def _figure_records(out: Path) -> dict:
    """``relative path -> {"title", "caption"}`` from every ``"figures"`` list of the folder's JSON records.

    The records are the verbs' own (``summary.json``, ``fit.json``, a sweep's JSON files); each entry is
    ``{"file": "figures/x.png", "title": ..., "caption": ...}`` with ``file`` relative to its record's folder.
    """
    found = {}
    paths = [p for p in sorted(out.glob("*.json")) if p.name != "manifest.json"] + sorted(out.glob("*/*.json"))
    for p in paths:
        if p.name == "manifest.json" or p.parent.name == "chunks":
            continue
        try:
            data = json.loads(p.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            continue  # the readers of that file say what is wrong with it
        entries = data.get("figures") if isinstance(data, dict) else None
        if not isinstance(entries, list):
            continue
        for e in entries:
            if not isinstance(e, dict) or not isinstance(e.get("file"), str):
                continue
            try:
                rel = (p.parent / e["file"]).resolve().relative_to(out.resolve()).as_posix()
            except ValueError:
                continue  # a record never points outside its folder
            found.setdefault(rel, {"title": str(e.get("title") or ""), "caption": str(e.get("caption") or "")})
    return found


def _figures(out: Path) -> list[dict]:
    """Every PNG of the folder as ``{n, file, title, caption, uri}``: recorded figures first, in their order."""
    records = _figure_records(out)
    listed = [out / rel for rel in records]
    fig_dir = out / "figures"
    first = sorted(fig_dir.glob("*.png")) if fig_dir.is_dir() else []
    rest = sorted(p for p in out.rglob("*.png") if p not in first and not p.name.startswith("."))
    seen, figs = set(), []
    for p in listed + first + rest:
        if p in seen or not p.is_file() or p.suffix.lower() != ".png":
            continue
        seen.add(p)
        data = p.read_bytes()
        if not data.startswith(_PNG_SIGNATURE):
            continue
        rel = p.relative_to(out).as_posix()
        rec = records.get(rel, {})
        figs.append({"n": len(figs) + 1, "file": rel, "title": rec.get("title") or figure_title(p),
                     "caption": rec.get("caption", ""),
                     "uri": "data:image/png;base64," + base64.b64encode(data).decode("ascii")})
    return figs
