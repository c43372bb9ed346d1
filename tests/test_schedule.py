"""The protocol schedule: segments end on every output time and boundary; fixed steps never exceed `step`."""

from __future__ import annotations

import math

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from actsim.schedule import segments


@settings(max_examples=60, deadline=None)
@given(durations=st.lists(st.floats(0.01, 50.0), min_size=1, max_size=5), interval=st.floats(0.05, 10.0),
       step=st.floats(0.001, 5.0))
def test_fixed_steps_never_exceed_the_step_and_land_on_every_mark(durations, interval, step):
    # docs/scenario.md [time]: the time between two consecutive output or boundary times is cut into equal steps
    # no longer than `step`, at least one (common practice for fixed-step output, no source)
    seg_step, seg_dt, seg_n, marks = segments(durations=durations, output_interval=interval, time_step=step)
    length = np.diff(marks)
    assert np.all(seg_dt <= step * (1 + 1e-9))
    assert np.all(seg_n == np.maximum(1, np.ceil(length / step - 1e-9)))  # the fewest equal steps that do it
    np.testing.assert_allclose(seg_dt * seg_n, length, rtol=1e-12)
    boundaries = np.cumsum([0.0] + list(durations))
    for b in boundaries:
        assert np.min(np.abs(marks - b)) <= 1e-9 * max(b, 1.0)  # every protocol boundary is a mark
    # each segment lies inside one protocol step
    assert np.all(boundaries[seg_step] <= marks[:-1] + 1e-9) and np.all(marks[1:] <= boundaries[seg_step + 1] + 1e-9)
    assert math.isclose(marks[-1], sum(durations), rel_tol=1e-12)
