"""Builders for assessment tests: a Survey straight from a few arrays (no reader)."""

from __future__ import annotations

from collections.abc import Callable, Sequence
from datetime import datetime
from typing import Any
from zoneinfo import ZoneInfo

import numpy as np
import pandas as pd
import pytest

# Imported first: at the time of writing, importing surveytools.inputs.raw before
# surveytools.validation hits a circular import (validation/__init__ -> build -> inputs.raw).
import surveytools.validation  # noqa: F401  # isort: skip
from surveytools.provenance import SourceInfo
from surveytools.survey import Exclusion, Survey


def local_ms(text: str, zone: str = "Europe/Berlin") -> int:
    """UTC epoch ms of local wall-clock text (test-side conversion, stdlib only)."""
    moment = datetime.fromisoformat(text)
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=ZoneInfo(zone))
    return round(moment.timestamp() * 1000)


def build_survey(
    start_ms: Sequence[int],
    duration_s: Sequence[float] | float,
    levels: dict[str, Sequence[float]],
    *,
    zone: str = "Europe/Berlin",
    clock: str = "local",
    position: str = "NW-2",
    operating: Sequence[bool | None] | None = None,
    exclusions: Sequence[tuple[str, str, Sequence[bool]]] = (),
    metadata: dict[str, Any] | None = None,
) -> Survey:
    """Make a Survey of readings ``start_ms`` / ``duration_s`` with level columns."""
    start = np.asarray(start_ms, dtype=np.int64)
    n = start.size
    duration = np.broadcast_to(np.rint(np.asarray(duration_s, float) * 1000), (n,)).astype(
        np.int64)
    data: dict[str, Any] = {
        "row": np.arange(2, n + 2, dtype=np.int64),
        "start_ms": start,
        "duration_ms": duration,
        "offset_s": np.zeros(n, dtype=np.int32),
    }
    for name, values in levels.items():
        data[name] = np.asarray(values, dtype=np.float64)
    data["overload"] = np.zeros(n, dtype=bool)
    data["operating"] = pd.array(
        list(operating) if operating is not None else [None] * n, dtype="boolean")
    data["note"] = [None] * n
    meta = {"position": position, "time_zone": zone, "clock": clock}
    meta.update(metadata or {})
    letters = "BCDEFGHIJ"
    return Survey(
        source=SourceInfo(path="/tmp/invented.xlsx", file="invented.xlsx", sha256="0" * 64,
                          size_bytes=0),
        metadata=meta,
        readings=pd.DataFrame(data),
        level_columns={name: letters[k] for k, name in enumerate(levels)},
        exclusions=[Exclusion(reason, f"{reason} label", scope,  # type: ignore[arg-type]
                              np.asarray(mask, dtype=bool))
                    for reason, scope, mask in exclusions],
    )


@pytest.fixture
def make_survey() -> Callable[..., Survey]:
    return build_survey
