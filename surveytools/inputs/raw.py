"""What the reader hands to validation: cell values with their spreadsheet locations.

The reader (``surveytools.inputs.read``) never interprets acoustics; it returns tables of typed
column values plus the cells that did not fit the column's type, each traceable to a sheet,
row and column letter. Validation (``surveytools.validation``) turns these into a
:class:`~surveytools.survey.Survey`.

Row arithmetic: position ``i`` in a :class:`RawColumn` is spreadsheet row
``table.first_data_row + i`` (1-based, as a person sees it).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, Literal

from surveytools.provenance import SourceInfo

if TYPE_CHECKING:  # annotations only: keeps the batch parent free of pandas, and
    # validation imports this module (no cycle)
    import pandas as pd

    from surveytools.validation.findings import Finding


ColumnKind = Literal["number", "datetime", "text", "bool", "empty"]


def cell_number_text(value: object) -> str:
    """Return a cell's value as a person wrote it: ``1`` for the number 1.0, else its text."""
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value)


@dataclass
class RawColumn:
    """One column of a table sheet.

    Parameters
    ----------
    header : str
        Header text exactly as in the sheet (stripped of surrounding spaces).
    letter : str
        Column letter (``"C"``).
    kind : ColumnKind
        Dominant type of the column's cells.
    values : pandas.Series
        Typed values, RangeIndex ``0..n-1``: ``float64`` (NaN = empty) for numbers,
        ``datetime64[ms]`` (NaT = empty) for date-times (naive, as written in the sheet),
        ``object`` (``str`` or ``None``) for text, ``boolean`` for yes/no cells.
        Time-of-day cells (and ``[h]:mm:ss`` duration cells) are date-times on 1899-12-31,
        day 0 of the 1900 date system, plus the time (``1899-12-31 01:02:03``), whatever the
        workbook's date system; subtract that day to combine a Date and a Time column.
    text_cells : dict of int to str
        Cells whose content did not fit ``kind`` (e.g. ``"OVL"`` or ``"55,2"`` in a number
        column, ISO text in a date-time column), by position; their ``values`` entry is empty.
    error_cells : dict of int to str
        Cells holding a spreadsheet error value (``"#DIV/0!"``), by position.
    formula_without_value : set of int
        Positions of formula cells that carry no cached value (the value is treated as empty).
    utc : bool
        The date-times are instants in UTC, not wall-clock times (a Parquet timestamp with a
        time zone): read as such whatever the clock, as ISO text with an offset is.
    """

    header: str
    letter: str
    kind: ColumnKind
    values: pd.Series
    text_cells: dict[int, str] = field(default_factory=dict)
    error_cells: dict[int, str] = field(default_factory=dict)
    formula_without_value: set[int] = field(default_factory=set)
    utc: bool = False


@dataclass
class RawTable:
    """A table sheet (Readings, Weather, Exclusions): one header row, then data rows.

    Parameters
    ----------
    sheet : str
        Sheet name as it appears in the workbook.
    header_row : int
        Spreadsheet row number of the header row (title rows above it are skipped).
    columns : list of RawColumn
        In sheet order; unknown columns are kept too.
    n_rows : int
        Number of data rows below the header, trailing empty rows excluded.
    """

    sheet: str
    header_row: int
    columns: list[RawColumn]
    n_rows: int

    @property
    def first_data_row(self) -> int:
        """Spreadsheet row number of data position 0."""
        return self.header_row + 1

    def spreadsheet_rows(self) -> pd.Series:
        """Return the spreadsheet row number of every data position (int64)."""
        import pandas as pd

        first = self.first_data_row
        return pd.Series(range(first, first + self.n_rows), dtype="int64")


@dataclass(frozen=True)
class KeyValue:
    """One ``key | value`` line of a key/value sheet (Survey).

    Parameters
    ----------
    key : str
        Key text as written.
    value : Any
        Cell value as read (``str``, ``float``, ``int``, ``bool``, ``datetime``, or ``None``).
    row : int
        Spreadsheet row number.
    key_column : str
        Letter of the key cell.
    value_column : str
        Letter of the value cell.
    """

    key: str
    value: Any
    row: int
    key_column: str
    value_column: str


@dataclass
class KeyValueSheet:
    """A key/value sheet: keys in one column, values in the next."""

    sheet: str
    entries: list[KeyValue]


@dataclass
class RawWorkbook:
    """Everything read from one input file, before validation.

    Parameters
    ----------
    source : SourceInfo
        File identity.
    readings : RawTable or None
        The readings table; None when no sheet could be identified as one (a finding says why).
    survey : KeyValueSheet or None
        The Survey key/value sheet, if present.
    weather, exclusions : RawTable or None
        Optional sheets.
    findings : list of Finding
        Reader-level findings (hidden sheet used, merged cells, formulas without values, ...).
    date_system : int
        1900 or 1904 (the workbook's date epoch; already applied to date-time values).
    """

    source: SourceInfo
    readings: RawTable | None
    survey: KeyValueSheet | None = None
    weather: RawTable | None = None
    exclusions: RawTable | None = None
    findings: list[Finding] = field(default_factory=list)
    date_system: int = 1900
