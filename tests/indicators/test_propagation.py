"""Geometric divergence against ISO 9613-2 7.1 and the Hong Kong EPD rule of thumb."""

from __future__ import annotations

import math

import numpy as np
import pytest

from surveytools.indicators.propagation import line_source_level_at, point_source_level_at


def test_point_source_iso_9613_2_adiv():
    # ISO 9613-2:1996 7.1 (standards.md §9): Adiv = 20 lg(d/d0) + 11 -> 11 dB at 1 m,
    # 31 dB at 10 m, 51 dB at 100 m. From 1 m to 10 m: 20 dB less; 10 m to 100 m: 20 dB.
    assert point_source_level_at(80.0, 1.0, 10.0) == pytest.approx(80.0 - (31 - 11), abs=1e-12)
    assert point_source_level_at(60.0, 10.0, 100.0) == pytest.approx(60.0 - (51 - 31), abs=1e-12)


def test_per_doubling():
    # Hong Kong EPD noise education (standards.md §9): point source -6 dB per doubling of
    # distance, line source -3 dB. Exact: 20 lg 2 = 6.0206, 10 lg 2 = 3.0103 (ISO 9613-2
    # "6.02 dB per doubling", standards.md §9).
    assert 70.0 - point_source_level_at(70.0, 25.0, 50.0) == pytest.approx(6.02, abs=0.005)
    assert 70.0 - line_source_level_at(70.0, 25.0, 50.0) == pytest.approx(3.01, abs=0.005)
    assert 70.0 - point_source_level_at(70.0, 25.0, 50.0) == pytest.approx(6.0, abs=0.05)
    assert 70.0 - line_source_level_at(70.0, 25.0, 50.0) == pytest.approx(3.0, abs=0.05)


def test_nearer_is_louder_and_vectorised():
    out = point_source_level_at(np.array([60.0, 60.0]), 100.0, np.array([50.0, 200.0]))
    # hand-evaluated: 60 + 20 lg 2 = 66.0206 and 60 - 20 lg 2 = 53.9794
    np.testing.assert_allclose(out, [66.0206, 53.9794], atol=5e-5)


@pytest.mark.parametrize(("r1", "r2"), [(0.0, 10.0), (10.0, -1.0), (float("nan"), 5.0)])
def test_bad_distance_is_nan(r1, r2):
    assert math.isnan(point_source_level_at(60.0, r1, r2))
    assert math.isnan(line_source_level_at(60.0, r1, r2))
