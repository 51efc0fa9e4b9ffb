#!/usr/bin/env python3
"""Archive and large-log benchmark (a script, not part of the unit tests).

Generates its own invented Parquet logs (0.1 dB LAeq, LAFmax, LAFmin with a daily
cycle), then measures, each command a fresh process tree:

- **large log**: a month at 1 s (2,678,400 rows) in one Parquet file — the bare read of
  the file by pyarrow (whole process: the yardstick) against ``surveytools run`` on the
  same file (whole process, both outputs), alternating, ``--repeats`` times; the peak
  resident memory of the largest process; and ``run`` on the log's first hour (3,600
  rows): what a run costs whatever the log's length;
- **the same month as CSV** (``largecsv``): ISO 8601 text time stamps; the bare read is
  pyarrow's CSV reader (whole process), against ``surveytools run`` on the CSV;
- **archive at 1 min**: 10 positions x 1 year at 1 min (5,256,000 rows), one Parquet file
  per position: ``archive add`` (ingest time), then ``archive report`` with 1 and with 2
  workers (report time of the whole process and of its compute phase — the time from the
  first task sent to the last position's figures, ``engine.compute_s`` —, rows per second
  per worker, peak memory per worker as the report records it);
- **archive at 1 s**: 1 position x 1 year at 1 s (31,536,000 rows) as 12 monthly files:
  the same measurements;
- **a larger archive** (``second3``): the year at 1 s stored under three positions
  (94,608,000 rows; needs the files of ``second``), the same report measurements;
- **long log into the archive** (``addyear``, ``addmonth``): ``archive add`` of one
  Parquet file of a year (or a month) at 1 s, stored batch by batch: ingest time and the
  peak resident memory of the whole process tree.

Usage::

    python tests/benchmarks/archive_benchmarks.py
        [--parts large,largecsv,year,minute,second,second3,addyear,addmonth]
        [--repeats 3]
        [--workdir DIR]

Targets (issue 17): month at 1 s ``run`` <= 2x the bare read, peak < 1.5 GiB; report with
2 workers at least 1.7x faster than with 1; peak memory per worker < 1 GiB; ``archive
add`` of a year at 1 s in one file peaks under 2 GiB, of a month well under 1.5 GiB.
"""

from __future__ import annotations

import argparse
import json
import shutil
import statistics
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

# the same fresh-process-tree measurement as the run benchmark (this folder is on sys.path
# when the script runs)
from run_benchmarks import measure

BARE_READ = ("import sys, pyarrow.parquet as pq; t = pq.read_table(sys.argv[1]); "
             "print(t.num_rows)")
BARE_CSV_READ = ("import sys, pyarrow.csv as pc; t = pc.read_csv(sys.argv[1]); "
                 "print(t.num_rows)")


def surveytools(*args: str) -> list[str]:
    exe = Path(sys.executable).with_name("surveytools")
    return [str(exe), *args] if exe.exists() else [sys.executable, "-m", "surveytools", *args]


