"""Whole-survey figures (``overall``) and reporting-interval figures (``intervals``).

LN basis rule (design §5): where the log holds the meter's own LAFN (``LAF90`` ...) that
value is used; when the logging interval equals the reporting interval the logged values
are taken as they are, when it is finer they are combined per interval with the named
``settings.background.method``; only where no LAFN is logged is LN computed from the LAeq
samples (basis ``"samples"``).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from surveytools.assessment._common import (
    FloatArray,
    IntArray,
    db,
    db_list,
    fraction,
    grouped_combine,
    percent_label,
    seconds,
    seconds_list,
    segment_groups,
)
from surveytools.assessment.context import Context
from surveytools.assessment.daily import period_of_instants
from surveytools.assessment.timegrid import format_local, stepped_grid, wall_to_utc_ms
from surveytools.indicators.levels import (
    energy_average,
    grouped_energy_average_and_duration,
    grouped_max,
)
from surveytools.indicators.percentiles import (
    combine_logged_levels,
    exceedance_levels,
    grouped_exceedance_levels,
)

#: Relative tolerance when comparing the logging interval with a reporting interval.
#: Own choice: 1 ms in 15 min; logged durations are whole milliseconds.
_SAME_INTERVAL_RTOL = 1e-6


def logged_column(percent: float) -> str:
    """Canonical name of the meter's own exceedance level column (``LAF90``)."""
    return f"LAF{percent_label(percent)}"


def ln_key(percent: float) -> str:
    """Return the result key of an exceedance level (``LA90``)."""
    return f"LA{percent_label(percent)}"


def same_interval(logging_s: float, interval_s: float) -> bool:
    """Whether the logging interval equals the given interval."""
    return bool(np.isfinite(logging_s)) and abs(logging_s - interval_s) <= (
        _SAME_INTERVAL_RTOL * interval_s
    )


def group_of_instants(instants_ms: IntArray, bounds_ms: IntArray) -> IntArray:
    """Interval (between consecutive bounds) holding each instant; -1 outside."""
    n_groups = max(bounds_ms.size - 1, 0)
    return segment_groups(np.searchsorted(bounds_ms, instants_ms, side="right"), n_groups)


def logged_per_group(
    ctx: Context, values: FloatArray, mask: np.ndarray, bounds_ms: IntArray, method: str | None
) -> FloatArray:
    """Return logged LAFN per interval: readings by their start, combined by ``method``.

    ``method=None``: logging interval equals the interval; each interval holds one logged
    value, taken as it is (median of one value; several values, e.g. a misaligned log, are
    combined by their median).
    """
    n_groups = max(bounds_ms.size - 1, 0)
    group = np.where(mask, group_of_instants(ctx.start_ms, bounds_ms), -1)
    return grouped_combine(values, group, n_groups, method or "median")


def interval_bounds(ctx: Context) -> IntArray:
    """Reporting-interval grid in the site's civil time, aligned to local midnight.

    Each local day is stepped from its midnight in real elapsed time; the last interval of
    a day is cut at the next midnight. Only intervals overlapping the readings are kept.
    """
    if ctx.n == 0:
        return np.zeros(0, dtype=np.int64)
    days = [*ctx.candidate_days]
    midnights = np.array([wall_to_utc_ms(d, 0, 0, ctx.tz) for d in days], dtype=np.int64)
    bounds, _ = stepped_grid(midnights[:-1], midnights[1:], ctx.settings.reporting_interval_s)
    first = int(ctx.start_ms.min())
    last = int(ctx.end_ms.max())
    lo = max(int(np.searchsorted(bounds, first, side="right")) - 1, 0)
    hi = int(np.searchsorted(bounds, last, side="left"))
    return bounds[lo : hi + 1]


