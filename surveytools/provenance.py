"""Identity of an input file: the one type both the input and the output side refer to."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class SourceInfo:
    """Identity of one input file.

    Parameters
    ----------
    path : str
        Path as given (absolute), for re-runs and ``verify``.
    file : str
        File name shown to people (``east_gate.xlsx``).
    sha256 : str
        Hex digest of the file's bytes.
    size_bytes : int
        File size. [bytes]
    """

    path: str
    file: str
    sha256: str
    size_bytes: int
