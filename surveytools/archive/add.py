"""``archive add``: read, validate and clean inputs as ``run`` does, then store their readings.

Each input goes through the pipeline's read phase (:func:`surveytools.pipeline.read_input`)
and validation (:func:`surveytools.validation.build_survey`) with the given settings, so
its exclusion reasons are exactly those ``run`` shows. Its readings are then written to
the archive (:mod:`surveytools.archive.store`), one file per position and month. A long
CSV or Parquet log is validated and written batch by batch as ``run`` assesses it
(:func:`surveytools.long_log.stream_log`), so it is never held whole in memory.

Rules:

- the same input (same SHA-256) with the same settings again changes nothing;
- a different input for a position whose stored readings overlap its time span
  (a corrected file, or the same file cleaned with other settings) replaces the stored
  rows that start inside its span: the older files are rewritten without them;
- an input that cannot be read or stored is recorded with its reason, the others go on.
"""

from __future__ import annotations

import shutil
from collections.abc import Callable, Iterator
from concurrent.futures import ProcessPoolExecutor
from contextlib import suppress
from dataclasses import dataclass, field
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import numpy as np

from surveytools.archive.store import (
    STAGING_DIR,
    IngestRecord,
    load_records,
    locked,
    part_path,
    save_records,
)
from surveytools.errors import WorkbookError
from surveytools.inputs.source import source_info
from surveytools.settings import Settings, settings_sha256

#: Parquet compression of readings files (zstd: about half the size of snappy on 0.1 dB
#: levels, and every reader of the format supports it).
PARQUET_COMPRESSION = "zstd"


@dataclass
class Prepared:
    """One input read, validated and written to the staging folder (in a worker process).

    ``staged`` maps each final relative path of its readings files to the staged file.
    """

    record: IngestRecord
    staged: dict[str, str] = field(default_factory=dict)


@dataclass
class AddResult:
    """What one ``archive add`` did, per input."""

    records: list[IngestRecord] = field(default_factory=list)
    unchanged: list[str] = field(default_factory=list)
    skipped: list[tuple[str, str]] = field(default_factory=list)

    @property
    def failed(self) -> int:
        """Inputs that could not be stored."""
        return sum(1 for r in self.records if r.status in ("unreadable", "failed"))


def _now() -> str:
    return datetime.now(UTC).isoformat(timespec="seconds").replace("+00:00", "Z")


def _utc_text(ms: int) -> str:
    return str(np.datetime64(int(ms), "ms")) + "Z"


def prepare_input(path: Path, settings: Settings, staging: Path,
                  weather: Path | None = None) -> Prepared:
    """Read and validate one input as ``run`` does and stage its readings files.

    A long CSV or Parquet log (:func:`surveytools.long_log.is_long_log`) is read, validated
    and staged batch by batch, within bounded memory; one that cannot be cut exactly
    (:class:`~surveytools.long_log.NotStreamable`) is read whole, as ``run`` does.
    Never raises for a bad input. The files are written under ``staging`` (inside the
    archive folder, so that moving them into place is a rename); the caller moves them.
    ``weather`` is a shared weather file applied as ``run --weather`` applies it.
    """
    from surveytools.long_log import LongLog, NotStreamable
    from surveytools.pipeline import load_weather, read_input, too_long_to_read_whole
    from surveytools.validation import build_survey

    shared = load_weather(str(weather), settings) if weather is not None else None
    read = read_input(path, settings, long_logs=True)
    record = IngestRecord(file=path.name, path=str(path), sha256=read.source.sha256,
                          settings_sha256=settings_sha256(settings), status="unreadable",
                          ingested_at=_now())
    if shared is not None and shared.source is not None:
        record.weather_file = shared.name
        record.weather_sha256 = shared.source.sha256 or None
    if isinstance(read.raw, LongLog):
        try:
            return _prepare_streamed(read.raw, settings, staging, record, shared)
        except (NotStreamable, WorkbookError) as exc:
            # not cut-able exactly, or refused before its data: the whole read says why,
            # unless the log is too long to be read whole (run refuses it the same way)
            shutil.rmtree(_staging_folder(staging, record), ignore_errors=True)
            refused = too_long_to_read_whole(path, read.source, exc)
            if refused is not None:
                record.message = f"{refused.message} [{refused.code}]"
                return Prepared(record)
            read = read_input(path, settings, read.source)
    if read.error is not None:
        record.message = f"{read.error.message} [{read.error.code}]"
        return Prepared(record)
    survey = build_survey(read.raw, settings, shared_weather=shared)
    _describe(record, survey.findings, survey.finding_counts, survey.metadata)
    if _refused(record, len(survey.readings)):
        return Prepared(record)
    table = _readings_table(survey)
    start = table.column("start_ms").to_numpy()
    end = start + table.column("duration_ms").to_numpy()
    _stored(record, table.num_rows, int(start.min()), int(end.max()))
    return Prepared(record, _stage_parts(staging, record, table))


