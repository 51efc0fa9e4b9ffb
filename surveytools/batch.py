"""The batch: find inputs, run one worker process per input, collect outcomes, write the overview.

Rules: only regular files are read (links, pipes and devices are skipped with a note);
lock and temporary files of spreadsheet programs are skipped; a file whose size or
modification time changes while we look is deferred, not failed; one input's failure
(even a crash of its worker) never stops the others; inputs are never modified.
"""

from __future__ import annotations

import errno
import json
import os
import re
import stat
import subprocess
import sys
import threading
import time
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from surveytools import __version__
from surveytools.errors import os_reason
from surveytools.inputs.kinds import CSV_SUFFIXES, PARQUET_SUFFIXES, WORKBOOK_SUFFIXES
from surveytools.verdict import UNWRITTEN

#: Name prefixes of lock / temporary / metadata files left by spreadsheet programs and
#: file systems (Office owner files, LibreOffice locks, macOS AppleDouble files).
SKIPPED_PREFIXES = ("~$", ".~lock.", "._", ".")
#: Name suffixes of temporary files.
SKIPPED_SUFFIXES = (".tmp", ".part", "#")
#: Our own outputs, never taken as inputs when the output folder is inside an input folder.
OUTPUT_MARKERS = (".results.xlsx", ".results.json", "overview.xlsx", "overview.json")

MANIFEST_NAME = ".surveytools-manifest.json"

#: Default memory limit per worker [bytes] (a week of 1-s readings peaks near 0.5 GiB).
DEFAULT_MEMORY_BYTES = 4 * 1024**3
#: Default wall-clock limit per input [s].
DEFAULT_TIMEOUT_S = 900.0


@dataclass
class Candidate:
    """An input found on disk."""

    path: Path
    size: int
    mtime_ns: int
    #: Found by scanning a folder (a drop folder, where copies may still be arriving), as
    #: opposed to named on the command line.
    from_folder: bool = False


@dataclass
class Skipped:
    """A path that was not processed, with the reason (shown to the user and in overview)."""

    path: str
    code: str
    reason: str
    status: str = "skipped"  # or "deferred"

    def to_json(self) -> dict[str, str]:
        """Return a JSON-ready dict."""
        return dict(self.__dict__)


@dataclass
class BatchOptions:
    """Options of one batch run (built by the CLI)."""

    paths: list[Path]
    out_dir: Path | None = None
    settings_path: Path | None = None
    jobs: int = 1
    mode: str = "run"
    include_readings: bool = False
    settle_s: float = 1.0
    memory_bytes: int | None = DEFAULT_MEMORY_BYTES
    timeout_s: float = DEFAULT_TIMEOUT_S
    force: bool = False
    #: Program and arguments run once per new alert (``--on-alert``), None for none.
    on_alert: list[str] | None = None
    on_alert_timeout_s: float = 30.0
    #: Shared weather file applied to every input (``--weather``).
    weather_path: Path | None = None


@dataclass
class BatchResult:
    """All outcomes of one batch run."""

    outcomes: list[dict[str, Any]] = field(default_factory=list)
    skipped: list[Skipped] = field(default_factory=list)
    reused: list[str] = field(default_factory=list)
    #: Alerts appended to the ledger by this run (:class:`surveytools.alerts.Alert`).
    alerts: list[Any] = field(default_factory=list)
    #: What went wrong writing the ledger or running the alert program (never fatal).
    alert_problems: list[str] = field(default_factory=list)
    #: Why the overview or manifest could not be written at the end (a full disk), or None.
    output_error: str | None = None

    def counts(self) -> dict[str, int]:
        """Return the number of inputs per final status."""
        out = {"ok": 0, "warnings": 0, "errors": 0, "unreadable": 0, UNWRITTEN: 0,
               "skipped": 0, "deferred": 0}
        for o in self.outcomes:
            out[o["status"]] = out.get(o["status"], 0) + 1
        for s in self.skipped:
            out[s.status] += 1
        return out

    def exit_code(self) -> int:
        """Return 0: every input processed without errors; 1: some were not; 2: no overview."""
        if self.output_error:
            return 2
        c = self.counts()
        missing = any(s.code == "path-missing" for s in self.skipped)
        return 1 if (c["errors"] or c["unreadable"] or c[UNWRITTEN] or c["deferred"]
                     or missing) else 0


