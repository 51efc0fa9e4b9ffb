"""How a figure reads, in every place: levels, shares, durations, criteria and verdict words.

One number everywhere: every level a person reads (Summary, Days, Intervals, Assessments,
overview, terminal line) is the reported value the criteria were judged on, rounded once,
half up, to 0.1 dB from the unrounded value the document holds
(:func:`surveytools.indicators.reporting.reported_level`). Shares are shown in per cent to
0.1 %, durations in hours to 0.1 h, with the same half-up rounding, so a figure reads the
same on the Summary, in the overview and on the terminal.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from typing import Any

from surveytools.indicators.reporting import reported_level
from surveytools.outputs.xlsx_style import finite_number, parse_local_timestamp
from surveytools.verdict import verdict_section

#: Day indicators in document key order, with their display names.
DAY_INDICATORS: tuple[tuple[str, str], ...] = (
    ("Lday", "Lday"), ("Levening", "Levening"), ("Lnight", "Lnight"), ("Lden", "Lden"),
    ("Ldn", "Ldn"), ("CNEL", "CNEL"), ("LAeq_16h", "LAeq,16h"), ("LAeq_8h", "LAeq,8h"),
)
DAY_NAMES: dict[str, str] = dict(DAY_INDICATORS)

#: Display names of assessment indicators a criterion may judge.
ASSESSMENT_NAMES: dict[str, str] = {"rating_level": "rating level",
                                    "excess_over_background": "excess over background"}

#: The caveat BS 4142 attaches to its initial estimate of impact (clause 11: the excess
#: over background indicates an impact "depending on the context"); kept with the words.
IMPACT_CAVEAT = "depending on the context (BS 4142 initial estimate)"


def get(mapping: object, *keys: str) -> Any:
    """Return ``mapping[k1][k2]...`` or None where a level is missing or not a mapping."""
    node: Any = mapping
    for key in keys:
        if not isinstance(node, Mapping):
            return None
        node = node.get(key)
    return node


def level(value: object, whole: bool = False) -> float | None:
    """Return the reported level (0.1 dB, or whole dB), or None when not a finite number.

    Parameters
    ----------
    value : object
        The unrounded level the document holds. [dB]
    whole : bool
        Report to whole dB (a background LA90 combined by the mode, BS 4142).
    """
    v = finite_number(value)
    if v is None:
        return None
    return float(reported_level(v, 0 if whole else 1))


def level_text(value: object, whole: bool = False, unit: bool = True) -> str:
    """Return a reported level as text (``"45.1 dB"``), ``"n/a"`` when missing."""
    v = level(value, whole)
    if v is None:
        return "n/a"
    text = f"{v:.0f}" if whole else f"{v:.1f}"
    return f"{text} dB" if unit else text


def share(fraction: object) -> float | None:
    """Return a fraction as per cent, rounded half up to 0.1 % (None when missing)."""
    v = finite_number(fraction)
    return None if v is None else float(reported_level(100.0 * v, 1))


def share_text(fraction: object) -> str:
    """Return a fraction as ``"94.2 %"`` (``"n/a"`` when missing)."""
    v = share(fraction)
    return "n/a" if v is None else f"{v:.1f} %"


def hours(seconds: object) -> float | None:
    """Return seconds as hours, rounded half up to 0.1 h (None when missing)."""
    v = finite_number(seconds)
    return None if v is None else float(reported_level(v / 3600.0, 1))


def hours_text(seconds: object) -> str:
    """Return seconds as ``"158.3 h"`` (``"n/a"`` when missing)."""
    v = hours(seconds)
    return "n/a" if v is None else f"{v:.1f} h"


def duration_text(seconds: object) -> str:
    """Return a duration as hours to 0.1 h, or minutes / seconds when shorter than 0.1 h."""
    v = finite_number(seconds)
    if v is None:
        return "n/a"
    if v >= 360.0:
        return hours_text(v)
    if v >= 60.0:
        return f"{float(reported_level(v / 60.0, 0)):.0f} min"
    return f"{float(reported_level(v, 0)):.0f} s"


def background_whole_db(doc: Mapping[str, Any]) -> bool:
    """Return True when background LA90 is reported to whole dB (mode of whole-dB values)."""
    return get(doc, "background", "method") == "mode"


def offset_note(doc: Mapping[str, Any]) -> str:
    """Return the note on local times and UTC offsets."""
    zone = get(doc, "survey", "time_zone") or "not stated"
    if get(doc, "survey", "time_zone_assumed"):
        zone += ", ASSUMED: no time zone was given (warning time-zone-assumed)"
    return (f"Times are the site's civil time (time zone {zone}); the UTC offset of "
            "each row is in its own column.")


def when_text(value: object) -> str:
    """Return a failure's ``when`` as text (a date, a local time with offset, or a name)."""
    if isinstance(value, str) and len(value) == len("YYYY-MM-DD"):
        return value
    stamp, offset = parse_local_timestamp(value)
    if stamp is None:
        return str(value)
    return stamp.strftime("%Y-%m-%d %H:%M") + (f" ({offset})" if offset else "")


