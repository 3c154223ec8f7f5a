"""Generation speed, measured side by side with raw hypothesis-jsonschema in the same run.

Run by hand: ``python bench/bench_generate.py [--draws N] [--cases N]``. For four reference schemas it
prints go cases/s from the seeded sampler (``fast_go_cases``, what ``go_cases(draws=N)`` and
``drawn_cases`` use; every value checked by the oracle inside, and re-checked here by an independent
jsonschema validator outside the timing), the rate of the hypothesis strategy
(``feeler.generate.arguments`` in a ``@given`` loop), the raw hypothesis-jsonschema draws/s with the
same ``@given`` harness, the ratios sampler/raw and strategy/raw, no-go cases/s (``nogo_cases``, every
case proven), the time from a fresh schema dict to the first boundary case and to the first drawn
case, and the number of go+no-go boundary/mutation cases.
Goal (issue 3): ratio >= 10 on every schema, >= 1,000 go cases/s on the flat one, first case < 100 ms.
"""

from __future__ import annotations

import argparse
import importlib.metadata
import copy
import platform
import time
from typing import Any

import hypothesis
import hypothesis_jsonschema
import jsonschema
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis_jsonschema import from_schema

from feeler.generate import ToolSchema, arguments, fast_go_cases, go_cases, nogo_cases

FLAT = {
    "type": "object",
    "properties": {
        "title": {"type": "string", "maxLength": 40},
        "copies": {"type": "integer", "minimum": 0, "maximum": 99},
        "lendable": {"type": "boolean"},
        "price": {"type": "number", "minimum": 0},
        "shelf": {"type": "string"},
    },
    "required": ["title", "copies"],
}
NESTED = {
    "type": "object",
    "properties": {
        "zone": {"type": "string", "enum": ["north", "south", "glasshouse"]},
        "code": {"type": "string", "pattern": "^[A-Z]{2}-\\d{3}$"},
        "when": {"type": "string", "format": "date-time"},
        "sensor": {
            "type": "object",
            "properties": {
                "host": {"type": "string", "format": "hostname"},
                "kind": {"enum": ["soil", "air", "light"]},
                "limits": {"type": "object", "properties": {"low": {"type": "number"}, "high": {"type": "number"}},
                           "required": ["low"], "additionalProperties": False},
            },
            "required": ["host", "kind"],
            "additionalProperties": False,
        },
    },
    "required": ["zone", "code", "sensor"],
    "additionalProperties": False,
}
REF_ANYOF = {
    "type": "object",
    "properties": {
        "from": {"$ref": "#/$defs/port"},
        "to": {"$ref": "#/$defs/port"},
        "vehicle": {"anyOf": [{"type": "null"}, {"$ref": "#/$defs/vehicle"}]},
        "note": {"anyOf": [{"type": "string", "maxLength": 20}, {"type": "null"}]},
    },
    "required": ["from", "to", "vehicle"],
    "$defs": {
        "port": {"type": "string", "enum": ["Skerry Point", "Gullhaven", "Tarn Quay"]},
        "vehicle": {"type": "object", "properties": {"kind": {"enum": ["car", "van"]}, "length_m": {"type": "number", "exclusiveMinimum": 0, "maximum": 12}},
                    "required": ["kind"]},
    },
}
WIDE = {
    "type": "object",
    "properties": {
        f"option_{i:02d}": [{"type": "integer", "minimum": 0}, {"type": "string", "maxLength": 8}, {"type": "boolean"}, {"enum": ["a", "b", "c"]}][i % 4]
        for i in range(40)
    },
}
SCHEMAS = {"flat": FLAT, "nested": NESTED, "ref+anyOf-null": REF_ANYOF, "40 optional": WIDE}
QUIET = list(HealthCheck)


def draws_per_second(strategy: Any, count: int, check: Any = None) -> float:
    done = [0]

    @settings(max_examples=count, database=None, phases=[Phase.generate], deadline=None, suppress_health_check=QUIET)
    @given(strategy)
    def run(value: Any) -> None:
        if check is not None:
            assert check(value)
        done[0] += 1

    start = time.perf_counter()
    run()
    return done[0] / (time.perf_counter() - start)


def sampler_per_second(schema: Any, count: int, check: Any) -> float:
    """go cases/s of ``fast_go_cases`` on a freshly compiled schema (sampler compilation included)."""
    ts = ToolSchema(copy.deepcopy(schema))
    start = time.perf_counter()
    cases = fast_go_cases(ts, count, seed=1)
    elapsed = time.perf_counter() - start
    assert len(cases) == count
    bad = [c.arguments for c in cases if not check(c.arguments)]
    assert not bad, bad[:3]
    return count / elapsed


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--draws", type=int, default=300, help="draws for the hypothesis-engine rates")
    parser.add_argument("--cases", type=int, default=3000, help="go cases for the sampler rate")
    args = parser.parse_args()
    print(f"python {platform.python_version()}, hypothesis {hypothesis.__version__}, "
          f"hypothesis-jsonschema {importlib.metadata.version('hypothesis-jsonschema')}, "
          f"jsonschema {importlib.metadata.version('jsonschema')}")  # fmt: skip
    header = (f"{'schema':<16}{'go/s':>9}{'strat/s':>9}{'raw h-js/s':>12}{'ratio':>8}{'strat ratio':>13}"
              f"{'no-go/s':>10}{'first ms':>10}{'drawn ms':>10}{'go+nogo':>9}")  # fmt: skip
    print(header)
    for name, schema in SCHEMAS.items():
        fresh = copy.deepcopy(schema)
        start = time.perf_counter()
        ts = ToolSchema(fresh)
        first = go_cases(ts)[:1]
        first_ms = (time.perf_counter() - start) * 1000
        assert first
        start = time.perf_counter()
        assert fast_go_cases(ToolSchema(copy.deepcopy(schema)), 1)
        drawn_ms = (time.perf_counter() - start) * 1000
        oracle = jsonschema.Draft202012Validator(schema, format_checker=jsonschema.Draft202012Validator.FORMAT_CHECKER)
        fast = sampler_per_second(schema, args.cases, oracle.is_valid)
        # The strategy already filters by the oracle; the check re-validates independently.
        strat = draws_per_second(arguments(ts), args.draws, oracle.is_valid)
        raw = draws_per_second(from_schema(schema), max(30, args.draws // 5))
        start = time.perf_counter()
        rounds, made = 0, 0
        while time.perf_counter() - start < 1.0:
            made += len(nogo_cases(ToolSchema(copy.deepcopy(schema))))
            rounds += 1
        nogo_rate = made / (time.perf_counter() - start)
        total = len(go_cases(ts)) + len(nogo_cases(ts))
        print(f"{name:<16}{fast:>9.0f}{strat:>9.0f}{raw:>12.0f}{fast / raw:>8.1f}{strat / raw:>13.1f}"
              f"{nogo_rate:>10.0f}{first_ms:>10.1f}{drawn_ms:>10.1f}{total:>9}")


if __name__ == "__main__":
    main()
