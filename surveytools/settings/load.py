"""Reading a settings file or mapping: TOML decoding, schema check, building, located errors.

Every problem becomes one line ``source: key.path: expected ..., found ...`` of a
:class:`~surveytools.errors.SettingsError`; all problems of a stage are listed at once.
"""

from __future__ import annotations

import math
import os
import re
import stat
import tomllib
from collections.abc import Mapping
from datetime import date, datetime, time
from pathlib import Path
from typing import Any

from surveytools import constants as C  # noqa: N812
from surveytools.errors import SettingsError, os_reason
from surveytools.settings._parse import Problem, drop_none, key_path, show
from surveytools.settings.root import Settings, build_settings
from surveytools.settings.schema_check import schema_problems

_TOML_POSITION = re.compile(r"\(at line (\d+), column (\d+)\)")


def _plain_toml(value: Any) -> Any:
    """Turn TOML's native date/time values into the text forms the schema describes.

    ``07:00:00`` (a TOML local time) becomes ``"07:00"``; ``2026-07-03T22:00:00`` (a TOML
    local date-time) becomes ``"2026-07-03 22:00"``. Offset date-times keep their offset so
    that the window check can reject them (windows are local clock times).
    """
    if isinstance(value, dict):
        return {k: _plain_toml(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_plain_toml(v) for v in value]
    if isinstance(value, datetime):
        text = value.isoformat(sep=" ", timespec="seconds")
        return text[:16] + text[19:] if value.second == 0 else text
    if isinstance(value, time):
        return value.strftime("%H:%M" if value.second == 0 else "%H:%M:%S")
    if isinstance(value, date):
        return value.isoformat()
    return value


def _shape_problems(data: Mapping[str, Any]) -> list[Problem]:
    """Return numbers that are not finite and values nested too deeply (before any parsing).

    Walks the data without recursion, so that no depth of nesting can exhaust the stack.
    """
    problems: list[Problem] = []
    todo: list[tuple[tuple[Any, ...], Any]] = [((), data)]
    while todo:
        path, value = todo.pop()
        if len(path) > C.SETTINGS_MAX_DEPTH:
            problems.append((key_path(path[:C.SETTINGS_MAX_DEPTH]), "expected at most "
                             f"{C.SETTINGS_MAX_DEPTH} levels of tables and arrays, found more"))
            continue
        if isinstance(value, Mapping):
            todo.extend(((*path, k), v) for k, v in value.items())
        elif isinstance(value, list | tuple):
            todo.extend(((*path, i), v) for i, v in enumerate(value))
        elif isinstance(value, float) and not math.isfinite(value):
            problems.append((key_path(path), f"expected a finite number, found {value!r}"))
    return problems


def _raise(source: str, problems: list[Problem]) -> None:
    unique = sorted(set(problems))
    lines = [f"{source}: {path}: {text}" for path, text in unique]
    if len(lines) == 1:
        raise SettingsError(lines[0])
    raise SettingsError(f"{source}: {len(lines)} problems in the settings:\n" + "\n".join(lines))


def settings_from_mapping(data: Mapping[str, Any], source: str = "settings") -> Settings:
    """Validate a settings mapping in the TOML layout and build :class:`Settings`.

    Parameters
    ----------
    data : mapping
        Parsed TOML (or an equivalent dict); omitted keys keep their defaults. TOML local
        times (``07:00:00``) and local date-times are accepted as well as text. The output
        of :meth:`Settings.to_dict` (a results file's ``settings``) is accepted too: its
        ``column_map`` stands for ``columns`` and ``None`` values for omitted keys.
    source : str
        Name used at the start of every error message (the settings file name).

    Returns
    -------
    Settings
        The effective settings.

    Raises
    ------
    SettingsError
        Listing every problem, one line each: ``source: key.path: expected ..., found ...``.
    """
    if not isinstance(data, Mapping):
        raise SettingsError(f"{source}: expected a table of settings, found {show(data)}")
    mapping = dict(data)
    if "column_map" in mapping and "columns" not in mapping:  # Settings.to_dict() spelling
        mapping["columns"] = mapping.pop("column_map")
    problems = _shape_problems(mapping)
    if problems:
        _raise(source, problems)
    plain = _plain_toml(drop_none(mapping))
    problems = schema_problems(plain)
    if problems:
        _raise(source, problems)
    settings, problems = build_settings(plain)
    if problems:
        _raise(source, problems)
    return settings


def settings_from_dict(data: Mapping[str, Any], source: str = "results settings") -> Settings:
    """Rebuild settings from :meth:`Settings.to_dict` output (e.g. a results file's ``settings``).

    Raises
    ------
    SettingsError
        When the recorded settings are not valid (a damaged or foreign results file).
    """
    return settings_from_mapping(data, source)


def load_settings(path: str | Path | None) -> Settings:
    """Read, validate and build the settings of a run.

    Parameters
    ----------
    path : str or Path or None
        TOML settings file; ``None`` gives the documented defaults (``Settings()``).

    Returns
    -------
    Settings
        The effective settings.

    Raises
    ------
    SettingsError
        The file cannot be read, is not UTF-8 TOML (line and column named), or breaks the
        schema or a domain rule (every problem listed with its key path).
    """
    if path is None:
        return Settings()
    p = Path(path)
    label = p.name or str(p)
    raw = _read_settings_bytes(p, label)
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise SettingsError(f"{label}: expected UTF-8 text, found a byte that is not UTF-8 at "
                            f"offset {exc.start}; save the file as UTF-8") from exc
    try:
        data = tomllib.loads(text)
    except RecursionError:
        raise SettingsError(f"{label}: expected at most {C.SETTINGS_MAX_DEPTH} levels of "
                            "tables and arrays, found far more") from None
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        m = _TOML_POSITION.search(msg)
        where = f"line {m.group(1)}, column {m.group(2)}: " if m else ""
        detail = _TOML_POSITION.sub("", msg).strip()
        raise SettingsError(f"{label}: {where}not valid TOML: {detail}") from exc
    return settings_from_mapping(data, label)


def _read_settings_bytes(p: Path, label: str) -> bytes:
    """Read a settings file: a regular file of at most ``SETTINGS_MAX_BYTES``.

    Opened without blocking (a pipe given as settings would otherwise wait for a writer
    for ever) and checked on the open file, so a device such as ``/dev/zero`` or a pipe is
    refused before anything is read, and at most one byte more than the limit is read.
    """
    try:
        fd = os.open(p, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except OSError as exc:
        raise SettingsError(f"{label}: cannot read the settings file ({os_reason(exc)}); "
                            "check the path given to --settings") from exc
    st = os.fstat(fd)
    if not stat.S_ISREG(st.st_mode):
        os.close(fd)
        kind = ("a folder" if stat.S_ISDIR(st.st_mode) else
                "a pipe" if stat.S_ISFIFO(st.st_mode) else "a device or socket")
        raise SettingsError(f"{label}: expected a settings file (TOML text), found {kind}; "
                            "give the path of a .toml file to --settings")
    with os.fdopen(fd, "rb") as fh:
        if st.st_size > C.SETTINGS_MAX_BYTES:
            raise SettingsError(_too_large(label, st.st_size))
        try:
            raw = fh.read(C.SETTINGS_MAX_BYTES + 1)
        except OSError as exc:
            raise SettingsError(f"{label}: cannot read the settings file "
                                f"({os_reason(exc)})") from exc
    if len(raw) > C.SETTINGS_MAX_BYTES:  # it grew while being read
        raise SettingsError(_too_large(label, len(raw)))
    return raw


def _too_large(label: str, size: int) -> str:
    return (f"{label}: expected a settings file of at most {C.SETTINGS_MAX_BYTES // 1024} KiB, "
            f"found {size:,} bytes; is this really the settings file?")
