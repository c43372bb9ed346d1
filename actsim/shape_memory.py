"""Shape-memory figures of merit from a simulated programming–recovery protocol.

A cycle starts at a step that holds the strip stretched (``hold = "stretch"``)
or bent (``hold = "bend"``): the programmed value :math:`\\varepsilon_m` is the
held strain (or curvature). The end of the first free step after the hold
gives the fixed value :math:`\\varepsilon_u`; the end of the last free step
before the next programming hold (or the end of the protocol) gives the
recovered value :math:`\\varepsilon_p`. Following the common definitions
(Lendlein and Kelch 2002), with :math:`\\varepsilon_p(0)` the value before the
first hold:

.. math:: R_f = \\frac{\\varepsilon_u - \\varepsilon_p(N-1)}{\\varepsilon_m - \\varepsilon_p(N-1)}, \\qquad
   R_r = \\frac{\\varepsilon_m - \\varepsilon_p(N)}{\\varepsilon_m - \\varepsilon_p(N-1)}

(for the first cycle from a flat, unstrained strip, :math:`R_f = \\varepsilon_u/\\varepsilon_m`).
Stretch cycles use the mid-thickness axial strain; bend cycles the curvature.

References
----------
.. [1] Lendlein, A. and Kelch, S. "Shape-memory polymers." Angew. Chem. Int.
   Ed. 41 (2002) 2034–2057 (definitions of shape fixity and recovery ratios).
"""

from __future__ import annotations

import numpy as np


def _step_end_index(steps, k):
    idx = np.nonzero(steps == k)[0]
    return int(idx[-1]) if idx.size else None


def shape_memory_cycles(ds, protocol):
    """Fixity and recovery ratio of every programming cycle of a protocol.

    Parameters
    ----------
    ds : xarray.Dataset or actsim.solution.Solution
        Result of :func:`actsim.simulate` (or :func:`actsim.solve`).
    protocol : sequence of actsim.scenario.Step
        The scenario's protocol.

    Returns
    -------
    list of dict
        One entry per cycle: ``cycle``, ``kind`` ("stretch" or "bend"),
        ``programmed``, ``fixed``, ``recovered`` (strain [1] or curvature [m-1]),
        ``fixity_ratio`` and ``recovery_ratio`` [1] (None where the protocol has
        no step to measure it), and ``bend_angle_after_release`` [rad]: the bend
        that appears on release when the light fixed one face more than the other.
    """
    def values(name):
        v = ds[name] if hasattr(ds, "data_vars") else getattr(ds, name)  # a Dataset, or a Solution
        return np.asarray(getattr(v, "values", v))

    return cycles_from_arrays(protocol_step=values("protocol_step"), axial_strain=values("axial_strain"),
                              curvature=values("curvature"), bend_angle=values("bend_angle"), protocol=protocol)


def cycles_from_arrays(*, protocol_step, axial_strain, curvature, bend_angle, protocol):
    """:func:`shape_memory_cycles` from the (time,) arrays of a result.

    Parameters
    ----------
    protocol_step : numpy.ndarray of int, shape (n_time,)
        Protocol step of each output time.
    axial_strain, curvature, bend_angle : numpy.ndarray, shape (n_time,)
        Mid-thickness strain [1], curvature [m-1] and bend angle [rad].
    protocol : sequence of actsim.scenario.Step
        The scenario's protocol (hold values: strain [1] or curvature [m-1]).

    Returns
    -------
    list of dict
        As :func:`shape_memory_cycles`.
    """
    steps = np.asarray(protocol_step)
    holds = [s.hold for s in protocol]
    starts = [k for k, h in enumerate(holds) if h in ("stretch", "bend") and (k == 0 or holds[k - 1] != h)]
    cycles = []
    for n, k in enumerate(starts):
        kind = holds[k]
        values = axial_strain if kind == "stretch" else curvature
        # value before the hold: end of the previous step; a protocol that starts held starts from flat, unstrained
        baseline = float(values[_step_end_index(steps, k - 1)]) if k > 0 else 0.0
        end_hold = k
        while end_hold + 1 < len(holds) and holds[end_hold + 1] == kind:
            end_hold += 1
        programmed = protocol[end_hold].hold_value
        if kind == "stretch":
            programmed = float(values[_step_end_index(steps, end_hold)])
        nxt = starts[n + 1] if n + 1 < len(starts) else len(holds)
        free_steps = [j for j in range(end_hold + 1, nxt) if holds[j] in ("free", "release")]
        fixed = recovered = fixity = recovery = fixed_bend = None
        if free_steps:
            fixed = float(values[_step_end_index(steps, free_steps[0])])
            fixed_bend = float(bend_angle[_step_end_index(steps, free_steps[0])])
            span = programmed - baseline
            fixity = (fixed - baseline) / span if span != 0 else None
            if len(free_steps) > 1:
                recovered = float(values[_step_end_index(steps, free_steps[-1])])
                recovery = (programmed - recovered) / span if span != 0 else None
        cycles.append({
            "cycle": n + 1, "kind": kind, "programmed": float(programmed), "fixed": fixed, "recovered": recovered,
            "fixity_ratio": fixity, "recovery_ratio": recovery, "bend_angle_after_release": fixed_bend,
        })
    return cycles
