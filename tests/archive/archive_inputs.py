"""Shared inputs of the archive tests: the demo, small generated CSV logs, the CLI."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from surveytools.demo import write_demo


def demo_folder(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """Write the demo workbooks and settings to a new temporary folder."""
    folder = tmp_path_factory.mktemp("demo")
    write_demo(folder)
    return folder


def write_csv_log(path: Path, first: str, days: int, step_s: int, level_db: float | np.ndarray,
                  lafmax_db: float | None = None) -> Path:
    """A CSV readings log from ``first`` (local ISO text), ``days`` long, one row per step."""
    n = days * 86_400 // step_s
    starts = np.datetime64(first, "s") + np.arange(n) * np.timedelta64(step_s, "s")
    levels = np.broadcast_to(np.asarray(level_db, dtype=float), (n,))
    lines = ["Start,Duration (s),LAeq" + (",LAFmax" if lafmax_db is not None else "")]
    text = np.char.replace(starts.astype(str), "T", " ")
    for t, level in zip(text.tolist(), levels.tolist(), strict=True):
        row = f"{t},{step_s},{level:.1f}"
        if lafmax_db is not None:
            row += f",{lafmax_db:.1f}"
        lines.append(row)
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def write_settings(path: Path, position: str, extra: str = "") -> Path:
    """Settings naming the position and site time zone of a CSV log."""
    path.write_text(f'[survey]\nposition = "{position}"\ntime_zone = "Europe/Berlin"\n{extra}',
                    encoding="utf-8")
    return path


def cli(*args: str) -> tuple[int, str, str]:
    """Run the command line in this process; return (exit code, stdout, stderr)."""
    import io

    from surveytools.cli import build_parser, execute

    out, err = io.StringIO(), io.StringIO()
    code = execute(build_parser().parse_args(list(args)), out, err)
    return code, out.getvalue(), err.getvalue()


def dying_prepare(path: Path, settings: object, staging: Path,
                  weather: Path | None = None) -> object:
    """Stand-in for the worker's prepare step: the process dies on ``die.csv``."""
    import os

    from surveytools.archive import add

    if path.name == "die.csv":
        os._exit(3)
    return add.prepare_input(path, settings, staging, weather)  # type: ignore[arg-type]
