"""Partial results of one position that add up exactly (design §10: parts that merge).

The assessment of one position decomposes by time. Over any set of readings (a month of
an archive, a day of a long log) we keep, per assessment day and period of every scheme,
the valid time and the time-integrated energy relative to a reference level
(:func:`~surveytools.indicators.levels.grouped_energy_sums`); per reporting interval the
same sums and the highest LAFmax; per Lden period type the time spent at each 0.1 dB
level step (:func:`~surveytools.indicators.percentiles.level_step_times`); per night the
LAFmax event count and the N highest values. Parts of disjoint readings merge with ``+``
into the parts of their union, and the figures follow from the merged parts with the
same functions ``run`` uses (:func:`~surveytools.assessment.daily.day_entries`,
:func:`~surveytools.indicators.levels.level_from_energy_sums`,
:func:`~surveytools.indicators.percentiles.exceedance_levels_from_step_times`).

A reading that straddles a boundary is split there exactly as ``run`` splits it; a
reading belongs to the part that holds it whole (parts are never cut inside a reading).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import date, timedelta, tzinfo

import numpy as np

from surveytools.assessment._common import MS_PER_S, FloatArray, IntArray
from surveytools.assessment.context import Context
from surveytools.assessment.daily import (
    N_PERIODS,
    SchemeResult,
    SchemeResults,
    all_scheme_times,
    night_highest,
)
from surveytools.assessment.intervals import interval_bounds
from surveytools.assessment.timegrid import day_offset_boundaries
from surveytools.indicators.levels import (
    grouped_max,
    level_from_energy_sums,
    to_energy,
)
from surveytools.indicators.percentiles import (
    exceedance_levels_from_sparse_step_times,
    level_step_times,
    sparse_level_step_times,
)

#: Schemes kept per day, in the order of :func:`~surveytools.assessment.daily.all_scheme_times`.
SCHEMES = ("lden", "ldn", "cnel", "pair")
N_SCHEMES = len(SCHEMES)
#: Level steps per decibel of the LN tables: the 0.1 dB a level is reported to
#: (design §9, one rounding) [1/dB].
LEVEL_STEPS_PER_DB = 10
#: Lowest and highest level of the LN tables (own choice: every plausible environmental
#: level; a level beyond is counted at the table's end) [dB].
LEVEL_TABLE_LOW_DB = -20
LEVEL_TABLE_HIGH_DB = 160
FIRST_LEVEL_STEP = LEVEL_TABLE_LOW_DB * LEVEL_STEPS_PER_DB
N_LEVEL_STEPS = (LEVEL_TABLE_HIGH_DB - LEVEL_TABLE_LOW_DB) * LEVEL_STEPS_PER_DB + 1


def rescale_energy(energy: FloatArray, from_db: float, to_db: float) -> FloatArray:
    """Energy sums relative to ``from_db`` expressed relative to ``to_db``."""
    if from_db == to_db:
        return energy
    factor: float = float(to_energy(from_db - to_db))
    return energy * factor


def common_reference(a: float, b: float) -> float:
    """Return the reference two parts merge on: the higher one (keeps terms bounded)."""
    return max(a, b)


@dataclass(frozen=True)
class DayParts:
    """Per assessment day: period energy sums of every scheme and night LAFmax events.

    Parameters
    ----------
    first_day : int
        Proleptic ordinal of the first day (``date.toordinal``).
    energy, valid_ms : numpy.ndarray
        ``(N_SCHEMES, n_days, 3)`` relative energy and valid time per scheme, day and
        period. [ms]
    touched : numpy.ndarray of bool
        ``(n_days,)``: a piece of a reading lies in the day's Lden periods.
    reference_db : float
        Level the energies are relative to. [dB]
    night_count : numpy.ndarray of int64
        ``(n_days,)`` night readings with LAFmax above the threshold.
    night_highest : numpy.ndarray
        ``(n_days, N)`` highest night LAFmax values, descending, NaN padded. [dB]
    """

    first_day: int
    energy: FloatArray
    valid_ms: FloatArray
    touched: np.ndarray
    reference_db: float
    night_count: IntArray
    night_highest: FloatArray

    @property
    def n_days(self) -> int:
        """Number of days laid out."""
        return int(self.touched.size)

    @property
    def days(self) -> list[date]:
        """The days laid out."""
        first = date.fromordinal(self.first_day)
        return [first + timedelta(days=k) for k in range(self.n_days)]

    def _widened(self, first_day: int, n_days: int, reference_db: float) -> DayParts:
        """Return the same parts on a wider day range and another reference."""
        at = self.first_day - first_day
        rows = slice(at, at + self.n_days)
        energy = np.zeros((N_SCHEMES, n_days, N_PERIODS))
        valid = np.zeros((N_SCHEMES, n_days, N_PERIODS))
        energy[:, rows] = rescale_energy(self.energy, self.reference_db, reference_db)
        valid[:, rows] = self.valid_ms
        touched = np.zeros(n_days, dtype=bool)
        touched[rows] = self.touched
        count = np.zeros(n_days, dtype=np.int64)
        count[rows] = self.night_count
        highest = np.full((n_days, self.night_highest.shape[1]), np.nan)
        highest[rows] = self.night_highest
        return DayParts(first_day, energy, valid, touched, reference_db, count, highest)

    def __add__(self, other: DayParts) -> DayParts:
        first = min(self.first_day, other.first_day)
        last = max(self.first_day + self.n_days, other.first_day + other.n_days)
        reference = common_reference(self.reference_db, other.reference_db)
        a = self._widened(first, last - first, reference)
        b = other._widened(first, last - first, reference)
        both = np.concatenate([a.night_highest, b.night_highest], axis=1)
        # descending, NaN last: sort the negated values (NaN sorts last either way)
        highest = -np.sort(-both, axis=1)[:, : a.night_highest.shape[1]]
        return DayParts(first, a.energy + b.energy, a.valid_ms + b.valid_ms,
                        a.touched | b.touched, reference, a.night_count + b.night_count,
                        highest)

    def levels_db(self, scheme: int) -> FloatArray:
        """Return the level per day and period of one scheme, ``(n_days, 3)`` [dB]."""
        return level_from_energy_sums(self.energy[scheme], self.valid_ms[scheme],
                                      self.reference_db)

    def scheme_results(self, times: list[list[str]], tz: tzinfo) -> SchemeResults:
        """Per-day results of each scheme, as ``run``'s :func:`assess_schemes` gives them."""
        out = []
        for k, scheme_times in enumerate(times):
            bounds = day_offset_boundaries(self.days, scheme_times, tz)
            out.append(SchemeResult(
                level_db=self.levels_db(k),
                valid_s=self.valid_ms[k] / MS_PER_S,
                length_s=(np.diff(bounds) / MS_PER_S).reshape(self.n_days, N_PERIODS),
                bounds_ms=bounds,
                touched=self.touched,
            ))
        return SchemeResults(lden=out[0], ldn=out[1], cnel=out[2], pair=out[3])


