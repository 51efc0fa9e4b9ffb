"""``[columns]``: extra header spellings, header text -> canonical column name."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from surveytools.inputs.columns import READINGS_COLUMNS, VOCABULARIES, canonical_name
from surveytools.settings._parse import Problem


def build_columns(given: Mapping[str, Any]) -> tuple[dict[str, str], list[Problem]]:
    """Build the column map from the schema-valid ``[columns]`` table.

    Returns
    -------
    column_map : dict of str to str
        Header text -> canonical column name (``"Leq" = "LAeq"``).
    problems : list of (key path, problem)
        Targets that are neither a canonical column or Survey key name nor a band name.
    """
    known = sorted({name for vocabulary in VOCABULARIES.values() for name in vocabulary})
    problems: list[Problem] = []
    for header, target in sorted(given.items()):
        if target in known or canonical_name(target, READINGS_COLUMNS) == target:
            continue  # a vocabulary name, or a one-third-octave band name
        guesses = [g for v in VOCABULARIES.values() if (g := canonical_name(target, v))]
        hint = f"; did you mean '{guesses[0]}'?" if guesses else ""
        problems.append((f"columns.{header}", f"expected a canonical column name (one of "
                                              f"{', '.join(known)}, or a band such as "
                                              f"'LZeq_1000Hz'), found '{target}'{hint}"))
    return {str(k): str(v) for k, v in given.items()}, problems
