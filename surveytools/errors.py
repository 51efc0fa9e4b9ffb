"""The small exception tree for failures of the tool's own inputs.

Problems in survey *data* are never raised: they become
:class:`~surveytools.validation.findings.Finding` values. Exceptions are kept for what
stops the tool itself from doing its job on one input: a workbook that cannot be opened
safely, or a settings file that is not valid.
"""

from __future__ import annotations

import errno

#: Why the system refused a file operation, by errno, in our words (the system's own text
#: differs between platforms and languages, and is never shown).
_OS_REASONS = {
    errno.ENOENT: "there is no such file or folder",
    errno.ENOTDIR: "part of the path is a file, not a folder",
    errno.EISDIR: "it is a folder, not a file",
    errno.EACCES: "you have no permission to use it",
    errno.EPERM: "you have no permission to use it",
    errno.ENAMETOOLONG: "the path is too long",
    errno.ELOOP: "its symbolic links go round in a loop",
    errno.ENOSPC: "the disk is full",
    errno.EDQUOT: "your disk quota is used up",
    errno.EROFS: "the file system is read-only",
    errno.EIO: "the disk or device reported an error",
    errno.EMFILE: "too many files are open at once",
    errno.ENOEXEC: "it is not a program this system can run",
    errno.ETXTBSY: "it is busy (being written)",
}


def os_reason(exc: OSError) -> str:
    """Return why the system refused a file operation, in our words.

    >>> os_reason(FileNotFoundError(errno.ENOENT, "No such file or directory"))
    'there is no such file or folder'
    """
    reason = _OS_REASONS.get(exc.errno or 0)
    if reason is not None:
        return reason
    return f"the system refused (error {exc.errno})" if exc.errno else "the system refused"


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
