"""Photobiological hazards of the light at an exposure position: weighted
irradiances, doses over a protocol, and the checks.

Three hazards of incoherent optical radiation are assessed, each with the
weighting function of :mod:`actsim.checks.weighting` and the limits of
:mod:`actsim.checks.exposure_limits`:

* actinic UV (eye and skin), 200-400 nm, weighted with S(lambda);
* unweighted UV-A (eye lens), 315-400 nm;
* blue light (retina, photochemical), 300-700 nm, weighted with B(lambda),
  small-source irradiance form and (given the source radiance) radiance form.

Spectra at the exposure position are :class:`~actsim.checks.light_spectrum.Spectrum`
objects built from the sources of :mod:`actsim.spectra`.

Not modelled: the retinal thermal hazard, infrared hazards to cornea and lens,
the skin thermal hazard, and 180-200 nm (not entered in the S(lambda) table).
Irradiance outside every modelled range is reported as "not assessed", never
silently counted as zero.

All weighting values, limits and risk-group times were entered from memory of
the cited documents; check them against the published texts.
"""

from __future__ import annotations

import dataclasses
import math
import warnings
from dataclasses import dataclass

import numpy as np

from ..cautions import caution_lines
from ..errors import ActsimInputError, ActsimWarning
from ..units import nonnegative_float
from .exposure_limits import (
    HAZARDS,
    NOT_MODELLED,
    Hazard,
    actinic_permissible_time,
    blue_light_permissible_time,
    risk_group,
    uva_permissible_time,
    worst_risk_group,
)
from .light_spectrum import Spectrum, as_spectrum, exposure_spectrum
from .verdict import CheckResult, format_table
from .weighting import actinic_uv_function, blue_light_function

__all__ = [
    "effective_actinic_irradiance",
    "uva_irradiance",
    "blue_light_weighted",
    "protocol_dose",
    "protocol_check",
    "photobio_check",
    "format_photobio",
]

# ---------------------------------------------------------------------------
# Weighted integrals

_FINE_STEP = 0.05e-9  # integration sub-step [m]


@dataclass(frozen=True)
class _Weighted:
    value: float  # weighted (or band) integral inside [lo, hi]
    below: float  # unweighted irradiance below lo
    above: float  # unweighted irradiance above hi
    total: float


def _integral_pw_linear(wl, e, a, b) -> float:
    """Exact integral of the piecewise-linear (zero outside) table over [a, b]."""
    a = max(a, wl[0])
    b = min(b, wl[-1])
    if b <= a:
        return 0.0
    inner = wl[(wl > a) & (wl < b)]
    grid = np.concatenate([[a], inner, [b]])
    return float(np.trapezoid(np.interp(grid, wl, e), grid))


def _weighted(spectrum: Spectrum, lo: float, hi: float, weight) -> _Weighted:
    """Integrate ``spectrum`` times ``weight`` (None: unweighted) over [lo, hi]."""
    value = below = above = 0.0
    total = 0.0
    wfun = weight
    for wl, e in spectrum.tables:
        tot = float(np.trapezoid(e, wl))
        total += tot
        inside_unw = _integral_pw_linear(wl, e, lo, hi)
        b_part = _integral_pw_linear(wl, e, -np.inf, lo)
        below += b_part
        above += max(tot - inside_unw - b_part, 0.0)
        a, b = max(lo, wl[0]), min(hi, wl[-1])
        if b <= a:
            continue
        if wfun is None:
            value += inside_unw
            continue
        n = int(math.ceil((b - a) / _FINE_STEP)) + 1
        nodes = [np.linspace(a, b, n), wl[(wl > a) & (wl < b)], wfun.wavelength[(wfun.wavelength > a) & (wfun.wavelength < b)]]
        grid = np.unique(np.concatenate(nodes))
        value += float(np.trapezoid(np.interp(grid, wl, e) * wfun.evaluate_clipped(grid), grid))
    lw, le = spectrum.line_wavelength, spectrum.line_irradiance
    if lw.size:
        total += float(np.sum(le))
        # band ends inclusive, to round-off (400 * 1e-9 != 400e-9 in binary)
        lo_t, hi_t = lo * (1 - 1e-12), hi * (1 + 1e-12)
        inside = (lw >= lo_t) & (lw <= hi_t)
        below += float(np.sum(le[lw < lo_t]))
        above += float(np.sum(le[lw > hi_t]))
        if np.any(inside):
            w = 1.0 if wfun is None else wfun.evaluate_clipped(lw[inside])
            value += float(np.sum(le[inside] * w))
    return _Weighted(value=value, below=below, above=above, total=total)


