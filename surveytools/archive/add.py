"""``archive add``: read, validate and clean inputs as ``run`` does, then store their readings.

Each input goes through the pipeline's read phase (:func:`surveytools.pipeline.read_input`)
and validation (:func:`surveytools.validation.build_survey`) with the given settings, so
its exclusion reasons are exactly those ``run`` shows. Its readings are then written to
the archive (:mod:`surveytools.archive.store`), one file per position and month.

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


def prepare_input(path: Path, settings: Settings, staging: Path) -> Prepared:
    """Read and validate one input as ``run`` does and stage its readings files.

    Never raises for a bad input. The files are written under ``staging`` (inside the
    archive folder, so that moving them into place is a rename); the caller moves them.
    """
    import pyarrow as pa

    from surveytools.pipeline import read_input
    from surveytools.validation import build_survey

    settings_hash = settings_sha256(settings)
    read = read_input(path, settings)
    record = IngestRecord(file=path.name, path=str(path), sha256=read.source.sha256,
                          settings_sha256=settings_hash, status="unreadable",
                          ingested_at=_now())
    if read.error is not None:
        record.message = f"{read.error.message} [{read.error.code}]"
        return Prepared(record)
    survey = build_survey(read.raw, settings)
    totals = {"error": 0, "warning": 0, "info": 0}
    for finding in survey.findings:
        totals[str(finding.severity.value)] += 1
    record.findings = totals
    record.finding_counts = dict(sorted(survey.finding_counts.items()))
    position = survey.metadata.get("position")
    record.position = str(position) if position not in (None, "") else None
    record.time_zone = str(survey.metadata.get("time_zone") or "") or None
    record.clock = str(survey.metadata.get("clock") or "") or None
    readings = survey.readings
    if record.position is None:
        record.status = "failed"
        record.message = ("the input names no monitoring position (Survey sheet 'Position', "
                          "or [survey] position in the settings for a CSV or Parquet log); "
                          "the archive files readings by position")
        return Prepared(record)
    if len(readings) == 0:
        record.status = "failed"
        record.message = "the input holds no readings that could be placed in time"
        return Prepared(record)
    start = readings["start_ms"].to_numpy(dtype=np.int64)
    duration = readings["duration_ms"].to_numpy(dtype=np.int64)
    columns: dict[str, Any] = {
        "start_ms": pa.array(start, pa.int64()),
        "duration_ms": pa.array(duration, pa.int64()),
        "row": pa.array(readings["row"].to_numpy(dtype=np.int64), pa.int64()),
    }
    for name in survey.level_columns:
        if name in readings.columns:
            values = readings[name].to_numpy(dtype=np.float64, na_value=np.nan)
            columns[name] = pa.array(values, pa.float64(), from_pandas=True)
    columns["exclusion"] = pa.array(survey.reasons_per_row().astype(str), pa.string())
    columns["valid"] = pa.array(survey.valid_mask("all"), pa.bool_())
    columns["valid_background"] = pa.array(survey.valid_mask("background"), pa.bool_())
    record.status = "stored"
    record.rows = int(start.size)
    record.first_ms = int(start.min())
    record.last_ms = int((start + duration).max())
    record.first = _utc_text(record.first_ms)
    record.last = _utc_text(record.last_ms)
    return Prepared(record, _stage_parts(staging, record, pa.table(columns)))


def _prepared(paths: list[Path], settings: Settings, jobs: int, staging: Path
              ) -> Iterator[Prepared]:
    """Prepare inputs in order, ``jobs`` at a time in worker processes."""
    if jobs <= 1 or len(paths) <= 1:
        for path in paths:
            yield _safe_prepare(path, settings, staging)
        return
    import multiprocessing
    from concurrent.futures.process import BrokenProcessPool

    context = multiprocessing.get_context("spawn")
    with ProcessPoolExecutor(max_workers=jobs, mp_context=context) as pool:
        futures = [pool.submit(_safe_prepare, path, settings, staging) for path in paths]
        for path, future in zip(paths, futures, strict=True):
            try:
                yield future.result()
            except BrokenProcessPool:
                # a worker died (killed, out of memory): its input and those after it that
                # the pool can no longer read are recorded, the rest of the run goes on
                yield _failed(path, settings, "the process reading it ended unexpectedly "
                                              "(out of memory?); add it again on its own")


def _safe_prepare(path: Path, settings: Settings, staging: Path) -> Prepared:
    """:func:`prepare_input`, with an unexpected failure recorded instead of raised."""
    try:
        return prepare_input(path, settings, staging)
    except Exception as exc:  # one bad input never stops the others
        return _failed(path, settings, f"the input could not be processed "
                                       f"({type(exc).__name__}); run 'surveytools check' on "
                                       "it for details")


def _failed(path: Path, settings: Settings, message: str) -> Prepared:
    """Return the record of an input that could not be prepared."""
    record = IngestRecord(file=path.name, path=str(path), sha256="",
                          settings_sha256=settings_sha256(settings), status="failed",
                          ingested_at=_now(), message=message)
    return Prepared(record)


def _month_keys(start_ms: np.ndarray) -> np.ndarray:
    """UTC month (``YYYY-MM``) of each start."""
    return start_ms.astype("datetime64[ms]").astype("datetime64[M]").astype(str)


def _stage_parts(staging: Path, record: IngestRecord, table: Any) -> dict[str, str]:
    """Write the input's readings, one file per position-month, under ``staging``.

    Returns final relative path -> staged file.
    """
    import pyarrow as pa
    import pyarrow.parquet as pq

    assert record.position is not None
    months = _month_keys(table.column("start_ms").to_numpy())
    folder = staging / f"{record.sha256[:20]}-{record.settings_sha256[:8]}"
    folder.mkdir(parents=True, exist_ok=True)
    staged = {}
    for k, month in enumerate(np.unique(months)):
        rel = part_path(record.position, str(month), record.sha256, record.settings_sha256)
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
               progress: Callable[[IngestRecord | str], None] | None = None) -> AddResult:
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
    with locked(root):
        records = load_records(root)
        known = {(r.sha256, r.settings_sha256) for r in records if r.sha256}
        todo = []
        for candidate in candidates:
            try:
                digest = source_info(candidate.path).sha256
            except WorkbookError:
                digest = ""  # reading it records why
            if (digest, settings_hash) in known:
                # the same input with the same settings again: nothing changes
                result.unchanged.append(candidate.path.name)
                if progress is not None:
                    progress(candidate.path.name)
            else:
                todo.append(candidate.path)
        staging = root / STAGING_DIR
        shutil.rmtree(staging, ignore_errors=True)  # what a killed run left
        try:
            for prepared in _prepared(todo, settings, jobs, staging):
                new = prepared.record
                if new.sha256 and (new.sha256, settings_hash) in known:
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
                known.add((new.sha256, settings_hash))
                save_records(root, records)
                result.records.append(new)
                if progress is not None:
                    progress(new)
        finally:
            shutil.rmtree(staging, ignore_errors=True)
    return result
