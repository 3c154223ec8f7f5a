"""Generation speed, measured side by side with raw hypothesis-jsonschema in the same run.

Run by hand: ``python bench/bench_generate.py [--draws N] [--cases N] [--raw-python PATH | --no-raw]``.
For four reference schemas it prints go cases/s from the seeded sampler (``fast_go_cases``, what
``go_cases(draws=N)`` and ``drawn_cases`` use; every value checked by the oracle inside, and re-checked
here by an independent jsonschema validator outside the timing), the rate of the hypothesis strategy
(``feeler.generate.arguments`` in a ``@given`` loop), the raw hypothesis-jsonschema draws/s with the
same ``@given`` harness, the ratios sampler/raw and strategy/raw, no-go cases/s (``nogo_cases``, every
case proven), the time from a fresh schema dict to the first boundary case and to the first drawn
case, and the number of go+no-go boundary/mutation cases.

hypothesis-jsonschema 0.23.1 breaks on hypothesis >= 6.170.10 for object schemas ("'many' object has
no attribute 'more'"), and feeler runs on the newest hypothesis. So the raw column runs in a child
process on an interpreter whose hypothesis it still works with: by default a virtual environment under
/tmp made on first use with pip (``hypothesis<6.170.10``, ``hypothesis-jsonschema==0.23.1``,
``jsonschema``); ``--raw-python`` names another interpreter. The same child harness is also run on this
interpreter, and the table says for which schemas hypothesis-jsonschema breaks on the installed
hypothesis. Both sides run in this one bench run, one after the other.
Goals: sampler ratio >= 10 on every schema (issue 3), strategy ratio >= 10 (issue 10), >= 1,000 go
cases/s on the flat one, first case < 100 ms.
"""

from __future__ import annotations

import argparse
import copy
import importlib.metadata
import json
import os
import platform
import subprocess
import sys
import time
from typing import Any

import hypothesis
import jsonschema
from hypothesis import HealthCheck, Phase, given, settings

from feeler.generate import ToolSchema, arguments, fast_go_cases, go_cases, nogo_cases

#: The raw side's environment: a hypothesis that hypothesis-jsonschema 0.23.1 still works with.
RAW_VENV = "/tmp/feeler-bench-raw-hjs"
RAW_REQUIREMENTS = ["hypothesis<6.170.10", "hypothesis-jsonschema==0.23.1", "jsonschema>=4.23"]
#: The raw harness, run in the child: the same @given loop as draws_per_second below.
RAW_HARNESS = """
import importlib.metadata, json, sys, time
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis_jsonschema import from_schema
schemas, count = json.loads(sys.argv[1]), int(sys.argv[2])
out = {"hypothesis": importlib.metadata.version("hypothesis"),
       "hypothesis-jsonschema": importlib.metadata.version("hypothesis-jsonschema"), "rates": {}}
for name, schema in schemas.items():
    done = [0]
    @settings(max_examples=count, database=None, phases=[Phase.generate], deadline=None,
              suppress_health_check=list(HealthCheck))
    @given(from_schema(schema))
    def run(value):
        done[0] += 1
    start = time.perf_counter()
    try:
        run()
    except Exception as exc:
        out["rates"][name] = f"{type(exc).__name__}: {exc}".splitlines()[0][:80]
    else:
        out["rates"][name] = done[0] / (time.perf_counter() - start)
print(json.dumps(out))
"""

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
    """Draws/s of *strategy* in a ``@given`` loop (the raw side's harness); *check* runs after the timing."""
    drawn: list[Any] = []

    @settings(max_examples=count, database=None, phases=[Phase.generate], deadline=None, suppress_health_check=QUIET)
    @given(strategy)
    def run(value: Any) -> None:
        drawn.append(value)

    start = time.perf_counter()
    run()
    rate = len(drawn) / (time.perf_counter() - start)
    bad = [v for v in drawn if check is not None and not check(v)]
    assert not bad, bad[:3]
    return rate


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


