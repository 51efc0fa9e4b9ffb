"""``archive report``: long-term figures of every position, computed on Dask.

The position-month partitions of each position are grouped into tasks of about
:data:`TASK_BYTES` of stored Parquet (a month at 1 s is a task of its own; the twelve small
months of a 1-minute archive are one). A worker reads a task's partitions one by one,
rebuilds the readings as a :class:`~surveytools.survey.Survey` with the exclusions stored
at ingest, computes their :class:`~surveytools.assessment.parts.PositionParts` with the
assessment's own functions and adds them up (``+``). Once every task of a position has
finished, one more task on a worker adds that position's parts in a fixed order and builds
its figures (:mod:`surveytools.archive.figures`); the client receives only those figures,
so it stays idle while the workers compute and the result does not depend on which task
finished first.

By default the tasks run on an embedded local cluster (``workers`` worker processes on
127.0.0.1, one thread each, a memory limit per worker, no dashboard); with ``scheduler``
they run on an existing Dask cluster, whose workers must reach the archive under the same
path or URL (a shared folder, or an fsspec URL such as ``s3://bucket/archive`` when that
filesystem's package is installed on the client and on every worker).
"""

from __future__ import annotations

import logging
import threading
import time
from collections import Counter
from collections.abc import Callable, Iterator
from contextlib import contextmanager, suppress
from dataclasses import dataclass, field, replace
from datetime import date, datetime, timedelta
from typing import TYPE_CHECKING, Any

from surveytools.archive.store import LAYOUT_VERSION, RECORDS_FILE, ArchiveError, IngestRecord
from surveytools.archive.window import DateWindow
from surveytools.debuglog import log_raw
from surveytools.settings import Settings

if TYPE_CHECKING:
    from surveytools.assessment.parts import PositionParts

#: Schema version of ``archive-report.json``.
REPORT_SCHEMA_VERSION = "1.0"
#: Memory limit of each embedded worker (own choice: a position-month at 1 s, about
#: 2.7 million readings, is assessed in well under this; see the README benchmark).
DEFAULT_WORKER_MEMORY = "2GiB"
#: Readings of a partition assessed at a time (own choice, as a long log's batches: the
#: parts of consecutive slices add up exactly, and a slice's arrays of a few megabytes
#: need a fraction of the memory — and of the fresh pages — a month at 1 s needs whole).
SLICE_ROWS = 500_000
#: Environment of the embedded workers besides the malloc tuning: pyarrow allocates from
#: the C library's heap, which keeps what a task freed for the next one, instead of its
#: own pool (measured on the project machine: the first month at 1 s a worker read took
#: 1.1 s with pyarrow's pool and 0.6 s with this; later months about 0.45 s either way).
DASK_WORKER_ENV = {"ARROW_DEFAULT_MEMORY_POOL": "system"}
#: Module each embedded worker imports as it starts (Dask preload).
WORKER_START_MODULE = "surveytools.archive.worker_start"
#: Stored columns the figures do not need (not read by the report's tasks).
UNUSED_COLUMNS = ("exclusion", "row")
#: Seconds to wait for a named scheduler to answer (own choice).
SCHEDULER_TIMEOUT_S = 30
#: Port of a Dask scheduler when an address names none (Dask's default, from memory).
DASK_SCHEDULER_PORT = 8786
#: Seconds the first plain TCP connection to a named scheduler may take: a port nobody
#: listens on is said at once instead of after the whole timeout (own choice).
SCHEDULER_PROBE_S = 3.0
#: Stored bytes a task reads at most, unless one partition alone is larger (own choice:
#: a task costs some tens of milliseconds whatever its size — scheduling, one split of the
#: readings at every boundary — so a 1-minute archive's months, about 0.4 MB each, are
#: read twelve to a task; a month at 1 s, about 14 MB, is a task of its own) [bytes].
TASK_BYTES = 8 << 20


@dataclass(frozen=True)
class PartitionTask:
    """One position-month partition: its files and the position's clock."""

    position: str
    month: str
    files: tuple[str, ...]
    clock: str | None
    time_zone: str | None
    size: int = 0


@dataclass(frozen=True)
class TaskGroup:
    """Consecutive partitions of one position, read by one task."""

    position: str
    partitions: tuple[PartitionTask, ...]

    @property
    def months(self) -> str:
        """The months read, for messages (``2026-01..2026-12``)."""
        first, last = self.partitions[0].month, self.partitions[-1].month
        return first if first == last else f"{first}..{last}"


