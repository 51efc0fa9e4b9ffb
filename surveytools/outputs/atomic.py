"""Crash-safe output writing and safe output names.

Every output file is first written to a temporary ``.<name>.<random>.part`` file in the
same directory, flushed to disk, and then renamed over the final name with
:func:`os.replace` (atomic on POSIX and Windows when both are on one file system). A reader
therefore sees either the old file, or the complete new one, never a truncated file; a
failed write leaves no ``.part`` behind.

Output names come from input file names, sheet names and site names, which are untrusted:
:func:`safe_stem` turns any text into a short, portable, directory-local file name stem,
and :func:`unique_output_stem` keeps two inputs with the same stem apart.
"""

from __future__ import annotations

import contextlib
import os
import re
import secrets
import unicodedata
from collections.abc import Iterator
from pathlib import Path

#: Suffix of temporary files written by :func:`atomic_path`.
PART_SUFFIX = ".part"
#: Longest stem :func:`safe_stem` returns (before a reserved-name ``_`` prefix) [characters].
MAX_STEM_CHARS = 80
#: Length of the hash suffix :func:`unique_output_stem` adds on a clash [hex digits].
HASH_SUFFIX_CHARS = 12
#: Longest part of the final name kept in a temporary name [characters]; keeps the
#: temporary name within the usual 255-byte file name limit.
_MAX_PART_NAME_CHARS = 100

#: Device names Windows reserves in every directory, with or without an extension
#: (Microsoft "Naming Files, Paths, and Namespaces").
WINDOWS_RESERVED_NAMES = frozenset(
    {"CON", "PRN", "AUX", "NUL"}
    | {f"COM{i}" for i in range(1, 10)}
    | {f"LPT{i}" for i in range(1, 10)}
)

_UNSAFE = re.compile(r"[^A-Za-z0-9._-]+")
_STRIP = "._ "


def _fsync_file(path: Path) -> None:
    with path.open("rb") as fh:
        os.fsync(fh.fileno())


def _fsync_dir(directory: Path) -> None:
    """Flush a directory entry (the rename) to disk; a no-op where not supported."""
    flags = os.O_RDONLY | getattr(os, "O_DIRECTORY", 0)
    try:
        fd = os.open(directory, flags)
    except OSError:  # Windows cannot open directories; rename durability is the OS's job
        return
    try:
        os.fsync(fd)
    except OSError:  # some file systems refuse fsync on directories
        pass
    finally:
        os.close(fd)


