"""A shared weather file: one station's weather for every position of a batch (``--weather``).

The file is a workbook with a Weather sheet (and, optionally, a Survey sheet giving the
station's Clock and Time zone) or a CSV with the Weather columns (Start, wind speed, rain).
It is untrusted input like any survey workbook: workbooks pass the same preflight and
reader, CSV files the same CSV reader with the Weather header vocabulary. Validation turns
the table into weather intervals on the UTC axis with the file's own clock and applies it
to each input (:func:`surveytools.validation.build.build_survey`).

Reading never raises: a file that cannot be used gives a ``weather-file-unreadable``
finding, which every input of the batch then carries.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from surveytools.errors import WorkbookError, os_reason
from surveytools.inputs.kinds import CSV_SUFFIXES
from surveytools.inputs.raw import KeyValueSheet, RawTable
from surveytools.provenance import SourceInfo
from surveytools.settings import Settings
from surveytools.validation.findings import Finding, Severity


@dataclass(frozen=True)
class WeatherFile:
    """What was read from a shared weather file.

    Parameters
    ----------
    name : str
        The file's name (shown in findings).
    weather : RawTable or None
        The weather table; None when the file could not be used (see ``findings``).
    survey : KeyValueSheet or None
        The file's Survey sheet (its Clock and Time zone), if it has one.
    findings : list of Finding
        What the reader found in the weather file's Weather and Survey sheets, worded to
        be reported on each input (:func:`relocated`).
    source : SourceInfo or None
        The file's identity (path, SHA-256), recorded in each input's results.
    """

    name: str
    weather: RawTable | None
    survey: KeyValueSheet | None = None
    findings: list[Finding] = field(default_factory=list)
    source: SourceInfo | None = None

    def record(self) -> dict[str, object]:
        """Return the results document's ``weather_file`` entry (``file``, ``path``, ``sha256``)."""
        return {"file": self.name,
                "path": self.source.path if self.source is not None else None,
                "sha256": (self.source.sha256 or None) if self.source is not None else None}


def relocated(name: str, f: Finding) -> Finding:
    """Return a finding about the weather file as reported on an input: file and cell named.

    The input's findings point into the input; this one names the weather file, sheet
    and cell in its message instead.
    """
    where = ""
    if f.sheet:
        where = f" {f.sheet}" + (f"!{f.column or ''}{f.row}" if f.row else "")
    return Finding(f.code, f.severity, f"shared weather file {name}{where}: {f.message}")


def _unusable(path: Path, why: str) -> WeatherFile:
    name = path.name
    return WeatherFile(name, None, None, source=SourceInfo(str(path.resolve()), name, "", 0),
                       findings=[Finding(
        "weather-file-unreadable", Severity.ERROR,
        f"the shared weather file {name} cannot be used: {why} — no shared weather was "
        "applied; give a workbook with a Weather sheet or a CSV with Start, wind speed and "
        "rain columns")])


def read_weather_file(path: Path, settings: Settings) -> WeatherFile:
    """Read a shared weather file (workbook or CSV); never raises for a bad file."""
    name = path.name
    try:
        if path.suffix.lower() in CSV_SUFFIXES:
            from surveytools.inputs.csv_input import read_csv_table

            raw = read_csv_table(path, settings, role="weather")
        else:
            from surveytools.inputs.read import read_workbook

            raw = read_workbook(path, settings)
    except WorkbookError as exc:
        return _unusable(path, exc.message)
    except OSError as exc:
        return _unusable(path, os_reason(exc))
    if raw.weather is None:
        return _unusable(path, "it has no weather table (a sheet named 'Weather' with a "
                               "Start column)")
    sheets = {raw.weather.sheet} | ({raw.survey.sheet} if raw.survey is not None else set())
    own = [relocated(name, f) for f in raw.findings if f.sheet in sheets]
    return WeatherFile(name, raw.weather, raw.survey, own, raw.source)
