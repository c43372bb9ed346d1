"""The ``[calibration]`` section of a fitted scenario: fitted fields, their covariance, the data.

``actsim fit bend`` writes a fitted scenario: the base scenario with the fitted values put in,
plus this section, so that ``actsim run fitted.toml`` reproduces the fit and
``actsim run fitted.toml --uncertainty N`` draws parameter sets from the covariance::

    [calibration]
    method = "bend angle against time, global bounded least squares"
    parameters = ["materials.film.photo_strain", "materials.film.thermal_back_rate"]
    names = ["photo_strain", "thermal_back_rate"]
    units = ["1", "1/s"]                       # SI unit of each entry of values/lower/upper
    values = [-0.0151, 0.0102]
    lower = [-0.5, 0.0]
    upper = [0.0, 1.0]
    covariance = [[1.1e-8, -2.0e-9], [-2.0e-9, 4.0e-8]]   # units_i * units_j
    confidence = 0.95
    residual_std = "0.0041 rad"
    n_points = 183
    dof = 181

    [[calibration.data]]
    file = "../scenarios/calibration/bend_20mWcm2.csv"  # relative to this scenario file
    label = "20 mW/cm^2"
    overrides = { "protocol[0].light.uv_lamp" = "20 mW/cm^2" }
    n_points = 61
    sha256 = "..."
    synthetic = true

The numbers of ``values``, ``lower``, ``upper`` and ``covariance`` are in the SI units listed in
``units`` (a list of numbers cannot carry unit strings); every other dimensional field carries
its unit as usual.
"""

from __future__ import annotations

import copy
import os
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..errors import ActsimInputError

__all__ = [
    "Calibration",
    "CalibrationParameter",
    "CalibrationData",
    "parse_calibration",
    "calibration_settings",
    "calibration_table",
    "fitted_scenario_text",
    "write_fitted_scenario",
]


@dataclass(frozen=True)
class CalibrationParameter:
    """One calibrated field: dotted path, SI unit, fitted value and bounds [unit]."""

    path: str
    name: str
    unit: str
    value: float
    lower: float
    upper: float

    def override(self, value) -> object:
        """The value as written in a scenario file (plain number if dimensionless)."""
        v = float(value)
        return v if self.unit == "1" else f"{v!r} {self.unit}"


@dataclass(frozen=True)
class CalibrationData:
    """Provenance of one fitted curve."""

    file: Path | None
    label: str = ""
    overrides: dict = field(default_factory=dict)
    n_points: int | None = None
    sha256: str = ""
    synthetic: bool = False
    refused: str = ""  # why the file is not read (outside the scenario's folder), or ""


@dataclass(frozen=True, eq=False)
class Calibration:
    """Parsed ``[calibration]`` section.

    Attributes
    ----------
    parameters : tuple of CalibrationParameter
    covariance : numpy.ndarray
        Parameter covariance [unit_i * unit_j], symmetric positive semi-definite.
    confidence : float
        Confidence level of the fit's intervals [1].
    data : tuple of CalibrationData
    method : str
    residual_std : float or None
        Residual standard deviation [rad].
    n_points, dof : int or None
    warnings : tuple of str
        The fit's identifiability warnings.
    """

    parameters: tuple
    covariance: np.ndarray
    confidence: float = 0.95
    data: tuple = ()
    method: str = ""
    residual_std: float | None = None
    n_points: int | None = None
    dof: int | None = None
    warnings: tuple = ()

    @property
    def values(self) -> np.ndarray:
        return np.array([p.value for p in self.parameters])

    @property
    def lower(self) -> np.ndarray:
        return np.array([p.lower for p in self.parameters])

    @property
    def upper(self) -> np.ndarray:
        return np.array([p.upper for p in self.parameters])

    @property
    def standard_errors(self) -> np.ndarray:
        return np.sqrt(np.clip(np.diag(self.covariance), 0.0, None))

    def scaled(self, factor: float) -> "Calibration":
        """A copy with the covariance multiplied by ``factor`` [1] (e.g. for a sensitivity check)."""
        return Calibration(parameters=self.parameters, covariance=self.covariance * float(factor),
                           confidence=self.confidence, data=self.data, method=self.method,
                           residual_std=self.residual_std, n_points=self.n_points, dof=self.dof,
                           warnings=self.warnings)


