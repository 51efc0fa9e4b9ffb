"""``surveytools verify``: recompute a results file from its recorded input and settings.

QA re-runs a validation by pointing ``verify`` at a ``*.results.json``. The input is hashed
and compared with the recorded SHA-256, the settings are rebuilt from the recorded
effective settings, the whole document is recomputed, and every figure and finding is
compared exactly. Library versions (provenance) are compared too, but a difference there is
only reported as a note: the figures decide.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any, TextIO

from surveytools.errors import SurveyToolsError, os_reason

#: Keys that may legitimately differ between the recorded and the recomputed document.
NOT_COMPARED = {("input", "path"), ("provenance",), ("weather_file", "path")}


#: Keys that name an entry of a list in the results, in order of preference, with the
#: word the reader knows it by (a day by its date, an interval by its start ...).
_ENTRY_NAMES = (("date", "day"), ("start", "interval from"), ("name", ""),
                ("code", "finding"), ("row", "row"))


def _entry_label(section: str, index: int, entry: Any) -> str:
    """Name one list entry as a person would: ``day 2026-06-01``, ``interval from ...``."""
    if isinstance(entry, dict):
        if section == "findings" and "code" in entry:
            cell = ""
            if entry.get("sheet"):
                cell = f" at {entry['sheet']}"
                if entry.get("column") or entry.get("row"):
                    cell += f"!{entry.get('column') or ''}{entry.get('row') or ''}"
            return f"finding {entry['code']}{cell}"
        for key, word in _ENTRY_NAMES:
            if entry.get(key) not in (None, ""):
                value = entry[key]
                return f"{word} {value}".strip() if word else f"'{value}'"
    return f"entry {index + 1}"


def _where(labels: tuple[str, ...]) -> str:
    """Return the place of a difference: section words, entries by their names."""
    return " > ".join(labels) if labels else "(document)"


def differences(recorded: Any, recomputed: Any, path: tuple[str, ...] = (),
                labels: tuple[str, ...] = ()) -> list[str]:
    """Return human-readable differences between two JSON values (exact comparison).

    Places are named as a reader of the results knows them: ``days > day 2026-06-01 >
    Lden``, ``intervals > interval from 2026-06-01 07:00 > LAeq``, ``findings > finding
    level-range at Readings!C5`` rather than by list positions.
    """
    if path in NOT_COMPARED:
        return []
    where = _where(labels)
    if isinstance(recorded, dict) and isinstance(recomputed, dict):
        out: list[str] = []
        for key in sorted(set(recorded) | set(recomputed)):
            if key not in recomputed:
                out.append(f"{where} > {key}: recorded but not produced any more")
            elif key not in recorded:
                out.append(f"{where} > {key}: produced now but not recorded")
            else:
                out.extend(differences(recorded[key], recomputed[key], (*path, str(key)),
                                       (*labels, str(key))))
        return out
    if isinstance(recorded, list) and isinstance(recomputed, list):
        if len(recorded) != len(recomputed):
            return [f"{where}: {len(recorded)} entries recorded, {len(recomputed)} recomputed"]
        out = []
        section = path[-1] if path else ""
        for i, (a, b) in enumerate(zip(recorded, recomputed, strict=True)):
            label = _entry_label(section, i, a)
            out.extend(differences(a, b, (*path, str(i)), (*labels, label)))
        return out
    if recorded != recomputed or type(recorded) is not type(recomputed):
        return [f"{where}: recorded {_shown(recorded)}, recomputed {_shown(recomputed)}"]
    return []


#: Characters of a value quoted in a difference; a longer one is described instead.
_SHOWN_MAX_CHARS = 120


def _shown(value: Any) -> str:
    """Return a value as a difference line shows it: in full when short, else its size."""
    text = repr(value)
    if len(text) <= _SHOWN_MAX_CHARS:
        return text
    if isinstance(value, dict):
        return f"a section of {len(value)} keys ({', '.join(sorted(map(str, value))[:6])}...)"
    if isinstance(value, list):
        return f"a list of {len(value)} entries"
    return text[:_SHOWN_MAX_CHARS - 3] + "..."


def verify_results(results_path: Path, input_path: Path | None = None
                   ) -> tuple[list[str], list[str]]:
    """Recompute ``results_path``; return (differences, notes).

    Raises
    ------
    SurveyToolsError
        When the results file cannot be read or the input cannot be found (exit 2).
    """
    from surveytools.pipeline import build_document, source_info
    from surveytools.settings import settings_from_mapping

    try:
        recorded = json.loads(results_path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise SurveyToolsError(f"{results_path}: cannot be read ({os_reason(exc)}); "
                               "check the path") from exc
    except json.JSONDecodeError as exc:
        raise SurveyToolsError(f"{results_path}: not a results file (not JSON at line "
                               f"{exc.lineno}, column {exc.colno})") from exc
    except ValueError as exc:  # not UTF-8 text
        raise SurveyToolsError(f"{results_path}: not a results file (not UTF-8 text)") from exc
    if not isinstance(recorded, dict) or "input" not in recorded or "settings" not in recorded:
        raise SurveyToolsError(f"{results_path}: not a surveytools results file (no input or "
                               "settings recorded)")
    source_path = input_path or Path(recorded["input"].get("path") or "")
    if not source_path.is_file():
        raise SurveyToolsError(f"{results_path}: the recorded input {source_path} is not there; "
                               "give it with --input FILE")
    settings = settings_from_mapping(recorded["settings"], f"{results_path.name}: settings")
    source = source_info(source_path)
    diffs: list[str] = []
    notes: list[str] = []
    if source.sha256 != recorded["input"].get("sha256"):
        diffs.append(f"input > sha256: recorded {recorded['input'].get('sha256')}, the file now "
                     f"has {source.sha256} (the input was changed or is a different file)")
    weather = None
    shared = recorded.get("weather_file")
    if isinstance(shared, dict):  # the run used a shared weather file (--weather)
        from surveytools.pipeline import load_weather

        weather_path = Path(str(shared.get("path") or ""))
        if not weather_path.is_file():
            raise SurveyToolsError(f"{results_path}: the recorded weather file {weather_path} "
                                   "is not there; put it back to verify these results")
        weather = load_weather(str(weather_path), settings)
        now = weather.record().get("sha256")
        if now != shared.get("sha256"):
            diffs.append(f"weather_file > sha256: recorded {shared.get('sha256')}, the file now "
                         f"has {now} (the weather file was changed)")
    recomputed, _ = build_document(source_path, settings, source, weather=weather)
    diffs.extend(d for d in differences(recorded, recomputed)
                 if not d.startswith(("input > sha256", "weather_file > sha256")))
    if recorded.get("provenance") != recomputed.get("provenance"):
        notes.append("library versions differ from the recorded run (see provenance); the "
                     "figures were compared exactly all the same")
    return diffs, notes


def execute_verify(results_path: Path, input_path: Path | None, fmt: str, out: TextIO) -> int:
    """Run ``verify`` and report; return 0 when identical, 1 when anything differs."""
    diffs, notes = verify_results(results_path, input_path)
    if fmt == "json":
        out.write(json.dumps({"results": str(results_path), "identical": not diffs,
                              "differences": diffs, "notes": notes}, indent=1) + "\n")
    else:
        for n in notes:
            out.write(f"note: {n}\n")
        if diffs:
            out.write(f"{results_path.name}: {len(diffs)} difference(s) found:\n")
            for d in diffs[:200]:
                out.write(f"  {d}\n")
            if len(diffs) > 200:
                out.write(f"  ... and {len(diffs) - 200} more\n")
        else:
            out.write(f"{results_path.name}: verified - recomputing from the input and the "
                      "recorded settings gives identical results\n")
    return 1 if diffs else 0
