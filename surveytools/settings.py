"""Settings: every tunable of a run, with defaults so that no settings file is needed.

A settings file is TOML, validated against ``schemas/settings.schema.json``. Each default
comes from :mod:`surveytools.constants`, where its source is named. Times of day are
``"HH:MM"`` strings in the position's local clock; durations are seconds.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from surveytools import constants as C


def _hhmm(hours: float) -> str:
    h = int(hours)
    m = round((hours - h) * 60)
    return f"{h:02d}:{m:02d}"


@dataclass(frozen=True)
class PeriodScheme:
    """Day / evening / night boundaries and penalties of one indicator (Lden, Ldn, CNEL).

    ``evening_start`` equal to ``night_start`` means the scheme has no evening (Ldn).
    """

    day_start: str
    evening_start: str
    night_start: str
    evening_penalty_db: float
    night_penalty_db: float


def _lden() -> PeriodScheme:
    return PeriodScheme(_hhmm(C.LDEN_DAY_START_H), _hhmm(C.LDEN_EVENING_START_H),
                        _hhmm(C.LDEN_NIGHT_START_H), C.LDEN_EVENING_PENALTY_DB,
                        C.LDEN_NIGHT_PENALTY_DB)


def _ldn() -> PeriodScheme:
    return PeriodScheme(_hhmm(C.LDN_DAY_START_H), _hhmm(C.LDN_NIGHT_START_H),
                        _hhmm(C.LDN_NIGHT_START_H), 0.0, C.LDN_NIGHT_PENALTY_DB)


def _cnel() -> PeriodScheme:
    return PeriodScheme(_hhmm(C.CNEL_DAY_START_H), _hhmm(C.CNEL_EVENING_START_H),
                        _hhmm(C.CNEL_NIGHT_START_H), C.CNEL_EVENING_PENALTY_DB,
                        C.CNEL_NIGHT_PENALTY_DB)


@dataclass(frozen=True)
class Periods:
    """Period schemes; the assessment day starts at ``lden.day_start``."""

    lden: PeriodScheme = field(default_factory=_lden)
    ldn: PeriodScheme = field(default_factory=_ldn)
    cnel: PeriodScheme = field(default_factory=_cnel)
    laeq16_start: str = _hhmm(C.LAEQ16_START_H)
    laeq16_end: str = _hhmm(C.LAEQ16_END_H)


@dataclass(frozen=True)
class Background:
    """Background (LA90) settings."""

    reference_interval_day_s: float = C.REFERENCE_INTERVAL_DAY_S
    reference_interval_night_s: float = C.REFERENCE_INTERVAL_NIGHT_S
    day_start: str = _hhmm(C.BS4142_DAY_START_H)
    night_start: str = _hhmm(C.BS4142_NIGHT_START_H)
    #: How per-interval LA90 values combine into one representative value:
    #: "median", "mode" (of whole-dB values) or "mean" (arithmetic).
    method: str = "mode"


@dataclass(frozen=True)
class ExclusionRules:
    """Automatic exclusion limits."""

    wind_max_m_s: float = C.WIND_LIMIT_M_S
    rain_max_mm: float = C.RAIN_LIMIT_MM
    rain_settle_s: float = C.RAIN_SETTLE_S
    level_min_db: float = C.PLAUSIBLE_LEVEL_MIN_DB
    level_max_db: float = C.PLAUSIBLE_LEVEL_MAX_DB
    exclude_overloads: bool = True


@dataclass(frozen=True)
class Calibration:
    """Field calibration checks."""

    drift_limit_db: float = C.CALIBRATION_DRIFT_LIMIT_DB
    nominal_levels_db: tuple[float, ...] = C.CALIBRATOR_NOMINAL_LEVELS_DB
    nominal_tolerance_db: float = C.CALIBRATOR_NOMINAL_TOLERANCE_DB
    #: When drift exceeds the limit: "warn" (figures kept, warning) or "exclude" (every
    #: reading excluded with reason calibration-drift).
    on_excess_drift: str = "warn"


@dataclass(frozen=True)
class SurveyDefaults:
    """Values used when the Survey sheet (or a CSV input) does not give them."""

    position: str | None = None
    site: str | None = None
    time_zone: str = "UTC"
    clock: str = "local"
    #: Whether timestamps mark interval "start" or "end".
    timestamps: str = "start"


@dataclass(frozen=True)
class Residual:
    """Residual-correction thresholds (ISO 1996-2)."""

    no_correction_above_db: float = C.RESIDUAL_NO_CORRECTION_ABOVE_DB
    upper_bound_at_or_below_db: float = C.RESIDUAL_UPPER_BOUND_AT_OR_BELOW_DB


@dataclass(frozen=True)
class Events:
    """Night maximum-level events."""

    night_lafmax_threshold_db: float = C.NIGHT_LAFMAX_THRESHOLD_DB
    nth_highest: int = C.NIGHT_LAFMAX_NTH


@dataclass(frozen=True)
class Assessment:
    """One background-corrected source assessment.

    Windows are ``(from, to)`` local-clock ISO text pairs (``"2026-07-03 22:00"``); when
    ``use_operating_column`` is true the Readings ``Operating`` column chooses instead.
    """

    name: str
    position: str
    source_on: tuple[tuple[str, str], ...] = ()
    residual: tuple[tuple[str, str], ...] = ()
    use_operating_column: bool = False
    corrections_db: dict[str, float] = field(default_factory=dict)


@dataclass(frozen=True)
class Criterion:
    """A limit on one indicator.

    ``indicator``: ``Lday``, ``Levening``, ``Lnight``, ``Lden``, ``Ldn``, ``CNEL``,
    ``LAeq_16h``, ``LAeq_8h`` (per assessment day), ``LAeq`` or ``LAFmax`` per reporting
    interval (``period`` chooses ``day``/``evening``/``night``/``any``), or
    ``excess_over_background`` / ``rating_level`` (per assessment).
    """

    indicator: str
    limit_db: float
    period: str = "any"
    name: str | None = None
    position: str | None = None


@dataclass(frozen=True)
class Output:
    """What result workbooks hold."""

    #: Annotated readings are written to the results workbook up to this many rows
    #: (larger logs: exclusion spans only, unless ``--readings`` is given).
    readings_row_limit: int = 50_000
    include_readings: bool = False


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
    output: Output = field(default_factory=Output)

    def to_dict(self) -> dict[str, Any]:
        """Return the effective settings as plain JSON-ready data (recorded in results)."""
        from dataclasses import asdict

        return asdict(self)
