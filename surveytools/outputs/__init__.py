"""Writing result files: the results JSON, result and overview workbooks, atomic writes.

Everything here formats what the results document already holds; nothing reads an input
file or computes an indicator. Modules here may import the standard library, xlsxwriter,
:mod:`surveytools.constants`, :mod:`surveytools.safetext` and the domain types (settings,
findings, source identity); never :mod:`surveytools.inputs` readers or the assessment.
New output sheets (spectra, episodes, archive reports) belong here, one module each.
"""
