"""Partial results of the source assessments that add up exactly (design §10, issue 17).

An entry of the ``assessments`` section (:mod:`~surveytools.assessment.sources`) is made
of sums over the readings, which :class:`SourceParts` keeps for any set of them (a batch
of a long log, or the whole survey):

- the source-on and residual time: valid time and energy relative to a reference level
  (:func:`~surveytools.indicators.levels.grouped_energy_sums`), one group for windows,
  one per background period (day, night) with the ``Operating`` column, so that the
  period holding most of the operating time is chosen from the merged sums;
- with the ``Operating`` column, the runs of source-on and residual time (the reported
  ``source_on`` / ``residual`` spans): a run ending at a part's last reading piece
  and one starting at the next part's first piece are one run;
- the source-free background: the LA90 of each sufficient reference interval per period
  (:meth:`~surveytools.assessment.background.ReferenceLA90.values_of`), the readings
  overlapping the source-on windows left out (design §9, "Background is source-free").
  A part holds whole reference intervals (a long log is cut on the reference grid), so
  the values of the union are the values of the parts, in time order;
- the LA90 of the residual time (the fallback when no sufficient source-free interval
  exists): the time per 0.1 dB LAeq step (:func:`~surveytools.indicators.percentiles.\
level_step_times`), which gives the exact sample LN of the union when every level lies on
  the 0.1 dB grid.

Parts of disjoint readings, added in time order, give the parts of their union; the
entry follows from them with the same functions (one implementation: the whole survey is
one part). What cannot merge exactly raises :class:`PartsNotMergeable` when the entry
is built, and a long log is then read whole: the residual-time LA90 from residual
readings in more than one part with logged ``LAF90`` values (a median of values needs
the values) or with LAeq levels off the 0.1 dB grid, or from a log whose parts differ in
having logged ``LAF90`` values at all.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import tzinfo

import numpy as np

from surveytools.assessment._common import (
    FloatArray,
    IntArray,
    Pieces,
    run_spans,
    split,
)
from surveytools.assessment.background import BACKGROUND_PERIODS, ReferenceLA90, reference_la90
from surveytools.assessment.context import Context
from surveytools.assessment.parts import (
    FIRST_LEVEL_STEP,
    LEVEL_STEPS_PER_DB,
    LEVEL_TABLE_HIGH_DB,
    LEVEL_TABLE_LOW_DB,
    N_LEVEL_STEPS,
    common_reference,
    rescale_energy,
)
from surveytools.assessment.timegrid import day_offset_boundaries, local_text_to_utc_ms
from surveytools.constants import BACKGROUND_PERCENT
from surveytools.errors import SettingsError
from surveytools.indicators.levels import grouped_energy_sums, level_from_energy_sums
from surveytools.indicators.percentiles import (
    combine_logged_levels,
    exceedance_level,
    exceedance_levels_from_step_times,
    level_step_times,
)
from surveytools.settings import Assessment

#: Groups of the operating-column sums and of its spans and residual LA90 parts: one per
#: background period, then (spans, residual LA90) the whole time.
ALL_PERIODS = len(BACKGROUND_PERIODS)


class PartsNotMergeable(Exception):  # noqa: N818 (a condition, not a failure)
    """A figure of an assessment cannot be had exactly from merged parts."""


def window_ms(tz: tzinfo, windows: tuple[tuple[str, str], ...]) -> IntArray:
    """Windows as an ``(n, 2)`` array of UTC instants [ms].

    Raises
    ------
    SettingsError
        If a window text is not a date-time or a window ends before it starts.
    """
    out = np.zeros((len(windows), 2), dtype=np.int64)
    for k, (begin, end) in enumerate(windows):
        out[k] = (local_text_to_utc_ms(begin, tz), local_text_to_utc_ms(end, tz))
        if out[k, 1] <= out[k, 0]:
            raise SettingsError(
                f"assessment window {begin!r} to {end!r} ends before it starts; give "
                "[from, to] with to after from"
            )
    return out


def window_pieces(ctx: Context, windows: IntArray) -> tuple[Pieces, np.ndarray]:
    """Split the readings at the window edges; mark the pieces inside a window."""
    edges = np.unique(windows.ravel())
    pieces = split(ctx.start_ms, ctx.duration_ms, edges)
    middle = pieces.start_ms + pieces.duration_ms / 2.0
    inside = np.zeros(pieces.index.size, dtype=bool)
    for begin, end in windows:  # a handful of windows
        inside |= (middle >= begin) & (middle < end)
    return pieces, inside & (pieces.duration_ms > 0)


def period_pieces(ctx: Context) -> tuple[Pieces, IntArray]:
    """Split the readings at the background period bounds; give each piece its period.

    A 15-min reading from 06:52 gives 8 min to the night and 7 to the day (design.md §5).
    """
    settings = ctx.settings.background
    bounds = day_offset_boundaries(ctx.candidate_days, [settings.day_start,
                                                        settings.night_start], ctx.tz)
    pieces = split(ctx.start_ms, ctx.duration_ms, bounds)
    return pieces, (pieces.segment - 1) % len(BACKGROUND_PERIODS)


def operating_flags(ctx: Context) -> tuple[np.ndarray, np.ndarray]:
    """Return the readings with ``Operating`` yes (source on) and no (residual)."""
    readings = ctx.survey.readings
    if "operating" not in readings.columns:
        none = np.zeros(ctx.n, dtype=bool)
        return none, none
    operating = readings["operating"]
    on = (operating == True).fillna(False).to_numpy(dtype=bool)  # noqa: E712 (nullable)
    off = (operating == False).fillna(False).to_numpy(dtype=bool)  # noqa: E712
    return on, off


def overlapping(ctx: Context, spans: IntArray) -> np.ndarray:
    """Mark the readings overlapping any ``[from, to)`` span (a handful of spans)."""
    out = np.zeros(ctx.n, dtype=bool)
    for begin, end in spans:
        out |= (ctx.start_ms < end) & (ctx.end_ms > begin)
    return out


def residual_la90(ctx: Context, pieces: Pieces, chosen: np.ndarray) -> float:
    """LA90 of the residual time: the pieces ``chosen`` of readings valid for background.

    From the logged LAF90 of those readings (combined with the background method) where
    the log has it, else from their LAeq samples (ISO 1996-1 LN, durations as weights).
    """
    chosen = chosen & ctx.valid_background[pieces.index] & (pieces.duration_ms > 0)
    logged = ctx.logged("LAF90")
    if logged is not None:
        readings = np.unique(pieces.index[chosen])
        return combine_logged_levels(logged[readings], ctx.settings.background.method)
    laeq = ctx.level("LAeq")
    assert laeq is not None
    return exceedance_level(laeq[pieces.index][chosen], BACKGROUND_PERCENT,
                            pieces.weights_ms[chosen])


@dataclass(frozen=True)
class EnergySums:
    """Valid time and energy of a selection of reading pieces, per group.

    Parameters
    ----------
    energy : numpy.ndarray
        Time-integrated energy relative to ``reference_db`` per group. [ms]
    level_ms : numpy.ndarray
        Time of the pieces with a finite LAeq (the time the energy averages over). [ms]
    valid_ms : numpy.ndarray
        Time of every chosen piece (valid reading, positive length). [ms]
    reference_db : float
        Level the energies are relative to. [dB]
    """

    energy: FloatArray
    level_ms: FloatArray
    valid_ms: FloatArray
    reference_db: float

    def __add__(self, other: EnergySums) -> EnergySums:
        reference = common_reference(self.reference_db, other.reference_db)
        return EnergySums(rescale_energy(self.energy, self.reference_db, reference)
                          + rescale_energy(other.energy, other.reference_db, reference),
                          self.level_ms + other.level_ms, self.valid_ms + other.valid_ms,
                          reference)

    def level(self, group: int | None) -> tuple[float, float]:
        """LAeq [dB] and valid time [s] of one group, or of all with None."""
        chosen = slice(None) if group is None else slice(group, group + 1)
        laeq = level_from_energy_sums(self.energy[chosen].sum(), self.level_ms[chosen].sum(),
                                      self.reference_db)
        return float(laeq), float(self.valid_ms[chosen].sum()) / 1000.0


def energy_sums(ctx: Context, pieces: Pieces, chosen: np.ndarray, group: IntArray,
                n_groups: int) -> EnergySums:
    """Sum the valid pieces ``chosen`` (positive length) by the ``group`` of each piece."""
    keep = chosen & ctx.valid[pieces.index] & (pieces.duration_ms > 0)
    laeq = ctx.level("LAeq")
    assert laeq is not None
    levels = laeq[pieces.index[keep]]
    weights = pieces.weights_ms[keep]
    finite = levels[np.isfinite(levels)]
    reference = float(finite.max()) if finite.size else 0.0
    energy, level_ms = grouped_energy_sums(levels, weights, group[keep], n_groups, reference)
    valid_ms = np.bincount(group[keep], weights=weights, minlength=n_groups).astype(np.float64)
    return EnergySums(energy, level_ms, valid_ms, reference)


@dataclass(frozen=True)
class SpanRuns:
    """Runs of consecutive chosen reading pieces, as ``[from, to)`` spans.

    Parameters
    ----------
    spans_ms : numpy.ndarray of int64
        ``(n, 2)`` start and end of each run. [ms]
    pieces : int
        Pieces looked at (chosen or not).
    first_in, last_in : bool
        The first / last piece looked at is chosen (a run may go on across parts).
    """

    spans_ms: IntArray
    pieces: int
    first_in: bool
    last_in: bool

    def __add__(self, other: SpanRuns) -> SpanRuns:
        if other.pieces == 0:
            return self
        if self.pieces == 0:
            return other
        a, b = self.spans_ms, other.spans_ms
        if self.last_in and other.first_in:  # one run across the parts
            joined = np.array([[a[-1, 0], b[0, 1]]], dtype=np.int64)
            spans = np.concatenate([a[:-1], joined, b[1:]])
        else:
            spans = np.concatenate([a, b])
        return SpanRuns(spans, self.pieces + other.pieces, self.first_in, other.last_in)


def span_runs(pieces: Pieces, selected: np.ndarray) -> SpanRuns:
    """Return the runs of ``selected`` pieces (in piece order) with their extent."""
    first, last = run_spans(selected)
    spans = (np.stack([pieces.start_ms[first],
                       pieces.start_ms[last] + pieces.duration_ms[last]], axis=1)
             if first.size else np.zeros((0, 2), dtype=np.int64))
    n = int(selected.size)
    return SpanRuns(spans.astype(np.int64), n, bool(n and selected[0]),
                    bool(n and selected[-1]))


@dataclass(frozen=True)
class ResidualLA90:
    """What the LA90 of the residual time is computed from.

    Parameters
    ----------
    pieces : int
        Residual pieces of readings valid for background, of positive length.
    time_ms : numpy.ndarray of int64
        ``(N_LEVEL_STEPS,)`` time of those pieces per 0.1 dB LAeq step
        (:mod:`~surveytools.assessment.parts` table layout). [ms]
    on_grid : bool
        Every finite LAeq of those pieces lies on the 0.1 dB grid inside the table.
    logged : bool
        The readings have logged LAF90 values (then they give the LA90, not the table).
    mixed : bool
        Merged parts differ in ``logged``.
    direct_db : float or None
        The LA90 of this part's own pieces where the table cannot give it (logged values
        or levels off the grid); None after merging two parts with residual pieces. [dB]
    """

    pieces: int
    time_ms: IntArray
    on_grid: bool
    logged: bool
    mixed: bool
    direct_db: float | None

    def __add__(self, other: ResidualLA90) -> ResidualLA90:
        direct = (self.direct_db if other.pieces == 0
                  else other.direct_db if self.pieces == 0 else None)
        return ResidualLA90(self.pieces + other.pieces, self.time_ms + other.time_ms,
                            self.on_grid and other.on_grid, self.logged or other.logged,
                            self.mixed or other.mixed or self.logged != other.logged, direct)

    def la90(self) -> float:
        """Return the LA90 of the residual time [dB]; NaN without residual pieces.

        Raises
        ------
        PartsNotMergeable
            See the module notes.
        """
        if self.pieces == 0:
            return float("nan")
        if self.mixed:
            raise PartsNotMergeable("logged LAF90 values in only some parts of the log")
        if self.direct_db is not None:
            return self.direct_db
        if self.logged or not self.on_grid:
            raise PartsNotMergeable("residual-time LA90 across parts, from logged LAF90 or "
                                    "LAeq levels off the 0.1 dB grid")
        return float(exceedance_levels_from_step_times(
            self.time_ms, FIRST_LEVEL_STEP, LEVEL_STEPS_PER_DB, [BACKGROUND_PERCENT])[0, 0])


def residual_part(ctx: Context, pieces: Pieces, chosen: np.ndarray) -> ResidualLA90:
    """Return the :class:`ResidualLA90` of the pieces ``chosen``."""
    keep = chosen & ctx.valid_background[pieces.index] & (pieces.duration_ms > 0)
    laeq = ctx.level("LAeq")
    assert laeq is not None
    levels = laeq[pieces.index[keep]]
    table = level_step_times(levels, pieces.weights_ms[keep], np.zeros(levels.size, np.int64),
                             1, FIRST_LEVEL_STEP, N_LEVEL_STEPS, LEVEL_STEPS_PER_DB)[0]
    finite = levels[np.isfinite(levels)]
    on_grid = bool(np.array_equal(np.rint(finite * LEVEL_STEPS_PER_DB) / LEVEL_STEPS_PER_DB,
                                  finite)
                   and np.all((finite >= LEVEL_TABLE_LOW_DB) & (finite <= LEVEL_TABLE_HIGH_DB)))
    logged = ctx.logged("LAF90") is not None
    n = int(np.count_nonzero(keep))
    direct = residual_la90(ctx, pieces, keep) if n and (logged or not on_grid) else None
    return ResidualLA90(n, table, on_grid, logged, False, direct)


@dataclass(frozen=True)
class SourceFreeBackground:
    """LA90 of the sufficient source-free reference intervals, per background period.

    ``values_db[k]`` holds those of ``BACKGROUND_PERIODS[k]`` in time order. [dB]
    """

    values_db: tuple[FloatArray, ...]

    def __add__(self, other: SourceFreeBackground) -> SourceFreeBackground:
        return SourceFreeBackground(tuple(
            np.concatenate([a, b]) for a, b in zip(self.values_db, other.values_db,
                                                   strict=True)))

    def representative(self, period: str, method: str) -> float:
        """Return the period's LA90 [dB]: the values combined by ``method``."""
        return combine_logged_levels(self.values_db[BACKGROUND_PERIODS.index(period)], method)


