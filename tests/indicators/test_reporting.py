"""The one rounding of reported levels (half up, once, at 0.1 dB)."""

from __future__ import annotations

import math
from decimal import ROUND_HALF_UP, Decimal

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st

from surveytools.indicators.reporting import reported_level

CASES = [
    # hand-evaluated: half up at 0.1 dB of the shortest decimal form of each value
    pytest.param(45.049, 45.0, id="below-half-step"),
    pytest.param(45.05, 45.1, id="exact-half-step-goes-up"),
    pytest.param(45.0499999, 45.0, id="just-below-half-step"),
    pytest.param(45.15, 45.2, id="binary-below-but-decimal-half"),
    # a spreadsheet's ROUND(-0.05; 1) gives -0.1: halves away from zero
    pytest.param(-0.05, -0.1, id="negative-half-away-from-zero"),
    pytest.param(-0.06, -0.1, id="negative"),
    pytest.param(59.95, 60.0, id="carry-into-units"),
]


@pytest.mark.parametrize(("value", "expected"), CASES)
def test_reported_level_half_up(value: float, expected: float) -> None:
    assert reported_level(value) == expected


def test_reported_level_vectorised_and_nan() -> None:
    values = np.array([[45.05, np.nan], [30.44, 30.45]])
    out = reported_level(values)
    assert isinstance(out, np.ndarray)
    assert out.shape == (2, 2)
    assert out[0, 0] == 45.1 and math.isnan(out[0, 1])
    assert out[1].tolist() == [30.4, 30.5]


@given(st.floats(min_value=-50, max_value=200, allow_nan=False))
def test_matches_decimal_reference(value: float) -> None:
    # Reference: Python's decimal module, ROUND_HALF_UP on the shortest decimal form.
    expected = float(Decimal(repr(value)).quantize(Decimal("0.1"), rounding=ROUND_HALF_UP))
    assert reported_level(value) == expected
