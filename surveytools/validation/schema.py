"""JSON Schema loading, and validation of the Survey key/value sheet with located findings.

Schemas live in the repository's top-level ``schemas/`` folder and are shipped inside the
wheel as ``surveytools/schemas`` (see ``pyproject.toml``). :func:`load_schema` finds them in
either place. Every jsonschema error is turned into a :class:`Finding` located at the
Survey sheet's value cell (``survey-<keyword>`` codes); jsonschema accepts NaN as a number,
so a finite check is added on top.
"""

from __future__ import annotations

import math
import re
import zoneinfo
from collections.abc import Mapping
from dataclasses import dataclass
from datetime import date, datetime, time
from typing import Any

from jsonschema.exceptions import ValidationError

from surveytools.inputs.raw import KeyValue, KeyValueSheet
from surveytools.schema_files import load_schema, validator
from surveytools.settings import SurveyDefaults
from surveytools.validation.findings import Finding, FindingCollector, Severity

SURVEY_SCHEMA = "survey.schema.json"

#: Keys of the Survey schema whose value is a number.
_NUMBER_KEYS = ("calibration_before_db", "calibration_after_db", "calibrator_level_db",
                "height_m", "meter_class")
#: Keys filled from ``settings.survey`` when the sheet does not give them.
_DEFAULT_KEYS = ("position", "site", "time_zone", "clock", "meter_class",
                 "calibration_before_db", "calibration_after_db", "calibrator_level_db",
                 "microphone", "height_m")

_FIXED_OFFSET = re.compile(r"^UTC[+-]\d{2}:\d{2}$")


# --------------------------------------------------------------------------------------
# The Survey sheet
# --------------------------------------------------------------------------------------


@dataclass(frozen=True)
class _Origin:
    """Where a metadata value came from: a sheet cell, or the settings."""

    entry: KeyValue | None
    sheet: str | None


def _plain(value: Any) -> Any:
    """Turn a cell value into a plain JSON value (dates to ISO text, strings stripped)."""
    if isinstance(value, str):
        v = value.strip()
        return v if v else None
    if isinstance(value, datetime | date | time):
        return value.isoformat()
    if isinstance(value, bool) or value is None:
        return value
    if isinstance(value, int):
        return value
    if isinstance(value, float):
        return value
    return str(value)


def _normalise(key: str, value: Any) -> Any:
    """Case-tolerant spelling of enumerated text (``Local`` -> ``local``, ``utc`` -> ``UTC``)."""
    if not isinstance(value, str):
        return value
    if key == "clock":
        low = value.lower().replace(" ", "")
        if low == "local":
            return "local"
        if low.startswith("utc"):
            return "UTC" + value.replace(" ", "")[3:]
    if key == "time_zone" and value.replace(" ", "").lower().startswith("utc") \
            and "/" not in value:
        return "UTC" + value.replace(" ", "")[3:]
    if key == "microphone":
        return value.lower().replace(" ", "-").replace("_", "-")
    return value


def _describe(value: Any) -> str:
    if isinstance(value, str):
        return f"text '{value}'"
    if isinstance(value, bool):
        return f"the yes/no value {value}"
    return f"{value!r}"


def _expected_type(t: Any) -> str:
    names = {"string": "text", "number": "a number", "integer": "a whole number",
             "boolean": "yes/no", "object": "key/value pairs"}
    if isinstance(t, list):
        return " or ".join(names.get(x, str(x)) for x in t)
    return names.get(str(t), str(t))


def _kebab(keyword: str) -> str:
    return re.sub(r"(?<!^)(?=[A-Z])", "-", keyword).lower()


def _message(err: ValidationError, label: str, schema: Mapping[str, Any],
             has_sheet: bool = True) -> str:
    kw = str(err.validator)
    found = _describe(err.instance)
    if kw == "required":
        missing = re.findall(r"'([^']+)' is a required property", err.message)
        prop = missing[0] if missing else "?"
        title = schema.get("properties", {}).get(prop, {}).get("title", prop)
        if not has_sheet:  # a CSV or Parquet log (or a workbook without a Survey sheet)
            return (f"'{title}' is required but missing — this input has no Survey sheet, "
                    f"so set {prop} in the [survey] table of the settings file (--settings)")
        return (f"'{title}' is required but missing — add a '{title}' row to the Survey sheet "
                f"(or set {prop} in the [survey] table of the settings file)")
    if kw == "type":
        return (f"{label}: expected {_expected_type(err.validator_value)}, found {found} — "
                "enter the value in that form")
    if kw == "enum":
        choices = ", ".join(repr(c) for c in err.validator_value)
        return f"{label}: expected one of {choices}, found {found} — enter one of them"
    if kw == "minimum":
        return (f"{label}: {found} is below the plausible minimum {err.validator_value} — "
                "check the value and its unit")
    if kw == "maximum":
        return (f"{label}: {found} is above the plausible maximum {err.validator_value} — "
                "check the value and its unit")
    if kw == "pattern":
        desc = err.schema.get("description", "") if isinstance(err.schema, dict) else ""
        return f"{label}: {found} is not in the expected form ({desc}) — correct the spelling"
    if kw in ("minLength", "maxLength"):
        return f"{label}: {found} has the wrong length ({err.message}) — shorten or fill it"
    return f"{label}: {err.message} — correct the value"


