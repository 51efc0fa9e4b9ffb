"""Writing settings back: TOML layout and to_dict round trips, the settings hash."""

from __future__ import annotations

import dataclasses
import hashlib
import json

from surveytools.settings import (
    Settings,
    load_settings,
    settings_from_dict,
    settings_from_mapping,
    settings_sha256,
    settings_to_mapping,
)
from tests.settings.example import FULL_EXAMPLE, write


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


def test_settings_sha256_is_hash_of_canonical_json():
    s = Settings()
    # Independent check with hashlib (FIPS 180-4 SHA-256) over compact sorted-key JSON.
    text = json.dumps(s.to_dict(), sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    assert settings_sha256(s) == hashlib.sha256(text.encode()).hexdigest()
    changed = dataclasses.replace(s, coverage_threshold=0.5)
    assert settings_sha256(changed) != settings_sha256(s)
    assert settings_sha256(settings_from_dict(s.to_dict())) == settings_sha256(s)
