"""The ``archive`` command: ``archive add`` and ``archive report`` (parse -> execute -> code).

Exit codes follow the tool's contract: 0 every input stored (``add``) or every partition
read (``report``); 1 some inputs could not be stored or some partitions not read (the rest
were); 2 the command could not run (bad arguments, settings, archive or scheduler).
Kept import-light: the heavy modules load only when a subcommand runs.
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path
from typing import Any, TextIO

EXIT_OK = 0
EXIT_DATA = 1
EXIT_USAGE = 2


def add_parser(sub: Any) -> None:
    """Add ``archive add`` and ``archive report`` to the subcommands ``sub``."""
    archive = sub.add_parser("archive", help="keep years of readings in an archive and report "
                                              "long-term figures (Dask)")
    verbs = archive.add_subparsers(dest="archive_command", metavar="ACTION",
                                   parser_class=type(archive))
    verbs.required = True
    add = verbs.add_parser("add", help="read, validate and store inputs in an archive folder")
    add.add_argument("paths", nargs="+", type=Path, metavar="PATH",
                     help="inputs (.xlsx, .xlsm, .csv, .parquet) or folders holding them")
    add.add_argument("--archive", type=Path, required=True, metavar="DIR",
                     help="archive folder (created when missing)")
    add.add_argument("--settings", type=Path, metavar="FILE", help="settings file (TOML)")
    add.add_argument("--jobs", type=int, default=1, metavar="N",
                     help="inputs read at once (default: 1)")
    add.add_argument("--weather", type=Path, metavar="FILE",
                     help="weather for every input, as for 'run --weather': a workbook with "
                          "a Weather sheet or a CSV with the Weather columns")
    add.add_argument("--quiet", action="store_true", help="no progress display")

    report = verbs.add_parser("report", help="long-term figures of an archive: years, months, "
                                             "days, LN and criteria counts")
    report.add_argument("archive", metavar="DIR",
                        help="archive folder, or an fsspec URL such as s3://bucket/archive")
    report.add_argument("-o", "--output", type=Path, required=True, metavar="OUT",
                        help="folder for archive-report.json and archive-report.xlsx")
    report.add_argument("--from", dest="date_from", metavar="DATE",
                        help="first assessment day (YYYY-MM-DD)")
    report.add_argument("--to", dest="date_to", metavar="DATE",
                        help="last assessment day (YYYY-MM-DD)")
    report.add_argument("--position", action="append", default=[], metavar="P",
                        help="only this position (repeatable; default: every position)")
    report.add_argument("--settings", type=Path, metavar="FILE", help="settings file (TOML)")
    report.add_argument("--workers", type=int, default=2, metavar="N",
                        help="worker processes of the local Dask cluster (default: 2)")
    report.add_argument("--memory-limit", default=None, metavar="SIZE",
                        help="memory limit per local worker, e.g. 2GiB (default: 2GiB)")
    report.add_argument("--scheduler", metavar="ADDRESS",
                        help="run on an existing Dask cluster (tcp://HOST:PORT); its workers "
                             "must reach the archive under the same path or URL")
    report.add_argument("--quiet", action="store_true", help="no progress display")


def _bar(stream: TextIO, enabled: bool) -> Any:
    """Return a one-line progress bar on a terminal (silent elsewhere)."""
    start = time.monotonic()
    show = enabled and stream.isatty()

    def update(done: int, total: int, label: str = "") -> None:
        if not show:
            return
        width = 24
        filled = int(width * done / total) if total else width
        stream.write(f"\r[{'#' * filled}{'-' * (width - filled)}] {done}/{total}  "
                     f"{time.monotonic() - start:5.0f} s  {label[:40]:<40}")
        stream.flush()
        if done == total:
            stream.write("\r" + " " * 90 + "\r")
            stream.flush()

    return update


def execute_add(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Run ``archive add``."""
    from surveytools.archive.add import add_inputs
    from surveytools.archive.store import IngestRecord
    from surveytools.errors import SettingsError
    from surveytools.settings import load_settings

    if args.jobs < 1:
        err.write("surveytools: --jobs must be at least 1\n")
        return EXIT_USAGE
    settings = load_settings(args.settings)
    weather = args.weather
    if weather is not None and not weather.is_file():
        raise SettingsError(f"--weather {weather}: no such file; give a workbook with a "
                            "Weather sheet or a CSV with the Weather columns")

    def shown(item: IngestRecord | str) -> None:
        if isinstance(item, str):
            out.write(f"{item}: already in the archive with these settings"
                      f"{' and this weather file' if weather else ''} (unchanged)\n")
        elif item.status == "stored":
            replaced = ""
            out.write(f"{item.file}: stored {item.rows} readings of position {item.position} "
                      f"({item.first} to {item.last}){replaced}\n")
        else:
            out.write(f"{item.file}: not stored ({item.status}): {item.message}\n")

    result = add_inputs(list(args.paths), args.archive, settings, jobs=args.jobs,
                        progress=shown, weather=weather)
    for path, reason in result.skipped:
        out.write(f"{path}: skipped: {reason}\n")
    replaced = [r for r in result.records if r.replaced_by]
    stored = sum(1 for r in result.records if r.status == "stored")
    out.write(f"Archive {args.archive}: {stored} stored, {len(result.unchanged)} unchanged, "
              f"{result.failed} not stored, {len(result.skipped)} skipped"
              f"{f', {len(replaced)} older inputs partly replaced' if replaced else ''}.\n")
    return EXIT_DATA if result.failed or result.skipped else EXIT_OK