@dataclass(frozen=True)
class GroupParts:
    """What one task returns: the summed parts of its partitions and their problems."""

    parts: PositionParts | None
    problems: tuple[str, ...]


@dataclass(frozen=True)
class PositionResult:
    """Figures of one position (its ``positions[]`` entry) and its partitions' problems."""

    position: str
    section: dict[str, Any] | None
    problems: tuple[str, ...]


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
    fs, root = _filesystem(archive)
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
                # with its protocol (s3://...), so a worker opens it on the same filesystem
                files.setdefault((record.position, month), []).append(
                    fs.unstrip_protocol(f"{root}/{rel}"))
    cautions = []
    for position, seen in sorted(clocks.items()):
        if len(set(seen)) > 1:
            named = sorted({f"{c or 'local'} / {z or 'UTC'}" for c, z in seen})
            cautions.append(
                f"position {position}: its inputs name different clocks or time zones "
                f"({', '.join(named)}); periods follow the last input added")
    tasks = [PartitionTask(position, month, tuple(sorted(paths)), *clocks[position][-1],
                           size=_stored_bytes(fs, paths))
             for (position, month), paths in sorted(files.items())]
    return tasks, cautions


def _stored_bytes(fs: Any, paths: list[str]) -> int:
    """Bytes of the files (0 for one that cannot be asked: its task reports it)."""
    total = 0
    for path in paths:
        with suppress(OSError, ValueError):
            total += int(fs.size(path) or 0)
    return total


def group_tasks(tasks: list[PartitionTask], task_bytes: int = TASK_BYTES) -> list[TaskGroup]:
    """Group consecutive partitions of each position into tasks of at most ``task_bytes``.

    The grouping depends only on the archive (never on the number of workers), so the
    figures are added up in the same order whatever runs them.
    """
    groups: list[TaskGroup] = []
    current: list[PartitionTask] = []
    size = 0
    for task in tasks:  # sorted by position, then month
        if current and (task.position != current[0].position
                        or size + task.size > task_bytes):
            groups.append(TaskGroup(current[0].position, tuple(current)))
            current, size = [], 0
        current.append(task)
        size += task.size
    if current:
        groups.append(TaskGroup(current[0].position, tuple(current)))
    return groups


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
    start = frame["start_ms"].to_numpy()
    if start.size > 1 and bool((start[1:] < start[:-1]).any()):  # several inputs in a month
        frame = frame.sort_values("start_ms", kind="stable").reset_index(drop=True)
    return frame


def needs_interval_ln(settings: Settings) -> bool:
    """Whether a criterion judges an LN (``LA90``...) of each reporting interval."""
    from surveytools.assessment.intervals import ln_key

    keys = {ln_key(p) for p in settings.percentiles}
    return any(c.indicator in keys and c.interval_s in (None, settings.reporting_interval_s)
               for c in settings.criteria)


def partition_parts(task: PartitionTask, settings: Settings, window: DateWindow
                    ) -> PositionParts | None:
    """Parts of one partition (runs on a Dask worker)."""
    import numpy as np

    from surveytools.assessment.context import build_context
    from surveytools.assessment.intervals import logged_column
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
    levels = [c for c in frame.columns if c not in ("start_ms", "duration_ms", "valid",
                                                   "valid_background")]
    total: PositionParts | None = None
    for first in range(0, len(frame), SLICE_ROWS):
        # consecutive slices: each reading in one slice whole, the parts add up exactly
        piece = frame.iloc[first: first + SLICE_ROWS].reset_index(drop=True)
        valid = piece["valid"].to_numpy(dtype=bool)
        background = piece["valid_background"].to_numpy(dtype=bool)
        exclusions = [Exclusion("stored", "excluded at ingest", "all", ~valid),
                      Exclusion("stored-background", "excluded from background at ingest",
                                "background", valid & ~background)]
        survey = Survey(SourceInfo(task.files[0], task.month, "", 0), metadata, piece,
                        dict.fromkeys(levels, ""), exclusions=exclusions)
        ctx = build_context(survey, settings)
        # LN per interval for interval criteria on LN, from the samples as run takes it;
        # where the meter logged that LN itself, run combines the logged values instead,
        # which these parts cannot: then none (the criterion is not counted)
        parts = position_parts(ctx, interval_levels=needs_interval_ln(settings) and not any(
            ctx.logged(logged_column(p)) is not None for p in settings.percentiles))
        if parts is not None:
            total = parts if total is None else total + parts
    return total