def _outside_message(name: str, res: _Weighted, lo: float, hi: float, unit: str) -> str:
    parts = []
    if res.below > 0:
        parts.append(f"{res.below:.3g} {unit} below {lo * 1e9:g} nm")
    if res.above > 0:
        parts.append(f"{res.above:.3g} {unit} above {hi * 1e9:g} nm")
    return (
        f"{name}: {' and '.join(parts)} (of {res.total:.3g} {unit} in total) lie outside "
        f"{lo * 1e9:g}-{hi * 1e9:g} nm and are not assessed by this weighting"
    )


def _maybe_warn(name, res: _Weighted, lo, hi, unit, out_of_range: str):
    if out_of_range not in ("warn", "ignore", "raise"):
        raise ActsimInputError(f"out_of_range: {out_of_range!r} is not one of 'warn', 'ignore', 'raise'")
    tiny = 1e-12 * max(res.total, 0.0)
    if out_of_range == "ignore" or (res.below <= tiny and res.above <= tiny):
        return
    msg = _outside_message(name, res, lo, hi, unit)
    if out_of_range == "raise":
        raise ActsimInputError(msg)
    warnings.warn(msg, ActsimWarning, stacklevel=3)


def effective_actinic_irradiance(
    spectrum=None, *, wavelength=None, spectral_irradiance=None, band_irradiance=None, out_of_range="warn"
) -> float:
    """Actinic-UV effective irradiance E_s, weighted with S(lambda) over 200-400 nm.

    Parameters
    ----------
    spectrum : Spectrum, optional
        The spectrum at the exposure position; or give the arrays below.
    wavelength : array_like, optional
        Wavelengths [m].
    spectral_irradiance : array_like, optional
        Continuous spectrum at ``wavelength`` [W/m^2/m].
    band_irradiance : array_like, optional
        Line (band-integrated) irradiances at ``wavelength`` [W/m^2].
    out_of_range : {"warn", "ignore", "raise"}
        What to do when part of the irradiance lies outside 200-400 nm: an
        :class:`~actsim.errors.ActsimWarning` naming that part (default),
        nothing, or an :class:`~actsim.errors.ActsimInputError`.

    Returns
    -------
    float
        Effective irradiance E_s [W/m^2].

    Notes
    -----
    Continuous spectra are linear between their points; S is log-linear
    between its tabulated points; the product is integrated on a 0.05 nm grid
    that contains every node of both. Lines contribute :math:`E_i S(\\lambda_i)`.

    .. math::

        E_s = \\int_{200\\,\\mathrm{nm}}^{400\\,\\mathrm{nm}} E_\\lambda S(\\lambda)\\, d\\lambda
        + \\sum_i E_i S(\\lambda_i)

    References
    ----------
    .. [1] ICNIRP, "Guidelines on limits of exposure to ultraviolet radiation of
       wavelengths between 180 nm and 400 nm", Health Physics 87, 171-186, 2004.
    .. [2] IEC 62471:2006, "Photobiological safety of lamps and lamp systems", §4.3.1.
    """
    s = as_spectrum(spectrum, wavelength, spectral_irradiance, band_irradiance, where="effective_actinic_irradiance")
    f = actinic_uv_function()
    res = _weighted(s, f.lo, f.hi, f)
    _maybe_warn("actinic UV S(lambda)", res, f.lo, f.hi, "W/m^2", out_of_range)
    return res.value


def uva_irradiance(spectrum=None, *, wavelength=None, spectral_irradiance=None, band_irradiance=None) -> float:
    """Unweighted UV-A irradiance over 315-400 nm (lines at either end included).

    Parameters
    ----------
    spectrum : Spectrum, optional
        The spectrum at the exposure position; or give the arrays below.
    wavelength : array_like, optional
        Wavelengths [m].
    spectral_irradiance : array_like, optional
        Continuous spectrum [W/m^2/m].
    band_irradiance : array_like, optional
        Line irradiances [W/m^2].

    Returns
    -------
    float
        E_UVA [W/m^2].

    Notes
    -----
    UV-A is a band definition, not a tabulated weighting, so irradiance outside
    315-400 nm is simply not UV-A (it is covered by the other hazards).

    .. math::

        E_\\mathrm{UVA} = \\int_{315\\,\\mathrm{nm}}^{400\\,\\mathrm{nm}} E_\\lambda\\, d\\lambda

    References
    ----------
    .. [1] IEC 62471:2006, "Photobiological safety of lamps and lamp systems", §4.3.2.
    """
    s = as_spectrum(spectrum, wavelength, spectral_irradiance, band_irradiance, where="uva_irradiance")
    uva = HAZARDS["uva"].dose
    return _weighted(s, uva.wavelength_min, uva.wavelength_max, None).value


