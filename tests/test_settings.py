"""Settings file loading: defaults, a full example, round trips and located errors."""

from __future__ import annotations

import dataclasses
import hashlib
import json
from pathlib import Path

import pytest

from surveytools.errors import SettingsError
from surveytools.settings import (
    Assessment,
    Criterion,
    Settings,
    load_settings,
    settings_from_dict,
    settings_from_mapping,
    settings_sha256,
    settings_to_mapping,
)

# An invented survey (position "NW-2" at no real site).
FULL_EXAMPLE = """\
reporting_interval = "15min"
percentiles = [10, 50, 90, 95]
coverage_threshold = 0.8

[periods]
laeq16_start = "07:00"
laeq16_end = "23:00"

[periods.lden]
day_start = "06:00"
evening_start = "18:00"
night_start = "22:00"
evening_penalty_db = 5
night_penalty_db = 10

[periods.ldn]
night_start = "22:00"

[periods.cnel]
evening_start = "19:00"

[background]
reference_interval_day = "1h"
reference_interval_night = "15min"
method = "median"

[exclusions]
wind_max_m_s = 5
rain_max_mm = 0
rain_settle = "30min"
level_min_db = 15
level_max_db = 135
exclude_overloads = false

[calibration]
drift_limit_db = 0.3
on_excess_drift = "exclude"

[survey]
position = "NW-2"
site = "Invented Works"
time_zone = "Europe/Berlin"
clock = "local"
timestamps = "end"

[residual]
no_correction_above_db = 10
upper_bound_at_or_below_db = 3

[events]
night_lafmax_threshold_db = 60
nth_highest = 10

[columns]
"Leq" = "LAeq"
"L90 (dB)" = "LAF90"

[output]
readings_row_limit = 20000

[[assessments]]
name = "Plant at night"
position = "NW-2"
source_on = [["2026-07-03 22:00", "2026-07-03 23:00"]]
residual = [["2026-07-03 23:30", "2026-07-04 00:30"]]
corrections_db = { tonal = 2.0, impulsive = 0 }

[[assessments]]
name = "Pump by column"
position = "NW-2"
use_operating_column = true

[[criteria]]
indicator = "Lnight"
limit_db = 45
name = "Night limit"
position = "NW-2"

[[criteria]]
indicator = "LAFmax"
limit_db = 60
period = "night"
"""


def write(tmp_path: Path, text: str, name: str = "settings.toml") -> Path:
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_none_gives_documented_defaults():
    s = load_settings(None)
    assert s == Settings()
    # Directive 2002/49/EC Annex I: default periods 07-19 / 19-23 / 23-07.
    assert (s.periods.lden.day_start, s.periods.lden.evening_start,
            s.periods.lden.night_start) == ("07:00", "19:00", "23:00")
    # 15 min reporting interval (common practice) = 900 s (ISO 80000-3: 1 min = 60 s).
    assert s.reporting_interval_s == 900.0


def test_empty_file_gives_defaults(tmp_path):
    assert load_settings(write(tmp_path, "")) == Settings()


def test_full_example_loads(tmp_path):
    s = load_settings(write(tmp_path, FULL_EXAMPLE))
    # hand-evaluated durations (ISO 80000-3): 15 min = 900 s, 1 h = 3600 s, 30 min = 1800 s.
    assert s.reporting_interval_s == 900.0
    assert s.background.reference_interval_day_s == 3600.0
    assert s.background.reference_interval_night_s == 900.0
    assert s.exclusions.rain_settle_s == 1800.0
    assert s.percentiles == (10.0, 50.0, 90.0, 95.0)
    assert s.coverage_threshold == 0.8
    assert s.periods.lden.day_start == "06:00" and s.periods.lden.night_start == "22:00"
    # Ldn without evening_start: the evening collapses onto the night start (no evening).
    assert s.periods.ldn.evening_start == s.periods.ldn.night_start == "22:00"
    assert s.periods.cnel.night_start == "22:00"  # kept default
    assert s.background.method == "median"
    assert s.exclusions.exclude_overloads is False
    assert s.exclusions.level_min_db == 15.0
    assert s.calibration.on_excess_drift == "exclude"
    assert s.survey.time_zone == "Europe/Berlin" and s.survey.timestamps == "end"
    assert s.column_map == {"Leq": "LAeq", "L90 (dB)": "LAF90"}
    assert s.output.readings_row_limit == 20000
    assert s.assessments[0] == Assessment(
        name="Plant at night", position="NW-2",
        source_on=(("2026-07-03 22:00", "2026-07-03 23:00"),),
        residual=(("2026-07-03 23:30", "2026-07-04 00:30"),),
        use_operating_column=False,
        corrections_db={"tonal": 2.0, "impulsive": 0.0, "intermittency": 0.0, "other": 0.0})
    assert s.assessments[1].use_operating_column is True
    assert s.criteria == (
        Criterion("Lnight", 45.0, "any", "Night limit", "NW-2"),
        Criterion("LAFmax", 60.0, "night", None, None),
    )


