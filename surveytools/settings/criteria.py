"""``[[criteria]]``: limits on indicators, per period, position or longer interval."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

from surveytools.settings._parse import Problem, clock_text, duration_s
from surveytools.settings.calendar import parse_days

#: Indicators judged per assessment (no time series): a schedule cannot apply to them.
_ASSESSMENT_INDICATORS = ("rating_level", "excess_over_background")

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
    ``warning_db`` (below the limit) starts an episode before the limit is reached;
    ``schedule`` lists the windows ``{"days", "from", "to"}`` of the site's civil time
    when the criterion applies (as in the TOML; see :mod:`surveytools.assessment.schedule`).
    """

    indicator: str
    limit_db: float
    period: str = "any"
    name: str | None = None
    position: str | None = None
    interval_s: float | None = None
    warning_db: float | None = None
    schedule: tuple[dict[str, str], ...] = ()


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
                  position=k.get("position"), interval_s=_interval_s(k),
                  warning_db=None if k.get("warning_db") is None else float(k["warning_db"]),
                  schedule=tuple({"days": str(w["days"]), "from": clock_text(str(w["from"])),
                                  "to": clock_text(str(w["to"]))}
                                 for w in k.get("schedule", [])))
        for k in given
    )
    problems: list[Problem] = []
    for i, k in enumerate(given, start=1):
        if "interval" in k and k.get("interval_s") is not None:
            problems.append((f"criteria[{i}].interval",
                             "give the interval once: 'interval' or 'interval_s', not both"))
        warning = k.get("warning_db")
        if warning is not None and not float(warning) < float(k["limit_db"]):
            problems.append((f"criteria[{i}].warning_db",
                             f"expected a warning level below the limit ({k['limit_db']:g} dB), "
                             f"found {warning:g} dB"))
        for j, window in enumerate(k.get("schedule", []), start=1):
            try:
                parse_days(str(window["days"]))
            except ValueError as exc:
                problems.append((f"criteria[{i}].schedule[{j}].days", f"{exc}"))
        if k.get("schedule") and str(k["indicator"]) in _ASSESSMENT_INDICATORS:
            problems.append((f"criteria[{i}].schedule",
                             f"a schedule applies to interval and day indicators, not to "
                             f"{k['indicator']} (an assessment has its own windows); remove it"))
    return criteria, problems
