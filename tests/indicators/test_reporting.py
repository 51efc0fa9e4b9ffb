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


@given(st.lists(st.one_of(
    st.floats(min_value=-50, max_value=200, allow_nan=False),
    # values on and next to half steps, where the exact decimal rule decides
    st.integers(min_value=-500, max_value=2000).map(lambda k: k / 10 + 0.05),
    st.integers(min_value=-500, max_value=2000).map(lambda k: math.nextafter(k / 10 + 0.05, 0)),
), min_size=1, max_size=20), st.sampled_from([0, 1, 2]))
def test_one_number_and_arrays_round_alike(values: list[float], decimals: int) -> None:
    # The scalar path (one Python float) must equal the array path element by element,
    # and both the decimal reference (ROUND_HALF_UP on the shortest decimal form).
    array = reported_level(np.array(values), decimals)
    quantum = Decimal(1).scaleb(-decimals)
    for k, value in enumerate(values):
        one = reported_level(value, decimals)
        assert isinstance(one, float)
        assert one == array[k]
        assert one == float(Decimal(repr(value)).quantize(quantum, rounding=ROUND_HALF_UP))


def test_one_number_keeps_nan_and_infinity() -> None:
    assert math.isnan(reported_level(float("nan")))
    assert reported_level(float("inf")) == float("inf")
    assert reported_level(-0.04) == -0.0 and math.copysign(1.0, reported_level(-0.04)) == -1.0
