"""Self-fuzzing: hypothesis-generated garbage fed to each of feeler's parsers through its public entry points.

Every example must end in a result or in a :class:`feeler.errors.FeelerError` (one clear line), never in
another exception. The default run draws a bounded number of examples per parser (``ci``); the
``nightly`` depth (``-m slow``) draws many more. ``FEELER_FUZZ_EXAMPLES`` overrides the ``ci`` count.
References: TOML 1.0 (config), RFC 8259 (JSON files), JSON-RPC 2.0 section 5 and MCP 2025-11-25
basic/transports "stdio" (server answers: one UTF-8 JSON-RPC message per line).
"""

from __future__ import annotations

import base64
import json
import os
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from feeler.errors import FeelerError

CI_EXAMPLES = int(os.environ.get("FEELER_FUZZ_EXAMPLES", "30"))
DEPTHS = [pytest.param(CI_EXAMPLES, id="ci"), pytest.param(1000, id="nightly", marks=pytest.mark.slow)]
SERVERS = Path(__file__).resolve().parents[1] / "servers"

scalars = st.one_of(st.none(), st.booleans(), st.integers(-(2**70), 2**70), st.floats(allow_nan=False),
                    st.text(max_size=20))
json_values = st.recursive(scalars, lambda inner: st.one_of(
    st.lists(inner, max_size=4), st.dictionaries(st.text(max_size=10), inner, max_size=4)), max_leaves=20)


def _run(depth: int, strategy: st.SearchStrategy[Any], body: Callable[[Any], None]) -> None:
    """Run *body* on *depth* examples of *strategy* (a fresh hypothesis test per call)."""
    test = settings(max_examples=depth, deadline=None, database=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])(
        given(strategy)(body))
    test()


def _clear(exc: FeelerError) -> None:
    text = str(exc)
    assert text and "\n" not in text and "Traceback" not in text, text


# -- config -----------------------------------------------------------------------------------------

KEYS = ["targets", "include", "exclude", "budgets", "timeout", "seed", "env", "baselines", "strict_go", "values"]
toml_keys = st.one_of(st.sampled_from(KEYS), st.from_regex(r"[a-z_]{1,8}", fullmatch=True))


def _toml(value: Any) -> str:
    """A TOML 1.0 inline rendering of a JSON-like value (null has no TOML form: an empty string)."""
    if value is None:
        return '""'
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return repr(value) if not isinstance(value, float) or value == value else "nan"
    if isinstance(value, str):
        return json.dumps(value)
    if isinstance(value, list):
        return "[" + ", ".join(_toml(v) for v in value) + "]"
    return "{" + ", ".join(f"{json.dumps(k)} = {_toml(v)}" for k, v in value.items()) + "}"


config_texts = st.one_of(
    st.binary(max_size=200).map(lambda b: b"[tool.feeler]\n" + b),
    st.dictionaries(toml_keys, json_values, max_size=4).map(
        lambda d: ("[tool.feeler]\n" + "".join(f"{k} = {_toml(v)}\n" for k, v in d.items())).encode()),
)


@pytest.mark.parametrize("depth", DEPTHS)
def test_config_garbage_is_a_clear_error(depth: int, tmp_path: Path) -> None:
    from feeler.config import load_config

    path = tmp_path / "pyproject.toml"

    def config() -> None:
        load_config(str(path)).targets()

    _fuzz_files(depth, [path], config_texts, config)


# -- JSON files: baseline, catalog, replay ------------------------------------------------------------

def _catalog_like(value: Any) -> Any:
    base = {"format": "feeler-catalog/2", "protocolVersion": "2025-11-25", "era": "handshake"}
    if isinstance(value, dict) and value.get("format") == "old":  # the older format, still read
        base = {"format": "feeler-catalog/1", "revision": "2025-11-25", "era": "handshake"}
        value = {k: v for k, v in value.items() if k != "format"}
    return {**base, **value} if isinstance(value, dict) else value


