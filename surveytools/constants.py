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

#: Hours in a day [h]. Definition (ISO 80000-3: 1 d = 24 h).
HOURS_PER_DAY = 24.0
#: Seconds in an hour [s]. Definition (ISO 80000-3: 1 h = 3600 s).
SECONDS_PER_HOUR = 3600.0
#: Milliseconds in a second [ms/s]: the time resolution of durations. Definition (SI
#: prefix milli, 10^-3).
MS_PER_S = 1000

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
#: Lowest plausible one-third-octave band level [dB] (the broadband lower end does not
#: apply to band columns). Own choice: a band is much narrower than the broadband channel,
#: so a class 1 meter's self-noise in its high-frequency bands lies near 0-10 dB and quiet
#: sites log band levels well under PLAUSIBLE_LEVEL_MIN_DB; -20 dB still refuses sentinel
#: values such as -99.
PLAUSIBLE_BAND_LEVEL_MIN_DB = -20.0

#: Default fraction of a period that must hold valid readings for the figure to count as
#: sufficient. Common practice (no standard value).
COVERAGE_THRESHOLD = 0.75

#: Share of the measured time excluded above which the verdict lists the exclusions as a
#: warning that affects the figures (the valid rest may not represent the survey period).
#: Common practice: survey reports explain exclusions of more than about a tenth of the
#: measured time (no standard value).
EXCLUDED_SHARE_NOTICE = 0.10

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

# --------------------------------------------------------------------------------------
# Indicator core (surveytools.indicators): period lengths, percent, whole-dB reporting
# --------------------------------------------------------------------------------------

#: Nominal day length in Lden [h]. Directive 2002/49/EC Annex I §1 ("the day is 12 hours,
#: the evening four hours and the night eight hours").
LDEN_DAY_HOURS_H = 12.0
#: Nominal evening length in Lden [h]. Directive 2002/49/EC Annex I §1 (Member States may
#: shorten it by one or two hours).
LDEN_EVENING_HOURS_H = 4.0
#: Nominal night length in Lden [h]. Directive 2002/49/EC Annex I §1.
LDEN_NIGHT_HOURS_H = 8.0
#: Ldn day length [h]: 07:00-22:00. Derived from LDN_DAY_START_H / LDN_NIGHT_START_H
#: (National Academies glossary, ANSI terminology); Engineering ToolBox Ldn formula (15 h).
LDN_DAY_HOURS_H = 15.0
#: Ldn night length [h]: 22:00-07:00. Same source (Engineering ToolBox formula: 9 h).
LDN_NIGHT_HOURS_H = 9.0
#: CNEL day length [h]: 07:00-19:00. Derived from the CNEL_*_START_H (ASA/ANSI terminology).
CNEL_DAY_HOURS_H = 12.0
#: CNEL evening length [h]: 19:00-22:00. Same source.
CNEL_EVENING_HOURS_H = 3.0
#: CNEL night length [h]: 22:00-07:00. Same source.
CNEL_NIGHT_HOURS_H = 9.0

#: Percent of a whole (N in LN is a percentage of the time interval) [%]. Definition.
PERCENT_OF_WHOLE = 100.0

#: Resolution to which logged background levels are rounded for the modal value [dB].
#: BS 4142:2014 3.4 (background LA90 "quoted to the nearest whole number of decibels",
#: secondary source).
WHOLE_DB_STEP_DB = 1.0
#: Half a whole-dB step: values ending in .5 round up (round half up) [dB]. Common practice
#: (arithmetic rounding as taught in school; BS 4142 does not state a tie rule).
WHOLE_DB_HALF_STEP_DB = 0.5

# --------------------------------------------------------------------------------------
# Frequency weightings (IEC 61672-1:2013 Annex E) and one-third-octave bands
# --------------------------------------------------------------------------------------

