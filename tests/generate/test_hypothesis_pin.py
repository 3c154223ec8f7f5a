"""The hypothesis pin in pyproject.toml (hypothesis<6.170.10) and why it exists.

hypothesis-jsonschema 0.23.1 reaches into hypothesis internals; from hypothesis 6.170.10 on, every
object schema fails with ``AttributeError: 'many' object has no attribute 'more'`` (issue 3, seen on
the project machine). This test draws objects from ``hypothesis_jsonschema.from_schema`` directly,
so lifting the pin while the break stands fails here, loudly, with the reason. If it passes on a
newer hypothesis, the pin can go. Our own object strategy (feeler.generate._strategies.objects) does
not depend on this, so replacing hypothesis-jsonschema's object strategy stays a local change.

The draw runs in a fresh interpreter: hypothesis-jsonschema keeps caches of canonicalised schemas
(and mutates the schemas it is given), so other tests in the same process could change what it draws.
"""

from __future__ import annotations

import json
import subprocess
import sys

import jsonschema

OBJECT_SCHEMA = {
    "type": "object",
    "properties": {"shelf": {"type": "string", "maxLength": 4}, "copies": {"type": "integer", "minimum": 0}},
    "required": ["shelf"],
    "additionalProperties": False,
}

_DRAW = """
import json, sys, copy
import hypothesis
from hypothesis import HealthCheck, given, settings
from hypothesis_jsonschema import from_schema
schema = json.loads(sys.argv[1])
drawn = []
@settings(max_examples=25, database=None, deadline=None, suppress_health_check=list(HealthCheck))
@given(from_schema(copy.deepcopy(schema)))
def collect(value):
    drawn.append(value)
try:
    collect()
except AttributeError as exc:
    print(json.dumps({"version": hypothesis.__version__, "error": str(exc)}))
    sys.exit(0)
print(json.dumps({"version": hypothesis.__version__, "drawn": drawn}))
"""


def test_hypothesis_jsonschema_draws_objects() -> None:
    proc = subprocess.run(
        [sys.executable, "-c", _DRAW, json.dumps(OBJECT_SCHEMA)], capture_output=True, text=True, timeout=120
    )
    assert proc.returncode == 0, proc.stderr[-2000:]
    outcome = json.loads(proc.stdout.strip().splitlines()[-1])
    assert "error" not in outcome, (
        f"hypothesis {outcome['version']} breaks hypothesis-jsonschema's object strategy ({outcome.get('error')}); "
        "keep the pin hypothesis<6.170.10 in pyproject.toml or replace the object strategy"
    )
    drawn = outcome["drawn"]
    assert drawn
    # jsonschema as the reference validator (JSON Schema 2020-12)
    assert all(jsonschema.Draft202012Validator(OBJECT_SCHEMA).is_valid(v) for v in drawn)