def intervals_section(ctx: Context) -> tuple[list[dict[str, Any]], dict[str, Any]]:
    """Reporting-interval figures and their LN basis."""
    settings = ctx.settings
    percents = list(settings.percentiles)
    basis: dict[str, Any] = {}
    logging_same = same_interval(ctx.logging_interval_s, settings.reporting_interval_s)
    for p in percents:
        basis[ln_key(p)] = "logged" if ctx.logged(logged_column(p)) is not None else "samples"
    uses_method = any(v == "logged" for v in basis.values()) and not logging_same
    basis["method"] = settings.background.method if uses_method else None
    bounds = interval_bounds(ctx)
    n_groups = max(bounds.size - 1, 0)
    if n_groups == 0:
        return [], basis

    pieces, group = ctx.pieces_in(bounds)
    valid_group = np.where(ctx.valid[pieces.index], group, -1)
    piece_levels = ctx.piece_levels(pieces)
    kept = ctx.valid_pieces(pieces)
    summed = ctx.grouped_laeq(bounds)
    leq, valid_s = summed if summed is not None else grouped_energy_average_and_duration(
        kept.levels_db, kept.duration_s, group[kept.position], n_groups)
    lengths_s = np.diff(bounds) / 1000.0
    valid_fraction = np.divide(valid_s, lengths_s, out=np.zeros(n_groups), where=lengths_s > 0)
    lafmax_col = ctx.level("LAFmax")
    lafmax = (
        grouped_max(lafmax_col[pieces.index], valid_group, n_groups)
        if lafmax_col is not None
        else np.full(n_groups, np.nan)
    )
    ln: dict[str, FloatArray] = {}
    sample_percents = [p for p in percents if basis[ln_key(p)] == "samples"]
    if sample_percents:
        table = grouped_exceedance_levels(
            piece_levels, pieces.weights_ms, valid_group, n_groups, sample_percents,
            level_order=lambda: ctx.piece_order(pieces),
        )
        for k, p in enumerate(sample_percents):
            ln[ln_key(p)] = table[:, k]
    for p in percents:
        if basis[ln_key(p)] == "logged":
            values = ctx.logged(logged_column(p))
            assert values is not None
            ln[ln_key(p)] = logged_per_group(ctx, values, ctx.valid, bounds, basis["method"])

    reasons = sorted({ex.reason for ex in ctx.survey.exclusions})
    present: dict[str, np.ndarray] = {}
    for reason in reasons:
        hit = np.zeros(pieces.index.size, dtype=bool)
        for ex in ctx.survey.exclusions:
            if ex.reason == reason:
                hit |= ex.mask[pieces.index]
        counts = np.bincount(group[hit & (group >= 0)], minlength=n_groups)
        present[reason] = counts > 0

    starts_text = format_local(bounds[:-1], ctx.tz)
    ends_text = format_local(bounds[1:], ctx.tz)
    periods = period_of_instants(ctx, bounds[:-1])
    threshold = settings.coverage_threshold
    columns: dict[str, list[Any]] = {
        "LAeq": db_list(leq),
        "LAFmax": db_list(lafmax),
        **{key: db_list(values) for key, values in ln.items()},
        "valid_s": seconds_list(valid_s),
    }
    out: list[dict[str, Any]] = []
    for j in range(n_groups):
        row: dict[str, Any] = {"start": starts_text[j], "end": ends_text[j]}
        for key, values_list in columns.items():
            row[key] = values_list[j]
        row["valid_fraction"] = fraction(valid_fraction[j])
        row["sufficient"] = bool(valid_fraction[j] >= threshold)
        row["period"] = periods[j]
        row["excluded"] = [r for r in reasons if present[r][j]]
        out.append(row)
    return out, basis


def _overall_laeq(ctx: Context, laeq: FloatArray, valid: np.ndarray) -> float:
    """LAeq over all valid time: from the shared segment sums, else from the readings."""
    total = ctx.total_laeq()
    if total is not None:
        return total
    return energy_average(laeq[valid], ctx.duration_ms[valid] / 1000.0)


def overall_section(ctx: Context) -> dict[str, Any]:
    """Whole-survey LAeq, LAFmax, LAFmin and LN over all valid time."""
    settings = ctx.settings
    method = settings.background.method
    valid = ctx.valid
    laeq = ctx.level("LAeq")
    assert laeq is not None
    durations_s = ctx.duration_ms / 1000.0
    out: dict[str, Any] = {
        "LAeq": db(_overall_laeq(ctx, laeq, valid)) if valid.any() else None,
    }
    for column, reducer in (("LAFmax", np.max), ("LAFmin", np.min)):
        values = ctx.level(column)
        chosen = values[valid & np.isfinite(values)] if values is not None else np.zeros(0)
        out[column] = db(reducer(chosen)) if chosen.size else None
    basis: dict[str, Any] = {}
    percents = list(settings.percentiles)
    sample_percents = [p for p in percents if ctx.logged(logged_column(p)) is None]
    # invalid readings as NaN levels: the same samples as laeq[valid], in the shared order
    samples = (
        exceedance_levels(np.where(valid, laeq, np.nan), sample_percents,
                          ctx.duration_ms.astype(np.float64),  # exact ms weights
                          level_order=ctx.laeq_order)
        if sample_percents
        else np.zeros(0)
    )
    for p in percents:
        key = ln_key(p)
        logged = ctx.logged(logged_column(p))
        if logged is None:
            out[key] = db(samples[sample_percents.index(p)])
            basis[key] = "samples"
        else:
            out[key] = db(combine_logged_levels(logged[valid], method))
            basis[key] = "logged"
    basis["method"] = method if any(v == "logged" for v in basis.values()) else None
    out["basis"] = basis
    out["valid_s"] = seconds(float(np.sum(durations_s[valid])))
    return out
