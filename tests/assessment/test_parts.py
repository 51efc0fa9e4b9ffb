"""Parts that merge (design §10): parts of disjoint readings add up to the whole.

The property checked is the one the archive relies on: splitting a position's readings
anywhere, computing the parts of each piece and merging them gives the figures of the
whole log, day by day, as ``assess`` computes them (style.md rule 10: "splitting a period
and merging gives the same LAeq").
"""

from __future__ import annotations

import functools
import math
from dataclasses import replace
from datetime import date

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from surveytools.assessment import assess
from surveytools.assessment.context import build_context
from surveytools.assessment.daily import day_entries, scheme_times_of
from surveytools.assessment.parts import (
    FIRST_LEVEL_STEP,
    LEVEL_STEPS_PER_DB,
    PositionParts,
    position_parts,
)
from surveytools.indicators.percentiles import exceedance_levels_from_step_times
from surveytools.pipeline import read_input
from surveytools.provenance import SourceInfo
from surveytools.settings import Settings, load_settings
from surveytools.survey import Exclusion, Survey
from surveytools.validation import build_survey


@pytest.fixture(scope="module")
def demo_dir(tmp_path_factory):
    from surveytools.demo import write_demo

    folder = tmp_path_factory.mktemp("demo")
    write_demo(folder)
    return folder


def _piece(survey: Survey, index: np.ndarray) -> Survey:
    """The readings at ``index`` as a survey of their own, with the same exclusions."""
    valid = survey.valid_mask("all")[index]
    readings = survey.readings.iloc[index].reset_index(drop=True)
    return Survey(survey.source, survey.metadata, readings, survey.level_columns,
                  exclusions=[Exclusion("x", "x", "all", ~valid)])


def _merged(survey: Survey, settings: Settings, cuts: list[int]) -> PositionParts:
    pieces = np.split(np.arange(len(survey.readings)), cuts)
    parts = [position_parts(build_context(_piece(survey, p), settings))
             for p in pieces if p.size]
    return functools.reduce(lambda a, b: a + b, [p for p in parts if p is not None])


def _days_from(parts: PositionParts, survey: Survey, settings: Settings) -> list[dict]:
    tz = build_context(survey, settings).tz
    schemes = parts.days.scheme_results(scheme_times_of(settings), tz)
    events = ((parts.days.night_count, parts.days.night_highest[:, -1])
              if parts.has_lafmax else None)
    return day_entries(parts.days.days, settings, schemes, events)


