"""Command line: parse arguments into options, execute, return an exit code.

Exit codes (contract): 0 every input processed without error findings; 1 some inputs had
errors, were unreadable, had results that could not be written or were deferred (the rest
were still processed); 2 the command itself could not run (bad arguments or settings).
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import time
from pathlib import Path
from typing import Any, TextIO

from surveytools import __version__
from surveytools.verdict import UNWRITTEN

EXIT_OK = 0
EXIT_DATA = 1
EXIT_USAGE = 2

DEFAULT_OUT = "surveytools_results"
#: Help of ``--weather`` (run and check).
WEATHER_HELP = ("weather for every input: a workbook with a Weather sheet or a CSV with the "
                "Weather columns (an input's own Weather sheet wins for the time it covers)")


class _Parser(argparse.ArgumentParser):
    """ArgumentParser whose usage errors exit with our code 2 (argparse's default too)."""

    def error(self, message: str) -> Any:
        self.print_usage(sys.stderr)
        self.exit(EXIT_USAGE, f"surveytools: error: {message}\n")


def build_parser() -> argparse.ArgumentParser:
    """Return the argument parser for ``surveytools``."""
    parser = _Parser(
        prog="surveytools",
        description="Batch processing of environmental sound survey workbooks.",
        epilog="Exit codes: 0 all inputs fine; 1 some inputs had errors, could not be read or "
               "their results could not be written; 2 the command could not run.")
    parser.add_argument("--version", action="version", version=f"surveytools {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    def common(p: argparse.ArgumentParser) -> None:
        p.add_argument("paths", nargs="+", type=Path, metavar="PATH",
                       help="survey workbooks (.xlsx, .xlsm, .csv, .parquet) or folders "
                            "holding them")
        p.add_argument("--settings", type=Path, metavar="FILE", help="settings file (TOML)")
        p.add_argument("--jobs", type=int, default=os.cpu_count() or 1, metavar="N",
                       help="inputs processed at once (default: number of cores)")
        p.add_argument("--format", choices=("text", "json"), default="text",
                       help="report format on standard output (default: text)")
        p.add_argument("--quiet", action="store_true", help="no progress display")
        p.add_argument("--settle", type=float, default=1.0, metavar="SECONDS",
                       help="wait this long to see whether a file found in a folder is "
                            "still being copied (default: 1)")
        p.add_argument("--timeout", type=float, default=900.0, metavar="SECONDS",
                       help="time limit per input (default: 900)")
        p.add_argument("--memory-limit", type=float, default=4.0, metavar="GIB",
                       help="memory limit per input in GiB (default: 4; 0 = none)")

    run = sub.add_parser("run", help="process survey workbooks into result workbooks and JSON")
    common(run)
    run.add_argument("-o", "--output", type=Path, default=Path(DEFAULT_OUT), metavar="OUT",
                     help=f"folder for results (default: ./{DEFAULT_OUT})")
    run.add_argument("--readings", action="store_true",
                     help="always include the annotated readings sheet, however long the log")
    run.add_argument("--force", action="store_true",
                     help="reprocess inputs even when unchanged since the last run")
    run.add_argument("--watch", action="store_true",
                     help="keep watching the folders and process each new, completed file")
    run.add_argument("--interval", type=float, default=10.0, metavar="SECONDS",
                     help="polling interval for --watch (default: 10)")
    run.add_argument("--max-cycles", type=int, default=0, help=argparse.SUPPRESS)
    run.add_argument("--weather", type=Path, metavar="FILE", help=WEATHER_HELP)
    run.add_argument("--on-alert", metavar="PROGRAM",
                     help="run PROGRAM (no shell) once per new alert, with the alert's JSON "
                          "line on standard input")
    run.add_argument("--on-alert-timeout", type=float, default=30.0, metavar="SECONDS",
                     help="time limit for one run of the --on-alert program (default: 30)")

    check = sub.add_parser("check", help="validate survey workbooks without computing results")
    common(check)
    check.add_argument("--weather", type=Path, metavar="FILE", help=WEATHER_HELP)

    verify = sub.add_parser(
        "verify", help="recompute a results file and report any difference",
        description="Recompute a *.results.json from its input and the settings recorded in "
                    "it, and compare every figure and finding exactly. Differences are named "
                    "by day, interval, period or finding. Exit 0 identical, 1 different, "
                    "2 the results file or its input cannot be read.")
    verify.add_argument("results", type=Path, metavar="RESULTS.json",
                        help="a results file written by 'surveytools run'")
    verify.add_argument("--input", type=Path, metavar="FILE",
                        help="input workbook (default: the path recorded in the results)")
    verify.add_argument("--format", choices=("text", "json"), default="text",
                        help="report format on standard output (default: text)")

    demo = sub.add_parser(
        "demo", help="write the demo workbooks and settings file",
        description="Write three demo survey workbooks (an invented site) and a settings "
                    "file into DIR, to try 'surveytools run' on. Existing files are never "
                    "replaced unless --force is given.")
    demo.add_argument("directory", nargs="?", type=Path, default=Path("surveytools_demo"),
                      metavar="DIR", help="folder to write to (default: ./surveytools_demo)")
    demo.add_argument("--force", action="store_true",
                      help="replace files of the same names already in DIR")

    template = sub.add_parser(
        "template", help="write a blank input workbook with guidance",
        description="Write a blank survey workbook (.xlsx) with a Guidance sheet and drop-down "
                    "lists, to fill in and then check with 'surveytools check FILE'. An "
                    "existing file is never replaced unless --force is given.")
    template.add_argument("file", type=Path, metavar="FILE.xlsx",
                          help="name of the workbook to write (must end in .xlsx)")
    template.add_argument("--force", action="store_true",
                          help="replace an existing file of that name")

    from surveytools.archive.command import add_parser as add_archive_parser

    add_archive_parser(sub)
    return parser


class Progress:
    """A one-line progress display on a terminal (silent elsewhere or with --quiet)."""

    def __init__(self, stream: TextIO, enabled: bool) -> None:
        self.stream = stream
        self.enabled = enabled and stream.isatty()
        self.start = time.monotonic()

    def __call__(self, done: int, total: int, current: str) -> None:
        """Show ``done`` of ``total`` files, the current one and the elapsed time."""
        if not self.enabled:
            return
        elapsed = time.monotonic() - self.start
        width = 24
        filled = int(width * done / total) if total else width
        bar = "#" * filled + "-" * (width - filled)
        line = f"\r[{bar}] {done}/{total}  {elapsed:5.0f} s  {current[:40]:<40}"
        self.stream.write(line)
        self.stream.flush()

    def finish(self) -> None:
        """Clear the progress line."""
        if self.enabled:
            self.stream.write("\r" + " " * 100 + "\r")
            self.stream.flush()


def _load_settings(path: Path | None) -> tuple[Any, str]:
    from surveytools.settings import load_settings, settings_sha256

    settings = load_settings(path)
    return settings, settings_sha256(settings)


STATUS_WORDS = {"ok": "ok", "warnings": "ok with warnings", "errors": "has errors",
                "unreadable": "could not be read",
                UNWRITTEN: "read, but its results could not be written",
                "skipped": "skipped", "deferred": "deferred"}


def _headline(outcome: dict[str, Any]) -> str:
    """One line for a processed input: verdict first, then position, Lden and coverage.

    The same words and the same reported figures as the Summary sheet and the overview
    (:mod:`surveytools.outputs.display`): criteria not met of those set, the data quality,
    Lden to 0.1 dB as judged, the valid share to 0.1 %.
    """
    from surveytools.outputs.display import hours_text, level_text, share_text

    row = outcome.get("overview") or {}
    verdict = row.get("verdict") or {}
    parts = []
    if verdict.get("outcome_text"):
        parts.append(f"criteria: {verdict['outcome_text']}")
    if verdict.get("data_quality_text"):
        parts.append(f"data quality: {verdict['data_quality_text']}")
    if row.get("position"):
        parts.append(f"position {row['position']}")
    lden = (row.get("survey_average") or {}).get("Lden")
    if lden is not None:
        parts.append(f"Lden {level_text(lden)} (survey average)")
    fraction = (row.get("coverage") or {}).get("valid_fraction")
    if fraction is not None and row.get("measured_s"):
        parts.append(f"{share_text(fraction)} of {hours_text(row['measured_s'])} valid")
    return "; ".join(parts)


def _render_verdict_warnings(out: TextIO, outcome: dict[str, Any]) -> None:
    """Print the conditions that affect the figures but are not findings (coverage ...)."""
    verdict = (outcome.get("overview") or {}).get("verdict") or {}
    codes = {f.get("code") for f in outcome.get("findings") or []}
    for w in verdict.get("warnings_affecting_figures") or []:
        if w.get("code") not in codes:
            out.write(f"  affects the figures: {w.get('message')}\n")


def _render_findings(out: TextIO, outcome: dict[str, Any], limit: int | None) -> None:
    from surveytools.validation.findings import Finding, Severity

    shown = 0
    for f in outcome.get("findings") or []:
        if limit is not None and f["severity"] == "info":
            continue
        finding = Finding(f["code"], Severity(f["severity"]), f["message"], f["sheet"], f["row"],
                          f["column"])
        out.write(f"  {f['severity']}: {finding.render(outcome['file'])}\n")
        shown += 1
        if limit is not None and shown >= limit:
            rest = sum(outcome.get("finding_totals", {}).get(s, 0) for s in ("error", "warning"))
            if rest > shown:
                out.write(f"  ... {rest - shown} more in the results workbook (Findings sheet)\n")
            break


def _summary_line(counts: dict[str, int], verb: str,
                  outcomes: list[dict[str, Any]] | None = None) -> str:
    """Return the closing line of a run or check.

    With ``outcomes`` (a run), the counts are the data quality each input's verdict states
    (so the line agrees with the per-input lines and the Summary), led by how many
    positions did not meet their criteria.
    """
    counts = dict(counts)
    not_met = 0
    if outcomes is not None:
        from surveytools.verdict import batch_tally

        tally, not_met = batch_tally([(o["status"], (o.get("overview") or {}).get("verdict"))
                                      for o in outcomes])
        counts.update(tally)
    total = sum(counts.values()) - counts.get("skipped", 0)
    parts = [f"{counts.get('ok', 0)} ok", f"{counts.get('warnings', 0)} with warnings",
             f"{counts.get('errors', 0)} with errors", f"{counts.get('unreadable', 0)} unreadable"]
    if counts.get(UNWRITTEN):
        parts.append(f"{counts[UNWRITTEN]} with results not written")
    if counts.get("deferred"):
        parts.append(f"{counts['deferred']} deferred")
    if counts.get("skipped"):
        parts.append(f"{counts['skipped']} skipped")
    head = f"{verb} {total} file{'s' if total != 1 else ''}: "
    if outcomes is None:
        return head + ", ".join(parts)
    criteria = (f"criteria not met at {not_met} of {len(outcomes)} "
                f"input{'s' if len(outcomes) != 1 else ''}; ")
    return head + criteria + "data quality " + ", ".join(parts)


def _batch_options(args: argparse.Namespace, mode: str) -> Any:
    from surveytools.alerts import split_program
    from surveytools.batch import BatchOptions
    from surveytools.errors import SettingsError

    memory = int(args.memory_limit * 1024**3) if args.memory_limit > 0 else None
    on_alert = None
    if getattr(args, "on_alert", None) is not None:
        try:
            on_alert = split_program(args.on_alert)
        except ValueError as exc:
            raise SettingsError(str(exc)) from exc
    weather = getattr(args, "weather", None)
    if weather is not None and not weather.is_file():
        raise SettingsError(f"--weather {weather}: no such file; give a workbook with a "
                            "Weather sheet or a CSV with the Weather columns")
    return BatchOptions(paths=list(args.paths), out_dir=getattr(args, "output", None),
                        settings_path=args.settings, jobs=max(1, args.jobs), mode=mode,
                        include_readings=getattr(args, "readings", False), settle_s=args.settle,
                        memory_bytes=memory, timeout_s=args.timeout,
                        force=getattr(args, "force", False), on_alert=on_alert,
                        on_alert_timeout_s=max(getattr(args, "on_alert_timeout", 30.0), 0.1),
                        weather_path=weather)


def execute_run(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Run the batch (optionally watching the folders)."""
    from surveytools.batch import WorkerSlot

    options = _batch_options(args, "run")
    # The first worker starts importing its libraries while the settings load and the
    # inputs are found; it is ended at once if there turns out to be nothing to do.
    early: WorkerSlot | None = WorkerSlot(options.memory_bytes)
    assert early is not None
    early.start_early()
    try:
        return _run_cycles(args, out, err, options, early)
    finally:
        early.close()  # a no-op once the batch has used and closed it


def _run_cycles(args: argparse.Namespace, out: TextIO, err: TextIO, options: Any,
                early: Any) -> int:
    """Run one batch, or keep polling with ``--watch``; return the exit code."""
    from surveytools.batch import overview_document, run_batch

    _settings, key = _load_settings(args.settings)
    cycles = 0
    told: set[tuple[str, str, str]] = set()  # skipped/deferred paths already reported
    while True:
        progress = Progress(err, not args.quiet and args.format == "text")
        result = run_batch(options, key, progress, first_slot=early)
        early = None
        progress.finish()
        cycles += 1
        later_poll = args.watch and cycles > 1
        if args.format == "json":
            out.write(json.dumps(overview_document(result, key), sort_keys=True, indent=1) + "\n")
        else:
            changed = _report_cycle(out, result, later_poll, told)
            if changed or not later_poll:
                out.write(_summary_line(result.counts(), "Processed", result.outcomes)
                          + f". Results in {options.out_dir}/ (overview.xlsx).\n")
            if args.watch and cycles == 1:
                out.write(f"Watching {', '.join(str(p) for p in options.paths)} for new or "
                          f"changed files every {args.interval:g} s; press Ctrl+C to stop.\n")
        out.flush()
        if result.output_error:
            err.write(f"surveytools: {result.output_error}\n")
        if os.environ.get("SURVEYTOOLS_TIMINGS"):  # for developers measuring the pipeline
            for o in result.outcomes:
                err.write(f"timings {o['file']}: {json.dumps(o.get('timings'))}\n")
        for alert in result.alerts:  # new episodes, in text and JSON modes alike
            (out if args.format == "text" else err).write(alert.describe() + "\n")
        for problem in result.alert_problems:
            err.write(f"surveytools: {problem}\n")
        (out if args.format == "text" else err).flush()
        if not args.watch or (args.max_cycles and cycles >= args.max_cycles):
            return result.exit_code()
        time.sleep(max(args.interval, 0.1))


def _report_cycle(out: TextIO, result: Any, later_poll: bool,
                  told: set[tuple[str, str, str]]) -> bool:
    """Print one line per input (only what changed on a later ``--watch`` poll).

    Returns True when anything was printed.
    """
    changed = False
    for o in result.outcomes:
        if later_poll and o.get("reused"):
            continue  # unchanged since the poll before: said already
        codes = ",".join(sorted({f["code"] for f in o.get("findings") or []}))
        said_outcome = (o["path"], f"{o.get('sha256')}:{o['status']}", codes)
        if later_poll and said_outcome in told:
            continue  # an input that fails again the same way (it is retried every poll)
        told.add(said_outcome)
        reused = " (unchanged since the last run; results kept)" if o.get("reused") else ""
        headline = _headline(o)
        words = STATUS_WORDS.get(o["status"], o["status"])
        if (o.get("overview") or {}).get("verdict"):
            out.write(f"{o['file']}{reused}: {headline}\n")  # verdict first
        else:
            out.write(f"{o['file']}: {words}{reused}"
                      + (f" - {headline}" if headline else "") + "\n")
        # a kept result still tells its warnings and verdict, as on the first run
        _render_findings(out, o, limit=5)
        _render_verdict_warnings(out, o)
        changed = True
    for s in result.skipped:
        said = (s.path, s.status, s.code)
        if later_poll and said in told:
            continue
        told.add(said)
        out.write(f"{Path(s.path).name}: {s.status} - {s.reason} [{s.code}]\n")
        changed = True
    return changed


def execute_check(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Validate inputs only."""
    from surveytools.batch import BatchResult, run_batch

    _settings, key = _load_settings(args.settings)
    options = _batch_options(args, "check")
    progress = Progress(err, not args.quiet and args.format == "text")
    result: BatchResult = run_batch(options, key, progress)
    progress.finish()
    if args.format == "json":
        payload = {"tool": {"name": "surveytools", "version": __version__},
                   "inputs": [{k: o.get(k) for k in ("file", "path", "status", "sha256",
                                                    "findings")} for o in result.outcomes],
                   "skipped": [s.to_json() for s in result.skipped],
                   "counts": result.counts()}
        out.write(json.dumps(payload, sort_keys=True, indent=1) + "\n")
    else:
        for o in result.outcomes:
            out.write(f"{o['file']}: {STATUS_WORDS.get(o['status'], o['status'])}\n")
            _render_findings(out, o, limit=None)
        for s in result.skipped:
            out.write(f"{Path(s.path).name}: {s.status} - {s.reason} [{s.code}]\n")
        out.write(_summary_line(result.counts(), "Checked") + "\n")
    return result.exit_code()


def execute(args: argparse.Namespace, out: TextIO | None = None,
            err: TextIO | None = None) -> int:
    """Execute parsed arguments; return the exit code. Errors of our own inputs -> 2.

    ``out`` and ``err`` default to the standard streams as they are at the call.
    """
    from surveytools.errors import SurveyToolsError

    out = sys.stdout if out is None else out
    err = sys.stderr if err is None else err

    try:
        if args.command == "run":
            return execute_run(args, out, err)
        if args.command == "check":
            return execute_check(args, out, err)
        if args.command == "archive":
            from surveytools.archive.command import execute_archive

            return execute_archive(args, out, err)
        if args.command == "verify":
            from surveytools.verify import execute_verify

            return execute_verify(args.results, args.input, args.format, out)
        if args.command == "demo":
            from surveytools.demo import write_demo

            written = write_demo(args.directory, force=args.force)
            out.write(f"Wrote {len(written)} demo files to {args.directory}/:\n")
            for p in written:
                out.write(f"  {p.name}\n")
            out.write("Run them with:\n  surveytools run "
                      f"{args.directory} --settings {args.directory / 'settings.toml'} "
                      "-o demo_results\nthen open demo_results/overview.xlsx.\n")
            return EXIT_OK
        if args.command == "template":
            from surveytools.template import write_template

            write_template(args.file, force=args.force)
            out.write(f"Wrote a blank survey workbook to {args.file}; fill in the Survey and "
                      "Readings sheets (the Guidance sheet explains each column).\n")
            return EXIT_OK
    except SurveyToolsError as exc:
        err.write(f"surveytools: {exc}\n")
        return EXIT_USAGE
    except KeyboardInterrupt:
        err.write("surveytools: interrupted\n")
        return EXIT_DATA
    except BrokenPipeError:  # the reader of our output went away (`surveytools ... | head`)
        try:
            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
        except (OSError, ValueError):
            pass
        return EXIT_DATA
    except Exception as exc:  # a fault of the tool itself: say so plainly, no traceback
        err.write(f"surveytools: internal error ({type(exc).__name__}: {str(exc)[:300]}). "
                  "Results already written are complete; please report this with the "
                  "command you ran. Set SURVEYTOOLS_DEBUG=1 to see the details.\n")
        if os.environ.get("SURVEYTOOLS_DEBUG"):
            raise
        return EXIT_USAGE
    return EXIT_USAGE


def main(argv: list[str] | None = None) -> int:
    """Run the command line; return the process exit code."""
    parser = build_parser()
    args = parser.parse_args(sys.argv[1:] if argv is None else argv)
    if args.command is None:
        parser.print_help(sys.stderr)
        return EXIT_USAGE
    if not os.environ.get("SURVEYTOOLS_DEBUG"):
        # A library's clean-up failing during garbage collection (a zip file closed on a
        # full disk) would print a traceback; what failed is reported in our words instead.
        sys.unraisablehook = _quiet_unraisable
    return execute(args)


def _quiet_unraisable(unraisable: Any) -> None:
    """Drop exceptions raised in finalizers (see :func:`main`); SURVEYTOOLS_DEBUG shows them."""