def worker_environment() -> dict[str, Any]:
    """Environment the embedded workers start with: Dask's, then our malloc tuning.

    Dask's default makes glibc return freed memory at once (``MALLOC_TRIM_THRESHOLD_`` of
    64 KiB, which also fixes the mmap threshold at 128 KiB), so every large temporary
    array of a partition is mapped and faulted in afresh; a month at 1 s spent about as
    long in the kernel as in numpy. The workers take the tuning ``run``'s workers use
    (:data:`surveytools.batch.WORKER_MALLOC_ENV`) and :data:`DASK_WORKER_ENV`; a value the
    user set in the environment wins.
    """
    import os

    import dask

    from surveytools.batch import WORKER_MALLOC_ENV

    ours = {**WORKER_MALLOC_ENV, **DASK_WORKER_ENV}
    environ = dict(dask.config.get("distributed.nanny.pre-spawn-environ", default={}) or {})
    environ.update(ours)
    environ.update({key: os.environ[key] for key in ours if key in os.environ})
    return environ


class LocalClusterStart:
    """An embedded local Dask cluster, started in a background thread.

    ``archive report`` starts it first, so that its worker processes come up while the
    client loads the settings, reads the ingest records and plans the tasks.
    """

    def __init__(self, workers: int, memory_limit: str) -> None:
        self._cluster: Any = None
        self._closing: threading.Thread | None = None
        self._error: BaseException | None = None
        self._thread = threading.Thread(target=self._start, args=(workers, memory_limit),
                                        name="dask-cluster-start", daemon=True)
        self._thread.start()

    def _start(self, workers: int, memory_limit: str) -> None:
        try:
            import dask
            from distributed import LocalCluster

            dask.config.set({"distributed.nanny.pre-spawn-environ": worker_environment()})

            # no status page; the scheduler's small HTTP server (which it always starts)
            # on a free port of 127.0.0.1, never the usual 8787 that another report or
            # the user's own cluster may hold
            self._cluster = LocalCluster(n_workers=workers, threads_per_worker=1,
                                         processes=True, memory_limit=memory_limit,
                                         host="127.0.0.1", dashboard_address=None,
                                         scheduler_kwargs={"dashboard": False,
                                                           "dashboard_address": "127.0.0.1:0"},
                                         preload=[WORKER_START_MODULE],
                                         silence_logs=logging.CRITICAL)
        except BaseException as exc:  # handed to the thread that waits for the cluster
            self._error = exc

    def cluster(self) -> Any:
        """Wait for the cluster and return it.

        Raises
        ------
        ArchiveError
            If it could not start.
        """
        self._thread.join()
        error = self._error
        if isinstance(error, RuntimeError | OSError | TimeoutError | ValueError):
            raise ArchiveError(
                f"the local Dask cluster could not start ({type(error).__name__}: "
                f"{str(error)[:200]}); check --workers and --memory-limit, or name a "
                "running cluster with --scheduler") from error
        if error is not None:
            raise error
        return self._cluster

    def begin_close(self) -> None:
        """Start stopping the cluster in a background thread; :meth:`close` waits for it.

        The report's outputs are written meanwhile.
        """
        self._thread.join()
        cluster, self._cluster = self._cluster, None
        if cluster is not None:
            self._closing = threading.Thread(target=_close_quietly, args=(cluster,),
                                             name="dask-cluster-close")
            self._closing.start()

    def close(self) -> None:
        """Stop the cluster and wait until it has stopped (after :meth:`begin_close` too)."""
        self.begin_close()
        if self._closing is not None:
            self._closing.join()
            self._closing = None


def _close_quietly(cluster: Any) -> None:
    """Stop a local cluster; a failure to stop is logged, not raised (its work is done)."""
    try:
        cluster.close()
    except Exception as exc:  # the library's own words: debug log only
        log_raw("stopping the local Dask cluster", exc)


@contextmanager
def dask_client(options: ReportOptions, started: LocalClusterStart | None = None
                ) -> Iterator[Any]:
    """Yield a Dask client: on the named scheduler, or on an embedded local cluster.

    ``started`` is the embedded cluster when it was started earlier: its stopping begins
    here, and its owner waits for it with :meth:`LocalClusterStart.close` (a cluster
    started here is stopped here).

    Raises
    ------
    ArchiveError
        If the named scheduler does not answer or the local cluster cannot start.
    """
    from distributed import Client

    if options.scheduler:  # the command has probed the address (probe_scheduler)
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
    starting = started or LocalClusterStart(options.workers, options.memory_limit)
    try:
        client = Client(starting.cluster())
        try:
            yield client
        finally:
            client.close()
    finally:
        if started is None:
            starting.close()
        else:
            starting.begin_close()


