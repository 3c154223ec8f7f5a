"""Time `feeler.diff.diff_catalogs` on two synthetic 500-tool catalogs with 50 changed tools.

Run by hand: ``python bench/bench_diff.py [--tools 500] [--changed 50] [--seed 7]``. Prints the time
of the full diff (witness search included), of the same diff with witnesses' sampling off
(``samples=0``) side by side, and of a no-change diff, plus verdict counts. Goal: full diff under 10 s.
"""

from __future__ import annotations

import argparse
import copy
import random
import time
from typing import Any

from feeler.catalog import Catalog
from feeler.diff import diff_catalogs

FIELDS: list[dict[str, Any]] = [
    {"type": "string", "minLength": 1, "maxLength": 64},
    {"type": "string", "pattern": "^[A-Z]{2}-[0-9]{4}$"},
    {"type": "string", "format": "date"},
    {"type": "string", "format": "email"},
    {"type": "string", "enum": ["low", "normal", "high", "urgent"]},
    {"type": "integer", "minimum": 0, "maximum": 1000},
    {"type": "number", "exclusiveMinimum": 0, "multipleOf": 0.5},
    {"type": "boolean"},
    {"type": "array", "items": {"type": "string", "maxLength": 20}, "maxItems": 10},
    {"type": "object", "properties": {"street": {"type": "string"}, "zip": {"type": "string", "pattern": "^[0-9]{5}$"}},
     "required": ["street"]},
]


def make_tool(rng: random.Random, i: int) -> dict[str, Any]:
    names = [f"f{j}" for j in range(rng.randint(2, 7))]
    props = {n: copy.deepcopy(rng.choice(FIELDS)) for n in names}
    required = sorted(rng.sample(names, rng.randint(1, len(names))))
    tool: dict[str, Any] = {
        "name": f"tool_{i:03d}",
        "description": f"Synthetic tool number {i}.",
        "inputSchema": {"type": "object", "properties": props, "required": required,
                        "additionalProperties": rng.random() < 0.5 and False},
        "annotations": {"readOnlyHint": rng.random() < 0.5},
    }
    if rng.random() < 0.5:
        tool["outputSchema"] = {"type": "object", "properties": {"id": {"type": "string"},
                                                                 "status": {"enum": ["ok", "queued"]},
                                                                 "count": {"type": "integer", "minimum": 0}},
                                "required": ["id", "status"]}
    return tool


EDITS = [
    lambda t, r: t["inputSchema"]["required"].append(next(iter(t["inputSchema"]["properties"]))),
    lambda t, r: t["inputSchema"]["properties"].update(extra={"type": "string"}),
    lambda t, r: t["inputSchema"].update(additionalProperties=False),
    lambda t, r: [p.update(maximum=10) for p in t["inputSchema"]["properties"].values() if p.get("type") == "integer"]
    or t["inputSchema"]["properties"].update(n={"type": "integer", "maximum": 9}),
    lambda t, r: [p["enum"].pop() for p in t["inputSchema"]["properties"].values() if "enum" in p]
    or t["inputSchema"]["required"].append("must"),
    lambda t, r: t.update(description="Reworded."),
    lambda t, r: t.get("outputSchema") and t["outputSchema"]["properties"]["status"]["enum"].append("failed")
    or t["inputSchema"]["properties"].update(p={"type": "string", "pattern": "^x"}),
]


def catalogs(n: int, changed: int, seed: int) -> tuple[Catalog, Catalog]:
    rng = random.Random(seed)
    old_tools = [make_tool(rng, i) for i in range(n)]
    new_tools = copy.deepcopy(old_tools)
    for k, idx in enumerate(rng.sample(range(n), changed)):
        EDITS[k % len(EDITS)](new_tools[idx], rng)
    mk = lambda tools: Catalog(revision="2025-11-25", era="handshake", tools=tools)  # noqa: E731
    return mk(old_tools), mk(new_tools)


def timed(old: Catalog, new: Catalog, samples: int) -> tuple[float, Any]:
    from feeler.diff import witness

    witness._draws_cached.cache_clear()
    witness._validator_cached.cache_clear()
    start = time.perf_counter()
    report = diff_catalogs(old, new, samples=samples)
    return time.perf_counter() - start, report


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__)
    ap.add_argument("--tools", type=int, default=500)
    ap.add_argument("--changed", type=int, default=50)
    ap.add_argument("--seed", type=int, default=7)
    args = ap.parse_args()
    old, new = catalogs(args.tools, args.changed, args.seed)
    t_same, _ = timed(old, old, 25)
    t_fast, _ = timed(old, new, 0)
    t_full, report = timed(old, new, 25)
    counts: dict[str, int] = {}
    for c in report.changes:
        counts[c.verdict.value] = counts.get(c.verdict.value, 0) + 1
    witnessed = sum(1 for c in report.changes if c.verdict.value == "breaking" and c.has_witness)
    print(f"catalogs: {args.tools} tools, {args.changed} changed (seed {args.seed})")
    print(f"no-change diff:               {t_same:7.3f} s")
    print(f"diff, samples=0 (rules only): {t_fast:7.3f} s")
    print(f"diff, samples=25 (default):   {t_full:7.3f} s   ratio full/rules-only {t_full / max(t_fast, 1e-9):.1f}x")
    print(f"changes: {len(report.changes)} {counts}; breaking with witness: {witnessed}")
    print("goal (< 10 s):", "met" if t_full < 10 else "NOT met")


if __name__ == "__main__":
    main()