def test_full_example_round_trips(tmp_path):
    s = load_settings(write(tmp_path, FULL_EXAMPLE))
    assert settings_from_mapping(settings_to_mapping(s), "x") == s
    # ...also through JSON text (what a results file holds) and from to_dict().
    as_json = json.loads(json.dumps(s.to_dict()))
    assert settings_from_dict(as_json) == s
    assert settings_from_mapping(as_json, "results.json: settings") == s
    assert settings_from_mapping(json.loads(json.dumps(settings_to_mapping(s)))) == s


def test_defaults_round_trip():
    assert settings_from_mapping(settings_to_mapping(Settings())) == Settings()
    assert settings_from_dict(Settings().to_dict()) == Settings()


def test_to_dict_is_plain_json():
    d = Settings().to_dict()
    assert json.loads(json.dumps(d, allow_nan=False)) == d  # tuples became lists


@pytest.mark.parametrize("target", ["LAeq", "LAF90", "Wind speed", "LZeq_1000Hz", "position"])
def test_column_map_targets_accepted(target):
    # Canonical names of the input layout (design.md section 3) and one-third-octave bands
    # (IEC 61260-1 nominal 1000 Hz).
    assert settings_from_mapping({"columns": {"My header": target}}).column_map == {
        "My header": target}


def test_native_toml_times_and_seconds_spelling(tmp_path):
    text = (
        "reporting_interval_s = 300\n"
        "[periods.lden]\nday_start = 07:00:00\n"
        "[[assessments]]\nname = \"A\"\nposition = \"P\"\n"
        "source_on = [[2026-07-03T22:00:00, 2026-07-03T22:30:00]]\n"
    )
    s = load_settings(write(tmp_path, text))
    assert s.reporting_interval_s == 300.0
    assert s.periods.lden.day_start == "07:00"
    assert s.assessments[0].source_on == (("2026-07-03 22:00", "2026-07-03 22:30"),)


@pytest.mark.parametrize(("text", "seconds"), [
    # ISO 80000-3: 1 h = 3600 s, 1 min = 60 s; hand-evaluated.
    ('"15min"', 900.0), ('"1h"', 3600.0), ('"30s"', 30.0), ('"900s"', 900.0),
    ("900", 900.0), ('"1.5h"', 5400.0), ('"500ms"', 0.5), ('" 10 min "', 600.0),
])
def test_duration_spellings(tmp_path, text, seconds):
    s = load_settings(write(tmp_path, f"reporting_interval = {text}\n"))
    assert s.reporting_interval_s == seconds


@pytest.mark.parametrize("zone", ["Europe/Berlin", "America/New_York", "UTC", "UTC+02:00",
                                  "UTC-05:30"])
def test_time_zones_accepted(zone):
    # IANA time zone database names; fixed offsets in the contract's UTC±hh:mm form.
    assert settings_from_mapping({"survey": {"time_zone": zone}}).survey.time_zone == zone


