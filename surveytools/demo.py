"""The demo: an invented monitoring scenario written as survey workbooks and a settings file.

Everything here is fiction made for the demo (no real site, firm or person): a depot on
"Kestrel Lane" with four monitoring positions over a week of late October, so that the
week crosses the end of summer time. The data are generated from a fixed seed, so
``surveytools demo`` always writes the same workbooks as those kept in ``workbooks_demo/``.

- ``kl1_north_boundary.xlsx``: 15-minute logging with the meter's own LAF10/LAF90, a
  Weather sheet with a wet spell and a windy afternoon, calibration drift 0.2 dB.
- ``kl2_garden.xlsx``: 1-minute logging; a chiller plant runs at night (23:00-07:00) except
  on two nights (residual periods), an ``Operating`` column records it; the technician marked
  lawn mowing beside the meter, and a barking dog (background only).
- ``kl3_lane_end.xlsx``: 1-second logging over one day, two overloads (one written by the
  meter as ``OVL``), calibration drift 0.6 dB (above the 0.5 dB limit: a warning for QA).
- ``kl4_pump_house.xlsx``: 5-minute logging over three days with one-third-octave band
  levels (12.5 Hz-20 kHz); a drainage pump by the depot's pump house hums at 100 Hz on the
  first two nights (23:00-05:00) and is off on the third (the residual); an ``Operating``
  column records it (so the background is pump-free). The results show a night-time tone,
  a low-frequency flag and a derived tonal correction.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timedelta
from pathlib import Path
from typing import Any
from zoneinfo import ZoneInfo

import numpy as np

TIME_ZONE = "Europe/Berlin"
SITE = "Kestrel Lane depot (invented for the surveytools demo)"
SEED = 20261021

SETTINGS_TOML = """\
# Settings for the surveytools demo (an invented scenario).
reporting_interval = "15min"
percentiles = [10, 50, 90]
coverage_threshold = 0.75

[survey]
time_zone = "Europe/Berlin"

[background]
method = "mode"

[exclusions]
wind_max_m_s = 5.0
rain_settle = "1h"

[[assessments]]
name = "Chiller plant at night"
position = "KL-2"
source_on = [["2026-10-22 23:30", "2026-10-23 01:30"]]
residual  = [["2026-10-24 23:30", "2026-10-25 01:30"]]
corrections_db = { tonal = 2.0, impulsive = 0.0, intermittency = 0.0, other = 0.0 }

[[assessments]]
name = "Chiller plant, all operating periods"
position = "KL-2"
use_operating_column = true
corrections_db = { tonal = 2.0 }

[[assessments]]
name = "Pump house hum at night"
position = "KL-4"
source_on = [["2026-10-22 23:30", "2026-10-23 01:30"]]
residual  = [["2026-10-24 23:30", "2026-10-25 01:30"]]
corrections_db = { tonal = "one-third-octave" }

[[criteria]]
name = "Night level outside bedrooms"
indicator = "Lnight"
limit_db = 45.0

[[criteria]]
name = "Day-evening-night level"
indicator = "Lden"
limit_db = 55.0

[[criteria]]
name = "Daytime hourly level"
indicator = "LAeq"
period = "day"
interval = "1h"
limit_db = 60.0

