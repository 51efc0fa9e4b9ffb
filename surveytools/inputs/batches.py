"""Read a long CSV or Parquet readings log in row batches (bounded memory).

:class:`LogBatches` opens the file, finds its readings columns as the whole-file readers do
(:mod:`~surveytools.inputs.csv_input`, :mod:`~surveytools.inputs.parquet_input`) and
yields the data as pyarrow tables of at most ``batch_rows`` rows, in file order. A batch
(possibly with rows of the previous batch put in front of it) becomes a
:class:`~surveytools.inputs.raw.RawTable` with :meth:`LogBatches.raw_table`; its rows keep
the numbers they have in the file, so every finding points at the right row.

Limits: as the whole-file readers (file size, declared rows of a Parquet file). A CSV line
with more fields than the header, or a damaged Parquet page, raises
:class:`BatchReadError`: the caller reads the file whole instead, where the usual message
names the problem.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from surveytools.errors import WorkbookError
from surveytools.inputs import columns as cols
from surveytools.inputs.kinds import PARQUET_SUFFIXES
from surveytools.inputs.preflight import column_letters
from surveytools.inputs.raw import RawColumn, RawTable
from surveytools.settings import Settings
from surveytools.validation.findings import Finding

#: CSV bytes read per block by the streaming reader (own choice: large enough that the
#: per-block overhead is negligible, small next to a batch) [bytes].
CSV_BLOCK_BYTES = 16 << 20


class BatchReadError(Exception):
    """The file cannot be read in batches; read it whole (which reports why)."""


@dataclass
class LogBatches:
    """An open long readings log.

    Parameters
    ----------
    path : Path
        The file.
    kind : {"csv", "parquet"}
    sheet : str
        Sheet name of the table (the file stem).
    header_row : int
        Row number of the header (data position 0 is row ``header_row + 1``).
    columns : list of (str, str, str or None)
        Header, column letter and canonical name of each column kept, in batch order.
    delimiter : str
        CSV delimiter.
    """

    path: Path
    kind: str
    sheet: str
    header_row: int
    columns: list[tuple[str, str, str | None]]
    delimiter: str = ","
    skip_rows: int = 0
    findings: list[Finding] = field(default_factory=list)
    settings: Settings = field(default_factory=Settings)

    def tables(self, batch_rows: int) -> Iterator[Any]:
        """Yield the data as pyarrow tables of at most ``batch_rows`` rows, in file order."""
        import pyarrow as pa

        try:
            source = self._record_batches(batch_rows)
            pending: list[Any] = []
            count = 0
            for batch in source:
                pending.append(batch)
                count += batch.num_rows
                while count >= batch_rows:
                    table = pa.Table.from_batches(pending).combine_chunks()
                    yield table.slice(0, batch_rows)
                    rest = table.slice(batch_rows)
                    pending = rest.to_batches() if rest.num_rows else []
                    count = rest.num_rows
            if count:
                yield pa.Table.from_batches(pending).combine_chunks()
        except (pa.ArrowInvalid, OSError, ValueError) as exc:
            raise BatchReadError(str(exc)) from exc

    def _record_batches(self, batch_rows: int) -> Iterator[Any]:
        if self.kind == "parquet":
            import pyarrow.parquet as pq

            parquet = pq.ParquetFile(self.path)
            yield from parquet.iter_batches(batch_size=batch_rows,
                                            columns=[h for h, _, _ in self.columns])
            return
        import pyarrow as pa
        import pyarrow.csv as pacsv

        n = len(self.columns)
        names = [f"c{j}" for j in range(n)]
        reader = pacsv.open_csv(
            self.path,
            read_options=pacsv.ReadOptions(skip_rows=self.skip_rows, column_names=names,
                                           block_size=CSV_BLOCK_BYTES, encoding="utf8"),
            parse_options=pacsv.ParseOptions(delimiter=self.delimiter,
                                             ignore_empty_lines=False),
            convert_options=pacsv.ConvertOptions(
                column_types={name: pa.string() for name in names},
                strings_can_be_null=False, quoted_strings_can_be_null=False))
        yield from reader

    def without_trailing_blank_rows(self, table: Any) -> Any:
        """Return the last batch without the blank rows at the end of the file.

        The whole-file CSV reader keeps the table up to its last row with a value; so do
        the batches (a blank row between readings stays, and is reported).
        """
        if self.kind != "csv" or table.num_rows == 0:
            return table
        import numpy as np
        import pyarrow.compute as pc

        filled = np.zeros(table.num_rows, dtype=bool)
        for k in range(table.num_columns):
            text = pc.utf8_trim_whitespace(table.column(k))
            filled |= pc.not_equal(text, "").to_numpy(zero_copy_only=False)
        used = np.flatnonzero(filled)
        return table.slice(0, int(used[-1]) + 1 if used.size else 0)

    def raw_table(self, table: Any, first_position: int) -> RawTable:
        """Turn a batch into a RawTable whose rows keep their file row numbers.

        ``first_position`` is the data position (0 = the row below the header) of the
        batch's first row.
        """
        import pandas as pd

        from surveytools.inputs.csv_input import _clean, convert_text_column
        from surveytools.inputs.parquet_input import _column

        raw_columns: list[RawColumn] = []
        for k, (header, letter, name) in enumerate(self.columns):
            arr = table.column(k)
            if self.kind == "parquet":
                raw_columns.append(_column(arr, header, letter, name or header))
                continue
            col = _plain_numbers(arr, header, letter, name) or _plain_times(
                arr, header, letter, name)
            if col is None:  # text cells, blanks or dates: the whole-file reader's rules
                values = pd.Series(arr.to_numpy(zero_copy_only=False), dtype=object)
                col = convert_text_column(values, header, letter, name)
            if not header and col.kind == "empty":
                continue
            raw_columns.append(col)
        out = RawTable(self.sheet, self.header_row + first_position, raw_columns,
                       table.num_rows)
        if self.kind == "csv":
            findings: list[Finding] = []
            _clean(out, findings)
            self.findings.extend(findings)
        return out


def _plain_numbers(arr: Any, header: str, letter: str, name: str | None) -> RawColumn | None:
    """Convert a CSV column whose every cell is a finite number with pyarrow; else None.

    The same column the whole-file reader makes of it (kind ``number``, no text cells); any
    other column (a blank, a marker, a time stamp) returns None and is converted by
    :func:`~surveytools.inputs.csv_input.convert_text_column`.
    """
    import numpy as np
    import pandas as pd
    import pyarrow as pa
    import pyarrow.compute as pc

    expected = cols.EXPECTED_KIND.get(name or "", "number" if (name or "").startswith("LZeq_")
                                      else "")
    if expected not in ("", "number") or len(arr) == 0:
        return None
    try:
        numbers = pc.cast(arr, pa.float64()).to_numpy(zero_copy_only=False)
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        return None
    if not np.isfinite(numbers).all():
        return None
    return RawColumn(header, letter, "number", pd.Series(numbers, dtype="float64"))


#: The one spelling of a time stamp the fast path converts: ISO 8601 date and time with a
#: ``T`` or a space, seconds optional, at most three decimals (what loggers write; own
#: choice). Every other spelling goes through the whole-file reader's rules.
_PLAIN_TIME = r"^[0-9]{4}-[0-9]{2}-[0-9]{2}[T ][0-9]{2}:[0-9]{2}(:[0-9]{2}(\.[0-9]{1,3})?)?$"


def _plain_times(arr: Any, header: str, letter: str, name: str | None) -> RawColumn | None:
    """Convert a CSV time-stamp column of plain ISO 8601 text with pyarrow; else None.

    The same column the whole-file reader makes of it (kind ``datetime`` in milliseconds,
    no text cells) when every cell is a valid date and time spelt as :data:`_PLAIN_TIME`
    (pyarrow's ISO 8601 cast refuses 24:00, a 60th second and 30 February as pandas
    does); any other column returns None and is converted by
    :func:`~surveytools.inputs.csv_input.convert_text_column`.
    """
    import pandas as pd
    import pyarrow as pa
    import pyarrow.compute as pc

    if cols.EXPECTED_KIND.get(name or "") != "datetime" or name == "Time" or len(arr) == 0:
        return None
    if arr.null_count or not pc.all(pc.match_substring_regex(arr, _PLAIN_TIME)).as_py():
        return None
    try:
        stamps = pc.cast(arr, pa.timestamp("ms"))
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        return None
    values = stamps.to_numpy(zero_copy_only=False).astype("datetime64[ms]")
    return RawColumn(header, letter, "datetime", pd.Series(values))


def open_log(path: Path, settings: Settings) -> LogBatches | None:
    """Open a CSV or Parquet readings log for batch reading; None when it has no header.

    Raises
    ------
    WorkbookError
        As the whole-file readers do before reading any data.
    """
    if path.suffix.lower() in PARQUET_SUFFIXES:
        from surveytools.inputs.parquet_input import _check_extent, _chosen, _open

        parquet = _open(path)
        chosen = _chosen(parquet, settings)
        if not chosen:
            return None
        _check_extent(parquet, chosen)
        return LogBatches(path, "parquet", path.stem, 1,
                          [(header, column_letters(j + 1), name) for j, header, name in chosen],
                          settings=settings)
    from surveytools.inputs.csv_input import locate_header

    found = locate_header(path, settings)
    if found is None:
        return None
    delimiter, header_index, headers = found
    columns = [(header, column_letters(j + 1),
                cols.canonical_name(header, cols.READINGS_COLUMNS, settings.column_map))
               for j, header in enumerate(headers)]
    return LogBatches(path, "csv", path.stem, header_index + 1, columns, delimiter,
                      skip_rows=header_index + 1, settings=settings)


def count_hint(path: Path) -> int:
    """Rows a Parquet file declares (0 when it cannot be opened: the reader says why)."""
    try:
        import pyarrow.parquet as pq

        return int(pq.ParquetFile(path).metadata.num_rows)
    except Exception:  # damaged: the whole-file reader gives the message
        return 0


__all__ = ["BatchReadError", "LogBatches", "WorkbookError", "count_hint", "open_log"]
