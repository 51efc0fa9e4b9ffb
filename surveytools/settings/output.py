"""``[output]``: what result workbooks hold."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Any

from surveytools import constants as C  # noqa: N812
from surveytools.settings._parse import Problem, opt


@dataclass(frozen=True)
class Output:
    """What result workbooks hold."""

    #: Annotated readings are written to the results workbook up to this many rows
    #: (larger logs: exclusion spans only, unless ``--readings`` is given).
    readings_row_limit: int = C.READINGS_ROW_LIMIT
    include_readings: bool = False
    #: Band levels of each reading are written up to this many band cells (rows x bands).
    readings_band_cell_limit: int = C.READINGS_BAND_CELL_LIMIT


def build_output(given: Mapping[str, Any]) -> tuple[Output, list[Problem]]:
    """Build :class:`Output` from the schema-valid ``[output]`` table.

    Returns
    -------
    output : Output
    problems : list of (key path, problem)
        None so far: the schema covers every rule of this section.
    """
    output = replace(Output(), **opt(given, "readings_row_limit", int),
                     **opt(given, "include_readings", bool),
                     **opt(given, "readings_band_cell_limit", int))
    return output, []
