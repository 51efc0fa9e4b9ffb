"""Read a Parquet readings log (one readings table) into a RawWorkbook.

The file holds one readings table whose column names are headers of the readings
vocabulary (canonical names such as ``Start``, ``Duration``, ``LAeq``, ``LAFmax``, or any
accepted spelling, or a ``column_map`` entry of the settings). Columns with another name
are ignored. Types: time stamps as Parquet timestamps (wall-clock times of the position's
``clock``; a timestamp column with a time zone holds instants, read as such whatever the
clock, as ISO text with an offset is) or ISO 8601 text; levels and durations as numbers
(or text, checked as in a CSV file); ``Overload`` / ``Operating`` as booleans or yes/no
text. As for CSV, the survey facts (position, site, time zone, clock) come from the
settings' ``[survey]`` table.

Locations: the table's sheet name is the file stem; rows count from 1 with a header row
(row 2 is the first reading, as in a CSV file); columns are letters A, B, ... in the
file's column order.

Limits: the file size (:data:`MAX_PARQUET_BYTES`), the declared number of rows
(:data:`MAX_PARQUET_ROWS`) and the declared uncompressed size of the columns read
(:data:`MAX_PARQUET_UNCOMPRESSED_BYTES`) are checked from the file's footer before any
column is read, so a small file that declares a huge table is refused.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from surveytools.errors import WorkbookError
from surveytools.inputs import columns as cols
from surveytools.inputs.preflight import column_letters
from surveytools.inputs.raw import RawColumn, RawTable, RawWorkbook
from surveytools.inputs.read import source_info
from surveytools.settings import Settings
from surveytools.validation.findings import Finding, Severity

#: Largest Parquet file accepted [bytes] (as for CSV).
MAX_PARQUET_BYTES = 2_000_000_000
#: Most rows accepted (own choice: a year of 1 s readings, 31.6 million, with room).
MAX_PARQUET_ROWS = 40_000_000
#: Largest declared uncompressed size of the columns read [bytes] (own choice: a year of
#: 1 s readings with a time stamp and eight level columns is about 2.5 GB).
MAX_PARQUET_UNCOMPRESSED_BYTES = 4_000_000_000


def _refuse(message: str) -> WorkbookError:
    return WorkbookError("parquet-unreadable", message)


def _open(path: Path) -> Any:
    import pyarrow.parquet as pq

    try:
        return pq.ParquetFile(path)
    except Exception as exc:  # pyarrow raises several types for a damaged footer
        raise _refuse("The Parquet file could not be opened (it is damaged or not a Parquet "
                      "file). Export it again.") from exc


def _chosen(parquet: Any, settings: Settings) -> list[tuple[int, str, str]]:
    """(position, header, canonical name) of the recognised readings columns."""
    names = list(parquet.schema_arrow.names)
    out = []
    seen: set[str] = set()
    for j, header in enumerate(names):
        canonical = cols.canonical_name(header, cols.READINGS_COLUMNS, settings.column_map)
        if canonical is not None and canonical not in seen:
            seen.add(canonical)
            out.append((j, str(header), canonical))
    return out


def _check_extent(parquet: Any, chosen: list[tuple[int, str, str]]) -> None:
    meta = parquet.metadata
    if meta.num_rows > MAX_PARQUET_ROWS:
        raise _refuse(f"The Parquet file declares {meta.num_rows:,} rows; the limit is "
                      f"{MAX_PARQUET_ROWS:,}. Split the log into several files (by month).")
    wanted = {j for j, _, _ in chosen}
    size = 0
    for g in range(meta.num_row_groups):
        group = meta.row_group(g)
        for c in range(group.num_columns):
            column = group.column(c)
            if column.path_in_schema.split(".")[0] in {
                    parquet.schema_arrow.names[j] for j in wanted}:
                size += max(int(column.total_uncompressed_size), 0)
    if size > MAX_PARQUET_UNCOMPRESSED_BYTES:
        raise _refuse(f"The Parquet file's readings columns would take {size / 1e9:.1f} GB "
                      f"once read; the limit is {MAX_PARQUET_UNCOMPRESSED_BYTES / 1e9:.0f} GB. "
                      "Split the log into several files (by month).")


def _column(arr: Any, header: str, letter: str, name: str) -> RawColumn:
    import pyarrow as pa
    import pyarrow.compute as pc

    from surveytools.inputs.csv_input import convert_text_column
    from surveytools.inputs.read import arrow_to_column

    if isinstance(arr, pa.ChunkedArray):
        arr = arr.combine_chunks()
    typ = arr.type
    if pa.types.is_dictionary(typ):
        arr = arr.dictionary_decode()
        typ = arr.type
    zoned = pa.types.is_timestamp(typ) and typ.tz is not None
    if zoned:  # instants: read in UTC, whatever the clock (like ISO text with an offset)
        arr = pc.cast(arr, pa.timestamp("ms", tz="UTC")).cast(pa.timestamp("ms"))
    if pa.types.is_string(typ) or pa.types.is_large_string(typ):
        import pandas as pd

        values = pd.Series(arr.to_pylist(), dtype=object).fillna("")
        return convert_text_column(values, header, letter, name)
    if (pa.types.is_timestamp(arr.type) or pa.types.is_date(arr.type)
            or pa.types.is_floating(arr.type) or pa.types.is_integer(arr.type)
            or pa.types.is_boolean(arr.type) or pa.types.is_null(arr.type)):
        column = arrow_to_column(arr, header, letter, 1900)
        column.utc = zoned
        return column
    raise _refuse(f"Column {header!r} has the Parquet type {typ}, which is not a time stamp, "
                  "number, yes/no or text; store it as one of those.")


def read_parquet_table(path: str | Path, settings: Settings | None = None) -> RawWorkbook:
    """Read a Parquet readings log.

    Parameters
    ----------
    path : str or Path
        The Parquet file (read-only).
    settings : Settings, optional
        Uses ``settings.column_map``.

    Returns
    -------
    RawWorkbook
        ``readings`` holds the table (sheet name = file stem); ``survey`` is None.

    Raises
    ------
    WorkbookError
        ``file-empty``, ``file-too-large`` or ``parquet-unreadable`` (damaged, too many
        rows, a column of an unusable type).
    """
    settings = settings or Settings()
    p = Path(path)
    size = p.stat().st_size
    if size == 0:
        raise WorkbookError("file-empty", "The Parquet file is empty (0 bytes). Export it "
                            "again.")
    if size > MAX_PARQUET_BYTES:
        raise WorkbookError("file-too-large", f"The Parquet file is {size / 1e6:.0f} MB; the "
                            f"limit is {MAX_PARQUET_BYTES / 1e6:.0f} MB. Split the log into "
                            "several files.")
    source = source_info(p)
    parquet = _open(p)
    sheet = p.stem
    chosen = _chosen(parquet, settings)
    if not chosen:
        finding = Finding(
            "header-missing", Severity.ERROR,
            "No readings column was recognised among the Parquet file's columns "
            f"({', '.join(map(str, parquet.schema_arrow.names[:12]))}). Name them Start, "
            "LAeq ... or map them in the settings' [columns] table.", sheet=sheet)
        return RawWorkbook(source=source, readings=None, findings=[finding])
    _check_extent(parquet, chosen)
    try:
        table = parquet.read(columns=[header for _, header, _ in chosen])
    except Exception as exc:  # damaged pages, failed decompression
        raise _refuse("The Parquet file's data could not be read (a damaged page or an "
                      "unsupported encoding). Export it again.") from exc
    columns = [_column(table.column(k), header, column_letters(j + 1), name)
               for k, (j, header, name) in enumerate(chosen)]
    table = None
    return RawWorkbook(source=source, readings=RawTable(sheet, 1, columns,
                                                         parquet.metadata.num_rows),
                       findings=[], date_system=1900)
