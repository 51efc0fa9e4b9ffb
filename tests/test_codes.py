"""The finding-code catalogue and the README table generated from it."""

from __future__ import annotations

from pathlib import Path

from surveytools.codes import CODES, is_known, markdown_table

README = Path(__file__).resolve().parents[1] / "README.md"


def test_readme_lists_every_code() -> None:
    text = README.read_text(encoding="utf-8")
    start = text.index("<!-- codes-table -->") + len("<!-- codes-table -->\n")
    end = text.index("<!-- /codes-table -->")
    assert text[start:end] == markdown_table()


def test_codes_are_kebab_case_with_a_known_severity_and_scope() -> None:
    for code, c in CODES.items():
        assert code == code.lower() and " " not in code and "_" not in code, code
        assert c.severity in {"error", "warning", "info"}, code
        assert c.scope in {"file", "sheet", "cell", "batch"}, code
        assert c.meaning and not c.meaning.endswith("."), code


def test_survey_schema_codes_are_a_known_family() -> None:
    assert is_known("survey-required") and is_known("survey-min-length")
    assert not is_known("survey-") and not is_known("no-such-code")
