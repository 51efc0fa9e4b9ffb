"""The exception tree: what the batch hands between processes survives pickling."""

from __future__ import annotations

import pickle

import pytest

from surveytools.errors import SettingsError, SurveyToolsError, WorkbookError


def test_workbook_error_keeps_code_message_and_sheet_through_pickle() -> None:
    err = WorkbookError("sheet-too-large", "1048576 rows x 16384 columns", sheet="Readings")
    back = pickle.loads(pickle.dumps(err))
    assert (back.code, back.message, back.sheet) == ("sheet-too-large",
                                                     "1048576 rows x 16384 columns", "Readings")
    assert str(back) == "1048576 rows x 16384 columns"


def test_settings_error_is_a_value_error_and_ours() -> None:
    with pytest.raises(ValueError, match="bad key"):
        raise SettingsError("bad key")
    assert issubclass(SettingsError, SurveyToolsError)
    assert issubclass(WorkbookError, SurveyToolsError)


def _refusal(path) -> OSError:
    """The system's refusal to open ``path`` for reading."""
    try:
        with open(path, "rb"):
            pass
    except OSError as exc:
        return exc
    raise AssertionError("the system did not refuse")


def test_the_systems_refusals_are_told_in_our_words(tmp_path) -> None:
    # real refusals of this operating system (POSIX errno values), each in our words and
    # never in the system's own text (which varies with platform and language)
    from surveytools.errors import os_reason

    a_file = tmp_path / "a.txt"
    a_file.write_text("x")
    cases = {
        "there is no such file or folder": _refusal(tmp_path / "absent"),
        "part of the path is a file": _refusal(a_file / "inner"),
        "it is a folder, not a file": _refusal(tmp_path),
    }
    for words, exc in cases.items():
        reason = os_reason(exc)
        assert reason.startswith(words), (words, reason)
        assert exc.strerror and exc.strerror not in reason
    assert os_reason(OSError(9999, "Strange")) == "the system refused (error 9999)"