BAD = [
    # (settings text, regex the message must match)
    ('[periods.lden]\nday_start = "7 am"\n',
     r"settings\.toml: periods\.lden\.day_start: expected a time 'HH:MM', found '7 am'"),
    ('[periods.lden]\nday_start = "24:00"\n', r"periods\.lden\.day_start: expected a time"),
    ('[periods.lden]\nday_strat = "07:00"\n',
     r"periods\.lden\.day_strat: unknown key; did you mean 'day_start'\?"),
    ('colour = "red"\n', r"settings\.toml: colour: unknown key"),
    ('[periods.lden]\nevening_start = "23:30"\nnight_start = "23:00"\n',
     r"periods\.lden: expected day_start < evening_start <= night_start"),
    ('[periods.cnel]\nday_start = "19:00"\n', r"periods\.cnel: expected day_start <"),
    ('[periods]\nlaeq16_start = "07:00"\nlaeq16_end = "07:00"\n', r"periods\.laeq16_end"),
    ("percentiles = [10, 100]\n", r"percentiles\[2\]: expected a number < 100, found 100"),
    ("percentiles = [0]\n", r"percentiles\[1\]: expected a number > 0"),
    ("percentiles = [10, 10]\n", r"percentiles: expected no repeated values"),
    ('percentiles = "10"\n', r"percentiles: expected a list, found '10'"),
    ("coverage_threshold = 1.5\n", r"coverage_threshold: expected a number <= 1"),
    ('reporting_interval = "15 minutes"\n',
     r"reporting_interval: expected a duration such as '15min'"),
    ("reporting_interval = 0\n", r"reporting_interval: expected a duration above 0"),
    ('reporting_interval = "2d"\n', r"reporting_interval: expected a duration"),
    ('reporting_interval = "15min"\nreporting_interval_s = 900\n',
     r"reporting_interval: give either 'reporting_interval' or 'reporting_interval_s'"),
    ('[background]\nreference_interval_night = "25h"\n',
     r"background\.reference_interval_night: expected a duration above 0 and at most 24 h"),
    ('[background]\nmethod = "average"\n',
     r"background\.method: expected one of 'mode', 'median', 'mean', found 'average'"),
    ('[survey]\ntime_zone = "Mars/Olympus"\n',
     r"survey\.time_zone: expected an IANA time zone name .*found 'Mars/Olympus'"),
    ('[survey]\ntime_zone = "UTC+2"\n', r"survey\.time_zone: expected an IANA"),
    ('[survey]\ntime_zone = "../../etc/passwd"\n', r"survey\.time_zone: expected an IANA"),
    ('[survey]\nclock = "gps"\n', r"survey\.clock: expected one of 'local', 'UTC'"),
    ("[exclusions]\nexclude_overloads = 1\n",
     r"exclusions\.exclude_overloads: expected true or false, found 1"),
    ("[exclusions]\nlevel_min_db = 90\nlevel_max_db = 80\n",
     r"exclusions\.level_max_db: expected a level above level_min_db"),
    ('[calibration]\non_excess_drift = "ignore"\n', r"calibration\.on_excess_drift"),
    ("[residual]\nupper_bound_at_or_below_db = 12\n",
     r"residual\.upper_bound_at_or_below_db: expected a value at or below"),
    ("[events]\nnth_highest = 2.5\n", r"events\.nth_highest: expected a whole number"),
    ("[output]\nreadings_row_limit = -1\n", r"output\.readings_row_limit: expected a number >= 0"),
    ("[columns]\nLeq = 5\n", r"columns\.Leq: expected text, found 5"),
    ('[columns]\nLeq = "Bogus"\n',
     r"columns\.Leq: expected a canonical column name .*found 'Bogus'$"),
    ('[columns]\n"Level" = "LAeq (dB)"\n',
     r"columns\.Level: .*found 'LAeq \(dB\)'; did you mean 'LAeq'\?"),
    ('[[criteria]]\nindicator = "Lnite"\nlimit_db = 45\n',
     r"criteria\[1\]\.indicator: expected one of 'Lday'"),
    ('[[criteria]]\nindicator = "Lnight"\n', r"criteria\[1\]\.limit_db: missing"),
    ('[[criteria]]\nindicator = "LAeq"\nlimit_db = 45\nperiod = "weekend"\n',
     r"criteria\[1\]\.period: expected one of"),
    ('[[assessments]]\nname = "A"\nsource_on = [["2026-07-03 22:00", "2026-07-03 23:00"]]\n',
     r"assessments\[1\]\.position: missing"),
    ('[[assessments]]\nname = "A"\nposition = "P"\n'
     'source_on = [["2026-07-03 23:00", "2026-07-03 22:00"]]\n',
     r"assessments\[1\]\.source_on\[1\]: expected from < to"),
    ('[[assessments]]\nname = "A"\nposition = "P"\n'
     'source_on = [["2026-07-03 22:00"]]\n',
     r"assessments\[1\]\.source_on\[1\]: expected a window"),
    ('[[assessments]]\nname = "A"\nposition = "P"\n'
     'source_on = [["3 July 22:00", "2026-07-03 23:00"]]\n',
     r"assessments\[1\]\.source_on\[1\]\[1\]: expected a local clock time 'YYYY-MM-DD HH:MM'"),
    ('[[assessments]]\nname = "A"\nposition = "P"\n'
     'source_on = [["2026-02-30 22:00", "2026-03-01 23:00"]]\n',
     r"assessments\[1\]\.source_on\[1\]\[1\]: expected a local clock time"),
    ('[[assessments]]\nname = "A"\nposition = "P"\n'
     'source_on = [["2026-07-03T22:00+02:00", "2026-07-03 23:00"]]\n',
     r"assessments\[1\]\.source_on\[1\]\[1\]: expected a local clock time .*no UTC offset"),
    ('[[assessments]]\nname = "A"\nposition = "P"\n',
     r"assessments\[1\]\.source_on: missing; give at least one"),
    ('[[assessments]]\nname = "A"\nposition = "P"\nuse_operating_column = true\n'
     'source_on = [["2026-07-03 22:00", "2026-07-03 23:00"]]\n',
     r"assessments\[1\]: give source_on/residual windows or use_operating_column"),
    ('[[assessments]]\nname = "A"\nposition = "P"\n'
     'source_on = [["2026-07-03 22:00", "2026-07-03 23:00"]]\n'
     'residual = [["2026-07-03 22:30", "2026-07-03 23:30"]]\n',
     r"assessments\[1\]\.residual: expected residual windows outside the source_on windows"),
    ('[[assessments]]\nname = "A"\nposition = "P"\nuse_operating_column = true\n'
     '[[assessments]]\nname = "A"\nposition = "Q"\nuse_operating_column = true\n',
     r"assessments\[2\]\.name: expected a name not used before"),
    ('[[assessments]]\nname = "A"\nposition = "P"\nuse_operating_column = true\n'
     "corrections_db = { tonal = 2, tonality = 3 }\n",
     r"assessments\[1\]\.corrections_db\.tonality: unknown key"),
]


