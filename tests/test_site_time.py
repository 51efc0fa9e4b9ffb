"""Site time end to end: periods follow the site's Time zone whatever the meter's Clock.

Workbooks are built here and run through ``surveytools run`` as a user would. Each
reading's level is chosen from the *site's* civil hour (day 07-19: 60 dB, evening 19-23:
55 dB, night 23-07: 50 dB; Directive 2002/49/EC Annex I periods), computed on the test
side with the standard library's ``zoneinfo`` (IANA tz database), so a figure that mixes
periods shows at once. Hand-evaluated expectations:

- Lday = 60.0, Levening = 55.0, Lnight = 50.0 dB (every reading of a period has the same
  level; ISO 1996-1 LAeq of equal levels is that level);
- Lden = 10 lg((12·10^6.0 + 4·10^((55+5)/10) + 8·10^((50+10)/10)) / 24) = 60.0 dB
  (Directive 2002/49/EC Annex I; the penalties balance exactly);
- a night across the autumn change in Europe/London (2026-10-25 02:00 BST -> 01:00 GMT)
  lasts 9 h, across the spring change (2026-03-29 01:00 GMT -> 02:00 BST) 7 h (IANA tz
  database; design.md §5: periods keep their wall-clock bounds).
"""

from __future__ import annotations

import json
import subprocess
import sys
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any
from zoneinfo import ZoneInfo

import openpyxl
import pytest

pytestmark = pytest.mark.slow

DAY_DB, EVENING_DB, NIGHT_DB = 60.0, 55.0, 50.0
HOUR = timedelta(hours=1)


def level_at(local: datetime) -> float:
    """The level of the site's civil hour (Directive 2002/49/EC Annex I periods)."""
    if 7 <= local.hour < 19:
        return DAY_DB
    if 19 <= local.hour < 23:
        return EVENING_DB
    return NIGHT_DB


def hourly_instants(site: str, first_local: datetime, last_local: datetime) -> list[datetime]:
    """UTC instants of every hour from one site wall-clock time to another (exclusive)."""
    zone = ZoneInfo(site)
    t = first_local.replace(tzinfo=zone).astimezone(UTC)
    end = last_local.replace(tzinfo=zone).astimezone(UTC)
    out = []
    while t < end:
        out.append(t)
        t += HOUR
    return out


def stamp(instant: datetime, clock: str, site: str) -> datetime:
    """How a meter on ``clock`` writes ``instant`` (naive wall-clock time)."""
    if clock == "local":
        return instant.astimezone(ZoneInfo(site)).replace(tzinfo=None)
    if clock == "UTC":
        return instant.astimezone(UTC).replace(tzinfo=None)
    sign = 1 if clock[3] == "+" else -1
    offset = timedelta(hours=int(clock[4:6]), minutes=int(clock[7:9])) * sign
    return (instant.astimezone(UTC) + offset).replace(tzinfo=None)


def site_workbook(path: Path, *, position: str, clock: str, time_zone: str | None,
                  instants: list[datetime], site: str) -> Path:
    """A survey workbook whose levels follow the site's civil hours."""
    wb = openpyxl.Workbook()
    ws = wb.active
    assert ws is not None
    ws.title = "Survey"
    ws.append(["Field", "Value"])
    rows: dict[str, Any] = {"Position": position, "Site": "Invented site", "Clock": clock,
                            "Calibration before (dB)": 94.0, "Calibration after (dB)": 94.0,
                            "Calibrator level (dB)": 94.0}
    if time_zone is not None:
        rows["Time zone"] = time_zone
    for key, value in rows.items():
        ws.append([key, value])
    rd = wb.create_sheet("Readings")
    rd.append(["Start", "Duration (s)", "LAeq (dB)"])
    zone = ZoneInfo(site)
    for instant in instants:
        rd.append([stamp(instant, clock, site), 3600, level_at(instant.astimezone(zone))])
    wb.save(path)
    return path


def run(folder: Path, out: Path, *extra: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "surveytools", "run", str(folder), "-o",
                           str(out), "--settle", "0", *extra], capture_output=True, text=True,
                          timeout=600, check=False)


