"""Input kinds the batch accepts (kept import-light: the batch parent never loads pandas)."""

from __future__ import annotations

#: Workbook suffixes read as survey workbooks.
WORKBOOK_SUFFIXES = (".xlsx", ".xlsm")
#: Suffixes read as a CSV readings table.
CSV_SUFFIXES = (".csv",)
#: Suffixes read as a Parquet readings table.
PARQUET_SUFFIXES = (".parquet",)
