"""Assessment days: Lday / Levening / Lnight, Lden, Ldn, CNEL, LAeq,16h / 8h, night events.

The assessment day D runs from D ``periods.lden.day_start`` to D+1 ``day_start`` and owns
the night that starts on D. Each scheme (Lden, Ldn, CNEL, the 16 h / 8 h pair) is laid out
as local wall-clock boundaries converted per calendar day to UTC instants, so on DST days
the periods keep their wall-clock bounds and last their real length (a 7 h or 9 h night).
Readings are split at the boundaries; levels average the real valid time; coverage is
valid time over the real period length. The penalised indicators use the *nominal* hours
of the configured scheme (``scheme_hours``), as the Directive's formula does.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, tzinfo
from typing import Any

import numpy as np

from surveytools.assessment._common import (
    MS_PER_S,
    FloatArray,
    IntArray,
    db,
    db_list,
    fraction,
    seconds,
    segment_groups,
)
from surveytools.assessment.context import Context
from surveytools.assessment.timegrid import day_offset_boundaries, hhmm_hours
from surveytools.indicators.levels import (
    grouped_energy_average,
    grouped_energy_average_and_duration,
    grouped_valid_duration,
)
from surveytools.indicators.periods import penalised_day_evening_night, scheme_hours
from surveytools.settings import Periods, PeriodScheme, Settings

#: Periods of a scheme, in order.
PERIOD_NAMES = ("day", "evening", "night")
#: Periods in a day-evening-night scheme.
N_PERIODS = len(PERIOD_NAMES)


@dataclass(frozen=True)
class SchemeResult:
    """Per candidate day and period: level, valid time and real length."""

    level_db: FloatArray  # (n_days, 3) [dB]
    valid_s: FloatArray  # (n_days, 3) [s]
    length_s: FloatArray  # (n_days, 3) [s]
    bounds_ms: IntArray  # (3 * n_days + 1,) [ms]
    touched: np.ndarray  # (n_days,) bool: any reading piece in the day

    @property
    def coverage(self) -> FloatArray:
        """Valid fraction of each period's real length (NaN for empty periods)."""
        return np.divide(
            self.valid_s, self.length_s, out=np.full(self.valid_s.shape, np.nan),
            where=self.length_s > 0,
        )


def scheme_times(scheme: PeriodScheme) -> list[str]:
    """Local start times of day, evening and night of a scheme."""
    return [scheme.day_start, scheme.evening_start, scheme.night_start]


def assess_scheme(ctx: Context, times: list[str]) -> SchemeResult:
    """Energy average and valid time per candidate day and period of one scheme."""
    days = ctx.candidate_days
    n_days = len(days)
    n_groups = n_days * N_PERIODS
    bounds = day_offset_boundaries(days, times, ctx.tz)
    pieces, group = ctx.pieces_in(bounds)
    # the valid pieces with a finite LAeq, taken once for all schemes
    # the valid pieces with a finite LAeq, taken once for all schemes
    kept = ctx.valid_pieces(pieces)
    summed = ctx.grouped_laeq(bounds)
    level, valid_s = summed if summed is not None else grouped_energy_average_and_duration(
        kept.levels_db, kept.duration_s, group[kept.position], n_groups)
    touched_groups = ctx.touched_groups(bounds, pieces, group)
    result = SchemeResult(
        level_db=level.reshape(n_days, N_PERIODS),
        valid_s=valid_s.reshape(n_days, N_PERIODS),
        length_s=(np.diff(bounds) / MS_PER_S).reshape(n_days, N_PERIODS),
        bounds_ms=bounds,
        touched=np.asarray(touched_groups.reshape(n_days, N_PERIODS).any(axis=1)),
    )
    return result


@dataclass(frozen=True)
class SchemeResults:
    """Every scheme assessed once, read by both the days and the survey average."""

    lden: SchemeResult
    ldn: SchemeResult
    cnel: SchemeResult
    #: The 16 h / 8 h pair (a scheme with an empty evening).
    pair: SchemeResult


