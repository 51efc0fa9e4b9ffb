"""Located findings: data problems as values, never as exceptions.

A finding has a stable code, a severity, a message that says what was expected, what was
found and how to fix it, and a location a person can click: sheet, row (as the spreadsheet
shows it, header row included) and column letter.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from enum import StrEnum
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # numpy is imported where rows arrive, not by every importer of findings
    import numpy as np


class Severity(StrEnum):
    """How serious a finding is.

    ``error``: a value, row or the whole file was rejected. ``warning``: accepted, but doubtful
    or altered. ``info``: a policy was applied or a fact worth recording.
    """

    ERROR = "error"
    WARNING = "warning"
    INFO = "info"

    @property
    def rank(self) -> int:
        """Sort rank: errors first."""
        return {"error": 0, "warning": 1, "info": 2}[self.value]


@dataclass(frozen=True)
class Finding:
    """One located data problem or recorded policy.

    Parameters
    ----------
    code : str
        Stable kebab-case code, documented in :data:`surveytools.codes.CODES`.
    severity : Severity
        error, warning or info.
    message : str
        Expected / found / how to fix.
    sheet : str, optional
        Sheet name as it appears in the workbook.
    row : int, optional
        Spreadsheet row number (1-based, header row included).
    column : str, optional
        Column letter, e.g. ``"C"``.
    """

    code: str
    severity: Severity
    message: str
    sheet: str | None = None
    row: int | None = None
    column: str | None = None

    def location(self) -> str:
        """Return ``Sheet!C14`` style location text (empty when the finding is file-wide)."""
        if self.sheet is None:
            return ""
        cell = f"{self.column or ''}{self.row if self.row is not None else ''}"
        return f"{self.sheet}!{cell}" if cell else self.sheet

    def render(self, file_name: str) -> str:
        """Render as ``file.xlsx::Readings!C14: message [code]``."""
        where = self.location()
        prefix = f"{file_name}::{where}" if where else file_name
        return f"{prefix}: {self.message} [{self.code}]"

    def to_json(self) -> dict[str, Any]:
        """Return the results-JSON form (keys are part of the results contract)."""
        return {
            "severity": self.severity.value,
            "code": self.code,
            "message": self.message,
            "sheet": self.sheet,
            "row": self.row,
            "column": self.column,
        }

    def sort_key(self) -> tuple[Any, ...]:
        """Return a deterministic order: severity, sheet, row, column, code, message."""
        return (
            self.severity.rank,
            self.sheet or "",
            self.row if self.row is not None else -1,
            _column_number(self.column),
            self.code,
            self.message,
        )


def _column_number(letters: str | None) -> int:
    if not letters:
        return -1
    n = 0
    for ch in letters:
        n = n * 26 + (ord(ch.upper()) - 64)
    return n


#: Default cap on findings kept per code and file; the rest are counted, never silently lost.
DEFAULT_MAX_PER_CODE = 200


@dataclass
class FindingCollector:
    """Collect findings for one file, capped per code, with full counts kept.

    Parameters
    ----------
    max_per_code : int
        Findings of one code beyond this many are counted but not stored; one summary
        finding (``findings-truncated``) says how many were left out.
    """

    max_per_code: int = DEFAULT_MAX_PER_CODE
    _items: list[Finding] = field(default_factory=list)
    _counts: Counter[str] = field(default_factory=Counter)
    #: Rows of every located finding, stored or not, per (code, sheet): arrays or ints.
    _rows: dict[tuple[str, str | None], list[Any]] = field(default_factory=dict)

    def add(self, finding: Finding) -> None:
        """Add one finding (counted always, stored while under the cap)."""
        self._counts[finding.code] += 1
        if finding.row is not None:
            self._rows.setdefault((finding.code, finding.sheet), []).append(finding.row)
        if self._counts[finding.code] <= self.max_per_code:
            self._items.append(finding)

    def extend(self, findings: Iterable[Finding]) -> None:
        """Add several findings."""
        for f in findings:
            self.add(f)

    def add_rows(
        self,
        code: str,
        severity: Severity,
        sheet: str,
        rows: Sequence[int] | np.ndarray,
        column: str | None,
        messages: str | Sequence[str],
    ) -> None:
        """Add one finding per row from a vectorised check.

        Parameters
        ----------
        code, severity, sheet, column
            As in :class:`Finding`; the same for every row.
        rows : array-like of int
            Spreadsheet row numbers that failed the check.
        messages : str or sequence of str
            One message for all rows, or one per row. Only the first :meth:`room` rows are
            stored, so a per-row sequence need hold only that many messages (build them for
            ``rows[:collector.room(code)]``: a column of 600,000 bad cells must not cost
            600,000 formatted messages).
        """
        import numpy as np

        rows_arr = np.asarray(rows, dtype=np.int64)
        n = int(rows_arr.size)
        if n == 0:
            return
        room = max(self.max_per_code - self._counts[code], 0)
        keep = min(room, n)
        for i in range(keep):
            msg = messages if isinstance(messages, str) else messages[i]
            self._items.append(Finding(code, severity, msg, sheet, int(rows_arr[i]), column))
        self._counts[code] += n
        self._rows.setdefault((code, sheet), []).append(rows_arr)

    def room(self, code: str) -> int:
        """Return how many more findings of ``code`` will be stored (the rest are counted)."""
        return max(self.max_per_code - self._counts[code], 0)

    @property
    def counts(self) -> dict[str, int]:
        """Return the full count per code, including findings beyond the cap."""
        return dict(self._counts)

    def located_rows(self) -> dict[tuple[str, str | None], Any]:
        """Return the row numbers of every located finding per (code, sheet), capped or not.

        A long log is validated in batches that overlap; the rows say which findings
        beyond the cap lie in the part a batch keeps (``long_log``).
        """
        import numpy as np

        return {key: np.concatenate([np.atleast_1d(np.asarray(r, dtype=np.int64))
                                     for r in parts])
                for key, parts in self._rows.items()}

    def findings(self) -> list[Finding]:
        """Return stored findings, sorted, plus one ``findings-truncated`` note per capped code."""
        out = list(self._items)
        for code, n in sorted(self._counts.items()):
            if n > self.max_per_code:
                out.append(
                    Finding(
                        "findings-truncated",
                        Severity.INFO,
                        f"{n} findings with code '{code}'; the first {self.max_per_code} are "
                        f"listed and all {n} are counted (finding_counts). Many rows with one "
                        "problem usually share one cause: fix it at the source (the export "
                        "settings, the column's format) rather than row by row.",
                    )
                )
        return sorted(out, key=Finding.sort_key)

    def has_errors(self) -> bool:
        """Return True when any error-severity finding was added (stored or not)."""
        return any(f.severity is Severity.ERROR for f in self._items)
