"""Schema problems of a settings mapping, as (key path, problem) pairs in our own words.

The settings are checked against ``schemas/settings.schema.json`` (loaded through
:mod:`surveytools.schema_files`) before any section is built; each validator error becomes
one ``expected ..., found ...`` line naming its key path.
"""

from __future__ import annotations

import difflib
from collections.abc import Mapping
from typing import Any

from surveytools.settings._parse import Problem, key_path, show

#: Schema file (in ``schemas/``) that describes the TOML settings layout.
SETTINGS_SCHEMA = "settings.schema.json"

_TYPE_WORDS = {"string": "text", "number": "a number", "integer": "a whole number",
               "boolean": "true or false", "array": "a list", "object": "a table"}
_COMPARISONS = {"minimum": ">=", "maximum": "<=", "exclusiveMinimum": ">",
                "exclusiveMaximum": "<"}


def schema_problems(data: Mapping[str, Any]) -> list[Problem]:
    """Validate against ``settings.schema.json``; return (key path, problem) pairs."""
    # Imported here: jsonschema is only needed when a settings file is given.
    from jsonschema import Draft202012Validator

    from surveytools.schema_files import load_schema

    schema = load_schema(SETTINGS_SCHEMA)
    problems: list[Problem] = []
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
                problems.append((key_path([*parts, key]),
                                 f"unknown key{hint} (expected one of: {', '.join(known)})"))
            continue
        if kw == "required":
            for key in err.validator_value:
                if key not in err.instance:
                    problems.append((key_path([*parts, key]), "missing; this key is required"))
            continue
        found = show(err.instance)
        if expected:
            text = f"expected {expected}, found {found}"
        elif kw == "type":
            types = err.validator_value if isinstance(err.validator_value, list) \
                else [err.validator_value]
            words = " or ".join(_TYPE_WORDS.get(str(t), str(t)) for t in types)
            text = f"expected {words}, found {found}"
        elif kw == "enum":
            choices = ", ".join(show(c) for c in err.validator_value)
            text = f"expected one of {choices}, found {found}"
        elif kw in _COMPARISONS:
            text = f"expected a number {_COMPARISONS[kw]} {err.validator_value}, found {found}"
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
        problems.append((key_path(parts), text))
    return problems