def _skip_reason(name: str) -> str | None:
    low = name.lower()
    if any(name.startswith(p) for p in SKIPPED_PREFIXES):
        return "a lock, temporary or hidden file of a spreadsheet program or file system"
    if any(low.endswith(s) for s in SKIPPED_SUFFIXES):
        return "a temporary file"
    if any(low.endswith(m) for m in OUTPUT_MARKERS):
        return "an output of surveytools"
    return None


def missing_path_reason(exc: OSError) -> str:
    """Return why a named path cannot be read, in our words (never the system's text)."""
    hint = "; check the spelling of the path" if exc.errno == errno.ENOENT else ""
    return f"cannot be read: {os_reason(exc)}{hint}"


def discover(paths: list[Path]) -> tuple[list[Candidate], list[Skipped]]:
    """Expand files and folders into input candidates; everything else is reported skipped."""
    found: list[Candidate] = []
    skipped: list[Skipped] = []
    suffixes = WORKBOOK_SUFFIXES + CSV_SUFFIXES + PARQUET_SUFFIXES

    def consider(p: Path, explicit: bool) -> None:
        try:
            st = os.lstat(p)
        except OSError as exc:
            skipped.append(Skipped(str(p), "path-missing", missing_path_reason(exc)))
            return
        if stat.S_ISLNK(st.st_mode):
            skipped.append(Skipped(str(p), "not-regular-file",
                                   "a symbolic link; copy the workbook itself into the folder"))
            return
        if not stat.S_ISREG(st.st_mode):
            skipped.append(Skipped(str(p), "not-regular-file",
                                   "not a regular file (pipe, device or socket)"))
            return
        reason = _skip_reason(p.name)
        if reason:
            # the tool's own results found in a folder (-o pointing at the inputs) are
            # passed over like any other file that is not a survey; named, they are told
            own_output = any(p.name.lower().endswith(m) for m in OUTPUT_MARKERS)
            if explicit or (p.suffix.lower() in suffixes and not own_output):
                skipped.append(Skipped(str(p), "lock-or-temp-file", reason))
            return
        if p.suffix.lower() not in suffixes:
            if explicit:
                skipped.append(Skipped(str(p), "not-a-survey-file",
                                       "not an .xlsx, .xlsm, .csv or .parquet file"))
            return
        found.append(Candidate(p, st.st_size, st.st_mtime_ns, from_folder=not explicit))

    for root in paths:
        try:
            is_dir = stat.S_ISDIR(os.lstat(root).st_mode)
        except OSError as exc:
            skipped.append(Skipped(str(root), "path-missing", missing_path_reason(exc)))
            continue
        if is_dir:
            with os.scandir(root) as it:
                entries = sorted(it, key=lambda e: e.name)
            for entry in entries:
                if entry.is_dir(follow_symlinks=False):
                    continue
                consider(Path(entry.path), explicit=False)
        else:
            consider(root, explicit=True)
    # The same file given twice is processed once.
    unique: dict[str, Candidate] = {}
    for c in found:
        unique.setdefault(str(c.path.resolve()), c)
    return list(unique.values()), skipped


def _zip_complete(path: Path) -> bool:
    """Return True when the file ends with a zip end-of-central-directory record."""
    try:
        with path.open("rb", buffering=0) as fh:
            size = os.fstat(fh.fileno()).st_size
            fh.seek(max(0, size - 66_000))
            tail = fh.read()
    except OSError:
        return False
    return b"PK\x05\x06" in tail


def settle(candidates: list[Candidate], settle_s: float) -> tuple[list[Candidate], list[Skipped]]:
    """Defer files whose size or modification time changes across ``settle_s`` seconds.

    Only files found in folders are watched this way (a drop folder may hold a copy still
    arriving); a file named on the command line is taken as it is, without waiting.
    """
    if settle_s > 0 and any(c.from_folder for c in candidates):
        time.sleep(settle_s)
    ready: list[Candidate] = []
    deferred: list[Skipped] = []
    for c in candidates:
        try:
            st = os.lstat(c.path)
        except OSError:
            deferred.append(Skipped(str(c.path), "file-changing", "disappeared while being read",
                                    status="deferred"))
            continue
        changing = st.st_size != c.size or st.st_mtime_ns != c.mtime_ns
        incomplete = (c.path.suffix.lower() in WORKBOOK_SUFFIXES and st.st_size > 0
                      and not _zip_complete(c.path) and changing)
        if changing or incomplete:
            deferred.append(Skipped(str(c.path), "file-changing",
                                    "still being written or copied (its size or time changed); "
                                    "it will be processed on the next run", status="deferred"))
        else:
            ready.append(c)
    return ready, deferred