def execute_report(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Run ``archive report``."""
    from surveytools.archive.report import (
        DEFAULT_WORKER_MEMORY,
        LocalClusterStart,
        ReportOptions,
        build_report,
        probe_scheduler,
    )
    from surveytools.archive.report import parse_date as report_date
    from surveytools.archive.window import DateWindow

    if args.workers < 1:
        err.write("surveytools: --workers must be at least 1\n")
        return EXIT_USAGE
    window = DateWindow(report_date(args.date_from, "--from") if args.date_from else None,
                        report_date(args.date_to, "--to") if args.date_to else None)
    if window.first and window.last and window.first > window.last:
        err.write("surveytools: --from is after --to\n")
        return EXIT_USAGE
    memory_limit = args.memory_limit or DEFAULT_WORKER_MEMORY
    if args.scheduler:
        probe_scheduler(args.scheduler)  # a mistyped address is said before any work
    # the local cluster's workers start while the settings and the records are read
    started = None if args.scheduler else LocalClusterStart(args.workers, memory_limit)
    try:
        from surveytools.settings import load_settings

        settings = load_settings(args.settings)
    except BaseException:
        if started is not None:
            started.close()
        raise
    options = ReportOptions(
        archive=str(args.archive), settings=settings, window=window,
        positions=tuple(args.position), workers=args.workers, scheduler=args.scheduler,
        memory_limit=memory_limit)
    bar = _bar(err, not args.quiet)
    try:
        doc = build_report(options, progress=lambda done, total: bar(done, total,
                                                                      "reading tasks"),
                           started=started)
        paths = write_report(args.output, doc)  # while the local cluster stops
    finally:
        if started is not None:
            started.close()
    for line in doc["problems"]:
        out.write(f"problem: {line}\n")
    reported = {section["position"] for section in doc["positions"]}
    for position in options.positions:
        if position not in reported:
            out.write(f"note: position {position}: no stored readings in the date range\n")
    out.write(f"Archive report of {len(doc['positions'])} positions "
              f"({doc['engine']['partitions']} partitions): "
              f"{', '.join(str(p) for p in paths)}\n")
    return EXIT_DATA if doc["problems"] else EXIT_OK


def write_report(out_dir: Path, doc: dict[str, Any]) -> list[Path]:
    """Write ``archive-report.xlsx`` then ``archive-report.json`` atomically."""
    from surveytools.outputs.archive_report import write_archive_report_json, write_archive_workbook
    from surveytools.outputs.atomic import atomic_path

    out_dir.mkdir(parents=True, exist_ok=True)
    xlsx = out_dir / "archive-report.xlsx"
    js = out_dir / "archive-report.json"
    with atomic_path(xlsx) as tmp:
        write_archive_workbook(tmp, doc)
    write_archive_report_json(js, doc)
    return [js, xlsx]


def execute_archive(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Run one ``archive`` subcommand; errors of the tool's own inputs raise to the caller."""
    if args.archive_command == "add":
        return execute_add(args, out, err)
    return execute_report(args, out, err)