def assess_schemes(ctx: Context) -> SchemeResults:
    """Assess Lden, Ldn, CNEL and the 16 h / 8 h pair on the candidate days."""
    periods = ctx.settings.periods
    return SchemeResults(
        lden=assess_scheme(ctx, scheme_times(periods.lden)),
        ldn=assess_scheme(ctx, scheme_times(periods.ldn)),
        cnel=assess_scheme(ctx, scheme_times(periods.cnel)),
        pair=assess_scheme(ctx, _pair_times(ctx)),
    )


def scheme_average(result: SchemeResult) -> tuple[FloatArray, FloatArray]:
    """Energy average and valid time of each period type over all days.

    The per-day levels weighted by their valid time give exactly the energy average of
    all valid time of the period type (sum of t 10^(L/10) over sum of t).
    """
    period = np.broadcast_to(np.arange(N_PERIODS), result.level_db.shape)
    levels, weights = result.level_db.ravel(), result.valid_s.ravel()
    return (
        grouped_energy_average(levels, weights, period.ravel(), N_PERIODS),
        grouped_valid_duration(levels, weights, period.ravel(), N_PERIODS),
    )


def penalised(levels: FloatArray, scheme: PeriodScheme) -> FloatArray:
    """Return the scheme's day-evening-night indicator with nominal hours and its penalties.

    ``levels`` has the three periods in its last axis.
    """
    hours = scheme_hours(
        hhmm_hours(scheme.day_start), hhmm_hours(scheme.evening_start),
        hhmm_hours(scheme.night_start),
    )
    penalties = (0.0, scheme.evening_penalty_db, scheme.night_penalty_db)
    result = penalised_day_evening_night(
        [levels[..., k] for k in range(N_PERIODS)], hours, penalties
    )
    return np.asarray(result, dtype=np.float64)


def all_scheme_times(ctx: Context) -> list[list[str]]:
    """Local start times of every scheme: Lden, Ldn, CNEL and the 16 h / 8 h pair."""
    return scheme_times_of(ctx.settings)


def scheme_times_of(settings: Settings) -> list[list[str]]:
    """Local start times of every scheme of the settings (see :func:`all_scheme_times`)."""
    p = settings.periods
    return [scheme_times(p.lden), scheme_times(p.ldn), scheme_times(p.cnel),
            [p.laeq16_start, p.laeq16_end, p.laeq16_end]]


def _pair_times(ctx: Context) -> list[str]:
    """Return the 16 h / 8 h pair as a scheme with an empty evening."""
    p = ctx.settings.periods
    return [p.laeq16_start, p.laeq16_end, p.laeq16_end]


def period_of_instants(ctx: Context, instants_ms: IntArray) -> list[str]:
    """Lden period (``day``/``evening``/``night``) holding each instant."""
    return lden_period_names(ctx.candidate_days, ctx.settings, ctx.tz, instants_ms)


def lden_period_names(days: list[date], settings: Settings, tz: tzinfo, instants_ms: IntArray
                      ) -> list[str]:
    """Lden period (``day``/``evening``/``night``) of each instant, on candidate ``days``."""
    if not days:
        return []
    bounds = day_offset_boundaries(days, scheme_times(settings.periods.lden), tz)
    segment = np.searchsorted(bounds, instants_ms, side="right")
    names = np.array(PERIOD_NAMES, dtype=object)
    return list(names[(segment - 1) % N_PERIODS])


def night_events(ctx: Context, bounds_ms: IntArray, n_days: int) -> tuple[IntArray, FloatArray]:
    """Count night LAFmax events and find the Nth highest night LAFmax, per candidate day.

    Readings in the Lden night with LAFmax above the threshold are counted; the Nth
    highest is NaN with fewer than N night readings. A reading belongs to the period
    holding its start.
    """
    counts, highest = night_highest(ctx, bounds_ms, n_days)
    return counts, highest[:, -1]