def blue_light_weighted(
    spectrum=None, *, wavelength=None, spectral_irradiance=None, band_irradiance=None, out_of_range="warn"
) -> float:
    """Blue-light weighted irradiance E_B (or radiance L_B), weighted with B(lambda) over 300-700 nm.

    The integral is linear, so a spectral radiance [W/(m^2 sr m)] in gives the
    weighted radiance L_B [W/(m^2 sr)] out.

    Parameters
    ----------
    spectrum : Spectrum, optional
        The spectrum at the eye; or give the arrays below.
    wavelength : array_like, optional
        Wavelengths [m].
    spectral_irradiance : array_like, optional
        Continuous spectrum [W/m^2/m] (or spectral radiance [W/(m^2 sr m)]).
    band_irradiance : array_like, optional
        Line irradiances [W/m^2] (or line radiances [W/(m^2 sr)]).
    out_of_range : {"warn", "ignore", "raise"}
        Handling of irradiance outside 300-700 nm, as in
        :func:`effective_actinic_irradiance`.

    Returns
    -------
    float
        E_B [W/m^2] (or L_B [W/(m^2 sr)]).

    Notes
    -----
    .. math::

        E_B = \\int_{300\\,\\mathrm{nm}}^{700\\,\\mathrm{nm}} E_\\lambda B(\\lambda)\\, d\\lambda

    References
    ----------
    .. [1] ICNIRP, "ICNIRP guidelines on limits of exposure to incoherent
       visible and infrared radiation", Health Physics 105, 74-96, 2013.
    .. [2] IEC 62471:2006, "Photobiological safety of lamps and lamp systems", §4.3.3-4.3.4.
    """
    s = as_spectrum(spectrum, wavelength, spectral_irradiance, band_irradiance, where="blue_light_weighted")
    f = blue_light_function()
    res = _weighted(s, f.lo, f.hi, f)
    _maybe_warn("blue light B(lambda)", res, f.lo, f.hi, "W/m^2", out_of_range)
    return res.value


# ---------------------------------------------------------------------------
# Protocols: doses over time


def _window_stats(durations: np.ndarray, rates: np.ndarray, window: float):
    """Peak dose over any window of length min(window, T), and the highest mean
    rate over any window of length >= window (None if T <= window).

    For piecewise-constant rates the extremes occur with window ends on step
    boundaries (or a length-``window`` window anchored at one), so only those
    candidates are evaluated.
    """
    tb = np.concatenate([[0.0], np.cumsum(durations)])
    hb = np.concatenate([[0.0], np.cumsum(durations * rates)])
    total_t = float(tb[-1])
    if total_t <= window:
        return float(hb[-1]), None
    H = lambda t: np.interp(t, tb, hb)  # noqa: E731
    s = tb[tb + window <= total_t]
    e = tb[tb - window >= 0]
    peak = max(float(np.max(H(s + window) - H(s))) if s.size else 0.0, float(np.max(H(e) - H(e - window))) if e.size else 0.0)
    mean = peak / window
    # all pairs of step boundaries at least one window apart, one row at a time (O(n) memory)
    for i in range(tb.size - 1):
        dt = tb[i + 1 :] - tb[i]
        ok = dt >= window
        if np.any(ok):
            mean = max(mean, float(np.max((hb[i + 1 :][ok] - hb[i]) / dt[ok])))
    return peak, mean


def _parse_protocol(protocol, distance_factor):
    steps = list(protocol)
    if not steps:
        raise ActsimInputError("protocol: needs at least one (duration [s], Spectrum) step")
    durations, spectra = [], []
    for i, step in enumerate(steps):
        try:
            d, spec = step
        except (TypeError, ValueError):
            raise ActsimInputError(f"protocol[{i}]: each step must be a (duration [s], Spectrum or None) pair") from None
        d = nonnegative_float(d, field_name=f"protocol[{i}].duration", unit="s")
        if d == 0:
            raise ActsimInputError(f"protocol[{i}].duration: 0 s is outside the allowed range (> 0 s)")
        spec = Spectrum() if spec is None else spec
        if not isinstance(spec, Spectrum):
            raise ActsimInputError(f"protocol[{i}]: the spectrum must be an actsim Spectrum or None, got {type(spec).__name__}")
        durations.append(d)
        spectra.append(exposure_spectrum(spec, distance_factor=distance_factor))
    return np.asarray(durations), spectra