def source_free_background(ctx: Context, source_readings: np.ndarray,
                           reference: ReferenceLA90 | None) -> SourceFreeBackground:
    """Return the background of ``ctx`` with ``source_readings`` left out (design.md §9).

    ``reference`` is the survey's own reference-interval LA90, used when there is
    nothing more to leave out.
    """
    if np.any(source_readings & ctx.valid_background) or reference is None:
        reference = reference_la90(ctx, ctx.valid_background & ~source_readings)
    return SourceFreeBackground(tuple(reference.values_of(p) for p in BACKGROUND_PERIODS))


@dataclass(frozen=True)
class SourceParts:
    """Every partial result of one assessment over a set of readings.

    Parameters
    ----------
    readings : int
        Readings looked at.
    on, off : EnergySums
        Source-on and residual time: one group (windows) or one per background period
        (``Operating`` column).
    on_runs, off_runs : tuple of SpanRuns
        ``Operating`` column only (empty for windows): runs per background period, then
        over the whole time.
    residual : tuple of ResidualLA90
        One (windows), or per background period and then the whole time (``Operating``).
    background : SourceFreeBackground
        The source-free reference intervals.
    """

    readings: int
    on: EnergySums
    off: EnergySums
    on_runs: tuple[SpanRuns, ...]
    off_runs: tuple[SpanRuns, ...]
    residual: tuple[ResidualLA90, ...]
    background: SourceFreeBackground

    def __add__(self, other: SourceParts) -> SourceParts:
        return SourceParts(
            self.readings + other.readings, self.on + other.on, self.off + other.off,
            tuple(a + b for a, b in zip(self.on_runs, other.on_runs, strict=True)),
            tuple(a + b for a, b in zip(self.off_runs, other.off_runs, strict=True)),
            tuple(a + b for a, b in zip(self.residual, other.residual, strict=True)),
            self.background + other.background)

    def operating_period(self) -> tuple[str | None, bool]:
        """Return the period of most valid source-on time, and if it has residual time.

        ``Operating`` column: with valid residual time in that period too, source-on
        and residual time are both taken from that period alone.
        """
        on_time = self.on.valid_ms
        if not on_time.sum() > 0:
            return None, False
        k = int(np.argmax(on_time))
        return BACKGROUND_PERIODS[k], bool(self.off.valid_ms[k] > 0)


