"""Residual sound correction against standards.md §4 and the Liptak handbook."""

from __future__ import annotations

import math

import numpy as np
import pytest

from surveytools.indicators.background import SPECIFIC_BASES, residual_correction

# standards.md §4, "Exact correction to subtract from Lt for a given ΔL" (COMPUTED there
# from the energetic-subtraction formula), printed to 0.01 dB.
CORRECTION_TABLE = {1: 6.87, 2: 4.33, 3: 3.02, 4: 2.20, 5: 1.65, 6: 1.26, 7: 0.97, 8: 0.75,
                    9: 0.58, 10: 0.46, 15: 0.14}


@pytest.mark.parametrize(("difference", "correction"), sorted(CORRECTION_TABLE.items()))
def test_correction_per_db_of_difference(difference, correction):
    # Apply the subtraction with the class thresholds moved out of the way so every row
    # of the table is exercised (the thresholds are configurable).
    specific, dl, basis = residual_correction(
        60.0 + difference, 60.0, no_correction_above_db=100.0, upper_bound_at_or_below_db=-1.0
    )
    assert float(dl) == pytest.approx(difference, abs=1e-12)
    assert 60.0 + difference - float(specific) == pytest.approx(correction, abs=0.005)
    assert basis.item() == "corrected"


def test_liptak_93_89():
    # Liptak, Environmental Engineers' Handbook: total 93, background 89 -> printed 90.7
    # (read from a chart); the exact value is 90.80 (standards.md §4), which we use.
    specific, dl, basis = residual_correction(93.0, 89.0)
    assert float(specific) == pytest.approx(90.80, abs=0.005)
    assert float(dl) == 4.0
    assert basis.item() == "corrected"


def test_55_minus_50():
    # standards.md §4 (computed): 55 - 50 -> 53.35.
    specific, _, basis = residual_correction(55.0, 50.0)
    assert float(specific) == pytest.approx(53.35, abs=0.005)
    assert basis.item() == "corrected"


def test_three_classes_at_their_boundaries():
    # ISO 1996-2:2007 9.6 (from memory, standards.md §4): corrected for 3 < dL <= 10,
    # no correction above 10, upper bound at or below 3.
    total = np.array([60.0, 60.0, 60.0, 60.0, 60.0, np.nan, 60.0])
    residual = np.array([50.0, 49.9, 57.0, 56.9, 59.0, 50.0, np.nan])
    specific, dl, basis = residual_correction(total, residual)
    assert list(basis) == [
        "corrected",              # dL = 10 exactly: still corrected (<= 10)
        "no correction needed",   # dL = 10.1
        "upper bound",            # dL = 3 exactly: upper bound (<= 3)
        "corrected",              # dL = 3.1
        "upper bound",            # dL = 1
        "not available",
        "not available",
    ]
    # dL = 10: correction 0.46 (table above); dL > 10 and <= 3: the total itself
    assert specific[0] == pytest.approx(60.0 - 0.46, abs=0.005)
    assert specific[1] == 60.0 and specific[2] == 60.0 and specific[4] == 60.0
    assert np.isnan(specific[5:]).all() and np.isnan(dl[5:]).all()
    assert set(basis) <= set(SPECIFIC_BASES)


def test_thresholds_configurable():
    # A stricter scheme (common practice variant): correct only up to 6 dB difference.
    _, _, basis = residual_correction([60.0, 60.0], [53.0, 55.0], no_correction_above_db=6.0,
                                      upper_bound_at_or_below_db=5.0)
    assert list(basis) == ["no correction needed", "upper bound"]


def test_scalar_inputs_give_0d_arrays():
    specific, dl, basis = residual_correction(70.0, 63.0)
    assert specific.shape == () and basis.shape == ()
    # standards.md §4 (computed): 70 - 63 -> 69.03
    assert float(specific) == pytest.approx(69.03, abs=0.005)
    assert not math.isnan(float(dl))


def test_bad_thresholds():
    with pytest.raises(ValueError, match="must be finite and below"):
        residual_correction(60.0, 50.0, no_correction_above_db=3.0, upper_bound_at_or_below_db=3.0)
