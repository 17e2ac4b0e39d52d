"""The JSON Schema of the result sidecar, generated from :class:`capture.models.Result`.

The committed copy is ``capture/result.schema.json``; a test checks that it
equals what this module generates. Regenerate it with
``masstrail schema > capture/result.schema.json``.
"""

from __future__ import annotations

import json
from pathlib import Path

from capture.models import Result

SCHEMA_FILE = Path(__file__).with_name("result.schema.json")
SCHEMA_ID = "https://masstrail.invalid/schema/masstrail-result-1.json"


def result_schema() -> dict:
    """The sidecar's JSON Schema (draft 2020-12), as a dict."""
    schema = Result.model_json_schema(by_alias=True, mode="serialization")
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": SCHEMA_ID,
        **schema,
    }


def result_schema_text() -> str:
    """The schema as stable, indented JSON text with a trailing newline."""
    return json.dumps(result_schema(), indent=2, sort_keys=True, ensure_ascii=False) + "\n"
