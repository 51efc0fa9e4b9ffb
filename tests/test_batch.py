"""Drop-folder behaviour of the batch: discovery, settle, output names (no workers run here)."""

from __future__ import annotations

import os
import threading
import time
from pathlib import Path

import pytest

from surveytools.batch import Candidate, discover, output_stems, settle


def _touch(path: Path, data: bytes = b"PK\x03\x04 not really") -> Path:
    path.write_bytes(data)
    return path


def test_discover_keeps_regular_survey_files_and_explains_the_rest(tmp_path: Path) -> None:
    good = _touch(tmp_path / "east.xlsx")
    _touch(tmp_path / "west.csv", b"Start,LAeq\n")
    _touch(tmp_path / "~$east.xlsx")            # Office owner file
    _touch(tmp_path / ".~lock.east.xlsx#")      # LibreOffice lock file
    _touch(tmp_path / "._east.xlsx")            # macOS AppleDouble file
    _touch(tmp_path / "notes.txt")              # not a survey file: ignored silently in a folder
    os.mkfifo(tmp_path / "pipe.xlsx")           # would hang any reader that opened it
    (tmp_path / "link.xlsx").symlink_to(good)
    (tmp_path / "sub").mkdir()                  # folders are not descended into

    found, skipped = discover([tmp_path])

    assert sorted(c.path.name for c in found) == ["east.xlsx", "west.csv"]
    by_name = {Path(s.path).name: s.code for s in skipped}
    assert by_name == {
        "~$east.xlsx": "lock-or-temp-file",
        "._east.xlsx": "lock-or-temp-file",
        "pipe.xlsx": "not-regular-file",
        "link.xlsx": "not-regular-file",
    }


def test_discover_reports_a_missing_explicit_path(tmp_path: Path) -> None:
    found, skipped = discover([tmp_path / "absent.xlsx"])
    assert found == []
    assert [s.code for s in skipped] == ["path-missing"]
    # in our words, never the system's ("No such file or directory")
    assert skipped[0].reason == ("cannot be read: there is no such file or folder; check the "
                                 "spelling of the path")


def test_own_outputs_in_a_scanned_folder_are_passed_over_silently(tmp_path: Path) -> None:
    # -o pointing at the input folder: the next run finds its own results there; they are
    # not inputs and not worth a line each run, but a results file named as an input is told
    _touch(tmp_path / "mast.xlsx", b"PK\x03\x04" + b"x" * 100)
    for name in ("mast.results.xlsx", "mast.results.json", "overview.xlsx", "overview.json"):
        _touch(tmp_path / name, b"PK\x03\x04")
    found, skipped = discover([tmp_path])
    assert [c.path.name for c in found] == ["mast.xlsx"] and skipped == []
    _, named = discover([tmp_path / "overview.xlsx"])
    assert [(s.code, s.reason) for s in named] == [("lock-or-temp-file",
                                                    "an output of surveytools")]


def test_a_file_still_growing_is_deferred_not_failed(tmp_path: Path) -> None:
    path = _touch(tmp_path / "copying.xlsx", b"PK\x03\x04" + b"x" * 100)
    st = path.stat()
    candidate = Candidate(path, st.st_size, st.st_mtime_ns, from_folder=True)
    stop = threading.Event()

    def grow() -> None:
        with path.open("ab") as fh:
            while not stop.is_set():
                fh.write(b"y" * 4096)
                fh.flush()
                time.sleep(0.02)

    t = threading.Thread(target=grow)
    t.start()
    try:
        ready, deferred = settle([candidate], 0.2)
    finally:
        stop.set()
        t.join()
    assert ready == []
    assert [(d.code, d.status) for d in deferred] == [("file-changing", "deferred")]


def test_a_settled_file_is_ready(tmp_path: Path) -> None:
    path = _touch(tmp_path / "done.xlsx")
    st = path.stat()
    ready, deferred = settle([Candidate(path, st.st_size, st.st_mtime_ns)], 0.0)
    assert [c.path for c in ready] == [path] and deferred == []


@pytest.mark.parametrize("names", [["a b.xlsx", "a_b.xlsx"], ["East.xlsx", "east.csv"]])
def test_output_stems_are_unique_and_safe(tmp_path: Path, names: list[str]) -> None:
    cands = [Candidate(tmp_path / n, 1, 1) for n in names]
    stems = output_stems(cands)
    values = list(stems.values())
    assert len({v.lower() for v in values}) == len(values)
    assert all("/" not in v and " " not in v for v in values)


def test_an_explicit_file_of_another_kind_is_reported(tmp_path: Path) -> None:
    notes = _touch(tmp_path / "notes.txt", b"not a survey")
    found, skipped = discover([notes])
    assert found == []
    assert [(Path(s.path).name, s.code) for s in skipped] == [("notes.txt", "not-a-survey-file")]


def test_only_files_found_in_folders_wait_to_settle(tmp_path: Path) -> None:
    path = _touch(tmp_path / "named.xlsx")
    st = path.stat()
    t0 = time.monotonic()
    ready, deferred = settle([Candidate(path, st.st_size, st.st_mtime_ns)], 5.0)
    assert time.monotonic() - t0 < 2.0  # a file named on the command line is not waited on
    assert [c.path for c in ready] == [path] and deferred == []
    found, _ = discover([tmp_path])
    assert [c.from_folder for c in found] == [True]


def test_a_worker_that_cannot_start_a_thread_under_its_limit_ran_out_of_memory(
        tmp_path: Path) -> None:
    # Under an address-space limit, a thread's stack cannot be mapped and Python says
    # "RuntimeError: can't start new thread" (exit status 1): a memory condition, not a
    # fault of the tool.
    from surveytools.batch import _crash_failure

    err = ("Traceback (most recent call last):\n  File \"x.py\", line 1, in <module>\n"
           "RuntimeError: can't start new thread\n")
    failure = _crash_failure(tmp_path / "good.xlsx", 1, err)
    assert [f["code"] for f in failure["findings"]] == ["worker-out-of-memory"]