def _new_part_path(final: Path) -> Path:
    """Create an empty, exclusive temporary file next to ``final`` (umask permissions)."""
    stem = final.name[:_MAX_PART_NAME_CHARS]
    for _ in range(100):
        candidate = final.with_name(f".{stem}.{secrets.token_hex(4)}{PART_SUFFIX}")
        try:
            fd = os.open(candidate, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
        except FileExistsError:
            continue
        os.close(fd)
        return candidate
    raise FileExistsError(f"could not create a temporary file next to {final}")


def _publish_new(part: Path, final: Path) -> None:
    """Give ``part`` the name ``final`` only if no file has that name (never replaces one).

    A hard link is created (fails atomically when the name exists) and the temporary name
    removed; on file systems without hard links the existence check and the rename are two
    steps.
    """
    try:
        os.link(part, final)
    except FileExistsError:
        raise
    except OSError:  # no hard links here (FAT, some network shares)
        if final.exists() or final.is_symlink():
            raise FileExistsError(final) from None
        part.replace(final)
        return
    part.unlink()


@contextlib.contextmanager
def atomic_path(final_path: str | os.PathLike[str], replace: bool = True) -> Iterator[Path]:
    """Yield a temporary path to write; move it onto ``final_path`` only on success.

    The temporary file (``.<name>.<random>.part`` in the same directory) exists, empty,
    when the block starts. When the block ends normally it is fsynced and renamed over
    ``final_path`` with :func:`os.replace`, and the directory is fsynced. When the block
    raises, the temporary file is removed and ``final_path`` is left as it was.

    Parameters
    ----------
    final_path : str or path-like
        Where the finished file must appear. Its directory must exist.
    replace : bool
        False: never replace an existing ``final_path`` (a user's file); raise
        :class:`FileExistsError` instead and leave it untouched.

    Yields
    ------
    Path
        The temporary path to write to.
    """
    final = Path(final_path)
    part = _new_part_path(final)
    try:
        yield part
        _fsync_file(part)
        if replace:
            part.replace(final)
        else:
            _publish_new(part, final)
    except BaseException:
        with contextlib.suppress(OSError):
            part.unlink()
        raise
    _fsync_dir(final.parent)


def atomic_write_bytes(path: str | os.PathLike[str], data: bytes) -> None:
    """Write ``data`` to ``path`` atomically (see :func:`atomic_path`)."""
    with atomic_path(path) as part, part.open("wb") as fh:
        fh.write(data)


def atomic_write_text(path: str | os.PathLike[str], text: str, encoding: str = "utf-8") -> None:
    """Write ``text`` to ``path`` atomically, encoded, with no newline translation."""
    atomic_write_bytes(path, text.encode(encoding))


def remove_stale_parts(directory: str | os.PathLike[str]) -> list[Path]:
    """Remove temporary ``.*.part`` files left in ``directory`` by an interrupted run.

    Only regular files directly in ``directory`` whose name starts with ``.`` and ends with
    ``.part`` are removed. Returns the removed paths, sorted.
    """
    removed: list[Path] = []
    d = Path(directory)
    if not d.is_dir():
        return removed
    for entry in sorted(d.iterdir()):
        if entry.name.startswith(".") and entry.name.endswith(PART_SUFFIX) \
                and entry.is_file() and not entry.is_symlink():
            with contextlib.suppress(FileNotFoundError):
                entry.unlink()
                removed.append(entry)
    return removed


def safe_stem(name: str) -> str:
    """Turn untrusted text into a safe, portable file name stem.

    NFKC-normalise; replace each run of characters outside ``A-Za-z0-9._-`` by ``_``; strip
    leading and trailing ``.``, ``_`` and spaces; keep at most 80 characters; prefix ``_``
    to Windows reserved device names (``CON``, ``NUL``, ``COM1`` ... also with an extension,
    any case); ``"unnamed"`` when nothing is left. The result is ASCII, has no path
    separator, is never ``.`` or ``..``, and is at most 81 bytes long.

    Parameters
    ----------
    name : str
        Any text (a file stem, sheet or site name).

    Returns
    -------
    str
        The stem.
    """
    text = _UNSAFE.sub("_", unicodedata.normalize("NFKC", name)).strip(_STRIP)
    text = text[:MAX_STEM_CHARS].rstrip(_STRIP)
    if not text:
        return "unnamed"
    if text.split(".", 1)[0].upper() in WINDOWS_RESERVED_NAMES:
        text = "_" + text
    return text


def unique_output_stem(stem: str, sha256: str, taken: set[str]) -> str:
    """Return ``stem``, or ``stem__<sha256[:12]>`` when ``stem`` is already taken.

    Names compare without regard to case (case-insensitive file systems). The returned
    stem is added to ``taken``. Should the hashed stem also be taken (the same file given
    twice), a counter is appended (``__<hash>_2``).

    Parameters
    ----------
    stem : str
        A :func:`safe_stem` result.
    sha256 : str
        Hex digest of the input's bytes.
    taken : set of str
        Stems already used in this output directory; updated.

    Returns
    -------
    str
        A stem not in ``taken`` (ignoring case).
    """
    used = {t.casefold() for t in taken}
    candidate = stem
    if candidate.casefold() in used:
        candidate = f"{stem}__{sha256[:HASH_SUFFIX_CHARS]}"
        n = 2
        base = candidate
        while candidate.casefold() in used:
            candidate = f"{base}_{n}"
            n += 1
    taken.add(candidate)
    return candidate