def raw_python(given_path: str | None) -> str:
    """The interpreter for the raw column: *given_path*, else the /tmp virtual environment (made once)."""
    if given_path:
        return given_path
    python = os.path.join(RAW_VENV, "bin", "python")
    if not os.path.exists(python):
        print(f"making {RAW_VENV} for the raw column: {' '.join(RAW_REQUIREMENTS)}", file=sys.stderr)
        subprocess.run([sys.executable, "-m", "venv", RAW_VENV], check=True, timeout=300)
        subprocess.run([python, "-m", "pip", "install", "-q", *RAW_REQUIREMENTS], check=True, timeout=600)
    return python


def raw_rates(python: str, count: int) -> dict[str, Any]:
    """Raw hypothesis-jsonschema draws/s per schema on *python* (a child process), with its versions."""
    proc = subprocess.run([python, "-c", RAW_HARNESS, json.dumps(SCHEMAS), str(count)], capture_output=True,
                          text=True, timeout=1800)  # fmt: skip
    if proc.returncode != 0:
        return {"hypothesis": "?", "hypothesis-jsonschema": "?", "rates": {n: proc.stderr.strip().splitlines()[-1][:80] for n in SCHEMAS}}
    return json.loads(proc.stdout.strip().splitlines()[-1])


def main() -> None:
    parser = argparse.ArgumentParser()
    parser.add_argument("--draws", type=int, default=300, help="draws for the hypothesis-engine rates")
    parser.add_argument("--cases", type=int, default=3000, help="go cases for the sampler rate")
    parser.add_argument("--raw-python", default=None, help="interpreter for the raw column (default: a venv under /tmp)")
    parser.add_argument("--no-raw", action="store_true", help="skip the raw hypothesis-jsonschema column")
    args = parser.parse_args()
    raw_count = max(30, args.draws // 5)
    here = raw_rates(sys.executable, raw_count)  # the installed hypothesis: where does hypothesis-jsonschema break?
    pinned = None if args.no_raw else raw_rates(raw_python(args.raw_python), raw_count)
    print(f"python {platform.python_version()}, hypothesis {hypothesis.__version__}, "
          f"jsonschema {importlib.metadata.version('jsonschema')}; raw column: "
          + (f"hypothesis {pinned['hypothesis']}, hypothesis-jsonschema {pinned['hypothesis-jsonschema']} (child process)"
             if pinned else "skipped"))  # fmt: skip
    header = (f"{'schema':<16}{'go/s':>9}{'strat/s':>9}{'raw h-js/s':>12}{'ratio':>8}{'strat ratio':>13}"
              f"{'no-go/s':>10}{'first ms':>10}{'drawn ms':>10}{'go+nogo':>9}")  # fmt: skip
    print(header)
    broken = []
    for name, schema in SCHEMAS.items():
        if not isinstance(here["rates"].get(name), float):
            broken.append(f"{name} ({here['rates'].get(name)})")
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
        # Every value the strategy drew is checked by an independent validator, after the timing.
        strat = draws_per_second(arguments(ToolSchema(copy.deepcopy(schema))), args.draws, oracle.is_valid)
        raw = pinned["rates"].get(name) if pinned else None
        start = time.perf_counter()
        made = 0
        while time.perf_counter() - start < 1.0:
            made += len(nogo_cases(ToolSchema(copy.deepcopy(schema))))
        nogo_rate = made / (time.perf_counter() - start)
        total = len(go_cases(ts)) + len(nogo_cases(ts))
        if isinstance(raw, float):
            cells = f"{raw:>12.0f}{fast / raw:>8.1f}{strat / raw:>13.1f}"
        else:
            cells = f"{'n/a':>12}{'n/a':>8}{'n/a':>13}"
        print(f"{name:<16}{fast:>9.0f}{strat:>9.0f}{cells}{nogo_rate:>10.0f}{first_ms:>10.1f}{drawn_ms:>10.1f}{total:>9}")
    if broken:
        print(f"hypothesis-jsonschema {here['hypothesis-jsonschema']} on the installed hypothesis {here['hypothesis']} "
              f"breaks on: {'; '.join(broken)}")  # fmt: skip


if __name__ == "__main__":
    main()
