"""The ``[safety]`` checks: light at the exposure position and skin contact temperature.

* :func:`light_check` (UV and visible sources): actinic UV, UV-A and blue-light hazards of the
  protocol at the exposure position, repeated over the exposure duration
  (:func:`actsim.checks.exposure.protocol_check`); without ``[safety].exposure_duration``, 8 h of
  repeated use (the daily reference of the ICNIRP / IEC 62471 limits), never a single run. It runs
  with or without ``[safety]`` (then at the strip, conservative).
* :func:`skin_check` (``[safety].skin_contact = true``): the peak modelled temperature of the
  contacting face against the skin-contact limit; a "not assessed" entry (never a pass) when the
  scenario has no temperature model.

References
----------
.. [1] IEC 62471:2006, *Photobiological safety of lamps and lamp systems*.
"""

from __future__ import annotations

import dataclasses
import warnings

import numpy as np

from ..errors import ActsimInputError
from .context import CheckContext, CheckOutput
from .settings import SafetySettings
from .verdict import NotAssessed

__all__ = ["DEFAULT_EXPOSURE", "exposure_protocol", "light_check", "skin_check"]

#: Exposure assessed when ``[safety].exposure_duration`` is not given: one working day of repeated use, the
#: 8 h daily reference of the ICNIRP (2004) / IEC 62471:2006 exposure limits [s].
DEFAULT_EXPOSURE = 8.0 * 3600.0


def exposure_protocol(scenario, ss: SafetySettings):
    """The exposure at the person: the protocol's spectra, scaled and repeated over the exposure duration.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
    ss : actsim.checks.settings.SafetySettings
        Parsed ``[safety]`` (exposure position and duration).

    Returns
    -------
    sequence : list of (float, actsim.checks.light_spectrum.Spectrum or None)
        (duration [s], spectrum at the exposure position or None when dark), consecutive dark steps merged.
    factor : float
        Irradiance at the exposure position over that at the strip [-].
    where : str
        The exposure position and duration, for the notes.
    duration : float
        Exposure duration [s] (:data:`DEFAULT_EXPOSURE` or the whole protocol when not given).
    runs : float
        Runs of the protocol in it [-].

    Raises
    ------
    ActsimInputError
        When the repeated protocol has more than 200000 steps.
    """
    from .light_spectrum import spectrum_from_light_source

    steps = []
    for st in scenario.protocol:
        spec = None
        for src, e in zip(scenario.sources, st.irradiance):
            if e > 0:
                s = spectrum_from_light_source(src, irradiance=e)
                spec = s if spec is None else spec + s
        steps.append((st.duration, spec, float(sum(st.irradiance))))
    peak = max(s[2] for s in steps)
    if ss.exposure_irradiance is not None:
        factor = ss.exposure_irradiance / peak
        where = f"{ss.exposure_irradiance:g} W/m^2 at the exposure position during the brightest step"
    elif ss.exposure_distance_factor is not None:
        factor = ss.exposure_distance_factor
        where = f"exposure position receives {factor:g} x the irradiance at the strip"
    else:
        factor = 1.0
        where = "exposure position taken at the strip (no [safety] exposure factor given: conservative)"
    T = scenario.duration
    if ss.exposure_duration is not None:
        D = ss.exposure_duration
        field = f"safety.exposure_duration: {D:g} s"
    else:
        # no duration given: a working day of repeated use (the 8 h daily reference of the ICNIRP/IEC 62471 limits);
        # a protocol longer than that is assessed whole
        D = max(T, DEFAULT_EXPOSURE)
        where += "; exposure_duration not given: 8 h of repeated use assessed"
        if T > DEFAULT_EXPOSURE:
            where += " (the protocol is longer: its whole duration)"
        field = f"safety.exposure_duration: not given, so the 8 h default ({D:g} s)"
    seq = []
    t = 0.0
    while t < D * (1 - 1e-12):
        for d, spec, _ in steps:
            d = min(d, D - t)
            if d <= 0:
                break
            sp = None if spec is None else spec.scaled(factor)
            if seq and seq[-1][1] is None and sp is None:
                seq[-1] = (seq[-1][0] + d, None)
            else:
                seq.append((d, sp))
            t += d
        if len(seq) > 200000:
            raise ActsimInputError(f"{field} repeats the protocol too often (> 200000 steps); "
                                   "give a shorter exposure_duration or use a longer protocol")
    reps = D / T
    return seq, factor, where, D, reps