def _empty(groups: int, runs: int, residuals: int) -> SourceParts:
    sums = EnergySums(np.zeros(groups), np.zeros(groups), np.zeros(groups), 0.0)
    no_runs = SpanRuns(np.zeros((0, 2), dtype=np.int64), 0, False, False)
    no_residual = ResidualLA90(0, np.zeros(N_LEVEL_STEPS, dtype=np.int64), True, False,
                               False, None)
    return SourceParts(0, sums, sums, (no_runs,) * runs, (no_runs,) * runs,
                       (no_residual,) * residuals,
                       SourceFreeBackground((np.zeros(0),) * len(BACKGROUND_PERIODS)))


def source_parts(ctx: Context, assessment: Assessment, reference: ReferenceLA90 | None
                 ) -> SourceParts:
    """Return the parts of one assessment over the readings of ``ctx``.

    ``reference`` is the survey's own :func:`~.background.reference_la90` when the caller
    has it.

    Raises
    ------
    SettingsError
        If a window cannot be read (see :func:`window_ms`).
    """
    if assessment.use_operating_column:
        if ctx.n == 0:
            return _empty(ALL_PERIODS, ALL_PERIODS + 1, ALL_PERIODS + 1)
        on, off = operating_flags(ctx)
        pieces, period = period_pieces(ctx)
        on_p, off_p = on[pieces.index], off[pieces.index]
        in_period = [period == k for k in range(ALL_PERIODS)]
        return SourceParts(
            ctx.n,
            energy_sums(ctx, pieces, on_p, period, ALL_PERIODS),
            energy_sums(ctx, pieces, off_p, period, ALL_PERIODS),
            (*(span_runs(pieces, on_p & same) for same in in_period),
             span_runs(pieces, on_p)),
            (*(span_runs(pieces, off_p & same) for same in in_period),
             span_runs(pieces, off_p)),
            (*(residual_part(ctx, pieces, off_p & same) for same in in_period),
             residual_part(ctx, pieces, off_p)),
            # already out of every background (Operating = yes)
            source_free_background(ctx, on, reference),
        )
    on_spans = window_ms(ctx.tz, assessment.source_on)
    off_spans = window_ms(ctx.tz, assessment.residual)
    if ctx.n == 0:
        return _empty(1, 0, 1)

    def window_sums(spans: IntArray) -> tuple[EnergySums, ResidualLA90]:
        pieces, inside = window_pieces(ctx, spans)
        group = np.zeros(pieces.index.size, dtype=np.int64)
        return energy_sums(ctx, pieces, inside, group, 1), residual_part(ctx, pieces, inside)

    on_sums, _ = window_sums(on_spans)
    off_sums, residual = window_sums(off_spans)
    return SourceParts(ctx.n, on_sums, off_sums, (), (), (residual,),
                       source_free_background(ctx, overlapping(ctx, on_spans), reference))


@dataclass(frozen=True)
class PositionSourceParts:
    """The parts of every assessment of one position, in settings order."""

    items: tuple[SourceParts, ...]

    def __add__(self, other: PositionSourceParts) -> PositionSourceParts:
        return PositionSourceParts(tuple(a + b for a, b in zip(self.items, other.items,
                                                              strict=True)))


def position_assessments(assessments: tuple[Assessment, ...], position: object
                         ) -> tuple[Assessment, ...]:
    """Return the assessments of one position, in settings order."""
    return tuple(a for a in assessments if a.position == position)


def position_source_parts(ctx: Context, reference: ReferenceLA90 | None
                          ) -> PositionSourceParts:
    """Parts of every assessment of the survey's position over the readings of ``ctx``."""
    chosen = position_assessments(ctx.settings.assessments,
                                  ctx.survey.metadata.get("position"))
    return PositionSourceParts(tuple(source_parts(ctx, a, reference) for a in chosen))
