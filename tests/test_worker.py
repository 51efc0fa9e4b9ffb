"""Worker isolation: a worker that dies or stalls fails only the input it was working on."""

from __future__ import annotations

import os
import signal
import threading
import time
from pathlib import Path

import pytest

from surveytools.batch import WorkerSlot
from surveytools.demo import POSITIONS, write_demo
from tests.workbooks import survey_workbook

pytestmark = pytest.mark.slow


def job(path: Path, out: Path) -> dict[str, object]:
    out.mkdir(exist_ok=True)
    return {"mode": "run", "path": str(path), "out_dir": str(out), "stem": path.stem,
            "settings_path": None, "include_readings": False, "sha256": None}


@pytest.fixture(scope="module")
def long_log(tmp_path_factory: pytest.TempPathFactory) -> Path:
    # The demo's 1-s position: a day of 86,400 readings, long enough to stop mid-way.
    folder = tmp_path_factory.mktemp("demo")
    write_demo(folder)
    return folder / next(p.file for p in POSITIONS if p.step_s == 1.0)


def test_a_stalled_input_times_out_and_the_next_input_still_runs(tmp_path: Path,
                                                                 long_log: Path) -> None:
    good = survey_workbook(tmp_path / "good.xlsx")
    slot = WorkerSlot(memory_bytes=None)
    try:
        slow = slot.run(job(long_log, tmp_path / "o"), timeout_s=0.2)
        assert [f["code"] for f in slow["findings"]] == ["worker-timeout"]
        assert slow["status"] == "unreadable"
        after = slot.run(job(good, tmp_path / "o"), timeout_s=120)
        assert after["status"] == "ok"
        assert set(after["timings"]) == {"read_s", "wait_for_imports_s", "rest_s"}
    finally:
        slot.close()


@pytest.mark.skipif(not Path("/proc/self/fd").is_dir(), reason="needs /proc to see open files")
def test_a_worker_killed_mid_input_fails_that_input_only(tmp_path: Path, long_log: Path) -> None:
    good = survey_workbook(tmp_path / "good.xlsx")
    slot = WorkerSlot(memory_bytes=None)
    try:
        warm = slot.run(job(good, tmp_path / "o"), timeout_s=120)  # the worker is now warm
        assert warm["status"] == "ok"
        assert slot.proc is not None
        pid = slot.proc.pid

        def kill_soon() -> None:
            # Kill once the worker has the input open (mid-input, whatever its speed);
            # give up waiting after 60 s and kill anyway.
            fd_dir = Path(f"/proc/{pid}/fd")
            deadline = time.monotonic() + 60
            while time.monotonic() < deadline:
                try:
                    if any(os.path.realpath(fd) == str(long_log.resolve())
                           for fd in fd_dir.iterdir()):
                        break
                except OSError:
                    pass
                time.sleep(0.001)
            os.kill(pid, signal.SIGKILL)

        threading.Thread(target=kill_soon).start()
        killed = slot.run(job(long_log, tmp_path / "o"), timeout_s=120)
        assert [f["code"] for f in killed["findings"]] == ["worker-killed"]
        again = slot.run(job(good, tmp_path / "o"), timeout_s=120)
        assert again["status"] == "ok"
    finally:
        slot.close()


def test_a_worker_over_its_memory_limit_is_reported_as_such(tmp_path: Path) -> None:
    good = survey_workbook(tmp_path / "good.xlsx")
    # 150 MiB of address space cannot even hold the imported libraries.
    slot = WorkerSlot(memory_bytes=150 * 1024**2)
    try:
        outcome = slot.run(job(good, tmp_path / "o"), timeout_s=120)
    finally:
        slot.close()
    assert [f["code"] for f in outcome["findings"]] == ["worker-out-of-memory"]


def _long_sheet_with_a_far_cell(path: Path) -> Path:
    """A Readings sheet larger than the head the preflight keeps, plus a cell at XFD1048576:
    the reader starts on it before the sheet scan has found the stray cell."""
    from tests.inputs.hostile import build_xlsx, sheet_xml

    header = ('<row r="1"><c r="A1" t="inlineStr"><is><t>Start</t></is></c>'
              '<c r="B1" t="inlineStr"><is><t>LAeq (dB)</t></is></c></row>')
    body = "".join(f'<row r="{i}"><c r="A{i}"><v>{46000 + i / 86400:.8f}</v></c>'
                   f'<c r="B{i}"><v>50.1</v></c></row>' for i in range(2, 20_002))
    far = '<row r="1048576"><c r="XFD1048576"><v>1</v></c></row>'
    return build_xlsx(path, {"Readings": sheet_xml(header + body + far)})


def test_a_sheet_the_preflight_refuses_is_reported_as_refused_by_the_worker(
        tmp_path: Path) -> None:
    # Whether the reader dies on the 17-billion-cell range (memory limit) or the worker's
    # own preflight refuses first, the user sees the preflight's refusal.
    hostile = _long_sheet_with_a_far_cell(tmp_path / "far.xlsx")
    slot = WorkerSlot(memory_bytes=1024**3)
    try:
        out = slot.run(job(hostile, tmp_path / "o"), timeout_s=120)
    finally:
        slot.close()
    assert [f["code"] for f in out["findings"]] == ["sheet-too-large"]
    assert out["status"] == "unreadable"


def test_a_worker_stopped_on_a_refused_file_reports_the_refusal(tmp_path: Path) -> None:
    from tests.inputs.hostile import patch_crc

    damaged = survey_workbook(tmp_path / "damaged.xlsx")
    patch_crc(damaged, "xl/worksheets/sheet2.xml", 0x12345678)
    slot = WorkerSlot(memory_bytes=None)
    try:  # far too little time even to start: the parent's preflight names the fault
        out = slot.run(job(damaged, tmp_path / "o"), timeout_s=0.01)
    finally:
        slot.close()
    assert [f["code"] for f in out["findings"]] == ["zip-corrupt"]


def test_heap_prefaulting_touches_what_it_is_asked_and_stops_when_told() -> None:
    import tracemalloc

    from surveytools.worker import PREFAULT_BLOCK_BYTES, prefault_heap

    wanted = 4 * PREFAULT_BLOCK_BYTES
    tracemalloc.start()  # numpy reports its array buffers to tracemalloc
    try:
        prefault_heap(wanted)
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.reset_peak()
        stop = threading.Event()
        stop.set()
        prefault_heap(wanted, stop)
        _, peak_stopped = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert peak >= wanted
    assert peak_stopped < PREFAULT_BLOCK_BYTES
