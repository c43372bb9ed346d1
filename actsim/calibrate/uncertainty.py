"""Carry a calibration's uncertainty into predictions: draw parameters, simulate, take bands.

The fitted parameters of a scenario's ``[calibration]`` section are treated as multivariate
normal with the fit's covariance (the linear approximation of the fit,
:mod:`actsim.calibrate.fitstats`). Each draw is written into the scenario with
:func:`actsim.scenario.apply_overrides` and simulated; the 5, 50 and 95 % quantiles over the
draws at each output time form the prediction bands of bend angle, blocked force and (when the
scenario models heat) peak temperature.

Draws outside the parameters' bounds (the physical ranges the fit used) are rejected and
redrawn; after 20 rounds any still outside are clipped to the bounds. Both counts are reported.
The bands express parameter uncertainty only (not model error, nor the scatter of a new
measurement about the model).

References
----------
.. [1] JCGM 101:2008, *Evaluation of measurement data — Supplement 1 to the "Guide to the
   expression of uncertainty in measurement" — Propagation of distributions using a Monte Carlo
   method*, BIPM, 2008.
.. [2] D. M. Bates and D. G. Watts, *Nonlinear Regression Analysis and Its Applications*,
   Wiley, 1988.
"""

from __future__ import annotations

import os
import sys
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import xarray as xr

from ..errors import ActsimError, ActsimInputError

__all__ = ["UncertaintyResult", "draw_parameters", "prediction_bands", "run_uncertainty", "QUANTILES"]

#: Quantiles of the prediction bands [1].
QUANTILES = (0.05, 0.5, 0.95)
#: (time,) outputs that get bands: name -> (unit, long name).
BANDED = {
    "bend_angle": ("rad", "tip rotation of the free length"),
    "blocked_force": ("N", "tip force that holds the tip in place"),
    "peak_temperature": ("K", "highest temperature in the stack"),
}
_ROUNDS = 20


@dataclass
class UncertaintyResult:
    """Bands, draws and what was written.

    Attributes
    ----------
    dataset : xarray.Dataset
        ``<var>_p05``, ``<var>_p50``, ``<var>_p95`` and ``<var>_nominal`` against ``time``;
        ``parameter_draws`` (draw, parameter); ``bend_angle_draws`` (draw, time).
    n_draws, n_rejected, n_clipped, n_failed : int
        Accepted draws simulated; draws rejected as outside the bounds (then redrawn); draws
        clipped to the bounds; draws whose simulation failed (left out).
    files : list of pathlib.Path
    messages : list of str
    figures : list of dict
        :func:`actsim.figures.figure_record` of the figure written.
    """

    dataset: xr.Dataset
    n_draws: int
    n_rejected: int = 0
    n_clipped: int = 0
    n_failed: int = 0
    files: list = field(default_factory=list)
    messages: list = field(default_factory=list)
    figures: list = field(default_factory=list)


def _calibration(scenario):
    from .settings import calibration_settings

    cal = calibration_settings(scenario)
    if cal is None:
        raise ActsimInputError("calibration: the scenario has no [calibration] section; --uncertainty needs the "
                               "fitted parameters and their covariance, which 'actsim fit bend' writes into "
                               "OUT/fitted.toml")
    return cal


def draw_parameters(calibration, *, n_draws, seed=0):
    """Draw parameter sets from the calibration's multivariate normal, kept within the bounds.

    Parameters
    ----------
    calibration : Calibration
        Parsed ``[calibration]`` section (values, covariance, lower, upper in SI).
    n_draws : int
        Number of parameter sets [1].
    seed : int
        Seed of :func:`numpy.random.default_rng`.

    Returns
    -------
    draws : numpy.ndarray, shape (n_draws, n_parameters)
        [SI units of the parameters].
    n_rejected : int
        Draws outside the bounds that were redrawn.
    n_clipped : int
        Draws still outside after the last round, clipped onto the bounds.

    Notes
    -----
    .. math::

        p^{(k)} \\sim \\mathcal N(\\hat p, C), \\quad \\text{accepted if } l \\le p^{(k)} \\le u

    References
    ----------
    .. [1] JCGM 101:2008, section 6.4.8 (multivariate Gaussian distribution).
    """
    if isinstance(n_draws, bool) or not isinstance(n_draws, (int, np.integer)) or n_draws < 2:
        raise ActsimInputError(f"n_draws: {n_draws!r} is outside the allowed range (whole number >= 2)")
    rng = np.random.default_rng(seed)
    mean = calibration.values
    cov = calibration.covariance
    lo, hi = calibration.lower, calibration.upper
    out = np.empty((0, mean.size))
    rejected = 0
    for _ in range(_ROUNDS):
        need = n_draws - out.shape[0]
        if need <= 0:
            break
        d = rng.multivariate_normal(mean, cov, size=need, method="eigh")
        ok = np.all((d >= lo) & (d <= hi), axis=1)
        rejected += int(np.count_nonzero(~ok))
        out = np.vstack([out, d[ok]])
    clipped = 0
    need = n_draws - out.shape[0]
    if need > 0:
        d = rng.multivariate_normal(mean, cov, size=need, method="eigh")
        clipped = need
        out = np.vstack([out, np.clip(d, lo, hi)])
    return out[:n_draws], rejected, clipped