def validate_survey(
    sheet: KeyValueSheet | None,
    canonical_keys: Mapping[int, str],
    defaults: SurveyDefaults,
    collector: FindingCollector,
) -> tuple[dict[str, Any], dict[str, tuple[str | None, int | None, str | None]]]:
    """Validate the Survey sheet against ``survey.schema.json``; return canonical metadata.

    Parameters
    ----------
    sheet : KeyValueSheet or None
        The Survey sheet as read.
    canonical_keys : mapping of int to str
        Index into ``sheet.entries`` -> canonical key (``position``, ``clock`` ...); entries
        not in the mapping are kept as extra text keys under their written key.
    defaults : SurveyDefaults
        ``settings.survey``: fills missing (or invalid) keys, with an info finding.
    collector : FindingCollector
        Receives every finding, located at the Survey sheet's value cells.

    Returns
    -------
    metadata : dict
        Canonical metadata; invalid values are left out (or replaced by the default).
    locations : dict
        Canonical key -> (sheet, row, value column) of the cell it came from.
    """
    sheet_name = sheet.sheet if sheet is not None else None
    schema = load_schema(SURVEY_SCHEMA)
    props: Mapping[str, Any] = schema.get("properties", {})
    instance: dict[str, Any] = {}
    origin: dict[str, _Origin] = {}
    if sheet is not None:
        for i, entry in enumerate(sheet.entries):
            key = canonical_keys.get(i)
            value = _plain(entry.value)
            if key is None:
                key = entry.key.strip()
                if not key or value is None:
                    continue
                value = value if isinstance(value, str) else str(value)
            elif value is None:
                continue
            if key in instance:
                first = origin[key].entry
                collector.add(Finding(
                    "survey-key-duplicate", Severity.WARNING,
                    f"'{entry.key}' appears again (first in row {first.row if first else '?'});"
                    " the first value is used — delete one of the rows",
                    sheet_name, entry.row, entry.key_column))
                continue
            instance[key] = _normalise(key, value)
            origin[key] = _Origin(entry, sheet_name)

    from_settings: list[str] = []  # without a Survey sheet: told once, in one finding

    def fill_default(key: str, why: str = "not given on the Survey sheet") -> None:
        default = getattr(defaults, key, None)
        if default is None:
            return
        instance[key] = default
        origin[key] = _Origin(None, None)
        title = props.get(key, {}).get("title", key)
        if sheet is None:
            from_settings.append(f"{title} {default!r}")
            return
        collector.add(Finding(
            "survey-default-used", Severity.INFO,
            f"'{title}' {why}; the settings value {default!r} is used",
            sheet_name))

    for key in _DEFAULT_KEYS:
        if key not in instance:
            fill_default(key)
    if from_settings:
        collector.add(Finding(
            "survey-default-used", Severity.INFO,
            "this input has no Survey sheet; its survey facts come from the settings: "
            + ", ".join(from_settings), sheet_name))

    rejected: set[str] = set()
    errors = sorted(validator(SURVEY_SCHEMA).iter_errors(instance),
                    key=lambda e: (list(map(str, e.path)), str(e.validator)))
    for err in errors:
        key = str(err.path[0]) if err.path else None
        where = origin.get(key) if key is not None else None
        src = where.entry if where else None
        label = src.key if src is not None else (
            props.get(key, {}).get("title", key) if key else "Survey")
        if src is None and key is not None:
            label = f"{label} (settings value)"
        collector.add(Finding(
            f"survey-{_kebab(str(err.validator))}", Severity.ERROR,
            _message(err, label, schema, has_sheet=sheet is not None),
            sheet_name if (src is not None or key is None) else None,
            src.row if src is not None else None,
            src.value_column if src is not None else None))
        if key is not None:
            rejected.add(key)

    for key, value in instance.items():
        if isinstance(value, float) and not math.isfinite(value) and key not in rejected:
            src = origin[key].entry
            collector.add(Finding(
                "survey-not-finite", Severity.ERROR,
                f"{src.key if src else key}: expected a finite number, found {value!r} — "
                "enter a number", sheet_name if src else None,
                src.row if src else None, src.value_column if src else None))
            rejected.add(key)
    tz = instance.get("time_zone")
    if isinstance(tz, str) and "time_zone" not in rejected and tz != "UTC" \
            and not _FIXED_OFFSET.match(tz):
        try:
            zoneinfo.ZoneInfo(tz)
        except (zoneinfo.ZoneInfoNotFoundError, ValueError, OSError):
            # OSError: a name too long for a path in the zone database
            src = origin["time_zone"].entry
            shown = tz if len(tz) <= 60 else tz[:57] + "..."
            collector.add(Finding(
                "survey-time-zone-unknown", Severity.ERROR,
                f"{src.key if src else 'Time zone'}: '{shown}' is not a known IANA time zone "
                "— use a name such as Europe/Berlin or a fixed offset such as UTC+01:00",
                sheet_name if src else None, src.row if src else None,
                src.value_column if src else None))
            rejected.add("time_zone")

    for key in rejected:
        instance.pop(key, None)
        if key in _DEFAULT_KEYS and origin[key].entry is not None:
            fill_default(key, "on the Survey sheet is not usable")
    mc = instance.get("meter_class")
    if isinstance(mc, float):
        instance["meter_class"] = int(mc)
    locations: dict[str, tuple[str | None, int | None, str | None]] = {
        k: (o.sheet, o.entry.row, o.entry.value_column)
                 for k, o in origin.items() if o.entry is not None and k in instance}
    return instance, locations
