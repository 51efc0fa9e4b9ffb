"""``surveytools template``: a blank survey workbook in our layout, with guidance.

The workbook has the four sheets the reader understands (Survey, Readings, Weather,
Exclusions) plus a Guidance sheet, and in-sheet data validation: drop-down lists for
Clock, Microphone, Meter class, Overload / Operating and Applies to, numeric ranges for
levels, wind and rain, so that mistakes are caught while typing.
"""

from __future__ import annotations

from datetime import datetime
from pathlib import Path

from surveytools import constants

SURVEY_FIELDS: tuple[tuple[str, str], ...] = (
    ("Position", "Required. Your name for the monitoring position, e.g. P1 or North fence."),
    ("Site", "Site or project name."),
    ("Time zone", "IANA time zone of the site, e.g. Europe/Berlin, America/Chicago. Every "
                  "period (day/evening/night) and local time in the results follows it."),
    ("Clock", "How the meter's clock runs: local (follows summer time), UTC, or a fixed "
              "offset such as UTC+01:00. Readings are converted; periods follow Time zone."),
    ("Meter class", "1 or 2 (IEC 61672-1 performance class)."),
    ("Calibration before (dB)", "Level shown when the calibrator was applied before logging."),
    ("Calibration after (dB)", "Level shown when the calibrator was applied after logging."),
    ("Calibrator level (dB)", "Nominal level of the calibrator, e.g. 94 or 114."),
    ("Microphone", "free-field (away from walls) or facade (1 m or less from a facade)."),
    ("Height (m)", "Microphone height above ground."),
    ("Notes", "Anything a reviewer should know (weather, disturbances, equipment)."),
)

READINGS_COLUMNS: tuple[tuple[str, str], ...] = (
    ("Start", "Start of each logging interval (date and time, local meter clock)."),
    ("Duration (s)", "Optional: interval length in seconds (else the usual step is used)."),
    ("LAeq (dB)", "Required: A-weighted equivalent level of the interval."),
    ("LAFmax (dB)", "Optional: maximum A-weighted, F time-weighted level in the interval."),
    ("LAFmin (dB)", "Optional: minimum A-weighted, F time-weighted level."),
    ("LAF10 (dB)", "Optional: level exceeded for 10 % of the interval (meter's own)."),
    ("LAF90 (dB)", "Optional: level exceeded for 90 % of the interval (meter's own)."),
    ("Overload", "Optional: yes when the meter flagged an overload."),
    ("Operating", "Optional: yes when the assessed source was running, no when it was off."),
    ("Note", "Optional: the technician's note for the interval."),
)


def write_template(path: Path, force: bool = False) -> None:
    """Write a blank input workbook with guidance to ``path`` (atomically).

    Parameters
    ----------
    path : Path
        Where to write; must end in ``.xlsx`` (the file is an Excel workbook).
    force : bool
        Replace an existing file. Without it an existing file (perhaps a filled-in
        survey) is never touched.

    Raises
    ------
    SurveyToolsError
        The name does not end in ``.xlsx``, names a folder, or the file exists and
        ``force`` is False (exit 2; nothing written).
    """
    from surveytools.errors import SurveyToolsError
    from surveytools.outputs.atomic import atomic_path

    if path.suffix.lower() != ".xlsx":
        raise SurveyToolsError(
            f"{path}: the template is an Excel workbook, so its name must end in .xlsx "
            f"(for example {path.with_suffix('.xlsx').name}); nothing was written")
    if path.is_dir():
        raise SurveyToolsError(f"{path}: is a folder; give a file name ending in .xlsx")
    if not force and (path.exists() or path.is_symlink()):
        raise SurveyToolsError(_exists_message(path))
    path.parent.mkdir(parents=True, exist_ok=True)
    try:
        with atomic_path(path, replace=force) as tmp:
            _write(tmp)
    except FileExistsError:  # created by someone else meanwhile
        raise SurveyToolsError(_exists_message(path)) from None


def _exists_message(path: Path) -> str:
    return (f"{path}: a file of that name exists already (it may be a filled-in survey) and "
            "was left untouched; choose another name, or add --force to replace it")


