"""``[calibration]``: field calibration checks (drift limit, calibrator levels)."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace
from typing import Any

from surveytools import constants as C  # noqa: N812
from surveytools.settings._parse import Problem, floats, opt


@dataclass(frozen=True)
class Calibration:
    """Field calibration checks."""

    drift_limit_db: float = C.CALIBRATION_DRIFT_LIMIT_DB
    nominal_levels_db: tuple[float, ...] = C.CALIBRATOR_NOMINAL_LEVELS_DB
    nominal_tolerance_db: float = C.CALIBRATOR_NOMINAL_TOLERANCE_DB
    #: When drift exceeds the limit: "warn" (figures kept, warning) or "exclude" (every
    #: reading excluded with reason calibration-drift).
    on_excess_drift: str = "warn"


def build_calibration(given: Mapping[str, Any]) -> tuple[Calibration, list[Problem]]:
    """Build :class:`Calibration` from the schema-valid ``[calibration]`` table.

    Returns
    -------
    calibration : Calibration
    problems : list of (key path, problem)
        None so far: the schema covers every rule of this section.
    """
    calibration = replace(
        Calibration(),
        **floats(given, ("drift_limit_db", "nominal_tolerance_db")),
        **opt(given, "nominal_levels_db", lambda v: tuple(float(x) for x in v)),
        **opt(given, "on_excess_drift", str),
    )
    return calibration, []
