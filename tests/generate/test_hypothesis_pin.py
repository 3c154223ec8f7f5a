"""The hypothesis pin in pyproject.toml (hypothesis<6.170.10) and why it exists.

hypothesis-jsonschema 0.23.1 reaches into hypothesis internals; from hypothesis 6.170.10 on, every
object schema fails with ``AttributeError: 'many' object has no attribute 'more'`` (issue 3, seen on
the project machine). This test draws an object from ``hypothesis_jsonschema.from_schema`` directly,
so lifting the pin while the break stands fails here, loudly, with the reason. If it passes on a
newer hypothesis, the pin can go. Our own object strategy (feeler.generate._strategies.objects) does
not depend on this, so replacing hypothesis-jsonschema's object strategy stays a local change.
"""

from __future__ import annotations

import hypothesis
import jsonschema
from hypothesis import HealthCheck, given, settings
from hypothesis_jsonschema import from_schema

OBJECT_SCHEMA = {
    "type": "object",
    "properties": {"shelf": {"type": "string", "maxLength": 4}, "copies": {"type": "integer", "minimum": 0}},
    "required": ["shelf"],
    "additionalProperties": False,
}


def test_hypothesis_jsonschema_draws_objects() -> None:
    drawn: list[dict] = []

    @settings(max_examples=25, database=None, deadline=None, suppress_health_check=list(HealthCheck))
    @given(from_schema(OBJECT_SCHEMA))
    def collect(value: dict) -> None:
        drawn.append(value)

    try:
        collect()
    except AttributeError as exc:  # pragma: no cover - only when the pin is lifted too early
        raise AssertionError(
            f"hypothesis {hypothesis.__version__} breaks hypothesis-jsonschema's object strategy ({exc}); "
            "keep the pin hypothesis<6.170.10 in pyproject.toml or replace the object strategy"
        ) from exc
    assert drawn
    assert all(jsonschema.Draft202012Validator(OBJECT_SCHEMA).is_valid(v) for v in drawn)  # jsonschema as reference
