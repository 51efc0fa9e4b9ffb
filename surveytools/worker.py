"""Worker process: runs one input's job under memory and time limits.

The batch starts ``python -m surveytools.worker --serve`` for each of its job slots. The
worker applies its memory limit, imports the readers, then imports the heavy libraries
(pandas, the writer) once in a background thread while it reads its first input, and
serves jobs: each a length-prefixed pickled dict from the parent (the same program) on
standard input, each answered by one JSON line on standard output. If a native reader
aborts or the worker runs out of memory or time, only this process dies; the batch turns
the exit status into a finding for the input it was working on, starts a fresh worker and
carries on with the others.
"""

from __future__ import annotations

import json
import os
import pickle
import sys
import threading
from dataclasses import replace
from pathlib import Path
from typing import Any


def limit_resources(memory_bytes: int | None, cpu_seconds: int | None) -> None:
    """Apply address-space and CPU-time limits to the current process (POSIX only)."""
    try:
        import resource
    except ImportError:  # pragma: no cover - not POSIX
        return
    if memory_bytes:
        resource.setrlimit(resource.RLIMIT_AS, (memory_bytes, memory_bytes))
    if cpu_seconds:
        resource.setrlimit(resource.RLIMIT_CPU, (cpu_seconds, cpu_seconds + 5))


def import_for_reading() -> None:
    """Import what the read phase needs (light: no pandas), in the main thread, first."""
    import fastexcel  # noqa: F401

    import surveytools.inputs.read
    import surveytools.pipeline
    import surveytools.settings  # noqa: F401 (jsonschema only for a settings file)


#: Heap pre-faulted per byte of input file (a week of 1-s readings, 17 MB, gets 270 MiB)
#: and at most [B]; block size, below the workers' mmap threshold so that freed blocks
#: stay in the heap [B]. Own choice, measured: the assessment's first temporaries then
#: land on touched pages instead of faulting in fresh ones (~0.1-0.25 s on a week).
PREFAULT_PER_INPUT_BYTE = 16
PREFAULT_MAX_BYTES = 512 << 20
PREFAULT_BLOCK_BYTES = 16 << 20
#: Longest wait for the pre-faulting to hand its blocks back when the read is done [s]
#: (one block takes a few ms to touch).
PREFAULT_RELEASE_WAIT_S = 0.1