def output_stems(candidates: list[Candidate]) -> dict[str, str]:
    """Choose a unique, safe output stem per input path."""
    from surveytools.outputs.atomic import safe_stem

    stems: dict[str, str] = {}
    taken: set[str] = set()
    for c in sorted(candidates, key=lambda c: str(c.path)):
        stem = safe_stem(c.path.stem)
        if stem.lower() in taken:
            import hashlib

            tag = hashlib.sha256(str(c.path.resolve()).encode()).hexdigest()[:8]
            stem = f"{stem}__{tag}"
        taken.add(stem.lower())
        stems[str(c.path)] = stem
    return stems


#: Why a write into the output folder failed, by errno: (finding code, our words).
_WRITE_FAULTS = {
    errno.ENOSPC: ("output-disk-full", "the disk is full (no space left)"),
    errno.EDQUOT: ("output-disk-full", "your disk quota is used up"),
    errno.EFBIG: ("output-disk-full", "the file system refused a file that large"),
    errno.EROFS: ("output-not-writable", "the file system is read-only"),
    errno.EACCES: ("output-not-writable", "you have no permission to write there"),
    errno.EPERM: ("output-not-writable", "you have no permission to write there"),
    errno.ENOTDIR: ("output-not-writable", "part of that path is a file, not a folder"),
    errno.EEXIST: ("output-not-writable", "a file of that name exists where a folder should be"),
}


def os_error_in(exc: BaseException) -> OSError | None:
    """Return the operating-system error behind ``exc`` (itself, its cause or first arg)."""
    seen: set[int] = set()
    todo: list[object] = [exc]
    while todo:
        e = todo.pop()
        if not isinstance(e, BaseException) or id(e) in seen:
            continue
        seen.add(id(e))
        if isinstance(e, OSError) and e.errno is not None:
            return e
        todo.extend([e.__cause__, e.__context__, *e.args[:1]])
    return None


def describe_write_fault(exc: OSError) -> tuple[str, str]:
    """Return (finding code, reason in our words) for a failed write into the output folder."""
    if exc.errno in _WRITE_FAULTS:
        return _WRITE_FAULTS[exc.errno]
    return "output-not-writable", os_reason(exc)


def write_failure(path: Path, out_dir: Path, exc: OSError) -> dict[str, Any]:
    """Return the failure of an input whose results could not be written (a full disk).

    Its status is ``unwritten``: the input was read (as far as it was) and is not to blame.
    """
    code, reason = describe_write_fault(exc)
    return _worker_failure(
        path, code, f"the results could not be written to {out_dir}: {reason}. Your input "
        "is fine as far as it was read; free some space (or choose another folder with -o) "
        "and run again - this file will be processed again", status=UNWRITTEN)


def check_output_folder(out_dir: Path) -> None:
    """Create ``out_dir`` if needed and prove a file can be written there, before any work.

    Raises
    ------
    SurveyToolsError
        The folder cannot be created or written (read-only, no permission, full disk); the
        message names the folder and why (exit 2).
    """
    import tempfile

    from surveytools.errors import SurveyToolsError

    try:
        out_dir.mkdir(parents=True, exist_ok=True)
        if not out_dir.is_dir():
            raise NotADirectoryError(errno.ENOTDIR, "not a folder", str(out_dir))
        with tempfile.NamedTemporaryFile(dir=out_dir, prefix=".surveytools-probe-",
                                         suffix=".part") as probe:
            probe.write(b"x" * 4096)
            probe.flush()
            os.fsync(probe.fileno())
    except OSError as exc:
        _code, reason = describe_write_fault(exc)
        raise SurveyToolsError(
            f"cannot write results to the folder {out_dir}: {reason}. Nothing was processed; "
            "choose another folder with -o/--output (or free some space) and run again"
        ) from None