LONDON = "Europe/London"
SEASONS = {
    # a week over the autumn change: 2026-10-22 07:00 to 2026-10-29 07:00 local
    "autumn": (datetime(2026, 10, 22, 7), datetime(2026, 10, 29, 7), "2026-10-24", 9.0),
    # a week over the spring change: 2026-03-26 07:00 to 2026-04-02 07:00 local
    "spring": (datetime(2026, 3, 26, 7), datetime(2026, 4, 2, 7), "2026-03-28", 7.0),
}
CLOCKS = {"local": "local", "utc": "UTC", "fixed": "UTC+00:00"}


@pytest.fixture(scope="module")
def results(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Any]:
    """One run over every scenario workbook; the parsed results JSON by file stem."""
    base = tmp_path_factory.mktemp("site_time")
    folder = base / "in"
    folder.mkdir()
    for season, (first, last, _, _) in SEASONS.items():
        instants = hourly_instants(LONDON, first, last)
        for name, clock in CLOCKS.items():
            site_workbook(folder / f"{season}_{name}.xlsx", position=f"{season}-{name}",
                          clock=clock, time_zone=LONDON, instants=instants, site=LONDON)
    # a meter on UTC at a site in Sydney (June: AEST, UTC+10, no summer time)
    site_workbook(folder / "sydney_utc.xlsx", position="SYD", clock="UTC",
                  time_zone="Australia/Sydney", site="Australia/Sydney",
                  instants=hourly_instants("Australia/Sydney", datetime(2026, 6, 10, 7),
                                           datetime(2026, 6, 11, 7)))
    # a meter on a fixed UTC+00:00 in London in summer (BST, UTC+01:00)
    site_workbook(folder / "london_fixed_summer.xlsx", position="LDN", clock="UTC+00:00",
                  time_zone=LONDON, site=LONDON,
                  instants=hourly_instants(LONDON, datetime(2026, 7, 1, 7),
                                           datetime(2026, 7, 2, 7)))
    out = base / "out"
    proc = run(folder, out, "--quiet")
    assert proc.returncode == 0, proc.stdout + proc.stderr
    return {p.name.split(".")[0]: json.loads(p.read_text())
            for p in out.glob("*.results.json")}


def assert_periods(day: dict[str, Any]) -> None:
    assert (day["Lday"], day["Levening"], day["Lnight"]) == (DAY_DB, EVENING_DB, NIGHT_DB)
    assert day["Lden"] == pytest.approx(60.0, abs=0.0005)


def test_meter_on_utc_at_a_site_in_sydney(results: dict[str, Any]) -> None:
    doc = results["sydney_utc"]
    (day,) = doc["days"]
    assert day["date"] == "2026-06-10"
    assert_periods(day)  # the night is Sydney's night, not Sydney's noon
    assert doc["survey"]["time_zone"] == "Australia/Sydney"
    assert doc["survey"]["clock"] == "UTC"
    # local times shown are Sydney's (AEST, +10:00)
    assert doc["intervals"][0]["start"] == "2026-06-10T07:00:00+10:00"
    assert doc["coverage"]["first"] == "2026-06-10T07:00:00+10:00"


def test_meter_on_a_fixed_offset_without_summer_time_in_london(results: dict[str, Any]
                                                               ) -> None:
    doc = results["london_fixed_summer"]
    (day,) = doc["days"]
    assert day["date"] == "2026-07-01"
    assert_periods(day)  # periods on BST, not an hour late
    assert doc["intervals"][0]["start"] == "2026-07-01T07:00:00+01:00"
    assert not [f for f in doc["findings"] if f["severity"] != "info"]


@pytest.mark.parametrize("season", sorted(SEASONS))
@pytest.mark.parametrize("clock", sorted(CLOCKS))
def test_a_dst_week_for_each_clock_kind(results: dict[str, Any], season: str,
                                        clock: str) -> None:
    first, _, change_day, change_night_h = SEASONS[season]
    doc = results[f"{season}_{clock}"]
    days = doc["days"]
    assert [d["date"] for d in days] == [(first + timedelta(days=k)).date().isoformat()
                                         for k in range(7)]
    for day in days:
        assert_periods(day)
        assert all(day["sufficient"].values())
        night_h = change_night_h if day["date"] == change_day else 8.0
        assert day["period_hours"] == {"day": 12.0, "evening": 4.0, "night": night_h}
    average = doc["survey_average"]
    assert (average["Lday"], average["Levening"], average["Lnight"]) == (60.0, 55.0, 50.0)
    # no reading lost or doubled whatever the clock
    assert not [f for f in doc["findings"] if f["severity"] != "info"], doc["findings"]


