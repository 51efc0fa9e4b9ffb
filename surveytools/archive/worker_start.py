"""What each embedded ``archive report`` worker imports as it starts (a Dask preload).

The local cluster starts while the client reads the settings and the ingest records
(:class:`surveytools.archive.report.LocalClusterStart`); importing the readers and the
assessment there, instead of in each worker's first task, keeps that time out of the
computation the workers share.
"""

from __future__ import annotations

import pandas  # noqa: F401
import pyarrow.parquet  # noqa: F401

import surveytools.archive.figures
import surveytools.archive.report
import surveytools.assessment.context
import surveytools.assessment.parts  # noqa: F401
