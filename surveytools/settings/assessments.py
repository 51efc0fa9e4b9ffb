"""``[[assessments]]``: background-corrected source assessments (windows or Operating column)."""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from datetime import datetime
from typing import Any

from surveytools.settings._parse import Problem

#: Rating-level correction names (``corrections_db`` keys); omitted ones are 0 dB.
CORRECTION_KEYS = ("tonal", "impulsive", "intermittency", "other")
#: Ways a correction can be derived instead of given: ``tonal = "one-third-octave"``
#: derives the tonal correction from the band levels (BS 4142:2014+A1:2019, one-third-octave
#: method; see ``surveytools.assessment.spectral``).
DERIVED_CORRECTIONS = {"tonal": ("one-third-octave",)}

_LOCAL_DATETIME = re.compile(r"^\d{4}-\d{2}-\d{2}[ T]\d{2}:\d{2}(:\d{2})?$")


@dataclass(frozen=True)
class Assessment:
    """One background-corrected source assessment.

    Windows are ``(from, to)`` local-clock ISO text pairs (``"2026-07-03 22:00"``); when
    ``use_operating_column`` is true the Readings ``Operating`` column chooses instead.
    ``corrections_db`` holds a number [dB] per correction, or for ``tonal`` the name of the
    method that derives it (``"one-third-octave"``).
    """

    name: str
    position: str
    source_on: tuple[tuple[str, str], ...] = ()
    residual: tuple[tuple[str, str], ...] = ()
    use_operating_column: bool = False
    corrections_db: dict[str, float | str] = field(default_factory=dict)

    @property
    def tonal_method(self) -> str | None:
        """Method deriving the tonal correction, None when the settings give it."""
        value = self.corrections_db.get("tonal")
        return value if isinstance(value, str) else None

    def given_correction_db(self, name: str) -> float:
        """Return a given correction [dB]; 0 when omitted or derived."""
        value = self.corrections_db.get(name, 0.0)
        return 0.0 if isinstance(value, str) else float(value)


def _parse_window_end(text: str) -> datetime | None:
    if not _LOCAL_DATETIME.match(text):
        return None
    try:
        return datetime.fromisoformat(text)
    except ValueError:
        return None


def _window_text(moment: datetime) -> str:
    return moment.strftime("%Y-%m-%d %H:%M" if moment.second == 0 else "%Y-%m-%d %H:%M:%S")


def _build_one(a: Mapping[str, Any], where: str) -> tuple[Assessment, list[Problem]]:
    problems: list[Problem] = []
    windows: dict[str, list[tuple[str, str]]] = {"source_on": [], "residual": []}
    spans: dict[str, list[tuple[datetime, datetime]]] = {"source_on": [], "residual": []}
    for kind in ("source_on", "residual"):
        for j, (start_text, end_text) in enumerate(a.get(kind, [])):
            wpath = f"{where}.{kind}[{j + 1}]"
            start = _parse_window_end(start_text)
            end = _parse_window_end(end_text)
            for k, (moment, text) in enumerate(((start, start_text), (end, end_text))):
                if moment is None:
                    problems.append((f"{wpath}[{k + 1}]", "expected a site civil time "
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
    given = a.get("corrections_db", {})
    corrections: dict[str, float | str] = {
        k: (given[k] if isinstance(given.get(k), str) else float(given.get(k, 0.0)))
        for k in CORRECTION_KEYS}
    assessment = Assessment(
        name=str(a["name"]), position=str(a["position"]),
        source_on=tuple(windows["source_on"]), residual=tuple(windows["residual"]),
        use_operating_column=use_column, corrections_db=corrections)
    return assessment, problems


def build_assessments(given: Sequence[Mapping[str, Any]]
                      ) -> tuple[tuple[Assessment, ...], list[Problem]]:
    """Build the assessments from the schema-valid ``[[assessments]]`` array.

    Returns
    -------
    assessments : tuple of Assessment
    problems : list of (key path, problem)
        Repeated names; window ends that are not local clock times or not in order;
        windows and the Operating column both given, or neither; residual windows that
        overlap source-on windows.
    """
    assessments: list[Assessment] = []
    problems: list[Problem] = []
    seen: dict[str, int] = {}
    for i, a in enumerate(given):
        where = f"assessments[{i + 1}]"
        name = str(a["name"])
        if name in seen:
            problems.append((f"{where}.name", f"expected a name not used before, found "
                                              f"'{name}' (also assessments[{seen[name]}])"))
        seen.setdefault(name, i + 1)
        assessment, found = _build_one(a, where)
        assessments.append(assessment)
        problems += found
    return tuple(assessments), problems