def _worker_failure(path: Path, code: str, message: str, status: str = "unreadable"
                    ) -> dict[str, Any]:
    finding = {"severity": "error", "code": code, "message": message,
               "sheet": None, "row": None, "column": None}
    return {"path": str(path), "file": path.name, "status": status, "results_json": None,
            "results_xlsx": None, "sha256": None, "findings": [finding],
            "finding_totals": {"error": 1, "warning": 0, "info": 0}, "overview": {}}


def refusal_of(path: Path) -> dict[str, Any] | None:
    """Run the preflight in this (parent) process; return its refusal as a failure, or None.

    Used when a worker died or ran out of time: the worker starts reading while its own
    preflight still scans the sheets, so a hostile file (a sheet far larger than it claims,
    a zip member larger than declared) may kill the worker before that preflight could
    refuse it. The refusal, when there is one, is the message the user should see.
    """
    if path.suffix.lower() not in WORKBOOK_SUFFIXES:
        return None
    from surveytools.errors import WorkbookError
    from surveytools.inputs.preflight import preflight

    try:
        preflight(path)
    except WorkbookError as exc:
        return _worker_failure(path, exc.code, exc.message)
    except Exception:  # a fault of ours in the preflight: report the worker's failure
        return None
    return None


def _crash_failure(path: Path, rc: int | None, err: str) -> dict[str, Any]:
    """Map a dead worker's exit status and last words to a located failure."""
    lines = [line.strip() for line in err.strip().splitlines() if line.strip()]
    # The most telling line: the last "SomethingError: ..." of a traceback, else the last.
    errors = [line for line in lines if re.match(r"^[\w.]*(Error|Exception)\b", line)]
    tail = (errors or lines or [""])[-1][:300]
    if rc in (-6, 134) or any(sign in err for sign in OUT_OF_MEMORY_SIGNS):
        code, msg = ("worker-out-of-memory",
                     "reading this file needed more memory than allowed and was stopped; the file "
                     "may be damaged or hostile (a huge sparse sheet)")
    elif rc in (-24, -9, 137):
        code, msg = ("worker-killed", "processing was stopped by a CPU-time or kill limit")
    else:
        code, msg = ("internal-error",
                     "surveytools failed on this file (a fault in the tool, not in your data); "
                     "please report it with the file")
    if tail:  # the worker's last words (a library's raw text): the debug log only
        from surveytools.debuglog import log_raw

        log_raw(f"worker on {path} ended (exit status {rc})", err.strip()[-4000:] or tail)
    return _worker_failure(path, code, msg)


def _close_pipes(proc: subprocess.Popen[bytes]) -> None:
    import contextlib

    for stream in (proc.stdin, proc.stdout):
        if stream is not None:
            with contextlib.suppress(OSError):
                stream.close()


#: What a worker's last words say when it ran out of memory (Python, Rust, the C library).
#: A thread whose stack cannot be mapped under the worker's address-space limit fails with
#: "can't start new thread" (Python's RuntimeError for pthread_create's EAGAIN/ENOMEM).
OUT_OF_MEMORY_SIGNS = ("MemoryError", "memory allocation", "Cannot allocate memory",
                       "cannot allocate memory", "[Errno 12]", "std::bad_alloc",
                       "failed to map segment", "Memory allocation still failed",
                       "can't start new thread")


#: glibc malloc tuning for the workers: keep freed memory for reuse instead of returning it
#: to the system and faulting fresh pages in for every large numpy array (on the project's
#: virtual machines a 7 MB temporary cost ~15 ms in page faults; validation of 864,000 rows
#: went from 0.55 s to 0.33 s). Ignored by other C libraries.
WORKER_MALLOC_ENV = {
    "MALLOC_ARENA_MAX": "1",
    "MALLOC_MMAP_THRESHOLD_": str(32 * 1024 * 1024),
    "MALLOC_TRIM_THRESHOLD_": str(1024 * 1024 * 1024),
    "MALLOC_TOP_PAD_": str(64 * 1024 * 1024),
}