def _nest(levels: int, opener: str, leaf: str = "1") -> str:
    """JSON text nested *levels* deep, written as text (``json.dumps`` itself would recurse)."""
    closer = {"[": "]", '{"a":': "}"}[opener]
    return opener * levels + leaf + closer * levels


#: Deep nesting (RFC 8259 section 9 lets a parser limit depth): past feeler's limits and Python's recursion.
deep_texts = st.builds(_nest, st.integers(1, 3000), st.sampled_from(["[", '{"a":']))
#: A catalog whose tool holds a deep inputSchema or outputSchema (feeler._limits, MAX_DEPTH 64).
deep_catalogs = st.builds(
    lambda levels, key: '{"format":"feeler-catalog/2","protocolVersion":"2025-11-25","era":"handshake","tools":[{"name":"t","'
    + key + '":' + '{"type":"object","properties":{"a":' * levels + '{"type":"string"}' + "}}" * levels + "}]}",
    st.integers(1, 600), st.sampled_from(["inputSchema", "outputSchema"]))

json_files = st.one_of(
    st.binary(max_size=300),
    deep_texts.map(str.encode),
    deep_catalogs.map(str.encode),
    json_values.map(lambda v: json.dumps(v).encode()),
    st.dictionaries(st.sampled_from(["tools", "prompts", "resources", "server", "capabilities", "baseline",
                                     "supportedRevisions", "supportedVersions", "protocolVersion", "format"]),
                    st.one_of(st.just("old"), json_values), max_size=4)
    .map(_catalog_like).map(lambda v: json.dumps(v).encode()),
)


def _fuzz_files(depth: int, paths: list[Path], strategy: st.SearchStrategy[bytes], *readers: Callable[[], Any]) -> None:
    """Write each example to every path in *paths*, then run each reader: a result or a clear error."""

    def body(data: bytes) -> None:
        for path in paths:
            path.write_bytes(data)
        for reader in readers:
            try:
                reader()
            except FeelerError as exc:
                _clear(exc)

    _run(depth, strategy, body)


@pytest.mark.parametrize("depth", DEPTHS)
def test_baseline_garbage_is_a_clear_error(depth: int, tmp_path: Path) -> None:
    from feeler.baseline.store import BaselineStore
    from feeler.diff import diff_catalogs

    store = BaselineStore(tmp_path, "t")
    store.folder.mkdir(parents=True)

    def catalog() -> None:
        approved = store.read_catalog()
        diff_catalogs(approved, approved, samples=2)

    _fuzz_files(depth, [store.catalog_path, store.outputs_path], json_files, catalog, store.read_outputs)


@pytest.mark.parametrize("depth", DEPTHS)
def test_catalog_file_garbage_is_a_clear_error(depth: int, tmp_path: Path) -> None:
    from feeler.diff import diff_catalogs
    from feeler.diff.cli import load_side

    path = tmp_path / "catalog.json"

    def catalog() -> None:
        loaded, _ = load_side(str(path))
        diff_catalogs(loaded, loaded, samples=2)

    _fuzz_files(depth, [path], json_files, catalog)


@pytest.mark.parametrize("depth", DEPTHS)
def test_replay_file_garbage_is_a_clear_error(depth: int, tmp_path: Path) -> None:
    from feeler.check.replay import load_replay

    path = tmp_path / "r.replay.json"
    replays = st.one_of(json_files, st.dictionaries(st.sampled_from(["format", "target", "request", "finding"]),
                                                    json_values).map(lambda d: json.dumps(d).encode()))
    _fuzz_files(depth, [path], replays, lambda: load_replay(str(path)))


# -- report files (feeler report render / merge) ----------------------------------------------------------

REPORT_KEYS = ["format", "feelerVersion", "command", "target", "server", "protocolVersion", "era", "startedAt",
               "finishedAt", "durationSeconds", "shard", "parts", "campaign", "totals", "tools", "findings"]
FINDING = {"check": "no_crash", "severity": "error", "tool": "t", "kind": "go", "message": "m", "count": 1, "signature": "s"}


