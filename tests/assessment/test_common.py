"""Shared assessment plumbing: carrying an order of readings over to their pieces."""

from __future__ import annotations

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from surveytools.assessment._common import expand_order, split

# whole-dB levels (many ties) and readings of 1..5 s on a 1 s grid, cut by boundaries
level_st = st.integers(min_value=30, max_value=40).map(float)


@given(
    st.lists(st.tuples(level_st, st.integers(min_value=1, max_value=5)), min_size=1,
             max_size=40),
    st.lists(st.integers(min_value=0, max_value=200), max_size=10),
)
def test_expanded_order_is_the_stable_order_of_the_pieces(readings, cuts):
    levels, lengths = (np.array(x) for x in zip(*readings, strict=True))
    duration_ms = lengths.astype(np.int64) * 1000
    start_ms = np.concatenate(([0], np.cumsum(duration_ms)[:-1]))
    pieces = split(start_ms, duration_ms, np.unique(np.array(cuts, np.int64) * 1000))
    order = np.argsort(levels, kind="stable")
    # reference: numpy's stable argsort of the pieces' own levels (NumPy reference,
    # numpy.argsort kind="stable": equal keys keep their input order)
    expected = np.argsort(levels[pieces.index], kind="stable")
    np.testing.assert_array_equal(expand_order(order, pieces.index, levels.size), expected)


def test_expanded_order_hand_evaluated():
    # readings 0, 1, 2 with pieces [0], [1, 2], [3]; order 2, 0, 1 -> pieces 3, 0, 1, 2
    np.testing.assert_array_equal(expand_order(np.array([2, 0, 1]), np.array([0, 1, 1, 2]), 3),
                                  [3, 0, 1, 2])