def interval_label(interval_s: object) -> str:
    """Return ``"1h"`` / ``"30min"`` for an interval length in seconds (empty when none)."""
    v = finite_number(interval_s)
    if not v:
        return ""
    return f"{v / 3600:g}h" if v % 3600 == 0 else f"{v / 60:g}min"


def criterion_indicator(c: Mapping[str, Any]) -> str:
    """Return what a criterion judges, in words (``"LAeq,1h, day"``, ``"Lnight, per day"``)."""
    indicator = str(c.get("indicator"))
    name = DAY_NAMES.get(indicator) or ASSESSMENT_NAMES.get(indicator) or indicator
    label = interval_label(c.get("interval_s"))
    if label:
        name += f",{label}"
    period = c.get("period")
    if period not in (None, "any"):
        name += f", {period}"
    per = {"day": "per day", "interval": "per interval", "assessment": "per assessment",
           "survey": "survey"}.get(str(c.get("applies_to")), "")
    return f"{name}, {per}" if per else name


def failure_level(failure: Mapping[str, Any]) -> float | None:
    """Return the reported value a failure was judged on (its ``reported``, else rounded)."""
    reported = finite_number(failure.get("reported"))
    return reported if reported is not None else level(failure.get("value"))


def figure_count_text(c: Mapping[str, Any]) -> str:
    """Return ``"2 of 7"``: figures above the limit of the figures checked."""
    return f"{int(c.get('failed') or 0)} of {int(c.get('checked') or 0)}"


def outcome_word(c: Mapping[str, Any]) -> str:
    """Return ``"not met"``, ``"met"`` or ``"not checked"`` for one criterion."""
    passed = c.get("passed")
    if passed is True:
        return "met"
    return "not met" if passed is False else "not checked"


def failures_text(c: Mapping[str, Any], limit: int = 3) -> str:
    """Return the first failures of a criterion as ``"2026-10-25: 45.1 dB; ..."``."""
    fails = list(c.get("failures") or [])
    if not fails:
        return ""
    parts = []
    for f in fails[:limit]:
        mark = "" if f.get("sufficient", True) else " (low coverage)"
        v = failure_level(f)
        parts.append(f"{when_text(f.get('when'))}: "
                     f"{'n/a' if v is None else f'{v:.1f} dB'}{mark}")
    text = "; ".join(parts)
    if len(fails) > limit:
        text += f"; {len(fails) - limit} more"
    return text


def impact_text(words: object) -> str:
    """Return an impact indication with the standard's own caveat kept beside it."""
    if not isinstance(words, str) or not words:
        return ""
    return f"{words}, {IMPACT_CAVEAT}"


def verdict_of(doc: Mapping[str, Any]) -> dict[str, Any]:
    """Return the document's ``verdict`` (built from the document when it has none)."""
    verdict = doc.get("verdict")
    if isinstance(verdict, Mapping):
        return dict(verdict)
    return verdict_section(doc)


def level_axis(values: Iterable[object], **options: Any) -> dict[str, Any]:
    """Return a chart's level (y) axis options: titled in dB, fitted to ``values``.

    Parameters
    ----------
    values : iterable
        Levels and limits the chart shows. [dB]
    **options
        Further xlsxwriter axis options (gridlines ...).
    """
    axis: dict[str, Any] = {"name": "Level [dB]", "num_format": "0", **options}
    rng = axis_range(values)
    if rng is not None:
        axis["min"], axis["max"] = rng
    return axis


