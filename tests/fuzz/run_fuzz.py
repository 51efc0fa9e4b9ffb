"""Fuzz the command line with mutated workbooks, CSV files and settings (not a unit test).

Run from the repository root::

    python tests/fuzz/run_fuzz.py --count 200 --seconds 300 --seed 1

It builds a small valid survey workbook and CSV file, derives ``--count`` mutants from them
(byte flips and cuts of the zip, altered XML inside an otherwise valid zip, extreme cell
values, hostile CSV text), then runs ``surveytools check --format json`` over them in
batches, and the settings mutants one by one. Each record is judged against the rules:

- the command ends within its time limit and with exit code 0, 1 or 2;
- no input is reported as an ``internal-error`` (a fault of ours);
- no message carries a library's raw exception text (``BadZipFile``, ``CalamineError``,
  ``ValueError:``, zlib or Expat wording, a Python traceback);
- settings mutants end with exit 0 or 2 and a message in our words.

Bounded in time (``--seconds``, checked between batches) and in count; the mutants are
written to a temporary folder (kept with ``--keep``). Exit status 1 when any rule broke; the
offending records are listed. The name does not start with ``test_``: pytest never collects
it.
"""

from __future__ import annotations

import argparse
import json
import random
import re
import shutil
import subprocess
import sys
import tempfile
import time
import zipfile
from datetime import datetime, timedelta
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

#: Wording that betrays a library's raw exception text in a user-facing message.
RAW_TEXT = re.compile(
    r"BadZipFile|CalamineError|PanicException|ArrowInvalid|Traceback|"
    r"\b(Value|Type|Key|Index|Attribute|Overflow|OS|Unicode\w*|Zip\w*)Error\b|"
    r"invalid literal for|zlib|Error -3 while|not well-formed|ExpatError|"
    r"Errno \d+")

#: Extreme values written into single cells of a valid workbook.
EXTREMES: list[tuple[str, str, object]] = [
    ("Readings", "A5", "9999-12-31 23:59:59"),
    ("Readings", "A5", 3_000_000),
    ("Readings", "A5", -1e308),
    ("Readings", "A5", datetime(1926, 6, 1, 10, 0)),
    ("Readings", "A5", "03/06/2026 10:00"),
    ("Readings", "B5", 1e15),
    ("Readings", "B5", -1.0),
    ("Readings", "C5", 1e308),
    ("Readings", "C5", float("nan")),
    ("Survey", "B4", "Europe/" + "x" * 300),
    ("Survey", "B2", "P" * 5000),
]

SETTINGS_MUTANTS = [
    "reporting_interval = \"1ms\"\n",
    "reporting_interval = \"0s\"\n",
    "coverage_threshold = nan\n",
    "coverage_threshold = inf\n",
    "percentiles = " + "[" * 200 + "]" * 200 + "\n",
    "[survey]\ntime_zone = \"" + "x" * 300 + "\"\n",
    "reporting_interval = 15\n",
    "\x00\x01\x02",
    "[background]\nreference_interval = \"1ms\"\n",
]


def base_workbook(path: Path) -> Path:
    """Write the valid workbook every mutant starts from (24 hourly readings)."""
    from tests.workbooks import survey_workbook

    return survey_workbook(path)


