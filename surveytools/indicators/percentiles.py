r"""Exceedance (percentile) levels LN and the combination of logged LAFN values.

Convention (design.md §5): LN is the lowest level :math:`L` such that the time during
which the level is *strictly above* :math:`L` is at most N % of the valid time,

.. math:: L_N = \min\{L : \sum_{i: L_i > L} t_i \le \tfrac{N}{100} \sum_i t_i\},

with each sample holding its level for its duration. For equal durations this is the
"strictly exceeded" column of the 20-sample table in standards.md §10 (the (k+1)-th
highest sample, k = ⌈N n / 100⌉, when N n / 100 is a whole number; L10 = 58, L50 = 47,
L90 = 44 there), not the "equalled or exceeded" column and not linear interpolation.

The definition is held *exactly* (design.md §9): durations are whole numbers (integer
milliseconds, or the caller's integer weights) summed in int64, and N is the exact
decimal fraction of its shortest text (``95`` -> 95/100, ``99.9`` -> 999/1000), so the
comparison ``time at or below L >= (1 - N/100) T`` is decided in integers. Floating
``1 - N/100`` would move ties: with 100 one-minute readings at 30.0, 30.1 ... 39.9 dB,
LA95 is 30.4 and LA99 30.0 (the float comparison gives 30.5 and 30.1).
It equals numpy's weighted ``inverted_cdf`` quantile at ``1 - N/100`` wherever that
quantile is exact in binary (N = 0, 25, 50, 75, 100).

LN computed from interval LAeq samples is not the meter's LAFN (from 125 ms F-weighted
samples); callers label which basis they used.
"""

from __future__ import annotations

from collections.abc import Callable
from fractions import Fraction

import numpy as np
from numpy.typing import ArrayLike, NDArray

from surveytools.constants import (
    MS_PER_S,
    PERCENT_OF_WHOLE,
    WHOLE_DB_HALF_STEP_DB,
    WHOLE_DB_STEP_DB,
)
from surveytools.indicators._arrays import (
    FloatArray,
    as_float_array,
    grouped_arrays,
)

__all__ = [
    "COMBINE_METHODS",
    "combine_logged_levels",
    "exceedance_level",
    "exceedance_levels",
    "exceedance_levels_from_sparse_step_times",
    "exceedance_levels_from_step_times",
    "grouped_exceedance_levels",
    "integer_weights",
    "level_order",
    "level_step_times",
    "sparse_level_step_times",
    "whole_db_distribution",
]

#: Named ways to combine per-interval logged LAFN values over a longer period.
COMBINE_METHODS = ("median", "mode", "mean")

#: Exact share of the time at or below LN, ``1 - N/100`` as (numerator, denominator);
#: None for an N outside [0, 100] or not a number.
Target = tuple[int, int] | None
IntArray = NDArray[np.int64]

#: Bound below which int64 products and sums are safe (2**62, int64 holds < 2**63).
_INT64_SAFE = 2**62
#: Bound on a total of weights summed exactly in binary64 by ``np.bincount`` (2**53,
#: IEEE 754 binary64: 53-bit significand).
_EXACT_LIMIT = 2**53


def _targets(percents: ArrayLike) -> list[Target]:
    """Return ``1 - N/100`` per percent as an exact fraction (None where N is not usable).

    N is read as the decimal number of its shortest text (``repr``), so ``99.9`` is
    999/1000 exactly, not the binary double nearest to it.
    """
    values = np.atleast_1d(as_float_array(percents)).astype(np.float64).ravel()
    out: list[Target] = []
    for value in values.tolist():
        if not (np.isfinite(value) and 0 <= value <= PERCENT_OF_WHOLE):
            out.append(None)
            continue
        share = 1 - Fraction(repr(float(value))) / int(PERCENT_OF_WHOLE)
        out.append((share.numerator, share.denominator))
    return out