def axis_range(values: Iterable[object], step: float = 5.0,
               margin: float = 2.0) -> tuple[float, float] | None:
    """Return a level axis (min, max) in ``step`` dB that holds every value with a margin.

    Parameters
    ----------
    values : iterable
        Levels and limits the chart shows. [dB]
    step : float
        Axis bounds are multiples of this. [dB]
    margin : float
        Room kept above the highest and below the lowest value. [dB]
    """
    finite = [v for v in (finite_number(x) for x in values) if v is not None]
    if not finite:
        return None
    low = step * math.floor((min(finite) - margin) / step)
    high = step * math.ceil((max(finite) + margin) / step)
    if high <= low:
        high = low + step
    return low, high


def how_derived(doc: Mapping[str, Any]) -> dict[str, str]:
    """Return a one-line "how derived" note per headline figure, from the settings in effect.

    Parameters
    ----------
    doc : dict
        The results document.

    Returns
    -------
    dict of str to str
        Keyed by document key (``Lden``, ``LAeq_16h``, ``bg_day`` ...).
    """
    s = doc.get("settings") or {}

    def hhmm(*keys: str, default: str) -> str:
        value = get(s, *keys)
        return value if isinstance(value, str) else default

    ds = hhmm("periods", "lden", "day_start", default="07:00")
    es = hhmm("periods", "lden", "evening_start", default="19:00")
    ns = hhmm("periods", "lden", "night_start", default="23:00")
    ep = finite_number(get(s, "periods", "lden", "evening_penalty_db"))
    np_ = finite_number(get(s, "periods", "lden", "night_penalty_db"))
    ldn_d = hhmm("periods", "ldn", "day_start", default="07:00")
    ldn_n = hhmm("periods", "ldn", "night_start", default="22:00")
    ldn_p = finite_number(get(s, "periods", "ldn", "night_penalty_db"))
    c_d = hhmm("periods", "cnel", "day_start", default="07:00")
    c_e = hhmm("periods", "cnel", "evening_start", default="19:00")
    c_n = hhmm("periods", "cnel", "night_start", default="22:00")
    c_ep = finite_number(get(s, "periods", "cnel", "evening_penalty_db"))
    c_np = finite_number(get(s, "periods", "cnel", "night_penalty_db"))
    l16s = hhmm("periods", "laeq16_start", default="07:00")
    l16e = hhmm("periods", "laeq16_end", default="23:00")
    bg = doc.get("background") or {}
    method = bg.get("method") or "not stated"
    basis = bg.get("basis") or "not stated"
    bg_ds = hhmm("background", "day_start", default="07:00")
    bg_ns = hhmm("background", "night_start", default="23:00")
    ref_d = finite_number(get(s, "background", "reference_interval_day_s"))
    ref_n = finite_number(get(s, "background", "reference_interval_night_s"))

    def pen(v: float | None) -> str:
        return "configured" if v is None else f"{v:g}"

    def minutes(v: float | None) -> str:
        return "configured" if v is None else f"{v / 60.0:g} min"

    energy = "Energy average (LAeq, ISO 1996-1) of all valid"
    return {
        "Lden": (f"Directive 2002/49/EC Annex I over all valid time, {ds}-{es}-{ns} local, "
                 f"+{pen(ep)} dB evening, +{pen(np_)} dB night."),
        "Lday": f"{energy} day time {ds}-{es} local (Directive 2002/49/EC).",
        "Levening": f"{energy} evening time {es}-{ns} local.",
        "Lnight": f"{energy} night time {ns}-{ds} local.",
        "Ldn": f"Day {ldn_d}-{ldn_n}, night {ldn_n}-{ldn_d} local, +{pen(ldn_p)} dB at night.",
        "CNEL": (f"{c_d}-{c_e}-{c_n} local, +{pen(c_ep)} dB evening, +{pen(c_np)} dB "
                 "night."),
        "LAeq_16h": f"{energy} time {l16s}-{l16e} local.",
        "LAeq_8h": f"{energy} time {l16e}-{l16s} local.",
        "bg_day": (f"{method.capitalize()} of the LA90 of {minutes(ref_d)} reference "
                   f"intervals {bg_ds}-{bg_ns} local; basis {basis} (BS 4142)."),
        "bg_night": (f"{method.capitalize()} of the LA90 of {minutes(ref_n)} reference "
                     f"intervals {bg_ns}-{bg_ds} local; basis {basis} (BS 4142)."),
    }
