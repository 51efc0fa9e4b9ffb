"""``python -m surveytools`` runs the command line."""

import sys

from surveytools.cli import main

if __name__ == "__main__":  # not when a worker process re-imports the main module
    sys.exit(main())