def _describe(record: IngestRecord, findings: list[Any], counts: dict[str, int],
              metadata: dict[str, Any]) -> None:
    """Fill in the record's finding totals and the input's position, zone and clock."""
    totals = {"error": 0, "warning": 0, "info": 0}
    for finding in findings:
        totals[str(finding.severity.value)] += 1
    record.findings = totals
    record.finding_counts = dict(sorted(counts.items()))
    position = metadata.get("position")
    record.position = str(position) if position not in (None, "") else None
    record.time_zone = str(metadata.get("time_zone") or "") or None
    record.clock = str(metadata.get("clock") or "") or None


def _refused(record: IngestRecord, rows: int) -> bool:
    """Mark the record failed (and return True) when nothing of the input can be stored."""
    if record.position is None:
        record.status = "failed"
        record.message = ("the input names no monitoring position (Survey sheet 'Position', "
                          "or [survey] position in the settings for a CSV or Parquet log); "
                          "the archive files readings by position")
        return True
    if rows == 0:
        record.status = "failed"
        record.message = "the input holds no readings that could be placed in time"
        return True
    return False


def _stored(record: IngestRecord, rows: int, first_ms: int, last_ms: int) -> None:
    """Mark the record stored with its rows and time span."""
    record.status = "stored"
    record.rows = rows
    record.first_ms = first_ms
    record.last_ms = last_ms
    record.first = _utc_text(first_ms)
    record.last = _utc_text(last_ms)


def _readings_table(survey: Any) -> Any:
    """Return the survey's readings as a readings-file table (see :mod:`.store`)."""
    import pyarrow as pa

    readings = survey.readings
    columns: dict[str, Any] = {
        "start_ms": pa.array(readings["start_ms"].to_numpy(dtype=np.int64), pa.int64()),
        "duration_ms": pa.array(readings["duration_ms"].to_numpy(dtype=np.int64), pa.int64()),
        "row": pa.array(readings["row"].to_numpy(dtype=np.int64), pa.int64()),
    }
    for name in survey.level_columns:
        if name in readings.columns:
            values = readings[name].to_numpy(dtype=np.float64, na_value=np.nan)
            columns[name] = pa.array(values, pa.float64(), from_pandas=True)
    columns["exclusion"] = pa.array(survey.reasons_per_row().astype(str), pa.string())
    columns["valid"] = pa.array(survey.valid_mask("all"), pa.bool_())
    columns["valid_background"] = pa.array(survey.valid_mask("background"), pa.bool_())
    return pa.table(columns)


class _MonthWriters:
    """Stage a long log's readings batch by batch: one Parquet file per UTC month.

    A month's file stays open while later batches may still add to it; the batches come
    in time order (:func:`~surveytools.long_log.stream_log` cuts them so that every
    reading of a later batch starts after every reading of an earlier one), so the
    months before a batch's latest are complete and are closed.
    """

    def __init__(self, folder: Path) -> None:
        self.folder = folder
        self.position: str | None = None
        self.metadata: dict[str, Any] | None = None
        self.schema: Any = None
        self.open: dict[str, tuple[Any, Path]] = {}
        self.done: dict[str, Path] = {}
        self.rows = 0
        self.first_ms: int | None = None
        self.last_ms: int | None = None

    def add(self, survey: Any) -> None:
        """Append one batch's owned readings to their months' files."""
        import pyarrow as pa
        import pyarrow.parquet as pq

        from surveytools.long_log import NotStreamable

        if self.metadata is None:
            self.metadata = dict(survey.metadata)
            position = survey.metadata.get("position")
            self.position = str(position) if position not in (None, "") else None
        if self.position is None or len(survey.readings) == 0:
            return  # nothing to file (no position: refused once the findings are known)
        table = _readings_table(survey)
        if self.schema is None:
            self.schema = table.schema
        elif not table.schema.equals(self.schema):
            raise NotStreamable("the batches' readings columns differ")
        start = table.column("start_ms").to_numpy()
        end = start + table.column("duration_ms").to_numpy()
        self.rows += table.num_rows
        low, high = int(start.min()), int(end.max())
        self.first_ms = low if self.first_ms is None else min(self.first_ms, low)
        self.last_ms = high if self.last_ms is None else max(self.last_ms, high)
        months = _month_keys(start)
        present = np.unique(months).tolist()  # sorted
        for month in present:
            if month in self.done:
                raise NotStreamable("a batch's reading falls in a month already closed")
            if month not in self.open:
                target = self.folder / f"{len(self.open) + len(self.done):04d}.parquet"
                self.folder.mkdir(parents=True, exist_ok=True)
                self.open[month] = (pq.ParquetWriter(target, self.schema,
                                                     compression=PARQUET_COMPRESSION), target)
            self.open[month][0].write_table(table.filter(pa.array(months == month)))
        for month in [m for m in self.open if m < present[-1]]:
            self._close(month)

    def _close(self, month: str) -> None:
        writer, target = self.open.pop(month)
        writer.close()
        self.done[month] = target

    def close(self) -> None:
        """Close every open file (also after a failure, so that they can be removed)."""
        for month in list(self.open):
            self._close(month)

    def staged(self, record: IngestRecord) -> dict[str, str]:
        """Return final relative path -> staged file, per month."""
        assert record.position is not None
        return {part_path(record.position, month, record):
                str(target) for month, target in sorted(self.done.items())}


