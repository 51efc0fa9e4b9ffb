"""The one canonical column vocabulary: accepted header spellings -> canonical names.

Headers are compared after :func:`normalise_header`, which ignores case, spaces,
punctuation, a trailing unit (``(dB)``, ``dB(A)``, ``[s]``, ``(m/s)``, ``(mm)``, ...) and a
trailing time-base suffix (``,T``, ``,1min``, ``,15min``). The built-in spellings are trade
notation (IEC 61672-1 / ISO 1996-1 symbols such as ``LAeq``, ``LAeq,T``, ``LAFmax``,
``LAF90``, ``LA90``, ``LCpeak``), units in brackets and plain English words. Any other
spelling reaches a canonical column through the settings' ``[columns]`` table
(``"Leq A" = "LAeq"``).

Statistical levels: ``LA10``, ``LA90`` ... (no time weighting given) are taken as the
meter's fast-weighted statistics ``LAF10``, ``LAF90`` ... Common practice: sound level
meters compute exceedance levels from the F (fast) time-weighted level unless the label
says otherwise, and reports use LA90 and LAF90 interchangeably for background. A sheet
that means the S (slow) statistic must say ``LAS90`` (not in the vocabulary: map it).

One-third-octave bands: ``LZeq 1000 Hz``, ``LZeq_1000Hz``, ``1000 Hz``, ``1 kHz``, ``1k``
and a bare ``1000`` are accepted when the number is a nominal mid-band frequency
(IEC 61672-1:2013 Table 3); the canonical name is ``LZeq_<nominal>Hz`` (``LZeq_31.5Hz``,
``LZeq_1250Hz``).
"""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Mapping, Sequence

from surveytools import constants as const
from surveytools.inputs.raw import cell_number_text

# --------------------------------------------------------------------------------------
# Normalisation
# --------------------------------------------------------------------------------------

# Trailing units, tried repeatedly (longest first). Matched on the lower-cased text.
_UNIT_SUFFIX_RE = re.compile(
    r"""(?:\s*[\(\[]\s*(?:db\s*\(?[acz]\)?|db[acz]|db|m\s*/\s*s|mm|m|s|sec|hz|%)\s*[\)\]]"""
    r"""|\s+(?:db\s*\([acz]\)|db[acz]|db|m/s|mm))\s*$"""
)
# Trailing time base: ",T", ", 1min", ",15 min", ",1s", ",1h", ",100ms".
_TIME_SUFFIX_RE = re.compile(r"\s*,\s*(?:t|\d+(?:\.\d+)?\s*(?:ms|s|sec|min|m|h))\s*$")
_NON_ALNUM_RE = re.compile(r"[^0-9a-z.]+")
_BAND_RE = re.compile(r"^(?:lzeq|leqz|lz|leq)?(\d+(?:\.\d+)?)(k)?(?:hz)?$")


def normalise_header(text: object) -> str:
    """Return the comparison key of a header cell.

    Parameters
    ----------
    text : object
        Header cell value (text, or a number such as ``1000`` for a band column).

    Returns
    -------
    str
        Lower-case letters, digits and decimal points only, with any trailing unit and
        time-base suffix removed (``"LAeq,T (dB)"`` -> ``"laeq"``, ``"Wind speed (m/s)"``
        -> ``"windspeed"``, ``"1 kHz"`` -> ``"1khz"``). Empty for an empty cell.
    """
    if text is None:
        return ""
    s = unicodedata.normalize("NFKC", cell_number_text(text)).strip().lower()
    previous = None
    while previous != s:
        previous = s
        s = _UNIT_SUFFIX_RE.sub("", s).strip()
        s = _TIME_SUFFIX_RE.sub("", s).strip()
    s = _NON_ALNUM_RE.sub("", s)
    return s.strip(".")


#: Prefix of every canonical band column name (``LZeq_1000Hz``).
BAND_PREFIX = "LZeq_"


def is_band_column(name: str) -> bool:
    """Return True for a canonical one-third-octave band column name (``LZeq_1000Hz``)."""
    return name.startswith(BAND_PREFIX)


def band_name(frequency_hz: float) -> str:
    """Return the canonical band column name (``LZeq_1000Hz``, ``LZeq_31.5Hz``).

    Parameters
    ----------
    frequency_hz : float
        Nominal mid-band frequency. [Hz]
    """
    label = f"{frequency_hz:g}" if frequency_hz < 100 else f"{round(frequency_hz)}"
    return f"{BAND_PREFIX}{label}Hz"