def _number_list(t, key, n, *, where):
    raw = t.raw(key)
    if not isinstance(raw, list) or (n is not None and len(raw) != n):
        need = f"{n} numbers" if n is not None else "a list of numbers"
        raise ActsimInputError(f"{where}.{key}: must be a list of {need}, one per parameter")
    out = []
    for i, v in enumerate(raw):
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not np.isfinite(v):
            raise ActsimInputError(f"{where}.{key}[{i}]: {v!r} must be a finite number (in the unit of units[{i}])")
        out.append(float(v))
    return out


def parse_calibration(data, *, field="calibration", base_dir=None, scenario_info=None) -> Calibration:
    """Parse and check a ``[calibration]`` section.

    Parameters
    ----------
    data : dict
        The TOML table.
    field : str
        Section name for messages.
    base_dir : pathlib.Path, optional
        Folder of the scenario file; data files are resolved against it.
    scenario_info : dict, optional
        ``materials`` (names) etc., to check that the paths name existing materials.

    Returns
    -------
    Calibration

    Raises
    ------
    ActsimInputError
        Lists of different lengths, an unknown unit, a value outside its bounds, a covariance
        that is not square, symmetric, finite and positive semi-definite (smallest eigenvalue
        below :math:`-10^{-9}\\lambda_\\max`), a confidence outside (0, 1).

    Notes
    -----
    A covariance matrix is valid when

    .. math::

        C = C^T, \\qquad x^T C x \\ge 0 \\;\\; \\forall x

    References
    ----------
    .. [1] G. A. F. Seber and C. J. Wild, *Nonlinear Regression*, Wiley, 1989.
    """
    from ..scenario import split_field_path
    from ..schema import Table
    from ..units import parse_quantity, unit_kind

    base = Path(base_dir) if base_dir is not None else Path.cwd()
    t = Table(data, field)
    paths = t.raw("parameters")
    if not isinstance(paths, list) or not paths or not all(isinstance(p, str) and p.strip() for p in paths):
        raise ActsimInputError(f"{field}.parameters: must be a non-empty list of dotted field paths "
                               "(e.g. 'materials.film.photo_strain')")
    if len(set(paths)) != len(paths):
        raise ActsimInputError(f"{field}.parameters: a field path is listed twice")
    n = len(paths)
    mats = set((scenario_info or {}).get("materials", []))
    for i, p in enumerate(paths):
        tokens = split_field_path(p)
        if mats and tokens[0] == "materials" and len(tokens) > 1 and tokens[1] not in mats:
            raise ActsimInputError(f"{field}.parameters[{i}]: '{p}' names material '{tokens[1]}', which the "
                                   f"scenario does not have ({', '.join(sorted(mats))})")
    units = t.raw("units")
    if not isinstance(units, list) or len(units) != n or not all(isinstance(u, str) for u in units):
        raise ActsimInputError(f"{field}.units: must be a list of {n} unit strings (\"1\" if dimensionless), "
                               "one per parameter")
    si_units = [unit_kind(u, field=f"{field}.units[{i}]")[0] for i, u in enumerate(units)]
    for i, (u, s) in enumerate(zip(units, si_units)):
        if u.strip() not in ("", "1", "-", "dimensionless") and u.strip() != s:
            raise ActsimInputError(f"{field}.units[{i}]: {u!r} must be the SI unit {s!r} (values are stored in SI)")
    names_raw = t.raw("names", default=None)
    if names_raw is None:
        names = [p.split(".")[-1] for p in paths]
    elif isinstance(names_raw, list) and len(names_raw) == n and all(isinstance(x, str) for x in names_raw):
        names = list(names_raw)
    else:
        raise ActsimInputError(f"{field}.names: must be a list of {n} strings")
    values = _number_list(t, "values", n, where=field)
    lower = _number_list(t, "lower", n, where=field) if t.has("lower") else [-np.inf] * n
    upper = _number_list(t, "upper", n, where=field) if t.has("upper") else [np.inf] * n
    for i in range(n):
        if not lower[i] <= values[i] <= upper[i]:
            raise ActsimInputError(f"{field}.values[{i}]: {values[i]:g} {si_units[i]} ({paths[i]}) is outside its "
                                   f"bounds {lower[i]:g}..{upper[i]:g} {si_units[i]}")
    cov_raw = t.raw("covariance")
    if not isinstance(cov_raw, list) or len(cov_raw) != n or not all(isinstance(r, list) and len(r) == n for r in cov_raw):
        raise ActsimInputError(f"{field}.covariance: must be a {n} x {n} list of lists (one row per parameter)")
    try:
        cov = np.array(cov_raw, dtype=float)
    except (TypeError, ValueError):
        raise ActsimInputError(f"{field}.covariance: every entry must be a number") from None
    if not np.all(np.isfinite(cov)):
        raise ActsimInputError(f"{field}.covariance: contains inf or NaN (a parameter the data could not determine); "
                               "refit with fewer parameters")
    scale = max(float(np.max(np.abs(cov))), 1e-300)
    if np.max(np.abs(cov - cov.T)) > 1e-9 * scale:
        raise ActsimInputError(f"{field}.covariance: is not symmetric")
    d = np.sqrt(np.clip(np.diag(cov), 1e-300, None))
    eig = np.linalg.eigvalsh((cov / np.outer(d, d) + (cov / np.outer(d, d)).T) / 2)
    if np.any(np.diag(cov) < 0) or eig[0] < -1e-9 * max(eig[-1], 1e-300):
        raise ActsimInputError(f"{field}.covariance: is not positive semi-definite (smallest eigenvalue of the "
                               f"correlation matrix {eig[0]:.3g}); it cannot be a covariance")
    confidence = t.number("confidence", default=0.95, lo=0.0, hi=1.0, lo_open=True, hi_open=True)
    method = t.string("method", default="")
    rs = t.raw("residual_std", default=None)
    residual_std = None if rs is None else parse_quantity(rs, field=f"{field}.residual_std", kind="angle")
    n_points = t.integer("n_points", default=0, lo=0) or None
    dof = t.integer("dof", default=0, lo=0) or None
    warns = t.raw("warnings", default=[])
    if not isinstance(warns, list) or not all(isinstance(w, str) for w in warns):
        raise ActsimInputError(f"{field}.warnings: must be a list of strings")
    t.raw("actsim_version", default="")
    items = t.raw("data", default=[])
    if not isinstance(items, list):
        raise ActsimInputError(f"{field}.data: must be a list of [[{field}.data]] tables")
    provenance = []
    for i, item in enumerate(items):
        dt = Table(item, f"{field}.data[{i}]")
        f = dt.string("file", default="")
        ov = dt.raw("overrides", default={})
        if not isinstance(ov, dict):
            raise ActsimInputError(f"{field}.data[{i}].overrides: must be a table of field path -> value")
        refused = ""
        if f:
            from ..inputfiles import resolve_data_path

            try:  # provenance only: a file outside the folder is recorded but never read
                resolve_data_path(f, base_dir=base, field=f"{field}.data[{i}].file")
            except ActsimInputError as exc:
                refused = str(exc)
        provenance.append(CalibrationData(
            file=(base / f) if f else None, refused=refused, label=dt.string("label", default=""), overrides=dict(ov),
            n_points=dt.integer("n_points", default=0, lo=0) or None, sha256=dt.string("sha256", default=""),
            synthetic=dt.boolean("synthetic", default=False)))
        dt.finish()
    t.finish()
    params = tuple(CalibrationParameter(path=p, name=nm, unit=u, value=v, lower=lo, upper=hi)
                   for p, nm, u, v, lo, hi in zip(paths, names, si_units, values, lower, upper))
    return Calibration(parameters=params, covariance=cov, confidence=confidence, data=tuple(provenance),
                       method=method, residual_std=residual_std, n_points=n_points, dof=dof, warnings=tuple(warns))


