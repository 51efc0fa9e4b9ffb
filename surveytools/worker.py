"""Worker process: runs one input's job under memory and time limits.

The batch starts ``python -m surveytools.worker`` once per input. The worker first imports
the heavy libraries (pandas, the readers, the writer) while the parent, at the same time,
runs the stdlib-only preflight of the file; then it reads its job (a pickled dict from the
parent, the same program) on standard input, applies the resource limits and writes one
JSON line back on standard output. If a native reader aborts or the worker runs out of
memory or time, only this process dies; the batch turns the exit status into a finding for
that input and carries on with the others.
"""

from __future__ import annotations

import json
import pickle
import sys
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


def warm_up() -> None:
    """Import everything a job needs, before the job arrives (overlaps the parent's preflight)."""
    import surveytools.assessment
    import surveytools.io.read
    import surveytools.io.results_json
    import surveytools.io.write
    import surveytools.pipeline
    import surveytools.validation.build  # noqa: F401


def execute_job(job: dict[str, Any]) -> dict[str, Any]:
    """Run one job (``mode`` = ``run`` or ``check``) and return the outcome as JSON data."""
    from surveytools.pipeline import Prepared, check_file, run_file
    from surveytools.settings import load_settings

    settings = load_settings(job.get("settings_path"))
    if job.get("include_readings"):
        settings = replace(settings, output=replace(settings.output, include_readings=True))
    path = Path(job["path"])
    prepared = job.get("prepared")
    if prepared is not None and not isinstance(prepared, Prepared):
        prepared = None
    if job["mode"] == "check":
        return check_file(path, settings, prepared).to_json()
    return run_file(path, Path(job["out_dir"]), job["stem"], settings, prepared).to_json()


def main() -> int:
    """Warm up, read a job from stdin, run it, print the outcome as one JSON line."""
    warm_up()
    job = pickle.loads(sys.stdin.buffer.read())  # trusted: written by our own parent process
    limit_resources(job.get("memory_bytes"), job.get("cpu_seconds"))
    outcome = execute_job(job)
    sys.stdout.write(json.dumps(outcome, allow_nan=False) + "\n")
    sys.stdout.flush()
    return 0


if __name__ == "__main__":
    sys.exit(main())