@pytest.mark.parametrize("name", ["kl1_north_boundary.xlsx", "kl2_garden.xlsx"])
def test_demo_parts_in_any_split_give_runs_days(demo_dir, name):
    settings = load_settings(demo_dir / "settings.toml")
    survey = build_survey(read_input(demo_dir / name, settings).raw, settings)
    expected = assess(survey, settings)["days"]
    n = len(survey.readings)
    for cuts in ([n // 3, 2 * n // 3], [1, n - 1], [n // 2]):
        got = _days_from(_merged(survey, settings, cuts), survey, settings)
        assert got == expected


def _constant_survey(levels: np.ndarray, step_s: int, lafmax: np.ndarray | None = None
                     ) -> Survey:
    n = levels.size
    start0 = 1_783_054_800_000  # 2026-07-03T07:00:00+02:00
    data = {"row": np.arange(2, n + 2), "start_ms": start0 + np.arange(n) * step_s * 1000,
            "duration_ms": np.full(n, step_s * 1000), "LAeq": levels}
    if lafmax is not None:
        data["LAFmax"] = lafmax
    readings = pd.DataFrame(data)
    return Survey(SourceInfo("x.csv", "x.csv", "", 0),
                  {"position": "P", "time_zone": "Europe/Berlin", "clock": "local"},
                  readings, {k: "C" for k in data if k.startswith("LA")})


@given(levels=st.lists(st.integers(300, 900), min_size=5, max_size=400),
       cut=st.floats(0.05, 0.95))
def test_merged_parts_equal_the_whole(levels, cut):
    values = np.asarray(levels, dtype=float) / 10.0
    survey = _constant_survey(values, 600, lafmax=values + 10.0)
    settings = Settings()
    whole = position_parts(build_context(survey, settings))
    merged = _merged(survey, settings, [max(1, int(cut * values.size))])
    assert whole is not None
    np.testing.assert_allclose(merged.days.levels_db(0), whole.days.levels_db(0),
                               atol=1e-9, equal_nan=True)
    np.testing.assert_array_equal(merged.days.valid_ms, whole.days.valid_ms)
    np.testing.assert_array_equal(merged.levels.time_ms, whole.levels.time_ms)
    np.testing.assert_array_equal(merged.days.night_count, whole.days.night_count)
    np.testing.assert_array_equal(merged.days.night_highest, whole.days.night_highest)
    np.testing.assert_allclose(merged.intervals.levels_db(), whole.intervals.levels_db(),
                               atol=1e-9, equal_nan=True)
    np.testing.assert_array_equal(merged.intervals.lafmax, whole.intervals.lafmax)
    assert merged.rows == whole.rows == values.size


def test_level_counts_give_the_exceedance_levels_of_the_samples():
    # 10 min readings from 07:00: the first 72 fall in the Lden day (07-19 local).
    # Hand-evaluated: 36 readings at 40.0 dB then 36 at 60.0 dB, equal durations:
    # time strictly above 40 dB is 50 % -> L50 = 40.0 (design §5 convention), L10 = 60.0,
    # L90 = 40.0; day LAeq = 10 lg((10^4 + 10^6)/2) = 57.03 dB.
    values = np.r_[np.full(36, 40.0), np.full(36, 60.0)]
    parts = position_parts(build_context(_constant_survey(values, 600), Settings()))
    assert parts is not None
    ln = exceedance_levels_from_step_times(parts.levels.time_ms, FIRST_LEVEL_STEP,
                                           LEVEL_STEPS_PER_DB, [10, 50, 90])
    assert ln[0].tolist() == [60.0, 40.0, 40.0]
    assert math.isnan(ln[1, 0]) and math.isnan(ln[2, 0])  # no evening, no night
    row = parts.days.days.index(date(2026, 7, 3))
    assert parts.days.levels_db(0)[row, 0] == pytest.approx(57.03, abs=0.005)


@given(levels=st.lists(st.integers(300, 900), min_size=5, max_size=300),
       cut=st.floats(0.05, 0.95), final_at=st.floats(0.0, 1.0))
def test_interval_ln_from_cells_finalised_or_not_equals_the_whole(levels, cut, final_at):
    # Two parts of 1-minute readings (cut anywhere, also inside a 15-minute interval);
    # the first part's intervals from some point on are turned into their LN before the
    # merge (as an archive task does for the intervals only it reaches). Reference:
    # numpy's weighted inverted_cdf quantile of each interval's levels (design §5).
    values = np.asarray(levels, dtype=float) / 10.0
    survey = _constant_survey(values, 60)
    settings = Settings()
    split_at = max(1, int(cut * values.size))
    pieces = np.split(np.arange(values.size), [split_at])
    a, b = (position_parts(build_context(_piece(survey, p), settings), interval_levels=True)
            for p in pieces)
    assert a is not None and b is not None
    assert a.interval_levels is not None and b.interval_levels is not None
    start0 = int(survey.readings["start_ms"].iloc[0])
    # intervals of part a starting at or after `first` and ending by the cut are complete
    first = start0 + int(final_at * split_at) * 60_000
    last = start0 + split_at * 60_000
    percents = tuple(settings.percentiles)
    a_final = a.interval_levels.finalised(first, last, 900_000, percents)
    merged = replace(a, interval_levels=a_final) + b
    assert merged.interval_levels is not None
    starts = merged.intervals.start_ms
    got = merged.interval_levels.levels_db(starts, list(percents))
    stamps = survey.readings["start_ms"].to_numpy()
    for k, start in enumerate(starts.tolist()):
        inside = (stamps >= start) & (stamps < start + 900_000)
        if not inside.any():
            assert np.isnan(got[k]).all()
            continue
        expected = [np.quantile(values[inside], 1 - p / 100, method="inverted_cdf")
                    for p in percents]
        np.testing.assert_allclose(got[k], expected, atol=1e-9)
