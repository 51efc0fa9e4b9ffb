"""surveytools: batch processing of environmental sound survey workbooks.

Importing the package is cheap on purpose (``surveytools --version`` must start fast):
heavy libraries are imported by the modules that need them, not here.
"""

__all__ = ["__version__"]

__version__ = "0.1.0"