def _not_assessed(below: float, above: float, total: float) -> list[str]:
    out = []
    tiny = 1e-12 * max(total, 0.0)
    if below > tiny:
        out.append(f"{below:.3g} W/m^2 below 200 nm (S(lambda) is entered from 200 nm only): not assessed")
    if above > tiny:
        out.append(f"{above:.3g} W/m^2 above 700 nm (infrared): not assessed; {NOT_MODELLED}")
    return out


def protocol_dose(protocol, *, distance_factor: float | None = None) -> dict:
    """Weighted irradiances per step and doses accumulated over a protocol.

    Parameters
    ----------
    protocol : sequence of (float, Spectrum or None)
        Steps of (duration [s], spectrum at the exposure position); ``None``
        for a dark step.
    distance_factor : float, optional
        Applied to every step, in (0, 1] [-] (see :func:`exposure_spectrum`).

    Returns
    -------
    dict
        ``duration`` (total, s); per step arrays ``step_duration`` [s],
        ``step_actinic_irradiance``, ``step_uva_irradiance``,
        ``step_blue_light_irradiance`` [W/m^2] and ``step_lit`` (bool); doses
        ``actinic_dose``, ``uva_dose``, ``blue_light_dose`` [J/m^2]; window
        statistics ``actinic_peak_day_dose`` [J/m^2], ``uva_peak_window_dose``,
        ``uva_peak_mean_irradiance``, ``blue_light_peak_window_dose``,
        ``blue_light_peak_mean_irradiance`` (the means are ``None`` when the
        protocol is no longer than the window); ``not_assessed`` (list of str).

    Notes
    -----
    .. math::

        H = \\sum_k E_k\\, \\Delta t_k

    References
    ----------
    .. [1] IEC 62471:2006, §4.3 (exposure limits as doses; from memory).
    """
    durations, spectra = _parse_protocol(protocol, distance_factor)
    fs, fb = actinic_uv_function(), blue_light_function()
    uva = HAZARDS["uva"].dose
    es, eu, eb, lit = [], [], [], []
    below = above = total = 0.0
    for d, sp in zip(durations, spectra):
        lit.append(sp.total_irradiance() > 0)
        rs = _weighted(sp, fs.lo, fs.hi, fs)
        rb = _weighted(sp, fb.lo, fb.hi, fb)
        es.append(rs.value)
        eu.append(_weighted(sp, uva.wavelength_min, uva.wavelength_max, None).value)
        eb.append(rb.value)
        below = max(below, rs.below)
        above = max(above, rb.above)
        total = max(total, rs.total)
    es, eu, eb = np.asarray(es), np.asarray(eu), np.asarray(eb)
    a_peak, _ = _window_stats(durations, es, HAZARDS["actinic_uv"].window)
    u_peak, u_mean = _window_stats(durations, eu, HAZARDS["uva"].window)
    b_peak, b_mean = _window_stats(durations, eb, HAZARDS["blue_light"].window)
    return {
        "duration": float(np.sum(durations)),
        "step_duration": durations,
        "step_actinic_irradiance": es,
        "step_uva_irradiance": eu,
        "step_blue_light_irradiance": eb,
        "step_lit": np.asarray(lit, dtype=bool),
        "actinic_dose": float(np.sum(es * durations)),
        "uva_dose": float(np.sum(eu * durations)),
        "blue_light_dose": float(np.sum(eb * durations)),
        "actinic_peak_day_dose": a_peak,
        "uva_peak_window_dose": u_peak,
        "uva_peak_mean_irradiance": u_mean,
        "blue_light_peak_window_dose": b_peak,
        "blue_light_peak_mean_irradiance": b_mean,
        "not_assessed": _not_assessed(below, above, total),
    }


def _fmt_t(t: float) -> str:
    return "no limit within the model" if math.isinf(t) else f"{t:.4g} s"