def _write(path: Path) -> None:
    import xlsxwriter

    wb = xlsxwriter.Workbook(str(path), {"strings_to_formulas": False})
    wb.set_properties({"title": "Survey workbook (blank)", "author": "surveytools",
                       "created": datetime(2026, 1, 1)})
    bold = wb.add_format({"bold": True, "bg_color": "#DCE6F0", "border": 1})
    wrap = wb.add_format({"text_wrap": True, "valign": "top"})
    dt = wb.add_format({"num_format": "yyyy-mm-dd hh:mm:ss"})
    level = wb.add_format({"num_format": "0.0"})

    guide = wb.add_worksheet("Guidance")
    guide.set_column(0, 0, 28)
    guide.set_column(1, 1, 90)
    lines = [
        ("How to fill in this workbook", ""),
        ("Survey sheet", "One field per row: the name in column A, its value in column B."),
        ("Readings sheet", "One row per logging interval, below the header row. Columns may "
                           "be in any order; extra columns are kept but ignored."),
        ("Weather sheet", "Optional. Start of each weather interval, wind speed (m/s) and "
                          "rain (mm); readings in windy or wet intervals are excluded."),
        ("Exclusions sheet", "Optional. Periods you want left out (From, To, Reason); "
                             "Applies to = all, or background (left out of LA90 only)."),
        ("Check before sending", "Run: surveytools check <this file>"),
        ("", ""),
        ("Caution", "Results are indicative. The applicable local standard and regulations "
                    "govern; a competent person signs off. Wear hearing protection where "
                    "levels reach occupational action values (80 dB(A) LEX,8h)."),
        ("", ""),
        ("Survey fields", ""),
        *SURVEY_FIELDS,
        ("", ""),
        ("Readings columns", ""),
        *READINGS_COLUMNS,
    ]
    for r, (a, b) in enumerate(lines):
        if b == "" and a:
            guide.write_string(r, 0, a, bold)
        else:
            guide.write_string(r, 0, a)
            guide.write_string(r, 1, b, wrap)

    survey = wb.add_worksheet("Survey")
    survey.write_row(0, 0, ("Field", "Value", "Help"), bold)
    survey.set_column(0, 0, 26)
    survey.set_column(1, 1, 30)
    survey.set_column(2, 2, 80)
    for i, (name, help_text) in enumerate(SURVEY_FIELDS, start=1):
        survey.write_string(i, 0, name)
        survey.write_string(i, 2, help_text)
    row = {name: i for i, (name, _h) in enumerate(SURVEY_FIELDS, start=1)}
    survey.data_validation(row["Clock"], 1, row["Clock"], 1, {
        "validate": "list", "source": ["local", "UTC", "UTC+01:00", "UTC-05:00"],
        "error_type": "warning", "error_message": "Use local, UTC or a fixed offset UTC+hh:mm."})
    survey.data_validation(row["Microphone"], 1, row["Microphone"], 1, {
        "validate": "list", "source": ["free-field", "facade"]})
    survey.data_validation(row["Meter class"], 1, row["Meter class"], 1, {
        "validate": "list", "source": ["1", "2"]})
    for name in ("Calibration before (dB)", "Calibration after (dB)", "Calibrator level (dB)"):
        survey.data_validation(row[name], 1, row[name], 1, {
            "validate": "decimal", "criteria": "between", "minimum": 80, "maximum": 130,
            "error_message": "A calibration level in dB, between 80 and 130."})
    survey.data_validation(row["Height (m)"], 1, row["Height (m)"], 1, {
        "validate": "decimal", "criteria": "between", "minimum": 0, "maximum": 100})

    readings = wb.add_worksheet("Readings")
    headers = [h for h, _ in READINGS_COLUMNS]
    readings.write_row(0, 0, headers, bold)
    readings.freeze_panes(1, 0)
    readings.set_column(0, 0, 20, dt)
    readings.set_column(1, 6, 12, level)
    readings.set_column(7, 8, 11)
    readings.set_column(9, 9, 40)
    last = 1_048_575
    readings.data_validation(1, 0, last, 0, {"validate": "date", "criteria": ">",
                                             "value": datetime(1990, 1, 1)})
    readings.data_validation(1, 1, last, 1, {"validate": "decimal", "criteria": ">",
                                             "value": 0})
    readings.data_validation(1, 2, last, 6, {
        "validate": "decimal", "criteria": "between", "minimum": constants.PLAUSIBLE_LEVEL_MIN_DB,
        "maximum": constants.PLAUSIBLE_LEVEL_MAX_DB, "error_type": "warning",
        "error_message": "Levels are expected between "
                         f"{constants.PLAUSIBLE_LEVEL_MIN_DB:g} and "
                         f"{constants.PLAUSIBLE_LEVEL_MAX_DB:g} dB."})
    readings.data_validation(1, 7, last, 8, {"validate": "list", "source": ["yes", "no"]})

    weather = wb.add_worksheet("Weather")
    weather.write_row(0, 0, ("Start", "Wind speed (m/s)", "Rain (mm)"), bold)
    weather.set_column(0, 0, 20, dt)
    weather.set_column(1, 2, 16)
    weather.data_validation(1, 1, last, 1, {"validate": "decimal", "criteria": "between",
                                            "minimum": 0, "maximum": 75})
    weather.data_validation(1, 2, last, 2, {"validate": "decimal", "criteria": ">=",
                                            "value": 0})

    exclusions = wb.add_worksheet("Exclusions")
    exclusions.write_row(0, 0, ("From", "To", "Reason", "Applies to"), bold)
    exclusions.set_column(0, 1, 20, dt)
    exclusions.set_column(2, 2, 40)
    exclusions.set_column(3, 3, 14)
    exclusions.data_validation(1, 3, 10_000, 3, {"validate": "list",
                                                 "source": ["all", "background"]})
    wb.close()