def _prepare_streamed(log: Any, settings: Settings, staging: Path, record: IngestRecord,
                      weather: Any = None) -> Prepared:
    """Validate and stage a long log batch by batch (never the whole log in memory).

    Raises
    ------
    NotStreamable, WorkbookError
        As :func:`~surveytools.long_log.stream_log`; the caller reads the log whole.
    """
    from surveytools.long_log import long_log_findings

    folder = _staging_folder(staging, record)
    shutil.rmtree(folder, ignore_errors=True)
    writers = _MonthWriters(folder)
    try:
        findings, counts = long_log_findings(log, settings, on_batch=writers.add,
                                             weather=weather)
    except BaseException:
        # a failed input leaves no staged file behind (nothing of it is moved into place)
        with suppress(Exception):
            writers.close()
        shutil.rmtree(folder, ignore_errors=True)
        raise
    writers.close()
    _describe(record, findings, counts, writers.metadata or {})
    if _refused(record, writers.rows):
        shutil.rmtree(folder, ignore_errors=True)
        return Prepared(record)
    assert writers.first_ms is not None and writers.last_ms is not None
    _stored(record, writers.rows, writers.first_ms, writers.last_ms)
    return Prepared(record, writers.staged(record))


def _prepared(paths: list[Path], settings: Settings, jobs: int, staging: Path,
              weather: Path | None = None) -> Iterator[Prepared]:
    """Prepare inputs in order, ``jobs`` at a time in worker processes."""
    if jobs <= 1 or len(paths) <= 1:
        for path in paths:
            yield _safe_prepare(path, settings, staging, weather)
        return
    import multiprocessing
    from concurrent.futures.process import BrokenProcessPool

    context = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(max_workers=jobs, mp_context=context) as pool:
        futures = [pool.submit(_safe_prepare, path, settings, staging, weather)
                   for path in paths]
        for path, future in zip(paths, futures, strict=True):
            try:
                yield future.result()
            except BrokenProcessPool:
                # a worker died (killed, out of memory): its input and those after it that
                # the pool can no longer read are recorded, the rest of the run goes on
                yield _failed(path, settings, "the process reading it ended unexpectedly "
                                              "(out of memory?); add it again on its own")


def _safe_prepare(path: Path, settings: Settings, staging: Path,
                  weather: Path | None = None) -> Prepared:
    """:func:`prepare_input`, with an unexpected failure recorded instead of raised."""
    try:
        return prepare_input(path, settings, staging, weather)
    except Exception as exc:  # one bad input never stops the others
        return _failed(path, settings, f"the input could not be processed "
                                       f"({type(exc).__name__}); run 'surveytools check' on "
                                       "it for details")


def _weather_sha256(weather: Path | None) -> str | None:
    """SHA-256 of the shared weather file as the inputs' records will name it."""
    if weather is None:
        return None
    try:
        return source_info(weather).sha256 or None
    except WorkbookError:
        return None  # unreadable: each input's record says so (weather-file-unreadable)


def _failed(path: Path, settings: Settings, message: str) -> Prepared:
    """Return the record of an input that could not be prepared."""
    record = IngestRecord(file=path.name, path=str(path), sha256="",
                          settings_sha256=settings_sha256(settings), status="failed",
                          ingested_at=_now(), message=message)
    return Prepared(record)


def _month_keys(start_ms: np.ndarray) -> np.ndarray:
    """UTC month (``YYYY-MM``) of each start."""
    return start_ms.astype("datetime64[ms]").astype("datetime64[M]").astype(str)


def _staging_folder(staging: Path, record: IngestRecord) -> Path:
    """Where one input's readings files are staged."""
    return staging / record.file_stem