def _progress(total, desc):
    from tqdm import tqdm

    disable = (not sys.stderr.isatty()) or bool(os.environ.get("CI"))
    return tqdm(total=total, desc=desc, unit="run", disable=disable, leave=False)


def prediction_bands(scenario, *, n_draws, seed=0, calibration=None, engine="kernel") -> UncertaintyResult:
    """Simulate draws from the calibration and return the 5/50/95 % bands (nothing written).

    Parameters
    ----------
    scenario : Scenario
        A scenario with a ``[calibration]`` section (or pass ``calibration``).
    n_draws : int
        Number of parameter draws [1].
    seed : int
        Random seed.
    calibration : Calibration, optional
        Use this instead of the scenario's own section.
    engine : str
        Simulator engine.

    Returns
    -------
    UncertaintyResult

    Notes
    -----
    The band at time :math:`t` is the empirical quantile :math:`Q_q` of the draws,

    .. math::

        \\theta_q(t) = Q_q\\{\\theta(t;\\,p^{(k)})\\}_{k=1..N}, \\quad q \\in \\{0.05, 0.5, 0.95\\}

    References
    ----------
    .. [1] JCGM 101:2008, sections 7.5-7.7 (Monte Carlo propagation, coverage intervals).
    """
    from ..scenario import apply_overrides
    from ..solver import simulate

    cal = calibration if calibration is not None else _calibration(scenario)
    draws, n_rej, n_clip = draw_parameters(cal, n_draws=n_draws, seed=seed)
    nominal = simulate(scenario, engine=engine)
    t = nominal["time"].values
    names = [v for v in BANDED if v in nominal]
    samples = {v: [] for v in names}
    kept, failed = [], 0
    with _progress(len(draws), "uncertainty") as bar:
        for d in draws:
            ov = {p.path: p.override(v) for p, v in zip(cal.parameters, d)}
            try:
                ds = simulate(apply_overrides(scenario, ov), engine=engine)
            except ActsimError:
                failed += 1
                bar.update(1)
                continue
            tt = ds["time"].values
            for v in names:
                y = ds[v].values
                samples[v].append(y if tt.size == t.size and np.allclose(tt, t) else np.interp(t, tt, y))
            kept.append(d)
            bar.update(1)
    if len(kept) < 2:
        raise ActsimInputError(f"uncertainty: only {len(kept)} of {len(draws)} draws could be simulated; "
                               "check the [calibration] bounds")
    data_vars = {}
    for v in names:
        unit = nominal[v].attrs.get("units", BANDED[v][0])
        arr = np.asarray(samples[v])
        qs = np.quantile(arr, QUANTILES, axis=0)
        for q, row in zip(QUANTILES, qs):
            data_vars[f"{v}_p{round(100 * q):02d}"] = (("time",), row, {
                "units": unit, "long_name": f"{100 * q:g} % quantile of {BANDED[v][1]} over the parameter draws"})
        data_vars[f"{v}_nominal"] = (("time",), nominal[v].values, {
            "units": unit, "long_name": f"{BANDED[v][1]} at the fitted values"})
    data_vars["bend_angle_draws"] = (("draw", "time"), np.asarray(samples["bend_angle"]),
                                     {"units": "rad", "long_name": "bend angle of each accepted draw"})
    data_vars["parameter_draws"] = (("draw", "parameter"), np.asarray(kept),
                                    {"units": "SI, see parameter_unit", "long_name": "parameter values of each draw"})
    ds = xr.Dataset(
        data_vars=data_vars,
        coords={
            "time": ("time", t, {"units": "s", "long_name": "time since the start of the protocol"}),
            "parameter": ("parameter", [p.path for p in cal.parameters], {"long_name": "scenario field path"}),
            "parameter_unit": ("parameter", [p.unit for p in cal.parameters], {"long_name": "SI unit"}),
        },
        attrs={
            "title": f"prediction bands: {scenario.title}",
            "scenario": scenario.text,
            "n_draws": int(len(kept)),
            "n_rejected": int(n_rej),
            "n_clipped": int(n_clip),
            "n_failed": int(failed),
            "seed": int(seed),
            "quantiles": list(QUANTILES),
            "method": "Monte Carlo propagation of the [calibration] covariance (multivariate normal, bounded)",
            "note": "bands reflect parameter uncertainty only, not model error or measurement scatter",
        },
    )
    msgs = [f"{len(kept)} draws simulated; {n_rej} rejected outside the bounds and redrawn, "
            f"{n_clip} clipped onto the bounds, {failed} failed"]
    if "peak_temperature" not in names:
        msgs.append("temperature is not modelled in this scenario; no peak-temperature band")
    return UncertaintyResult(dataset=ds, n_draws=len(kept), n_rejected=n_rej, n_clipped=n_clip, n_failed=failed,
                             messages=msgs)


