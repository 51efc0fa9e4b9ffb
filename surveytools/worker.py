"""Worker process: runs one input's job under memory and time limits.

The batch starts ``python -m surveytools.worker`` once per input, sends the job as JSON on
standard input and reads one JSON line back on standard output. If a native reader aborts
or the worker runs out of memory or time, only this process dies; the batch turns the exit
status into a finding for that input and carries on with the others.
"""

from __future__ import annotations

import json
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


def execute_job(job: dict[str, Any]) -> dict[str, Any]:
    """Run one job (``mode`` = ``run`` or ``check``) and return the outcome as JSON data."""
    from surveytools.pipeline import check_file, run_file
    from surveytools.settings import load_settings

    settings = load_settings(job.get("settings_path"))
    if job.get("include_readings"):
        settings = replace(settings, output=replace(settings.output, include_readings=True))
    path = Path(job["path"])
    if job["mode"] == "check":
        return check_file(path, settings).to_json()
    return run_file(path, Path(job["out_dir"]), job["stem"], settings).to_json()


def main() -> int:
    """Read a job from stdin, run it, print the outcome as one JSON line."""
    job = json.loads(sys.stdin.read())
    limit_resources(job.get("memory_bytes"), job.get("cpu_seconds"))
    outcome = execute_job(job)
    sys.stdout.write(json.dumps(outcome, allow_nan=False) + "\n")
    sys.stdout.flush()
    return 0


if __name__ == "__main__":
    sys.exit(main())
