"""The JSON Schemas shipped with surveytools: find, load and check them.

Imports no settings and no validation code, so that settings, validation and the results
writer can all load their schema from here without an import circle.
"""

from __future__ import annotations

import json
from functools import cache
from importlib import resources
from pathlib import Path
from typing import Any

from jsonschema import Draft202012Validator, FormatChecker
from jsonschema.exceptions import SchemaError

from surveytools.errors import SurveyToolsError


def _schema_dirs() -> list[Path]:
    dirs: list[Path] = []
    try:
        packaged = resources.files("surveytools") / "schemas"
        dirs.append(Path(str(packaged)))
    except (ModuleNotFoundError, TypeError):  # pragma: no cover - surveytools always importable
        pass
    # Editable install / checkout: <repo>/surveytools/schema_files.py -> <repo>/schemas
    dirs.append(Path(__file__).resolve().parents[1] / "schemas")
    return dirs


def schema_path(name: str) -> Path:
    """Return the path of schema file ``name`` (packaged copy first, then the checkout).

    Raises
    ------
    SurveyToolsError
        When the schema cannot be found (a broken installation, not a data problem).
    """
    for d in _schema_dirs():
        p = d / name
        if p.is_file():
            return p
    searched = ", ".join(str(d) for d in _schema_dirs())
    raise SurveyToolsError(f"schema file '{name}' not found (searched {searched}); "
                           "reinstall surveytools")


@cache
def load_schema(name: str) -> dict[str, Any]:
    """Load and check one JSON Schema (draft 2020-12) shipped with surveytools.

    Parameters
    ----------
    name : str
        File name, e.g. ``"survey.schema.json"``.

    Returns
    -------
    dict
        The schema. Cached: do not modify it.

    Raises
    ------
    SurveyToolsError
        Missing file, invalid JSON or a schema that is not valid draft 2020-12.
    """
    path = schema_path(name)
    try:
        schema = json.loads(path.read_text(encoding="utf-8"))
        Draft202012Validator.check_schema(schema)
    except (ValueError, SchemaError) as exc:
        raise SurveyToolsError(f"schema file {path} is not a valid JSON Schema: {exc}") from exc
    if not isinstance(schema, dict):
        raise SurveyToolsError(f"schema file {path} does not hold a JSON object")
    return schema


def assert_format_checker(checker: FormatChecker) -> FormatChecker:
    """Make sure ``checker`` really checks ``date-time`` (needs ``rfc3339-validator``).

    Without that extra, jsonschema silently accepts any string as a date-time.

    Raises
    ------
    SurveyToolsError
        When the date-time check is missing or does not reject an impossible date-time.
    """
    ok = "date-time" in checker.checkers and not checker.conforms(
        "2026-13-40T25:00:00Z", "date-time") and checker.conforms(
        "2026-07-03T22:00:00+02:00", "date-time")
    if not ok:
        raise SurveyToolsError(
            "jsonschema cannot check 'date-time' values: install the 'rfc3339-validator' "
            "package (a dependency of surveytools)")
    return checker


@cache
def validator(name: str) -> Draft202012Validator:
    """Return a draft 2020-12 validator for schema ``name`` with a checked format checker."""
    checker = assert_format_checker(Draft202012Validator.FORMAT_CHECKER)
    return Draft202012Validator(load_schema(name), format_checker=checker)
