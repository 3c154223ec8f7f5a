"""One spelling per idea across the command line, the check list, the config keys and the JSON reports.

The names are the project's own decision (DEVELOPERS.md, "Vocabulary"); this test walks what a user sees and fails on a second spelling of the same idea.
JSON key style: camelCase like MCP's own messages (MCP 2025-11-25 schema); locations are JSON Pointers
(RFC 6901).
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from feeler.cli import COMMANDS, run

#: idea -> (its one name as users see it, the former or borrowed spellings that must not appear)
VOCABULARY: dict[str, tuple[str, tuple[str, ...]]] = {
    "go counters": ('"go": {"calls"', ("goCalls", "goEntered", "goIsError")),
    "no-go counters": ('"noGo"', ("nogoCalls", "nogoStoppedProtocol", "nogoStoppedIsError", "nogoEntered",
                                  "nogoVerdicts", '"nogo"')),
    "check: go cases must be accepted": ("go_enters", ("go_accepted",)),
    "check: no-go cases must be stopped": ("nogo_stops", ("nogo_rejected",)),
    "check: a tool accepts some go case": ("gate_opens", ("accepts_some_go",)),
    "how many cases": ("--depth", ("--feeler-profile", "--profile", "profile =")),
    "sampled go cases per tool": ("--samples", ("--go-examples", "go_examples", "drawn")),
    "seed of sampled cases": ("--sample-seed", ("--seed ",)),
    "isError on a go case is a finding": ("--strict-go", ("--strict ", "--feeler-strict ")),
    "protocol version": ("--protocol-version", ("--revision", "supportedRevisions", "protocol revision", "negotiated revision")),
    "code revision in a baseline header": ("--source-ref", ()),
    "protocol eras": ("stateless", ("modern",)),
    "run only some checks": ("--only-check", ("--check NAME",)),
    "schema location": ("keywordLocation", ("schemaPath", "schema_path")),
    "instance location": ("instanceLocation", ("instancePath", '"path"')),
    "where a case's values came from": ("source", ('"origin"', "hypothesis\"")),
    "malformed request": ("probe", ("[protocol]",)),
    "keyword coverage": ("gaugedBothEnds", ('"both"',)),
    "a diff rule": ("rule", ()),
}
FORBIDDEN = sorted({old for _, olds in VOCABULARY.values() for old in olds})


def _help(*args: str, capsys: pytest.CaptureFixture[str]) -> str:
    assert run([*args, "--help"]) == 0
    return capsys.readouterr().out


def _assert_clean(text: str, where: str) -> None:
    # Words and option names count whatever their case ("Drawn" is "drawn"); JSON keys and quoted names
    # (with capitals or quotes: "nogoVerdicts", '"nogo"') count as spelt, so that "noGo" is not "nogo".
    for old in FORBIDDEN:
        exact = old != old.lower() or '"' in old
        found = re.search(re.escape(old), text, flags=0 if exact else re.IGNORECASE)
        assert found is None, f"{where}: the former spelling {old!r} is shown as {found.group(0)!r}; use the vocabulary's name"


def test_the_command_line_help_uses_one_spelling(capsys: pytest.CaptureFixture[str]) -> None:
    texts = {"feeler --help": _help(capsys=capsys)}
    for name in COMMANDS:
        texts[f"feeler {name} --help"] = _help(name, capsys=capsys)
    for where, text in texts.items():
        _assert_clean(text, where)
    check_help = texts["feeler check --help"]
    for name in ("--depth", "--samples", "--sample-seed", "--strict-go", "--protocol-version", "--only-check",
                 "--skip-check"):
        assert name in check_help
    assert "--source-ref" in texts["feeler approve --help"]
    assert "--samples" in texts["feeler cases --help"] and "--sample-seed" in texts["feeler cases --help"]


def test_the_check_list_uses_one_spelling(capsys: pytest.CaptureFixture[str]) -> None:
    assert run(["check", "--list-checks"]) == 0
    text = capsys.readouterr().out
    _assert_clean(text, "feeler check --list-checks")
    names = {line.split()[0] for line in text.splitlines() if line and not line.startswith(" ")}
    assert {"go_enters", "nogo_stops", "gate_opens"} <= names


def test_the_config_keys_use_one_spelling() -> None:
    from feeler.config import _KEYS, RENAMED_KEYS

    assert {"samples", "sample_seed", "depth", "protocol_version", "only_checks", "skip_checks", "strict_go"} <= set(_KEYS)
    assert not set(RENAMED_KEYS) & set(_KEYS)  # a former key is only read, never listed as a key


def _camel(keys: object) -> None:
    if isinstance(keys, dict):
        for key, value in keys.items():
            assert re.fullmatch(r"[a-z][A-Za-z0-9]*", key), f"JSON key {key!r} is not camelCase"
            if key not in ("arguments", "tools", "server", "witness", "latencyBudget"):
                _camel(value)
    elif isinstance(keys, list):
        for value in keys:
            _camel(value)


def test_the_json_reports_use_one_spelling(tmp_path: Path) -> None:
    from check_helpers import faulty, run_checks

    from feeler.check.report import report_json
    from feeler.diff import diff_catalogs

    report = run_checks(faulty("accepts-anything"), ["nogo_stops", "bounds_honoured"], samples=1, replay_dir=str(tmp_path))
    text = report_json(report)
    data = json.loads(text)
    _assert_clean(text, "feeler check --format json")
    _camel({k: v for k, v in data.items() if k != "tools"})
    for stats in data["tools"].values():
        _camel(stats)
    finding = data["findings"][0]
    assert finding["instanceLocation"] == "" or finding["instanceLocation"].startswith("/")
    assert finding["keywordLocation"].startswith("/") and finding["keywordLocation"].endswith("/" + finding["keyword"])
    assert "protocolVersion" in data and "protocolVersion" in finding
    # the catalog and the diff
    catalog = report.catalog
    assert catalog is not None
    cat_json = catalog.to_json()
    assert {"protocolVersion", "supportedVersions"} <= set(cat_json) and "revision" not in cat_json
    changed = json.loads(json.dumps(cat_json))
    changed["tools"][0]["inputSchema"]["properties"]["text"]["maxLength"] = 1
    from feeler.catalog import Catalog

    diff = diff_catalogs(catalog, Catalog.from_json(changed)).to_json()
    _camel({k: v for k, v in diff.items() if k != "counts"})  # counts are keyed by verdict values
    change = diff["changes"][0]
    assert "rule" in change and "kind" not in change
    assert change["keywordLocation"].startswith("/") and change["instanceLocation"].startswith("/")


def _walk_keys(value: object, where: str, skip: tuple[str, ...] = ("arguments", "tools", "server", "witness",
                                                                    "latencyBudget", "learnedFrom", "values")) -> None:
    """Every JSON key is camelCase (MCP's own style), below keys that hold user data."""
    if isinstance(value, dict):
        for key, inner in value.items():
            assert re.fullmatch(r"[a-z][A-Za-z0-9]*", str(key)), f"{where}: JSON key {key!r} is not camelCase"
            if key not in skip:
                _walk_keys(inner, where, skip)
    elif isinstance(value, list):
        for inner in value:
            _walk_keys(inner, where, skip)


def test_every_written_json_uses_one_spelling(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    """The report document, replay files, the call log, campaign state and `feeler cases`: one spelling per
    idea, camelCase keys, counters named as in the report document (DEVELOPERS.md, "Vocabulary")."""
    from check_helpers import faulty

    server = faulty("accepts-anything")
    command = ["--", *server.command]
    camp = tmp_path / "camp"
    assert run(["campaign", "--budget", "3s", "--samples", "2", "--folder", str(camp), "--report-dir",
                str(tmp_path / "rep"), "--replay-dir", str(tmp_path / "replays"), "--example-db", "none", *command]) == 1
    capsys.readouterr()
    texts: dict[str, str] = {
        "feeler-report.json": (tmp_path / "rep" / "feeler-report.json").read_text(encoding="utf-8"),
        "campaign state.json": (camp / "state.json").read_text(encoding="utf-8"),
    }
    for line_no, line in enumerate((camp / "calls.jsonl").read_text(encoding="utf-8").splitlines()[:50]):
        texts[f"calls.jsonl line {line_no + 1}"] = line
    replays = sorted((tmp_path / "replays").rglob("*.replay.json"))
    assert replays, "the campaign wrote no replay file"
    for path in replays:
        texts[str(path.relative_to(tmp_path))] = path.read_text(encoding="utf-8")
    assert run(["check", "--format", "json", "--samples", "1", "--no-probes", "--replay-dir", str(tmp_path / "r2"),
                *command]) == 1
    texts["feeler check --format json"] = capsys.readouterr().out
    schema = tmp_path / "schema.json"
    schema.write_text(json.dumps({"type": "object", "properties": {"n": {"type": "integer", "minimum": 1}},
                                  "required": ["n"]}), encoding="utf-8")
    assert run(["cases", str(schema)]) == 0
    texts["feeler cases"] = capsys.readouterr().out
    assert run(["check", "--dry-run", "--samples", "1", *command]) == 0
    texts["feeler check --dry-run"] = capsys.readouterr().out
    for where, text in texts.items():
        _assert_clean(text, where)
        for line in text.splitlines() if where in ("feeler cases", "feeler check --dry-run") else [text]:
            _walk_keys(json.loads(line), where)
    doc = json.loads(texts["feeler-report.json"])
    check = json.loads(texts["feeler check --format json"])
    tool = doc["tools"][0]
    # the same counters under the same names in both outputs
    assert set(tool["go"]) == set(check["tools"][tool["name"]]["go"]) == {"calls", "entered", "stopped"}
    assert set(tool["noGo"]) == set(check["tools"][tool["name"]]["noGo"]) == {"calls", "stoppedByCode",
                                                                              "stoppedByIsError", "entered"}