[[criteria]]
name = "Plant rating over background"
indicator = "excess_over_background"
limit_db = 5.0
"""


@dataclass(frozen=True)
class DemoPosition:
    """One invented monitoring position."""

    file: str
    position: str
    description: str
    start_local: datetime
    step_s: float
    n: int
    calibration_before_db: float
    calibration_after_db: float
    base_db: float
    band_levels: bool = False


POSITIONS = (
    DemoPosition("kl1_north_boundary.xlsx", "KL-1", "North boundary fence, 1.5 m",
                 datetime(2026, 10, 21, 12, 0), 900.0, 7 * 96, 94.0, 94.2, 44.0),
    DemoPosition("kl2_garden.xlsx", "KL-2", "Rear garden of the nearest house, 1.5 m",
                 datetime(2026, 10, 21, 12, 0), 60.0, 7 * 1440, 94.0, 93.9, 38.0),
    DemoPosition("kl3_lane_end.xlsx", "KL-3", "Lane end by the depot gate, 4 m",
                 datetime(2026, 10, 22, 7, 0), 1.0, 86_400, 94.0, 93.4, 46.0),
    DemoPosition("kl4_pump_house.xlsx", "KL-4", "Garden fence facing the pump house, 1.5 m",
                 datetime(2026, 10, 22, 12, 0), 300.0, 3 * 288, 94.0, 94.1, 36.0,
                 band_levels=True),
)

#: Nominal one-third-octave bands of the KL-4 meter's export [Hz] (12.5 Hz-20 kHz).
DEMO_BANDS_HZ = (
    12.5, 16.0, 20.0, 25.0, 31.5, 40.0, 50.0, 63.0, 80.0, 100.0, 125.0, 160.0, 200.0, 250.0,
    315.0, 400.0, 500.0, 630.0, 800.0, 1000.0, 1250.0, 1600.0, 2000.0, 2500.0, 3150.0,
    4000.0, 5000.0, 6300.0, 8000.0, 10000.0, 12500.0, 16000.0, 20000.0,
)
#: A-weighting of those bands [dB], IEC 61672-1:2013 Table 3 (used to make the invented
#: broadband LAeq agree with the invented bands, as a real meter's channels do).
_DEMO_A_WEIGHTS_DB = (
    -63.4, -56.7, -50.5, -44.7, -39.4, -34.6, -30.2, -26.2, -22.5, -19.1, -16.1, -13.4,
    -10.9, -8.6, -6.6, -4.8, -3.2, -1.9, -0.8, 0.0, 0.6, 1.0, 1.2, 1.3, 1.2, 1.0, 0.5, -0.1,
    -1.1, -2.5, -4.3, -6.6, -9.3,
)


def _local_hours(starts: list[datetime]) -> np.ndarray:
    return np.array([t.hour + t.minute / 60 + t.second / 3600 for t in starts])


def _wall_clock_series(pos: DemoPosition) -> list[datetime]:
    """Naive local timestamps as a meter on local time writes them (with the DST repeat)."""
    tz = ZoneInfo(TIME_ZONE)
    start = pos.start_local.replace(tzinfo=tz)
    utc0 = start.astimezone(ZoneInfo("UTC"))
    step = timedelta(seconds=pos.step_s)
    return [(utc0 + i * step).astimezone(tz).replace(tzinfo=None) for i in range(pos.n)]


def _levels(pos: DemoPosition, hours: np.ndarray, rng: np.random.Generator,
            plant_on: np.ndarray) -> dict[str, np.ndarray]:
    """Invented levels: a diurnal background, an AR(1) wander, passing events, the plant."""
    n = hours.size
    diurnal = pos.base_db + 8.0 * np.clip(np.sin((hours - 5.0) / 24 * 2 * np.pi), -0.6, 1.0)
    ar = np.zeros(n)
    noise = rng.normal(0.0, 1.0, n)
    phi = 0.95 if pos.step_s < 100 else 0.5
    for i in range(1, n):  # AR(1) wander, for the invented data only
        ar[i] = phi * ar[i - 1] + noise[i] * (0.4 if pos.step_s < 100 else 1.0)
    la90 = diurnal + ar - 3.0
    quiet_night = (hours >= 23) | (hours < 7)
    # Passing vehicles, voices, birds: ~20 events an hour by day, one every 2 h at night,
    # 5-40 s each.
    rate_per_s = np.where(quiet_night, 0.5, 20.0) / 3600.0
    p_event = 1.0 - np.exp(-rate_per_s * pos.step_s)
    events = rng.random(n) < p_event
    event_db = rng.uniform(55.0, 74.0, n) - np.where(quiet_night, 12.0, 0.0)
    event_s = rng.uniform(5.0, 40.0, n)
    share = np.minimum(1.0, event_s / pos.step_s)
    energy = 10 ** (la90 / 10) * 1.6 + np.where(events, share * 10 ** (event_db / 10), 0.0)
    plant_db = 44.0
    energy = energy + np.where(plant_on, 10 ** (plant_db / 10), 0.0)
    laeq = 10 * np.log10(energy)
    la90 = 10 * np.log10(10 ** (la90 / 10) + np.where(plant_on, 10 ** ((plant_db - 1) / 10), 0))
    la90 = np.minimum(la90, laeq - 0.5)
    lafmax = np.maximum(laeq + np.abs(rng.normal(3.0, 1.5, n)), np.where(events, event_db, 0))
    la10 = np.minimum(laeq + np.abs(rng.normal(1.5, 0.6, n)), lafmax)
    lafmin = la90 - np.abs(rng.normal(2.0, 0.8, n))
    return {k: np.round(v, 1) for k, v in
            {"LAeq": laeq, "LAFmax": lafmax, "LAF10": la10, "LAF90": la90,
             "LAFmin": lafmin}.items()}


def _new_workbook(path: Path, pos: DemoPosition) -> tuple[Any, Any, Any]:
    """Open a demo workbook with fixed properties; return it, a date-time and a bold format."""
    import xlsxwriter

    wb = xlsxwriter.Workbook(str(path), {"strings_to_formulas": False, "constant_memory": False})
    wb.set_properties({"title": f"Survey log {pos.position}", "author": "surveytools demo",
                       "created": datetime(2026, 10, 28, 9, 0)})
    return (wb, wb.add_format({"num_format": "yyyy-mm-dd hh:mm:ss"}),
            wb.add_format({"bold": True}))


def _write_survey(wb: Any, pos: DemoPosition, bold: Any, height_m: float, notes: str) -> None:
    """Write a position's Survey sheet: key / value pairs under a bold header row."""
    survey = wb.add_worksheet("Survey")
    rows = [("Position", pos.position), ("Site", SITE), ("Description", pos.description),
            ("Time zone", TIME_ZONE), ("Clock", "local"), ("Meter class", 1),
            ("Calibration before (dB)", pos.calibration_before_db),
            ("Calibration after (dB)", pos.calibration_after_db),
            ("Calibrator level (dB)", 94.0), ("Microphone", "free-field"),
            ("Height (m)", height_m), ("Notes", notes)]
    survey.write_row(0, 0, ("Field", "Value"), bold)
    for i, (k, v) in enumerate(rows, start=1):
        survey.write_string(i, 0, k)
        if isinstance(v, str):
            survey.write_string(i, 1, v)
        else:
            survey.write_number(i, 1, v)
    survey.set_column(0, 0, 26)
    survey.set_column(1, 1, 52)


