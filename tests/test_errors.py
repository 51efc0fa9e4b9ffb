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