def write_log(path: Path, first: str, n: int, step_s: int, seed: int) -> None:
    """An invented log of ``n`` readings from ``first`` (UTC)."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    if path.exists():
        return
    rng = np.random.default_rng(seed)
    start = np.datetime64(first, "ms") + np.arange(n, dtype=np.int64) * (step_s * 1000)
    hours = (np.arange(n) * step_s / 3600.0) % 24
    laeq = np.round(48 + 8 * np.sin((hours - 8) / 24 * 2 * np.pi) + rng.normal(0, 2.5, n), 1)
    table = pa.table({
        "Start": pa.array(start, pa.timestamp("ms")),
        "Duration (s)": pa.array(np.full(n, float(step_s))),
        "LAeq": laeq,
        "LAFmax": np.round(laeq + np.abs(rng.normal(3.0, 1.2, n)), 1),
        "LAFmin": np.round(laeq - np.abs(rng.normal(2.0, 1.0, n)), 1),
    })
    tmp = path.with_suffix(".tmp")
    pq.write_table(table, tmp, compression="zstd")
    tmp.rename(path)


def settings_file(path: Path, position: str) -> Path:
    """Settings of one position; the invented meters stamp UTC (no summer-time gaps)."""
    path.write_text(f'[survey]\nposition = "{position}"\ntime_zone = "Europe/Berlin"\n'
                    'clock = "UTC"\n', encoding="utf-8")
    return path


def write_csv_copy(parquet: Path, csv: Path) -> None:
    """The same log as a CSV export: ISO 8601 text time stamps, numbers as written."""
    import pyarrow.compute as pc
    import pyarrow.csv as pcsv
    import pyarrow.parquet as pq

    if csv.exists():
        return
    table = pq.read_table(parquet)
    table = table.set_column(0, "Start", pc.strftime(table["Start"], format="%Y-%m-%dT%H:%M:%S"))
    tmp = csv.with_suffix(".tmp")
    pcsv.write_csv(table, tmp)
    tmp.rename(csv)


def large_log(work: Path, repeats: int, days: int = 31, csv: bool = False
              ) -> dict[str, object]:
    """``run`` on one log of ``days`` days at 1 s against the bare read of the same file.

    With ``csv``, the file is the same log exported as CSV, and the bare read is
    pyarrow's CSV reader.
    """
    log = work / ("month_1s.parquet" if days == 31 else f"days{days}_1s.parquet")
    first = "2026-07-01T00:00:00" if days == 31 else "2026-01-01T00:00:00"
    write_log(log, first, days * 86_400, 1, seed=1)
    if csv:
        write_csv_copy(log, log.with_suffix(".csv"))
        log = log.with_suffix(".csv")
    settings = settings_file(work / "large.toml", "Month")
    # the fixed cost of a run: the first hour of the same log (3,600 rows), whole process
    hour = work / ("hour_1s" + log.suffix)
    if not hour.exists():
        write_hour(log, hour)
    reads, runs, hours = [], [], []
    for _ in range(repeats):
        reads.append(measure([sys.executable, "-c", BARE_CSV_READ if csv else BARE_READ,
                              str(log)]))
        out = work / "large_out"
        for target, results in ((log, runs), (hour, hours)):
            shutil.rmtree(out, ignore_errors=True)
            results.append(measure(surveytools("run", str(target), "-o", str(out),
                                               "--settings", str(settings), "--quiet",
                                               "--jobs", "1")))
    read_s = statistics.median(r["s"] for r in reads)
    run_s = statistics.median(r["s"] for r in runs)
    ratios = statistics.median(b["s"] / a["s"] for a, b in zip(reads, runs, strict=True))
    return {"rows": days * 86_400, "bare_read_s": round(read_s, 2), "run_s": round(run_s, 2),
            "ratio": round(ratios, 2),
            "run_peak_mib": round(max(r["rss_mib"] for r in runs), 0),
            "run_first_hour_s": round(statistics.median(r["s"] for r in hours), 2)}


def write_hour(log: Path, hour: Path) -> None:
    """The first hour (3,600 rows) of a log at 1 s, in the same format."""
    import pyarrow.csv as pcsv
    import pyarrow.parquet as pq

    if log.suffix == ".csv":
        table = pcsv.read_csv(log).slice(0, 3_600)
        pcsv.write_csv(table, hour)
    else:
        pq.write_table(pq.read_table(log).slice(0, 3_600), hour, compression="zstd")


def add_long_log(work: Path, days: int) -> dict[str, object]:
    """``archive add`` of one Parquet log of ``days`` days at 1 s (one run: it is slow)."""
    log = work / ("month_1s.parquet" if days == 31 else f"days{days}_1s.parquet")
    first = "2026-07-01T00:00:00" if days == 31 else "2026-01-01T00:00:00"
    write_log(log, first, days * 86_400, 1, seed=1)
    settings = settings_file(work / "addlog.toml", "Long")
    folder = work / f"archive_add_{days}d"
    shutil.rmtree(folder, ignore_errors=True)
    res = measure(surveytools("archive", "add", str(log), "--archive", str(folder),
                              "--settings", str(settings), "--quiet", "--jobs", "1"))
    doc = json.loads((folder / "ingest.json").read_text(encoding="utf-8"))
    (record,) = doc["inputs"]
    if record["status"] != "stored" or record["rows"] != days * 86_400:
        raise SystemExit(f"archive add did not store the log: {record}")
    return {"rows": days * 86_400, "ingest_s": round(res["s"], 1),
            "ingest_rows_per_s": round(days * 86_400 / res["s"]),
            "ingest_peak_mib": round(res["rss_mib"]), "files": len(record["files"])}


def archive(work: Path, name: str, logs: list[tuple[Path, str]], rows: int,
            repeats: int = 1) -> dict[str, object]:
    folder = work / f"archive_{name}"
    shutil.rmtree(folder, ignore_errors=True)
    t = time.perf_counter()
    peak_add = 0.0
    by_position: dict[str, list[str]] = {}
    for path, position in logs:
        by_position.setdefault(position, []).append(str(path))
    for position, paths in by_position.items():
        settings = settings_file(work / f"{name}_{position}.toml", position)
        res = measure(surveytools("archive", "add", *paths, "--archive", str(folder),
                                  "--settings", str(settings), "--quiet", "--jobs", "2"))
        peak_add = max(peak_add, res["rss_mib"])
    ingest_s = time.perf_counter() - t
    out: dict[str, object] = {"rows": rows, "ingest_s": round(ingest_s, 1),
                              "ingest_rows_per_s": round(rows / ingest_s),
                              "ingest_peak_mib": round(peak_add)}
    # reports with 1 and 2 workers, alternating, ``repeats`` times: medians and the paired
    # ratios (the machine's noise moves single runs by up to a quarter)
    runs: dict[int, list[dict[str, float]]] = {1: [], 2: []}
    for _ in range(repeats):
        for workers in (1, 2):
            target = work / f"report_{name}_{workers}"
            shutil.rmtree(target, ignore_errors=True)
            res = measure(surveytools("archive", "report", str(folder), "-o", str(target),
                                      "--workers", str(workers), "--quiet"))
            engine = json.loads((target / "archive-report.json").read_text(
                encoding="utf-8"))["engine"]
            runs[workers].append({"s": res["s"], "compute_s": engine["compute_s"],
                                  "peak": engine.get("peak_worker_rss_mib") or 0.0,
                                  "tasks": engine["tasks"]})
    for workers in (1, 2):
        seconds = statistics.median(r["s"] for r in runs[workers])
        out[f"report_{workers}w_s"] = round(seconds, 1)
        out[f"report_{workers}w_rows_per_s_per_worker"] = round(rows / seconds / workers)
        out[f"report_{workers}w_peak_worker_mib"] = max(r["peak"] for r in runs[workers])
        # the part the workers share: from the first task sent to the last figures
        out[f"report_{workers}w_compute_s"] = round(
            statistics.median(r["compute_s"] for r in runs[workers]), 2)
    out["tasks"] = runs[1][0]["tasks"]
    out["speed_up_2w"] = round(statistics.median(
        a["s"] / b["s"] for a, b in zip(runs[1], runs[2], strict=True)), 2)
    out["compute_speed_up_2w"] = round(statistics.median(
        a["compute_s"] / b["compute_s"] for a, b in zip(runs[1], runs[2], strict=True)), 2)
    return out


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--parts", default="large,minute,second")
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--workdir", type=Path)
    args = parser.parse_args()
    work = args.workdir or Path(tempfile.mkdtemp(prefix="surveytools-archive-bench-"))
    work.mkdir(parents=True, exist_ok=True)
    parts = set(args.parts.split(","))
    results: dict[str, object] = {}
    if "large" in parts:
        results["large_log_month_1s"] = large_log(work, args.repeats)
        print(json.dumps(results["large_log_month_1s"]), flush=True)
    if "largecsv" in parts:  # the same month exported as CSV (ISO 8601 text time stamps)
        results["large_log_month_1s_csv"] = large_log(work, args.repeats, csv=True)
        print(json.dumps(results["large_log_month_1s_csv"]), flush=True)
    if "year" in parts:  # one file of a year at 1 s through run (bounded memory)
        results["large_log_year_1s"] = large_log(work, 1, days=365)
        print(json.dumps(results["large_log_year_1s"]), flush=True)
    for part, days in (("addmonth", 31), ("addyear", 365)):
        if part in parts:  # one long Parquet log stored batch by batch (bounded memory)
            results[f"archive_add_{part[3:]}_1s"] = add_long_log(work, days)
            print(json.dumps(results[f"archive_add_{part[3:]}_1s"]), flush=True)
    if "minute" in parts:
        logs = []
        for k in range(10):
            path = work / f"pos{k:02d}_year_1min.parquet"
            write_log(path, "2026-01-01T00:00:00", 365 * 1440, 60, seed=10 + k)
            logs.append((path, f"P{k:02d}"))
        results["archive_10x_year_1min"] = archive(work, "minute", logs, 10 * 365 * 1440,
                                                    args.repeats)
        print(json.dumps(results["archive_10x_year_1min"]), flush=True)
    if "second" in parts:
        logs = []
        for month in range(1, 13):
            first = np.datetime64(f"2026-{month:02d}-01", "D")
            n_days = int(((np.datetime64(f"2026-{month:02d}", "M") + 1).astype("datetime64[D]")
                          - first).astype(int))
            path = work / f"year_1s_{month:02d}.parquet"
            write_log(path, f"2026-{month:02d}-01T00:00:00", n_days * 86_400, 1, seed=month)
            logs.append((path, "S1"))
        results["archive_1x_year_1s"] = archive(work, "second", logs, 365 * 86_400,
                                                  args.repeats)
        print(json.dumps(results["archive_1x_year_1s"]), flush=True)
    if "second3" in parts:  # a larger archive: the same year at 1 s at three positions
        logs = [(work / f"year_1s_{month:02d}.parquet", position)
                for position in ("S1", "S2", "S3") for month in range(1, 13)]
        if not all(path.exists() for path, _ in logs):
            raise SystemExit("run --parts second first (it writes the monthly files)")
        results["archive_3x_year_1s"] = archive(work, "second3", logs, 3 * 365 * 86_400,
                                                args.repeats)
        print(json.dumps(results["archive_3x_year_1s"]), flush=True)
    print(json.dumps(results, indent=1))
    return 0


if __name__ == "__main__":
    sys.exit(main())
