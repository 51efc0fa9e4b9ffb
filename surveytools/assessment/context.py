"""The arrays every part of the assessment shares, taken once from the Survey."""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, tzinfo
from typing import Any

import numpy as np

from surveytools.assessment._common import (
    MS_PER_S,
    FloatArray,
    IntArray,
    Pieces,
    modal_value,
    segment_groups,
    split,
)
from surveytools.assessment.timegrid import calendar_days, position_tz
from surveytools.settings import Settings
from surveytools.survey import Survey


@dataclass(frozen=True)
class Context:
    """Readings as numpy arrays on the UTC millisecond axis, plus the position's clock.

    Parameters
    ----------
    survey, settings : Survey, Settings
        The inputs.
    tz : tzinfo
        The position's clock.
    start_ms, duration_ms, end_ms : numpy.ndarray of int64
        Reading intervals. [ms]
    valid, valid_background : numpy.ndarray of bool
        ``survey.valid_mask("all")`` and ``survey.valid_mask("background")``.
    candidate_days : list of date
        Local calendar dates from the day before the first reading to the day after the
        last one (period schemes are laid out on these; only touched days are reported).
    logging_interval_s : float
        Modal reading duration; NaN without readings. [s]
    """

    survey: Survey
    settings: Settings
    tz: tzinfo
    start_ms: IntArray
    duration_ms: IntArray
    end_ms: IntArray
    valid: np.ndarray
    valid_background: np.ndarray
    candidate_days: list[date]
    logging_interval_s: float
    shared: dict[str, Pieces] = field(default_factory=dict)
    #: Per-scheme results computed once and reused (days and survey averages).
    cache: dict[tuple[str, ...], Any] = field(default_factory=dict)

    def share_boundaries(self, boundaries: list[IntArray]) -> None:
        """Split the readings once at the union of every grid the sections will use.

        A piece of that split lies inside one interval of every grid, so each section
        finds its groups with one ``searchsorted`` of the piece starts instead of its
        own split (one split instead of seven for a week of 1-s readings).
        """
        union = np.unique(np.concatenate(boundaries)) if boundaries else np.zeros(0, np.int64)
        self.shared["pieces"] = split(self.start_ms, self.duration_ms, union)

    def pieces_in(self, bounds_ms: IntArray) -> tuple[Pieces, IntArray]:
        """Return reading pieces and their interval (between consecutive bounds; -1 outside)."""
        n_groups = max(bounds_ms.size - 1, 0)
        pieces = self.shared.get("pieces")
        if pieces is None:
            pieces = split(self.start_ms, self.duration_ms, bounds_ms)
            return pieces, segment_groups(pieces.segment, n_groups)
        segment = np.searchsorted(bounds_ms, pieces.start_ms, side="right")
        return pieces, segment_groups(segment, n_groups)

    @property
    def n(self) -> int:
        """Number of readings."""
        return int(self.start_ms.size)

    def level(self, column: str) -> FloatArray | None:
        """Level column as float array, None when the survey has no such column."""
        if column not in self.survey.readings.columns:
            return None
        return self.survey.readings[column].to_numpy(dtype=np.float64, na_value=np.nan)

    def logged(self, column: str) -> FloatArray | None:
        """Level column if it holds at least one finite value, else None."""
        values = self.level(column)
        if values is None or not np.any(np.isfinite(values)):
            return None
        return values


def build_context(survey: Survey, settings: Settings) -> Context:
    """Collect the shared arrays of one survey."""
    readings = survey.readings
    empty = np.zeros(0, dtype=np.int64)
    start = readings["start_ms"].to_numpy(dtype=np.int64) if len(readings) else empty
    duration = readings["duration_ms"].to_numpy(dtype=np.int64) if len(readings) else empty
    tz = position_tz(survey.metadata)
    end = start + duration
    days = calendar_days(int(start.min()), int(end.max()), tz) if start.size else []
    return Context(
        survey=survey,
        settings=settings,
        tz=tz,
        start_ms=start,
        duration_ms=duration,
        end_ms=end,
        valid=survey.valid_mask("all"),
        valid_background=survey.valid_mask("background"),
        candidate_days=days,
        logging_interval_s=modal_value(duration / MS_PER_S),
    )
