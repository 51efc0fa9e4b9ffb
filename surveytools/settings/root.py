"""The whole :class:`Settings` of a run and the top-level builder, one line per section.

A new TOML section is one module in this package (its dataclass and a
``build_<section>(given) -> (value, problems)`` function), one field of :class:`Settings`
and one line in :func:`build_settings`.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import asdict, dataclass, field
from typing import Any, TypeVar

from surveytools import constants as C  # noqa: N812
from surveytools.settings._parse import Problem, json_ready, read_duration, section
from surveytools.settings.assessments import Assessment, build_assessments
from surveytools.settings.background import Background, build_background
from surveytools.settings.calendar import Calendar, build_calendar
from surveytools.settings.calibration import Calibration, build_calibration
from surveytools.settings.columns import build_columns
from surveytools.settings.criteria import Criterion, build_criteria
from surveytools.settings.events import Events, build_events
from surveytools.settings.exclusions import ExclusionRules, build_exclusions
from surveytools.settings.output import Output, build_output
from surveytools.settings.periods import Periods, build_periods
from surveytools.settings.residual import Residual, build_residual
from surveytools.settings.spectral import Spectral, build_spectral
from surveytools.settings.survey import SurveyDefaults, build_survey

_T = TypeVar("_T")


@dataclass(frozen=True)
class Settings:
    """All settings of a run. ``Settings()`` is the documented default."""

    periods: Periods = field(default_factory=Periods)
    reporting_interval_s: float = C.REPORTING_INTERVAL_S
    percentiles: tuple[float, ...] = C.DEFAULT_PERCENTILES
    coverage_threshold: float = C.COVERAGE_THRESHOLD
    background: Background = field(default_factory=Background)
    exclusions: ExclusionRules = field(default_factory=ExclusionRules)
    calibration: Calibration = field(default_factory=Calibration)
    survey: SurveyDefaults = field(default_factory=SurveyDefaults)
    residual: Residual = field(default_factory=Residual)
    events: Events = field(default_factory=Events)
    #: Extra header spellings: header text -> canonical column name (``"Leq" = "LAeq"``).
    column_map: dict[str, str] = field(default_factory=dict)
    assessments: tuple[Assessment, ...] = ()
    criteria: tuple[Criterion, ...] = ()
    calendar: Calendar = field(default_factory=Calendar)
    output: Output = field(default_factory=Output)
    spectral: Spectral = field(default_factory=Spectral)

    def to_dict(self) -> dict[str, Any]:
        """Return the effective settings as plain JSON-ready data (recorded in results).

        Field names are kept (``reporting_interval_s``, ``column_map`` ...); tuples become
        lists. :func:`~surveytools.settings.settings_from_dict` rebuilds the settings from it.
        """
        out: dict[str, Any] = json_ready(asdict(self))
        return out


def build_settings(data: Mapping[str, Any]) -> tuple[Settings, list[Problem]]:
    """Build settings from schema-valid data in the TOML layout.

    Returns
    -------
    settings : Settings
    problems : list of (key path, problem)
        The domain rules the schema cannot express, from every section.
    """
    problems: list[Problem] = []

    def take(built: tuple[_T, list[Problem]]) -> _T:
        value, found = built
        problems.extend(found)
        return value

    base = Settings()
    reporting_interval_s = take(read_duration(data, "reporting_interval", "",
                                              at_least_s=C.MIN_RESULT_INTERVAL_S))
    settings = Settings(
        periods=take(build_periods(section(data, "periods"))),
        reporting_interval_s=(base.reporting_interval_s if reporting_interval_s is None
                              else reporting_interval_s),
        percentiles=tuple(float(v) for v in data.get("percentiles", base.percentiles)),
        coverage_threshold=float(data.get("coverage_threshold", base.coverage_threshold)),
        background=take(build_background(section(data, "background"))),
        exclusions=take(build_exclusions(section(data, "exclusions"))),
        calibration=take(build_calibration(section(data, "calibration"))),
        survey=take(build_survey(section(data, "survey"))),
        residual=take(build_residual(section(data, "residual"))),
        events=take(build_events(section(data, "events"))),
        column_map=take(build_columns(section(data, "columns"))),
        assessments=take(build_assessments(data.get("assessments", []))),
        criteria=take(build_criteria(data.get("criteria", []))),
        calendar=take(build_calendar(section(data, "calendar"))),
        output=take(build_output(section(data, "output"))),
        spectral=take(build_spectral(section(data, "spectral"))),
    )
    return settings, problems
