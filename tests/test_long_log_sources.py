"""Source assessments of a long log assessed in parts give the whole-log entries (issue 17).

The reference is the whole-log path (``assess`` on the whole Survey, checked against
published values in tests/assessment/test_sources.py); here the property is that the
parts of each batch (:mod:`surveytools.assessment.source_parts`) merge into the same
``assessments`` entries, plus hand-evaluated values named beside their checks. The log
is invented: four days of 1 s readings at a position in Europe/London in June 2026
(British Summer Time, UTC+1), batches forced to 50,000 rows (about 14 h) so that source
windows, residual windows and a run of ``Operating = yes`` readings span batch cuts.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import numpy as np
import pandas as pd
import pytest

import surveytools.long_log as long_log
from surveytools.pipeline import build_document, read_input
from surveytools.settings import load_settings
from tests.closeness import assert_close

START = datetime(2026, 6, 1, 23, 0, 0, tzinfo=UTC)  # 00:00 BST on 2 June 2026
N = 4 * 86400  # four days of 1 s readings, 2 June 00:00 to 6 June 00:00 local
BATCH_ROWS = 50_000


def _row(day: int, hour: int) -> int:
    """Row of the reading starting at ``hour``:00 local time on ``day`` June 2026."""
    return (day - 2) * 86400 + hour * 3600


FAN_ON = (_row(2, 10), _row(2, 18))
FAN_OFF = (_row(2, 19), _row(2, 21))
FAN_EXCLUDED = [_row(2, 11), _row(2, 13) + 17, _row(2, 15) + 59]  # 150 dB: implausible
NIGHT_OFF = (_row(3, 7), _row(3, 23))
PUMP_ON = (_row(3, 20), _row(4, 10))

SETTINGS = """[survey]
position = "Mast F"
time_zone = "Europe/London"
clock = "UTC"

[[assessments]]
name = "Fan"
position = "Mast F"
source_on = [["2026-06-02 10:00", "2026-06-02 18:00"]]
residual = [["2026-06-02 19:00", "2026-06-02 21:00"]]
corrections_db = { impulsive = 3 }

[[assessments]]
name = "Night plant"
position = "Mast F"
source_on = [["2026-06-01 23:00", "2026-06-02 07:00"], ["2026-06-02 23:00", "2026-06-03 07:00"],
             ["2026-06-03 23:00", "2026-06-04 07:00"], ["2026-06-04 23:00", "2026-06-05 07:00"],
             ["2026-06-05 23:00", "2026-06-06 07:00"]]
residual = [["2026-06-03 07:00", "2026-06-03 23:00"]]

[[assessments]]
name = "Pump"
position = "Mast F"
use_operating_column = true

