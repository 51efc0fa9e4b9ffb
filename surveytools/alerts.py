"""Alerts: each criterion episode told once, in an append-only ledger in the output folder.

Every run reads the episodes of the results it has just written and appends each episode
it finds for the first time to ``OUT/alerts.jsonl`` — one JSON object per line with
``position``, ``criterion``, ``severity``, ``start``, ``end``, ``max_db``, ``limit_db``,
``warning_db`` and ``input``. An episode is identified by (position, criterion, start):
it is alerted once, plus once more if an episode alerted as a warning later becomes a
limit episode (the data grew while being watched).

The ledger is only ever appended to: the new lines of a run are written with one
``write`` on a file opened in append mode, under an exclusive lock (two runs on the same
folder cannot interleave or alert twice), and flushed to disk. A torn last line (a crash
mid-write) is ignored on reading and the next append starts on a fresh line.

``--on-alert PROGRAM`` runs PROGRAM (split like a command line, never through a shell)
once per new alert line with that line on standard input, with a time limit; a program
that fails, is missing or overruns is reported and never stops the batch or the watch.

Standard library only (and the small surveytools.errors): this runs in the batch's parent
process.
"""

from __future__ import annotations

import json
import os
import shlex
import subprocess
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any

from surveytools.errors import os_reason

#: Name of the ledger in the output folder.
ALERTS_NAME = "alerts.jsonl"
#: Default time limit for one run of the ``--on-alert`` program [s]. Own choice: long
#: enough to send a message, short enough not to stall a watch.
ON_ALERT_TIMEOUT_S = 30.0
#: Characters of a failing program's error output quoted in the report.
_ERROR_TEXT_CHARS = 300
#: Severity order (a warning episode may become a limit episode, never the reverse).
_RANK = {"warning": 0, "limit": 1}


@dataclass(frozen=True)
class Alert:
    """One line of the ledger: a criterion episode, first seen (or escalated) in this run."""

    position: str
    criterion: str
    severity: str
    start: str
    end: str
    max_db: float
    limit_db: float
    warning_db: float | None
    input: str

    @property
    def key(self) -> tuple[str, str, str]:
        """Identity of the episode: (position, criterion, start)."""
        return (self.position, self.criterion, self.start)

    def line(self) -> str:
        """Return the ledger line (compact JSON, keys in a fixed order, no newline)."""
        return json.dumps(asdict(self), ensure_ascii=False, separators=(", ", ": "))

    def describe(self) -> str:
        """Return one line for a person: where, what, when and how loud."""
        level = (f"limit {self.limit_db:g} dB" if self.severity == "limit" or
                 self.warning_db is None else f"warning level {self.warning_db:g} dB")
        return (f"ALERT {self.severity}: {self.position} - {self.criterion}: "
                f"{self.start} to {self.end}, up to {self.max_db:.1f} dB (above the "
                f"{level}) [{self.input}]")


def episodes_of(doc: dict[str, Any], input_name: str | None = None) -> list[Alert]:
    """Every episode of a results document, as alert candidates.

    The position is the Survey sheet's position, else the input's file name.
    """
    survey = doc.get("survey") or {}
    source = doc.get("input") or {}
    name = input_name or str(source.get("file") or "")
    position = str(survey.get("position") or name)
    out: list[Alert] = []
    for criterion in doc.get("criteria") or []:
        label = str(criterion.get("name") or criterion.get("indicator"))
        for episode in criterion.get("episodes") or []:
            out.append(Alert(position=position, criterion=label,
                             severity=str(episode["severity"]), start=str(episode["start"]),
                             end=str(episode["end"]), max_db=float(episode["max_db"]),
                             limit_db=float(criterion["limit_db"]),
                             warning_db=(None if criterion.get("warning_db") is None
                                         else float(criterion["warning_db"])),
                             input=name))
    return out


def _ledger_state(text: str) -> dict[tuple[str, str, str], int]:
    """Highest severity alerted so far per episode key (torn or foreign lines skipped)."""
    seen: dict[tuple[str, str, str], int] = {}
    for raw in text.splitlines():
        try:
            item = json.loads(raw)
            key = (str(item["position"]), str(item["criterion"]), str(item["start"]))
            rank = _RANK[str(item["severity"])]
        except (ValueError, KeyError, TypeError):
            continue
        seen[key] = max(seen.get(key, -1), rank)
    return seen


