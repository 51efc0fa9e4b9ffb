"""Every standard number surveytools uses, each with its source.

Conventions: levels in dB, times in seconds unless the name says otherwise (``_MS`` for
milliseconds, ``_H`` for hours). "from memory" marks a value recalled from a standard
that could not be checked against a readable copy; "common practice" marks a trade
convention with no standard behind it. Formula modules import from here and never hard-code
a standard number.
"""

from __future__ import annotations

import math

# --------------------------------------------------------------------------------------
# Decibel arithmetic
# --------------------------------------------------------------------------------------

#: Factor between a level and its energy exponent, L = 10 lg(E). ISO 80000-8 (level of a
#: power quantity is 10 lg of the power ratio).
DB_PER_DECADE_POWER = 10.0

#: ln(10)/10: energy = exp(L * this). Derived from DB_PER_DECADE_POWER.
LN10_OVER_10 = math.log(10.0) / DB_PER_DECADE_POWER

#: Reference sound pressure p0 [Pa]. IEC 60050-801 / ISO 1683: 20 µPa in air.
REFERENCE_PRESSURE_PA = 20e-6

# --------------------------------------------------------------------------------------
# Day / evening / night periods
# --------------------------------------------------------------------------------------

#: Default start of the day period, local time [h]. Directive 2002/49/EC Annex I §1
#: ("default values are 07.00 to 19.00, 19.00 to 23.00 and 23.00 to 07.00 local time").
LDEN_DAY_START_H = 7.0
#: Default start of the evening period [h]. Directive 2002/49/EC Annex I §1.
LDEN_EVENING_START_H = 19.0
#: Default start of the night period [h]. Directive 2002/49/EC Annex I §1.
LDEN_NIGHT_START_H = 23.0
#: Evening penalty in Lden [dB]. Directive 2002/49/EC Annex I §1.
LDEN_EVENING_PENALTY_DB = 5.0
#: Night penalty in Lden [dB]. Directive 2002/49/EC Annex I §1.
LDEN_NIGHT_PENALTY_DB = 10.0

#: Ldn day start [h]: night is 22:00-07:00. ANSI terminology via National Academies
#: glossary (DNL: +10 dB "from 0000 to 0700 hours and from 2200 to 2400 hours").
LDN_DAY_START_H = 7.0
#: Ldn night start [h]. Same source.
LDN_NIGHT_START_H = 22.0
#: Ldn night penalty [dB]. Same source.
LDN_NIGHT_PENALTY_DB = 10.0

#: CNEL day start [h]. ASA/ANSI terminology, "community noise equivalent level":
#: +5 dB from 1900 to 2200 hours, +10 dB from 2200 to 0700 hours.
CNEL_DAY_START_H = 7.0
#: CNEL evening start [h]. Same source.
CNEL_EVENING_START_H = 19.0
#: CNEL night start [h]. Same source.
CNEL_NIGHT_START_H = 22.0
#: CNEL evening penalty [dB]. Same source.
CNEL_EVENING_PENALTY_DB = 5.0
#: CNEL night penalty [dB]. Same source.
CNEL_NIGHT_PENALTY_DB = 10.0

#: LAeq,16h runs 07:00-23:00 and LAeq,8h 23:00-07:00 [h]. Common practice (UK usage,
#: e.g. the WHO 1999 16 h / 8 h time bases, Guidelines for Community Noise Table 4.1).
LAEQ16_START_H = 7.0
#: End of the LAeq,16h window / start of LAeq,8h [h]. Same source.
LAEQ16_END_H = 23.0

#: Hours in a day [h].
HOURS_PER_DAY = 24.0
#: Seconds in an hour [s].
SECONDS_PER_HOUR = 3600.0

# --------------------------------------------------------------------------------------
# Residual sound correction (ISO 1996-2)
# --------------------------------------------------------------------------------------

#: Above this level difference (total - residual) no correction is applied [dB].
#: ISO 1996-2:2007 9.6 / ISO 1996-2:2017 (from memory).
RESIDUAL_NO_CORRECTION_ABOVE_DB = 10.0
#: At or below this difference the specific level is not determinable; the total is
#: reported as an upper bound [dB]. ISO 1996-2:2007 9.6 (from memory).
RESIDUAL_UPPER_BOUND_AT_OR_BELOW_DB = 3.0

# --------------------------------------------------------------------------------------
# Background and rating (BS 4142:2014+A1:2019)
# --------------------------------------------------------------------------------------