def light_check(ctx: CheckContext) -> CheckOutput:
    """Actinic UV, UV-A and blue light at the exposure position over the exposure duration (registered check).

    Nothing to assess without light in the protocol; "not assessed" when every source lies outside
    180-700 nm, or when the 8 h default exposure repeats the protocol too often. The details are
    ``details["light"]``: risk groups, permissible times, doses, the exposure factor, duration and position.
    """
    from .exposure import protocol_check

    scenario, ss = ctx.scenario, ctx.safety
    if not scenario.sources or all(sum(st.irradiance) == 0 for st in scenario.protocol):
        return CheckOutput([], {"assessed": False, "reason": "no light in the protocol"})
    wl = np.concatenate([s.band_wavelength for s in scenario.sources])
    if not np.any((wl >= 180e-9) & (wl <= 700e-9)):
        return CheckOutput([NotAssessed("photobiological exposure",
                                        "all sources lie outside 180-700 nm: infrared hazards are not modelled")],
                           {"assessed": False})
    try:
        seq, factor, where, D, reps = exposure_protocol(scenario, ss)
    except ActsimInputError as exc:
        if ss.exposure_duration is not None:
            raise
        # the 8 h default was not chosen by the user: report the check as not made rather than stop the run
        return CheckOutput([NotAssessed("photobiological exposure", f"{exc}; set [safety] exposure_duration",
                                        source="ICNIRP 2004 / IEC 62471")], {"assessed": False, "reason": str(exc)})
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        results, summary = protocol_check(seq)
    extra = [str(w.message) for w in caught]
    note = f"{where}; {D:g} s of exposure ({reps:.4g} runs of the protocol)"
    out = []
    for r in results:
        out.append(dataclasses.replace(r, check=f"light at the exposure position: {r.check}",
                                       note="; ".join([r.note, note, *extra])))
    det = {k: summary[k] for k in ("risk_group", "risk_groups", "permissible_time", "actinic_dose", "uva_dose",
                                   "blue_light_dose", "not_assessed", "not_modelled", "lit_duration")}
    det.update(assessed=True, exposure_factor=factor, exposure_duration=D, protocol_runs=reps, position=where)
    return CheckOutput(out, det)


def skin_check(ctx: CheckContext) -> CheckOutput:
    """Peak modelled temperature of the face touching the skin against the contact limit (registered check).

    Nothing to assess unless ``[safety].skin_contact = true``; "not assessed" when the scenario has no
    temperature model. The details are ``details["skin"]``: peak surface temperature [K], its time [s]
    and the contact duration [s].
    """
    from .skin import skin_contact_check

    scenario, ds, ss = ctx.scenario, ctx.ds, ctx.safety

    if not ss.skin_contact:
        return CheckOutput([], {"assessed": False, "reason": "safety.skin_contact is false"})
    name = f"surface_temperature_{ss.skin_face}"
    label = f"skin contact temperature, {ss.skin_face} face"
    if name not in ds:
        return CheckOutput([NotAssessed(f"{label} vs skin-contact limit", f"temperature not modelled in this scenario (no {name} in the result); "
                                               "add the heat model to assess skin contact",
                                        source="IEC 60601-1 / ISO 13732-1")], {"assessed": False})
    temp = ds[name].values
    peak = float(np.max(temp))
    dur = ss.contact_duration or ss.exposure_duration or scenario.duration
    r = skin_contact_check(peak_surface_temperature=peak, contact_duration=dur, material_class=ss.skin_material_class,
                           standard=ss.skin_standard)
    r = dataclasses.replace(r, check=f"{label} vs skin-contact limit" + r.check.removeprefix("skin contact temperature"))
    return CheckOutput([r], {"assessed": True, "peak_surface_temperature": peak, "contact_duration": dur,
                             "time_of_peak": float(ds["time"].values[int(np.argmax(temp))])})
