"""Reading untrusted input files (xlsx, CSV) into raw tables with cell locations.

Nothing here computes an indicator or writes a file. Modules here may import the standard
library, the reader libraries (fastexcel, python-calamine, pandas), :mod:`surveytools.errors`,
:mod:`surveytools.constants`, :mod:`surveytools.safetext` and the finding type; never
:mod:`surveytools.outputs` or the assessment. New input kinds (Parquet, archive parts) belong
here, one module each.
"""