class WorkerSlot:
    """One worker process that handles inputs one after another.

    The worker imports the heavy libraries once and then serves jobs, so a batch of many
    small workbooks does not pay the start-up for each. Isolation is kept: when the worker
    dies (a native reader aborting, memory or time limits), only the input it was working
    on fails, and the next input gets a fresh worker.
    """

    def __init__(self, memory_bytes: int | None) -> None:
        self.memory_bytes = memory_bytes
        self.proc: subprocess.Popen[bytes] | None = None
        self.errors: Any = None
        self._buffer = b""

    def _start(self) -> subprocess.Popen[bytes]:
        import tempfile

        if self.errors is None:
            self.errors = tempfile.TemporaryFile()  # noqa: SIM115 - closed in close()
        cmd = [sys.executable, "-m", "surveytools.worker", "--serve"]
        if self.memory_bytes:
            cmd += ["--memory-bytes", str(self.memory_bytes)]
        self._buffer = b""
        env = {**WORKER_MALLOC_ENV, **os.environ}  # a user's own malloc settings win
        self.proc = subprocess.Popen(cmd, stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                                     stderr=self.errors, start_new_session=True, env=env)
        return self.proc

    def start_early(self) -> None:
        """Start the worker now, so its imports overlap the parent's own preparations."""
        if self.proc is None:
            self._start()

    def _readline(self, proc: subprocess.Popen[bytes], deadline: float) -> bytes | None:
        """Return one output line, b"" at end of output, None when the deadline passed."""
        import select

        assert proc.stdout is not None
        fd = proc.stdout.fileno()
        while b"\n" not in self._buffer:
            remaining = deadline - time.monotonic()
            if remaining <= 0:
                return None
            ready, _, _ = select.select([fd], [], [], remaining)
            if not ready:
                return None
            chunk = os.read(fd, 1 << 16)
            if not chunk:
                return b""
            self._buffer += chunk
        line, _, self._buffer = self._buffer.partition(b"\n")
        return line

    def _stderr_since(self, position: int) -> str:
        if self.errors is None:
            return ""
        self.errors.seek(position)
        text = self.errors.read()[-4000:].decode("utf-8", "replace")
        self.errors.seek(0, os.SEEK_END)
        return str(text)

    def _discard(self) -> int | None:
        proc, self.proc = self.proc, None
        if proc is None:
            return None
        if proc.poll() is None:
            proc.kill()
        rc = proc.wait()
        _close_pipes(proc)
        return rc

    def run(self, job: dict[str, Any], timeout_s: float,
            on_sent: Callable[[], None] | None = None) -> dict[str, Any]:
        """Run one job; never raises for a failing input.

        ``on_sent`` is called once the job is handed to the worker (the parent is then idle
        until the answer comes).
        """
        import pickle
        import struct

        path = Path(job["path"])
        proc = self.proc if self.proc is not None and self.proc.poll() is None else self._start()
        err_start = self.errors.seek(0, os.SEEK_END) if self.errors is not None else 0
        deadline = time.monotonic() + timeout_s
        data = pickle.dumps(job)
        try:
            assert proc.stdin is not None
            proc.stdin.write(struct.pack(">Q", len(data)) + data)
            proc.stdin.flush()
        except (BrokenPipeError, OSError):
            return _crash_failure(path, self._discard(), self._stderr_since(err_start))
        if on_sent is not None:
            on_sent()
        line = self._readline(proc, deadline)
        if line is None:
            self._discard()
            return refusal_of(path) or _worker_failure(
                path, "worker-timeout", f"processing took longer than {timeout_s:g} s and "
                "was stopped; check the file is a genuine survey export, or raise --timeout")
        if line == b"":
            return self._died(path, err_start)
        try:
            outcome = dict(json.loads(line))
        except ValueError:
            return self._died(path, err_start)
        if "internal_error" in outcome:
            return _crash_failure(path, 1, self._stderr_since(err_start) + "\n"
                                  + str(outcome["internal_error"]))
        return outcome

    def _died(self, path: Path, err_start: int) -> dict[str, Any]:
        """Return the failure to report for the input of a worker that died or answered garbage."""
        rc = self._discard()
        return refusal_of(path) or _crash_failure(path, rc, self._stderr_since(err_start))

    def close(self) -> None:
        """End the worker and release its files.

        Between jobs a worker holds nothing unwritten (each job's outputs are renamed into
        place before it answers), so it is simply stopped: waiting for the interpreter to
        tear down its libraries and free its heap would only delay the end of the run.
        """
        proc, self.proc = self.proc, None
        if proc is not None and proc.poll() is None:
            proc.kill()
        if proc is not None:
            try:
                if proc.stdin is not None:
                    proc.stdin.close()
                proc.wait(timeout=10)
            except (OSError, subprocess.TimeoutExpired):
                proc.kill()
                proc.wait()
            _close_pipes(proc)
        if self.errors is not None:
            self.errors.close()
            self.errors = None


