"""``[[criteria]]``: limits on indicators, per period, position or longer interval."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from surveytools.settings._parse import Problem, duration_s

#: Indicators a criterion may limit.
CRITERION_INDICATORS = (
    "Lday", "Levening", "Lnight", "Lden", "Ldn", "CNEL", "LAeq_16h", "LAeq_8h",
    "LAeq", "LAFmax", "LA90", "rating_level", "excess_over_background",
)


@dataclass(frozen=True)
class Criterion:
    """A limit on one indicator.

    ``indicator``: ``Lday``, ``Levening``, ``Lnight``, ``Lden``, ``Ldn``, ``CNEL``,
    ``LAeq_16h``, ``LAeq_8h`` (per assessment day), ``LAeq`` or ``LAFmax`` per reporting
    interval (``period`` chooses ``day``/``evening``/``night``/``any``), or
    ``excess_over_background`` / ``rating_level`` (per assessment). ``interval_s`` checks
    LAeq or LAFmax over a longer interval than the reporting one (e.g. LAeq,1h with 15-min
    reporting): a whole multiple of the reporting interval that divides a day.
    """

    indicator: str
    limit_db: float
    period: str = "any"
    name: str | None = None
    position: str | None = None
    interval_s: float | None = None


def _interval_s(k: Mapping[str, Any]) -> float | None:
    if "interval" in k:
        return duration_s(k["interval"])
    return None if k.get("interval_s") is None else float(k["interval_s"])


def build_criteria(given: Sequence[Mapping[str, Any]]
                   ) -> tuple[tuple[Criterion, ...], list[Problem]]:
    """Build the criteria from the schema-valid ``[[criteria]]`` array.

    Returns
    -------
    criteria : tuple of Criterion
    problems : list of (key path, problem)
        An interval given both as ``interval`` and ``interval_s``.
    """
    criteria = tuple(
        Criterion(indicator=str(k["indicator"]), limit_db=float(k["limit_db"]),
                  period=str(k.get("period", "any")), name=k.get("name"),
                  position=k.get("position"), interval_s=_interval_s(k))
        for k in given
    )
    problems: list[Problem] = []
    for i, k in enumerate(given, start=1):
        if "interval" in k and k.get("interval_s") is not None:
            problems.append((f"criteria[{i}].interval",
                             "give the interval once: 'interval' or 'interval_s', not both"))
    return criteria, problems