def base_csv(path: Path) -> Path:
    """Write a valid CSV log of 24 hourly readings."""
    start = datetime(2026, 6, 1, 7)
    lines = ["Start,Duration (s),LAeq (dB)"]
    lines += [f"{(start + timedelta(hours=i)).isoformat(' ')},3600,{55 + i % 5}.0"
              for i in range(24)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def flip_bytes(data: bytes, rng: random.Random) -> bytes:
    """Change a few random bytes of the whole file (the zip usually breaks)."""
    b = bytearray(data)
    for _ in range(rng.randint(1, 8)):
        b[rng.randrange(len(b))] = rng.randrange(256)
    return bytes(b)


def cut(data: bytes, rng: random.Random) -> bytes:
    """Cut the file short (an interrupted copy)."""
    return data[: rng.randrange(1, len(data))]


def mutate_member(src: Path, dst: Path, rng: random.Random) -> None:
    """Re-zip ``src`` with one XML part altered (a valid zip with damaged contents)."""
    with zipfile.ZipFile(src) as zin:
        names = zin.namelist()
        victim = rng.choice([n for n in names if n.endswith(".xml")])
        with zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
            for name in names:
                data = zin.read(name)
                if name == victim:
                    data = _mutate_xml(data, rng)
                zout.writestr(name, data)


def _mutate_xml(data: bytes, rng: random.Random) -> bytes:
    text = data.decode("utf-8", "replace")
    choice = rng.randrange(6)
    if choice == 0:  # a number attribute made text
        return re.sub(r'(s|r|count|uniqueCount)="[^"]*"', r'\1="x1"', text, count=3).encode()
    if choice == 1:  # a huge declared count or cell reference
        return re.sub(r'(count|uniqueCount)="\d+"', r'\1="4000000000"', text).replace(
            'r="A2"', 'r="ZZZZZ1"').encode()
    if choice == 2:  # cut the XML
        return data[: rng.randrange(1, max(2, len(data)))]
    if choice == 3:  # a stray character
        i = rng.randrange(len(text))
        return (text[:i] + rng.choice("<&>\"\x00\x1f") + text[i:]).encode("utf-8", "replace")
    if choice == 4:  # a value made enormous
        return re.sub(r"<v>([0-9.]+)</v>", "<v>1e308</v>", text, count=rng.randint(1, 5)).encode()
    return bytes(rng.randrange(256) for _ in range(rng.randint(1, 200)))


def set_cell(src: Path, dst: Path, sheet: str, cell: str, value: object) -> None:
    """Write ``value`` into one cell of a copy of ``src``."""
    import openpyxl

    wb = openpyxl.load_workbook(src)
    ws = wb[sheet]
    ws[cell] = value
    if isinstance(value, int | float) and cell.startswith("A"):
        ws[cell].number_format = "yyyy-mm-dd hh:mm:ss"
    wb.save(dst)


def mutate_csv(text: str, rng: random.Random) -> str:
    """Damage a CSV log: stray quotes, fields, encodings, day-first dates."""
    lines = text.splitlines()
    i = rng.randrange(1, len(lines))
    choice = rng.randrange(5)
    if choice == 0:
        lines[i] = lines[i] + ',"unclosed'
    elif choice == 1:
        lines[i] = lines[i] + ",1,2,3,4"
    elif choice == 2:
        lines = [lines[0]] + [re.sub(r"(\d{4})-(\d\d)-(\d\d)", r"\3/\2/\1", ln)
                              for ln in lines[1:]]
    elif choice == 3:
        lines[i] = lines[i].replace("2026", "1926")
    else:
        lines[i] = "\x00" * rng.randint(1, 50)
    return "\n".join(lines) + "\n"


def make_mutants(folder: Path, count: int, rng: random.Random) -> list[Path]:
    """Write ``count`` mutants into ``folder`` and return their paths."""
    seed_dir = folder / "_seed"
    seed_dir.mkdir()
    wb = base_workbook(seed_dir / "base.xlsx")
    csv = base_csv(seed_dir / "base.csv")
    data = wb.read_bytes()
    out = []
    for k in range(count):
        kind = k % 5
        if kind == 0:
            p = folder / f"m{k:04d}_flip.xlsx"
            p.write_bytes(flip_bytes(data, rng) if rng.random() < 0.7 else cut(data, rng))
        elif kind in (1, 2):
            p = folder / f"m{k:04d}_xml.xlsx"
            mutate_member(wb, p, rng)
        elif kind == 3:
            sheet, cell, value = EXTREMES[(k // 5) % len(EXTREMES)]
            p = folder / f"m{k:04d}_cell.xlsx"
            set_cell(wb, p, sheet, cell, value)
        else:
            p = folder / f"m{k:04d}.csv"
            p.write_text(mutate_csv(csv.read_text(encoding="utf-8"), rng), encoding="utf-8")
        out.append(p)
    return out


#: Where the runs' debug log goes (a library's raw text behind each message), set by main.
DEBUG_LOG: Path | None = None


def surveytools(*args: str, timeout: float) -> subprocess.CompletedProcess[str]:
    """Run the command line (a fresh interpreter, as a user would)."""
    import os

    env = dict(os.environ)
    if DEBUG_LOG is not None:
        env["SURVEYTOOLS_DEBUG_LOG"] = str(DEBUG_LOG)
    return subprocess.run([sys.executable, "-m", "surveytools", *args], capture_output=True,
                          text=True, timeout=timeout, check=False, cwd=ROOT, env=env)


def judge_batch(paths: list[Path], timeout: float, mode: str = "run",
                out: Path | None = None) -> list[str]:
    """Process a batch of inputs (``run`` or ``check``); return the broken rules, one each."""
    problems = []
    extra = ["-o", str(out)] if mode == "run" and out is not None else []
    try:
        proc = surveytools(mode, *map(str, paths), *extra, "--format", "json", "--settle", "0",
                           "--timeout", "60", "--memory-limit", "1", timeout=timeout)
    except subprocess.TimeoutExpired:
        return [f"batch of {len(paths)} from {paths[0].name}: no answer in {timeout:g} s"]
    if proc.returncode not in (0, 1) or RAW_TEXT.search(proc.stderr):
        problems.append(f"batch from {paths[0].name}: exit {proc.returncode}: "
                        f"{proc.stderr.strip()[:300]}")
        return problems
    doc = json.loads(proc.stdout)
    for rec in doc["inputs"]:
        findings = rec.get("findings")
        if mode == "run":  # the overview holds totals: the findings are in each results file
            findings = []
            if out is not None and rec.get("results_json"):
                findings = json.loads((out / rec["results_json"]).read_text())["findings"]
            elif rec.get("reason"):
                findings = [{"code": "?", "message": rec["reason"]}]
        for f in findings or []:
            if f["code"] == "internal-error":
                problems.append(f"{rec['file']}: internal-error: {f['message'][:200]}")
            elif RAW_TEXT.search(f["message"]):
                problems.append(f"{rec['file']}: raw library text [{f['code']}]: "
                                f"{f['message'][:200]}")
    return problems


def judge_settings(folder: Path, base: Path, timeout: float) -> list[str]:
    """Run ``check`` with each settings mutant; return the broken rules."""
    import os

    problems = []
    special: list[tuple[str, Path]] = [("/dev/zero", Path("/dev/zero"))]
    if hasattr(os, "mkfifo"):
        os.mkfifo(folder / "fifo.toml")
        special.append(("a FIFO", folder / "fifo.toml"))
    cases = [(text, folder / f"settings_{k}.toml") for k, text in enumerate(SETTINGS_MUTANTS)]
    for text, s in cases:
        s.write_text(text, encoding="utf-8", errors="replace")
    for k, (text, s) in enumerate(cases + special):
        try:
            proc = surveytools("check", str(base), "--settings", str(s), "--settle", "0",
                               timeout=timeout)
        except subprocess.TimeoutExpired:
            problems.append(f"settings {k}: no answer in {timeout:g} s")
            continue
        if proc.returncode not in (0, 1, 2) or "internal error" in proc.stderr \
                or RAW_TEXT.search(proc.stderr):
            problems.append(f"settings {k} ({text[:40]!r}): exit {proc.returncode}: "
                            f"{proc.stderr.strip()[:200]}")
    return problems


def main(argv: list[str] | None = None) -> int:
    """Build the mutants, run them within the bounds, report; return the exit status."""
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--count", type=int, default=100, help="mutated inputs (default 100)")
    parser.add_argument("--seconds", type=float, default=300.0,
                        help="stop starting new batches after this long (default 300)")
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--batch", type=int, default=25, help="inputs per command run")
    parser.add_argument("--keep", action="store_true", help="keep the mutants' folder")
    parser.add_argument("--mode", choices=("run", "check"), default="run",
                        help="run (validate, assess and write; default) or check only")
    args = parser.parse_args(argv)
    rng = random.Random(args.seed)
    started = time.monotonic()
    folder = Path(tempfile.mkdtemp(prefix="surveytools-fuzz-"))
    global DEBUG_LOG
    DEBUG_LOG = folder / "debug.log"
    problems: list[str] = []
    try:
        paths = make_mutants(folder, min(args.count, 5000), rng)
        done = 0
        for i in range(0, len(paths), args.batch):
            if time.monotonic() - started > args.seconds:
                print(f"time limit reached after {done} inputs")
                break
            chunk = paths[i:i + args.batch]
            problems += judge_batch(chunk, timeout=max(60.0, 30.0 * len(chunk)),
                                    mode=args.mode, out=folder / "_results")
            done += len(chunk)
        if time.monotonic() - started <= args.seconds:
            problems += judge_settings(folder, folder / "_seed" / "base.xlsx", timeout=60)
        print(f"{done} inputs and {len(SETTINGS_MUTANTS)} settings files checked in "
              f"{time.monotonic() - started:.0f} s; {len(problems)} problem(s)")
        for p in problems:
            print("  " + p)
        if problems and DEBUG_LOG.exists():  # the raw text behind the messages
            print("debug log (last 4000 characters):")
            print(DEBUG_LOG.read_text(encoding="utf-8", errors="replace")[-4000:])
    finally:
        if args.keep:
            print(f"mutants kept in {folder}")
        else:
            shutil.rmtree(folder, ignore_errors=True)
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
