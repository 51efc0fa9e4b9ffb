#!/usr/bin/env python3
"""Performance benchmark for surveytools (a script, not part of the unit tests).

Generates its own logs, then measures in ONE run, alternating, several times:

- the bare read of each file by the fastest general-purpose reader available
  (fastexcel -> Arrow, whole process: the yardstick);
- ``surveytools run`` end to end on the same file (whole process);
- a batch of 24 month-long 15-minute workbooks with ``--jobs 1`` and ``--jobs 2``;
- ``surveytools --version`` start-up.

It prints medians, the paired ratios and the peak memory of each process tree, checks the
targets, and checks (untimed) that 100 ms timestamps survive exactly to the millisecond.

Usage::

    python tests/benchmarks/run_benchmarks.py [--repeats 3] [--workdir DIR] [--quick]

Targets (issue "Performance"): week at 1 s run/read <= 2.0 and peak <= 1.5 GiB; day at
100 ms run/read <= 2.0 with exact timestamps; 24 workbooks: --jobs 2 at least 1.6x faster
than --jobs 1; ``surveytools --version`` under 0.5 s.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
from datetime import datetime, timedelta
from pathlib import Path

import numpy as np

START = datetime(2026, 3, 2, 0, 0, 0)


def generate(path: Path, n: int, step_ms: int, columns: tuple[str, ...], seed: int) -> None:
    """Write an invented log of ``n`` rows at ``step_ms`` (xlsxwriter, constant memory)."""
    import xlsxwriter

    if path.exists():
        return
    rng = np.random.default_rng(seed)
    t_h = (np.arange(n) * step_ms / 3.6e6) % 24
    base = 46 + 8 * np.sin((t_h - 8) / 24 * 2 * np.pi)
    laeq = np.round(base + rng.normal(0, 2.5, n), 1)
    data = {"LAeq": laeq,
            "LAFmax": np.round(laeq + np.abs(rng.normal(2.5, 1.2, n)), 1),
            "LAFmin": np.round(laeq - np.abs(rng.normal(2.0, 1.0, n)), 1),
            "LAF50": np.round(laeq - 0.5, 1), "LAF90": np.round(laeq - 3.0, 1)}
    data["LAF10"] = np.minimum(np.round(laeq + 1.5, 1), data["LAFmax"])
    # Excel serial days, rounded to the millisecond as the readers do.
    epoch = datetime(1899, 12, 30)
    serial0 = (START - epoch) / timedelta(days=1)
    serial = serial0 + np.arange(n) * step_ms / 86_400_000
    tmp = path.with_suffix(".part.xlsx")
    wb = xlsxwriter.Workbook(str(tmp), {"constant_memory": True})
    fmt = wb.add_format({"num_format": "yyyy-mm-dd hh:mm:ss.000" if step_ms < 1000
                         else "yyyy-mm-dd hh:mm:ss"})
    ws_s = wb.add_worksheet("Survey")
    ws_s.write_row(0, 0, ["Field", "Value"])
    ws_s.write_row(1, 0, ["Position", f"BENCH-{seed}"])
    ws_s.write_row(2, 0, ["Time zone", "Europe/Berlin"])
    ws_s.write_row(3, 0, ["Calibration before (dB)", 94.0])
    ws_s.write_row(4, 0, ["Calibration after (dB)", 94.1])
    # Rows in order (constant-memory mode). The generated instants are continuous UTC.
    ws_s.write_row(5, 0, ["Clock", "UTC"])
    ws = wb.add_worksheet("Readings")
    ws.write_row(0, 0, ["Start", *[f"{c} (dB)" for c in columns]])
    cols = [data[c] for c in columns]
    for i in range(n):
        ws.write_number(i + 1, 0, serial[i], fmt)
        for j, col in enumerate(cols):
            ws.write_number(i + 1, j + 1, col[i])
    wb.close()
    tmp.rename(path)


BARE_READ = (
    "import sys, fastexcel; r = fastexcel.read_excel(sys.argv[1]); "
    "t = r.load_sheet('Readings', schema_sample_rows=None).to_arrow(); print(t.num_rows)"
)

MEASURE = (
    "import resource, subprocess, sys, time, json; t = time.perf_counter(); "
    "p = subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE); "
    "dt = time.perf_counter() - t; "
    "print(json.dumps({'s': dt, 'rc': p.returncode, "
    "'rss_mib': resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024, "
    "'err': p.stderr.decode()[-300:]}))"
)


def measure(cmd: list[str]) -> dict[str, float]:
    """Run ``cmd`` in a fresh process tree; return wall seconds and the peak RSS [MiB]."""
    out = subprocess.run([sys.executable, "-c", MEASURE, *cmd], capture_output=True,
                         text=True, check=True)
    res = json.loads(out.stdout)
    if res["rc"] not in (0, 1):
        raise SystemExit(f"command failed ({res['rc']}): {' '.join(cmd)}\n{res['err']}")
    return res


def surveytools_cmd(*args: str) -> list[str]:
    exe = shutil.which("surveytools") or ""
    base = [exe] if exe else [sys.executable, "-m", "surveytools"]
    return [*base, *args]


def check_100ms(path: Path, n: int) -> bool:
    """Untimed: every 100 ms timestamp read back exactly (integer ms) by surveytools."""
    from surveytools.inputs.read import read_workbook
    from surveytools.settings import Settings
    from surveytools.validation import build_survey

    survey = build_survey(read_workbook(path, Settings()), Settings())
    starts = survey.readings["start_ms"].to_numpy()
    steps = np.diff(starts)
    return len(starts) == n and bool(np.all(steps == 100))


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--repeats", type=int, default=3)
    ap.add_argument("--workdir", type=Path, default=Path(tempfile.gettempdir()) / "st-bench")
    ap.add_argument("--quick", action="store_true", help="smaller files, for a smoke test")
    args = ap.parse_args()
    work = args.workdir
    work.mkdir(parents=True, exist_ok=True)
    scale = 10 if args.quick else 1
    files = {
        "week_1s": (work / f"week_1s{'_q' if args.quick else ''}.xlsx", 604_800 // scale, 1000,
                    ("LAeq", "LAFmax", "LAFmin", "LAF90")),
        "day_100ms": (work / f"day_100ms{'_q' if args.quick else ''}.xlsx", 864_000 // scale,
                      100, ("LAeq",)),
        "month_15min": (work / "month_15min.xlsx", 2_880, 900_000,
                        ("LAeq", "LAFmax", "LAF10", "LAF50", "LAF90")),
    }
    print("generating logs (once; cached in", work, ")", flush=True)
    for k, (p, n, step, cols) in enumerate(files.values()):
        generate(p, n, step, cols, seed=k)
    batch_dir = work / "batch24"
    batch_dir.mkdir(exist_ok=True)
    month = files["month_15min"][0]
    for i in range(24):
        target = batch_dir / f"month_{i:02d}.xlsx"
        if not target.exists():
            shutil.copy(month, target)

    # Byte-compile the package first, as pip does when it installs it: an editable
    # checkout run with PYTHONDONTWRITEBYTECODE would otherwise compile every module of
    # ours again in every process (~0.2 s per run here), which no installed copy pays.
    import compileall

    import surveytools

    compileall.compile_dir(str(Path(surveytools.__file__).parent), quiet=1)

    results: dict[str, list[dict[str, float]]] = {}
    out_root = Path(tempfile.mkdtemp(prefix="st-bench-out-"))
    for rep in range(args.repeats):
        print(f"round {rep + 1}/{args.repeats}", flush=True)
        for name, (path, _n, _s, _c) in files.items():
            results.setdefault(f"{name}:read", []).append(
                measure([sys.executable, "-c", BARE_READ, str(path)]))
            results.setdefault(f"{name}:run", []).append(measure(surveytools_cmd(
                "run", str(path), "-o", str(out_root / f"{name}_{rep}"), "--quiet",
                "--settle", "0", "--force", "--jobs", "1")))
        for jobs in (1, 2):
            results.setdefault(f"batch24:jobs{jobs}", []).append(measure(surveytools_cmd(
                "run", str(batch_dir), "-o", str(out_root / f"batch_{jobs}_{rep}"), "--quiet",
                "--settle", "0", "--force", "--jobs", str(jobs))))
        results.setdefault("version", []).append(measure(surveytools_cmd("--version")))

    def med(key: str) -> float:
        return statistics.median(r["s"] for r in results[key])

    def peak(key: str) -> float:
        return max(r["rss_mib"] for r in results[key])

    def paired_ratio(a: str, b: str) -> float:
        return statistics.median(x["s"] / y["s"] for x, y in zip(results[a], results[b],
                                                                 strict=True))

    print("\n| measurement | median s | peak MiB |")
    print("|---|---:|---:|")
    for key in results:
        print(f"| {key} | {med(key):.2f} | {peak(key):.0f} |")
    checks = []
    for name in files:
        r = paired_ratio(f"{name}:run", f"{name}:read")
        print(f"{name}: surveytools run / bare read = {r:.2f} (paired median)")
        if name in ("week_1s", "day_100ms"):
            checks.append((f"{name} ratio <= 2.0", r <= 2.0))
    checks.append(("week_1s peak <= 1.5 GiB", peak("week_1s:run") <= 1536))
    speedup = paired_ratio("batch24:jobs1", "batch24:jobs2")
    print(f"batch of 24: --jobs 1 / --jobs 2 = {speedup:.2f}x")
    checks.append(("batch --jobs 2 >= 1.6x faster", speedup >= 1.6))
    checks.append(("--version < 0.5 s", med("version") < 0.5))
    exact = check_100ms(files["day_100ms"][0], files["day_100ms"][1])
    checks.append(("100 ms timestamps exact", exact))
    print("\ntargets:")
    for label, ok in checks:
        print(f"  {'PASS' if ok else 'FAIL'}  {label}")
    shutil.rmtree(out_root, ignore_errors=True)
    return 0 if all(ok for _l, ok in checks) else 1


if __name__ == "__main__":
    os.environ.setdefault("PYTHONHASHSEED", "0")
    sys.exit(main())
