"""The assessment engine: Survey + Settings -> the computed sections of the results.

Input: a :class:`~surveytools.survey.Survey` and :class:`~surveytools.settings.Settings`.

Time runs on UTC epoch milliseconds (validation converted the readings with the meter's
``clock``); the site's civil time (Survey ``time_zone``, with its summer time, whatever
the meter's clock) turns wall-clock period boundaries into instants per calendar day
(:mod:`surveytools.assessment.timegrid`). Every figure averages valid time only
(``Survey.valid_mask``); readings straddling a boundary are split in proportion.
Sections: :mod:`~.intervals` (overall, intervals), :mod:`~.daily` (days, survey
average), :mod:`~.background`, :mod:`~.sources` (assessments), :mod:`~.spectral`
(one-third-octave band levels), :mod:`~.criteria`,
:mod:`~.spans` (coverage, exclusion spans, survey metadata, reading annotations).
"""

from __future__ import annotations

from typing import Any

from surveytools.assessment.background import (
    background_section,
    reference_bounds,
    reference_la90,
)
from surveytools.assessment.context import build_context
from surveytools.assessment.criteria import criteria_section
from surveytools.assessment.daily import (
    all_scheme_times,
    assess_schemes,
    days_section,
    survey_average_section,
)
from surveytools.assessment.intervals import interval_bounds, intervals_section, overall_section
from surveytools.assessment.schedule import parse_holidays
from surveytools.assessment.sources import assessments_section
from surveytools.assessment.spans import (
    coverage_section,
    exclusion_spans_section,
    reading_annotations,
    survey_section,
    unplaced_section,
)
from surveytools.assessment.spectral import spectral_section
from surveytools.assessment.timegrid import (
    day_offset_boundaries,
    format_local,
    position_tz,
    site_tz,
)
from surveytools.settings import Settings
from surveytools.survey import Survey

__all__ = ["assess", "format_local", "position_tz", "reading_annotations", "site_tz"]


def assess(survey: Survey, settings: Settings) -> dict[str, Any]:
    """Compute the results sections of one survey.

    Parameters
    ----------
    survey : Survey
        Validated readings of one position.
    settings : Settings
        Effective settings.

    Returns
    -------
    dict
        JSON-ready sections ``survey``, ``coverage``, ``overall``, ``intervals``,
        ``intervals_basis``, ``days``, ``survey_average``, ``background``,
        ``assessments``, ``criteria``, ``spectral``, ``exclusion_spans``, ``unplaced``
        (see results_spec.md); no NaN: what cannot be computed is None. Findings of the
        assessment itself (``band-total-mismatch``) are added to ``survey.findings`` and
        ``survey.finding_counts``.

    Raises
    ------
    SettingsError
        If a setting cannot be applied (unknown criterion indicator, unreadable window).

    References
    ----------
    .. [1] design.md §5 (computation rules).
    """
    ctx = build_context(survey, settings)
    if ctx.n:
        grids = [interval_bounds(ctx), reference_bounds(ctx)[0]]
        grids += [day_offset_boundaries(ctx.candidate_days, times, ctx.tz)
                  for times in all_scheme_times(ctx)]
        ctx = ctx.with_shared_split(grids)
    intervals, intervals_basis = intervals_section(ctx)
    schemes = assess_schemes(ctx) if ctx.n else None
    days = days_section(ctx, schemes)
    reference = reference_la90(ctx) if ctx.n else None
    background = background_section(ctx, reference)
    assessments = assessments_section(ctx, reference)
    spectral, spectral_findings = spectral_section(ctx)
    for finding in spectral_findings:
        survey.findings.append(finding)
        survey.finding_counts[finding.code] = survey.finding_counts.get(finding.code, 0) + 1
    # unrounded interval LAeq for criteria over longer intervals (LAeq,1h): judged once
    # from unrounded values (design.md §9), not from the JSON levels
    summed = (ctx.grouped_laeq(interval_bounds(ctx))
              if ctx.n and any(c.interval_s is not None for c in settings.criteria) else None)
    criteria = criteria_section(
        settings.criteria, survey.metadata.get("position"), days, intervals, assessments,
        settings.percentiles, settings.reporting_interval_s, settings.coverage_threshold,
        tz=ctx.tz, periods=settings.periods,
        holidays=parse_holidays(settings.calendar.holidays),
        interval_laeq=None if summed is None else summed[0].tolist(),
    )
    return {
        "survey": survey_section(survey),
        "coverage": coverage_section(ctx),
        "overall": overall_section(ctx) if ctx.n else None,
        "intervals": intervals,
        "intervals_basis": intervals_basis,
        "days": days,
        "survey_average": survey_average_section(ctx, schemes),
        "background": background,
        "assessments": assessments,
        "criteria": criteria,
        "spectral": spectral,
        "exclusion_spans": exclusion_spans_section(ctx),
        "unplaced": unplaced_section(survey),
    }