def prefault_heap(n_bytes: int, stop: threading.Event | None = None) -> None:
    """Touch ``n_bytes`` of heap and free it again, kept by malloc for the next arrays.

    Effective with the batch's worker malloc settings (one arena, a high mmap and trim
    threshold, see ``surveytools.batch.WORKER_MALLOC_ENV``); harmless otherwise. Stops
    early once ``stop`` is set: touching pages while the main thread computes would only
    take them from it (measured: validation of a day at 100 ms 3-5x slower).
    """
    import numpy as np

    blocks = []
    for _ in range(n_bytes // PREFAULT_BLOCK_BYTES):
        if stop is not None and stop.is_set():
            break
        blocks.append(np.ones(PREFAULT_BLOCK_BYTES // 8))
    del blocks


class _Importer:
    """The first job's :func:`warm_up` and heap pre-faulting, each run once.

    In the worker's overlapped read both run in the preflight scan's thread, around the
    scan (:meth:`imports_here`, :meth:`prefault_here`); otherwise (a CSV input, a file
    refused early) :meth:`start` runs the imports in a thread of their own.
    """

    def __init__(self) -> None:
        self._lock = threading.Lock()
        self._imported = False
        self._prefaulted = False
        self._thread: threading.Thread | None = None
        self._stop = threading.Event()
        self._released = threading.Event()
        self.prefault_bytes = 0

    def imports_here(self) -> None:
        """Run :func:`warm_up` in this thread, unless it has run or is running already."""
        with self._lock:
            if self._imported:
                return
            self._imported = True
        warm_up()

    def prefault_here(self) -> None:
        """Pre-fault ``prefault_bytes`` of heap in this thread, once, until stopped."""
        with self._lock:
            if self._prefaulted or not self.prefault_bytes:
                return
            self._prefaulted = True
        try:
            prefault_heap(self.prefault_bytes, self._stop)
        finally:
            self._released.set()

    def stop_prefault(self) -> None:
        """End the pre-faulting now (the read is done) and let its blocks go back to malloc."""
        self._stop.set()
        with self._lock:
            running = self._prefaulted
        if running:
            self._released.wait(PREFAULT_RELEASE_WAIT_S)

    def start(self) -> None:
        """Run the imports in a background thread if they have not run (see :meth:`join`).

        The pre-faulting is left out: it only pays beside a long parse.
        """
        with self._lock:
            if self._thread is not None or self._imported:
                return
            self._thread = threading.Thread(target=self.imports_here, name="warm-up",
                                            daemon=True)
            self._thread.start()

    def join(self) -> None:
        """Wait for the imports (a thread of :meth:`start`, if one was needed)."""
        if self._thread is not None:
            self._thread.join()


def warm_up() -> None:
    """Import everything the later phases need (pandas, validation, assessment, writer).

    Run in a background thread while the main thread reads its first job's input, before
    the preflight's sheet scan beside that read: the typed parse releases the interpreter
    lock, so the imports cost no wall time. Only third-party libraries are imported lazily
    by the read phase meanwhile (numpy, pandas, pyarrow), which never import our modules,
    so the two threads cannot wait on each other in a cycle.
    """
    import jsonschema  # noqa: F401
    import numpy  # noqa: F401
    import pandas  # noqa: F401
    import xlsxwriter  # noqa: F401

    import surveytools.assessment
    import surveytools.outputs.results_json
    import surveytools.outputs.write
    import surveytools.validation.build  # noqa: F401


def execute_job(job: dict[str, Any], importer: _Importer | None = None) -> dict[str, Any]:
    """Run one job (``mode`` = ``run`` or ``check``) and return the outcome as JSON data.

    ``importer``: the first job's imports and heap pre-faulting, run beside its read (in
    the preflight scan's thread, around the scan); None for later jobs.
    """
    import time

    from surveytools.inputs.kinds import WORKBOOK_SUFFIXES
    from surveytools.pipeline import check_file, load_weather, read_input, run_file
    from surveytools.settings import load_settings

    t0 = time.perf_counter()
    settings = load_settings(job.get("settings_path"))
    if job.get("include_readings"):
        settings = replace(settings, output=replace(settings.output, include_readings=True))
    path = Path(job["path"])
    if importer is not None:
        try:
            size = path.stat().st_size
        except OSError:
            size = 0
        importer.prefault_bytes = min(PREFAULT_MAX_BYTES, PREFAULT_PER_INPUT_BYTE * size)
    # The sheet scans of the preflight run beside the parse: this process has its limits.
    hooks = ((importer.imports_here, importer.prefault_here) if importer is not None
             else (None, None))
    if importer is not None and path.suffix.lower() not in WORKBOOK_SUFFIXES:
        importer.start()  # no scan beside this read: import meanwhile in a thread
    read = read_input(path, settings, None, job.get("sha256"), overlap_scan=True,
                      scan_hooks=hooks, long_logs=True)
    t_read = time.perf_counter()
    if importer is not None:
        importer.stop_prefault()
        importer.start()  # what has not run yet (a file refused before its parse)
        importer.join()
    t_ready = time.perf_counter()
    if job["mode"] == "check":
        outcome = check_file(path, settings, read=read,
                             weather=load_weather(job.get("weather_path"), settings)).to_json()
    else:
        weather = load_weather(job.get("weather_path"), settings)
        try:
            outcome = run_file(path, Path(job["out_dir"]), job["stem"], settings, read=read,
                               weather=weather).to_json()
        except Exception as exc:  # a failed write (full disk) is this input's finding
            from surveytools.batch import os_error_in, write_failure

            fault = os_error_in(exc)
            if fault is None or not _is_output_fault(fault, Path(job["out_dir"])):
                raise
            outcome = write_failure(path, Path(job["out_dir"]), fault)
    # Where a worker's time went, for `SURVEYTOOLS_TIMINGS=1 surveytools run ...` [s].
    outcome["timings"] = {"read_s": round(t_read - t0, 3),
                          "wait_for_imports_s": round(t_ready - t_read, 3),
                          "rest_s": round(time.perf_counter() - t_ready, 3)}
    return outcome


def _is_output_fault(exc: OSError, out_dir: Path) -> bool:
    """Return True when ``exc`` is a write into the output folder that the system refused."""
    import errno

    if exc.errno in (errno.ENOSPC, errno.EDQUOT, errno.EFBIG, errno.EROFS):
        return True
    names = [n for n in (exc.filename, exc.filename2) if isinstance(n, str | bytes) and n]
    return any(Path(os.fsdecode(n)).parent == out_dir for n in names)


def _read_exactly(stream: Any, n: int) -> bytes | None:
    """Read ``n`` bytes, or None at the end of the input."""
    data = b""
    while len(data) < n:
        chunk = stream.read(n - len(data))
        if not chunk:
            return None
        data += chunk
    return data


def serve(stream_in: Any, stream_out: Any, importer: _Importer | None = None) -> int:
    """Serve jobs until the input ends: each a length-prefixed pickle, each answered by a line.

    A fault of ours while handling a job is answered as ``{"internal_error": ...}`` and the
    worker goes on with the next job; a crash of a native library ends the process, which
    the parent notices.
    """
    import struct

    while True:
        head = _read_exactly(stream_in, 8)
        if head is None:
            return 0
        (length,) = struct.unpack(">Q", head)
        payload = _read_exactly(stream_in, length)
        if payload is None:
            return 0
        job = pickle.loads(payload)  # trusted: written by our own parent process
        try:
            outcome = execute_job(job, importer)
            importer = None
        except MemoryError:
            raise
        except Exception as exc:  # reported for this input only; the next job still runs
            import traceback

            traceback.print_exc(file=sys.stderr)
            outcome = {"internal_error": f"{type(exc).__name__}: {str(exc)[:300]}"}
        stream_out.write((json.dumps(outcome, allow_nan=False) + "\n").encode("utf-8"))
        stream_out.flush()


def main(argv: list[str] | None = None) -> int:
    """Apply the limits, warm up, then serve jobs from the parent (``--serve``)."""
    import argparse

    parser = argparse.ArgumentParser(prog="python -m surveytools.worker")
    parser.add_argument("--serve", action="store_true", required=True)
    parser.add_argument("--memory-bytes", type=int, default=None)
    args = parser.parse_args(sys.argv[1:] if argv is None else argv)
    limit_resources(args.memory_bytes, None)
    import_for_reading()
    return serve(sys.stdin.buffer, sys.stdout.buffer, _Importer())


if __name__ == "__main__":
    sys.exit(main())
