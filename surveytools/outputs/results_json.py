"""The results document: plain JSON values, status, the unreadable variant, serialising.

The document shape is the contract in ``schemas/results.schema.json``. Everything written
is strict JSON: NaN and infinity become ``null`` (a finding or note says why), numpy
scalars become Python numbers, keys are sorted and the text ends with a newline, so the
same document always gives byte-identical output.
"""

from __future__ import annotations

import enum
import json
import math
import os
from collections import Counter
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import asdict, is_dataclass
from datetime import date, datetime
from pathlib import PurePath
from typing import Any

import numpy as np

from surveytools import __version__
from surveytools.outputs.atomic import atomic_write_text
from surveytools.provenance import SourceInfo
from surveytools.settings import Settings
from surveytools.validation.findings import Finding, Severity

#: Version of the results document layout; readers accept any ``1.x``.
SCHEMA_VERSION = "1.0"
#: Schema file of the results document (in ``schemas/``).
RESULTS_SCHEMA = "results.schema.json"
#: Schema file of the batch overview (in ``schemas/``).
OVERVIEW_SCHEMA = "overview.schema.json"
#: Decimal places of levels in JSON (workbooks show one; the assessment keeps full
#: precision where 0.001 dB would re-round to another reported figure) [digits].
LEVEL_DECIMALS = 3
#: JSON indentation; one space keeps long interval lists readable but short.
JSON_INDENT = 1

#: Sections of a results document, with their value when nothing could be computed.
EMPTY_SECTIONS: Mapping[str, Any] = {
    "coverage": None, "overall": None, "intervals": [], "intervals_basis": None, "days": [],
    "survey_average": None, "background": None, "assessments": [], "criteria": [],
    "exclusion_spans": [], "unplaced": [], "spectral": None,
}


def round_level(x: Any, ndigits: int = LEVEL_DECIMALS) -> float | None:
    """Round a level for JSON; ``None`` for missing, NaN or infinite values.

    Parameters
    ----------
    x : float, numpy scalar or None
        Level. [dB]
    ndigits : int
        Decimal places (0.001 dB by default, as the results contract states).

    Returns
    -------
    float or None
        Rounded level (``-0.0`` written as ``0.0``). [dB]
    """
    if x is None:
        return None
    value = float(x)
    if not math.isfinite(value):
        return None
    return round(value, ndigits) + 0.0


def iso_timestamp(moment: datetime) -> str:
    """Return the contract's timestamp text: seconds, milliseconds only when non-zero.

    ``2026-06-10T12:00:00+02:00`` or ``2026-06-10T12:00:00.100+02:00``; the UTC offset is
    kept as written in ``moment`` (a naive value gives no offset).
    """
    spec = "seconds" if moment.microsecond // 1000 == 0 else "milliseconds"
    return moment.isoformat(timespec=spec)


def to_json_value(x: Any) -> Any:
    """Turn ``x`` into plain JSON data, recursively.

    numpy scalars and arrays become Python numbers and lists; NaN and infinity become
    ``None``; tuples become lists; datetimes become :func:`iso_timestamp` text and dates
    ``YYYY-MM-DD``; enums their value; :class:`Finding` its ``to_json()``; other dataclasses
    their fields; paths their text. Mapping keys become text. Numbers are not rounded
    (use :func:`round_level` for levels).

    Raises
    ------
    TypeError
        For a value with no JSON form (a programming error, not a data problem).
    """
    if x is None:
        return None
    if isinstance(x, enum.Enum):  # before str/int: Severity is a str enum
        return to_json_value(x.value)
    if isinstance(x, bool | np.bool_):
        return bool(x)
    if isinstance(x, str):
        return str(x)  # also numpy.str_
    if isinstance(x, int | np.integer):
        return int(x)
    if isinstance(x, float | np.floating):  # numpy.float64 is a float subclass
        value = float(x)
        return value if math.isfinite(value) else None
    if isinstance(x, Mapping):
        return {str(k.value if isinstance(k, enum.Enum) else k): to_json_value(v)
                for k, v in x.items()}
    if isinstance(x, list | tuple | np.ndarray):
        return [to_json_value(v) for v in x]
    if isinstance(x, datetime):
        return iso_timestamp(x)
    if isinstance(x, date):
        return x.isoformat()
    if isinstance(x, Finding):
        return x.to_json()
    if is_dataclass(x) and not isinstance(x, type):
        return to_json_value(asdict(x))
    if isinstance(x, PurePath):
        return str(x)
    if isinstance(x, set | frozenset):
        return sorted(to_json_value(v) for v in x)
    raise TypeError(f"no JSON form for {type(x).__name__} value {x!r}")