def _hazard_result(h: Hazard, *, peak, mean, total_t, permissible_time, extra_note="") -> CheckResult:
    """Dose against the dose limit (total time within the window, or no rate
    limit), else the highest mean rate over windows >= the window against the
    rate limit; the note starts with the verdict wording."""
    notes = [f"permissible time at the most intense step {_fmt_t(permissible_time)}"]
    dose = h.dose
    if mean is None or h.rate is None:
        span = f"{total_t:.4g} s" if total_t <= h.window else f"any {h.window:g} s"
        r = CheckResult.upper_bound(
            check=f"{h.label} over {span} vs exposure limit", value=peak, limit=dose.value, unit=dose.unit,
            source=h.source, validity=h.validity,
        )
    else:
        r = CheckResult.upper_bound(
            check=f"{h.label}, highest mean over >= {h.rate.window:g} s vs exposure limit", value=mean, limit=h.rate.value,
            unit=h.rate.unit, source=h.source, validity=h.validity,
        )
        notes.append(f"peak dose in any {h.window:g} s window {peak:.4g} {dose.unit} (limit {dose.value:g})")
    if extra_note:
        notes.append(extra_note)
    words = ("within" if r.passed else "exceeds") + f" the modelled limit of {h.source}"
    return dataclasses.replace(r, note="; ".join([words, *notes]))


def protocol_check(protocol, *, distance_factor: float | None = None, radiance_spectrum: Spectrum | None = None):
    """Actinic UV, UV-A and blue-light checks of an exposure protocol.

    Parameters
    ----------
    protocol : sequence of (float, Spectrum or None)
        Steps of (duration [s], spectrum at the exposure position [W/m^2/m, W/m^2]).
    distance_factor : float, optional
        Applied to every step, in (0, 1] [-].
    radiance_spectrum : Spectrum, optional
        Spectral radiance of the source seen from the exposure position
        [W/(m^2 sr m), W/(m^2 sr)], taken as on during every lit step; adds the
        radiance form of the blue-light check (required for sources larger
        than 0.011 rad).

    Returns
    -------
    results : list of CheckResult
        One per hazard: the dose over the protocol against the dose limit
        (protocols no longer than the hazard's window), or the highest mean
        irradiance over any window at least that long against the irradiance
        limit (longer protocols; the peak window dose is in the note).
    summary : dict
        ``protocol_dose`` output plus permissible times and risk groups of the
        most intense step per hazard, ``risk_group`` (worst), ``verdicts``
        (hazard -> wording) and ``not_assessed``.

    Notes
    -----
    The actinic limit is applied to the dose in any 8 h window (daily limit).
    For the UV-A and blue-light limits, which change form at a window length
    W (1000 s, 100 s), every sub-interval of the protocol must meet
    "dose <= limit" (length <= W) and "mean irradiance <= limit" (length > W);
    the two coincide at length W. This reading of the limits for time-varying
    exposure is common practice, no source.

    .. math::

        \\max_{[t_1, t_2]} \\frac{\\int_{t_1}^{t_2} E\\,dt}{H_0 \\max(1, (t_2 - t_1)/W)} \\le 1

    References
    ----------
    .. [1] ICNIRP, Health Physics 87, 171-186, 2004.
    .. [2] ICNIRP, Health Physics 105, 74-96, 2013.
    .. [3] IEC 62471:2006, "Photobiological safety of lamps and lamp systems".
    """
    dose = protocol_dose(protocol, distance_factor=distance_factor)
    T = dose["duration"]
    lit = dose["step_lit"]
    times = {
        "actinic_uv": actinic_permissible_time(effective_irradiance=float(np.max(dose["step_actinic_irradiance"]))),
        "uva": uva_permissible_time(uva_irradiance=float(np.max(dose["step_uva_irradiance"]))),
        "blue_light": blue_light_permissible_time(weighted_irradiance=float(np.max(dose["step_blue_light_irradiance"]))),
    }
    windows = {
        "actinic_uv": (dose["actinic_peak_day_dose"], None),
        "uva": (dose["uva_peak_window_dose"], dose["uva_peak_mean_irradiance"]),
        "blue_light": (dose["blue_light_peak_window_dose"], dose["blue_light_peak_mean_irradiance"]),
    }
    extra = {"actinic_uv": "; ".join(dose["not_assessed"])}
    if radiance_spectrum is not None:
        if not isinstance(radiance_spectrum, Spectrum):
            raise ActsimInputError(f"radiance_spectrum: must be an actsim Spectrum, got {type(radiance_spectrum).__name__}")
        fb = blue_light_function()
        lb = _weighted(radiance_spectrum, fb.lo, fb.hi, fb).value
        times["blue_light_radiance"] = blue_light_permissible_time(weighted_radiance=lb)
        # the source is seen (radiance lb) during the lit steps only
        windows["blue_light_radiance"] = _window_stats(dose["step_duration"], np.where(lit, lb, 0.0), HAZARDS["blue_light_radiance"].window)
        extra["blue_light_radiance"] = f"L_B = {lb:.4g} W/(m^2 sr)"
    results = [
        _hazard_result(HAZARDS[k], peak=peak, mean=mean, total_t=T, permissible_time=times[k], extra_note=extra.get(k, ""))
        for k, (peak, mean) in windows.items()
    ]
    groups = {k: risk_group(hazard=k, permissible_time=t) for k, t in times.items()}
    summary = dict(dose)
    summary.update(
        {
            "lit_duration": float(np.sum(dose["step_duration"][lit])),
            "permissible_time": times,
            "risk_groups": groups,
            "risk_group": worst_risk_group(groups.values()),
            "verdicts": {k: r.note.split(";")[0] for k, r in zip(windows, results)},
            "not_modelled": NOT_MODELLED,
        }
    )
    if dose["not_assessed"]:
        warnings.warn("photobiological check: " + "; ".join(dose["not_assessed"]), ActsimWarning, stacklevel=2)
    return results, summary


