"""Identity of an input file: hashed read-only, without following links (stdlib only)."""

from __future__ import annotations

import hashlib
import os
import stat
from pathlib import Path

from surveytools.errors import WorkbookError, os_reason
from surveytools.provenance import SourceInfo


def source_info(path: str | os.PathLike[str]) -> SourceInfo:
    """Hash and size one input without modifying it (read-only, no symlink following).

    Raises
    ------
    WorkbookError
        ``file-not-regular`` when the path is not a regular file, ``file-unreadable`` when
        it cannot be opened.
    """
    p = Path(path)
    flags = os.O_RDONLY | getattr(os, "O_NOFOLLOW", 0) | getattr(os, "O_NONBLOCK", 0)
    try:
        fd = os.open(p, flags)
    except OSError as exc:
        raise WorkbookError("file-unreadable", f"Cannot open the file ({os_reason(exc)}); check "
                            "that it exists and that you may read it.") from exc
    try:
        st = os.fstat(fd)
        if not stat.S_ISREG(st.st_mode):
            raise WorkbookError("file-not-regular", "This is not a regular file (a pipe, device "
                                "or link); copy the workbook itself into the folder.")
        digest = hashlib.sha256()
        with os.fdopen(fd, "rb", closefd=False) as fh:
            for chunk in iter(lambda: fh.read(1 << 20), b""):
                digest.update(chunk)
        return SourceInfo(path=str(p.resolve()), file=p.name, sha256=digest.hexdigest(),
                          size_bytes=st.st_size)
    finally:
        os.close(fd)