def run_worker(job: dict[str, Any], timeout_s: float,
               memory_bytes: int | None = DEFAULT_MEMORY_BYTES) -> dict[str, Any]:
    """Run one job in a worker process of its own (used for single inputs and tests)."""
    slot = WorkerSlot(memory_bytes)
    try:
        return slot.run(job, timeout_s)
    finally:
        slot.close()


def load_manifest(out_dir: Path) -> dict[str, Any]:
    """Return the manifest of earlier runs in ``out_dir`` (empty when absent or unreadable)."""
    try:
        data = json.loads((out_dir / MANIFEST_NAME).read_text(encoding="utf-8"))
        return dict(data) if isinstance(data, dict) else {}
    except (OSError, ValueError):
        return {}


def _manifest_entry(manifest: dict[str, Any], key: str) -> dict[str, str] | None:
    """Return the manifest's entry for ``key`` if it is well formed, else None.

    An entry names the results of a completed run: a key and two plain file names in the
    output folder. Anything else (an entry of an older version, a failed input, a hand
    edit) is ignored, so the input is simply processed again.
    """
    entry = manifest.get(key)
    if not isinstance(entry, dict):
        return None
    fields = ("key", "results_json", "results_xlsx")
    if not all(isinstance(entry.get(f), str) and entry[f] for f in fields):
        return None
    if any(Path(entry[f]).name != entry[f] for f in fields[1:]):
        return None
    return {f: entry[f] for f in fields}


def save_manifest(out_dir: Path, manifest: dict[str, Any]) -> None:
    """Write the manifest atomically."""
    from surveytools.outputs.atomic import atomic_write_text

    atomic_write_text(out_dir / MANIFEST_NAME, json.dumps(manifest, sort_keys=True, indent=1))


def _file_sha256(path: Path) -> str | None:
    from surveytools.errors import WorkbookError
    from surveytools.inputs.source import source_info

    try:
        return source_info(path).sha256
    except WorkbookError:
        return None


def run_batch(options: BatchOptions, settings_key: str,
              progress: Callable[[int, int, str], None] | None = None,
              first_slot: WorkerSlot | None = None) -> BatchResult:
    """Process every input of ``options``; never raises for a bad input.

    ``first_slot`` may be a worker the caller started already (so that its imports overlap
    the caller's own preparations); it is used for the first input and closed at the end.
    """
    result = BatchResult()
    first_slot = first_slot or WorkerSlot(options.memory_bytes)
    try:
        return _run_batch(options, settings_key, progress, result, first_slot)
    finally:
        first_slot.close()


def _prepare_parent_imports() -> None:
    """Import what the parent needs at the end (overview writer) while it waits on workers."""
    import surveytools.outputs.overview
    import surveytools.outputs.results_json  # noqa: F401


class _OnceInBackground:
    """Run a function once, in a background thread, on the first call."""

    def __init__(self, target: Callable[[], None]) -> None:
        self.target = target
        self.lock = threading.Lock()
        self.started = False

    def __call__(self) -> None:
        with self.lock:
            if not self.started:
                self.started = True
                threading.Thread(target=self.target, daemon=True).start()


