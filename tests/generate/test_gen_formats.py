"""Format near misses are proven invalid, and samples valid, by jsonschema's format checker.

References: RFC 3339 section 5.6 (date, time, date-time), RFC 5321 section 4.1.2 (email; jsonschema
checks only for an "@"), RFC 3986 section 3 (uri: absolute, needs a scheme), RFC 9562 section 4
(uuid), RFC 2673 (ipv4 dotted quad), RFC 4291 section 2.2 (ipv6), RFC 1123 section 2.1 (hostname);
``jsonschema`` 4.26 with the format-nongpl extras as the reference validator.
"""

from __future__ import annotations

import jsonschema
import pytest

from feeler.generate import nogo_cases
from feeler.generate._formats import FORMAT_NEAR_MISSES, FORMAT_SAMPLES

CHECKER = jsonschema.Draft202012Validator.FORMAT_CHECKER
ISSUE_FORMATS = ["date", "date-time", "time", "email", "uri", "uuid", "ipv4", "ipv6", "hostname"]


def test_the_format_extras_are_installed() -> None:
    # Without the format-nongpl extras jsonschema silently accepts every "uri": then no format no-go
    # case could be proven invalid.
    assert set(ISSUE_FORMATS) <= set(CHECKER.checkers)
    assert not CHECKER.conforms("shelf/1", "uri")


@pytest.mark.parametrize("name", ISSUE_FORMATS)
def test_near_misses_are_invalid_and_samples_valid(name: str) -> None:
    assert CHECKER.conforms(FORMAT_SAMPLES[name], name)
    misses = FORMAT_NEAR_MISSES[name]
    assert misses
    assert [m for m in misses if CHECKER.conforms(m, name)] == []


@pytest.mark.parametrize("name", ISSUE_FORMATS)
def test_format_nogo_cases(name: str) -> None:
    schema = {"type": "object", "properties": {"v": {"type": "string", "format": name}}, "required": ["v"]}
    cases = [c for c in nogo_cases(schema) if c.keyword == "format"]
    assert cases
    for case in cases:
        assert not CHECKER.conforms(case.arguments["v"], name)
        assert case.path == "$.v" and f"is not a '{name}'" in case.error
