"""The Episodes sheet and the Summary's short list of episodes.

An episode is a run of consecutive judged figures of one criterion whose reported level
is above the criterion's warning level (or its limit); the results document holds them
per criterion (``criteria[i].episodes``). This module only formats them.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from surveytools.outputs.xlsx_style import SheetWriter

#: Name of the sheet.
SHEET_EPISODES = "Episodes"
#: Episodes listed on the Summary (the rest are on the Episodes sheet).
SUMMARY_EPISODES = 5

_HEADERS = ["Criterion", "Severity", "From", "To", "UTC offset", "Figures", "Highest [dB]",
            "Warning level [dB]", "Limit [dB]"]


def all_episodes(doc: Mapping[str, Any]) -> list[tuple[Mapping[str, Any], Mapping[str, Any]]]:
    """Return (criterion, episode) pairs of every criterion, in time order of the episodes."""
    pairs = [(c, e) for c in doc.get("criteria") or [] for e in c.get("episodes") or []]
    return sorted(pairs, key=lambda pair: str(pair[1].get("start")))


def _label(criterion: Mapping[str, Any]) -> str:
    return str(criterion.get("name") or criterion.get("indicator"))


def write_summary_episodes(sw: SheetWriter, doc: Mapping[str, Any], row: int) -> int:
    """Write the Summary's episode lines from ``row``; return the next free row."""
    pairs = all_episodes(doc)
    if not any(c.get("episodes") is not None for c in doc.get("criteria") or []):
        return row
    sw.text(row, 0, "Episodes (above a warning level or limit)", "subtitle", measure=False)
    row += 1
    if not pairs:
        sw.text(row, 0, "none", "note", measure=False)
        return row + 2
    n_limit = sum(1 for _, e in pairs if e.get("severity") == "limit")
    sw.text(row, 0, f"{len(pairs)} episodes, {n_limit} above a limit", "fail" if n_limit
            else "text", measure=False)
    row += 1
    sw.header(row, 0, ["Criterion", "Severity", "From", "To", "Figures", "Highest [dB]"])
    row += 1
    for criterion, episode in pairs[:SUMMARY_EPISODES]:
        limit = episode.get("severity") == "limit"
        sw.text(row, 0, _label(criterion), measure=False)
        sw.text(row, 1, episode.get("severity"), "fail" if limit else "sev_warning",
                measure=False)
        sw.stamp(row, 2, episode.get("start"))
        sw.stamp(row, 3, episode.get("end"))
        sw.number(row, 4, episode.get("intervals"), "int")
        sw.number(row, 5, episode.get("max_db"), "level")
        row += 1
    if len(pairs) > SUMMARY_EPISODES:
        sw.text(row, 0, f"... and {len(pairs) - SUMMARY_EPISODES} more: see the "
                        f"{SHEET_EPISODES} sheet", "note", measure=False)
        row += 1
    return row + 1


def write_episodes_sheet(sw: SheetWriter, doc: Mapping[str, Any]) -> None:
    """Write every episode of every criterion, one row each."""
    ws = sw.ws
    sw.text(0, 0, "Runs of consecutive judged figures above a criterion's warning level (or "
                  "its limit); severity 'limit' when any figure is above the limit. Times "
                  "are the position's local clock.", "note", measure=False)
    sw.header(1, 0, _HEADERS)
    ws.freeze_panes(2, 0)
    pairs = all_episodes(doc)
    for i, (criterion, episode) in enumerate(pairs):
        r = 2 + i
        limit = episode.get("severity") == "limit"
        sw.text(r, 0, _label(criterion))
        sw.text(r, 1, episode.get("severity"), "fail" if limit else "sev_warning")
        offset = sw.stamp(r, 2, episode.get("start"))
        sw.stamp(r, 3, episode.get("end"))
        sw.text(r, 4, offset)
        sw.number(r, 5, episode.get("intervals"), "int")
        sw.number(r, 6, episode.get("max_db"), "level")
        sw.number(r, 7, criterion.get("warning_db"), "level")
        sw.number(r, 8, criterion.get("limit_db"), "level")
    if pairs:
        ws.autofilter(1, 0, 1 + len(pairs), len(_HEADERS) - 1)
    else:
        sw.text(2, 0, "No episodes.", "note", measure=False)
    sw.fit_columns(minimum=8.0)
