"""``feeler cases SCHEMA_FILE`` through click's CliRunner (in-process).

References: JSON Lines (one JSON value a line, common practice); ``jsonschema`` as the reference
validator for the printed go cases; click's exit code 2 for usage errors.
"""

from __future__ import annotations

import json
import pathlib

import jsonschema
from click.testing import CliRunner

from feeler.generate.cli import cases

CORPUS = pathlib.Path(__file__).parent / "corpus"


def run(*args: str) -> object:
    return CliRunner().invoke(cases, list(args))


def test_prints_json_lines() -> None:
    path = CORPUS / "ferry_timetable.json"
    result = run(str(path), "--samples", "3", "--sample-seed", "7")
    assert result.exit_code == 0, result.output
    lines = [json.loads(line) for line in result.stdout.splitlines()]
    assert {"kind", "keyword", "instanceLocation", "arguments", "keywordLocation", "source", "error"} <= set(lines[0])
    kinds = {line["kind"] for line in lines}
    assert kinds == {"go", "no-go"}
    assert sum(line["source"] == "sampled" for line in lines) == 3
    schema = json.loads(path.read_text(encoding="utf-8"))
    validator = jsonschema.Draft202012Validator(schema, format_checker=jsonschema.Draft202012Validator.FORMAT_CHECKER)
    for line in lines:
        assert validator.is_valid(line["arguments"]) == (line["kind"] == "go")
    assert "refuted by the oracle" in result.stderr


def test_same_seed_same_output() -> None:
    path = str(CORPUS / "recipe_scaler.json")
    assert run(path, "--samples", "4", "--sample-seed", "1").stdout == run(path, "--samples", "4", "--sample-seed", "1").stdout


def test_tool_object_and_kind_filter(tmp_path: pathlib.Path) -> None:
    tool = {"name": "scale", "inputSchema": {"type": "object", "properties": {"n": {"type": "integer", "minimum": 2}}}}
    path = tmp_path / "tool.json"
    path.write_text(json.dumps(tool), encoding="utf-8")
    result = run(str(path), "--kind", "no-go")
    assert result.exit_code == 0
    lines = [json.loads(line) for line in result.stdout.splitlines()]
    assert lines and all(line["kind"] == "no-go" for line in lines)
    assert {"keyword": "minimum", "instanceLocation": "/n"}.items() <= next(line for line in lines if line["keyword"] == "minimum").items()


def test_usage_errors(tmp_path: pathlib.Path) -> None:
    missing = run(str(tmp_path / "absent.json"))
    assert missing.exit_code == 2 and "cannot read" in missing.stderr
    broken = tmp_path / "broken.json"
    broken.write_text('{"type": "object",\n  "properties": }', encoding="utf-8")
    bad_json = run(str(broken))
    assert bad_json.exit_code == 2 and "line 2, column 17" in bad_json.stderr
    remote = tmp_path / "remote.json"
    remote.write_text(json.dumps({"properties": {"a": {"$ref": "https://example.org/a.json"}}}), encoding="utf-8")
    problem = run(str(remote))
    assert problem.exit_code == 2 and "[remote-ref]" in problem.stderr