def _band_from_key(key: str) -> str | None:
    m = _BAND_RE.match(key)
    if not m:
        return None
    value = float(m.group(1)) * (1000.0 if m.group(2) else 1.0)
    for nominal in const.NOMINAL_THIRD_OCTAVE_HZ:
        if abs(value - nominal) < 1e-9 * nominal:
            return band_name(nominal)
    return None


# --------------------------------------------------------------------------------------
# Vocabularies: canonical name -> accepted spellings (as shown to people)
# --------------------------------------------------------------------------------------

#: Readings sheet columns. Canonical names are those of ``surveytools.survey``.
READINGS_COLUMNS: dict[str, tuple[str, ...]] = {
    "Start": ("Start", "Start time", "Interval start", "Start date/time", "Date/time",
              "Date and time", "Timestamp"),
    "End": ("End", "End time", "Interval end", "End date/time"),
    "Date": ("Date", "Start date"),
    "Time": ("Time", "Start time of day", "Time of day"),
    "Duration": ("Duration (s)", "Duration", "Interval (s)", "Interval length (s)"),
    "LAeq": ("LAeq", "LAeq,T", "LAeq (dB)", "LAeq,1min", "LAeq,15min"),
    "LAFmax": ("LAFmax", "LAmax", "LAFmax (dB)"),
    "LAFmin": ("LAFmin", "LAmin"),
    "LASmax": ("LASmax",),
    "LASmin": ("LASmin",),
    "LAF1": ("LAF1", "LA1"),
    "LAF5": ("LAF5", "LA5"),
    "LAF10": ("LAF10", "LA10"),
    "LAF50": ("LAF50", "LA50"),
    "LAF90": ("LAF90", "LA90"),
    "LAF95": ("LAF95", "LA95"),
    "LAF99": ("LAF99", "LA99"),
    "LCeq": ("LCeq",),
    "LCpeak": ("LCpeak", "LCpk"),
    "LZeq": ("LZeq",),
    "Overload": ("Overload", "Overloaded", "OVL"),
    "Operating": ("Operating", "Source operating", "Source on"),
    "Note": ("Note", "Notes", "Comment", "Comments", "Remark", "Remarks"),
}

#: Weather sheet columns.
WEATHER_COLUMNS: dict[str, tuple[str, ...]] = {
    "Start": ("Start", "Start time", "Interval start", "Date/time", "Timestamp"),
    "End": ("End", "End time", "Interval end"),
    "Duration": ("Duration (s)", "Duration"),
    "Wind speed": ("Wind speed (m/s)", "Wind speed", "Wind", "Wind (m/s)"),
    "Rain": ("Rain (mm)", "Rain", "Rainfall (mm)", "Rainfall", "Precipitation (mm)",
             "Precipitation"),
    "Note": ("Note", "Notes", "Comment"),
}

#: Exclusions sheet columns.
EXCLUSION_COLUMNS: dict[str, tuple[str, ...]] = {
    "From": ("From", "Start", "Excluded from"),
    "To": ("To", "End", "Until", "Excluded to"),
    "Reason": ("Reason", "Why", "Note", "Comment"),
    "Applies to": ("Applies to", "Scope", "Applies"),
}

#: Survey sheet keys. Canonical names are the ``Survey.metadata`` keys.
SURVEY_KEYS: dict[str, tuple[str, ...]] = {
    "position": ("Position", "Monitoring position", "Position code", "Location"),
    "site": ("Site", "Site name", "Project"),
    "time_zone": ("Time zone", "Timezone", "TZ"),
    "clock": ("Clock", "Meter clock"),
    "meter_class": ("Meter class", "Class"),
    "calibration_before_db": ("Calibration before (dB)", "Calibration before",
                              "Cal before (dB)", "Calibration start (dB)"),
    "calibration_after_db": ("Calibration after (dB)", "Calibration after",
                             "Cal after (dB)", "Calibration end (dB)"),
    "calibrator_level_db": ("Calibrator level (dB)", "Calibrator level",
                            "Calibrator (dB)"),
    "microphone": ("Microphone", "Microphone position", "Microphone type"),
    "height_m": ("Height (m)", "Height", "Microphone height (m)"),
    "notes": ("Notes", "Note", "Comments"),
}

#: Vocabularies by sheet role (used by the reader).
VOCABULARIES: dict[str, Mapping[str, Sequence[str]]] = {
    "readings": READINGS_COLUMNS,
    "weather": WEATHER_COLUMNS,
    "exclusions": EXCLUSION_COLUMNS,
    "survey": SURVEY_KEYS,
}