def _run_batch(options: BatchOptions, settings_key: str,
               progress: Callable[[int, int, str], None] | None, result: BatchResult,
               first_slot: WorkerSlot) -> BatchResult:
    out_dir = options.out_dir
    if options.mode == "run":  # before anything else: finding inputs, waiting for copies
        assert out_dir is not None
        check_output_folder(out_dir)
    candidates, skipped = discover(options.paths)
    result.skipped.extend(skipped)
    ready, deferred = settle(candidates, options.settle_s)
    result.skipped.extend(deferred)
    stems = output_stems(ready)
    manifest: dict[str, Any] = {}
    if options.mode == "run":
        assert out_dir is not None
        from surveytools.outputs.atomic import remove_stale_parts

        remove_stale_parts(out_dir)
        manifest = load_manifest(out_dir)

    jobs: list[dict[str, Any]] = []  # JSON job descriptions for the workers
    weather = options.weather_path
    weather_key = f":weather={_file_sha256(weather)}" if weather is not None else ""
    for c in ready:
        job: dict[str, Any] = {"mode": options.mode, "path": str(c.path.resolve()),
               "settings_path": str(options.settings_path) if options.settings_path else None,
               "include_readings": options.include_readings,
               "memory_bytes": options.memory_bytes}
        if weather is not None:
            job["weather_path"] = str(weather.resolve())
        sha = _file_sha256(c.path)
        job["sha256"] = sha
        if options.mode == "run":
            assert out_dir is not None
            job["out_dir"] = str(out_dir.resolve())
            job["stem"] = stems[str(c.path)]
            key = (f"{sha}:{settings_key}:{__version__}:{options.include_readings}"
                   f"{weather_key}")
            entry = _manifest_entry(manifest, str(c.path.resolve()))
            if (not options.force and sha and entry and entry.get("key") == key
                    and (out_dir / entry["results_json"]).exists()
                    and (out_dir / entry["results_xlsx"]).exists()):
                reused = _reuse(out_dir, entry, c.path)
                if reused is not None:
                    result.outcomes.append(reused)
                    result.reused.append(str(c.path))
                    continue
            job["manifest_key"] = key
        jobs.append(job)

    total = len(jobs)
    done = 0
    lock = threading.Lock()

    import queue

    if jobs:
        first_slot.start_early()  # its imports overlap the first input's preflight
    n_slots = max(1, min(options.jobs, len(jobs)))
    slots: queue.Queue[WorkerSlot] = queue.Queue()
    slots.put(first_slot)
    for _ in range(n_slots - 1):
        slots.put(WorkerSlot(options.memory_bytes))

    # Started once the first job is handed over, not before: until then this process runs
    # the preflight, which should not share the interpreter lock with imports.
    parent_imports = _OnceInBackground(_prepare_parent_imports)

    def one(job: dict[str, Any]) -> dict[str, Any]:
        nonlocal done
        if progress:
            with lock:
                progress(done, total, Path(job["path"]).name)
        slot = slots.get()
        try:
            outcome = slot.run(job, options.timeout_s, on_sent=parent_imports)
        finally:
            slots.put(slot)
        with lock:
            done += 1
            if progress:
                progress(done, total, Path(job["path"]).name)
        return outcome

    outcomes: list[dict[str, Any]] = []
    if jobs:
        try:
            with ThreadPoolExecutor(max_workers=n_slots) as pool:
                outcomes = list(pool.map(one, jobs))
        finally:
            while not slots.empty():
                slot = slots.get()
                if slot is not first_slot:  # the caller closes the first one
                    slot.close()

    for job, outcome in zip(jobs, outcomes, strict=True):
        if (options.mode == "run" and outcome.get("results_json") is None
                and outcome["status"] != UNWRITTEN):  # no results document says "unreadable"
            outcome = _record_unreadable(options, job, outcome)
        result.outcomes.append(outcome)
        # Only complete results are remembered: an input whose worker failed (a fault of
        # ours, a time or memory limit, a full disk) is processed again on the next run.
        if (options.mode == "run" and outcome.get("results_json") and outcome.get("results_xlsx")
                and job.get("manifest_key")):
            manifest[job["path"]] = {"key": job["manifest_key"],
                                     "results_json": outcome["results_json"],
                                     "results_xlsx": outcome["results_xlsx"]}
        elif options.mode == "run":
            manifest.pop(job["path"], None)
    result.outcomes.sort(key=lambda o: o["path"])
    if options.mode == "run":
        assert out_dir is not None
        try:
            save_manifest(out_dir, manifest)
            write_overview(out_dir, result, settings_key)
        except Exception as exc:  # e.g. the disk filled up during the run
            fault = os_error_in(exc)
            if fault is None:
                raise
            result.output_error = (f"the overview could not be written to {out_dir}: "
                                   f"{describe_write_fault(fault)[1]}; free some space and run "
                                   "again (inputs without complete results are processed again)")
        raise_alerts(options, out_dir, result)
    return result


