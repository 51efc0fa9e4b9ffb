"""Parts of source assessments merge exactly (issue 17): hand-evaluated values, and the
merged parts of three stretches of a survey give the entries of the whole survey."""

from __future__ import annotations

import math

import numpy as np
import pytest
from conftest import build_survey, local_ms

from surveytools.assessment import assess
from surveytools.assessment.context import build_context
from surveytools.assessment.source_parts import (
    PartsNotMergeable,
    position_source_parts,
)
from surveytools.assessment.sources import assessments_from_parts
from surveytools.settings import Assessment, Settings

# 15-min readings 10:00-13:00 (Europe/Berlin, CEST): 40, 41 dB; source on 10:30-11:30
# at 50, 52, 54, 56 dB; residual 11:30-12:30 at 44, 45, 46, 47 dB; then 40, 41 dB.
LEVELS = [40.0, 41.0, 50.0, 52.0, 54.0, 56.0, 44.0, 45.0, 46.0, 47.0, 40.0, 41.0]
OPERATING = [None, None, True, True, True, True, False, False, False, False, None, None]
WINDOWS = Assessment(name="Fan", position="NW-2",
                     source_on=(("2026-07-03 10:30", "2026-07-03 11:30"),),
                     residual=(("2026-07-03 11:30", "2026-07-03 12:30"),))
COLUMN = Assessment(name="Fan", position="NW-2", use_operating_column=True)


def _survey(rows: slice, levels=LEVELS):
    t = local_ms("2026-07-03 10:00")
    starts = [t + 900_000 * k for k in range(len(levels))][rows]
    return build_survey(starts, 900, {"LAeq": levels[rows]}, operating=OPERATING[rows],
                        metadata={"position": "NW-2"})


def _parts(settings, levels=LEVELS):
    # three stretches cut at 11:00 and 12:00 (reference-interval bounds by day, 1 h):
    # the source-on and the residual time both span a cut
    stretches = [slice(0, 4), slice(4, 8), slice(8, 12)]
    merged = None
    for rows in stretches:
        ctx = build_context(_survey(rows, levels), settings)
        parts = position_source_parts(ctx, None)
        merged = parts if merged is None else merged + parts
    return merged


def _close(a, b):
    if isinstance(a, dict):
        assert a.keys() == b.keys()
        for k in a:
            _close(a[k], b[k])
    elif isinstance(a, list):
        assert len(a) == len(b)
        for x, y in zip(a, b, strict=True):
            _close(x, y)
    elif isinstance(a, float) and isinstance(b, float):
        # energy sums relative to another level per part: the last bits only
        assert math.isclose(a, b, abs_tol=1e-9), (a, b)
    else:
        assert a == b


@pytest.mark.parametrize("assessment", [WINDOWS, COLUMN], ids=["windows", "operating-column"])
def test_merged_parts_give_the_whole_survey_entry(assessment: Assessment) -> None:
    settings = Settings(assessments=(assessment,))
    whole = assess(_survey(slice(None)), settings)["assessments"]
    merged = _parts(settings)
    first = local_ms("2026-07-03 10:00")
    got = assessments_from_parts(merged, settings, "NW-2", build_context(
        _survey(slice(None)), settings).tz, first, first + 12 * 900_000)
    _close(got, whole)
    (a,) = got
    # hand-evaluated (ISO 1996-1 energy average of equal durations):
    # source on 10 lg((10^5 + 10^5.2 + 10^5.4 + 10^5.6) / 4) = 10 lg(226,946.3) = 53.559 dB
    # residual 10 lg((10^4.4 + 10^4.5 + 10^4.6 + 10^4.7) / 4) = 10 lg(36,667.8) = 45.643 dB
    assert a["LAeq_total"] == pytest.approx(53.559, abs=0.0005)
    assert a["LAeq_residual"] == pytest.approx(45.643, abs=0.0005)
    assert a["valid_s_total"] == 3600.0 and a["valid_s_residual"] == 3600.0
    # the source-on time is one span across both cuts
    assert a["source_on"] == [["2026-07-03T10:30:00+02:00", "2026-07-03T11:30:00+02:00"]]
    assert a["residual"] == [["2026-07-03T11:30:00+02:00", "2026-07-03T12:30:00+02:00"]]


def test_residual_la90_from_merged_step_tables() -> None:
    # LA90 of the residual time (44, 45, 46, 47 dB, 15 min each), in two parts: above
    # 44 dB for 45 of 60 min, at most 90 % of the time, so LA90 = 44.0 (hand-evaluated,
    # ISO 1996-1 LN, "strictly exceeded" convention of design.md §5).
    residual = _parts(Settings(assessments=(WINDOWS,))).items[0].residual[0]
    assert residual.pieces == 4 and residual.direct_db is None
    assert residual.la90() == 44.0


def test_residual_la90_off_the_grid_is_not_merged() -> None:
    # levels logged to 0.01 dB: one part gives its own LA90, merged parts refuse
    levels = [v + 0.01 for v in LEVELS]
    settings = Settings(assessments=(WINDOWS,))
    one = position_source_parts(build_context(_survey(slice(None), levels), settings), None)
    assert one.items[0].residual[0].la90() == 44.01  # as above, + 0.01 dB
    with pytest.raises(PartsNotMergeable, match=r"off the 0\.1 dB grid"):
        _parts(settings, levels).items[0].residual[0].la90()


def test_energy_sums_on_different_references_merge() -> None:
    # hand-evaluated: 1 s at 60 dB and 1 s at 70 dB: 10 lg((10^6 + 10^7) / 2) = 67.404 dB,
    # each part's energy relative to its own loudest level
    settings = Settings(assessments=(Assessment(
        name="Fan", position="NW-2", source_on=(("2026-07-03 10:00", "2026-07-03 10:01"),)),))
    t = local_ms("2026-07-03 10:00")
    parts = [position_source_parts(build_context(build_survey(
        [t + k * 1000], 1, {"LAeq": [level]}, metadata={"position": "NW-2"}), settings), None)
        for k, level in enumerate((60.0, 70.0))]
    merged = parts[0] + parts[1]
    on = merged.items[0].on
    assert on.reference_db == 70.0
    laeq, valid_s = on.level(None)
    assert laeq == pytest.approx(10 * np.log10((1e6 + 1e7) / 2), abs=1e-12)
    assert laeq == pytest.approx(67.404, abs=0.0005)
    assert valid_s == 2.0