def _assessment_days(stamps: list[datetime]) -> np.ndarray:
    """Return the assessment day (from 07:00) each wall-clock stamp belongs to."""
    return np.array([(t - timedelta(hours=7)).date() for t in stamps])


def _write_position(path: Path, pos: DemoPosition, rng: np.random.Generator) -> None:
    stamps = _wall_clock_series(pos)
    hours = _local_hours(stamps)
    nights_off = {datetime(2026, 10, 24).date(), datetime(2026, 10, 26).date()}
    night = (hours >= 23) | (hours < 7)
    owner = _assessment_days(stamps)
    plant_on = night & np.array([d not in nights_off for d in owner]) if pos.position == "KL-2" \
        else np.zeros(len(stamps), dtype=bool)
    lv = _levels(pos, hours, rng, plant_on)

    wb, dt_fmt, bold = _new_workbook(path, pos)

    _write_survey(wb, pos, bold, 4.0 if pos.position == "KL-3" else 1.5,
                  "Invented data for the surveytools demo.")

    ws = wb.add_worksheet("Readings")
    ws.write_string(0, 0, f"Logged levels, position {pos.position} (demo export)")
    ws.write_string(1, 0, f"Logging interval {pos.step_s:g} s; times are local clock")
    header = ["Start", "Duration (s)", "LAeq (dB)", "LAFmax (dB)", "LAFmin (dB)"]
    if pos.step_s >= 60:
        header += ["LAF10 (dB)", "LAF90 (dB)"]
    if pos.position == "KL-2":
        header += ["Operating"]
    if pos.position == "KL-3":
        header += ["Overload"]
    header += ["Note"]
    ws.write_row(3, 0, header, bold)
    overload_rows = {30_000, 52_345} if pos.position == "KL-3" else set()
    for i, t in enumerate(stamps):
        r = 4 + i
        ws.write_datetime(r, 0, t, dt_fmt)
        ws.write_number(r, 1, pos.step_s)
        c = 2
        for key in ("LAeq", "LAFmax", "LAFmin"):
            if key == "LAFmax" and i == 52_345 and pos.position == "KL-3":
                ws.write_string(r, c, "OVL")
            else:
                ws.write_number(r, c, float(lv[key][i]))
            c += 1
        if pos.step_s >= 60:
            ws.write_number(r, c, float(lv["LAF10"][i]))
            ws.write_number(r, c + 1, float(lv["LAF90"][i]))
            c += 2
        if pos.position == "KL-2":
            ws.write_string(r, c, "yes" if plant_on[i] else "no")
            c += 1
        if pos.position == "KL-3":
            ws.write_string(r, c, "yes" if i in overload_rows else "no")
            c += 1
    ws.freeze_panes(4, 0)
    ws.set_column(0, 0, 20)

    if pos.position in ("KL-1", "KL-2"):
        weather = wb.add_worksheet("Weather")
        weather.write_row(0, 0, ("Start", "Wind speed (m/s)", "Rain (mm)"), bold)
        w_start = _wall_clock_series(DemoPosition("", "", "", pos.start_local, 3600.0, 7 * 24,
                                                  0, 0, 0))
        wind = np.round(np.clip(rng.normal(2.5, 1.0, len(w_start)), 0.2, None), 1)
        rain = np.zeros(len(w_start))
        wind[30:34] = [5.8, 6.4, 6.1, 5.2]          # a windy afternoon
        rain[70:73] = [0.4, 1.2, 0.2]               # a wet spell
        for i, t in enumerate(w_start):
            weather.write_datetime(i + 1, 0, t, dt_fmt)
            weather.write_number(i + 1, 1, float(wind[i]))
            weather.write_number(i + 1, 2, float(rain[i]))
        weather.set_column(0, 0, 20)

    if pos.position == "KL-2":
        ex = wb.add_worksheet("Exclusions")
        ex.write_row(0, 0, ("From", "To", "Reason", "Applies to"), bold)
        ex.write_datetime(1, 0, datetime(2026, 10, 23, 10, 20), dt_fmt)
        ex.write_datetime(1, 1, datetime(2026, 10, 23, 11, 0), dt_fmt)
        ex.write_string(1, 2, "Lawn mowing beside the meter")
        ex.write_string(1, 3, "all")
        ex.write_datetime(2, 0, datetime(2026, 10, 25, 14, 0), dt_fmt)
        ex.write_datetime(2, 1, datetime(2026, 10, 25, 14, 30), dt_fmt)
        ex.write_string(2, 2, "Dog barking in the next garden")
        ex.write_string(2, 3, "background")
        ex.set_column(0, 1, 20)
        ex.set_column(2, 2, 34)
    wb.close()


