"""Protocol schedule: the protocol's steps as arrays, cut into segments of equal time steps.

A segment ends on every protocol boundary and every output time; within a
segment the step is constant, ``seg_dt = (segment length) / seg_n`` with
``seg_n = ceil(length / time.step)``. Protocol boundaries are always kept
(however short a step); an output mark that falls on a boundary to round-off
is dropped in its favour.
"""

from __future__ import annotations

import math
from typing import NamedTuple

import numpy as np
from numba import njit

from .mechanics import HOLD_CODES
from .spectra import photon_flux


class Schedule(NamedTuple):
    """Steps and segments of one design, SI.

    Attributes
    ----------
    step_flux : numpy.ndarray, shape (n_step, n_beam)
        Incident photon flux of each beam in each protocol step [mol m-2 s-1].
    step_irradiance : numpy.ndarray, shape (n_step, n_source)
        Irradiance of each source in each step [W m-2].
    step_hold : numpy.ndarray of int64, shape (n_step,)
        Mechanical condition (:data:`actsim.mechanics.HOLD_CODES`).
    step_value : numpy.ndarray, shape (n_step,)
        Held strain [1] or curvature [m-1].
    step_env : numpy.ndarray, shape (n_step, 4)
        Ambient below [K], h below [W m-2 K-1], ambient above [K], h above [W m-2 K-1].
    seg_step : numpy.ndarray of int64, shape (n_seg,)
        Protocol step of each segment.
    seg_dt : numpy.ndarray, shape (n_seg,)
        Time step within each segment [s].
    seg_n : numpy.ndarray of int64, shape (n_seg,)
        Number of time steps in each segment.
    times : numpy.ndarray, shape (n_seg + 1,)
        Output times: 0 and the end of every segment [s].
    tolerance : float
        Local error bound of one error-controlled step [1]; 0 for fixed steps (``seg_dt``, ``seg_n``).
    """

    step_flux: np.ndarray
    step_irradiance: np.ndarray
    step_hold: np.ndarray
    step_value: np.ndarray
    step_env: np.ndarray
    seg_step: np.ndarray
    seg_dt: np.ndarray
    seg_n: np.ndarray
    times: np.ndarray
    tolerance: float


def segments(*, durations, output_interval, time_step):
    """Cut a protocol into segments that end on every output time and step boundary.

    Parameters
    ----------
    durations : sequence of float
        Duration of each protocol step [s].
    output_interval : float
        Interval between output times [s].
    time_step : float
        Largest time step [s] (inf: one step per segment, for error-controlled stepping).

    Returns
    -------
    (seg_step, seg_dt, seg_n, marks) : numpy.ndarray
        Protocol step of each segment, its time step [s] and number of steps, and the
        segment ends with 0 first [s].
    """
    return _segments(np.asarray(durations, dtype=np.float64), float(output_interval), float(time_step))


@njit(cache=True)
def _segments(durations, output_interval, time_step):
    """The arithmetic of :func:`segments` (numba: a protocol is cut in microseconds, not tens of them)."""
    total = 0.0
    for d in durations:
        total += d
    tol = 1e-9 * min(durations.min(), output_interval)
    boundaries = np.empty(durations.size + 1)
    boundaries[0] = 0.0
    boundaries[1:] = np.cumsum(durations)
    boundaries[-1] = total
    n_out = int(math.floor(total / output_interval + 1e-9))
    outs = np.arange(n_out + 1) * output_interval
    outs = outs[outs < total - tol]
    j = np.minimum(np.maximum(np.searchsorted(boundaries, outs), 1), boundaries.size - 1)
    near = np.minimum(np.abs(outs - boundaries[j - 1]), np.abs(outs - boundaries[j])) <= tol
    marks = np.sort(np.concatenate((boundaries, outs[~near])))
    length = np.diff(marks)
    seg_step = np.searchsorted(boundaries, 0.5 * (marks[:-1] + marks[1:])) - 1
    seg_n = np.maximum(1, np.ceil(length / time_step - 1e-9)).astype(np.int64)
    return seg_step.astype(np.int64), length / seg_n, seg_n, marks


def build_schedule(scenario, light) -> Schedule:
    """The protocol of a scenario as arrays, with the photon flux of every beam.

    Parameters
    ----------
    scenario : actsim.scenario.Scenario
        The validated scenario (SI).
    light : actsim.optics.LightParams
        The beams (source, wavelength, fraction of the source).
    """
    protocol = scenario.protocol
    seg_step, seg_dt, seg_n, times = segments(durations=[s.duration for s in protocol],
                                              output_interval=scenario.output_interval, time_step=scenario.time_step)
    step_irr = np.array([s.irradiance for s in protocol], float).reshape(len(protocol), len(scenario.sources))
    n_beam = light.beam_wavelength.size
    step_flux = np.zeros((len(protocol), n_beam))
    for b in range(n_beam):
        step_flux[:, b] = photon_flux(irradiance=step_irr[:, light.beam_source[b]] * light.beam_fraction[b],
                                      wavelength=light.beam_wavelength[b])
    return Schedule(
        step_flux=step_flux,
        step_irradiance=step_irr,
        step_hold=np.array([HOLD_CODES[st.hold] for st in protocol], np.int64),
        step_value=np.array([st.hold_value for st in protocol], float),
        step_env=np.array([[st.ambient_bottom, st.h_bottom, st.ambient_top, st.h_top] for st in protocol], float),
        seg_step=seg_step, seg_dt=seg_dt, seg_n=seg_n, times=times, tolerance=float(scenario.time_tolerance),
    )


def incident_dose(schedule: Schedule) -> np.ndarray:
    """Incident radiant exposure since t = 0 at every output time [J m-2] (exact: power is constant per segment).

    Parameters
    ----------
    schedule : Schedule
        Steps and segments.

    .. math:: H(t_k) = \\sum_{j < k} \\Big(\\sum_{sources} E_{step(j)}\\Big)\\,(t_{j+1} - t_j)
    """
    return _incident_dose(schedule.step_irradiance, schedule.seg_step, schedule.times)


@njit(cache=True)
def _incident_dose(step_irradiance, seg_step, times):
    """The sum of :func:`incident_dose`, segment by segment (numba)."""
    out = np.empty(times.size)
    out[0] = 0.0
    for j in range(seg_step.size):
        power = 0.0
        for k in range(step_irradiance.shape[1]):
            power += step_irradiance[seg_step[j], k]
        out[j + 1] = out[j] + power * (times[j + 1] - times[j])
    return out