#: Factor between a level and the log of an amplitude (pressure) ratio, L = 20 lg(p/p0).
#: ISO 80000-8 (level of a root-power quantity).
DB_PER_DECADE_AMPLITUDE = 20.0
#: Reference frequency fr of the weightings [Hz]. IEC 61672-1:2013 Annex E (E.2); 2002
#: edition 5.4.6 / eq. (9)-(14).
WEIGHTING_FR_HZ = 1000.0
#: Low-frequency pole fL = 10^1.5 Hz. IEC 61672-1:2013 Annex E.
WEIGHTING_FL_HZ = 10.0**1.5
#: High-frequency pole fH = 10^3.9 Hz. IEC 61672-1:2013 Annex E.
WEIGHTING_FH_HZ = 10.0**3.9
#: A-weighting high-pass pole fA = 10^2.45 Hz. IEC 61672-1:2013 Annex E.
WEIGHTING_FA_HZ = 10.0**2.45
#: D, with D^2 = 1/2. IEC 61672-1:2013 Annex E.
WEIGHTING_D = math.sqrt(0.5)
#: Base-ten band ratio: exact mid-band frequency fm = fr * 10^(n / this). IEC 61260-1:2014
#: (base-ten system, one-third-octave: G = 10^(3/10), b = 3); IEC 61672-1:2013 Table 3.
THIRD_OCTAVE_BANDS_PER_DECADE = 10.0
#: Nominal one-third-octave mid-band frequencies 10 Hz - 20 kHz [Hz]. IEC 61672-1:2013
#: Table 3 (labels of the 34 bands n = -20 ... 13).
NOMINAL_THIRD_OCTAVE_HZ = (
    10.0, 12.5, 16.0, 20.0, 25.0, 31.5, 40.0, 50.0, 63.0, 80.0,
    100.0, 125.0, 160.0, 200.0, 250.0, 315.0, 400.0, 500.0, 630.0, 800.0,
    1000.0, 1250.0, 1600.0, 2000.0, 2500.0, 3150.0, 4000.0, 5000.0, 6300.0, 8000.0,
    10000.0, 12500.0, 16000.0, 20000.0,
)
#: Largest distance, in band numbers, between 10 lg(f_nominal / fr) and the nearest whole
#: band number for a frequency to count as a one-third-octave band. Own choice (no
#: standard): nominal labels lie within 0.04 band of their exact frequency (IEC 61672-1
#: Table 3), so 0.15 rejects non-band headers and accepts every nominal label.
NOMINAL_BAND_MATCH_TOLERANCE = 0.15

# --------------------------------------------------------------------------------------
# Frequency analysis: one-third-octave tonal screening, low-frequency content, band checks
# --------------------------------------------------------------------------------------

#: Nominal band ranges [Hz] of the one-third-octave tone test: low 25-125 Hz, middle
#: 160-400 Hz, high 500 Hz-10 kHz; bands outside 25 Hz-10 kHz are not screened.
#: ISO 1996-2:2007 Annex D (simplified method); the same test in BS 4142:2014+A1:2019
#: Annex C (one-third-octave method). From memory (shared reference: a secondary page
#: giving 25-250 Hz for the low range overlaps the middle range and looks like a typo).
TONE_LOW_BANDS_HZ = (25.0, 125.0)
#: Middle range of the tone test [Hz]. Same source (from memory).
TONE_MID_BANDS_HZ = (160.0, 400.0)
#: High range of the tone test [Hz]. Same source (from memory).
TONE_HIGH_BANDS_HZ = (500.0, 10000.0)
#: A low-range band is tonal when it exceeds both adjacent bands by at least this [dB].
#: ISO 1996-2:2007 Annex D; BS 4142:2014+A1:2019 Annex C (from memory).
TONE_LOW_DIFFERENCE_DB = 15.0
#: Same, middle range [dB]. Same source (from memory).
TONE_MID_DIFFERENCE_DB = 8.0
#: Same, high range [dB]. Same source (from memory).
TONE_HIGH_DIFFERENCE_DB = 5.0
#: Tonal correction when the one-third-octave test finds a tone in the source-on spectrum
#: that the residual spectrum does not show [dB]. BS 4142:2014+A1:2019, one-third-octave
#: method (from memory: a tone found by the objective test is rated as "highly
#: perceptible", the top of the +2 / +4 / +6 dB subjective scale of 9.2).
ONE_THIRD_OCTAVE_TONAL_CORRECTION_DB = 6.0
#: LC - LA at or above which sound is flagged as having marked low-frequency content
#: [dB]. WHO Guidelines for Community Noise (1999), on low-frequency noise: where dB(C)
#: exceeds dB(A) by more than 10 dB a frequency analysis is recommended (from memory;
#: clause number not checked).
LOW_FREQUENCY_C_MINUS_A_DB = 10.0
#: Largest median absolute difference between the A-weighted total of the band levels
#: and the logged LAeq per reporting interval before the bands are reported as not
#: matching the broadband log [dB]. Own choice (no standard): a class 1 meter's bands and
#: broadband channel agree to a few tenths of a decibel; Z/A-mixed, shifted or foreign
#: band columns differ by several decibels.
BAND_TOTAL_TOLERANCE_DB = 1.0

# --------------------------------------------------------------------------------------
# Propagation (geometric divergence)
# --------------------------------------------------------------------------------------