def dumps_results(doc: Mapping[str, Any]) -> str:
    """Serialise a results (or overview) document deterministically.

    Strict JSON (``allow_nan=False`` after :func:`to_json_value`), sorted keys, UTF-8 text
    (``ensure_ascii=False``), one-space indentation, a trailing newline.
    """
    return json.dumps(to_json_value(doc), sort_keys=True, allow_nan=False,
                      ensure_ascii=False, indent=JSON_INDENT) + "\n"


def _non_finite(x: Any, path: str) -> Iterator[str]:
    if isinstance(x, float | np.floating) and not math.isfinite(float(x)):
        yield f"{path}: {float(x)!r} is not allowed in JSON (write null and say why)"
    elif isinstance(x, Mapping):
        for k, v in x.items():
            yield from _non_finite(v, f"{path}.{k}")
    elif isinstance(x, list | tuple):
        for i, v in enumerate(x):
            yield from _non_finite(v, f"{path}[{i}]")


def _validate(doc: Any, schema_name: str) -> list[str]:
    from surveytools.schema_files import validator

    problems = list(_non_finite(doc, "$"))
    errors = validator(schema_name).iter_errors(doc)
    problems += sorted(f"{e.json_path}: {e.message}" for e in errors)
    return problems


def validate_results(doc: Any) -> list[str]:
    """Check a results document against ``results.schema.json``.

    Returns
    -------
    list of str
        One text per problem (``$.intervals[3].LAeq: ...``), NaN and infinity included
        (jsonschema itself accepts NaN as a number); empty when the document is valid.
    """
    return _validate(doc, RESULTS_SCHEMA)


def validate_overview(doc: Any) -> list[str]:
    """Check an overview document against ``overview.schema.json`` (see validate_results)."""
    return _validate(doc, OVERVIEW_SCHEMA)


def status_from_findings(findings: Iterable[Finding]) -> str:
    """Return the status findings give: ``"errors"``, ``"warnings"`` or ``"ok"``.

    ``"errors"`` when any finding is an error, ``"warnings"`` when any is a warning (and none
    an error), else ``"ok"``. (``"unreadable"`` is set by :func:`unreadable_document`.)
    """
    severities = {f.severity for f in findings}
    if Severity.ERROR in severities:
        return "errors"
    if Severity.WARNING in severities:
        return "warnings"
    return "ok"


def document_header(source: SourceInfo, settings: Settings, findings: Iterable[Finding],
                    finding_counts: Mapping[str, int] | None = None,
                    survey: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """Return the sections every results document starts with.

    ``schema_version``, ``tool``, ``input``, ``settings`` (:meth:`Settings.to_dict`),
    ``survey``, ``status`` (from the findings), ``findings`` (sorted) and
    ``finding_counts`` (the given full counts, or counted from ``findings``).
    """
    items = sorted(findings, key=Finding.sort_key)
    counts = dict(finding_counts) if finding_counts is not None \
        else dict(Counter(f.code for f in items))
    return {
        "schema_version": SCHEMA_VERSION,
        "tool": {"name": "surveytools", "version": __version__},
        "input": {"file": source.file, "path": source.path,
                  "sha256": source.sha256 or None, "size_bytes": source.size_bytes},
        "settings": settings.to_dict(),
        "survey": to_json_value(dict(survey or {})),
        "status": status_from_findings(items),
        "findings": [f.to_json() for f in items],
        "finding_counts": dict(sorted(counts.items())),
    }


def unreadable_document(source: SourceInfo, findings: list[Finding], settings: Settings,
                        survey: Mapping[str, Any] | None = None) -> dict[str, Any]:
    """Return the results document of a file that could not be read at all.

    Status ``"unreadable"``, the fatal finding(s), ``survey`` as far as known (``{}``),
    and every computed section empty or null.

    Raises
    ------
    ValueError
        When ``findings`` holds no error finding (the caller must say why it failed).
    """
    if not any(f.severity is Severity.ERROR for f in findings):
        raise ValueError("an unreadable document needs at least one error finding saying why")
    doc = document_header(source, settings, findings, survey=survey)
    doc["status"] = "unreadable"
    doc.update({k: (list(v) if isinstance(v, list) else v) for k, v in EMPTY_SECTIONS.items()})
    return doc


def write_results_json(path: str | os.PathLike[str], doc: Mapping[str, Any]) -> None:
    """Write ``doc`` to ``path`` with :func:`dumps_results`, atomically (temp file + rename)."""
    atomic_write_text(path, dumps_results(doc))