[[criteria]]
name = "Fan rating"
indicator = "rating_level"
limit_db = 60.0
"""


def _log(seed: int = 11) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    t = np.arange(N)
    hour = (t // 3600) % 24  # local hour
    base = np.where((hour >= 7) & (hour < 23), 55.0, 42.0)
    laeq = np.round(base + rng.normal(0, 4, N), 1)
    laeq[slice(*FAN_ON)] = 63.0
    laeq[slice(*FAN_OFF)] = 56.0
    laeq[FAN_EXCLUDED] = 150.0
    # 40.0, 41.0 ... 49.0 dB in turn, each a tenth of the residual time
    laeq[slice(*NIGHT_OFF)] = 40.0 + (t[slice(*NIGHT_OFF)] % 10)
    operating = pd.array([None] * N, dtype="boolean")
    operating[_row(3, 0):] = False
    operating[slice(*PUMP_ON)] = True
    laeq[slice(*PUMP_ON)] += 8.0
    start = [START.replace(tzinfo=None) + timedelta(seconds=int(s)) for s in t]  # UTC
    return pd.DataFrame({"Start": start, "LAeq": laeq, "Operating": operating})


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    folder = tmp_path_factory.mktemp("long_sources")
    frame = _log()
    csv = folder / "mast_f.csv"
    text = frame.assign(Start=frame["Start"].dt.strftime("%Y-%m-%d %H:%M:%S"),
                        Operating=frame["Operating"].map({True: "yes", False: "no"}))
    text.to_csv(csv, index=False)
    parquet = folder / "mast_f.parquet"
    frame.to_parquet(parquet, index=False)
    settings = folder / "settings.toml"
    settings.write_text(SETTINGS, encoding="utf-8")
    return csv, parquet, load_settings(settings)



def _streamed(path, settings, monkeypatch):
    """Sections of the log assessed in batches, and the cuts between them [UTC ms]."""
    monkeypatch.setattr(long_log, "STREAM_CSV_BYTES", 1000)
    monkeypatch.setattr(long_log, "STREAM_PARQUET_ROWS", 1000)
    monkeypatch.setattr(long_log, "BATCH_ROWS", BATCH_ROWS)
    cuts: list[int] = []
    choose = long_log._choose_cut

    def recorded(grid, start, end):
        cut = choose(grid, start, end)
        if cut is not None:
            cuts.append(cut)
        return cut

    monkeypatch.setattr(long_log, "_choose_cut", recorded)
    read = read_input(path, settings, long_logs=True)
    assert isinstance(read.raw, long_log.LongLog)
    sections, _, _ = long_log.long_log_sections(read.raw, settings)  # no NotStreamable
    return sections, np.array(cuts, dtype=np.int64)


def _ms(row: int) -> int:
    return round((START + timedelta(seconds=row)).timestamp() * 1000)


def _spans_a_cut(span: tuple[int, int], cuts: np.ndarray) -> bool:
    return bool(np.any((cuts > _ms(span[0])) & (cuts < _ms(span[1]))))


@pytest.mark.parametrize("which", [0, 1], ids=["csv", "parquet"])
def test_assessments_in_parts_give_the_whole_log_entries(files, monkeypatch, which):
    path, settings = files[which], files[2]
    whole, _ = build_document(path, settings, read=read_input(path, settings))
    parts, cuts = _streamed(path, settings, monkeypatch)
    assert cuts.size >= 6
    # the windows, the residual time and the run of Operating = yes readings span cuts
    for span in (FAN_ON, NIGHT_OFF, PUMP_ON, (_row(3, 23), _row(4, 7))):
        assert _spans_a_cut(span, cuts), span
    # unrounded levels differ only in the last bits (energy sums relative to another
    # level in each batch); every reported (rounded) figure and text is the same
    assert_close(parts["assessments"], whole["assessments"], 1e-9)
    assert_close(parts["criteria"], whole["criteria"], 1e-9)
    fan, night, pump = parts["assessments"]

    # Fan: source on 10:00-18:00 at 63.0 dB (3 readings at 150 dB excluded as
    # implausible), residual 19:00-21:00 at 56.0 dB. Hand-evaluated: valid time
    # 8 h - 3 s = 28,797 s; level difference 7 dB, between 3 and 10 dB, so corrected
    # (ISO 1996-2 residual correction): 10 lg(10^6.3 - 10^5.6) = 10 lg(1,995,262.3 -
    # 398,107.2) = 10 lg(1,597,155.1) = 62.033 dB; rating level (BS 4142) + 3 dB
    # impulsive = 65.033 dB.
    assert fan["valid_s_total"] == 28_797.0 and fan["valid_s_residual"] == 7_200.0
    assert fan["LAeq_total"] == 63.0 and fan["LAeq_residual"] == 56.0
    assert fan["specific_basis"] == "corrected"
    assert fan["specific_level"] == pytest.approx(62.033, abs=0.0005)
    assert fan["rating_level"] == pytest.approx(65.033, abs=0.0005)
    assert fan["background_period"] == "day"
    assert fan["background_basis"] == "source-free period"

    # Night plant: every night of the log is source-on time, so there is no source-free
    # night reference interval (design.md §9) and the LA90 of the residual time is used.
    # The residual readings valid for background (07:00-20:00; from 20:00 the pump runs)
    # go 40.0, 41.0 ... 49.0 dB in turn, each level a tenth of the time: above 40.0 dB
    # for 90 % of the time, which is at most 90 %, so LA90 = 40.0 dB (ISO 1996-1 LN,
    # "strictly exceeded" convention of design.md §5; hand-evaluated).
    assert night["background_period"] == "night"
    assert night["background_basis"] == "residual time"
    assert night["background_LA90"] == 40.0
    assert night["valid_s_residual"] == 16 * 3600.0

    # Pump: Operating = yes from 20:00 on 3 June to 10:00 on 4 June, 8 h of it at night
    # and 6 h by day: the night is assessed, source-on and residual night time only
    # (like compared with like); the night run is one span across the batch cut.
    assert pump["selection"] == "operating column"
    assert pump["background_period"] == "night"
    assert pump["valid_s_total"] == 8 * 3600.0
    assert pump["source_on"] == [["2026-06-03T23:00:00+01:00", "2026-06-04T07:00:00+01:00"]]
    assert "night-time only" in pump["note"]


def test_a_log_with_assessments_is_no_longer_read_whole(files, monkeypatch):
    # the pipeline uses the parts (no NotStreamable, no fallback to the whole read)
    path, settings = files[1], files[2]
    parts, _ = _streamed(path, settings, monkeypatch)
    outcomes: list[str] = []
    sections = long_log.long_log_sections

    def watched(*args, **kwargs):
        try:
            out = sections(*args, **kwargs)
        except long_log.NotStreamable:
            outcomes.append("read whole")
            raise
        outcomes.append("in parts")
        return out

    monkeypatch.setattr(long_log, "long_log_sections", watched)
    document, _ = build_document(path, settings)
    assert outcomes == ["in parts"]
    assert document["assessments"] == parts["assessments"]
    # judged on the merged entries: the Fan's 65.0 dB (hand-evaluated above) is over 60 dB;
    # the night sources (night levels about 42 and 50 dB) are not
    assert [c["failed"] for c in document["criteria"]] == [1]


def test_residual_levels_off_the_grid_fall_back_to_the_whole_read(tmp_path, files,
                                                                  monkeypatch):
    # The residual-time LA90 of levels logged to 0.01 dB cannot come from the 0.1 dB step
    # tables once the residual time spans a cut: that case is read whole.
    settings = files[2]
    frame = _log()
    frame.loc[slice(*NIGHT_OFF), "LAeq"] += 0.01
    path = tmp_path / "mast_g.parquet"
    frame.to_parquet(path, index=False)
    with pytest.raises(long_log.NotStreamable, match=r"off the 0\.1 dB grid"):
        _streamed(path, settings, monkeypatch)
    whole, _ = build_document(path, settings, read=read_input(path, settings))
    fallback, _ = build_document(path, settings)  # streamed first, then read whole
    assert fallback["assessments"] == whole["assessments"]
    assert whole["assessments"][1]["background_LA90"] == 40.01  # as above, + 0.01 dB
