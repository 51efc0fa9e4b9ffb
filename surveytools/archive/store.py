"""The archive on disk: a Parquet dataset of readings and the ingest records.

Layout under the archive folder::

    ingest.json                                  one record per input ever added
    readings/position=<P>/month=<YYYY-MM>/<input>.parquet

``<P>`` is the position name percent-encoded (any character is safe in a folder name);
``month`` is the UTC month of each reading's start. Each input writes one file per
position-month it covers, named after its SHA-256 and the settings hash, so a file is
owned by exactly one ingest record. Columns of a readings file:

=================== ========= ================================================================
column              type      meaning
=================== ========= ================================================================
``start_ms``        int64     interval start, UTC, milliseconds since 1970-01-01
``duration_ms``     int64     interval length [ms]
``row``             int64     row number in the input (as a person sees it)
``LAeq`` ...        float64   every level column of the input, canonical names [dB]
``exclusion``       string    ``"; "``-joined exclusion reasons, empty when used
``valid``           bool      counts for every figure (not excluded, finite LAeq)
``valid_background`` bool     counts for background figures too
=================== ========= ================================================================
"""

from __future__ import annotations

import json
import os
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Any
from urllib.parse import quote, unquote

from surveytools.errors import SurveyToolsError
from surveytools.outputs.atomic import atomic_write_text

#: Version of the archive layout (``ingest.json`` ``layout_version``).
LAYOUT_VERSION = 1
RECORDS_FILE = "ingest.json"
READINGS_DIR = "readings"
LOCK_FILE = ".archive.lock"
#: Where ``archive add`` workers write files before they are moved into place.
STAGING_DIR = ".staging"
#: Columns every readings file has besides the level columns.
BASE_COLUMNS = ("start_ms", "duration_ms", "row", "exclusion", "valid", "valid_background")


class ArchiveError(SurveyToolsError):
    """The archive folder cannot be used (not an archive, unreadable records, locked)."""


@dataclass
class IngestRecord:
    """What adding one input did.

    ``status``: ``"stored"`` (its readings are in the archive), ``"replaced"`` (a later
    input covered all of its rows), ``"unreadable"`` (the input could not be read) or
    ``"failed"`` (read, but nothing could be stored: no position, no readings).
    """

    file: str
    path: str
    sha256: str
    settings_sha256: str
    status: str
    ingested_at: str
    position: str | None = None
    time_zone: str | None = None
    clock: str | None = None
    rows: int = 0
    first: str | None = None
    last: str | None = None
    first_ms: int | None = None
    last_ms: int | None = None
    findings: dict[str, int] = field(default_factory=dict)
    finding_counts: dict[str, int] = field(default_factory=dict)
    message: str | None = None
    files: list[str] = field(default_factory=list)
    rows_replaced: int = 0
    replaced_by: list[str] = field(default_factory=list)
    weather_file: str | None = None
    weather_sha256: str | None = None

    @property
    def key(self) -> tuple[str, str, str | None]:
        """What makes two ingests the same: input, settings and shared weather file."""
        return (self.sha256, self.settings_sha256, self.weather_sha256)

    @property
    def file_stem(self) -> str:
        """Name of this ingest's readings files in each partition (without ``.parquet``)."""
        stem = f"{self.sha256[:20]}-{self.settings_sha256[:8]}"
        return f"{stem}-w{self.weather_sha256[:8]}" if self.weather_sha256 else stem

    def to_json(self) -> dict[str, Any]:
        """Return a JSON-ready dict."""
        return asdict(self)

    @classmethod
    def from_json(cls, data: dict[str, Any]) -> IngestRecord:
        """Rebuild a record from :meth:`to_json` output (unknown keys are ignored)."""
        known = {k: v for k, v in data.items() if k in cls.__dataclass_fields__}
        return cls(**known)


def position_folder(position: str) -> str:
    """Partition folder name of a position (percent-encoded, hive style)."""
    return f"position={quote(position, safe='')}"


def position_of_folder(name: str) -> str:
    """Position named by a partition folder (inverse of :func:`position_folder`)."""
    return unquote(name.partition("=")[2])


def part_path(position: str, month: str, record: IngestRecord) -> str:
    """Relative path of one input's readings file in one position-month partition."""
    return f"{READINGS_DIR}/{position_folder(position)}/month={month}/{record.file_stem}.parquet"


def load_records(root: Path) -> list[IngestRecord]:
    """Read the ingest records of an archive folder (empty for a new archive).

    Raises
    ------
    ArchiveError
        If the records file is not one this tool wrote.
    """
    path = root / RECORDS_FILE
    if not path.exists():
        return []
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
        if data.get("layout_version") != LAYOUT_VERSION:
            raise ValueError("layout version")
        return [IngestRecord.from_json(item) for item in data["inputs"]]
    except (OSError, ValueError, KeyError, TypeError, AttributeError) as exc:
        raise ArchiveError(
            f"{path}: not an archive record file written by surveytools (layout version "
            f"{LAYOUT_VERSION}); give an empty folder or an existing archive") from exc


def save_records(root: Path, records: list[IngestRecord]) -> None:
    """Write the ingest records atomically."""
    doc = {"layout_version": LAYOUT_VERSION, "inputs": [r.to_json() for r in records]}
    atomic_write_text(root / RECORDS_FILE, json.dumps(doc, indent=1, sort_keys=True) + "\n")


@contextmanager
def locked(root: Path) -> Iterator[None]:
    """Hold the archive's lock: one ``archive add`` at a time.

    Raises
    ------
    ArchiveError
        If another process holds it.
    """
    import fcntl

    root.mkdir(parents=True, exist_ok=True)
    fd = os.open(root / LOCK_FILE, os.O_RDWR | os.O_CREAT, 0o644)
    try:
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except OSError as exc:
            raise ArchiveError(f"{root}: another 'archive add' is writing to this archive; "
                               "wait for it to finish") from exc
        yield
    finally:
        os.close(fd)