@dataclass(frozen=True)
class IntervalParts:
    """Per reporting interval: energy sums, valid time and the highest LAFmax.

    Parameters
    ----------
    start_ms, end_ms : numpy.ndarray of int64
        Interval bounds, sorted by start, one entry per interval. [ms]
    energy, valid_ms : numpy.ndarray
        Relative energy and valid time. [ms]
    lafmax : numpy.ndarray
        Highest LAFmax of valid readings, NaN where none. [dB]
    reference_db : float
        Level the energies are relative to. [dB]
    """

    start_ms: IntArray
    end_ms: IntArray
    energy: FloatArray
    valid_ms: FloatArray
    lafmax: FloatArray
    reference_db: float

    def __add__(self, other: IntervalParts) -> IntervalParts:
        reference = common_reference(self.reference_db, other.reference_db)
        starts = np.concatenate([self.start_ms, other.start_ms])
        unique, first, group = np.unique(starts, return_index=True, return_inverse=True)
        n = unique.size
        energy = np.concatenate([rescale_energy(self.energy, self.reference_db, reference),
                                 rescale_energy(other.energy, other.reference_db, reference)])
        valid = np.concatenate([self.valid_ms, other.valid_ms])
        lafmax = np.concatenate([self.lafmax, other.lafmax])
        ends = np.concatenate([self.end_ms, other.end_ms])
        return IntervalParts(
            start_ms=unique.astype(np.int64),
            end_ms=ends[first],
            energy=np.bincount(group, weights=energy, minlength=n).astype(np.float64),
            valid_ms=np.bincount(group, weights=valid, minlength=n).astype(np.float64),
            lafmax=grouped_max(lafmax, group, n),
            reference_db=reference,
        )

    def levels_db(self) -> FloatArray:
        """Return the energy-average LAeq of each interval [dB]."""
        return level_from_energy_sums(self.energy, self.valid_ms, self.reference_db)


