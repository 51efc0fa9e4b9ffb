"""``archive report``: long-term figures of every position, computed on Dask.

Each position-month partition of the archive is one task: a worker reads its files,
rebuilds the readings as a :class:`~surveytools.survey.Survey` with the exclusions stored
at ingest, and computes its :class:`~surveytools.assessment.parts.PositionParts` with the
assessment's own functions. The client merges the parts of each position as they arrive
(``+``) and builds the figures (:mod:`surveytools.archive.figures`).

By default the tasks run on an embedded local cluster (``workers`` worker processes on
127.0.0.1, one thread each, a memory limit per worker, no dashboard); with ``scheduler``
they run on an existing Dask cluster, whose workers must reach the archive under the same
path or URL (a shared folder, or an fsspec URL such as ``s3://bucket/archive`` when that
filesystem's package is installed on the client and on every worker).
"""

from __future__ import annotations

import logging
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from datetime import date, datetime, timedelta
from typing import Any

from surveytools.archive.store import LAYOUT_VERSION, RECORDS_FILE, ArchiveError, IngestRecord
from surveytools.archive.window import DateWindow
from surveytools.assessment.parts import PositionParts
from surveytools.settings import Settings

#: Schema version of ``archive-report.json``.
REPORT_SCHEMA_VERSION = "1.0"
#: Memory limit of each embedded worker (own choice: a position-month at 1 s, about
#: 2.7 million readings, is assessed in well under this; see the README benchmark).
DEFAULT_WORKER_MEMORY = "2GiB"
#: Stored columns the figures do not need (not read by the report's tasks).
UNUSED_COLUMNS = ("exclusion", "row")
#: Seconds to wait for a named scheduler to answer (own choice).
SCHEDULER_TIMEOUT_S = 30


@dataclass(frozen=True)
class PartitionTask:
    """One position-month partition: its files and the position's clock."""

    position: str
    month: str
    files: tuple[str, ...]
    clock: str | None
    time_zone: str | None


@dataclass(frozen=True)
class ReportOptions:
    """What ``archive report`` was asked for."""

    archive: str
    settings: Settings
    window: DateWindow = field(default_factory=DateWindow)
    positions: tuple[str, ...] = ()
    workers: int = 2
    scheduler: str | None = None
    memory_limit: str = DEFAULT_WORKER_MEMORY


def _filesystem(archive: str) -> tuple[Any, str]:
    """Return the fsspec filesystem and root path of an archive folder or URL.

    Raises
    ------
    ArchiveError
        If the URL's filesystem package is not installed.
    """
    from fsspec.core import url_to_fs  # type: ignore[import-untyped]

    try:
        fs, root = url_to_fs(archive)
    except (ImportError, ValueError) as exc:
        raise ArchiveError(
            f"{archive}: no filesystem for this URL ({exc}); install the fsspec package "
            "for it (for example s3fs for s3://) on this machine and on every worker"
        ) from exc
    return fs, str(root).rstrip("/")


def read_records(archive: str) -> list[IngestRecord]:
    """Ingest records of an archive folder or URL.

    Raises
    ------
    ArchiveError
        If there is no archive there.
    """
    import json

    fs, root = _filesystem(archive)
    path = f"{root}/{RECORDS_FILE}"
    try:
        with fs.open(path, "rb") as handle:
            data = json.loads(handle.read().decode("utf-8"))
        if data.get("layout_version") != LAYOUT_VERSION:
            raise ValueError("layout version")
        return [IngestRecord.from_json(item) for item in data["inputs"]]
    except FileNotFoundError as exc:
        raise ArchiveError(f"{archive}: no archive here ({RECORDS_FILE} is missing); create "
                           "one with 'surveytools archive add PATH --archive DIR'") from exc
    except (OSError, ValueError, KeyError, TypeError, AttributeError) as exc:
        raise ArchiveError(f"{archive}: {RECORDS_FILE} is not an archive record file "
                           "written by surveytools") from exc