def _same_conditions(overrides: dict, changed: dict) -> bool:
    """Whether a calibration curve measured with ``overrides`` was taken under the conditions simulated
    (the scenario changed by ``changed``, e.g. ``--set``): the same fields set to the same values."""
    def norm(d):
        return {str(k).strip(): " ".join(str(v).split()) for k, v in (d or {}).items()}

    return norm(overrides) == norm(changed)


def _measured(cal, changed=None):
    """Measured curves of the calibration section taken under the simulated conditions.

    Returns
    -------
    curves : list of (label, t [s], theta [rad], synthetic)
    notes : list of str
        One per curve left out (other conditions, refused or unreadable file).
    """
    from .readers import read_xy_csv

    out, notes = [], []
    for d in cal.data:
        if d.file is None:
            continue
        name = d.label or d.file.name
        if d.refused:
            notes.append(f"measured points of '{name}' not shown ({d.refused})")
            continue
        if not _same_conditions(d.overrides, changed or {}):
            how = ", ".join(f"{k} = {v}" for k, v in d.overrides.items()) or "the calibration's base conditions"
            notes.append(f"measured points of '{name}' not shown: measured under other conditions ({how})")
            continue
        try:
            xy = read_xy_csv(d.file, x_kind="time", y_kind="angle")
        except ActsimInputError as exc:
            notes.append(f"measured points of '{name}' not shown ({exc})")
            continue
        out.append((name, xy.x, xy.y, d.synthetic))
    return out, notes


def _changed_words(changed) -> str:
    from ..figures import field_words

    return ", ".join(f"{field_words(k)} = {v}" for k, v in (changed or {}).items())


def _figure(res, cal, path, *, title, changed=None):
    """Draw the band figure; returns (notes, record)."""
    from ..figures import display_unit, figure_record, fmt, new_figure
    from ..io import save_figure

    ds = res.dataset
    t = ds["time"].values
    ang = display_unit("rad")
    fig = new_figure((7.0, 4.4))
    ax = fig.add_subplot(1, 1, 1)
    lo, hi = ang(ds["bend_angle_p05"].values), ang(ds["bend_angle_p95"].values)
    ax.fill_between(t, lo, hi, color="C0", alpha=0.25, lw=0, label=f"5-95 % band ({res.n_draws} draws)")
    ax.plot(t, ang(ds["bend_angle_p50"].values), color="C0", lw=1.2, label="median of draws")
    nominal = ang(ds["bend_angle_nominal"].values)
    ax.plot(t, nominal, color="k", ls="--", lw=1.0, label="fitted values")
    measured, notes = _measured(cal, changed)
    for k, (lab, mt, ma, s) in enumerate(measured):
        ax.plot(mt, ang(ma), "o", ms=3, color=f"C{(k + 1) % 10}", alpha=0.8,
                label=f"measured: {lab}" + (" (synthetic)" if s else ""))
    ax.set_xlabel("time (s)")
    ax.set_ylabel(f"bend angle ({ang.unit})")
    ax.grid(True, alpha=0.3)
    ax.legend(fontsize=7, loc="best")
    what = _changed_words(changed)
    ttl = title + (f"\nwith {what} (changed from the calibration)" if what else "")
    ax.set_title(ttl, fontsize=9)
    fig.tight_layout()
    save_figure(fig, path)
    i = int(np.argmax(np.abs(nominal)))
    caption = (f"Bend angle (degrees) against time (s) with the fitted parameter values (dashed), the median (line) "
               f"and the 5-95 % band (shaded) of {res.n_draws} parameter draws"
               + (f", for {what}" if what else "")
               + f"; at {fmt(t[i])} s: {fmt(nominal[i])}°, band {fmt(lo[i])}-{fmt(hi[i])}°"
               + (f"; points: measured {', '.join(m[0] for m in measured)} under the same conditions" if measured
                  else "; no measured curve under these conditions")
               + "; parameter uncertainty only (not model error or measurement scatter)")
    return notes, figure_record(path, "Bend angle with its uncertainty band", caption)


