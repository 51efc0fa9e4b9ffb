"""``[events]``: night maximum-level events (LAFmax threshold, n-th highest)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Any

from surveytools import constants as C  # noqa: N812
from surveytools.settings._parse import Problem, floats, opt


@dataclass(frozen=True)
class Events:
    """Night maximum-level events."""

    night_lafmax_threshold_db: float = C.NIGHT_LAFMAX_THRESHOLD_DB
    nth_highest: int = C.NIGHT_LAFMAX_NTH


def build_events(given: Mapping[str, Any]) -> tuple[Events, list[Problem]]:
    """Build :class:`Events` from the schema-valid ``[events]`` table.

    Returns
    -------
    events : Events
    problems : list of (key path, problem)
        None so far: the schema covers every rule of this section.
    """
    events = replace(Events(), **floats(given, ("night_lafmax_threshold_db",)),
                     **opt(given, "nth_highest", int))
    return events, []