@dataclass(frozen=True)
class LevelCounts:
    """Time per 0.1 dB LAeq step in each Lden period type (day, evening, night).

    Parameters
    ----------
    time_ms : numpy.ndarray of int64
        ``(3, N_LEVEL_STEPS)`` valid time per period type and level step; step ``k`` is
        level ``(FIRST_LEVEL_STEP + k) / LEVEL_STEPS_PER_DB``. [ms]
    """

    time_ms: IntArray

    def __add__(self, other: LevelCounts) -> LevelCounts:
        return LevelCounts(self.time_ms + other.time_ms)


def positions_in(sorted_ms: IntArray, values_ms: IntArray) -> tuple[IntArray, np.ndarray]:
    """Return where each value stands in ``sorted_ms`` and whether it is there exactly."""
    at = np.searchsorted(sorted_ms, values_ms)
    if sorted_ms.size == 0:
        return at, np.zeros(at.shape, dtype=bool)
    found = (at < sorted_ms.size) & (sorted_ms[np.minimum(at, sorted_ms.size - 1)] == values_ms)
    return at, found


#: Bits a level step takes in the merge key of :class:`IntervalLevelTimes` (the table
#: has N_LEVEL_STEPS < 2**11 steps; an interval start in ms fits in the other 52 bits).
_STEP_BITS = 11