#: Reference time interval for day-time assessment [s]. BS 4142:2014 7.2 (from memory).
REFERENCE_INTERVAL_DAY_S = 3600.0
#: Reference time interval for night-time assessment [s]. BS 4142:2014 7.2 (from memory).
REFERENCE_INTERVAL_NIGHT_S = 900.0
#: Day period for BS 4142 reference intervals starts [h]. BS 4142 (secondary source:
#: day 07:00-23:00, night 23:00-07:00).
BS4142_DAY_START_H = 7.0
#: Night period for BS 4142 reference intervals starts [h]. Same source.
BS4142_NIGHT_START_H = 23.0
#: Rating minus background at or above which an adverse impact is likely [dB].
#: BS 4142:2014 clause 11 (secondary source).
BS4142_ADVERSE_DB = 5.0
#: Rating minus background at or above which a significant adverse impact is likely [dB].
#: BS 4142:2014 clause 11 (secondary source).
BS4142_SIGNIFICANT_ADVERSE_DB = 10.0

# --------------------------------------------------------------------------------------
# Percentile levels
# --------------------------------------------------------------------------------------

#: Default exceedance percentages reported (L10, L50, L90). Common practice.
DEFAULT_PERCENTILES = (10.0, 50.0, 90.0)
#: The exceedance percentage that defines the background level LA90 [%]. BS 4142:2014 3.4.
BACKGROUND_PERCENT = 90.0

# --------------------------------------------------------------------------------------
# Calibration and measurement quality
# --------------------------------------------------------------------------------------

#: Maximum allowed difference between field calibration checks before and after a series
#: [dB]. ISO 1996-2:2017 5.2 (from memory).
CALIBRATION_DRIFT_LIMIT_DB = 0.5
#: Nominal levels of common sound calibrators [dB]. IEC 60942 calibrators: 94 dB (1 Pa)
#: and 114 dB (10 Pa) are the usual nominal levels (common practice).
CALIBRATOR_NOMINAL_LEVELS_DB = (94.0, 104.0, 114.0)
#: Tolerance when comparing a recorded calibrator level with a nominal one [dB].
#: Common practice.
CALIBRATOR_NOMINAL_TOLERANCE_DB = 0.5

#: Default plausible range of a logged environmental level [dB]. Common practice: below
#: ~10 dB is under any class 1 meter's noise floor; above 140 dB is the occupational peak
#: limit region (Directive 2003/10/EC) and not an environmental level.
PLAUSIBLE_LEVEL_MIN_DB = 10.0
#: Upper end of the plausible range [dB]. See PLAUSIBLE_LEVEL_MIN_DB.
PLAUSIBLE_LEVEL_MAX_DB = 140.0

#: Default fraction of a period that must hold valid readings for the figure to count as
#: sufficient. Common practice (no standard value).
COVERAGE_THRESHOLD = 0.75

#: A gap is reported when the time between readings exceeds this multiple of the
#: logging step. Common practice.
GAP_FACTOR = 1.5

# --------------------------------------------------------------------------------------
# Meteorological exclusions
# --------------------------------------------------------------------------------------

#: Wind speed above which readings are excluded [m/s]. ISO 1996-2 / BS 4142 practice
#: (from memory); the Minnesota PCA guide states "below 11 mph" (~4.9 m/s).
WIND_LIMIT_M_S = 5.0
#: Rainfall above which a weather interval counts as wet [mm]. Common practice: any rain.
RAIN_LIMIT_MM = 0.0
#: Time after rain during which readings stay excluded [s]. Bracknell Forest Council
#: noise guidance, Appendix 4 ("at least 1 hour after the cessation of any rainfall").
RAIN_SETTLE_S = 3600.0

# --------------------------------------------------------------------------------------
# Night events and reporting
# --------------------------------------------------------------------------------------

#: Night LAFmax event threshold outside a bedroom [dB]. WHO Guidelines for Community Noise
#: (1999) Table 4.1: outside bedrooms, 60 dB LAFmax.
NIGHT_LAFMAX_THRESHOLD_DB = 60.0
#: Which highest night LAFmax to report (10th highest). Common practice (WHO 1999 notes
#: the indoor maximum should not be exceeded "more than 10-15 times per night", from memory).
NIGHT_LAFMAX_NTH = 10

#: Default reporting interval [s]. Common practice (15 min).
REPORTING_INTERVAL_S = 900.0

# --------------------------------------------------------------------------------------
# Occupational noise (caution lines only)
# --------------------------------------------------------------------------------------

#: Lower exposure action value LEX,8h [dB(A)]. Directive 2003/10/EC Art. 3(1)(c).
LEX8H_LOWER_ACTION_DB = 80.0
#: Upper exposure action value LEX,8h [dB(A)]. Directive 2003/10/EC Art. 3(1)(b).
LEX8H_UPPER_ACTION_DB = 85.0
#: Exposure limit value LEX,8h [dB(A)]. Directive 2003/10/EC Art. 3(1)(a).
LEX8H_LIMIT_DB = 87.0
#: Reference duration of the working day for LEX,8h [s]. ISO 9612:2009 (T0 = 8 h).
LEX_REFERENCE_DURATION_S = 8.0 * 3600.0