#: The invented meter's self-noise in a band [dB] (the quietest band level it logs).
_DEMO_NOISE_FLOOR_DB = 13.0


def _band_header(hz: float) -> str:
    return f"LZeq {hz / 1000:g} kHz" if hz >= 1000 else f"LZeq {hz:g} Hz"


def _band_levels(pos: DemoPosition, hours: np.ndarray, rng: np.random.Generator,
                 pump_on: np.ndarray) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """Invented band levels (readings x bands) and the broadband levels that go with them.

    A smooth ambient spectrum (flat 50-500 Hz, falling 1 dB a band above, 3 dB a band
    below, never under the meter's invented noise floor) follows a diurnal course with a
    slow wander; each band jitters a little. The pump adds a 100 Hz hum with some broadband
    energy in the bands around it.
    """
    n, bands = hours.size, np.array(DEMO_BANDS_HZ)
    number = np.round(10 * np.log10(bands / 1000.0))
    shape = np.where(number > -3, -1.0 * (number + 3), 0.0) + np.where(
        number < -13, -3.0 * (-13 - number), 0.0)
    diurnal = pos.base_db + 9.0 * np.clip(np.sin((hours - 5.0) / 24 * 2 * np.pi), -0.6, 1.0)
    wander = np.convolve(rng.normal(0.0, 1.0, n), np.ones(6) / np.sqrt(6), mode="same")
    ambient = diurnal[:, None] + wander[:, None] + shape[None, :] + rng.normal(
        0.0, 0.6, (n, bands.size))
    energy = 10 ** (np.maximum(ambient, _DEMO_NOISE_FLOOR_DB) / 10)
    pump = np.full(bands.size, -np.inf)
    near = np.abs(number + 10) <= 3  # 50-200 Hz: the pump's broadband part
    pump[near] = 38.0 - 3.0 * np.abs(number[near] + 10)
    pump[number == -10] = 57.0  # the hum, 100 Hz
    pump_energy = 10 ** (pump / 10) * rng.uniform(0.8, 1.25, (n, 1))
    energy = energy + np.where(pump_on[:, None], pump_energy, 0.0)
    levels = np.round(10 * np.log10(energy), 1)
    weighted = 10 ** ((levels + np.array(_DEMO_A_WEIGHTS_DB)) / 10)
    laeq = 10 * np.log10(weighted.sum(axis=1)) + rng.normal(0.0, 0.1, n)
    lafmax = laeq + np.abs(rng.normal(4.0, 1.5, n))
    laf90 = laeq - np.abs(rng.normal(2.5, 0.8, n))
    broadband = {k: np.round(v, 1) for k, v in
                 {"LAeq": laeq, "LAFmax": lafmax, "LAF90": laf90}.items()}
    return levels, broadband


