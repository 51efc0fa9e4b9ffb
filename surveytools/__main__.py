"""``python -m surveytools`` runs the command line."""

import sys

from surveytools.cli import main

sys.exit(main())