#: Point source: level falls by 20 lg(r2/r1) dB. ISO 9613-2:1996 7.1 (Adiv = 20 lg(d/d0) + 11),
#: 6 dB per doubling of distance (Hong Kong EPD noise education).
POINT_SOURCE_DB_PER_DECADE_DISTANCE = 20.0
#: Incoherent line source: level falls by 10 lg(r2/r1) dB, 3 dB per doubling of distance.
#: Hong Kong EPD noise education ("line source -3 dB per doubling").
LINE_SOURCE_DB_PER_DECADE_DISTANCE = 10.0

# --------------------------------------------------------------------------------------
# Spreadsheet format limits (used by surveytools.inputs)
# --------------------------------------------------------------------------------------

#: Rows in one worksheet. Microsoft "Excel specifications and limits": 1,048,576 rows.
SHEET_MAX_ROWS = 1_048_576
#: Columns in one worksheet. Same source: 16,384 columns (XFD).
SHEET_MAX_COLUMNS = 16_384
#: Characters one cell can hold. Same source: 32,767 characters.
CELL_MAX_CHARS = 32_767

# --------------------------------------------------------------------------------------
# Validation of logged levels
# --------------------------------------------------------------------------------------

#: Tolerance when checking LAFmax >= LAeq >= LAF90 >= LAFmin on one logged interval [dB].
#: Common practice: meters print levels to 0.1 dB, so half a display step is rounding.
LEVEL_ORDER_TOLERANCE_DB = 0.05

#: Decimals to which levels are reported, and at which criteria are judged: a figure
#: fails when its reported value (rounded half up) is above the limit. Common practice
#: (compliance is judged on the reported figure; reports give levels to 0.1 dB).
REPORTED_LEVEL_DECIMALS = 1

#: Annotated readings are written to a results workbook up to this many rows; longer logs
#: get their exclusion spans only (``--readings`` forces the full sheet). Common practice:
#: a sheet of ~50,000 rows still opens and filters quickly in a spreadsheet program, while
#: rewriting 604,800 1-s rows costs ~15 s (shared/reference/performance.md §2).
READINGS_ROW_LIMIT = 50_000

#: Band levels of each reading are repeated in the Readings sheet up to this many band cells
#: (rows x bands); a longer band log keeps its broadband levels there, and its band levels
#: stay in the input and in the Spectra sheet (``--readings`` writes them all).
#: Our own choice: the workbook writer takes ~10 us a number cell here (3.2 s for a week
#: of 1-min readings x 33 bands, tests/benchmarks/spectral_benchmark.py), so the band
#: table of a log within this budget costs at most about a second.
READINGS_BAND_CELL_LIMIT = 100_000

#: Earliest plausible start of a logged reading (1980-01-01) [year]. Own choice, generous:
#: logging digital sound level meters date from the 1980s; an earlier date is a typing
#: error (1926 for 2026) and the row is left out instead of stretching the survey.
PLAUSIBLE_READING_YEAR_MIN = 1980
#: Readings from this year on (2100-01-01 and later) are implausible [year]. Own choice.
PLAUSIBLE_READING_YEAR_END = 2100
#: Longest logging interval accepted in a Duration column [s]: 7 days. Own choice; a
#: meter's daily summary is 86 400 s, anything far longer is a typing or unit error.
MAX_INTERVAL_DURATION_S = 604_800.0
#: A group of readings separated from the rest of the survey by more than this is stray
#: when it is small (see STRAY_READINGS_MAX_FRACTION) [days]. Own choice.
STRAY_READINGS_GAP_DAYS = 31
#: Largest share of a survey's readings a stray group may hold [1]. Own choice: a wrong
#: year typed in a few rows, not a survey that resumed after a long break.
STRAY_READINGS_MAX_FRACTION = 0.05

#: Largest settings file read [B]: 1 MiB. Own choice: a full settings file is a few KiB;
#: the limit stops ``--settings /dev/zero`` or a mistaken data file from filling memory.
SETTINGS_MAX_BYTES = 1 << 20
#: Deepest nesting of tables and arrays in a settings file [levels]. Own choice: the
#: deepest legitimate value (``assessments[].source_on`` pairs) is 5 levels down.
SETTINGS_MAX_DEPTH = 8
#: Shortest reporting or background reference interval [s]. Own choice: a meter's
#: fastest common logging step is 100 ms, but results per interval below 1 s have no use
#: in an environmental survey and multiply the grid's size.
MIN_RESULT_INTERVAL_S = 1.0
#: Most intervals one results grid may hold [1]. Excel's worksheet holds 1,048,576 rows
#: ("Excel specifications and limits", Microsoft); the intervals sheet must fit.
MAX_GRID_INTERVALS = 1_000_000
