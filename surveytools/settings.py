"""Settings: every tunable of a run, with defaults so that no settings file is needed.

A settings file is TOML, validated against ``schemas/settings.schema.json``. Each default
comes from :mod:`surveytools.constants`, where its source is named. Times of day are
``"HH:MM"`` strings in the position's local clock; durations are seconds.
"""

from __future__ import annotations

import difflib
import hashlib
import json
import re
import tomllib
import zoneinfo
from collections.abc import Iterable, Mapping
from dataclasses import asdict, dataclass, field, replace
from datetime import date, datetime, time
from pathlib import Path
from typing import Any

from surveytools import constants as C  # noqa: N812
from surveytools.errors import SettingsError


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
    #: Survey facts a CSV input (which has no Survey sheet) can only get from here. [dB] [m]
    meter_class: int | None = None
    calibration_before_db: float | None = None
    calibration_after_db: float | None = None
    calibrator_level_db: float | None = None
    microphone: str | None = None
    height_m: float | None = None


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
    ``excess_over_background`` / ``rating_level`` (per assessment). ``interval_s`` checks
    LAeq or LAFmax over a longer interval than the reporting one (e.g. LAeq,1h with 15-min
    reporting): a whole multiple of the reporting interval that divides a day.
    """

    indicator: str
    limit_db: float
    period: str = "any"
    name: str | None = None
    position: str | None = None
    interval_s: float | None = None


@dataclass(frozen=True)
class Output:
    """What result workbooks hold."""

    #: Annotated readings are written to the results workbook up to this many rows
    #: (larger logs: exclusion spans only, unless ``--readings`` is given).
    readings_row_limit: int = C.READINGS_ROW_LIMIT
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
        """Return the effective settings as plain JSON-ready data (recorded in results).

        Field names are kept (``reporting_interval_s``, ``column_map`` ...); tuples become
        lists. :func:`settings_from_dict` rebuilds the settings from it.
        """
        return _json_ready(asdict(self))


# --------------------------------------------------------------------------------------
# Loading, validating and writing back
# --------------------------------------------------------------------------------------

#: Schema file (in ``schemas/``) that describes the TOML settings layout.
SETTINGS_SCHEMA = "settings.schema.json"

#: Indicators a criterion may limit.
CRITERION_INDICATORS = (
    "Lday", "Levening", "Lnight", "Lden", "Ldn", "CNEL", "LAeq_16h", "LAeq_8h",
    "LAeq", "LAFmax", "LA90", "rating_level", "excess_over_background",
)
#: Ways per-interval LA90 values combine into one background value.
BACKGROUND_METHODS = ("mode", "median", "mean")
#: Rating-level correction names (``corrections_db`` keys); omitted ones are 0 dB.
CORRECTION_KEYS = ("tonal", "impulsive", "intermittency", "other")

_SECONDS_PER_UNIT = {"ms": 1e-3, "s": 1.0, "min": 60.0, "h": C.SECONDS_PER_HOUR}
_DURATION = re.compile(r"^\s*(\d+(?:\.\d+)?)\s*(ms|s|min|h)\s*$")
_CLOCK_TIME = re.compile(r"^([01]?\d|2[0-3]):([0-5]\d)$")
_LOCAL_DATETIME = re.compile(r"^\d{4}-\d{2}-\d{2}[ T]\d{2}:\d{2}(:\d{2})?$")
_FIXED_OFFSET = re.compile(r"^UTC[+-](0\d|1[0-4]):[0-5]\d$")
_MINUTES_PER_DAY = 24 * 60
_SECONDS_PER_DAY = C.HOURS_PER_DAY * C.SECONDS_PER_HOUR

#: Durations given either as text with a unit or in seconds: (section, key stem).
_DURATION_KEYS = (
    ((), "reporting_interval"),
    (("background",), "reference_interval_day"),
    (("background",), "reference_interval_night"),
    (("exclusions",), "rain_settle"),
)


def _json_ready(value: Any) -> Any:
    """Turn tuples into lists, recursively (dicts and scalars kept)."""
    if isinstance(value, dict):
        return {str(k): _json_ready(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_json_ready(v) for v in value]
    return value


def _drop_none(value: Any) -> Any:
    """Remove ``None`` entries from mappings (TOML has no null), recursively."""
    if isinstance(value, dict):
        return {k: _drop_none(v) for k, v in value.items() if v is not None}
    if isinstance(value, list | tuple):
        return [_drop_none(v) for v in value]
    return value


def _plain_toml(value: Any) -> Any:
    """Turn TOML's native date/time values into the text forms the schema describes.

    ``07:00:00`` (a TOML local time) becomes ``"07:00"``; ``2026-07-03T22:00:00`` (a TOML
    local date-time) becomes ``"2026-07-03 22:00"``. Offset date-times keep their offset so
    that the window check can reject them (windows are local clock times).
    """
    if isinstance(value, dict):
        return {k: _plain_toml(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_plain_toml(v) for v in value]
    if isinstance(value, datetime):
        text = value.isoformat(sep=" ", timespec="seconds")
        return text[:16] + text[19:] if value.second == 0 else text
    if isinstance(value, time):
        return value.strftime("%H:%M" if value.second == 0 else "%H:%M:%S")
    if isinstance(value, date):
        return value.isoformat()
    return value


def _show(value: Any) -> str:
    """Show a found value the way it would be written in the TOML file."""
    if isinstance(value, str):
        return f"'{value}'"
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, list):
        text = json.dumps(value, ensure_ascii=False, default=str)
        return text if len(text) <= 60 else text[:57] + "..."
    return repr(value)


def _key_path(parts: Iterable[Any]) -> str:
    """Return ``periods.lden.day_start`` / ``assessments[1].name`` (arrays counted from 1)."""
    out = ""
    for p in parts:
        if isinstance(p, int):
            out += f"[{p + 1}]"
        else:
            out += f".{p}" if out else str(p)
    return out or "(top level)"


_TYPE_WORDS = {"string": "text", "number": "a number", "integer": "a whole number",
               "boolean": "true or false", "array": "a list", "object": "a table"}


def _schema_problems(data: Mapping[str, Any]) -> list[tuple[str, str]]:
    """Validate against ``settings.schema.json``; return (key path, problem) pairs."""
    from jsonschema import Draft202012Validator

    from surveytools.schema_files import load_schema

    schema = load_schema(SETTINGS_SCHEMA)
    problems: list[tuple[str, str]] = []
    for err in Draft202012Validator(schema).iter_errors(data):
        parts = list(err.absolute_path)
        kw = str(err.validator)
        sub = err.schema if isinstance(err.schema, Mapping) else {}
        expected = sub.get("x-expected")
        if kw == "additionalProperties":
            known = sorted(sub.get("properties", {}))
            for key in sorted(set(err.instance) - set(known)):
                close = difflib.get_close_matches(key, known, n=1)
                hint = f"; did you mean '{close[0]}'?" if close else ""
                problems.append((_key_path([*parts, key]),
                                 f"unknown key{hint} (expected one of: {', '.join(known)})"))
            continue
        if kw == "required":
            for key in err.validator_value:
                if key not in err.instance:
                    problems.append((_key_path([*parts, key]), "missing; this key is required"))
            continue
        found = _show(err.instance)
        if expected:
            text = f"expected {expected}, found {found}"
        elif kw == "type":
            types = err.validator_value if isinstance(err.validator_value, list) \
                else [err.validator_value]
            words = " or ".join(_TYPE_WORDS.get(str(t), str(t)) for t in types)
            text = f"expected {words}, found {found}"
        elif kw == "enum":
            choices = ", ".join(_show(c) for c in err.validator_value)
            text = f"expected one of {choices}, found {found}"
        elif kw in ("minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum"):
            op = {"minimum": ">=", "maximum": "<=", "exclusiveMinimum": ">",
                  "exclusiveMaximum": "<"}[kw]
            text = f"expected a number {op} {err.validator_value}, found {found}"
        elif kw == "minItems":
            text = f"expected at least {err.validator_value} item(s), found {found}"
        elif kw == "maxItems":
            text = f"expected at most {err.validator_value} item(s), found {found}"
        elif kw == "uniqueItems":
            text = f"expected no repeated values, found {found}"
        elif kw == "minLength":
            text = f"expected non-empty text, found {found}"
        else:
            text = err.message
        problems.append((_key_path(parts), text))
    return problems


def _duration_s(value: Any) -> float:
    """Seconds of a schema-valid duration (number of seconds or text with a unit)."""
    if isinstance(value, int | float):
        return float(value)
    m = _DURATION.match(value)
    if m is None:  # pragma: no cover - the schema's pattern is the same
        raise ValueError(value)
    return float(m.group(1)) * _SECONDS_PER_UNIT[m.group(2)]


def _clock_minutes(text: str) -> int:
    m = _CLOCK_TIME.match(text)
    if m is None:  # pragma: no cover - the schema's pattern is the same
        raise ValueError(text)
    return int(m.group(1)) * 60 + int(m.group(2))


def _hhmm_text(text: str) -> str:
    """Normalise ``"7:00"`` to ``"07:00"``."""
    minutes = _clock_minutes(text)
    return f"{minutes // 60:02d}:{minutes % 60:02d}"


def _section(data: Mapping[str, Any], path: tuple[str, ...]) -> Mapping[str, Any]:
    node: Any = data
    for p in path:
        node = node.get(p, {}) if isinstance(node, Mapping) else {}
    return node if isinstance(node, Mapping) else {}


def _valid_time_zone(name: str) -> bool:
    if _FIXED_OFFSET.match(name):
        return True
    try:
        zoneinfo.ZoneInfo(name)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError, OSError):
        return False
    return True


def _parse_window_end(text: str) -> datetime | None:
    if not _LOCAL_DATETIME.match(text):
        return None
    try:
        return datetime.fromisoformat(text)
    except ValueError:
        return None


def _window_text(moment: datetime) -> str:
    return moment.strftime("%Y-%m-%d %H:%M" if moment.second == 0 else "%Y-%m-%d %H:%M:%S")


def _check_scheme(path: str, scheme: PeriodScheme) -> list[tuple[str, str]]:
    """Day < evening <= night within one 24 h cycle that starts at day_start."""
    d = _clock_minutes(scheme.day_start)
    e = (_clock_minutes(scheme.evening_start) - d) % _MINUTES_PER_DAY
    n = (_clock_minutes(scheme.night_start) - d) % _MINUTES_PER_DAY
    if 0 < e <= n:
        return []
    return [(path, "expected day_start < evening_start <= night_start within one 24 h cycle "
                   f"starting at day_start, found day_start '{scheme.day_start}', evening_start "
                   f"'{scheme.evening_start}', night_start '{scheme.night_start}'")]


def _build_scheme(given: Mapping[str, Any], default: PeriodScheme,
                  evening_follows_night: bool) -> PeriodScheme:
    values: dict[str, Any] = {}
    for key in ("day_start", "evening_start", "night_start"):
        if key in given:
            values[key] = _hhmm_text(given[key])
    if evening_follows_night and "evening_start" not in values and "night_start" in values:
        values["evening_start"] = values["night_start"]
    for key in ("evening_penalty_db", "night_penalty_db"):
        if key in given:
            values[key] = float(given[key])
    return replace(default, **values)


def _floats(given: Mapping[str, Any], keys: Iterable[str]) -> dict[str, Any]:
    return {k: float(given[k]) for k in keys if k in given}


def _opt(given: Mapping[str, Any], key: str, convert: Any, target: str | None = None
         ) -> dict[str, Any]:
    """``{target: convert(given[key])}`` when ``key`` is given, else ``{}``."""
    return {target or key: convert(given[key])} if key in given else {}


def _build(data: Mapping[str, Any]) -> tuple[Settings, list[tuple[str, str]]]:
    """Build settings from schema-valid data; return them with the domain-rule problems."""
    problems: list[tuple[str, str]] = []
    base = Settings()

    durations: dict[str, float] = {}
    for section, stem in _DURATION_KEYS:
        node = _section(data, section)
        prefix = ".".join(section) + "." if section else ""
        if stem in node and f"{stem}_s" in node:
            problems.append((prefix + stem, f"give either '{stem}' or '{stem}_s', not both"))
        raw = node.get(stem, node.get(f"{stem}_s"))
        if raw is None:
            continue
        seconds = _duration_s(raw)
        if stem != "rain_settle" and not 0 < seconds <= _SECONDS_PER_DAY:
            problems.append((prefix + (stem if stem in node else f"{stem}_s"),
                             f"expected a duration above 0 and at most 24 h, found {_show(raw)}"))
        durations[stem] = seconds

    p = _section(data, ("periods",))
    periods = Periods(
        lden=_build_scheme(_section(p, ("lden",)), base.periods.lden, False),
        ldn=_build_scheme(_section(p, ("ldn",)), base.periods.ldn, True),
        cnel=_build_scheme(_section(p, ("cnel",)), base.periods.cnel, False),
        laeq16_start=_hhmm_text(p.get("laeq16_start", base.periods.laeq16_start)),
        laeq16_end=_hhmm_text(p.get("laeq16_end", base.periods.laeq16_end)),
    )
    for name in ("lden", "ldn", "cnel"):
        problems += _check_scheme(f"periods.{name}", getattr(periods, name))
    if periods.laeq16_start == periods.laeq16_end:
        problems.append(("periods.laeq16_end", "expected a time different from laeq16_start, "
                                               f"found '{periods.laeq16_end}' for both"))

    b = _section(data, ("background",))
    background = Background(
        reference_interval_day_s=durations.get("reference_interval_day",
                                               base.background.reference_interval_day_s),
        reference_interval_night_s=durations.get("reference_interval_night",
                                                 base.background.reference_interval_night_s),
        day_start=_hhmm_text(b.get("day_start", base.background.day_start)),
        night_start=_hhmm_text(b.get("night_start", base.background.night_start)),
        method=str(b.get("method", base.background.method)),
    )
    if background.day_start == background.night_start:
        problems.append(("background.night_start", "expected a time different from day_start, "
                                                   f"found '{background.night_start}' for both"))

    x = _section(data, ("exclusions",))
    exclusions = replace(
        base.exclusions,
        **_floats(x, ("wind_max_m_s", "rain_max_mm", "level_min_db", "level_max_db")),
        **_opt(durations, "rain_settle", float, "rain_settle_s"),
        **_opt(x, "exclude_overloads", bool),
    )
    if exclusions.level_min_db >= exclusions.level_max_db:
        problems.append(("exclusions.level_max_db",
                         f"expected a level above level_min_db ({exclusions.level_min_db:g}), "
                         f"found {exclusions.level_max_db:g}"))

    c = _section(data, ("calibration",))
    calibration = replace(
        base.calibration,
        **_floats(c, ("drift_limit_db", "nominal_tolerance_db")),
        **_opt(c, "nominal_levels_db", lambda v: tuple(float(x) for x in v)),
        **_opt(c, "on_excess_drift", str),
    )

    s = _section(data, ("survey",))
    survey_changes: dict[str, Any] = {
        k: str(s[k]) for k in ("position", "site", "time_zone", "clock", "timestamps",
                               "microphone") if k in s}
    survey_changes.update({k: float(s[k]) for k in ("calibration_before_db",
                                                    "calibration_after_db",
                                                    "calibrator_level_db", "height_m")
                           if k in s})
    if "meter_class" in s:
        survey_changes["meter_class"] = int(s["meter_class"])
    survey = replace(base.survey, **survey_changes)
    if not _valid_time_zone(survey.time_zone):
        problems.append(("survey.time_zone", "expected an IANA time zone name such as "
                                             "'Europe/Berlin', or 'UTC+hh:mm', found "
                                             f"{_show(survey.time_zone)}"))

    r = _section(data, ("residual",))
    residual = replace(base.residual,
                       **_floats(r, ("no_correction_above_db", "upper_bound_at_or_below_db")))
    if residual.upper_bound_at_or_below_db > residual.no_correction_above_db:
        problems.append(("residual.upper_bound_at_or_below_db",
                         "expected a value at or below no_correction_above_db "
                         f"({residual.no_correction_above_db:g}), found "
                         f"{residual.upper_bound_at_or_below_db:g}"))

    ev = _section(data, ("events",))
    events = replace(base.events, **_floats(ev, ("night_lafmax_threshold_db",)),
                     **_opt(ev, "nth_highest", int))

    o = _section(data, ("output",))
    output = replace(base.output,
                     **_opt(o, "readings_row_limit", int),
                     **_opt(o, "include_readings", bool))

    assessments: list[Assessment] = []
    seen: dict[str, int] = {}
    for i, a in enumerate(data.get("assessments", [])):
        where = f"assessments[{i + 1}]"
        name = str(a["name"])
        if name in seen:
            problems.append((f"{where}.name", f"expected a name not used before, found "
                                              f"'{name}' (also assessments[{seen[name]}])"))
        seen.setdefault(name, i + 1)
        windows: dict[str, list[tuple[str, str]]] = {"source_on": [], "residual": []}
        spans: dict[str, list[tuple[datetime, datetime]]] = {"source_on": [], "residual": []}
        for kind in ("source_on", "residual"):
            for j, (start_text, end_text) in enumerate(a.get(kind, [])):
                wpath = f"{where}.{kind}[{j + 1}]"
                start = _parse_window_end(start_text)
                end = _parse_window_end(end_text)
                for k, (moment, text) in enumerate(((start, start_text), (end, end_text))):
                    if moment is None:
                        problems.append((f"{wpath}[{k + 1}]", "expected a local clock time "
                                         f"'YYYY-MM-DD HH:MM' (no UTC offset), found '{text}'"))
                if start is None or end is None:
                    continue
                if not start < end:
                    problems.append((wpath, f"expected from < to, found from '{start_text}' "
                                            f"and to '{end_text}'"))
                    continue
                windows[kind].append((_window_text(start), _window_text(end)))
                spans[kind].append((start, end))
        use_column = bool(a.get("use_operating_column", False))
        if use_column and (a.get("source_on") or a.get("residual")):
            problems.append((where, "give source_on/residual windows or "
                                    "use_operating_column = true, not both"))
        if not use_column and not a.get("source_on"):
            problems.append((f"{where}.source_on", "missing; give at least one "
                                                   "[from, to] window, or set "
                                                   "use_operating_column = true"))
        for s_on, e_on in spans["source_on"]:
            for s_off, e_off in spans["residual"]:
                if s_on < e_off and s_off < e_on:
                    problems.append((f"{where}.residual", "expected residual windows outside "
                                     f"the source_on windows, found an overlap "
                                     f"{_window_text(max(s_on, s_off))} to "
                                     f"{_window_text(min(e_on, e_off))}"))
        corrections = {k: float(a.get("corrections_db", {}).get(k, 0.0)) for k in CORRECTION_KEYS}
        assessments.append(Assessment(
            name=name, position=str(a["position"]),
            source_on=tuple(windows["source_on"]), residual=tuple(windows["residual"]),
            use_operating_column=use_column, corrections_db=corrections))

    criteria = tuple(
        Criterion(indicator=str(k["indicator"]), limit_db=float(k["limit_db"]),
                  period=str(k.get("period", "any")), name=k.get("name"),
                  position=k.get("position"),
                  interval_s=(_duration_s(k["interval"]) if "interval" in k
                              else None if k.get("interval_s") is None
                              else float(k["interval_s"])))
        for k in data.get("criteria", [])
    )
    for i, k in enumerate(data.get("criteria", []), start=1):
        if "interval" in k and k.get("interval_s") is not None:
            problems.append((f"criteria[{i}].interval",
                             "give the interval once: 'interval' or 'interval_s', not both"))

    problems += _column_map_problems(data.get("columns", {}))

    settings = Settings(
        periods=periods,
        reporting_interval_s=durations.get("reporting_interval", base.reporting_interval_s),
        percentiles=tuple(float(v) for v in data.get("percentiles", base.percentiles)),
        coverage_threshold=float(data.get("coverage_threshold", base.coverage_threshold)),
        background=background,
        exclusions=exclusions,
        calibration=calibration,
        survey=survey,
        residual=residual,
        events=events,
        column_map={str(k): str(v) for k, v in data.get("columns", {}).items()},
        assessments=tuple(assessments),
        criteria=criteria,
        output=output,
    )
    return settings, problems


def _column_map_problems(columns: Mapping[str, str]) -> list[tuple[str, str]]:
    """Each ``[columns]`` target must be a canonical column or Survey key name."""
    from surveytools.inputs.columns import READINGS_COLUMNS, VOCABULARIES, canonical_name

    known = sorted({name for vocabulary in VOCABULARIES.values() for name in vocabulary})
    problems: list[tuple[str, str]] = []
    for header, target in sorted(columns.items()):
        if target in known or canonical_name(target, READINGS_COLUMNS) == target:
            continue  # a vocabulary name, or a one-third-octave band name
        guesses = [g for v in VOCABULARIES.values() if (g := canonical_name(target, v))]
        hint = f"; did you mean '{guesses[0]}'?" if guesses else ""
        problems.append((f"columns.{header}", f"expected a canonical column name (one of "
                                              f"{', '.join(known)}, or a band such as "
                                              f"'LZeq_1000Hz'), found '{target}'{hint}"))
    return problems


def _raise(source: str, problems: list[tuple[str, str]]) -> None:
    unique = sorted(set(problems))
    lines = [f"{source}: {path}: {text}" for path, text in unique]
    if len(lines) == 1:
        raise SettingsError(lines[0])
    raise SettingsError(f"{source}: {len(lines)} problems in the settings:\n" + "\n".join(lines))


def settings_from_mapping(data: Mapping[str, Any], source: str = "settings") -> Settings:
    """Validate a settings mapping in the TOML layout and build :class:`Settings`.

    Parameters
    ----------
    data : mapping
        Parsed TOML (or an equivalent dict); omitted keys keep their defaults. TOML local
        times (``07:00:00``) and local date-times are accepted as well as text. The output
        of :meth:`Settings.to_dict` (a results file's ``settings``) is accepted too: its
        ``column_map`` stands for ``columns`` and ``None`` values for omitted keys.
    source : str
        Name used at the start of every error message (the settings file name).

    Returns
    -------
    Settings
        The effective settings.

    Raises
    ------
    SettingsError
        Listing every problem, one line each: ``source: key.path: expected ..., found ...``.
    """
    if not isinstance(data, Mapping):
        raise SettingsError(f"{source}: expected a table of settings, found {_show(data)}")
    mapping = dict(data)
    if "column_map" in mapping and "columns" not in mapping:  # Settings.to_dict() spelling
        mapping["columns"] = mapping.pop("column_map")
    plain = _plain_toml(_drop_none(mapping))
    problems = _schema_problems(plain)
    if problems:
        _raise(source, problems)
    settings, problems = _build(plain)
    if problems:
        _raise(source, problems)
    return settings


_TOML_POSITION = re.compile(r"\(at line (\d+), column (\d+)\)")


def load_settings(path: str | Path | None) -> Settings:
    """Read, validate and build the settings of a run.

    Parameters
    ----------
    path : str or Path or None
        TOML settings file; ``None`` gives the documented defaults (``Settings()``).

    Returns
    -------
    Settings
        The effective settings.

    Raises
    ------
    SettingsError
        The file cannot be read, is not UTF-8 TOML (line and column named), or breaks the
        schema or a domain rule (every problem listed with its key path).
    """
    if path is None:
        return Settings()
    p = Path(path)
    label = p.name or str(p)
    try:
        raw = p.read_bytes()
    except OSError as exc:
        raise SettingsError(f"{label}: cannot read the settings file ({exc.strerror or exc}); "
                            "check the path given to --settings") from exc
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise SettingsError(f"{label}: expected UTF-8 text, found a byte that is not UTF-8 at "
                            f"offset {exc.start}; save the file as UTF-8") from exc
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        m = _TOML_POSITION.search(msg)
        where = f"line {m.group(1)}, column {m.group(2)}: " if m else ""
        detail = _TOML_POSITION.sub("", msg).strip()
        raise SettingsError(f"{label}: {where}not valid TOML: {detail}") from exc
    return settings_from_mapping(data, label)


def settings_to_mapping(settings: Settings) -> dict[str, Any]:
    """Return ``settings`` in the TOML layout (durations as ``*_s`` seconds, no nulls).

    ``settings_from_mapping(settings_to_mapping(s)) == s`` for every valid ``s``.
    """
    data = settings.to_dict()
    data["columns"] = data.pop("column_map")
    # The *_s duration spellings of to_dict() are part of the TOML layout as they are.
    out: dict[str, Any] = _drop_none(data)
    return out


def settings_from_dict(data: Mapping[str, Any], source: str = "results settings") -> Settings:
    """Rebuild settings from :meth:`Settings.to_dict` output (e.g. a results file's ``settings``).

    Raises
    ------
    SettingsError
        When the recorded settings are not valid (a damaged or foreign results file).
    """
    return settings_from_mapping(data, source)


def settings_sha256(settings: Settings) -> str:
    """Return the SHA-256 hex digest of the canonical JSON of ``settings.to_dict()``."""
    canonical = json.dumps(settings.to_dict(), sort_keys=True, separators=(",", ":"),
                           ensure_ascii=False, allow_nan=False)
    return hashlib.sha256(canonical.encode("utf-8")).hexdigest()
