"""``[residual]``: thresholds of the residual (background) correction (ISO 1996-2)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Any

from surveytools import constants as C  # noqa: N812
from surveytools.settings._parse import Problem, floats


@dataclass(frozen=True)
class Residual:
    """Residual-correction thresholds (ISO 1996-2)."""

    no_correction_above_db: float = C.RESIDUAL_NO_CORRECTION_ABOVE_DB
    upper_bound_at_or_below_db: float = C.RESIDUAL_UPPER_BOUND_AT_OR_BELOW_DB


def build_residual(given: Mapping[str, Any]) -> tuple[Residual, list[Problem]]:
    """Build :class:`Residual` from the schema-valid ``[residual]`` table.

    Returns
    -------
    residual : Residual
    problems : list of (key path, problem)
        An upper-bound threshold above the no-correction threshold.
    """
    residual = replace(Residual(),
                       **floats(given, ("no_correction_above_db", "upper_bound_at_or_below_db")))
    problems: list[Problem] = []
    if residual.upper_bound_at_or_below_db > residual.no_correction_above_db:
        problems.append(("residual.upper_bound_at_or_below_db",
                         "expected a value at or below no_correction_above_db "
                         f"({residual.no_correction_above_db:g}), found "
                         f"{residual.upper_bound_at_or_below_db:g}"))
    return residual, problems
