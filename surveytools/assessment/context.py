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
    expand_order,
    modal_value,
    segment_groups,
    split,
)
from surveytools.assessment.timegrid import calendar_days, position_tz
from surveytools.indicators.levels import grouped_energy_sums, level_from_energy_sums
from surveytools.indicators.percentiles import level_order
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
    shared: dict[str, Any] = field(default_factory=dict)
    #: Per-scheme results computed once and reused (days and survey averages).
    cache: dict[tuple[Any, ...], Any] = field(default_factory=dict)

    def share_boundaries(self, boundaries: list[IntArray]) -> None:
        """Split the readings once at the union of every grid the sections will use.

        A piece of that split lies inside one interval of every grid, so each section
        finds its groups from the piece's interval of the union (one split instead of
        seven for a week of 1-s readings).
        """
        union = np.unique(np.concatenate(boundaries)) if boundaries else np.zeros(0, np.int64)
        self.shared["union"] = union
        self.shared["pieces"] = split(self.start_ms, self.duration_ms, union)

    def _in_union(self, bounds_ms: IntArray) -> bool:
        """Whether every bound is an instant of the shared union grid."""
        union: IntArray | None = self.shared.get("union")
        if union is None or union.size == 0:
            return bounds_ms.size == 0 and union is not None
        at = np.minimum(np.searchsorted(union, bounds_ms), union.size - 1)
        return bool(np.array_equal(union[at], bounds_ms))

    def _shared_group(self, bounds_ms: IntArray, pieces: Pieces) -> IntArray | None:
        """Group of each shared piece in ``bounds_ms``, None if the bounds are not shared.

        Every bound is a union instant, so the bounds at or before a piece start are the
        bounds at or before the union instant opening the piece's union segment: one
        ``searchsorted`` of the union instants and one look-up per piece give the same
        segments as a ``searchsorted`` of every piece start.
        """
        if not self._in_union(bounds_ms):
            return None
        # groups of the union segments, then one look-up per piece
        group: IntArray = self._union_segment_groups(bounds_ms)[pieces.segment]
        return group

    def _union_segment_groups(self, bounds_ms: IntArray) -> IntArray:
        """Interval of ``bounds_ms`` (a grid of union instants) holding each union segment.

        Segment ``k`` starts at union instant ``k - 1`` (segment 0 lies before the first);
        -1 for segments outside the grid.
        """
        union: IntArray = self.shared["union"]
        per_union = np.concatenate(
            ([0], np.searchsorted(bounds_ms, union, side="right"))).astype(np.int64)
        return segment_groups(per_union, max(bounds_ms.size - 1, 0))

    def pieces_in(self, bounds_ms: IntArray) -> tuple[Pieces, IntArray]:
        """Return reading pieces and their interval (between consecutive bounds; -1 outside)."""
        n_groups = max(bounds_ms.size - 1, 0)
        pieces = self.shared.get("pieces")
        if pieces is None:
            pieces = split(self.start_ms, self.duration_ms, bounds_ms)
            return pieces, segment_groups(pieces.segment, n_groups)
        group = self._shared_group(bounds_ms, pieces)
        if group is None:
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
        if pieces is self.shared.get("pieces") and self._in_union(bounds_ms):
            key = ("segment_first_piece", id(pieces))
            cached = self.cache.get(key)
            if cached is None or cached[0] is not pieces:
                segment = pieces.segment
                # pieces come in time order, so a segment's pieces mostly run together
                change = np.flatnonzero(np.r_[True, segment[1:] != segment[:-1]])
                _, first = np.unique(segment[change], return_index=True)
                cached = (pieces, change[first])
                self.cache[key] = cached
            sample = group[cached[1]]
        else:
            sample = group
        touched[sample[sample >= 0]] = True
        return touched

    def piece_levels(self, pieces: Pieces) -> FloatArray:
        """LAeq of each piece (its reading's LAeq); computed once for the shared pieces."""
        key = ("piece_laeq", id(pieces))
        cached = self.cache.get(key)
        if cached is None or cached[0] is not pieces:
            laeq = self.level("LAeq")
            assert laeq is not None  # LAeq is a required column
            cached = (pieces, laeq[pieces.index])
            self.cache[key] = cached
        levels: FloatArray = cached[1]
        return levels

    def laeq_order(self) -> IntArray:
        """Stable ascending order of the readings' LAeq (``level_order``), computed once."""
        cached = self.cache.get(("laeq_order",))
        if cached is None:
            laeq = self.level("LAeq")
            assert laeq is not None
            cached = level_order(laeq)
            self.cache[("laeq_order",)] = cached
        order: IntArray = cached
        return order

    def piece_order(self, pieces: Pieces) -> IntArray:
        """Stable ascending order of :meth:`piece_levels`, from :meth:`laeq_order`.

        The pieces of a reading are consecutive and share its level, so laying out the
        pieces of each reading in the readings' stable level order is the stable level
        order of the pieces (equal levels stay in piece order).
        """
        key = ("piece_order", id(pieces))
        cached = self.cache.get(key)
        if cached is None or cached[0] is not pieces:
            cached = (pieces, expand_order(self.laeq_order(), pieces.index, self.n))
            self.cache[key] = cached
        order: IntArray = cached[1]
        return order

    def valid_pieces(self, pieces: Pieces, scope: str = "all") -> tuple[FloatArray, FloatArray,
                                                                         IntArray]:
        """LAeq, duration [s] and position of the pieces that count for ``scope``.

        Pieces of valid readings (``valid`` for ``"all"``, ``valid_background`` for
        ``"background"``) with a finite LAeq and a positive length, in piece order: the
        samples every grouped energy average of the scope keeps.
        """
        key = ("valid_pieces", scope, id(pieces))
        cached = self.cache.get(key)
        if cached is None or cached[0] is not pieces:
            mask = self.valid if scope == "all" else self.valid_background
            levels = self.piece_levels(pieces)
            durations = pieces.duration_s
            chosen = np.flatnonzero(mask[pieces.index] & np.isfinite(levels) & (durations > 0))
            cached = (pieces, levels[chosen], durations[chosen], chosen)
            self.cache[key] = cached
        return cached[1], cached[2], cached[3]

    def _segment_energy(self) -> tuple[FloatArray, FloatArray, float] | None:
        """Relative energy and valid time [ms] of each union segment (valid pieces).

        None before :meth:`share_boundaries`. The energies are relative to the loudest
        valid piece (see :func:`grouped_energy_sums`).
        """
        pieces: Pieces | None = self.shared.get("pieces")
        if pieces is None:
            return None
        cached = self.cache.get(("segment_energy", id(pieces)))
        if cached is None or cached[0] is not pieces:
            levels, _, chosen = self.valid_pieces(pieces)
            reference = float(levels.max()) if levels.size else 0.0
            n_segments = int(self.shared["union"].size) + 1
            energy, time_ms = grouped_energy_sums(
                levels, pieces.weights_ms[chosen], pieces.segment[chosen], n_segments,
                reference)
            cached = (pieces, energy, time_ms, reference)
            self.cache[("segment_energy", id(pieces))] = cached
        return cached[1], cached[2], cached[3]

    def grouped_laeq(self, bounds_ms: IntArray) -> tuple[FloatArray, FloatArray] | None:
        """LAeq and valid time [s] of each interval of ``bounds_ms``, from segment sums.

        The valid pieces' energies are summed once per segment of the shared union grid;
        an interval of a grid of union instants is a run of those segments, so its sums
        come from them without another pass over the pieces. None when ``bounds_ms`` is
        not such a grid (the caller then groups the pieces itself).
        """
        sums = self._segment_energy()
        if sums is None or not self._in_union(bounds_ms):
            return None
        energy, time_ms, reference = sums
        n_groups = max(bounds_ms.size - 1, 0)
        group = self._union_segment_groups(bounds_ms)
        inside = group >= 0
        group_energy = np.bincount(group[inside], weights=energy[inside], minlength=n_groups)
        group_ms = np.bincount(group[inside], weights=time_ms[inside], minlength=n_groups)
        return (level_from_energy_sums(group_energy, group_ms, reference),
                group_ms / MS_PER_S)

    def total_laeq(self) -> float | None:
        """LAeq over all valid time, from the segment sums; None before the split."""
        sums = self._segment_energy()
        if sums is None:
            return None
        energy, time_ms, reference = sums
        return float(level_from_energy_sums(energy.sum(), time_ms.sum(), reference))

    @property
    def n(self) -> int:
        """Number of readings."""
        return int(self.start_ms.size)

    def level(self, column: str) -> FloatArray | None:
        """Level column as float array (read-only, taken once), None without such column."""
        if column not in self.survey.readings.columns:
            return None
        key = ("level", column)
        values: FloatArray | None = self.cache.get(key)
        if values is None:
            values = self.survey.readings[column].to_numpy(dtype=np.float64, na_value=np.nan,
                                                           copy=True)
            values.setflags(write=False)
            self.cache[key] = values
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