def probe_scheduler(address: str) -> None:
    """Refuse at once a ``tcp://HOST:PORT`` where nothing listens (a mistyped port).

    Other schemes (``tls://``, ``inproc://`` ...), and an address that does not answer
    within :data:`SCHEDULER_PROBE_S`, are left to Dask's own connection and its timeout.

    Raises
    ------
    ArchiveError
        If the connection is refused or the host name is unknown.
    """
    import socket
    from urllib.parse import urlsplit

    parts = urlsplit(address if "://" in address else f"tcp://{address}")
    if parts.scheme != "tcp" or not parts.hostname:
        return
    try:
        port = parts.port or DASK_SCHEDULER_PORT
    except ValueError:  # not a port number: Dask's own parsing says what is wrong
        return
    try:
        with socket.create_connection((parts.hostname, port), timeout=SCHEDULER_PROBE_S):
            return
    except ConnectionRefusedError as exc:
        raise ArchiveError(f"no Dask scheduler listens at {address} (the connection was "
                           "refused); check the host and port, start one ('dask scheduler'), "
                           "or leave out --scheduler to use a local cluster") from exc
    except socket.gaierror as exc:
        raise ArchiveError(f"--scheduler {address}: the host name {parts.hostname!r} is not "
                           "known; check its spelling") from exc
    except OSError:
        return  # no answer yet (a slow network): Dask's connection and its timeout decide


def _peak_rss_mib() -> float:
    """Peak resident memory of this process [MiB] (run on each worker)."""
    import resource
    import sys

    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return peak / (1 << 20) if sys.platform == "darwin" else peak / 1024


def _problem(position: str, months: str, exc: BaseException) -> str:
    """Return the problem line of partitions that could not be read."""
    return (f"position {position}, month {months}: could not be read "
            f"({type(exc).__name__}: {str(exc)[:200]})")


def group_parts(group: TaskGroup, settings: Settings, window: DateWindow) -> GroupParts:
    """Return the summed parts of a task's partitions (runs on a Dask worker).

    A partition that cannot be read is a problem line; the others are still added.
    """
    total: PositionParts | None = None
    problems: list[str] = []
    for task in group.partitions:
        try:
            parts = partition_parts(task, settings, window)
        except Exception as exc:  # a damaged partition is reported, the rest go on
            problems.append(_problem(task.position, task.month, exc))
            continue
        if parts is not None:
            total = parts if total is None else total + parts
    if total is not None and total.interval_levels is not None:
        total = replace(total, interval_levels=total.interval_levels.finalised(
            *_own_span_ms(group), int(settings.reporting_interval_s * 1000),
            tuple(settings.percentiles)))
    return GroupParts(total, tuple(problems))


def _own_span_ms(group: TaskGroup) -> tuple[int, int]:
    """Return the span whose intervals only this task's readings reach [ms].

    Readings are stored by the UTC month they start in, and a valid reading lasts at
    most MAX_INTERVAL_DURATION_S: another task's readings can reach this task's months
    only from before them, by less than that; after them, not at all.
    """
    import numpy as np

    from surveytools.constants import MAX_INTERVAL_DURATION_S

    first = np.datetime64(group.partitions[0].month, "M")
    last = np.datetime64(group.partitions[-1].month, "M") + np.timedelta64(1, "M")
    start_ms = int(first.astype("datetime64[ms]").astype(np.int64))
    end_ms = int(last.astype("datetime64[ms]").astype(np.int64))
    return start_ms + int(MAX_INTERVAL_DURATION_S * 1000), end_ms


def position_result(position: str, clock: str | None, time_zone: str | None,
                    settings: Settings, window: DateWindow, *groups: GroupParts
                    ) -> PositionResult:
    """Add a position's task results in order and build its figures (runs on a worker)."""
    from surveytools.archive.figures import position_section
    from surveytools.assessment.timegrid import site_tz

    parts: PositionParts | None = None
    problems: list[str] = []
    for group in groups:
        problems.extend(group.problems)
        if group.parts is not None:
            parts = group.parts if parts is None else parts + group.parts
    if parts is None:
        return PositionResult(position, None, tuple(problems))
    tz = site_tz(dict[str, object](clock=clock, time_zone=time_zone))
    section = position_section(position, parts, settings, tz, window)
    section["clock"] = clock
    section["time_zone"] = time_zone
    return PositionResult(position, section, tuple(problems))


