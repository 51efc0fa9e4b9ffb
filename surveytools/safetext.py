"""Untrusted cell text: make it safe to keep, show and write back.

Used by the reader (text read from input cells) and by the workbook writer (text copied
into result workbooks and CSV files).
"""

from __future__ import annotations

import re

from surveytools import constants as const

# Characters XML 1.0 does not allow (§2.2 Char production: #x9 | #xA | #xD | [#x20-#xD7FF] |
# [#xE000-#xFFFD] | [#x10000-#x10FFFF]); openpyxl refuses them with IllegalCharacterError.
_XML_ILLEGAL_RE = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ud800-\udfff\ufffe\uffff]")

#: Leading characters that make a spreadsheet treat a text as a formula, or that a CSV
#: consumer may. OWASP "CSV Injection" (= + - @ tab CR) plus LF (OWASP www-community PR #1116).
FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r", "\n")

#: The character that replaces an XML-illegal one (U+FFFD REPLACEMENT CHARACTER).
REPLACEMENT_CHARACTER = "\ufffd"


def clean_text(text: str, max_chars: int = const.CELL_MAX_CHARS) -> tuple[str, list[str]]:
    """Return text that any xlsx writer accepts, and what was changed.

    Parameters
    ----------
    text : str
        Text as read from a cell (or metadata).
    max_chars : int, optional
        Longest text kept (a spreadsheet cell holds at most 32,767 characters).

    Returns
    -------
    cleaned : str
        ``text`` with XML-illegal control characters replaced by U+FFFD and cut to
        ``max_chars`` characters.
    changes : list of str
        ``"text-control-characters"`` and/or ``"text-truncated"`` (the finding codes the
        caller records); empty when the text was kept as it was.
    """
    changes: list[str] = []
    cleaned, n = _XML_ILLEGAL_RE.subn(REPLACEMENT_CHARACTER, text)
    if n:
        changes.append("text-control-characters")
    if len(cleaned) > max_chars:
        cleaned = cleaned[:max_chars]
        changes.append("text-truncated")
    return cleaned, changes


def has_illegal_characters(text: str) -> bool:
    """Return True when ``text`` holds a character XML 1.0 does not allow."""
    return _XML_ILLEGAL_RE.search(text) is not None


def is_formula_trigger(text: str) -> bool:
    """Return True when ``text`` starts with a character that can start a formula.

    Parameters
    ----------
    text : str
        Text about to be written to a spreadsheet or CSV cell.
    """
    return text[:1] in FORMULA_TRIGGERS