def photobio_check(
    spectrum: Spectrum,
    *,
    exposure_duration: float = HAZARDS["actinic_uv"].window,
    distance_factor: float | None = None,
    exposure_irradiance: float | None = None,
    radiance_spectrum: Spectrum | None = None,
):
    """Photobiological checks of a constant exposure.

    Parameters
    ----------
    spectrum : Spectrum
        Spectrum at the strip (or at the person if neither ``distance_factor``
        nor ``exposure_irradiance`` is given) [W/m^2/m, W/m^2].
    exposure_duration : float
        Duration of the exposure, > 0 [s]. Default 8 h: a full working day.
    distance_factor : float, optional
        Irradiance at the person / irradiance at the strip, in (0, 1] [-].
    exposure_irradiance : float, optional
        Total irradiance at the person, > 0 [W/m^2] (spectral shape kept).
    radiance_spectrum : Spectrum, optional
        Source spectral radiance for the radiance form of the blue-light check
        [W/(m^2 sr m), W/(m^2 sr)].

    Returns
    -------
    results : list of CheckResult
    summary : dict
        As :func:`protocol_check`, plus the scalars ``actinic_irradiance``
        (E_s), ``uva_irradiance`` and ``blue_light_irradiance`` (E_B) at the
        person [W/m^2].

    Notes
    -----
    .. math::

        H_s = E_s t \\le 30\\ \\mathrm{J\\,m^{-2}}

    References
    ----------
    .. [1] ICNIRP, Health Physics 87, 171-186, 2004.
    .. [2] IEC 62471:2006, "Photobiological safety of lamps and lamp systems".
    """
    person = exposure_spectrum(spectrum, distance_factor=distance_factor, exposure_irradiance=exposure_irradiance)
    t = nonnegative_float(exposure_duration, field_name="exposure_duration", unit="s")
    if t == 0:
        raise ActsimInputError("exposure_duration: 0 s is outside the allowed range (> 0 s)")
    results, summary = protocol_check([(t, person)], radiance_spectrum=radiance_spectrum)
    summary["actinic_irradiance"] = float(summary["step_actinic_irradiance"][0])
    summary["uva_irradiance"] = float(summary["step_uva_irradiance"][0])
    summary["blue_light_irradiance"] = float(summary["step_blue_light_irradiance"][0])
    return results, summary


def format_photobio(results, summary: dict | None = None, width: int = 100) -> str:
    """Check table, risk groups, parts not assessed, and the caution.

    Parameters
    ----------
    results : list of CheckResult
    summary : dict, optional
        From :func:`photobio_check` or :func:`protocol_check`.
    width : int
        Caution line width [characters].

    Returns
    -------
    str
    """
    out = [format_table(results)]
    if summary:
        g = summary.get("risk_groups", {})
        if g:
            out.append("")
            out.append(
                "IEC 62471 risk group (modelled, limits from memory): "
                + ", ".join(f"{k} {v}" for k, v in g.items())
                + f"; overall {summary.get('risk_group', worst_risk_group(g.values()))}"
            )
        for txt in summary.get("not_assessed", []):
            out.append(f"not assessed: {txt}")
        if summary.get("not_modelled"):
            out.append(f"not modelled: {summary['not_modelled']}")
    out.append("")
    out += caution_lines(width)
    return "\n".join(out)
