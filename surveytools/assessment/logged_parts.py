"""Partial results of logged LN columns (``LAF90`` ...) that add up exactly (design §10).

Where the log holds the meter's own LAFN, the figures combine the logged values
(:mod:`~surveytools.assessment.intervals`, :mod:`~surveytools.assessment.background`):

- per reporting interval and per background reference interval, the logged values of the
  readings starting in it. A long log is cut at boundaries of both grids, so these are
  whole in one part and need nothing kept here; the representative day / night LA90
  combines the reference intervals' LA90 values, which a long log keeps one by one;
- over the whole survey (``overall``), every valid logged value combined with
  ``settings.background.method``. For this the parts keep how many valid readings logged
  each distinct value (:class:`LoggedValues`); counts add up exactly, and the ``median``
  (the middle value or the two middle values, found from the counts, then combined by
  :func:`~surveytools.indicators.percentiles.combine_logged_levels`) and the ``mode``
  (counts per whole decibel from
  :func:`~surveytools.indicators.percentiles.whole_db_distribution`, lowest of equally
  frequent levels) follow exactly. Meters log LAFN to 0.1 dB, so a column holds a few
  hundred distinct values at most; a column with more than
  :data:`MAX_DISTINCT_VALUES` cannot be kept in bounded memory.

The ``mean`` cannot be merged exactly: the whole-log path adds the values in floating
point in their own order, so a sum of parts may differ in the last bit, and a mean of
0.1 dB values often lies on a reporting half step (45.05 dB) where that bit decides the
rounding. With ``method = "mean"`` and a logged LN column a long log is therefore read
whole (:data:`EXACT_METHODS`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from surveytools.assessment._common import FloatArray, IntArray
from surveytools.assessment.context import Context
from surveytools.assessment.intervals import logged_column, same_interval
from surveytools.indicators.percentiles import combine_logged_levels, whole_db_distribution
from surveytools.settings import Settings

#: Combining methods whose whole-survey value follows exactly from counts per value.
EXACT_METHODS = ("median", "mode")
#: Most distinct logged values kept per column (own choice: a 0.1 dB grid from -20 to
#: 160 dB has 1,801 values; ten times that leaves room for a finer grid).
MAX_DISTINCT_VALUES = 20_000


@dataclass(frozen=True)
class LoggedValues:
    """How many valid readings logged each distinct value of one LN column.

    Parameters
    ----------
    values_db : numpy.ndarray
        Distinct finite values, ascending. [dB]
    counts : numpy.ndarray of int64
        Valid readings with each value.
    """

    values_db: FloatArray
    counts: IntArray

    def __add__(self, other: LoggedValues) -> LoggedValues:
        values, group = np.unique(np.concatenate([self.values_db, other.values_db]),
                                  return_inverse=True)
        counts = np.zeros(values.size, dtype=np.int64)
        np.add.at(counts, group, np.concatenate([self.counts, other.counts]))
        return LoggedValues(values.astype(np.float64), counts)

    def combined(self, method: str) -> float:
        """Return the values combined by ``method`` (NaN without values) [dB].

        Raises
        ------
        ValueError
            If ``method`` is not one of :data:`EXACT_METHODS`.
        """
        if method not in EXACT_METHODS:
            raise ValueError(f"the {method!r} of logged values cannot be merged exactly")
        n = int(self.counts.sum())
        if n == 0:
            return float("nan")
        if method == "median":
            # the middle value (odd count) or the two middle values (even count) of the
            # sorted values, as numpy.median takes them
            middle = np.unique([(n - 1) // 2, n // 2])
            at = np.searchsorted(np.cumsum(self.counts), middle, side="right")
            return combine_logged_levels(self.values_db[at], "median")
        # mode: whole-dB rounding keeps the order, so the distinct values of each whole
        # level are consecutive
        levels, per_level = whole_db_distribution(self.values_db)
        owner = np.repeat(np.arange(levels.size), per_level)
        counts = np.zeros(levels.size, dtype=np.int64)
        np.add.at(counts, owner, self.counts)
        return float(levels[int(np.argmax(counts))])  # argmax: the lowest of the ties


@dataclass(frozen=True)
class LoggedParts:
    """Distinct logged values per logged LN column of a set of readings.

    Parameters
    ----------
    columns : tuple of str
        Logged LN columns (``LAF90`` ...) with at least one finite value.
    values : tuple of LoggedValues
        One per column.
    """

    columns: tuple[str, ...]
    values: tuple[LoggedValues, ...]

    def __add__(self, other: LoggedParts) -> LoggedParts:
        if self.columns != other.columns:
            raise ValueError("logged parts of different LN columns cannot be added")
        return LoggedParts(self.columns, tuple(
            a + b for a, b in zip(self.values, other.values, strict=True)))

    @property
    def largest(self) -> int:
        """Most distinct values of one column."""
        return max((v.values_db.size for v in self.values), default=0)

    def combined(self, column: str, method: str) -> float:
        """Return the valid values of ``column`` combined by ``method`` [dB]."""
        return self.values[self.columns.index(column)].combined(method)


def logged_parts_of(ctx: Context) -> LoggedParts:
    """Distinct valid values of the logged LN columns of the settings' percentiles."""
    columns: list[str] = []
    values: list[LoggedValues] = []
    for p in ctx.settings.percentiles:
        logged = ctx.logged(logged_column(p))
        if logged is None or logged_column(p) in columns:
            continue
        chosen = logged[ctx.valid]
        distinct, counts = np.unique(chosen[np.isfinite(chosen)], return_counts=True)
        columns.append(logged_column(p))
        values.append(LoggedValues(distinct.astype(np.float64), counts.astype(np.int64)))
    return LoggedParts(tuple(columns), tuple(values))


def same_combining(logging_a_s: float, logging_b_s: float, settings: Settings) -> bool:
    """Return True when two logging intervals combine logged values the same way.

    A logged value is taken as it is when the logging interval equals the reporting or
    reference interval, else combined with the method
    (:func:`~surveytools.assessment.intervals.same_interval`).
    """
    steps = (settings.reporting_interval_s, settings.background.reference_interval_day_s,
             settings.background.reference_interval_night_s)
    return all(same_interval(logging_a_s, s) == same_interval(logging_b_s, s) for s in steps)