def _thresholds(target: tuple[int, int], totals: IntArray) -> IntArray:
    """Least whole cumulative time reaching ``target`` of each total: ceil(num T / den).

    ``cumulative >= ceil(num T / den)`` holds exactly when ``cumulative / T >= num / den``.
    """
    num, den = target
    if totals.size and int(totals.max()) * max(num, 1) >= _INT64_SAFE:
        exact = [-((-num * int(t)) // den) for t in totals.tolist()]  # Python integers
        return np.asarray(exact, dtype=np.int64)
    return -((-num * totals) // den)


def integer_weights(weights: ArrayLike) -> IntArray:
    """Durations as whole numbers for exact sums; 0 where not usable.

    Whole-number weights (integer milliseconds, counts) are kept as they are; any other
    durations are read as seconds and resolved to whole milliseconds (the tool's time
    resolution). Not-finite and non-positive weights become 0 (left out).

    Parameters
    ----------
    weights : array-like
        Durations or whole-number weights. [s] or [ms]

    Returns
    -------
    numpy.ndarray of int64
        Whole weights with a total below 2**53.
    """
    w = as_float_array(weights).ravel()
    ok = np.isfinite(w) & (w > 0)
    w = np.where(ok, w, 0.0)
    if not np.array_equal(w, np.rint(w)):
        w = np.rint(w * MS_PER_S)
    total = float(np.sum(w))
    if total >= _EXACT_LIMIT:
        # beyond 2**53 units (285 years of milliseconds) a sum is no longer exact; scale
        # down to keep the int64 arithmetic bounded (only ratios matter)
        w = np.rint(w * (_EXACT_LIMIT / 2 / total))
    return w.astype(np.int64)


def _check_order(order: ArrayLike, size: int) -> NDArray[np.intp]:
    """Return a caller's level order as an index array of the right length."""
    index = np.asarray(order, dtype=np.intp).ravel()
    if index.size != size:
        raise ValueError(
            f"level_order has {index.size} entries but there are {size} levels; pass "
            "np.argsort(levels_db, kind='stable')"
        )
    return index


def level_order(levels_db: ArrayLike) -> NDArray[np.intp]:
    """Stable ascending order of levels, to share between several LN computations.

    Parameters
    ----------
    levels_db : array-like
        Sample levels (NaN sorts last). [dB]

    Returns
    -------
    numpy.ndarray of intp
        ``np.argsort(levels_db, kind="stable")`` of the flattened levels: equal levels
        keep their input order, which the LN functions rely on (their cumulative weights
        add equal levels in input order). Levels on a 0.1 dB or 0.01 dB grid are sorted
        as 16-bit step numbers (the same order, several times faster).

    References
    ----------
    .. [1] NumPy reference, ``numpy.argsort`` (``kind="stable"``).
    """
    return _stable_order(as_float_array(levels_db).ravel())


def _stable_order(levels: FloatArray) -> NDArray[np.intp]:
    """``np.argsort(levels, kind="stable")`` of a 1-D float array, faster on level grids."""
    finite = np.isfinite(levels)
    # infinite levels sort apart from NaN: leave them to the general sort
    if not np.isinf(levels).any():
        values = levels if finite.all() else np.where(finite, levels, 0.0)
        # Levels on a 0.1 dB (or 0.01 dB) grid, e.g. read from text: the whole step
        # numbers k order the levels exactly as the levels themselves (equal levels, -0.0
        # and 0.0 included, get equal k), and a stable sort of the 16-bit k (NumPy's radix
        # sort) is the stable level order.
        grid = _grid_steps(values, negative_zero_ok=True)
        if grid is not None and np.all(np.abs(grid[0]) < _INT16_TOP):
            key = grid[0].astype(np.int16)
            key[~finite] = _INT16_TOP  # NaN last, in input order, as np.argsort puts them
            return np.argsort(key, kind="stable")
    return np.argsort(levels, kind="stable")


def _stable_group_sort(group_index: NDArray[np.int64], n_groups: int) -> NDArray[np.intp]:
    """Stable order of small non-negative group numbers.

    The narrowest integer type that holds them is sorted (NumPy sorts 8- and 16-bit
    integers stably with a radix sort, several times faster than a merge sort).
    """
    if n_groups <= np.iinfo(np.int16).max:
        return np.argsort(group_index.astype(np.int16), kind="stable")
    if n_groups <= np.iinfo(np.int32).max:
        return np.argsort(group_index.astype(np.int32), kind="stable")
    return np.argsort(group_index, kind="stable")


def _weights(levels_db: ArrayLike, durations_s: ArrayLike | None) -> FloatArray:
    """One weight per level, flattened: the durations broadcast to the levels, or ones."""
    shape = as_float_array(levels_db).shape
    if durations_s is None:
        return np.ones(int(np.prod(shape)))
    weights = as_float_array(durations_s)
    try:
        return np.broadcast_to(weights, shape).ravel()
    except ValueError as exc:
        raise ValueError(
            f"levels_db has {int(np.prod(shape))} values but durations_s has shape "
            f"{weights.shape}; pass one duration per level (or one for all)"
        ) from exc


def _sorted_valid(
    levels: FloatArray, weights: IntArray, order: ArrayLike | None = None,
) -> tuple[FloatArray, IntArray]:
    """Finite levels with positive whole weights, sorted by level, and their weights.

    ``levels`` and ``weights`` are flat and of equal length; ``order`` is the stable
    level order of all of ``levels`` when the caller has it.
    """
    keep = np.isfinite(levels) & (weights > 0)
    if order is None:
        levels, weights = levels[keep], weights[keep]
        chosen = _stable_order(levels)
        return levels[chosen], weights[chosen]
    # the stable order of all levels, restricted to the kept ones, is the stable order of
    # the kept levels
    index = _check_order(order, levels.size)
    index = index[keep[index]]
    return levels[index], weights[index]


def exceedance_levels(
    levels_db: ArrayLike,
    percents: ArrayLike,
    durations_s: ArrayLike | None = None,
    level_order: ArrayLike | Callable[[], ArrayLike] | None = None,
) -> FloatArray:
    r"""Exceedance levels LN for several N at once.

    Parameters
    ----------
    levels_db : array-like
        Sample levels (e.g. 1 s or 1 min LAeq). [dB]
    percents : array-like
        The N values, read as exact decimals. [%]
    durations_s : array-like, optional
        Time each sample represents (weights); equal if omitted. Whole numbers are used
        as they are (integer milliseconds may be passed: only ratios matter); other
        values are seconds, resolved to whole milliseconds. [s]
    level_order : array-like of int, or a function returning it, optional
        :func:`level_order` of ``levels_db``, when several computations share it (it
        saves the sort; the result is the same). A function is called only when a sort
        is needed (levels on a 0.1 dB grid are counted, not sorted).

    Returns
    -------
    numpy.ndarray
        One LN per percent, always a sample level; NaN for N outside [0, 100] or when no
        finite sample with positive duration exists. [dB]

    Raises
    ------
    ValueError
        If ``durations_s`` or ``level_order`` does not fit ``levels_db`` (programming
        errors).

    Notes
    -----
    With whole weights :math:`t_{(j)}` of the levels sorted upwards and total
    :math:`T`, :math:`L_N` is the first :math:`L_{(j)}` whose cumulative weight
    :math:`\sum_{i \le j} t_{(i)}` reaches :math:`\lceil (1 - N/100) T \rceil`, all in
    integers: the time strictly above it is then at most N % of :math:`T`, exactly.

    References
    ----------
    .. [1] ISO 1996-1:2016, N percent exceedance level (level exceeded for N % of the time
       interval considered).
    .. [2] design.md §5 and §9 (the convention pinned here, held exactly).
    """
    targets = _targets(percents)
    flat = as_float_array(levels_db).ravel()
    if level_order is not None and not callable(level_order):
        _check_order(level_order, flat.size)  # a caller's mistake is refused either way
    flat_weights = integer_weights(_weights(levels_db, durations_s))
    counted = _histogram_levels(flat, flat_weights, np.zeros(flat.size, np.int64), 1, targets)
    if counted is not None:
        return counted[0]
    levels, weights = _sorted_valid(flat, flat_weights,
                                    level_order() if callable(level_order) else level_order)
    out = np.full(len(targets), np.nan)
    if levels.size == 0:
        return out
    cumulative = np.cumsum(weights)
    total = cumulative[-1:]
    for column, target in enumerate(targets):
        if target is None:
            continue
        index = int(np.searchsorted(cumulative, _thresholds(target, total)[0], side="left"))
        out[column] = levels[min(index, levels.size - 1)]
    return out


def exceedance_level(
    levels_db: ArrayLike, percent: float, durations_s: ArrayLike | None = None
) -> float:
    r"""Exceedance level LN: the lowest level exceeded for at most N % of the time.

    .. math:: L_N = \min\{L : \sum_{i: L_i > L} t_i \le \tfrac{N}{100} T\}

    Our convention matches the "strictly exceeded" column of standards.md §10 (for the
    20 equal samples there: L10 = 58, L50 = 47, L90 = 44); it is decided exactly (integer
    milliseconds, N as an exact decimal).

    Parameters
    ----------
    levels_db : array-like
        Sample levels. [dB]
    percent : float
        N. [%]
    durations_s : array-like, optional
        Time each sample represents (weights); equal if omitted (see
        :func:`exceedance_levels`). [s]

    Returns
    -------
    float
        LN (one of the sample levels); NaN if N is outside [0, 100] or nothing is finite.
        [dB]

    References
    ----------
    .. [1] ISO 1996-1:2016, N percent exceedance level.
    .. [2] design.md §5 and §9.
    """
    return float(exceedance_levels(levels_db, [percent], durations_s)[0])


def grouped_exceedance_levels(
    levels_db: ArrayLike,
    durations_s: ArrayLike | None,
    groups: ArrayLike,
    n_groups: int,
    percents: ArrayLike,
    level_order: ArrayLike | Callable[[], ArrayLike] | None = None,
) -> FloatArray:
    """Exceedance levels LN per group, vectorised over all groups at once.

    Samples are sorted by (group, level): stably by level (or in the caller's
    ``level_order``), then stably by group, the order of ``np.lexsort((levels, groups))``;
    whole cumulative weights restart in each group; for each percent the first sample per
    group whose cumulative weight reaches the group's exact threshold (see
    :func:`exceedance_levels`) is found by counting, per group, the samples below it, so
    results are identical group by group.

    Parameters
    ----------
    levels_db : array-like
        Sample levels. [dB]
    durations_s : array-like or None
        Time each sample represents; equal if None (see :func:`exceedance_levels`). [s]
    groups : array-like of int
        Group index per sample, ``0 .. n_groups-1``; -1 means no group.
    n_groups : int
        Number of groups.
    percents : array-like
        The N values. [%]
    level_order : array-like of int, or a function returning it, optional
        :func:`level_order` of ``levels_db``, when several groupings of the same samples
        share it (it saves the sort; the result is the same). A function is called only
        when a sort is needed (see :func:`exceedance_levels`).

    Returns
    -------
    numpy.ndarray
        Shape ``(n_groups, len(percents))``; NaN for empty groups and invalid N. [dB]

    Raises
    ------
    ValueError
        If the inputs differ in length or ``n_groups`` is negative (programming errors).

    References
    ----------
    .. [1] ISO 1996-1:2016, N percent exceedance level.
    .. [2] design.md §5 and §9.
    """
    targets = _targets(percents)
    levels, float_weights, group_index = grouped_arrays(levels_db, durations_s, groups,
                                                        n_groups)
    weights = integer_weights(float_weights)
    if level_order is not None and not callable(level_order):
        _check_order(level_order, levels.size)  # a caller's mistake is refused either way
    counted = _histogram_levels(levels, weights, group_index, n_groups, targets)
    if counted is not None:
        return counted
    out = np.full((n_groups, len(targets)), np.nan)
    keep = np.isfinite(levels) & (weights > 0) & (group_index >= 0)
    if callable(level_order):
        level_order = level_order()
    by_level = (_stable_order(levels) if level_order is None
                else _check_order(level_order, levels.size))
    by_level = by_level[keep[by_level]]
    if by_level.size == 0:
        return out
    order = by_level[_stable_group_sort(group_index[by_level], n_groups)]
    levels, weights, group_index = levels[order], weights[order], group_index[order]

    counts = np.bincount(group_index, minlength=n_groups)
    starts = np.concatenate(([0], np.cumsum(counts)[:-1]))
    # whole numbers: one running sum minus the sum before each group is exact
    running = np.cumsum(weights)
    before = np.concatenate(([0], running))[starts]
    cumulative = running - np.repeat(before, counts)
    totals = np.zeros(n_groups, np.int64)
    has_samples = counts > 0
    totals[has_samples] = cumulative[(starts + counts - 1)[has_samples]]

    last = starts + counts - 1
    for column, target in enumerate(targets):
        if target is None:
            continue
        threshold = _thresholds(target, totals)
        below = np.bincount(group_index, weights=(cumulative < threshold[group_index]),
                            minlength=n_groups)
        index = np.minimum(starts + below.astype(np.int64), last)
        out[has_samples, column] = levels[index[has_samples]]
    return out


#: Level grids tried by :func:`level_order` (0.1 dB and 0.01 dB steps) [1/dB] and the
#: 16-bit key bound (NaN key; every finite key is below it).
_LEVEL_STEPS_PER_DB = (10.0, 100.0)
_INT16_TOP = int(np.iinfo(np.int16).max)
#: Number of leading levels checked against a grid before all of them are (own choice).
_GRID_PROBE = 1024

#: Largest level-histogram size (groups x level steps) of :func:`_histogram_levels`, as a
#: multiple of the number of samples, and the size always allowed (own choice: beyond
#: that, sorting is cheaper and lighter on memory).
_HISTOGRAM_CELLS_PER_SAMPLE = 2
_HISTOGRAM_MIN_CELLS = 1 << 16


def _grid_steps(values: FloatArray, negative_zero_ok: bool = False
                ) -> tuple[FloatArray, float] | None:
    """Whole-number steps ``k`` (as floats) with ``k / steps_per_db == value`` exactly.

    ``values`` are finite. None when they are not all on a 0.1 dB or 0.01 dB grid (a quick
    look at the first values rules a grid out), or, unless ``negative_zero_ok``, when a
    negative zero is among them (its step gives back +0.0).
    """
    head = values[:_GRID_PROBE]
    for steps_per_db in _LEVEL_STEPS_PER_DB:
        if not np.array_equal(np.rint(head * steps_per_db) / steps_per_db, head):
            continue
        steps = np.rint(values * steps_per_db)
        if not np.array_equal(steps / steps_per_db, values):
            continue
        if not negative_zero_ok and np.any((values == 0) & np.signbit(values)):
            return None
        return steps, steps_per_db
    return None


def _histogram_levels(
    levels: FloatArray, weights: IntArray, group_index: NDArray[np.int64], n_groups: int,
    targets: list[Target],
) -> FloatArray | None:
    """LN per group by counting time per level step instead of sorting; None if not usable.

    Applies when every counted level lies on a 0.1 dB (or 0.01 dB) grid and the total of
    the whole weights is below 2**53 (so ``np.bincount`` sums them exactly): the
    cumulative time at the end of each level step is then the cumulative weight of the
    last sample of that step in the sorted order of :func:`grouped_exceedance_levels`,
    and the first step reaching the exact threshold holds the first sample that does:
    the results are identical, in time linear in the number of samples.
    """
    keep = np.isfinite(levels) & (weights > 0) & (group_index >= 0)
    if not keep.all():
        levels, weights, group_index = levels[keep], weights[keep], group_index[keep]
    if levels.size == 0:
        return None
    if int(np.sum(weights)) >= _EXACT_LIMIT:
        return None
    grid = _grid_steps(levels)
    if grid is None:
        return None
    steps = grid[0].astype(np.int64)
    steps_per_db = grid[1]
    low = int(steps.min())
    n_steps = int(steps.max()) - low + 1
    if n_groups * n_steps > max(_HISTOGRAM_CELLS_PER_SAMPLE * levels.size,
                                _HISTOGRAM_MIN_CELLS):
        return None
    cell = group_index * n_steps + (steps - low)
    time_per_step = np.bincount(cell, weights=weights, minlength=n_groups * n_steps)
    return _levels_from_step_times(time_per_step.astype(np.int64).reshape(n_groups, n_steps),
                                   low, steps_per_db, targets)


def _levels_from_step_times(time_per_step: IntArray, low: int, steps_per_db: float,
                            targets: list[Target]) -> FloatArray:
    """LN per row of a (groups, level steps) table of whole time; step ``k`` is ``low + k``."""
    n_groups = time_per_step.shape[0]
    cumulative = np.cumsum(time_per_step, axis=1)
    totals = cumulative[:, -1]
    has_samples = totals > 0
    cumulative = cumulative[has_samples]
    occupied = time_per_step[has_samples] > 0
    out = np.full((n_groups, len(targets)), np.nan)
    for column, target in enumerate(targets):
        if target is None:
            continue
        threshold = _thresholds(target, totals[has_samples])
        # the first occupied step reaching the threshold (an empty step adds no sample)
        step = np.argmax(occupied & (cumulative >= threshold[:, None]), axis=1)
        out[has_samples, column] = (low + step) / steps_per_db
    return out


def level_step_times(
    levels_db: ArrayLike, durations: ArrayLike, groups: ArrayLike, n_groups: int,
    first_step: int, n_steps: int, steps_per_db: float,
) -> IntArray:
    r"""Time spent at each level step, per group: counts that merge by addition.

    Each level is taken to its nearest step ``k = round(L * steps_per_db)`` (exact for
    levels logged on that grid); steps below ``first_step`` or beyond the table are
    clamped to its ends. Tables of disjoint sets of samples add up to the table of their
    union, so LN over any union of parts follows from
    :func:`exceedance_levels_from_step_times` without the samples.

    Parameters
    ----------
    levels_db : array-like
        Sample levels; non-finite ones are left out. [dB]
    durations : array-like
        Time each sample represents, read as :func:`integer_weights` reads it (whole
        milliseconds stay as they are); non-positive or non-finite ones are left out.
    groups : array-like of int
        Group per sample, ``0 .. n_groups-1``; -1: in no group.
    n_groups, first_step, n_steps : int
        Table shape and the step of its first column.
    steps_per_db : float
        Steps per decibel (10 for 0.1 dB steps). [1/dB]

    Returns
    -------
    numpy.ndarray of int64
        Whole time per (group, step), shape ``(n_groups, n_steps)``.

    References
    ----------
    .. [1] ISO 1996-1:2016, N percent exceedance level (time above a level).
    """
    cell, weights = _step_cells(levels_db, durations, groups, n_groups, first_step, n_steps,
                                steps_per_db)
    table = np.bincount(cell, weights=weights, minlength=n_groups * n_steps)
    return table.astype(np.int64).reshape(n_groups, n_steps)


def _step_cells(levels_db: ArrayLike, durations: ArrayLike, groups: ArrayLike, n_groups: int,
                first_step: int, n_steps: int, steps_per_db: float
                ) -> tuple[IntArray, IntArray]:
    """Table cell ``group * n_steps + step`` and whole time of each sample kept."""
    levels = as_float_array(levels_db).ravel()
    weights = integer_weights(durations)
    group_index = np.asarray(groups, dtype=np.int64).ravel()
    keep = (np.isfinite(levels) & (weights > 0) & (group_index >= 0)
            & (group_index < n_groups))
    steps = np.clip(np.rint(levels[keep] * steps_per_db).astype(np.int64) - first_step,
                    0, n_steps - 1)
    return group_index[keep] * n_steps + steps, weights[keep]


def sparse_level_step_times(
    levels_db: ArrayLike, durations: ArrayLike, groups: ArrayLike, n_groups: int,
    first_step: int, n_steps: int, steps_per_db: float,
) -> tuple[IntArray, IntArray, IntArray]:
    """:func:`level_step_times` as its occupied cells only: (group, step column, time).

    For many groups (every reporting interval of a year) whose samples occupy a few level
    steps each; the same steps and whole times as the dense table, sorted by group, then
    step. Cells of disjoint sets of samples add up (sum the times of equal cells).

    Returns
    -------
    group, step, time : numpy.ndarray of int64
        Occupied cells: group, step column (``0 .. n_steps-1``) and whole time.
    """
    cell, weights = _step_cells(levels_db, durations, groups, n_groups, first_step, n_steps,
                                steps_per_db)
    cells, inverse = np.unique(cell, return_inverse=True)
    times = np.bincount(inverse, weights=weights, minlength=cells.size).astype(np.int64)
    return cells // n_steps, cells % n_steps, times


#: Cells of the dense table built at a time from sparse cells (own choice: about 32 MB of
#: int64; a year of 15-minute intervals is read in some 20 blocks).
SPARSE_BLOCK_CELLS = 4_000_000


def exceedance_levels_from_sparse_step_times(
    group: ArrayLike, step: ArrayLike, time: ArrayLike, n_groups: int, first_step: int,
    n_steps: int, steps_per_db: float, percents: ArrayLike,
) -> FloatArray:
    """:func:`exceedance_levels_from_step_times` of a table given by its occupied cells.

    The dense table is rebuilt a block of groups at a time (at most
    :data:`SPARSE_BLOCK_CELLS` cells), so the same convention decides every group.

    Parameters
    ----------
    group, step, time : array-like of int
        Occupied cells (see :func:`sparse_level_step_times`); equal cells are added.
    n_groups, first_step, n_steps : int
        Shape and first step of the table.
    steps_per_db : float
        Steps per decibel. [1/dB]
    percents : array-like
        The N values. [%]

    Returns
    -------
    numpy.ndarray
        LN per group and percent, ``(n_groups, n_percents)``; NaN for a group without
        time. [dB]
    """
    groups = np.asarray(group, dtype=np.int64).ravel()
    steps = np.asarray(step, dtype=np.int64).ravel()
    times = np.asarray(time, dtype=np.int64).ravel()
    n_percents = np.atleast_1d(np.asarray(percents)).size
    out = np.full((n_groups, n_percents), np.nan)
    per_block = max(1, SPARSE_BLOCK_CELLS // max(n_steps, 1))
    order = np.argsort(groups, kind="stable")
    groups, steps, times = groups[order], steps[order], times[order]
    for first in range(0, n_groups, per_block):
        last = min(first + per_block, n_groups)
        lo, hi = np.searchsorted(groups, [first, last])
        if lo == hi:
            continue
        cell = (groups[lo:hi] - first) * n_steps + steps[lo:hi]
        table = np.bincount(cell, weights=times[lo:hi], minlength=(last - first) * n_steps)
        out[first:last] = exceedance_levels_from_step_times(
            table.astype(np.int64).reshape(last - first, n_steps), first_step, steps_per_db,
            percents)
    return out


def exceedance_levels_from_step_times(
    time_per_step: ArrayLike, first_step: int, steps_per_db: float, percents: ArrayLike
) -> FloatArray:
    r"""Exceedance levels LN from the time spent at each level step.

    The same convention as :func:`exceedance_levels` (the lowest occupied step whose
    cumulative time reaches ``1 - N/100`` of the total, decided exactly in whole time), on
    a table from :func:`level_step_times` (possibly summed over parts).

    Parameters
    ----------
    time_per_step : array-like of int
        Whole time per (group, step); one row per group (a 1-D table is one group).
    first_step : int
        Step of the first column (level ``first_step / steps_per_db``).
    steps_per_db : float
        Steps per decibel. [1/dB]
    percents : array-like
        The N values. [%]

    Returns
    -------
    numpy.ndarray
        LN per group and percent, shape ``(n_groups, n_percents)``; NaN for a group
        without time. [dB]

    References
    ----------
    .. [1] ISO 1996-1:2016, N percent exceedance level.
    .. [2] design.md §5 (the convention pinned here).
    """
    table = np.atleast_2d(np.asarray(time_per_step, dtype=np.int64))
    return _levels_from_step_times(table, int(first_step), float(steps_per_db),
                                   _targets(percents))


def whole_db_distribution(values_db: ArrayLike) -> tuple[FloatArray, NDArray[np.int64]]:
    """Histogram of values rounded to whole decibels (round half up).

    Parameters
    ----------
    values_db : array-like
        Values, e.g. logged LAF90 per 15 min interval. [dB]

    Returns
    -------
    levels_db : numpy.ndarray
        The distinct whole-dB values, ascending. [dB]
    counts : numpy.ndarray
        How many values rounded to each.

    References
    ----------
    .. [1] BS 4142:2014 3.4 (background level quoted to the nearest whole dB) and
       Figure 4 (statistical analysis of background levels), secondary source.
    """
    values = as_float_array(values_db).ravel()
    values = values[np.isfinite(values)]
    whole = np.floor(values / WHOLE_DB_STEP_DB + WHOLE_DB_HALF_STEP_DB / WHOLE_DB_STEP_DB)
    levels, counts = np.unique(whole * WHOLE_DB_STEP_DB, return_counts=True)
    return levels.astype(np.float64), counts.astype(np.int64)


def combine_logged_levels(values_db: ArrayLike, method: str) -> float:
    """Combine per-interval logged LAFN values (e.g. LAF90) over a longer period.

    Logged LAFN values cannot be combined exactly; each method is a labelled convention.

    - ``"median"``: median of the values.
    - ``"mode"``: the most frequent whole-dB value (values rounded half up to whole dB).
      When several values are equally frequent, the lowest is returned: a lower
      background is the cautious choice for an assessment (it makes the rating's excess
      over background larger), and it makes the result independent of input order.
    - ``"mean"``: arithmetic mean of the values (not an energy average).

    Parameters
    ----------
    values_db : array-like
        Logged values, one per interval. [dB]
    method : str
        One of :data:`COMBINE_METHODS`.

    Returns
    -------
    float
        The combined value; NaN if no value is finite. [dB]

    Raises
    ------
    ValueError
        If ``method`` is not one of :data:`COMBINE_METHODS`.

    References
    ----------
    .. [1] BS 4142:2014 8 and Figure 4 (representative background level from a
       statistical analysis, modal value), secondary source.
    .. [2] design.md §5 (named combination methods).
    """
    if method not in COMBINE_METHODS:
        raise ValueError(
            f"unknown method {method!r}; choose one of {', '.join(COMBINE_METHODS)}"
        )
    values = as_float_array(values_db).ravel()
    values = values[np.isfinite(values)]
    if values.size == 0:
        return float("nan")
    if method == "median":
        return float(np.median(values))
    if method == "mean":
        return float(np.mean(values))
    levels, counts = whole_db_distribution(values)
    return float(levels[int(np.argmax(counts))])  # argmax: first (lowest) of the ties