def test_the_three_clocks_give_the_same_figures(results: dict[str, Any]) -> None:
    for season in SEASONS:
        docs = [results[f"{season}_{clock}"] for clock in CLOCKS]
        assert docs[0]["days"] == docs[1]["days"] == docs[2]["days"]
        assert docs[0]["intervals"] == docs[1]["intervals"] == docs[2]["intervals"]


def test_a_time_zone_nobody_gave_is_a_warning_not_a_deletion(tmp_path: Path) -> None:
    # A local-clock night over the autumn change in London with no Time zone anywhere:
    # the meter wrote 01:00 twice (IANA tz database: 2026-10-25 02:00 BST -> 01:00 GMT).
    folder = tmp_path / "in"
    folder.mkdir()
    instants = hourly_instants(LONDON, datetime(2026, 10, 24, 7), datetime(2026, 10, 25, 7))
    site_workbook(folder / "nozone.xlsx", position="NZ", clock="local", time_zone=None,
                  instants=instants, site=LONDON)
    proc = run(folder, tmp_path / "out")
    assert "Traceback" not in proc.stdout + proc.stderr
    # run prints the warning with its stable code
    assert "[time-zone-assumed]" in proc.stdout
    doc = json.loads((tmp_path / "out" / "nozone.results.json").read_text())
    assert doc["survey"]["time_zone"] == "UTC"
    assert doc["survey"]["time_zone_assumed"] is True
    (assumed,) = [f for f in doc["findings"] if f["code"] == "time-zone-assumed"]
    assert assumed["severity"] == "warning" and assumed["sheet"] == "Survey"
    # the Summary says the zone was assumed, at its top
    summary = openpyxl.load_workbook(tmp_path / "out" / "nozone.results.xlsx")["Summary"]
    assert "ASSUMED" in str(summary.cell(2, 1).value)
    # the repeated hour's duplicate asks for the Time zone, never for a deleted row
    (duplicate,) = [f for f in doc["findings"] if f["code"] == "timestamp-duplicate"]
    assert "enter the site's Time zone" in duplicate["message"]
    assert "delete one of the two rows" not in duplicate["message"]
    # with the zone given, the same readings have no duplicate and no warning
    site_workbook(folder / "nozone.xlsx", position="NZ", clock="local", time_zone=LONDON,
                  instants=instants, site=LONDON)
    proc = run(folder, tmp_path / "out2", "--quiet")
    assert proc.returncode == 0, proc.stdout + proc.stderr
    doc = json.loads((tmp_path / "out2" / "nozone.results.json").read_text())
    assert doc["survey"]["time_zone_assumed"] is False
    assert {f["code"] for f in doc["findings"]}.isdisjoint(
        {"time-zone-assumed", "timestamp-duplicate"})


def test_settings_clock_fixed_offset_is_accepted(tmp_path: Path) -> None:
    # README [survey]: clock = "UTC+01:00"; a CSV-like case: the Survey sheet gives no
    # Clock, the settings do. Site Europe/Berlin in June (CEST, UTC+02:00): the meter's
    # 06:00 is 07:00 site time (IANA tz database), so the day starts on the first reading.
    folder = tmp_path / "in"
    folder.mkdir()
    berlin = "Europe/Berlin"
    instants = hourly_instants(berlin, datetime(2026, 6, 10, 7), datetime(2026, 6, 11, 7))
    path = site_workbook(folder / "fixed.xlsx", position="B1", clock="UTC+01:00",
                         time_zone=berlin, instants=instants, site=berlin)
    wb = openpyxl.load_workbook(path)
    ws = wb["Survey"]
    for row in ws.iter_rows():
        if row[0].value == "Clock":
            ws.delete_rows(row[0].row)
            break
    wb.save(path)
    settings = tmp_path / "settings.toml"
    settings.write_text('[survey]\nclock = "UTC+01:00"\n', encoding="utf-8")
    proc = run(folder, tmp_path / "out", "--quiet", "--settings", str(settings))
    assert proc.returncode == 0, proc.stdout + proc.stderr
    doc = json.loads((tmp_path / "out" / "fixed.results.json").read_text())
    assert doc["survey"]["clock"] == "UTC+01:00"
    (day,) = doc["days"]
    assert_periods(day)
    assert doc["intervals"][0]["start"] == "2026-06-10T07:00:00+02:00"
