"""Tests of untrusted-text cleaning (surveytools.safetext)."""

import pytest
from hypothesis import given
from hypothesis import strategies as st

from surveytools.safetext import clean_text, has_illegal_characters, is_formula_trigger


def test_control_characters_replaced() -> None:
    # XML 1.0 §2.2: U+0007 and U+0000 are not Char; tab/LF/CR are.
    cleaned, changes = clean_text("a\x07b\x00c\td\ne\rf")
    assert cleaned == "a\ufffdb\ufffdc\td\ne\rf"
    assert changes == ["text-control-characters"]


def test_truncated_to_cell_limit() -> None:
    # Microsoft "Excel specifications and limits": 32,767 characters per cell.
    cleaned, changes = clean_text("x" * 40_000)
    assert len(cleaned) == 32_767
    assert changes == ["text-truncated"]


def test_clean_text_unchanged() -> None:
    assert clean_text("North gate, 1.5 m") == ("North gate, 1.5 m", [])


@pytest.mark.parametrize(
    ("text", "trigger"),
    [
        # OWASP CSV Injection trigger characters, plus LF (OWASP www-community PR #1116)
        ("=1+1", True), ("+1", True), ("-1", True), ("@SUM(A1)", True), ("\t=1", True),
        ("\r=1", True), ("\n=1", True), (" =1", False), ("\uff1d1+1", False), ("", False),
        ("North", False),
    ],
)
def test_formula_trigger(text: str, trigger: bool) -> None:
    assert is_formula_trigger(text) is trigger


@given(st.text(max_size=200))
def test_cleaned_text_is_always_xml_legal(text: str) -> None:
    cleaned, changes = clean_text(text)
    assert not has_illegal_characters(cleaned)
    assert (cleaned == text) == (changes == [])
