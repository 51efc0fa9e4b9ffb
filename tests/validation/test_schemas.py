"""Every JSON Schema shipped in schemas/ is a valid draft 2020-12 schema."""

import json
from pathlib import Path

import pytest
from jsonschema import Draft202012Validator

SCHEMAS = sorted((Path(__file__).resolve().parents[2] / "schemas").glob("*.json"))


def test_schemas_folder_is_not_empty():
    assert any(p.name == "survey.schema.json" for p in SCHEMAS)


@pytest.mark.parametrize("path", SCHEMAS, ids=lambda p: p.name)
def test_schema_is_valid_draft_2020_12(path):
    schema = json.loads(path.read_text(encoding="utf-8"))
    # The JSON Schema 2020-12 meta-schema (shipped with jsonschema) is the outside reference.
    Draft202012Validator.check_schema(schema)
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    assert schema.get("$id")