def _rel(path, folder) -> str:
    try:
        return Path(os.path.relpath(Path(path).resolve(), Path(folder).resolve())).as_posix()
    except ValueError:  # another drive
        return Path(path).resolve().as_posix()


def calibration_settings(scenario) -> Calibration | None:
    """The scenario's ``[calibration]`` section parsed by :func:`parse_calibration`, or None without one.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario

    Returns
    -------
    Calibration or None
        Parsed once per scenario object; data files are resolved against the scenario's folder.

    Raises
    ------
    ActsimInputError
        A bad field of the section (one line).
    """
    from ..scenario import section_settings

    return section_settings(scenario, "calibration", parse_calibration)


def calibration_table(fit, *, scenario_dir) -> dict:
    """The ``[calibration]`` table (plain TOML types) of a :class:`~actsim.calibrate.bend.BendFit`.

    Parameters
    ----------
    fit : BendFit
        A finished bend fit with a finite covariance.
    scenario_dir : str or os.PathLike
        Folder the fitted scenario will be written to; data files are given relative to it.

    Returns
    -------
    dict

    Raises
    ------
    ActsimInputError
        If the covariance is not finite (a non-identifiable parameter).
    """
    from .. import __version__

    r = fit.result
    cov = np.asarray(r.covariance, dtype=float)
    if not np.all(np.isfinite(cov)):
        raise ActsimInputError("calibration: the covariance is not finite (a parameter the data cannot determine: "
                               + "; ".join(r.warnings) + "); fit fewer parameters to propagate the uncertainty")
    cov = 0.5 * (cov + cov.T)
    table = {
        "method": "bend angle against time, global bounded least squares (actsim fit bend)",
        "parameters": [p.path for p in fit.parameters],
        "names": [p.label for p in fit.parameters],
        "units": [p.unit for p in fit.parameters],
        "values": [float(v) for v in r.values],
        "lower": [float(p.lower) for p in fit.parameters],
        "upper": [float(p.upper) for p in fit.parameters],
        "covariance": [[float(c) for c in row] for row in cov],
        "confidence": float(r.confidence),
        "residual_std": f"{float(r.residual_std)!r} rad",
        "n_points": int(r.n_points),
        "dof": int(r.dof),
        "actsim_version": str(__version__),
        "warnings": [str(w) for w in r.warnings],
    }
    data = []
    for c in fit.curves:
        item = {"label": c.label, "overrides": dict(c.overrides), "n_points": int(c.time.size),
                "synthetic": bool(c.synthetic)}
        if c.file:
            item["file"] = _rel(c.file, scenario_dir)
            item["sha256"] = c.sha256 or ""
        data.append(item)
    if data:
        table["data"] = data
    return table


