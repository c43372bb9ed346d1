"""Property tests of rainflow counting (ASTM E1049-85 (Reapproved 2017), 5.4.4).

Properties derived from the counting rules (derived, no published source):
- every counted full cycle removes two turning points, every half cycle of step 5 removes one, and step 6
  counts the n-1 ranges of the n points left, so sum(count) = (n_turning_points - 1) / 2;
- a full cycle is only extracted when it is nested inside its neighbours (X >= Y and the earlier range > Y),
  so removing it shortens the path by twice its range; hence 2 * sum(range * count) equals the total
  variation sum |diff(history)| (cycle-count conservation);
- the largest range counted is the overall range max - min of the history;
- shifting the history by a constant shifts every mean and leaves ranges and counts unchanged.
"""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from actsim.checks.fatigue import rainflow_cycles, turning_points

histories = st.lists(
    st.integers(min_value=-1000, max_value=1000).map(lambda k: k * 0.25),  # exact binary fractions: no round-off
    min_size=1,
    max_size=200,
)


@settings(max_examples=300, deadline=None)
@given(histories)
def test_range_count_conservation(h):
    c = rainflow_cycles(h)
    total_variation = float(np.sum(np.abs(np.diff(h)))) if len(h) > 1 else 0.0
    assert 2.0 * float(np.sum(c[:, 0] * c[:, 2])) == total_variation


@settings(max_examples=300, deadline=None)
@given(histories)
def test_count_sum_and_half_cycles(h):
    c = rainflow_cycles(h)
    n_tp = turning_points(h).size
    assert float(c[:, 2].sum()) == (n_tp - 1) / 2
    assert set(np.unique(c[:, 2]).tolist()) <= {0.5, 1.0}
    assert np.all(c[:, 0] >= 0)
    if c.shape[0]:
        assert float(c[:, 0].max()) == max(h) - min(h)


@settings(max_examples=100, deadline=None)
@given(histories, st.integers(min_value=-100, max_value=100))
def test_shift_invariance(h, k):
    a = rainflow_cycles(h)
    b = rainflow_cycles([x + k for x in h])
    np.testing.assert_array_equal(a[:, [0, 2]], b[:, [0, 2]])
    np.testing.assert_array_equal(a[:, 1] + k, b[:, 1])
