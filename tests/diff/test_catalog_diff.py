"""Catalog-level rules, the demo's planted next-release changes, reports, semver mapping and `feeler diff`."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import jsonschema
import pytest
from click.testing import CliRunner

from feeler.catalog import Catalog
from feeler.diff import Change, Direction, Verdict, bump_for, diff_catalogs, overall_bump, render
from feeler.diff.cli import diff as diff_cmd


def _load_planted() -> Any:
    """tests/demo_changes.py, loaded by path (tests/ is not a package)."""
    import importlib.util
    import sys

    path = Path(__file__).resolve().parents[1] / "demo_changes.py"
    spec = importlib.util.spec_from_file_location("feeler_tests_demo_changes", path)
    assert spec and spec.loader
    module = sys.modules.setdefault(spec.name, importlib.util.module_from_spec(spec))
    spec.loader.exec_module(module)  # registered first: its dataclasses look their module up
    return module.CHANGES


PLANTED = _load_planted()


def cat(**kw: Any) -> Catalog:
    base: dict[str, Any] = {"revision": "2025-11-25", "era": "handshake", "supported_revisions": ["2025-11-25"]}
    base.update(kw)
    return Catalog(**base)


def tool(name: str, props: dict[str, Any] | None = None, **extra: Any) -> dict[str, Any]:
    return {"name": name, "inputSchema": {"type": "object", "properties": props or {}}, **extra}


def kinds(report: Any) -> dict[str, Verdict]:
    return {c.rule: c.verdict for c in report.changes}


def test_tool_removed_added_and_rename_hint() -> None:
    old = cat(tools=[tool("get_slot", {"id": {"type": "string"}}), tool("keep")])
    new = cat(tools=[tool("fetch_slot", {"id": {"type": "string"}}), tool("keep")])
    report = diff_catalogs(old, new)
    removed = [c for c in report.changes if c.rule == "tool-removed"]
    assert removed[0].verdict is Verdict.BREAKING and "fetch_slot" in removed[0].hint
    assert kinds(report)["tool-added"] is Verdict.COMPATIBLE


@pytest.mark.parametrize(("old_ann", "new_ann", "verdict"), [
    # MCP 2025-06-18 server/tools ToolAnnotations: readOnlyHint default false, destructiveHint default true.
    ({"readOnlyHint": True}, {"readOnlyHint": False}, Verdict.BREAKING),
    ({"readOnlyHint": True}, {}, Verdict.BREAKING),  # absent = default false: toward danger
    ({"destructiveHint": False}, {"destructiveHint": True}, Verdict.BREAKING),
    ({"destructiveHint": False}, {}, Verdict.BREAKING),  # absent = default true
    ({"destructiveHint": True}, {"destructiveHint": False}, Verdict.COMPATIBLE),
    ({"idempotentHint": True}, {}, Verdict.BREAKING),  # default false
    ({"openWorldHint": False}, {"openWorldHint": True}, Verdict.BREAKING),  # default true
])
def test_annotation_hints_toward_danger(old_ann: dict, new_ann: dict, verdict: Verdict) -> None:
    old = cat(tools=[tool("t", annotations=old_ann)])
    new = cat(tools=[tool("t", annotations=new_ann)])
    assert kinds(diff_catalogs(old, new))["annotation-hint"] is verdict


def test_prompts_resources_capabilities_revisions() -> None:
    old = cat(
        prompts=[{"name": "p", "arguments": [{"name": "a"}, {"name": "b", "required": True}]}, {"name": "gone"}],
        resources=[{"uri": "mem://a", "name": "a"}],
        resource_templates=[{"uriTemplate": "mem://{x}", "name": "x"}],
        capabilities={"tools": {"listChanged": True}, "resources": {}},
        supported_revisions=["2025-06-18", "2025-11-25"],
        server={"name": "s", "version": "1"},
    )
    new = cat(
        prompts=[{"name": "p", "arguments": [{"name": "a", "required": True}, {"name": "c", "required": True}]}],
        capabilities={"tools": {}},
        supported_revisions=["2025-11-25"],
        server={"name": "s", "version": "2"},
    )
    got = {(c.rule, c.message): c.verdict for c in diff_catalogs(old, new).changes}
    expect_breaking = ["prompt-removed", "prompt-argument-removed", "prompt-argument-added",
                       "prompt-argument-required", "resource-removed", "resource-template-removed",
                       "capability-removed", "revision-dropped"]
    for kind in expect_breaking:
        assert Verdict.BREAKING in {v for (k, _), v in got.items() if k == kind}, kind
    assert not any("version" in m for (_, m) in got)  # server version is volatile (PROTOCOL.md section 10)


def test_output_schema_added_and_removed() -> None:
    schema = {"type": "object", "properties": {"n": {"type": "integer"}}, "required": ["n"]}
    with_out = cat(tools=[tool("t", outputSchema=schema)])
    without = cat(tools=[tool("t")])
    assert kinds(diff_catalogs(without, with_out))["output-schema-added"] is Verdict.COMPATIBLE
    removed = [c for c in diff_catalogs(with_out, without).changes if c.rule == "output-schema-removed"][0]
    assert removed.verdict is Verdict.BREAKING
    # jsonschema (reference validator): the witness is a result the old outputSchema forbids.
    assert not jsonschema.Draft202012Validator(schema).is_valid(removed.witness)


def test_description_change_is_review() -> None:
    report = diff_catalogs(cat(tools=[tool("t", description="a")]), cat(tools=[tool("t", description="b")]))
    assert kinds(report) == {"tool-description": Verdict.REVIEW}
    assert report.exit_code == 0


def _change(kind: str, verdict: Verdict, **kw: Any) -> Change:
    return Change(rule=kind, direction=Direction.CATALOG, verdict=verdict, message="m", **kw)


def test_semver_bump_mapping() -> None:
    # Semantic Versioning 2.0.0 (semver.org), items 6-8: PATCH for backward compatible fixes (6),
    # MINOR for backward compatible new functionality (7), MAJOR for incompatible API changes (8).
    assert bump_for(_change("tool-removed", Verdict.BREAKING)) == "major"
    assert bump_for(_change("enum", Verdict.LIKELY_BREAKING)) == "major"
    assert bump_for(_change("tool-added", Verdict.COMPATIBLE)) == "minor"
    assert bump_for(_change("enum", Verdict.COMPATIBLE, addition=True)) == "minor"
    assert bump_for(_change("enum", Verdict.COMPATIBLE)) == "patch"
    assert bump_for(_change("tool-description", Verdict.REVIEW)) == "patch"
    assert overall_bump([]) == "none"
    assert overall_bump([_change("tool-added", Verdict.COMPATIBLE), _change("x", Verdict.REVIEW)]) == "minor"


# -- the demo's next release -----------------------------------------------------------------------
@pytest.fixture(scope="module")
def demo_catalogs() -> tuple[Catalog, Catalog]:
    from feeler.connect import capture_catalog

    return capture_catalog("feeler.demo.server:server"), capture_catalog("feeler.demo.server:next_server")


def _pointer_matches(change: Change, planted: Any) -> bool:
    """Does a reported change sit where tests/demo_changes.py says the planted one is?"""
    if change.subject != f"{planted.kind}:{planted.name}":
        return False
    where = planted.where
    if where == "":
        return change.rule in ("tool-removed", "tool-added", "prompt-removed", "prompt-added")
    if where.startswith("/inputSchema") or where.startswith("/outputSchema"):
        want = Direction.INPUT if where.startswith("/inputSchema") else Direction.OUTPUT
        parts = [p for p in where.split("/")[2:]]
        tail = parts[-1]
        return change.direction is want and (change.keyword_location.endswith(tail) or tail in change.message)
    return where.split("/")[-1] in change.message or where.split("/")[1] in change.rule


def test_demo_next_release_lists_exactly_the_planted_changes(demo_catalogs: tuple[Catalog, Catalog]) -> None:
    report = diff_catalogs(*demo_catalogs)
    assert len(report.changes) == len(PLANTED), render(report)
    unmatched = list(report.changes)
    for planted in PLANTED:
        hits = [c for c in unmatched if _pointer_matches(c, planted)]
        assert hits, f"planted change not reported: {planted}\n{render(report)}"
        assert hits[0].verdict.value == planted.verdict, (planted, hits[0].to_json())
        unmatched.remove(hits[0])
    assert not unmatched


def test_feeler_diff_exits_1_on_the_demo(tmp_path: Path, demo_catalogs: tuple[Catalog, Catalog]) -> None:
    old, new = demo_catalogs
    (tmp_path / "old.json").write_text(old.dumps())
    (tmp_path / "new.json").write_text(new.dumps())
    runner = CliRunner()
    result = runner.invoke(diff_cmd, [str(tmp_path / "old.json"), str(tmp_path / "new.json"), "--format", "json"])
    assert result.exit_code == 1, result.output
    data = json.loads(result.output)
    assert data["bump"] == "major" and data["counts"]["breaking"] == 6
    md = runner.invoke(diff_cmd, [str(tmp_path / "old.json"), str(tmp_path / "new.json"), "--format", "markdown"])
    assert md.exit_code == 1 and md.output.startswith("### feeler diff: breaking changes") and "| verdict |" in md.output
    same = runner.invoke(diff_cmd, [str(tmp_path / "old.json"), str(tmp_path / "old.json")])
    assert same.exit_code == 0 and "semver bump: none" in same.output


def test_feeler_diff_live_target_against_file(tmp_path: Path, demo_catalogs: tuple[Catalog, Catalog]) -> None:
    (tmp_path / "old.json").write_text(demo_catalogs[0].dumps())
    result = CliRunner().invoke(diff_cmd, [str(tmp_path / "old.json"), "feeler.demo.server:next_server"])
    assert result.exit_code == 1, result.output
    assert "tool 'order_services' removed" in result.output


def test_feeler_diff_usage_error_exits_2(tmp_path: Path) -> None:
    bad = tmp_path / "bad.json"
    bad.write_text("{not json")
    result = CliRunner().invoke(diff_cmd, [str(bad), str(bad)])
    assert result.exit_code == 2 and "bad.json:1:2" in result.output