def _valid_report() -> dict[str, Any]:
    from feeler.check.runner import RunReport
    from feeler.report.document import build_report, validate_report
    from feeler.target import Target

    doc = build_report(RunReport(target=Target(kind="stdio", command=("server",))))
    doc["findings"] = [dict(FINDING)]
    assert validate_report(doc) == []  # the base is a real, valid report document
    return doc


def _report_variant(changes: dict[str, Any], drop: list[str], finding: dict[str, Any]) -> bytes:
    doc = _valid_report()
    doc.update(changes)
    for key in drop:
        doc.pop(key, None)
    if isinstance(doc.get("findings"), list):
        doc["findings"].append({**FINDING, **finding})
    return json.dumps(doc).encode()


report_files = st.one_of(
    json_files,
    st.builds(_report_variant, st.dictionaries(st.sampled_from(REPORT_KEYS), json_values, max_size=3),
              st.lists(st.sampled_from(REPORT_KEYS), max_size=2),
              st.dictionaries(st.sampled_from([*FINDING, "arguments", "replay", "keywordLocation"]), json_values, max_size=3)),
    st.builds(lambda levels: json.dumps({**_valid_report(), "findings": [{**FINDING, "arguments": "$DEEP"}]})
              .replace('"$DEEP"', _nest(levels, "[")).encode(), st.integers(1, 3000)),
)


@pytest.mark.parametrize("depth", DEPTHS)
def test_report_file_garbage_is_a_clear_error(depth: int, tmp_path: Path) -> None:
    """What ``feeler report render`` and ``report merge`` read: every format renders a document that loads."""
    from feeler.report import load_report, merge_reports, render
    from feeler.report.cli import _FORMAT_NAMES

    path = tmp_path / "feeler-report.json"

    def report() -> None:
        doc = load_report(str(path))
        for fmt in _FORMAT_NAMES:
            render(doc, fmt)
        render(merge_reports([doc, load_report(str(path))]), "markdown")

    _fuzz_files(depth, [path], report_files, report)


# -- server answers -------------------------------------------------------------------------------------

envelopes = st.fixed_dictionaries(
    {},
    optional={"jsonrpc": st.one_of(st.just("2.0"), json_values), "id": st.one_of(st.just("$ID"), json_values),
              "result": json_values, "error": json_values, "method": st.one_of(st.text(max_size=10), json_values)},
)
answers = st.one_of(
    st.binary(max_size=200).map(lambda b: b.replace(b"\n", b" ") + b"\n"),
    # deep results and error data, and integers past Python's digit limit: valid JSON feeler cannot read
    st.builds(lambda levels, key: ('{"jsonrpc":"2.0","id":$ID,"' + key + '":' + _nest(levels, "[") + "}\n").encode(),
              st.integers(1, 3000), st.sampled_from(["result", "error"])),
    st.integers(1, 6000).map(lambda digits: ('{"jsonrpc":"2.0","id":$ID,"result":{"content":[],"n":' + "9" * digits
                                             + "}}\n").encode()),
    envelopes.map(lambda e: json.dumps(e).replace('"$ID"', "$ID").encode() + b"\n"),
    json_values.map(lambda v: json.dumps(v).encode() + b"\n"),
)


@pytest.mark.parametrize("depth", DEPTHS)
def test_server_answer_garbage_is_a_clear_error(depth: int) -> None:
    """One real server process for all examples (reopened when an answer breaks the session)."""
    from feeler.connect import open_session
    from feeler.target import Target

    target = Target(kind="stdio", command=(sys.executable, str(SERVERS / "says_what_it_is_told.py")))
    holder: dict[str, Any] = {}

    def session() -> Any:
        if "s" not in holder:
            holder["s"] = open_session(target, timeout=5.0)
        return holder["s"]

    def body(data: bytes) -> None:
        try:
            session().call_tool("say", {"b64": base64.b64encode(data).decode()}, timeout=0.5)
        except FeelerError as exc:
            _clear(exc)
            holder.pop("s").close()  # start clean: the stream may hold the rest of a broken answer

    try:
        _run(depth, answers, body)
    finally:
        if "s" in holder:
            holder["s"].close()
