"""Background LA90: reference intervals, logged LAF90 by method vs LAeq samples."""

from __future__ import annotations

import pytest
from conftest import build_survey, local_ms

from surveytools.assessment import assess
from surveytools.settings import Background, Settings


def night_log(laf90: list[float] | None, method: str = "mode") -> dict:
    # Eight 15-min night readings from 23:00 (BS 4142 night reference interval 15 min).
    t = local_ms("2026-06-10 23:00")
    levels = {"LAeq": [40.0 + k for k in range(8)]}
    if laf90 is not None:
        levels["LAF90"] = laf90
    survey = build_survey([t + 900_000 * k for k in range(8)], 900, levels)
    return assess(survey, Settings(background=Background(method=method)))["background"]


LAF90 = [33.2, 33.4, 34.6, 32.8, 33.1, 36.0, 34.4, 35.5]


@pytest.mark.parametrize(
    ("method", "expected"),
    [
        # hand-evaluated, whole dB (half up): 33, 33, 35, 33, 33, 36, 34, 36 ->
        # mode 33 (four times; BS 4142 Figure 4 modal value, secondary source).
        ("mode", 33.0),
        # sorted 32.8 33.1 33.2 33.4 | 34.4 34.6 35.5 36.0 -> median (33.4+34.4)/2 = 33.9
        ("median", 33.9),
        # mean = 273.0 / 8 = 34.125
        ("mean", 34.125),
    ],
)
def test_logged_laf90_by_method(method: str, expected: float) -> None:
    bg = night_log(LAF90, method)
    assert bg["basis"] == "logged LAF90" and bg["method"] == method
    assert [r["LA90"] for r in bg["reference_intervals"]] == LAF90  # 15-min log = Tr
    assert bg["night"]["LA90"] == pytest.approx(expected, abs=0.0051)  # reported to 0.01 dB
    assert bg["night"]["n_intervals"] == 8
    assert bg["night"]["distribution"] == [[33, 4], [34, 1], [35, 1], [36, 2]]
    assert bg["day"]["LA90"] is None and bg["day"]["n_intervals"] == 0


def test_background_from_samples_when_no_laf90() -> None:
    # One-minute LAeq samples; per 15-min night interval LA90 from the samples
    # (design §5 LN rule; 15 samples 30..44 dB -> 90 % exceeded: inverted_cdf at 0.1 ->
    # 2nd lowest = 31 dB, since cdf(30) = 1/15 < 0.1 <= 2/15).
    t = local_ms("2026-06-10 23:00")
    survey = build_survey([t + 60_000 * k for k in range(15)], 60,
                          {"LAeq": [30.0 + k for k in range(15)]})
    bg = assess(survey, Settings())["background"]
    assert bg["basis"] == "LAeq samples"
    assert bg["reference_intervals"][0]["LA90"] == 31.0
    assert bg["night"]["LA90"] == 31.0


def test_background_scope_exclusion_and_day_hourly_intervals() -> None:
    # Day: 1-h reference intervals (BS 4142 7.2, from memory). Four 15-min readings from
    # 10:00 with LAF90; the 41.0 one is excluded for background only -> 3/4 valid time
    # (0.75 = threshold, sufficient); hourly LA90 = mode of whole-dB 38, 38, 39 -> 38.
    t = local_ms("2026-06-10 10:00")
    survey = build_survey([t + 900_000 * k for k in range(4)], 900,
                          {"LAeq": [50.0] * 4, "LAF90": [38.2, 41.0, 37.9, 39.1]},
                          exclusions=[("technician", "background", [False, True, False, False])])
    result = assess(survey, Settings())
    (ref,) = result["background"]["reference_intervals"]
    assert ref["period"] == "day" and ref["valid_s"] == 2700.0 and ref["sufficient"] is True
    assert ref["LA90"] == 38.0
    assert result["background"]["day"]["LA90"] == 38.0
    assert result["overall"]["LAeq"] == 50.0  # background-only exclusion keeps LAeq