def compute_positions(tasks: list[PartitionTask], options: ReportOptions,
                      progress: Callable[[int, int], None] | None = None,
                      usage: dict[str, float] | None = None,
                      started: LocalClusterStart | None = None,
                      ) -> tuple[list[PositionResult], list[str]]:
    """Run the report's tasks on Dask; return each position's figures and the problems.

    Returns the results of the positions with readings (sorted by position) and one
    problem line per partition, or task of partitions, that could not be read. ``usage``
    (when given) receives ``tasks`` (reading tasks), ``compute_s`` (wall time from the
    first task sent to the last position's figures) and ``peak_worker_rss_mib`` (the
    highest peak memory of a worker).
    """
    from distributed import as_completed

    problems: list[str] = []
    if not tasks:
        if started is not None:
            started.close()
        return [], problems
    groups = group_tasks(tasks)
    if usage is not None:
        usage["tasks"] = len(groups)
    clocks = {t.position: (t.clock, t.time_zone) for t in tasks}
    results: list[PositionResult] = []
    with dask_client(options, started) as client:
        began = time.perf_counter()
        futures = client.map(group_parts, groups, settings=options.settings,
                             window=options.window, pure=False)
        index = {future.key: k for k, future in enumerate(futures)}
        waiting = Counter(g.position for g in groups)
        finished: dict[str, list[tuple[int, Any]]] = {p: [] for p in clocks}
        position_futures: list[tuple[str, Any]] = []
        for done, future in enumerate(as_completed(futures), start=1):
            k = index[future.key]
            group = groups[k]
            if future.status == "error":  # the worker died or the task could not run
                problems.extend(_problem(group.position, task.month, future.exception())
                                for task in group.partitions)
                future.release()
            else:
                finished[group.position].append((k, future))
            waiting[group.position] -= 1
            if waiting[group.position] == 0 and finished[group.position]:
                position = group.position
                ready = [f for _, f in sorted(finished[position], key=lambda kf: kf[0])]
                position_futures.append((position, client.submit(
                    position_result, position, *clocks[position], options.settings,
                    options.window, *ready, pure=False)))
                finished[position] = []
            if progress is not None:
                progress(done, len(groups))
        for position, future in position_futures:
            try:
                result: PositionResult = future.result()
            except Exception as exc:  # the worker died while building the figures
                problems.append(f"position {position}: figures could not be built "
                                f"({type(exc).__name__}: {str(exc)[:200]})")
                continue
            problems.extend(result.problems)
            if result.section is not None:
                results.append(result)
        if usage is not None:
            usage["compute_s"] = round(time.perf_counter() - began, 2)
            peaks = client.run(_peak_rss_mib)
            usage["peak_worker_rss_mib"] = round(max(peaks.values(), default=0.0), 1)
    results.sort(key=lambda r: r.position)
    return results, problems


def build_report(options: ReportOptions,
                 progress: Callable[[int, int], None] | None = None,
                 started: LocalClusterStart | None = None) -> dict[str, Any]:
    """Compute the archive report document (``archive-report.json``).

    ``started`` is an embedded cluster started earlier (see :class:`LocalClusterStart`);
    its stopping has begun when this returns or raises (the caller writes the outputs
    meanwhile and waits for it with ``started.close()``).

    Raises
    ------
    ArchiveError
        If the archive cannot be read or the scheduler does not answer.
    """
    from surveytools import __version__
    from surveytools.outputs.xlsx_style import cautions_lines

    try:
        records = read_records(options.archive)
        _check_positions(options.positions, records)
        tasks, cautions = partition_tasks(options.archive, records, options)
    except BaseException:
        if started is not None:
            started.close()
        raise
    usage: dict[str, float] = {}
    results, problems = compute_positions(tasks, options, progress, usage, started)
    positions = [r.section for r in results if r.section is not None]
    missing = sorted(set(options.positions) - {r.position for r in results})
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


def _check_positions(wanted: tuple[str, ...], records: list[IngestRecord]) -> None:
    """Refuse a ``--position`` the archive has never stored (most likely a typing slip).

    Raises
    ------
    ArchiveError
        Naming the position, the positions stored and the closest one.
    """
    import difflib

    known = sorted({r.position for r in records
                    if r.position and r.status in ("stored", "replaced")})
    for position in wanted:
        if position in known:
            continue
        close = difflib.get_close_matches(position, known, n=1)
        hint = f"; did you mean '{close[0]}'?" if close else ""
        shown = ", ".join(known[:20]) + (", ..." if len(known) > 20 else "") or "none"
        raise ArchiveError(f"--position {position}: this archive has stored no readings of a "
                           f"position of that name (positions stored: {shown}){hint}")


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
