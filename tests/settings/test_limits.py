"""Settings files cannot make the tool read, nest or allocate without bound.

Each refusal is a SettingsError (exit 2) naming the file and, for a value, its key.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from surveytools import constants as C  # noqa: N812
from surveytools.errors import SettingsError
from surveytools.settings import load_settings


def _refused(path: Path) -> str:
    with pytest.raises(SettingsError) as info:
        load_settings(path)
    return str(info.value)


def test_a_device_is_refused_without_reading_it() -> None:
    message = _refused(Path("/dev/zero"))  # read to the end, it never ends
    assert "zero" in message and "a device" in message


def test_a_pipe_is_refused_without_waiting_for_a_writer(tmp_path: Path) -> None:
    fifo = tmp_path / "settings.toml"
    os.mkfifo(fifo)
    message = _refused(fifo)  # opening it for reading would block for ever
    assert "settings.toml" in message and "a pipe" in message


def test_a_folder_is_refused(tmp_path: Path) -> None:
    assert "a folder" in _refused(tmp_path)


def test_a_file_over_the_size_limit_is_refused(tmp_path: Path) -> None:
    big = tmp_path / "big.toml"
    big.write_text("# comment\n" * (C.SETTINGS_MAX_BYTES // 10 + 1))
    message = _refused(big)
    assert "big.toml" in message and "1024 KiB" in message


@pytest.mark.parametrize(("text", "key"), [
    ("coverage_threshold = nan\n", "coverage_threshold"),
    ("coverage_threshold = inf\n", "coverage_threshold"),
    ("[exclusions]\nwind_max_m_s = -inf\n", "exclusions.wind_max_m_s"),
    ("percentiles = [10, nan]\n", "percentiles[2]"),
])
def test_numbers_must_be_finite(tmp_path: Path, text: str, key: str) -> None:
    path = tmp_path / "s.toml"
    path.write_text(text)
    message = _refused(path)
    assert f"{key}: expected a finite number" in message


@pytest.mark.parametrize("depth", [9, 50, 5000])
def test_deeply_nested_arrays_are_refused(tmp_path: Path, depth: int) -> None:
    path = tmp_path / "s.toml"
    path.write_text("percentiles = " + "[" * depth + "]" * depth + "\n")
    message = _refused(path)
    assert "percentiles" in message or depth > 1000
    assert f"at most {C.SETTINGS_MAX_DEPTH} levels" in message


@pytest.mark.parametrize(("text", "key"), [
    ('reporting_interval = "1ms"\n', "reporting_interval"),
    ("reporting_interval_s = 0.5\n", "reporting_interval_s"),
    ('[background]\nreference_interval_day = "100ms"\n', "background.reference_interval_day"),
    ('[background]\nreference_interval_night_s = 0.001\n',
     "background.reference_interval_night_s"),
])
def test_result_intervals_have_a_lower_bound(tmp_path: Path, text: str, key: str) -> None:
    path = tmp_path / "s.toml"
    path.write_text(text)
    message = _refused(path)
    assert f"{key}: expected a duration of at least 1 s" in message


def test_one_second_intervals_are_accepted(tmp_path: Path) -> None:
    path = tmp_path / "s.toml"
    path.write_text('reporting_interval = "1s"\n')
    assert load_settings(path).reporting_interval_s == 1.0


@pytest.mark.slow
def test_the_cli_refuses_a_pipe_as_settings_with_exit_2(tmp_path: Path) -> None:
    from tests.workbooks import survey_workbook

    survey_workbook(tmp_path / "a.xlsx")
    os.mkfifo(tmp_path / "fifo.toml")
    proc = subprocess.run([sys.executable, "-m", "surveytools", "check", "a.xlsx", "--settings",
                           "fifo.toml"], cwd=tmp_path, capture_output=True, text=True,
                          timeout=60, check=False)
    assert proc.returncode == 2
    assert "fifo.toml" in proc.stderr and "a pipe" in proc.stderr
    assert "internal error" not in proc.stderr


def test_a_bad_column_mapping_is_named_as_the_readme_names_it(tmp_path: Path) -> None:
    # README: header spellings are mapped in the [columns] table; the message uses that name.
    path = tmp_path / "s.toml"
    path.write_text('[columns]\nLeq = "Nonsense"\n')
    message = _refused(path)
    assert "columns.Leq" in message and "column_map" not in message
