"""Rating level and initial impact estimate (BS 4142:2014 clause 9 and 11)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from surveytools import constants as c
from surveytools.indicators.rating import (
    IMPACT_INDICATIONS,
    excess_over_background,
    impact_indication,
    rating_level,
)


def test_rating_level_adds_corrections():
    # BS 4142:2014 9.2 (from memory, standards.md §5): tonality +4 (clearly perceptible)
    # and impulsivity +3 (just perceptible) may be added together: 45 + 4 + 3 = 52.
    assert rating_level(45.0, tonal_db=4.0, impulsive_db=3.0) == 52.0
    # intermittency +3 and other +3 (same source): 40 + 3 + 3 = 46
    assert rating_level(40.0, intermittency_db=3.0, other_db=3.0) == 46.0
    out = rating_level(np.array([40.0, np.nan]), tonal_db=2.0)
    assert out[0] == 42.0 and math.isnan(out[1])


def test_excess_over_background():
    # hand-evaluated: 52 - 44 = 8; NaN background -> NaN
    assert excess_over_background(52.0, 44.0) == 8.0
    assert math.isnan(excess_over_background(52.0, float("nan")))


@pytest.mark.parametrize(
    ("excess", "expected"),
    [
        # BS 4142:2014 clause 11 (secondary: hushtacoustics.co.uk): about +10 dB or more ->
        # likely significant adverse impact; about +5 dB -> likely adverse impact.
        pytest.param(10.0, "likely significant adverse impact", id="plus-10"),
        pytest.param(14.0, "likely significant adverse impact", id="plus-14"),
        pytest.param(9.9, "likely adverse impact", id="plus-9.9"),
        pytest.param(5.0, "likely adverse impact", id="plus-5"),
        pytest.param(4.9, "lower likelihood of adverse impact", id="plus-4.9"),
        pytest.param(-3.0, "lower likelihood of adverse impact", id="below-background"),
        pytest.param(float("nan"), "not available", id="nan"),
    ],
)
def test_impact_indication(excess, expected):
    assert impact_indication(excess) == expected
    assert expected in IMPACT_INDICATIONS


def test_thresholds_come_from_constants_and_are_configurable():
    assert (c.BS4142_ADVERSE_DB, c.BS4142_SIGNIFICANT_ADVERSE_DB) == (5.0, 10.0)
    assert impact_indication(7.0, adverse_db=8.0, significant_db=12.0) == (
        "lower likelihood of adverse impact")
    with pytest.raises(ValueError, match="must not exceed significant_db"):
        impact_indication(7.0, adverse_db=12.0, significant_db=8.0)
