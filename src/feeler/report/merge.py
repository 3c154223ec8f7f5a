"""``feeler report merge``: shard and worker documents joined into one report document."""

from __future__ import annotations

import math
from typing import Any

from feeler.report.document import LATENCY_BOUNDS, REPORT_FORMAT

__all__ = ["merge_reports"]


def _add_counts(a: dict[str, Any], b: dict[str, Any]) -> dict[str, Any]:
    return {k: a.get(k, 0) + b.get(k, 0) for k in a}


def _merge_latency(a: dict[str, Any], b: dict[str, Any]) -> dict[str, Any]:
    counts = [x["count"] + y["count"] for x, y in zip(a["buckets"], b["buckets"])]
    total = sum(counts)

    def quantile(q: float) -> float | None:
        # The upper bound of the bucket holding the nearest-rank value (the last, open bucket: the max).
        if not total:
            return None
        rank, seen = max(1, math.ceil(q * total)), 0
        for i, n in enumerate(counts):
            seen += n
            if seen >= rank:
                return LATENCY_BOUNDS[i] if i < len(LATENCY_BOUNDS) else top
        return top

    top = max((v for v in (a["max"], b["max"]) if v is not None), default=None)
    return {
        "count": total, "p50": quantile(0.5), "p95": quantile(0.95), "p99": quantile(0.99), "max": top,
        "approximate": True, "buckets": [{"le": x["le"], "count": n} for x, n in zip(a["buckets"], counts)],
    }  # fmt: skip


def _merge_tool(a: dict[str, Any], b: dict[str, Any]) -> dict[str, Any]:
    out = dict(a)
    for key in ("calls", "chainCalls", "probes", "timeouts"):
        out[key] = a.get(key, 0) + b.get(key, 0)
    out["go"] = _add_counts(a["go"], b["go"])
    out["noGo"] = _add_counts(a["noGo"], b["noGo"])
    if "elapsedSeconds" in a or "elapsedSeconds" in b:
        ea, eb = a.get("elapsedSeconds", {}), b.get("elapsedSeconds", {})
        out["elapsedSeconds"] = {k: round(ea.get(k, 0) + eb.get(k, 0), 6) for k in dict.fromkeys([*ea, *eb])}
    out["latency"] = _merge_latency(a["latency"], b["latency"])
    out["skipped"] = a.get("skipped") if a.get("skipped") and b.get("skipped") else None
    cov_a, cov_b = a.get("coverage"), b.get("coverage")
    out["coverage"] = max((c for c in (cov_a, cov_b) if c), key=lambda c: c["gaugedBothEnds"], default=None)
    return out


def merge_reports(docs: list[dict[str, Any]]) -> dict[str, Any]:
    """One document from *docs*: tools joined by name (counters and histograms added), findings by
    signature (counts added, the smallest arguments kept), totals recomputed."""
    if not docs:
        raise ValueError("merge_reports needs at least one report")
    tools: dict[str, dict[str, Any]] = {}
    findings: dict[str, dict[str, Any]] = {}
    for doc in docs:
        for tool in doc["tools"]:
            tools[tool["name"]] = _merge_tool(tools[tool["name"]], tool) if tool["name"] in tools else dict(tool)
        for f in doc["findings"]:
            known = findings.get(f["signature"])
            if known is None:
                findings[f["signature"]] = dict(f)
            else:
                count = known["count"] + f["count"]
                if len(repr(f.get("arguments"))) < len(repr(known.get("arguments"))):
                    known = findings[f["signature"]] = dict(f)
                known["count"] = count
    merged_findings = sorted(findings.values(), key=lambda f: (f.get("tool") or "", f["check"], f["signature"]))
    per_tool: dict[str, int] = {}
    for f in merged_findings:
        per_tool[f.get("tool") or ""] = per_tool.get(f.get("tool") or "", 0) + 1
    for name, tool in tools.items():
        tool["findings"] = per_tool.get(name, 0)
    errors = sum(1 for f in merged_findings if f["severity"] == "error")
    targets = sorted({d["target"] for d in docs})
    first = docs[0]
    merged: dict[str, Any] = {
        "format": REPORT_FORMAT,
        "feelerVersion": first["feelerVersion"],
        "command": "merge",
        "target": targets[0] if len(targets) == 1 else " + ".join(targets),
        "server": first.get("server"),
        "protocolVersion": first.get("protocolVersion"),
        "era": first.get("era"),
        "startedAt": min(d["startedAt"] for d in docs),
        "finishedAt": max(d["finishedAt"] for d in docs),
        "durationSeconds": max(d.get("durationSeconds", 0) for d in docs),
        "shard": None,
        "parts": [
            {"command": d["command"], "target": d["target"], "shard": d.get("shard"), "startedAt": d["startedAt"]} for d in docs
        ],
        "totals": {
            "calls": sum(t["calls"] for t in tools.values()),
            "findings": len(merged_findings),
            "errors": errors,
            "warnings": len(merged_findings) - errors,
            "tools": len(tools),
            "restarts": sum(d["totals"]["restarts"] for d in docs),
        },
        "tools": [tools[name] for name in sorted(tools)],
        "findings": merged_findings,
    }
    campaigns = [d["campaign"] for d in docs if d.get("campaign")]
    if campaigns:
        merged["campaign"] = _merge_campaigns(campaigns)
    return merged


def _merge_campaigns(parts: list[dict[str, Any]]) -> dict[str, Any]:
    """The ``campaign`` object of shards that ran side by side: the longest budget, the rounds every
    part finished (the fewest), the restarts after an interruption added up; a call log or an example
    database only when all parts name the same one."""

    def same(key: str) -> Any:
        values = {p.get(key) for p in parts}
        return values.pop() if len(values) == 1 else None

    return {
        "budgetSeconds": max(p.get("budgetSeconds", 0) for p in parts),
        "rounds": min(p.get("rounds", 0) for p in parts),
        "resumed": sum(p.get("resumed", 0) for p in parts),
        "callLog": same("callLog"),
        "exampleDatabase": same("exampleDatabase"),
    }