def _stage_parts(staging: Path, record: IngestRecord, table: Any) -> dict[str, str]:
    """Write the input's readings, one file per position-month, under ``staging``.

    Returns final relative path -> staged file.
    """
    import pyarrow as pa
    import pyarrow.parquet as pq

    assert record.position is not None
    months = _month_keys(table.column("start_ms").to_numpy())
    folder = _staging_folder(staging, record)
    folder.mkdir(parents=True, exist_ok=True)
    staged = {}
    for k, month in enumerate(np.unique(months)):
        rel = part_path(record.position, str(month), record)
        target = folder / f"{k:04d}.parquet"
        pq.write_table(table.filter(pa.array(months == month)), target,
                       compression=PARQUET_COMPRESSION)
        staged[rel] = str(target)
    return staged


def _move_into_place(root: Path, staged: dict[str, str]) -> list[str]:
    """Move staged files to their final paths (renames within the archive folder)."""
    for rel, tmp in staged.items():
        target = root / rel
        target.parent.mkdir(parents=True, exist_ok=True)
        Path(tmp).replace(target)
    return list(staged)


def _remove_span(root: Path, old: IngestRecord, first_ms: int, last_ms: int,
                 replaced_by: str) -> None:
    """Drop ``old``'s stored rows that start in ``[first_ms, last_ms)``."""
    import pyarrow.compute as pc
    import pyarrow.parquet as pq

    from surveytools.outputs.atomic import atomic_path

    kept_files = []
    removed = 0
    for rel in old.files:
        path = root / rel
        if not path.exists():
            continue
        table = pq.read_table(path)
        start = table.column("start_ms")
        inside = pc.and_(pc.greater_equal(start, first_ms), pc.less(start, last_ms))
        n_inside = int(pc.sum(inside).as_py() or 0)
        if n_inside == 0:
            kept_files.append(rel)
            continue
        removed += n_inside
        if n_inside == table.num_rows:
            path.unlink()
            continue
        with atomic_path(path) as tmp:
            pq.write_table(table.filter(pc.invert(inside)), tmp, compression=PARQUET_COMPRESSION)
        kept_files.append(rel)
    old.files = kept_files
    old.rows -= removed
    old.rows_replaced += removed
    old.replaced_by.append(replaced_by)
    if old.rows <= 0:
        old.rows = 0
        old.status = "replaced"


def add_inputs(paths: list[Path], root: Path, settings: Settings, jobs: int = 1,
               progress: Callable[[IngestRecord | str], None] | None = None,
               weather: Path | None = None) -> AddResult:
    """Add inputs (files or folders) to the archive folder ``root``.

    Parameters
    ----------
    paths : list of Path
        Inputs or folders of inputs (``.xlsx``, ``.xlsm``, ``.csv``, ``.parquet``).
    root : Path
        Archive folder (created when missing).
    settings : Settings
        Settings used to read, validate and clean each input.
    jobs : int
        Inputs read in parallel.
    progress : callable, optional
        Called with each new record, or with the name of an unchanged input.
    weather : Path, optional
        A shared weather file applied to every input (``run --weather``); an input added
        again with another weather file (or none) replaces what it stored before.

    Returns
    -------
    AddResult

    Raises
    ------
    ArchiveError
        If ``root`` is not an archive or another ``archive add`` holds it.
    """
    from surveytools.batch import discover

    result = AddResult()
    candidates, skipped = discover(paths)
    result.skipped = [(s.path, s.reason) for s in skipped]
    settings_hash = settings_sha256(settings)
    weather_hash = _weather_sha256(weather)
    with locked(root):
        records = load_records(root)
        known = {r.key for r in records if r.sha256}
        todo = []
        for candidate in candidates:
            try:
                digest = source_info(candidate.path).sha256
            except WorkbookError:
                digest = ""  # reading it records why
            if (digest, settings_hash, weather_hash) in known:
                # the same input with the same settings (and weather) again: no change
                result.unchanged.append(candidate.path.name)
                if progress is not None:
                    progress(candidate.path.name)
            else:
                todo.append(candidate.path)
        staging = root / STAGING_DIR
        shutil.rmtree(staging, ignore_errors=True)  # what a killed run left
        try:
            for prepared in _prepared(todo, settings, jobs, staging, weather):
                new = prepared.record
                if new.sha256 and new.key in known:
                    # the same content given twice in this run
                    result.unchanged.append(new.file)
                    if progress is not None:
                        progress(new.file)
                    continue
                if new.status == "stored":
                    assert new.first_ms is not None and new.last_ms is not None
                    new.files = _move_into_place(root, prepared.staged)
                    for old in records:
                        if (old.status == "stored" and old.position == new.position
                                and old.first_ms is not None and old.last_ms is not None
                                and old.first_ms < new.last_ms
                                and new.first_ms < old.last_ms):
                            _remove_span(root, old, new.first_ms, new.last_ms, new.sha256)
                records.append(new)
                known.add(new.key)
                save_records(root, records)
                result.records.append(new)
                if progress is not None:
                    progress(new)
        finally:
            shutil.rmtree(staging, ignore_errors=True)
    return result