def _write_band_position(path: Path, pos: DemoPosition, rng: np.random.Generator) -> None:
    """Write a position whose meter also exports one-third-octave band levels (KL-4)."""
    stamps = _wall_clock_series(pos)
    hours = _local_hours(stamps)
    owner = _assessment_days(stamps)
    pump_nights = {datetime(2026, 10, 22).date(), datetime(2026, 10, 23).date()}
    pump_on = ((hours >= 23) | (hours < 5)) & np.array([d in pump_nights for d in owner])
    levels, broadband = _band_levels(pos, hours, rng, pump_on)

    wb, dt_fmt, bold = _new_workbook(path, pos)
    _write_survey(wb, pos, bold, 1.5,
                  "Invented data for the surveytools demo: one-third-octave bands, Z-weighted.")

    ws = wb.add_worksheet("Readings")
    ws.write_string(0, 0, f"Logged levels, position {pos.position} (demo export)")
    ws.write_string(1, 0, f"Logging interval {pos.step_s:g} s; times are local clock; "
                          "band levels Z-weighted")
    header = (["Start", "Duration (s)", "LAeq (dB)", "LAFmax (dB)", "LAF90 (dB)"]
              + [_band_header(hz) for hz in DEMO_BANDS_HZ] + ["Operating", "Note"])
    ws.write_row(3, 0, header, bold)
    for i, t in enumerate(stamps):
        r = 4 + i
        ws.write_datetime(r, 0, t, dt_fmt)
        ws.write_number(r, 1, pos.step_s)
        for c, key in enumerate(("LAeq", "LAFmax", "LAF90"), start=2):
            ws.write_number(r, c, float(broadband[key][i]))
        ws.write_row(r, 5, levels[i].tolist())
        ws.write_string(r, 5 + len(DEMO_BANDS_HZ), "yes" if pump_on[i] else "no")
    ws.freeze_panes(4, 0)
    ws.set_column(0, 0, 20)
    wb.close()


def write_demo(directory: Path, force: bool = False) -> list[Path]:
    """Write the demo workbooks and ``settings.toml`` into ``directory``; return the paths.

    Without ``force`` no existing file is replaced (a user's own ``settings.toml`` in that
    folder stays as it is): the demo is refused before anything is written.

    Raises
    ------
    SurveyToolsError
        Some of the files exist already and ``force`` is False (exit 2; nothing written).
    """
    from surveytools.errors import SurveyToolsError
    from surveytools.outputs.atomic import atomic_path

    contents: list[tuple[Path, DemoPosition | None]] = [
        (directory / pos.file, pos) for pos in POSITIONS]
    contents.append((directory / "settings.toml", None))
    present = [p for p, _ in contents if p.exists() or p.is_symlink()]
    if present and not force:
        names = ", ".join(p.name for p in present)
        raise SurveyToolsError(
            f"{directory}: already holds {names}; nothing was written so that your files are "
            "kept. Choose an empty folder (surveytools demo NEW_FOLDER), or add --force to "
            "replace them with the demo files")
    directory.mkdir(parents=True, exist_ok=True)
    written: list[Path] = []
    try:
        for k, (target, pos) in enumerate(contents):
            with atomic_path(target, replace=force) as tmp:
                if pos is None:
                    tmp.write_text(SETTINGS_TOML, encoding="utf-8")
                else:
                    write = _write_band_position if pos.band_levels else _write_position
                    write(tmp, pos, np.random.default_rng(SEED + k))
            written.append(target)
    except FileExistsError as exc:  # created by someone else meanwhile
        raise SurveyToolsError(f"{exc}: appeared while the demo was being written and was "
                               "left untouched") from None
    return written