def night_highest(ctx: Context, bounds_ms: IntArray, n_days: int) -> tuple[IntArray, FloatArray]:
    """Night LAFmax events and the N highest night LAFmax values, per candidate day.

    Returns the count of night readings above the threshold and a ``(n_days, N)`` table of
    the highest values in descending order (NaN where a night has fewer readings); both
    merge over parts of a log (counts add, the tables' N highest of the union).
    """
    events = ctx.settings.events
    n = int(events.nth_highest)
    lafmax = ctx.level("LAFmax")
    counts = np.zeros(n_days, dtype=np.int64)
    highest = np.full((n_days, n), np.nan)
    if lafmax is None or ctx.n == 0:
        return counts, highest
    group = segment_groups(np.searchsorted(bounds_ms, ctx.start_ms, side="right"),
                           n_days * N_PERIODS)
    in_night = ctx.valid & np.isfinite(lafmax) & (group >= 0) & (group % N_PERIODS == 2)
    day = (group // N_PERIODS)[in_night]
    values = lafmax[in_night]
    counts = np.bincount(day[values > events.night_lafmax_threshold_db], minlength=n_days)
    # only the values are kept, so the order among equal values does not matter: a quick
    # sort of the values, then a stable sort by day (a radix sort of small integers)
    by_value = np.argsort(-values)
    small = np.int16 if n_days <= np.iinfo(np.int16).max else np.int64
    order = by_value[np.argsort(day[by_value].astype(small), kind="stable")]
    day_sorted = day[order]
    per_day = np.bincount(day_sorted, minlength=n_days)
    first = np.cumsum(per_day) - per_day
    rank = np.arange(day_sorted.size) - first[day_sorted]
    pick = rank < n
    highest[day_sorted[pick], rank[pick]] = values[order][pick]
    return counts.astype(np.int64), highest


def days_section(ctx: Context, schemes: SchemeResults | None) -> list[dict[str, Any]]:
    """One entry per assessment day touched by readings (``schemes`` None without any)."""
    if ctx.n == 0 or schemes is None:
        return []
    counts, nth = night_events(ctx, schemes.lden.bounds_ms, len(ctx.candidate_days))
    return day_entries(ctx.candidate_days, ctx.settings, schemes,
                       (counts, nth) if ctx.level("LAFmax") is not None else None)


def day_entries(days: list[date], settings: Settings, schemes: SchemeResults,
                events: tuple[IntArray, FloatArray] | None) -> list[dict[str, Any]]:
    """Day entries from the scheme results of candidate days (shared by ``run`` and archive).

    Parameters
    ----------
    days : list of date
        Candidate days the scheme results are laid out on.
    settings : Settings
        Periods, coverage threshold and night-event settings.
    schemes : SchemeResults
        Lden, Ldn, CNEL and the 16 h / 8 h pair, per candidate day.
    events : (counts, nth highest) or None
        Night LAFmax events per candidate day; None without an LAFmax column.

    Returns
    -------
    list of dict
        One entry per day touched by readings (the ``days`` section of the results).
    """
    lden, ldn, cnel, pair = schemes.lden, schemes.ldn, schemes.cnel, schemes.pair
    periods = settings.periods
    threshold = settings.coverage_threshold
    values = {
        "Lday": lden.level_db[:, 0],
        "Levening": lden.level_db[:, 1],
        "Lnight": lden.level_db[:, 2],
        "Lden": penalised(lden.level_db, periods.lden),
        "Ldn": penalised(ldn.level_db, periods.ldn),
        "CNEL": penalised(cnel.level_db, periods.cnel),
        "LAeq_16h": pair.level_db[:, 0],
        "LAeq_8h": pair.level_db[:, 2],
    }
    lists = {key: db_list(v) for key, v in values.items()}
    cover = {
        "day": lden.coverage[:, 0], "evening": lden.coverage[:, 1], "night": lden.coverage[:, 2],
        "ldn_day": ldn.coverage[:, 0], "ldn_night": ldn.coverage[:, 2],
        "cnel_day": cnel.coverage[:, 0], "cnel_evening": cnel.coverage[:, 1],
        "cnel_night": cnel.coverage[:, 2],
        "laeq_16h": pair.coverage[:, 0], "laeq_8h": pair.coverage[:, 2],
    }

    def enough(coverage: FloatArray, lengths: FloatArray) -> np.ndarray:
        """All periods with a real length have coverage >= threshold."""
        ok = np.where(lengths > 0, np.nan_to_num(coverage, nan=0.0) >= threshold, True)
        return np.all(ok, axis=1)

    sufficient = {
        "Lden": enough(lden.coverage, lden.length_s),
        "Ldn": enough(ldn.coverage, ldn.length_s),
        "CNEL": enough(cnel.coverage, cnel.length_s),
        "Lday": enough(lden.coverage[:, :1], lden.length_s[:, :1]),
        "Levening": enough(lden.coverage[:, 1:2], lden.length_s[:, 1:2]),
        "Lnight": enough(lden.coverage[:, 2:], lden.length_s[:, 2:]),
        "LAeq_16h": enough(pair.coverage[:, :1], pair.length_s[:, :1]),
        "LAeq_8h": enough(pair.coverage[:, 2:], pair.length_s[:, 2:]),
    }
    n_days = len(days)
    has_lafmax = events is not None
    counts, nth = events if events is not None else (
        np.zeros(n_days, dtype=np.int64), np.full(n_days, np.nan))
    night = settings.events
    out: list[dict[str, Any]] = []
    for d in np.flatnonzero(lden.touched):
        entry: dict[str, Any] = {"date": days[d].isoformat()}
        for key, value_list in lists.items():
            entry[key] = value_list[d]
        entry["coverage"] = {key: fraction(c[d]) for key, c in cover.items()}
        entry["period_hours"] = {
            name: round(float(lden.length_s[d, k]) / 3600.0, 4)
            for k, name in enumerate(PERIOD_NAMES)
        }
        entry["sufficient"] = {key: bool(flags[d]) for key, flags in sufficient.items()}
        entry["night_events"] = {
            "threshold_db": float(night.night_lafmax_threshold_db),
            "count": int(counts[d]) if has_lafmax else None,
            "nth_highest_LAFmax": db(nth[d]),
            "n": int(night.nth_highest),
        }
        out.append(entry)
    return out


def period_figures(lden: FloatArray, ldn: FloatArray, periods: Periods) -> dict[str, Any]:
    """Lday, Levening, Lnight, Lden and Ldn of one span from its period levels [dB].

    Parameters
    ----------
    lden, ldn : numpy.ndarray
        Day, evening, night levels of the Lden scheme and day, (evening,) night levels of
        the Ldn scheme over the span. [dB]
    periods : Periods
        The configured period schemes (penalties and hours).
    """
    return {
        "Lday": db(lden[0]),
        "Levening": db(lden[1]),
        "Lnight": db(lden[2]),
        "Lden": db(penalised(lden, periods.lden)),
        "Ldn": db(penalised(ldn, periods.ldn)),
    }


def survey_average_section(ctx: Context, schemes: SchemeResults | None
                           ) -> dict[str, Any] | None:
    """Energy average of all valid time of each period type over the survey, then formulas.

    None without readings (``schemes`` None).
    """
    if ctx.n == 0 or schemes is None:
        return None
    return survey_average_from_schemes(schemes, ctx.settings)


def survey_average_from_schemes(schemes: SchemeResults, settings: Settings) -> dict[str, Any]:
    """Return the ``survey_average`` section from per-day scheme results (or merged parts)."""
    periods = settings.periods
    lden, lden_valid = scheme_average(schemes.lden)
    ldn, _ = scheme_average(schemes.ldn)
    cnel, _ = scheme_average(schemes.cnel)
    pair, _ = scheme_average(schemes.pair)
    return {
        **period_figures(lden, ldn, periods),
        "CNEL": db(penalised(cnel, periods.cnel)),
        "LAeq_16h": db(pair[0]),
        "LAeq_8h": db(pair[2]),
        "valid_s": {name: seconds(lden_valid[k]) for k, name in enumerate(PERIOD_NAMES)},
    }
