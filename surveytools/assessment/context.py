"""The arrays every part of the assessment shares, taken once from the Survey."""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from datetime import date, tzinfo
from functools import cached_property
from typing import Literal

import numpy as np

from surveytools.assessment._common import (
    MS_PER_S,
    FloatArray,
    IntArray,
    Pieces,
    expand_order,
    modal_value,
    segment_groups,
    split,
)
from surveytools.assessment.timegrid import calendar_days, site_tz
from surveytools.indicators.levels import grouped_energy_sums, level_from_energy_sums
from surveytools.indicators.percentiles import level_order
from surveytools.settings import Settings
from surveytools.survey import Survey

#: Which validity mask a piece average keeps: ``Survey.valid_mask`` scopes.
Scope = Literal["all", "background"]


@dataclass(frozen=True)
class ValidPieces:
    """The pieces that count for one scope, in piece order.

    Pieces of valid readings with a finite LAeq and a positive length: the samples every
    grouped energy average of the scope keeps.

    Parameters
    ----------
    levels_db : numpy.ndarray of float
        LAeq of each kept piece. [dB]
    duration_s : numpy.ndarray of float
        Length of each kept piece. [s]
    position : numpy.ndarray of int64
        Position of each kept piece among all pieces.
    """

    levels_db: FloatArray
    duration_s: FloatArray
    position: IntArray


def valid_pieces_of(pieces: Pieces, levels_db: FloatArray, valid: np.ndarray) -> ValidPieces:
    """Select the pieces of ``valid`` readings with a finite level and a positive length."""
    durations = pieces.duration_s
    chosen = np.flatnonzero(valid[pieces.index] & np.isfinite(levels_db) & (durations > 0))
    return ValidPieces(levels_db[chosen], durations[chosen], chosen)


@dataclass(frozen=True)
class SegmentEnergy:
    """Energy sums of the valid pieces per segment of the union grid.

    Parameters
    ----------
    energy : numpy.ndarray of float
        Summed relative energy of each union segment (see :func:`grouped_energy_sums`).
    time_ms : numpy.ndarray of float
        Valid time of each union segment. [ms]
    reference_db : float
        Level the energies are relative to (the loudest valid piece; 0 without any). [dB]
    """

    energy: FloatArray
    time_ms: FloatArray
    reference_db: float


@dataclass(frozen=True)
class SharedSplit:
    """The readings split once at the union of every grid the sections use.

    A piece of that split lies inside one interval of every grid, so each section finds
    its groups from the piece's segment of the union (one split instead of seven for a
    week of 1-s readings). What is derived from the pieces is computed on first use and
    kept (``cached_property``).

    Parameters
    ----------
    union_ms : numpy.ndarray of int64
        Sorted distinct instants of all grids. [ms]
    pieces : Pieces
        The readings split at ``union_ms``.
    piece_laeq : numpy.ndarray of float
        LAeq of each piece (its reading's LAeq). [dB]
    valid, valid_background : numpy.ndarray of bool
        The readings' validity masks (``Context.valid``, ``Context.valid_background``).
    """

    union_ms: IntArray
    pieces: Pieces
    piece_laeq: FloatArray
    valid: np.ndarray
    valid_background: np.ndarray

    @cached_property
    def valid_all(self) -> ValidPieces:
        """The pieces that count for the ``"all"`` scope."""
        return valid_pieces_of(self.pieces, self.piece_laeq, self.valid)

    @cached_property
    def valid_for_background(self) -> ValidPieces:
        """The pieces that count for the ``"background"`` scope."""
        return valid_pieces_of(self.pieces, self.piece_laeq, self.valid_background)

    @cached_property
    def segment_first_piece(self) -> IntArray:
        """Position of the first piece of each occupied union segment."""
        segment = self.pieces.segment
        # pieces come in time order, so a segment's pieces mostly run together
        change = np.flatnonzero(np.r_[True, segment[1:] != segment[:-1]])
        _, first = np.unique(segment[change], return_index=True)
        positions: IntArray = change[first]
        return positions

    @cached_property
    def segment_energy(self) -> SegmentEnergy:
        """Relative energy and valid time of each union segment (``"all"`` scope)."""
        kept = self.valid_all
        reference = float(kept.levels_db.max()) if kept.levels_db.size else 0.0
        energy, time_ms = grouped_energy_sums(
            kept.levels_db, self.pieces.weights_ms[kept.position],
            self.pieces.segment[kept.position], int(self.union_ms.size) + 1, reference)
        return SegmentEnergy(energy, time_ms, reference)


