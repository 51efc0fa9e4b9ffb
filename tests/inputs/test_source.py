"""Hashing an input: read-only, no links followed, refusals located to the file."""

from __future__ import annotations

import hashlib
import os
from pathlib import Path

import pytest

from surveytools.errors import WorkbookError
from surveytools.inputs.source import source_info


def test_identity_matches_an_independent_hash(tmp_path: Path) -> None:
    path = tmp_path / "a.xlsx"
    path.write_bytes(b"PK\x03\x04 some bytes")
    info = source_info(path)
    assert info.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()  # hashlib reference
    assert (info.file, info.size_bytes, info.path) == ("a.xlsx", 15, str(path.resolve()))


def test_a_missing_file_is_unreadable(tmp_path: Path) -> None:
    with pytest.raises(WorkbookError, match="Cannot open the file") as err:
        source_info(tmp_path / "absent.xlsx")
    assert err.value.code == "file-unreadable"


def test_a_pipe_is_not_a_regular_file_and_does_not_hang(tmp_path: Path) -> None:
    fifo = tmp_path / "pipe.xlsx"
    os.mkfifo(fifo)
    with pytest.raises(WorkbookError, match="not a regular file") as err:
        source_info(fifo)
    assert err.value.code == "file-not-regular"


def test_a_symbolic_link_is_not_followed(tmp_path: Path) -> None:
    real = tmp_path / "real.xlsx"
    real.write_bytes(b"data")
    link = tmp_path / "link.xlsx"
    link.symlink_to(real)
    with pytest.raises(WorkbookError, match="Cannot open the file") as err:
        source_info(link)
    assert err.value.code == "file-unreadable"