@dataclass(frozen=True)
class IntervalLevelTimes:
    """Per reporting interval: valid time per 0.1 dB LAeq step, or its LN once final.

    For LN per interval (interval criteria on LA90 and the like) over parts: the cells
    of disjoint readings add up, and each interval's LN follows with
    :func:`~surveytools.indicators.percentiles.exceedance_levels_from_sparse_step_times`.
    An interval no other part can reach any more is turned into its LN
    (:meth:`finalised`), so what a part holds stays small over years of readings.

    Parameters
    ----------
    start_ms : numpy.ndarray of int64
        Start of the interval of each cell. [ms]
    step : numpy.ndarray of int64
        Level step column (level ``(FIRST_LEVEL_STEP + step) / LEVEL_STEPS_PER_DB``).
    time_ms : numpy.ndarray of int64
        Valid time at that step in that interval. [ms]
    final_start_ms : numpy.ndarray of int64
        Start of each interval whose LN is final (none of its cells above). [ms]
    final_db : numpy.ndarray
        ``(n_final, n_percents)`` LN of those intervals, for :attr:`percents`. [dB]
    percents : tuple of float
        The N of the final LN. [%]
    """

    start_ms: IntArray
    step: IntArray
    time_ms: IntArray
    final_start_ms: IntArray = field(default_factory=lambda: np.zeros(0, np.int64))
    final_db: FloatArray = field(default_factory=lambda: np.zeros((0, 0)))
    percents: tuple[float, ...] = ()

    def __add__(self, other: IntervalLevelTimes) -> IntervalLevelTimes:
        key = np.concatenate([(self.start_ms << _STEP_BITS) | self.step,
                              (other.start_ms << _STEP_BITS) | other.step])
        cells, inverse = np.unique(key, return_inverse=True)
        times = np.bincount(inverse, weights=np.concatenate([self.time_ms, other.time_ms]),
                            minlength=cells.size).astype(np.int64)
        finals = [p for p in (self, other) if p.final_start_ms.size]
        if len({p.percents for p in finals}) > 1:
            raise ValueError("interval LN of different percentiles cannot be added")
        final_start = np.concatenate([self.final_start_ms, other.final_start_ms])
        order = np.argsort(final_start, kind="stable")
        final_db = (np.concatenate([p.final_db for p in finals])[order] if finals
                    else np.zeros((0, 0)))
        return IntervalLevelTimes(cells >> _STEP_BITS, cells & ((1 << _STEP_BITS) - 1), times,
                                  final_start[order], final_db,
                                  finals[0].percents if finals else ())

    def finalised(self, first_ms: int, last_ms: int, interval_ms: int,
                  percents: tuple[float, ...]) -> IntervalLevelTimes:
        """Return these parts with the LN of every interval inside ``[first_ms, last_ms)``.

        The caller guarantees that no other part holds a reading piece in that span
        (an interval starting at ``first_ms`` or later and ending, at most
        ``interval_ms`` later, by ``last_ms``): those intervals are complete here.
        """
        inside = (self.start_ms >= first_ms) & (self.start_ms + interval_ms <= last_ms)
        if not inside.any():
            return self
        starts, group = np.unique(self.start_ms[inside], return_inverse=True)
        ln = exceedance_levels_from_sparse_step_times(
            group, self.step[inside], self.time_ms[inside], starts.size, FIRST_LEVEL_STEP,
            N_LEVEL_STEPS, LEVEL_STEPS_PER_DB, list(percents))
        done = IntervalLevelTimes(self.start_ms[~inside], self.step[~inside],
                                  self.time_ms[~inside], starts.astype(np.int64), ln, percents)
        empty = IntervalLevelTimes(np.zeros(0, np.int64), np.zeros(0, np.int64),
                                   np.zeros(0, np.int64), self.final_start_ms, self.final_db,
                                   self.percents)
        return done + empty if self.final_start_ms.size else done

    def levels_db(self, starts_ms: IntArray, percents: list[float]) -> FloatArray:
        """LN of the intervals starting at ``starts_ms``, ``(n, n_percents)`` [dB]."""
        at, found = positions_in(starts_ms, self.start_ms)
        out = exceedance_levels_from_sparse_step_times(
            at[found], self.step[found], self.time_ms[found], starts_ms.size,
            FIRST_LEVEL_STEP, N_LEVEL_STEPS, LEVEL_STEPS_PER_DB, percents)
        if self.final_start_ms.size:
            if tuple(percents) != self.percents:
                raise ValueError("final interval LN were taken for other percentiles")
            at, hit = positions_in(starts_ms, self.final_start_ms)
            out[at[hit]] = self.final_db[hit]
        return out


@dataclass(frozen=True)
class PositionParts:
    """Every partial result of a set of readings of one position.

    Parameters
    ----------
    rows : int
        Readings counted.
    first_ms, last_ms : int
        Earliest start and latest end of the readings. [ms]
    has_lafmax : bool
        An LAFmax column with a value was present.
    days, intervals, levels : DayParts, IntervalParts, LevelCounts
        The parts.
    interval_levels : IntervalLevelTimes or None
        Time per level step per interval, when asked for (None otherwise, or when a part
        did not have it: then the merged parts have none).
    """

    rows: int
    first_ms: int
    last_ms: int
    has_lafmax: bool
    days: DayParts
    intervals: IntervalParts
    levels: LevelCounts
    interval_levels: IntervalLevelTimes | None = None

    def __add__(self, other: PositionParts) -> PositionParts:
        return PositionParts(
            rows=self.rows + other.rows,
            first_ms=min(self.first_ms, other.first_ms),
            last_ms=max(self.last_ms, other.last_ms),
            has_lafmax=self.has_lafmax or other.has_lafmax,
            days=self.days + other.days,
            intervals=self.intervals + other.intervals,
            levels=self.levels + other.levels,
            interval_levels=(self.interval_levels + other.interval_levels
                             if self.interval_levels is not None
                             and other.interval_levels is not None else None),
        )