@pytest.mark.parametrize(("text", "pattern"), BAD, ids=[f"bad{i}" for i in range(len(BAD))])
def test_bad_settings_name_the_key(tmp_path, text, pattern):
    with pytest.raises(SettingsError, match=pattern):
        load_settings(write(tmp_path, text))


def test_every_schema_error_is_listed(tmp_path):
    text = '[periods.lden]\nday_start = "7 am"\n[survey]\nclock = "gps"\npercentiles = 5\n'
    with pytest.raises(SettingsError, match=r"3 problems") as info:
        load_settings(write(tmp_path, text))
    lines = str(info.value).splitlines()[1:]
    assert len(lines) == 3
    assert all(line.startswith("settings.toml: ") for line in lines)
    assert {line.split(": ")[1] for line in lines} == {
        "periods.lden.day_start", "survey.clock", "survey.percentiles"}


def test_toml_syntax_error_names_line_and_column(tmp_path):
    with pytest.raises(SettingsError,
                       match=r"bad\.toml: line 2, column \d+: not valid TOML"):
        load_settings(write(tmp_path, 'percentiles = [10]\nmethod "mode"\n', "bad.toml"))


def test_missing_and_non_utf8_files(tmp_path):
    with pytest.raises(SettingsError, match=r"nope\.toml: cannot read the settings file"):
        load_settings(tmp_path / "nope.toml")
    p = tmp_path / "latin.toml"
    p.write_bytes('[survey]\nsite = "K\xf6ln"\n'.encode("latin-1"))
    with pytest.raises(SettingsError, match=r"latin\.toml: expected UTF-8 text"):
        load_settings(p)


def test_non_mapping_rejected():
    with pytest.raises(SettingsError, match=r"src: expected a table of settings"):
        settings_from_mapping([1, 2], "src")  # type: ignore[arg-type]


def test_settings_sha256_is_hash_of_canonical_json():
    s = Settings()
    # Independent check with hashlib (FIPS 180-4 SHA-256) over compact sorted-key JSON.
    text = json.dumps(s.to_dict(), sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    assert settings_sha256(s) == hashlib.sha256(text.encode()).hexdigest()
    changed = dataclasses.replace(s, coverage_threshold=0.5)
    assert settings_sha256(changed) != settings_sha256(s)
    assert settings_sha256(settings_from_dict(s.to_dict())) == settings_sha256(s)



def test_criterion_over_a_longer_interval(tmp_path: Path) -> None:
    # ISO 80000-3: 1 h = 3600 s. The example of the issue: "LAeq,1h day <= 55".
    path = tmp_path / "c.toml"
    path.write_text('[[criteria]]\nindicator = "LAeq"\nlimit_db = 55\nperiod = "day"\n'
                    'interval = "1h"\n', encoding="utf-8")
    settings = load_settings(path)
    (criterion,) = settings.criteria
    assert criterion.interval_s == 3600.0
    assert settings_from_mapping(settings_to_mapping(settings)) == settings
    path.write_text('[[criteria]]\nindicator = "LAeq"\nlimit_db = 55\ninterval = "1h"\n'
                    'interval_s = 3600\n', encoding="utf-8")
    with pytest.raises(SettingsError, match=r"criteria\[1\]\.interval: give the interval once"):
        load_settings(path)
