"""Command line: parse arguments, build options, execute, return an exit code."""

from __future__ import annotations

import argparse
import sys

from surveytools import __version__


def build_parser() -> argparse.ArgumentParser:
    """Return the argument parser for ``surveytools``."""
    parser = argparse.ArgumentParser(prog="surveytools", description=__doc__)
    parser.add_argument("--version", action="version", version=f"surveytools {__version__}")
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the command line; return the process exit code."""
    build_parser().parse_args(sys.argv[1:] if argv is None else argv)
    return 0