#: Expected cell kind of each canonical readings/weather/exclusion column ("number",
#: "datetime", "text", "bool"); band columns and unknown columns are decided by content.
EXPECTED_KIND: dict[str, str] = {
    "Start": "datetime", "End": "datetime", "Date": "datetime", "Time": "datetime",
    "From": "datetime", "To": "datetime",
    "Duration": "number", "Wind speed": "number", "Rain": "number",
    "Note": "text", "Reason": "text", "Applies to": "text",
    "Overload": "flag", "Operating": "flag",
    **{name: "number" for name in READINGS_COLUMNS if name.startswith("L")},
}


def _lookup(vocabulary: Mapping[str, Sequence[str]]) -> dict[str, str]:
    table: dict[str, str] = {}
    for canonical, spellings in vocabulary.items():
        for key in (canonical, *spellings):
            table.setdefault(normalise_header(key), canonical)
    return table


_LOOKUPS: dict[int, dict[str, str]] = {}


def canonical_name(
    header: object,
    vocabulary: Mapping[str, Sequence[str]],
    column_map: Mapping[str, str] | None = None,
) -> str | None:
    """Return the canonical name of one header, or None when it is not recognised.

    Parameters
    ----------
    header : object
        Header cell value.
    vocabulary : mapping
        One of :data:`READINGS_COLUMNS`, :data:`WEATHER_COLUMNS`, :data:`EXCLUSION_COLUMNS`,
        :data:`SURVEY_KEYS`.
    column_map : mapping, optional
        Extra header text -> canonical name (settings ``column_map``); compared after
        normalisation too, and tried first.
    """
    key = normalise_header(header)
    if not key:
        return None
    if column_map:
        for text, canonical in column_map.items():
            if normalise_header(text) == key:
                return canonical
    table = _LOOKUPS.get(id(vocabulary))
    if table is None:
        table = _LOOKUPS[id(vocabulary)] = _lookup(vocabulary)
    if key in table:
        return table[key]
    if vocabulary is READINGS_COLUMNS:
        return _band_from_key(key)
    return None


def match_columns(
    headers: Sequence[object],
    vocabulary: Mapping[str, Sequence[str]],
    column_map: Mapping[str, str] | None = None,
) -> tuple[dict[str, int], list[int], list[tuple[str, list[int]]]]:
    """Match a header row against a vocabulary.

    Parameters
    ----------
    headers : sequence
        Header cell values in sheet order (empty cells as ``None`` or ``""``).
    vocabulary : mapping
        Canonical name -> accepted spellings.
    column_map : mapping, optional
        Extra header text -> canonical name.

    Returns
    -------
    matched : dict of str to int
        Canonical name -> index of the first header with that meaning.
    unknown : list of int
        Indexes of non-empty headers that match nothing.
    duplicates : list of (str, list of int)
        Canonical names claimed by more than one header, with every index claiming it.
    """
    seen: dict[str, list[int]] = {}
    unknown: list[int] = []
    for i, header in enumerate(headers):
        if not normalise_header(header):
            continue
        name = canonical_name(header, vocabulary, column_map)
        if name is None:
            unknown.append(i)
        else:
            seen.setdefault(name, []).append(i)
    matched = {name: idx[0] for name, idx in seen.items()}
    duplicates = [(name, idx) for name, idx in seen.items() if len(idx) > 1]
    return matched, unknown, duplicates


def markdown_table() -> str:
    """Return the accepted-spellings table (Markdown) shown in the README."""
    lines = ["| sheet | canonical name | accepted header spellings |", "|---|---|---|"]
    for sheet, vocab in (("Readings", READINGS_COLUMNS), ("Weather", WEATHER_COLUMNS),
                         ("Exclusions", EXCLUSION_COLUMNS), ("Survey (keys)", SURVEY_KEYS)):
        for canonical, spellings in vocab.items():
            shown = ", ".join(f"`{s}`" for s in spellings)
            lines.append(f"| {sheet} | `{canonical}` | {shown} |")
    lines.append(
        "| Readings | `LZeq_<f>Hz` | `LZeq 1000 Hz`, `LZeq_1000Hz`, `1000 Hz`, `1 kHz`, "
        "`1k`, `1000` (f = a nominal one-third-octave frequency, 10 Hz - 20 kHz) |"
    )
    return "\n".join(lines) + "\n"
