"""The archive: years of readings of many positions as a Parquet dataset, and its report.

:mod:`~.store` (layout and ingest records), :mod:`~.add` (``archive add``),
:mod:`~.report` (``archive report`` on Dask), :mod:`~.figures` (long-term figures from the
merged parts of :mod:`surveytools.assessment.parts`), :mod:`~.window` (the date range).
"""
