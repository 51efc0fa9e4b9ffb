#!/usr/bin/env python3
"""What one-third-octave band levels add to a run (a script, not part of the unit tests).

Target (issue 15): a week of 1-minute readings with 33 bands must not add more than one
second to ``surveytools run``. Measured two ways, each the median of several alternating
repeats:

- in process: :func:`surveytools.assessment.assess` on the same Survey with and without
  its 33 band columns (the assessment's own added cost);
- end to end: ``surveytools run`` on two generated workbooks, the same log with and
  without band columns (reading 332,640 more cells, the spectral section, the Spectra
  sheet, and the Readings sheet repeating every band level); and the same again with
  ``[output] readings_row_limit = 0`` (no Readings sheet), which isolates the cost of
  writing the band levels back into the Readings sheet.

Usage::

    python tests/benchmarks/spectral_benchmark.py [--repeats 5] [--workdir DIR] [--quick]
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from datetime import datetime, timedelta
from pathlib import Path

import numpy as np

BANDS_HZ = (
    12.5, 16.0, 20.0, 25.0, 31.5, 40.0, 50.0, 63.0, 80.0, 100.0, 125.0, 160.0, 200.0, 250.0,
    315.0, 400.0, 500.0, 630.0, 800.0, 1000.0, 1250.0, 1600.0, 2000.0, 2500.0, 3150.0,
    4000.0, 5000.0, 6300.0, 8000.0, 10000.0, 12500.0, 16000.0, 20000.0,
)
N_WEEK_1MIN = 7 * 1440
START = datetime(2026, 3, 2, 0, 0, 0)
TARGET_ADDED_S = 1.0


def invented_levels(n: int, seed: int) -> tuple[np.ndarray, np.ndarray]:
    """Broadband LAeq and band levels (n x 33) of an invented log with a night-time tone."""
    from surveytools.indicators.weighting import band_total

    rng = np.random.default_rng(seed)
    hours = (np.arange(n) / 60.0) % 24
    base = 40 + 8 * np.sin((hours - 8) / 24 * 2 * np.pi)
    bands = base[:, None] - 0.8 * np.abs(np.arange(len(BANDS_HZ)) - 12)[None, :] \
        + rng.normal(0.0, 0.7, (n, len(BANDS_HZ)))
    night = (hours >= 23) | (hours < 5)
    bands[night, BANDS_HZ.index(100.0)] += 18.0
    bands = np.round(np.maximum(bands, 12.0), 1)
    laeq = np.round(np.asarray(band_total(bands, BANDS_HZ, "A")), 1)
    return laeq, bands


def write_workbook(path: Path, with_bands: bool, n: int) -> None:
    import xlsxwriter

    laeq, bands = invented_levels(n, 15)
    wb = xlsxwriter.Workbook(str(path), {"constant_memory": True})
    survey = wb.add_worksheet("Survey")
    survey.write_row(0, 0, ("Field", "Value"))
    survey.write_row(1, 0, ("Position", "BENCH-15"))
    survey.write_row(2, 0, ("Time zone", "UTC"))
    ws = wb.add_worksheet("Readings")
    header = ["Start", "Duration (s)", "LAeq (dB)"]
    if with_bands:
        header += [f"LZeq {f:g} Hz" for f in BANDS_HZ]
    ws.write_row(0, 0, header)
    fmt = wb.add_format({"num_format": "yyyy-mm-dd hh:mm:ss"})
    for i in range(n):
        ws.write_datetime(i + 1, 0, START + timedelta(minutes=i), fmt)
        ws.write_number(i + 1, 1, 60)
        ws.write_number(i + 1, 2, float(laeq[i]))
        if with_bands:
            ws.write_row(i + 1, 3, bands[i].tolist())
    wb.close()


def in_process(repeats: int, n: int) -> tuple[float, float]:
    """Median assess() time [s] without and with the band columns."""
    sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "assessment"))
    from conftest import build_survey  # type: ignore[import-not-found]

    from surveytools.assessment import assess
    from surveytools.inputs.columns import band_name
    from surveytools.settings import Settings

    laeq, bands = invented_levels(n, 15)
    starts = (np.int64(1_772_409_600_000) + 60_000 * np.arange(n, dtype=np.int64)).tolist()
    plain = build_survey(starts, 60, {"LAeq": laeq}, zone="UTC")
    banded = build_survey(starts, 60, {"LAeq": laeq}, zone="UTC")
    for k, f in enumerate(BANDS_HZ):
        banded.readings[band_name(f)] = bands[:, k]
    times: dict[bool, list[float]] = {False: [], True: []}
    for _ in range(repeats):
        for with_bands, survey in ((False, plain), (True, banded)):
            survey.findings.clear()
            t0 = time.perf_counter()
            assess(survey, Settings())
            times[with_bands].append(time.perf_counter() - t0)
    return statistics.median(times[False]), statistics.median(times[True])


def end_to_end(repeats: int, n: int, workdir: Path, settings: Path | None = None
               ) -> tuple[float, float]:
    """Median ``surveytools run`` wall time [s] without and with band columns."""
    files = {False: workdir / "week_1min_plain.xlsx", True: workdir / "week_1min_bands.xlsx"}
    for with_bands, path in files.items():
        if not path.exists():
            write_workbook(path, with_bands, n)
    exe = Path(sys.executable).with_name("surveytools")
    times: dict[bool, list[float]] = {False: [], True: []}
    for r in range(repeats):
        for with_bands, path in files.items():
            out = workdir / f"out_{int(with_bands)}_{r}_{settings is not None}"
            t0 = time.perf_counter()
            command = [str(exe), "run", str(path), "-o", str(out), "--quiet"]
            if settings is not None:
                command += ["--settings", str(settings)]
            subprocess.run(command, check=False, capture_output=True)
            times[with_bands].append(time.perf_counter() - t0)
    return statistics.median(times[False]), statistics.median(times[True])


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=5)
    parser.add_argument("--workdir", type=Path, default=None)
    parser.add_argument("--quick", action="store_true", help="in-process measurement only")
    args = parser.parse_args()
    plain, banded = in_process(args.repeats, N_WEEK_1MIN)
    print(f"assess(), week of 1-min readings: {plain:.3f} s plain, {banded:.3f} s with 33 "
          f"bands: +{banded - plain:.3f} s")
    ok = banded - plain <= TARGET_ADDED_S
    if not args.quick:
        workdir = args.workdir or Path(tempfile.mkdtemp(prefix="surveytools-spectral-"))
        workdir.mkdir(parents=True, exist_ok=True)
        plain_run, banded_run = end_to_end(args.repeats, N_WEEK_1MIN, workdir)
        print(f"surveytools run, same week: {plain_run:.2f} s plain, {banded_run:.2f} s with "
              f"33 bands: +{banded_run - plain_run:.2f} s")
        ok = ok and banded_run - plain_run <= TARGET_ADDED_S
        # the same without the annotated Readings sheet, which repeats every band level
        # (332,640 more cells): what the frequency analysis itself adds to a run
        no_readings = workdir / "no_readings.toml"
        no_readings.write_text("[output]\nreadings_row_limit = 0\n", encoding="utf-8")
        plain_short, banded_short = end_to_end(args.repeats, N_WEEK_1MIN, workdir, no_readings)
        print(f"surveytools run without the Readings sheet: {plain_short:.2f} s plain, "
              f"{banded_short:.2f} s with 33 bands: +{banded_short - plain_short:.2f} s")
    print(f"target: at most +{TARGET_ADDED_S:.1f} s -> {'met' if ok else 'NOT met'}")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main())
