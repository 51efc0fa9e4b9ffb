"""Writing settings back: the TOML layout of effective settings and their SHA-256."""

from __future__ import annotations

import hashlib
import json
from typing import Any

from surveytools.settings._parse import drop_none
from surveytools.settings.root import Settings


def settings_to_mapping(settings: Settings) -> dict[str, Any]:
    """Return ``settings`` in the TOML layout (durations as ``*_s`` seconds, no nulls).

    ``settings_from_mapping(settings_to_mapping(s)) == s`` for every valid ``s``.
    """
    data = settings.to_dict()
    data["columns"] = data.pop("column_map")
    # The *_s duration spellings of to_dict() are part of the TOML layout as they are.
    out: dict[str, Any] = drop_none(data)
    return out


def settings_sha256(settings: Settings) -> str:
    """Return the SHA-256 hex digest of the canonical JSON of ``settings.to_dict()``."""
    canonical = json.dumps(settings.to_dict(), sort_keys=True, separators=(",", ":"),
                           ensure_ascii=False, allow_nan=False)
    return hashlib.sha256(canonical.encode("utf-8")).hexdigest()
