"""Settings: every tunable of a run, with defaults so that no settings file is needed.

A settings file is TOML, validated against ``schemas/settings.schema.json``. Each default
comes from :mod:`surveytools.constants`, where its source is named. Times of day are
``"HH:MM"`` strings in the site's civil time (its time zone, with summer time);
durations are seconds.

One module per TOML section holds that section's dataclass and its builder
(``build_<section>(given) -> (value, [(key path, problem), ...])``); :mod:`.root` puts
them together into :class:`Settings`; :mod:`.schema_check` turns schema errors into located
problems; :mod:`.load` reads a file or mapping; :mod:`.record` writes settings back;
:mod:`._parse` holds the shared clock-time and duration parsing.
"""

from surveytools.settings.assessments import CORRECTION_KEYS, Assessment
from surveytools.settings.background import BACKGROUND_METHODS, Background
from surveytools.settings.calendar import Calendar
from surveytools.settings.calibration import Calibration
from surveytools.settings.criteria import CRITERION_INDICATORS, Criterion
from surveytools.settings.events import Events
from surveytools.settings.exclusions import ExclusionRules
from surveytools.settings.load import load_settings, settings_from_dict, settings_from_mapping
from surveytools.settings.output import Output
from surveytools.settings.periods import Periods, PeriodScheme
from surveytools.settings.record import settings_sha256, settings_to_mapping
from surveytools.settings.residual import Residual
from surveytools.settings.root import Settings
from surveytools.settings.schema_check import SETTINGS_SCHEMA
from surveytools.settings.spectral import Spectral
from surveytools.settings.survey import SurveyDefaults

__all__ = [
    "BACKGROUND_METHODS",
    "CORRECTION_KEYS",
    "CRITERION_INDICATORS",
    "SETTINGS_SCHEMA",
    "Assessment",
    "Background",
    "Calendar",
    "Calibration",
    "Criterion",
    "Events",
    "ExclusionRules",
    "Output",
    "PeriodScheme",
    "Periods",
    "Residual",
    "Settings",
    "Spectral",
    "SurveyDefaults",
    "load_settings",
    "settings_from_dict",
    "settings_from_mapping",
    "settings_sha256",
    "settings_to_mapping",
]