def run_uncertainty(scenario, *, n_draws, out_dir, seed=0, engine="kernel", quiet=False, shown_as=None,
                    changed=None) -> UncertaintyResult:
    """Prediction bands of a calibrated scenario, written to ``out_dir``.

    Parameters
    ----------
    scenario : Scenario
        A scenario with a ``[calibration]`` section (e.g. ``fitted.toml`` from ``actsim fit bend``,
        possibly edited: another thickness or irradiance).
    n_draws : int
        Number of parameter draws [1].
    out_dir : str or os.PathLike
        Output folder; writes ``uncertainty.nc``, ``uncertainty.csv`` and
        ``figures/uncertainty_bend_angle.png``.
    seed : int
        Random seed (the same seed gives the same draws).
    engine : str
        Simulator engine.
    quiet : bool
        Do not print.
    shown_as : str or os.PathLike, optional
        The folder named in the printed message (default ``out_dir``; ``actsim run`` writes into
        a staging folder that becomes the result folder it names here).
    changed : dict, optional
        Field path -> value the scenario was changed by (``actsim run --set``): named in the figure's
        title, and only the calibration curves measured with the same changes are drawn.

    Returns
    -------
    UncertaintyResult

    Raises
    ------
    ActsimInputError
        No ``[calibration]`` section, ``n_draws`` < 2.

    Notes
    -----
    .. math::

        p^{(k)} \\sim \\mathcal N(\\hat p, C), \\qquad
        [\\theta_{0.05}(t),\\ \\theta_{0.95}(t)] \\text{ from } \\theta(t; p^{(k)})

    References
    ----------
    .. [1] JCGM 101:2008, *Propagation of distributions using a Monte Carlo method*, BIPM, 2008.
    """
    from .. import io

    cal = _calibration(scenario)
    res = prediction_bands(scenario, n_draws=n_draws, seed=seed, engine=engine)
    out = Path(out_dir)
    nc, csv, png = out / "uncertainty.nc", out / "uncertainty.csv", out / "figures" / "uncertainty_bend_angle.png"
    io.write_netcdf(res.dataset, nc)
    io.write_timeseries_csv(res.dataset, csv)
    notes, record = _figure(res, cal, png, title=f"bend angle with 5-95 % band: {scenario.title}", changed=changed)
    res.files = [nc, csv, png]
    res.figures = [record]
    res.messages += notes
    if not quiet:
        lines = [f"uncertainty: {m}" for m in res.messages]
        sl = res.dataset["bend_angle_p05"].values, res.dataset["bend_angle_p95"].values
        i = int(np.argmax(np.abs(res.dataset["bend_angle_nominal"].values)))
        lo_i, hi_i = np.degrees(sl[0][i]), np.degrees(sl[1][i])
        lines.append(f"uncertainty: bend angle at t = {res.dataset['time'].values[i]:.4g} s (largest): "
                     f"{np.degrees(res.dataset['bend_angle_nominal'].values[i]):.5g} deg, 5-95 % band "
                     f"{lo_i:.5g}..{hi_i:.5g} deg (width {hi_i - lo_i:.3g} deg)")
        lines.append(f"uncertainty bands written to {shown_as or out}/ (uncertainty.nc, uncertainty.csv, "
                     "figures/uncertainty_bend_angle.png)")
        from ..screens import fit_text

        print(fit_text("\n".join(lines)))  # the command that called this prints the caution, once
    return res
