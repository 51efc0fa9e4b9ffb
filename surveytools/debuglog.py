"""The debug log: a library's raw exception text, kept out of every message users see.

Messages to users are in our words (what failed, where, how to fix it). The raw text a
library raised (``BadZipFile: ...``, ``CalamineError: ...``, zlib and Expat errors) can
still matter to whoever maintains the tool, so it is written here instead: to the file
named by the environment variable ``SURVEYTOOLS_DEBUG_LOG`` (appended to; the batch's
worker processes inherit the variable and write to the same file), and nowhere when it is
not set.
"""

from __future__ import annotations

import os
import traceback

#: Environment variable naming the debug log file.
DEBUG_LOG_ENV = "SURVEYTOOLS_DEBUG_LOG"


def log_raw(context: str, exc: BaseException | str) -> None:
    """Append ``context`` and the raw exception (with its traceback) to the debug log.

    Never raises: a debug log that cannot be written must not change what the user sees.

    Parameters
    ----------
    context : str
        What was being done, e.g. ``"reading /data/site.xlsx"``.
    exc : BaseException or str
        The exception as raised by a library, or text already taken from one.
    """
    target = os.environ.get(DEBUG_LOG_ENV)
    if not target:
        return
    if isinstance(exc, BaseException):
        detail = "".join(traceback.format_exception(type(exc), exc, exc.__traceback__))
    else:
        detail = exc + "\n"
    try:
        with open(target, "a", encoding="utf-8") as fh:  # noqa: PTH123 - stdlib only here
            fh.write(f"[pid {os.getpid()}] {context}\n{detail}\n")
    except OSError:
        pass
