"""Shared pieces of the section builders: clock times, durations, key paths, found values.

Every section builder receives schema-valid data (``schemas/settings.schema.json`` has
already checked types and patterns), so these helpers only convert; the domain rules that
a schema cannot express live in the section modules and return ``(key path, problem)``
pairs.
"""

from __future__ import annotations

import json
import re
from collections.abc import Callable, Iterable, Mapping
from typing import Any

from surveytools import constants as C  # noqa: N812

#: One problem found in the settings: (key path such as ``periods.lden``, text).
Problem = tuple[str, str]

#: Minutes in a day [min] and seconds in a day [s].
MINUTES_PER_DAY = 24 * 60
SECONDS_PER_DAY = C.HOURS_PER_DAY * C.SECONDS_PER_HOUR

_SECONDS_PER_UNIT = {"ms": 1e-3, "s": 1.0, "min": 60.0, "h": C.SECONDS_PER_HOUR}
_DURATION = re.compile(r"^\s*(\d+(?:\.\d+)?)\s*(ms|s|min|h)\s*$")
_CLOCK_TIME = re.compile(r"^([01]?\d|2[0-3]):([0-5]\d)$")


def hours_text(hours: float) -> str:
    """Return ``"HH:MM"`` for a time of day given in hours [h] (defaults in constants)."""
    h = int(hours)
    m = round((hours - h) * 60)
    return f"{h:02d}:{m:02d}"


def clock_minutes(text: str) -> int:
    """Return minutes after midnight [min] of a schema-valid ``"H:MM"``/``"HH:MM"`` time."""
    m = _CLOCK_TIME.match(text)
    if m is None:  # pragma: no cover - the schema's pattern is the same
        raise ValueError(text)
    return int(m.group(1)) * 60 + int(m.group(2))


def clock_text(text: str) -> str:
    """Normalise ``"7:00"`` to ``"07:00"``."""
    minutes = clock_minutes(text)
    return f"{minutes // 60:02d}:{minutes % 60:02d}"


def duration_s(value: Any) -> float:
    """Seconds [s] of a schema-valid duration (number of seconds or text with a unit)."""
    if isinstance(value, int | float):
        return float(value)
    m = _DURATION.match(value)
    if m is None:  # pragma: no cover - the schema's pattern is the same
        raise ValueError(value)
    return float(m.group(1)) * _SECONDS_PER_UNIT[m.group(2)]


def read_duration(node: Mapping[str, Any], stem: str, where: str, *,
                  at_most_a_day: bool = True, at_least_s: float = 0.0
                  ) -> tuple[float | None, list[Problem]]:
    """Read a duration given as ``stem`` (text with a unit) or ``stem_s`` (seconds).

    Parameters
    ----------
    node : mapping
        The section (or the top level) that may hold the key.
    stem : str
        Key name without ``_s`` (``"reporting_interval"``).
    where : str
        Key path of ``node`` (``"background"``; ``""`` for the top level).
    at_most_a_day : bool
        Whether the duration must be above 0 and at most 24 h.
    at_least_s : float
        Shortest duration accepted [s] (a results grid's step: ``MIN_RESULT_INTERVAL_S``).

    Returns
    -------
    seconds : float or None
        The duration [s], or ``None`` when neither spelling is given.
    problems : list of (key path, problem)
    """
    prefix = f"{where}." if where else ""
    problems: list[Problem] = []
    if stem in node and f"{stem}_s" in node:
        problems.append((prefix + stem, f"give either '{stem}' or '{stem}_s', not both"))
    raw = node.get(stem, node.get(f"{stem}_s"))
    if raw is None:
        return None, problems
    seconds = duration_s(raw)
    key = prefix + (stem if stem in node else f"{stem}_s")
    if at_most_a_day and not 0 < seconds <= SECONDS_PER_DAY:
        problems.append((key, f"expected a duration above 0 and at most 24 h, found {show(raw)}"))
    elif seconds < at_least_s:
        problems.append((key, f"expected a duration of at least {at_least_s:g} s (results "
                              f"for shorter intervals would make millions of rows), found "
                              f"{show(raw)}"))
    return seconds, problems


def section(data: Mapping[str, Any], *path: str) -> Mapping[str, Any]:
    """Return the table at ``path`` (``section(data, "periods", "lden")``), or ``{}``."""
    node: Any = data
    for p in path:
        node = node.get(p, {}) if isinstance(node, Mapping) else {}
    return node if isinstance(node, Mapping) else {}


def floats(given: Mapping[str, Any], keys: Iterable[str]) -> dict[str, Any]:
    """``{key: float(given[key])}`` for each of ``keys`` that is given."""
    return {k: float(given[k]) for k in keys if k in given}


def opt(given: Mapping[str, Any], key: str, convert: Callable[[Any], Any],
        target: str | None = None) -> dict[str, Any]:
    """``{target: convert(given[key])}`` when ``key`` is given, else ``{}``."""
    return {target or key: convert(given[key])} if key in given else {}


def show(value: Any) -> str:
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


def key_path(parts: Iterable[Any]) -> str:
    """Return ``periods.lden.day_start`` / ``assessments[1].name`` (arrays counted from 1)."""
    out = ""
    for p in parts:
        if isinstance(p, int):
            out += f"[{p + 1}]"
        else:
            out += f".{p}" if out else str(p)
    return out or "(top level)"


def drop_none(value: Any) -> Any:
    """Remove ``None`` entries from mappings (TOML has no null), recursively."""
    if isinstance(value, dict):
        return {k: drop_none(v) for k, v in value.items() if v is not None}
    if isinstance(value, list | tuple):
        return [drop_none(v) for v in value]
    return value


def json_ready(value: Any) -> Any:
    """Turn tuples into lists, recursively (dicts and scalars kept)."""
    if isinstance(value, dict):
        return {str(k): json_ready(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [json_ready(v) for v in value]
    return value