def scheme_grids(ctx: Context) -> list[IntArray]:
    """Period boundaries of every scheme over the context's candidate days [ms]."""
    return [day_offset_boundaries(ctx.candidate_days, times, ctx.tz)
            for times in all_scheme_times(ctx)]


def position_parts(ctx: Context, interval_levels: bool = False) -> PositionParts | None:
    """Compute the parts of one set of readings (None without readings).

    With ``interval_levels``, also the time per level step of every reporting interval
    (:class:`IntervalLevelTimes`).

    Splits the readings once at every grid the parts use (as :func:`assess` does; a
    context already split at a union holding them is used as it is) and
    sums each group from the split's segment sums (:meth:`Context.grouped_energy`, one
    :func:`~surveytools.indicators.levels.grouped_energy_sums` pass).
    """
    if ctx.n == 0:
        return None
    days = ctx.candidate_days
    n_days = len(days)
    scheme_bounds = scheme_grids(ctx)
    grid = interval_bounds(ctx)
    if not ctx.split_holds([grid, *scheme_bounds]):  # else: the caller's split serves
        ctx = ctx.with_shared_split([grid, *scheme_bounds])
    assert ctx.split is not None
    pieces = ctx.split.pieces
    kept = ctx.split.valid_all
    levels, chosen = kept.levels_db, kept.position
    reference = ctx.split.segment_energy.reference_db
    weights = pieces.weights_ms[chosen]

    def sums_of(bounds: IntArray) -> tuple[FloatArray, FloatArray]:
        """Energy and valid time per interval of a grid of the shared split."""
        grouped = ctx.grouped_energy(bounds)
        assert grouped is not None  # every grid is part of the shared split
        return grouped.energy, grouped.time_ms

    energy = np.zeros((N_SCHEMES, n_days, N_PERIODS))
    valid = np.zeros((N_SCHEMES, n_days, N_PERIODS))
    for k, bounds in enumerate(scheme_bounds):
        e, t = sums_of(bounds)
        energy[k] = e.reshape(n_days, N_PERIODS)
        valid[k] = t.reshape(n_days, N_PERIODS)
    _, lden_group = ctx.pieces_in(scheme_bounds[0])
    touched = np.asarray(ctx.touched_groups(scheme_bounds[0], pieces, lden_group).reshape(
        n_days, N_PERIODS).any(axis=1))
    count, highest = night_highest(ctx, scheme_bounds[0], n_days)
    day_parts = DayParts(days[0].toordinal(), energy, valid, touched, reference, count,
                         highest)

    n_intervals = max(grid.size - 1, 0)
    _, interval_group = ctx.pieces_in(grid)
    e, t = sums_of(grid)
    lafmax_col = ctx.level("LAFmax")
    valid_group = np.where(ctx.valid[pieces.index], interval_group, -1)
    lafmax = (grouped_max(lafmax_col[pieces.index], valid_group, n_intervals)
              if lafmax_col is not None else np.full(n_intervals, np.nan))
    interval_parts = IntervalParts(grid[:-1].copy(), grid[1:].copy(), e, t, lafmax, reference)

    period_type = np.where(lden_group >= 0, lden_group % N_PERIODS, -1)[chosen]
    table = level_step_times(levels, weights, period_type, N_PERIODS, FIRST_LEVEL_STEP,
                             N_LEVEL_STEPS, LEVEL_STEPS_PER_DB)
    per_interval = None
    if interval_levels:
        group, step, time_ms = sparse_level_step_times(
            levels, weights, interval_group[chosen], n_intervals, FIRST_LEVEL_STEP,
            N_LEVEL_STEPS, LEVEL_STEPS_PER_DB)
        per_interval = IntervalLevelTimes(grid[group].astype(np.int64), step, time_ms)
    return PositionParts(
        interval_levels=per_interval,
        rows=ctx.n,
        first_ms=int(ctx.start_ms.min()),
        last_ms=int(ctx.end_ms.max()),
        has_lafmax=ctx.level("LAFmax") is not None,
        days=day_parts,
        intervals=interval_parts,
        levels=LevelCounts(table),
    )
