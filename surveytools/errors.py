"""The small exception tree for failures of the tool's own inputs.

Problems in survey *data* are never raised: they become
:class:`~surveytools.validation.findings.Finding` values. Exceptions are kept for what
stops the tool itself from doing its job on one input: a workbook that cannot be opened
safely, or a settings file that is not valid.
"""

from __future__ import annotations


class SurveyToolsError(Exception):
    """Base class of every error surveytools raises on purpose."""


class WorkbookError(SurveyToolsError):
    """An input file cannot be read at all (not a workbook, unsafe, corrupt).

    Parameters
    ----------
    code : str
        Stable finding code (for example ``"file-not-a-zip"``).
    message : str
        A sentence a technician understands: what was expected, what was found, how to fix it.
    sheet : str, optional
        Sheet concerned, when the problem is inside one sheet.
    """

    def __init__(self, code: str, message: str, sheet: str | None = None) -> None:
        super().__init__(message)
        self.code = code
        self.message = message
        self.sheet = sheet

    def __reduce__(self) -> tuple[type[WorkbookError], tuple[str, str, str | None]]:
        """Pickle with all three fields (the batch hands preflight refusals to workers)."""
        return (type(self), (self.code, self.message, self.sheet))


class SettingsError(SurveyToolsError, ValueError):
    """The settings file (or a command-line option) is not valid; the command cannot run."""
