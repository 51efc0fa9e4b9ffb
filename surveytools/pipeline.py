"""One workbook end to end: read -> validate -> assess -> write results.

This module runs inside a worker process (see :mod:`surveytools.worker`); the batch in
:mod:`surveytools.batch` starts one worker per input so that a crash or runaway in a native
reader ends only that input. Nothing here prints; outcomes are returned as plain data.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from surveytools.errors import WorkbookError
from surveytools.inputs.kinds import CSV_SUFFIXES, PARQUET_SUFFIXES
from surveytools.inputs.source import source_info
from surveytools.provenance import SourceInfo
from surveytools.settings import Settings
from surveytools.validation.findings import Finding, Severity
from surveytools.verdict import episode_counts


@dataclass
class FileOutcome:
    """What processing one input produced (returned to the batch as JSON)."""

    path: str
    file: str
    status: str
    results_json: str | None = None
    results_xlsx: str | None = None
    sha256: str | None = None
    findings: list[dict[str, Any]] = field(default_factory=list)
    finding_totals: dict[str, int] = field(default_factory=dict)
    overview: dict[str, Any] = field(default_factory=dict)

    def to_json(self) -> dict[str, Any]:
        """Return a JSON-ready dict."""
        return dict(self.__dict__)


#: Functions run in the preflight scan's thread before and after an overlapped scan.
ScanHooks = tuple[Callable[[], None] | None, Callable[[], None] | None]
NO_HOOKS: ScanHooks = (None, None)


def _read_raw(path: Path, settings: Settings, source: SourceInfo,
              overlap_scan: bool = False, scan_hooks: ScanHooks = NO_HOOKS,
              long_logs: bool = False) -> Any:
    if long_logs:
        from surveytools.long_log import LongLog, is_long_log

        if is_long_log(path):  # read in batches when assessed (bounded memory)
            return LongLog(path, source)
    if path.suffix.lower() in CSV_SUFFIXES:
        from surveytools.inputs.csv_input import read_csv_table

        return read_csv_table(path, settings)
    if path.suffix.lower() in PARQUET_SUFFIXES:
        from surveytools.inputs.parquet_input import read_parquet_table

        return read_parquet_table(path, settings)
    from surveytools.inputs.read import read_workbook

    return read_workbook(path, settings, source=source, overlap_scan=overlap_scan,
                         before_scan=scan_hooks[0], after_scan=scan_hooks[1])


def _changed(source: SourceInfo, expected_sha256: str | None) -> WorkbookError | None:
    """Return the refusal of a file that changed since the batch hashed it, else None."""
    if expected_sha256 is not None and expected_sha256 != source.sha256:
        return WorkbookError("file-changed",
                             "The file changed while it was being processed (it is probably "
                             "still being copied); run again once the copy has finished.")
    return None


def library_versions() -> dict[str, str]:
    """Return versions of the libraries that shape the results (for provenance)."""
    import platform
    from importlib import metadata

    out = {"python": platform.python_version()}
    for name in ("numpy", "pandas", "openpyxl", "fastexcel", "python-calamine", "pyarrow",
                 "xlsxwriter", "jsonschema", "defusedxml"):
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def _findings_json(findings: list[Finding]) -> list[dict[str, Any]]:
    return [f.to_json() for f in sorted(findings, key=Finding.sort_key)]


def _totals(findings: list[dict[str, Any]]) -> dict[str, int]:
    totals = {"error": 0, "warning": 0, "info": 0}
    for f in findings:
        totals[f["severity"]] = totals.get(f["severity"], 0) + 1
    return totals


@dataclass
class ReadResult:
    """The read phase of one input: its identity and what was read, or why it could not be."""

    source: SourceInfo
    raw: Any = None
    error: WorkbookError | None = None


def read_input(path: Path, settings: Settings, source: SourceInfo | None = None,
               expected_sha256: str | None = None, overlap_scan: bool = False,
               scan_hooks: ScanHooks = NO_HOOKS, long_logs: bool = False) -> ReadResult:
    """Hash and read one input (the read phase); never raises for a bad input.

    ``expected_sha256`` is the hash the batch saw (a file changed since is refused);
    ``overlap_scan`` lets the reader start while the preflight's sheet scans still run
    (see :func:`~surveytools.inputs.read.read_workbook`; the batch worker, which runs under
    memory and time limits, uses it). ``scan_hooks`` are run in the scan's thread before
    and after an overlapped scan (the worker imports what the later phases need, while
    the typed parse goes on without the interpreter lock); they are not called when no
    scan is overlapped (a CSV input, a file refused before its parse). With
    ``long_logs``, a long CSV or Parquet log is not read here: ``raw`` is a
    :class:`~surveytools.long_log.LongLog`, read in batches when assessed.
    """
    if source is None:
        try:
            source = source_info(path)
        except WorkbookError as exc:  # gone or unreadable since it was found
            return ReadResult(SourceInfo(str(path), path.name, "", 0), None, exc)
        changed = _changed(source, expected_sha256)
        if changed is not None:
            return ReadResult(source, None, changed)
    try:
        return ReadResult(source, _read_raw(path, settings, source, overlap_scan, scan_hooks,
                                            long_logs))
    except WorkbookError as exc:
        return ReadResult(source, None, exc)


def build_document(path: Path, settings: Settings, source: SourceInfo | None = None,
                   expected_sha256: str | None = None, read: ReadResult | None = None,
                   weather: Any = None) -> tuple[dict[str, Any], Any]:
    """Read, validate and assess one input; return (results document, annotations or None).

    Never raises for a bad input: an unreadable file gives a document with status
    ``"unreadable"`` and the fatal finding. ``read`` is the read phase when already done;
    ``weather`` a shared :class:`~surveytools.inputs.shared_weather.WeatherFile`.
    """
    from surveytools.outputs.results_json import document_header, unreadable_document
    from surveytools.verdict import verdict_section

    if read is None:
        read = read_input(path, settings, source, expected_sha256, long_logs=True)
    source = read.source
    raw = read.raw
    if read.error is not None:
        exc = read.error
        fatal = Finding(exc.code, Severity.ERROR, exc.message, exc.sheet)
        doc = unreadable_document(source, [fatal], settings)
        doc["provenance"] = library_versions()
        doc["verdict"] = verdict_section(doc)
        return doc, None

    from surveytools.assessment import assess, reading_annotations
    from surveytools.long_log import LongLog, NotStreamable, long_log_sections
    from surveytools.validation import build_survey

    if isinstance(raw, LongLog):
        try:
            sections, findings, counts = long_log_sections(raw, settings, weather)
        except NotStreamable as exc:  # out of order across batches: read whole, as before
            refused = too_long_to_read_whole(path, source, exc)
            if refused is not None:
                doc = unreadable_document(source, [refused], settings)
                doc["provenance"] = library_versions()
                doc["verdict"] = verdict_section(doc)
                return doc, None
            return build_document(path, settings, read=read_input(path, settings, source),
                                  weather=weather)
        except WorkbookError as exc:
            return build_document(path, settings, read=ReadResult(source, None, exc))
        doc = document_header(source, settings, findings, counts)
        doc["provenance"] = library_versions()
        doc.update(sections)
        if weather is not None:
            doc["weather_file"] = weather.record()
        doc["verdict"] = verdict_section(doc)
        return doc, None
    survey = build_survey(raw, settings, shared_weather=weather)
    too_large = _grid_refusal(survey, settings)
    if too_large is not None:  # refused before any grid is allocated
        doc = unreadable_document(source, [too_large, *survey.findings], settings)
        doc["provenance"] = library_versions()
        return doc, None
    sections = assess(survey, settings)
    doc = document_header(source, settings, survey.findings, survey.finding_counts)
    doc["provenance"] = library_versions()
    doc.update(sections)
    if weather is not None:
        doc["weather_file"] = weather.record()
    doc["verdict"] = verdict_section(doc)
    annotations = None
    output = settings.output
    if output.include_readings or len(survey.readings) <= output.readings_row_limit:
        from surveytools.inputs.columns import is_band_column

        bands = sum(1 for name in survey.level_columns if is_band_column(name))
        with_bands = (output.include_readings
                      or len(survey.readings) * bands <= output.readings_band_cell_limit)
        annotations = reading_annotations(survey, with_levels=True, with_bands=with_bands)
    return doc, annotations


def too_long_to_read_whole(path: Path, source: SourceInfo, exc: Exception
                            ) -> Finding | None:
    """Return the refusal of a long log that can be neither cut into parts nor read whole.

    None when the log may be read whole (short enough, or a reason the whole read
    reports better itself, such as a damaged line).
    """
    from surveytools.long_log import NotStreamable, fits_whole

    if not isinstance(exc, NotStreamable) or exc.refusal is None or fits_whole(path):
        return None
    return Finding("log-too-long-to-read-whole", Severity.ERROR,
                   f"This log is too long to read at once, and {exc.refusal}.",
                   Path(source.file).stem)


def _grid_refusal(survey: Any, settings: Settings) -> Finding | None:
    """Return the refusal of a survey whose result grids would be too large, or None."""
    from surveytools.validation.checks import grid_size_refusal

    readings = survey.readings
    steps = {"reporting_interval": settings.reporting_interval_s,
             "background.reference_interval_day": settings.background.reference_interval_day_s,
             "background.reference_interval_night":
                 settings.background.reference_interval_night_s}
    return grid_size_refusal(readings["start_ms"].to_numpy(), readings["duration_ms"].to_numpy(),
                             steps)


def overview_row(doc: dict[str, Any], results_json: str | None, results_xlsx: str | None
                 ) -> dict[str, Any]:
    """Summarise one results document as a row of the batch overview."""
    survey = doc.get("survey") or {}
    coverage = doc.get("coverage") or {}
    measured = coverage.get("measured_s") or 0.0
    valid = coverage.get("valid_s") or 0.0
    excesses = [a.get("excess_over_background") for a in doc.get("assessments") or []
                if a.get("excess_over_background") is not None]
    background = doc.get("background") or {}
    verdict = doc.get("verdict")
    if not isinstance(verdict, dict):  # a document from an earlier version (kept by a rerun)
        from surveytools.verdict import verdict_section

        verdict = verdict_section(doc)
    reason = None
    if doc.get("status") == "unreadable" and doc.get("findings"):
        reason = doc["findings"][0]["message"]
    return {
        "file": doc.get("input", {}).get("file"),
        "path": doc.get("input", {}).get("path"),
        "results_json": results_json,
        "results_xlsx": results_xlsx,
        "status": doc.get("status"),
        "position": survey.get("position"),
        "site": survey.get("site"),
        "coverage": {"first": coverage.get("first"), "last": coverage.get("last"),
                     "valid_fraction": valid / measured if measured else None},
        "survey_average": doc.get("survey_average"),
        "background": {"day": (background.get("day") or {}).get("LA90"),
                       "night": (background.get("night") or {}).get("LA90"),
                       "method": background.get("method")},
        "verdict": verdict,
        "worst_excess_over_background": max(excesses) if excesses else None,
        "criteria_failed": sum(int(c.get("failed") or 0) for c in doc.get("criteria") or []),
        "episodes": episode_counts(doc),
        "criteria_not_met": sum(1 for c in doc.get("criteria") or [] if c.get("passed") is False),
        "criteria_checked": sum(1 for c in doc.get("criteria") or []
                                if c.get("passed") is not None),
        "measured_s": measured,
        "findings": _totals(doc.get("findings") or []),
        "reason": reason,
    }


def run_file(path: Path, out_dir: Path, stem: str, settings: Settings,
             read: ReadResult | None = None, weather: Any = None) -> FileOutcome:
    """Process one input and write ``<stem>.results.xlsx`` then ``<stem>.results.json``.

    Outputs are written to temporary names and renamed into place; the JSON goes last, as
    the record that the run for this input completed.
    """
    from surveytools.outputs.atomic import atomic_path, atomic_write_text
    from surveytools.outputs.results_json import dumps_results
    from surveytools.outputs.write import write_results_workbook

    doc, annotations = build_document(path, settings, read=read, weather=weather)
    xlsx = out_dir / f"{stem}.results.xlsx"
    js = out_dir / f"{stem}.results.json"
    with atomic_path(xlsx) as tmp:
        write_results_workbook(tmp, doc, annotations)
    atomic_write_text(js, dumps_results(doc))
    findings = doc.get("findings") or []
    return FileOutcome(path=str(path), file=path.name, status=doc["status"],
                       results_json=js.name, results_xlsx=xlsx.name,
                       sha256=doc["input"]["sha256"], findings=findings,
                       finding_totals=_totals(findings),
                       overview=overview_row(doc, js.name, xlsx.name))


def load_weather(path: str | None, settings: Settings) -> Any:
    """Return the shared weather file of a job, read once per worker while unchanged."""
    if not path:
        return None
    from surveytools.inputs.shared_weather import read_weather_file

    p = Path(path)
    try:
        stat = p.stat()
        key = (str(p), stat.st_size, stat.st_mtime_ns, settings.column_map.__repr__())
    except OSError:
        key = None
    if key is not None and key in _WEATHER_CACHE:
        return _WEATHER_CACHE[key]
    weather = read_weather_file(p, settings)
    if key is not None:
        _WEATHER_CACHE.clear()
        _WEATHER_CACHE[key] = weather
    return weather


#: The last shared weather file read by this process (one batch uses one file).
_WEATHER_CACHE: dict[Any, Any] = {}


def check_file(path: Path, settings: Settings, read: ReadResult | None = None,
               weather: Any = None) -> FileOutcome:
    """Validate one input without computing or writing anything.

    ``weather`` is a shared :class:`~surveytools.inputs.shared_weather.WeatherFile`, as
    for :func:`build_document`.
    """
    from surveytools.outputs.results_json import status_from_findings

    if read is None:
        read = read_input(path, settings)
    source, raw = read.source, read.raw
    if read.error is not None:
        exc = read.error
        fatal = Finding(exc.code, Severity.ERROR, exc.message, exc.sheet)
        findings = _findings_json([fatal])
        return FileOutcome(path=str(path), file=path.name, status="unreadable",
                           sha256=source.sha256, findings=findings,
                           finding_totals=_totals(findings))
    from surveytools.long_log import LongLog, NotStreamable, long_log_findings
    from surveytools.validation import build_survey

    if isinstance(raw, LongLog):
        try:
            found, _ = long_log_findings(raw, settings, weather=weather)
        except (NotStreamable, WorkbookError) as exc:  # read whole, with its message
            refused = too_long_to_read_whole(path, source, exc)
            if refused is not None:
                findings = _findings_json([refused])
                return FileOutcome(path=str(path), file=path.name, status="unreadable",
                                   sha256=source.sha256, findings=findings,
                                   finding_totals=_totals(findings))
            return check_file(path, settings, read=read_input(path, settings, source),
                              weather=weather)
    else:
        found = build_survey(raw, settings, shared_weather=weather).findings
    findings = _findings_json(found)
    return FileOutcome(path=str(path), file=path.name,
                       status=status_from_findings(found), sha256=source.sha256,
                       findings=findings, finding_totals=_totals(findings))