@dataclass(frozen=True)
class Context:
    """Readings as numpy arrays on the UTC millisecond axis, plus the site's civil time.

    Parameters
    ----------
    survey, settings : Survey, Settings
        The inputs.
    tz : tzinfo
        The site's civil time zone (``time_zone``; never the meter's clock).
    start_ms, duration_ms, end_ms : numpy.ndarray of int64
        Reading intervals. [ms]
    valid, valid_background : numpy.ndarray of bool
        ``survey.valid_mask("all")`` and ``survey.valid_mask("background")``.
    candidate_days : list of date
        Local calendar dates from the day before the first reading to the day after the
        last one (period schemes are laid out on these; only touched days are reported).
    logging_interval_s : float
        Modal reading duration; NaN without readings. [s]
    split : SharedSplit or None
        The readings split at the union of all grids (:meth:`with_shared_split`); None
        before, when each section splits the readings at its own grid.
    column_values : dict of str to numpy.ndarray
        Level columns taken once from the readings, by column name (:meth:`level`).
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
    split: SharedSplit | None = None
    column_values: dict[str, FloatArray] = field(default_factory=dict, repr=False,
                                                  compare=False)

    def with_shared_split(self, boundaries: list[IntArray]) -> Context:
        """Return this context with the readings split once at the union of ``boundaries``.

        ``boundaries`` are the grids the sections will use; see :class:`SharedSplit`.
        """
        union = np.unique(np.concatenate(boundaries)) if boundaries else np.zeros(0, np.int64)
        pieces = split(self.start_ms, self.duration_ms, union)
        shared = SharedSplit(union_ms=union, pieces=pieces,
                             piece_laeq=self._laeq()[pieces.index], valid=self.valid,
                             valid_background=self.valid_background)
        return replace(self, split=shared)

    def split_holds(self, boundaries: list[IntArray]) -> bool:
        """Whether the shared split's union holds every instant of ``boundaries``."""
        return self.split is not None and all(self._in_union(b) for b in boundaries)

    def _shared(self, pieces: Pieces) -> SharedSplit | None:
        """Return the shared split if ``pieces`` are its pieces, else None."""
        return self.split if self.split is not None and pieces is self.split.pieces else None

    def _in_union(self, bounds_ms: IntArray) -> bool:
        """Whether every bound is an instant of the shared union grid."""
        if self.split is None:
            return False
        union = self.split.union_ms
        if union.size == 0:
            return bounds_ms.size == 0
        at = np.minimum(np.searchsorted(union, bounds_ms), union.size - 1)
        return bool(np.array_equal(union[at], bounds_ms))

    def _union_segment_groups(self, union_ms: IntArray, bounds_ms: IntArray) -> IntArray:
        """Interval of ``bounds_ms`` (a grid of union instants) holding each union segment.

        Segment ``k`` starts at union instant ``k - 1`` (segment 0 lies before the first);
        -1 for segments outside the grid.
        """
        per_union = np.concatenate(
            ([0], np.searchsorted(bounds_ms, union_ms, side="right"))).astype(np.int64)
        return segment_groups(per_union, max(bounds_ms.size - 1, 0))

    def pieces_in(self, bounds_ms: IntArray) -> tuple[Pieces, IntArray]:
        """Return reading pieces and their interval (between consecutive bounds; -1 outside).

        With a shared split whose union holds every bound, the bounds at or before a piece
        start are the bounds at or before the union instant opening the piece's union
        segment: one ``searchsorted`` of the union instants and one look-up per piece give
        the same groups as a ``searchsorted`` of every piece start.
        """
        n_groups = max(bounds_ms.size - 1, 0)
        if self.split is None:
            pieces = split(self.start_ms, self.duration_ms, bounds_ms)
            return pieces, segment_groups(pieces.segment, n_groups)
        pieces = self.split.pieces
        if self._in_union(bounds_ms):
            # groups of the union segments, then one look-up per piece
            group: IntArray = self._union_segment_groups(self.split.union_ms,
                                                         bounds_ms)[pieces.segment]
        else:
            group = segment_groups(np.searchsorted(bounds_ms, pieces.start_ms, side="right"),
                                   n_groups)
        return pieces, group

    def touched_groups(self, bounds_ms: IntArray, pieces: Pieces, group: IntArray
                       ) -> np.ndarray:
        """Which intervals of ``bounds_ms`` hold at least one piece (``pieces_in`` output).

        For the shared pieces and a grid of union instants the group is a function of the
        union segment, so the groups of one piece per occupied union segment are enough.
        """
        touched = np.zeros(max(bounds_ms.size - 1, 0), dtype=bool)
        shared = self._shared(pieces)
        if shared is not None and self._in_union(bounds_ms):
            sample = group[shared.segment_first_piece]
        else:
            sample = group
        touched[sample[sample >= 0]] = True
        return touched

    def piece_levels(self, pieces: Pieces) -> FloatArray:
        """LAeq of each piece (its reading's LAeq); computed once for the shared pieces."""
        shared = self._shared(pieces)
        if shared is not None:
            return shared.piece_laeq
        levels: FloatArray = self._laeq()[pieces.index]
        return levels

    def _laeq(self) -> FloatArray:
        """Return the readings' LAeq (a required column)."""
        laeq = self.level("LAeq")
        assert laeq is not None  # LAeq is a required column
        return laeq

    def laeq_order(self) -> IntArray:
        """Stable ascending order of the readings' LAeq (``level_order``), computed once."""
        return self._laeq_order

    @cached_property
    def _laeq_order(self) -> IntArray:
        """:meth:`laeq_order`, kept."""
        order: IntArray = level_order(self._laeq())
        return order

    @cached_property
    def _shared_piece_order(self) -> IntArray:
        """:meth:`piece_order` of the shared pieces."""
        assert self.split is not None
        return expand_order(self.laeq_order(), self.split.pieces.index, self.n)

    def piece_order(self, pieces: Pieces) -> IntArray:
        """Stable ascending order of :meth:`piece_levels`, from :meth:`laeq_order`.

        The pieces of a reading are consecutive and share its level, so laying out the
        pieces of each reading in the readings' stable level order is the stable level
        order of the pieces (equal levels stay in piece order). Kept for the shared pieces.
        """
        if self._shared(pieces) is not None:
            return self._shared_piece_order
        return expand_order(self.laeq_order(), pieces.index, self.n)

    def valid_pieces(self, pieces: Pieces, scope: Scope = "all") -> ValidPieces:
        """Return the pieces that count for ``scope`` (kept for the shared pieces).

        ``valid`` readings for ``"all"``, ``valid_background`` ones for ``"background"``.
        """
        shared = self._shared(pieces)
        if shared is not None:
            return shared.valid_all if scope == "all" else shared.valid_for_background
        mask = self.valid if scope == "all" else self.valid_background
        return valid_pieces_of(pieces, self.piece_levels(pieces), mask)

    def grouped_energy(self, bounds_ms: IntArray) -> SegmentEnergy | None:
        """Relative energy and valid time [ms] of each interval of ``bounds_ms``.

        The valid pieces' energies are summed once per segment of the shared union grid;
        an interval of a grid of union instants is a run of those segments, so its sums
        come from them without another pass over the pieces (and, being sums, they add
        up over parts of a log: :mod:`surveytools.assessment.parts`). None when
        ``bounds_ms`` is not such a grid (the caller then groups the pieces itself).
        """
        if self.split is None or not self._in_union(bounds_ms):
            return None
        sums = self.split.segment_energy
        n_groups = max(bounds_ms.size - 1, 0)
        group = self._union_segment_groups(self.split.union_ms, bounds_ms)
        inside = group >= 0
        group_energy = np.bincount(group[inside], weights=sums.energy[inside],
                                   minlength=n_groups)
        group_ms = np.bincount(group[inside], weights=sums.time_ms[inside], minlength=n_groups)
        return SegmentEnergy(group_energy.astype(np.float64), group_ms.astype(np.float64),
                             sums.reference_db)

    def grouped_laeq(self, bounds_ms: IntArray) -> tuple[FloatArray, FloatArray] | None:
        """LAeq and valid time [s] of each interval of ``bounds_ms``, from segment sums.

        See :meth:`grouped_energy`; None when ``bounds_ms`` is not a grid of union instants.
        """
        sums = self.grouped_energy(bounds_ms)
        if sums is None:
            return None
        return (level_from_energy_sums(sums.energy, sums.time_ms, sums.reference_db),
                sums.time_ms / MS_PER_S)

    def total_laeq(self) -> float | None:
        """LAeq over all valid time, from the segment sums; None before the split."""
        if self.split is None:
            return None
        sums = self.split.segment_energy
        return float(level_from_energy_sums(sums.energy.sum(), sums.time_ms.sum(),
                                            sums.reference_db))

    @property
    def n(self) -> int:
        """Number of readings."""
        return int(self.start_ms.size)

    def level(self, column: str) -> FloatArray | None:
        """Level column as float array (read-only, taken once), None without such column."""
        if column not in self.survey.readings.columns:
            return None
        values = self.column_values.get(column)
        if values is None:
            values = self.survey.readings[column].to_numpy(dtype=np.float64, na_value=np.nan,
                                                           copy=True)
            values.setflags(write=False)
            self.column_values[column] = values
        return values

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
    tz = site_tz(survey.metadata)
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