def _month_may_hold(month: str, window: DateWindow) -> bool:
    """Whether a UTC month partition can hold readings of the window's days (±2 days)."""
    year, mon = (int(x) for x in month.split("-"))
    first = date(year, mon, 1)
    last = date(year + mon // 12, mon % 12 + 1, 1)
    margin = timedelta(days=2)
    return ((window.first is None or last + margin >= window.first)
            and (window.last is None or first - margin <= window.last))


def partition_tasks(archive: str, records: list[IngestRecord], options: ReportOptions
                    ) -> tuple[list[PartitionTask], list[str]]:
    """Tasks of the partitions to read, and cautions about the positions' clocks."""
    _, root = _filesystem(archive)
    stored = [r for r in records if r.status == "stored" and r.position is not None]
    wanted = set(options.positions)
    files: dict[tuple[str, str], list[str]] = {}
    clocks: dict[str, list[tuple[str | None, str | None]]] = {}
    for record in stored:
        assert record.position is not None
        if wanted and record.position not in wanted:
            continue
        clocks.setdefault(record.position, []).append((record.clock, record.time_zone))
        for rel in record.files:
            month = rel.split("/month=")[1].split("/")[0]
            if _month_may_hold(month, options.window):
                files.setdefault((record.position, month), []).append(f"{root}/{rel}")
    cautions = []
    for position, seen in sorted(clocks.items()):
        if len(set(seen)) > 1:
            named = sorted({f"{c or 'local'} / {z or 'UTC'}" for c, z in seen})
            cautions.append(
                f"position {position}: its inputs name different clocks or time zones "
                f"({', '.join(named)}); periods follow the last input added")
    tasks = [PartitionTask(position, month, tuple(sorted(paths)), *clocks[position][-1])
             for (position, month), paths in sorted(files.items())]
    return tasks, cautions


def _read_partition(task: PartitionTask) -> Any:
    """Return the partition's readings as one pandas DataFrame sorted by start."""
    import pandas as pd
    import pyarrow.parquet as pq
    from fsspec.core import url_to_fs

    frames = []
    for path in task.files:
        fs, local = url_to_fs(path)
        with fs.open(local, "rb") as handle:
            # one thread per task: the workers are the parallelism (no oversubscription);
            # the reason text and row numbers are for people, not for the figures
            parquet = pq.ParquetFile(handle)
            wanted = [c for c in parquet.schema_arrow.names if c not in UNUSED_COLUMNS]
            table = parquet.read(columns=wanted, use_threads=False)
            frames.append(table.to_pandas(use_threads=False))
    frame = pd.concat(frames, ignore_index=True) if len(frames) > 1 else frames[0]
    return frame.sort_values("start_ms", kind="stable").reset_index(drop=True)


def partition_parts(task: PartitionTask, settings: Settings, window: DateWindow
                    ) -> PositionParts | None:
    """Parts of one partition (runs on a Dask worker)."""
    import numpy as np

    from surveytools.assessment.context import build_context
    from surveytools.assessment.parts import position_parts
    from surveytools.assessment.timegrid import site_tz
    from surveytools.provenance import SourceInfo
    from surveytools.survey import Exclusion, Survey

    metadata: dict[str, object] = {"position": task.position, "clock": task.clock,
                                   "time_zone": task.time_zone}
    tz = site_tz(metadata)
    frame = _read_partition(task)
    low, high = window.instants_ms(settings.periods.lden.day_start, tz)
    start = frame["start_ms"].to_numpy(dtype=np.int64)
    keep = np.ones(start.size, dtype=bool)
    if low is not None:
        keep &= start >= low
    if high is not None:
        keep &= start < high
    if not keep.all():
        frame = frame[keep].reset_index(drop=True)
    if len(frame) == 0:
        return None
    valid = frame["valid"].to_numpy(dtype=bool)
    background = frame["valid_background"].to_numpy(dtype=bool)
    exclusions = [Exclusion("stored", "excluded at ingest", "all", ~valid),
                  Exclusion("stored-background", "excluded from background at ingest",
                            "background", valid & ~background)]
    levels = [c for c in frame.columns if c not in ("start_ms", "duration_ms", "valid",
                                                   "valid_background")]
    survey = Survey(SourceInfo(task.files[0], task.month, "", 0), metadata, frame,
                    dict.fromkeys(levels, ""), exclusions=exclusions)
    return position_parts(build_context(survey, settings))


@contextmanager
def dask_client(options: ReportOptions) -> Iterator[Any]:
    """Yield a Dask client: on the named scheduler, or on an embedded local cluster.

    Raises
    ------
    ArchiveError
        If the named scheduler does not answer.
    """
    from distributed import Client, LocalCluster

    if options.scheduler:
        try:
            client = Client(options.scheduler, timeout=SCHEDULER_TIMEOUT_S)
        except (OSError, TimeoutError) as exc:
            raise ArchiveError(
                f"no Dask scheduler answered at {options.scheduler} within "
                f"{SCHEDULER_TIMEOUT_S} s; start one ('dask scheduler') or leave out "
                "--scheduler to use a local cluster") from exc
        try:
            yield client
        finally:
            client.close()
        return
    try:
        cluster = LocalCluster(n_workers=options.workers, threads_per_worker=1,
                               processes=True, memory_limit=options.memory_limit,
                               host="127.0.0.1", dashboard_address=None,
                               silence_logs=logging.CRITICAL)
    except (RuntimeError, OSError, TimeoutError, ValueError) as exc:
        raise ArchiveError(
            f"the local Dask cluster could not start ({type(exc).__name__}: "
            f"{str(exc)[:200]}); check --workers and --memory-limit, or name a running "
            "cluster with --scheduler") from exc
    try:
        client = Client(cluster)
        try:
            yield client
        finally:
            client.close()
    finally:
        cluster.close()


def _peak_rss_mib() -> float:
    """Peak resident memory of this process [MiB] (run on each worker)."""
    import resource
    import sys

    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return peak / (1 << 20) if sys.platform == "darwin" else peak / 1024


def compute_parts(tasks: list[PartitionTask], options: ReportOptions,
                  progress: Callable[[int, int], None] | None = None,
                  usage: dict[str, float] | None = None,
                  ) -> tuple[dict[str, PositionParts], list[str]]:
    """Run the partition tasks on Dask and merge the parts per position.

    Returns the merged parts and one problem line per partition that failed; ``usage``
    (when given) receives ``peak_worker_rss_mib``, the highest peak memory of a worker.
    """
    from distributed import as_completed

    merged: dict[str, PositionParts] = {}
    problems: list[str] = []
    if not tasks:
        return merged, problems
    with dask_client(options) as client:
        futures = client.map(partition_parts, tasks, settings=options.settings,
                             window=options.window, pure=False)
        which = {future.key: task for future, task in zip(futures, tasks, strict=True)}
        for done, future in enumerate(as_completed(futures), start=1):
            task = which[future.key]
            try:
                parts = future.result()
            except Exception as exc:  # a damaged partition is reported, the rest go on
                problems.append(f"position {task.position}, month {task.month}: could not "
                                f"be read ({type(exc).__name__}: {str(exc)[:200]})")
                parts = None
            future.release()
            if parts is not None:
                before = merged.get(task.position)
                merged[task.position] = parts if before is None else before + parts
            if progress is not None:
                progress(done, len(tasks))
        if usage is not None:
            peaks = client.run(_peak_rss_mib)
            usage["peak_worker_rss_mib"] = round(max(peaks.values(), default=0.0), 1)
    return merged, problems


def build_report(options: ReportOptions,
                 progress: Callable[[int, int], None] | None = None) -> dict[str, Any]:
    """Compute the archive report document (``archive-report.json``).

    Raises
    ------
    ArchiveError
        If the archive cannot be read or the scheduler does not answer.
    """
    from surveytools import __version__
    from surveytools.archive.figures import position_section
    from surveytools.assessment.timegrid import site_tz
    from surveytools.outputs.xlsx_style import cautions_lines

    records = read_records(options.archive)
    tasks, cautions = partition_tasks(options.archive, records, options)
    usage: dict[str, float] = {}
    merged, problems = compute_parts(tasks, options, progress, usage)
    clocks = {t.position: (t.clock, t.time_zone) for t in tasks}
    positions = []
    for position in sorted(merged):
        clock, zone = clocks[position]
        tz = site_tz(dict[str, object](clock=clock, time_zone=zone))
        section = position_section(position, merged[position], options.settings, tz,
                                   options.window)
        section["clock"] = clock
        section["time_zone"] = zone
        positions.append(section)
    missing = sorted(set(options.positions) - set(merged))
    for position in missing:
        cautions.append(f"position {position}: no stored readings in the date range")
    stored = [r for r in records if r.status == "stored"]
    return {
        "schema_version": REPORT_SCHEMA_VERSION,
        "tool": {"name": "surveytools", "version": __version__},
        "archive": {
            "location": options.archive,
            "inputs_stored": len(stored),
            "inputs_recorded": len(records),
            "rows_stored": sum(r.rows for r in stored),
        },
        "window": options.window.to_json(),
        "engine": {"name": "dask", "scheduler": options.scheduler or "local",
                   "workers": None if options.scheduler else options.workers,
                   "partitions": len(tasks), **usage},
        "settings": options.settings.to_dict(),
        "positions": positions,
        "problems": problems,
        "cautions": [*cautions_lines(), *cautions],
    }


def parse_date(text: str, option: str) -> date:
    """Return the date of a ``YYYY-MM-DD`` option value.

    Raises
    ------
    ArchiveError
        If the text is not a date.
    """
    try:
        return datetime.strptime(text.strip(), "%Y-%m-%d").date()
    except ValueError as exc:
        raise ArchiveError(f"{option} {text!r} is not a date; write it as YYYY-MM-DD") from exc