def _rebase_files(node, old_dir: Path, new_dir: Path):
    """Rewrite relative ``file = "..."`` entries so they still point at the same files."""
    if isinstance(node, dict):
        for k, v in node.items():
            if k == "file" and isinstance(v, str) and v and not Path(v).is_absolute():
                node[k] = _rel(old_dir / v, new_dir)
            else:
                _rebase_files(v, old_dir, new_dir)
    elif isinstance(node, list):
        for v in node:
            _rebase_files(v, old_dir, new_dir)


def fitted_scenario_text(fit, *, scenario_dir, with_calibration=True) -> str:
    """TOML text of the fitted scenario: base scenario, fitted values, ``[calibration]``.

    Parameters
    ----------
    fit : BendFit
        The fit.
    scenario_dir : str or os.PathLike
        Folder where the text will be saved (relative data-file paths are rewritten for it).
    with_calibration : bool
        Add the ``[calibration]`` section (needs a finite covariance).

    Returns
    -------
    str
        Parses with :func:`actsim.scenario.parse_scenario`; the header comment names the fit.
    """
    import tomli_w

    fitted = fit.fitted_scenario()
    raw = copy.deepcopy(tomllib.loads(fitted.text))
    raw.pop("calibration", None)
    old_dir = Path(fit.base.path).parent if fit.base.path else Path.cwd()
    _rebase_files(raw, old_dir.resolve(), Path(scenario_dir).resolve())
    if with_calibration:
        raw["calibration"] = calibration_table(fit, scenario_dir=scenario_dir)
    syn = any(c.synthetic for c in fit.curves)
    head = [
        "# Fitted scenario written by 'actsim fit bend'" + (" from SYNTHETIC data" if syn else "") + ".",
        f"# Base scenario: {Path(fit.base.path).name if fit.base.path else '<text>'}; fitted fields: "
        + ", ".join(p.path for p in fit.parameters) + ".",
        "# 'actsim run' on this file reproduces the fit; '--uncertainty N' draws from [calibration].covariance."
        if with_calibration else "# No [calibration] section: the covariance was not finite (see the fit's warnings).",
        "",
    ]
    return "\n".join(head) + tomli_w.dumps(raw)


def write_fitted_scenario(fit, path, *, with_calibration=True) -> Path:
    """Write :func:`fitted_scenario_text` atomically to ``path`` and check that it parses back.

    Parameters
    ----------
    fit : BendFit
    path : str or os.PathLike
        The ``.toml`` file.
    with_calibration : bool
        Add the ``[calibration]`` section.

    Returns
    -------
    pathlib.Path
    """
    from ..io import write_text
    from ..scenario import parse_scenario

    path = Path(path)
    text = fitted_scenario_text(fit, scenario_dir=path.parent, with_calibration=with_calibration)
    # refuse to write what cannot be read back, [calibration] included
    calibration_settings(parse_scenario(text, path=path, base_dir=path.parent))
    write_text(path, text)
    return path
