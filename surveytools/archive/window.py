"""The date range of an archive report (``--from`` / ``--to``), in assessment days."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, timedelta, tzinfo


@dataclass(frozen=True)
class DateWindow:
    """Assessment days from ``first`` to ``last`` (inclusive); None: unlimited."""

    first: date | None = None
    last: date | None = None

    def holds(self, day: date) -> bool:
        """Whether an assessment day is inside the window."""
        return (self.first is None or day >= self.first) and (
            self.last is None or day <= self.last)

    def clip(self, first: date, last: date) -> tuple[date, date]:
        """Return a span of days cut to the window."""
        if self.first is not None:
            first = max(first, self.first)
        if self.last is not None:
            last = min(last, self.last)
        return first, last

    def instants_ms(self, day_start: str, tz: tzinfo) -> tuple[int | None, int | None]:
        """UTC instants [ms] the window's assessment days run between (None: open)."""
        # imported here: the report's client never needs the assessment (or pandas)
        from surveytools.assessment.timegrid import parse_hhmm, wall_to_utc_ms

        hour, minute = parse_hhmm(day_start)
        low = None if self.first is None else wall_to_utc_ms(self.first, hour, minute, tz)
        high = None if self.last is None else wall_to_utc_ms(
            self.last + timedelta(days=1), hour, minute, tz)
        return low, high

    def to_json(self) -> dict[str, str | None]:
        """``{"from": ..., "to": ...}`` as ``YYYY-MM-DD`` or null."""
        return {"from": self.first.isoformat() if self.first else None,
                "to": self.last.isoformat() if self.last else None}