def new_alerts(ledger_text: str, candidates: Iterable[Alert]) -> list[Alert]:
    """Candidates not alerted before, or alerted as a warning and now a limit episode."""
    seen = _ledger_state(ledger_text)
    out: list[Alert] = []
    for alert in candidates:
        rank = _RANK.get(alert.severity, 0)
        if seen.get(alert.key, -1) >= rank:
            continue
        seen[alert.key] = rank
        out.append(alert)
    return out


@contextmanager
def _locked_append(path: Path) -> Iterator[int]:
    """Open ``path`` for appending (created if missing) under an exclusive lock."""
    fd = os.open(path, os.O_RDWR | os.O_APPEND | os.O_CREAT, 0o644)
    try:
        try:
            import fcntl
        except ImportError:  # not POSIX: no lock, appends stay whole lines
            fcntl = None  # type: ignore[assignment]
        if fcntl is not None:
            fcntl.flock(fd, fcntl.LOCK_EX)
        yield fd
    finally:
        os.close(fd)  # closing releases the lock


def _read_all(fd: int) -> str:
    chunks = []
    position = 0
    while True:
        chunk = os.pread(fd, 1 << 20, position)
        if not chunk:
            break
        chunks.append(chunk)
        position += len(chunk)
    return b"".join(chunks).decode("utf-8", errors="replace")


def record_alerts(out_dir: Path, candidates: Iterable[Alert]) -> list[Alert]:
    """Append the new alerts among ``candidates`` to ``out_dir/alerts.jsonl``; return them.

    Reading the ledger, choosing what is new and appending happen under one exclusive
    lock, in one ``write``, so concurrent runs never alert an episode twice.
    """
    wanted = list(candidates)
    if not wanted:
        return []
    path = out_dir / ALERTS_NAME
    with _locked_append(path) as fd:
        text = _read_all(fd)
        fresh = new_alerts(text, wanted)
        if fresh:
            lead = "\n" if text and not text.endswith("\n") else ""  # after a torn line
            payload = lead + "".join(alert.line() + "\n" for alert in fresh)
            data = payload.encode("utf-8")
            written = 0
            while written < len(data):
                written += os.write(fd, data[written:])
            os.fsync(fd)
    return fresh


def alerts_from_results(out_dir: Path, results_names: Iterable[str]) -> list[Alert]:
    """Alert candidates of results JSON files in ``out_dir`` (unreadable ones skipped)."""
    out: list[Alert] = []
    for name in results_names:
        try:
            doc = json.loads((out_dir / name).read_text(encoding="utf-8"))
        except (OSError, ValueError):
            continue  # the batch reports a results file it could not write
        if isinstance(doc, dict):
            out.extend(episodes_of(doc))
    return out


def split_program(text: str) -> list[str]:
    """Split an ``--on-alert`` value into program and arguments (no shell involved).

    Raises
    ------
    ValueError
        If the text is empty or its quoting is unbalanced.
    """
    try:
        argv = shlex.split(text)
    except ValueError as exc:
        raise ValueError(f"--on-alert {text!r}: {exc}; quote the program path once") from exc
    if not argv:
        raise ValueError("--on-alert needs a program to run")
    return argv


def run_on_alert(argv: list[str], alert: Alert, timeout_s: float = ON_ALERT_TIMEOUT_S
                 ) -> str | None:
    """Run the alert program once with the alert's JSON line on standard input.

    Returns
    -------
    str or None
        None when the program ran and exited with 0; else what went wrong, in our words.
    """
    name = Path(argv[0]).name
    where = f"{alert.position} / {alert.criterion} from {alert.start}"
    try:
        done = subprocess.run(argv, input=(alert.line() + "\n").encode("utf-8"),
                              stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                              timeout=timeout_s, check=False, shell=False)
    except subprocess.TimeoutExpired:
        return (f"alert program {name} did not finish within {timeout_s:g} s for {where}; "
                "it was stopped — make it return sooner or raise --on-alert-timeout")
    except OSError as exc:
        return (f"alert program {name} could not be started for {where} "
                f"({os_reason(exc)}) — check the path and that it is "
                "executable")
    if done.returncode != 0:
        said = done.stderr.decode("utf-8", errors="replace").strip()[:_ERROR_TEXT_CHARS]
        return (f"alert program {name} failed (exit code {done.returncode}) for {where}"
                + (f": {said}" if said else ""))
    return None