def raise_alerts(options: BatchOptions, out_dir: Path, result: BatchResult) -> None:
    """Append this run's new episodes to the alert ledger and run the alert program.

    Only inputs processed in this run are read (a reused input's episodes were alerted
    when it was processed). Nothing here stops the batch: problems are collected in
    ``result.alert_problems``.
    """
    from surveytools.alerts import ALERTS_NAME, alerts_from_results, record_alerts, run_on_alert

    names = [o["results_json"] for o in result.outcomes
             if o.get("results_json") and not o.get("reused")]
    try:
        result.alerts = record_alerts(out_dir, alerts_from_results(out_dir, names))
    except OSError as exc:
        result.alert_problems.append(
            f"the alert ledger {out_dir / ALERTS_NAME} could not be written "
            f"({os_reason(exc)}); new episodes are in the results files")
        return
    if options.on_alert:
        for alert in result.alerts:
            problem = run_on_alert(options.on_alert, alert, options.on_alert_timeout_s)
            if problem:
                result.alert_problems.append(problem)


def _reuse(out_dir: Path, entry: dict[str, Any], path: Path) -> dict[str, Any] | None:
    from surveytools.pipeline import _totals, overview_row

    try:
        doc = json.loads((out_dir / entry["results_json"]).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return None
    findings = doc.get("findings") or []
    return {"path": str(path), "file": path.name, "status": doc.get("status"),
            "results_json": entry["results_json"], "results_xlsx": entry["results_xlsx"],
            "sha256": doc.get("input", {}).get("sha256"), "findings": findings,
            "finding_totals": _totals(findings), "reused": True,
            "overview": overview_row(doc, entry["results_json"], entry["results_xlsx"])}


def _record_unreadable(options: BatchOptions, job: dict[str, Any],
                       outcome: dict[str, Any]) -> dict[str, Any]:
    """Write an ``unreadable`` results JSON for an input whose worker died."""
    from surveytools.errors import WorkbookError
    from surveytools.inputs.source import source_info
    from surveytools.outputs.atomic import atomic_write_text
    from surveytools.outputs.results_json import dumps_results, unreadable_document
    from surveytools.pipeline import overview_row
    from surveytools.settings import load_settings
    from surveytools.validation.findings import Finding, Severity

    path = Path(job["path"])
    assert options.out_dir is not None
    try:
        source = source_info(path)
    except WorkbookError:
        from surveytools.provenance import SourceInfo

        source = SourceInfo(str(path), path.name, "", 0)
    f = outcome["findings"][0]
    fatal = Finding(f["code"], Severity.ERROR, f["message"])
    doc = unreadable_document(source, [fatal], load_settings(options.settings_path))
    js = options.out_dir / f"{job['stem']}.results.json"
    try:
        atomic_write_text(js, dumps_results(doc))
    except OSError:  # a full disk: the failure is still reported, in the overview if possible
        return outcome
    outcome = dict(outcome)
    outcome["results_json"] = js.name
    outcome["sha256"] = source.sha256 or None
    outcome["overview"] = overview_row(doc, js.name, None)
    return outcome


def overview_document(result: BatchResult, settings_key: str) -> dict[str, Any]:
    """Build overview.json content from a batch result."""
    from surveytools.outputs.results_json import SCHEMA_VERSION

    rows = []
    for o in result.outcomes:
        row = dict(o.get("overview") or {})
        if not row:
            row = {"file": o["file"], "path": o["path"], "status": o["status"],
                   "results_json": o.get("results_json"), "results_xlsx": o.get("results_xlsx"),
                   "findings": o.get("finding_totals"),
                   "reason": (o.get("findings") or [{}])[0].get("message")}
        rows.append(row)
    return {"schema_version": SCHEMA_VERSION,
            "tool": {"name": "surveytools", "version": __version__},
            "settings_sha256": settings_key,
            "inputs": rows,
            "counts": result.counts(),
            "skipped": [s.to_json() for s in result.skipped]}


def write_overview(out_dir: Path, result: BatchResult, settings_key: str) -> None:
    """Write overview.xlsx and overview.json (JSON last) atomically."""
    from surveytools.outputs.atomic import atomic_path, atomic_write_text
    from surveytools.outputs.overview import write_overview_workbook
    from surveytools.outputs.results_json import dumps_results

    doc = overview_document(result, settings_key)
    with atomic_path(out_dir / "overview.xlsx") as tmp:
        write_overview_workbook(tmp, doc)
    atomic_write_text(out_dir / "overview.json", dumps_results(doc))
