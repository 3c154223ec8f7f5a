"""Catalog audit checks: each against a server that fails it (tests/servers/sloppy_catalog.py) and one
that passes it (tests/servers/clean_reference.py), and the audit of the demo and of two real third-party
servers with every finding reviewed here, with the reason it is real.

References: JSON Schema 2020-12 Core 6.5 (unknown keywords are ignored: a mistaken keyword enforces
nothing) and Validation 6 (the keywords meant); the meta-schemas as loaded by `jsonschema`; MCP 2025-11-25
server/tools (tool names; description; ToolAnnotations: destructiveHint is meaningful only when
readOnlyHint is false); MCP 2025-06-18 server/tools (outputSchema is an object schema); third-party
servers mcp-server-time (PyPI) and @modelcontextprotocol/server-everything (npm).
"""

from __future__ import annotations

import json
import shutil
import sys
from pathlib import Path
from typing import Any

import pytest
from check_helpers import PY, SERVERS, run_cli

REPO = Path(__file__).resolve().parents[2]
EVERYTHING = REPO / "third_party_servers" / "node_modules" / ".bin" / "mcp-server-everything"


def _audit(*argv: str) -> tuple[int, dict[str, Any]]:
    code, out, err = run_cli(["audit", "--format", "json", "--timeout", "30", *argv])
    assert out.strip(), err[-1500:]
    return code, json.loads(out)


def _found(report: dict[str, Any]) -> set[tuple[str, str, str]]:
    """(check, tools joined, error class) of every finding."""
    return {(f["check"], ",".join(f["tools"]) or "-", f["signature"].split("|")[-1]) for f in report["findings"]}


@pytest.fixture(scope="module")
def sloppy() -> tuple[int, dict[str, Any]]:
    return _audit("--max-tools", "5", "--max-catalog-tokens", "200", "--", PY, str(SERVERS / "sloppy_catalog.py"))


@pytest.fixture(scope="module")
def clean() -> tuple[int, dict[str, Any]]:
    return _audit("--", PY, str(SERVERS / "clean_reference.py"))


SLOPPY_EXPECTED = {
    ("schema_keywords", "quote_stay", "mistaken:ge"),  # Validation 6.2.4 minimum meant
    ("schema_keywords", "quote_stay", "mistaken:le"),  # Validation 6.2.2 maximum meant
    ("schema_keywords", "quote_stay", "mistaken:maxlength"),  # Validation 6.3.1 maxLength meant
    ("schema_keywords", "quote_stay", "mistaken:regex"),  # Validation 6.3.3 pattern meant
    ("schema_keywords", "quote_stay", "mistaken:required"),  # Validation 6.5.3: required is an array on the parent
    ("schema_keywords", "quote_stay", "mistaken:descripton"),  # a misspelt annotation (warning)
    ("schema_usable", "quote_stay", "invalid-schema"),  # `required: true` also breaks the 2020-12 meta-schema
    ("tool_names_unique", "quote_stay", "duplicate"),
    ("annotations_agree", "purge_ledger", "read-only-destructive"),
    ("output_schema_valid", "tide_level", "output-root-type"),
    ("output_schema_valid", "berth_depth", "output-meta-schema"),  # "metres" is no type: reported once, not by schema_usable too
    ("descriptions", "tide_level", "tool"),
    ("descriptions", "tide_level", "parameters"),
    ("descriptions", "quote_stay", "parameters"),  # `season` has "descripton", so no description
    ("catalog_size", "-", "tools"),
    ("catalog_size", "-", "tokens"),
    ("distinct_descriptions", "fuel_price,fuel_price_north", "near-duplicate:fuel_price"),
}


def test_sloppy_catalog_fails_each_audit_check(sloppy: tuple[int, dict[str, Any]]) -> None:
    code, report = sloppy
    assert code == 1
    assert _found(report) == SLOPPY_EXPECTED
    by_class = {f["signature"].split("|")[-1]: f for f in report["findings"]}
    assert "did you mean minimum" in by_class["mistaken:ge"]["message"]
    assert "keywordLocation /properties/nights/ge" in by_class["mistaken:ge"]["message"]
    assert by_class["mistaken:descripton"]["severity"] == "warning"


def test_clean_reference_passes_the_audit_checks(clean: tuple[int, dict[str, Any]]) -> None:
    """The clean reference server passes every audit check but one real warning: its parameters carry no
    description (a model reads only the names `value`, `unit_from`... to fill them)."""
    code, report = clean
    assert code == 0
    assert {f["check"] for f in report["findings"]} == {"descriptions"}
    assert {f["signature"].split("|")[-1] for f in report["findings"]} == {"parameters"}


DESCRIPTIONS = json.loads((Path(__file__).parent / "corpus" / "descriptions.json").read_text(encoding="utf-8"))


def test_near_duplicate_heuristic_on_the_corpus() -> None:
    """Each group of near-duplicate descriptions is one group listing all its tools; no family of tools told
    apart by a number, an identifier or a word of their names is flagged (common practice: a model tells
    tools apart by their descriptions)."""
    from feeler.check.audit import near_duplicate_groups

    def groups(sample: list[dict[str, str]]) -> list[list[str]]:
        return [names for names, _ in near_duplicate_groups([(t["name"], t["description"]) for t in sample])]

    right = [g for g in DESCRIPTIONS["duplicate"] if groups(g) == [sorted(t["name"] for t in g)]]
    flagged = [g for g in DESCRIPTIONS["distinct"] if groups(g)]
    print(f"\nnear-duplicate heuristic: {len(right)}/{len(DESCRIPTIONS['duplicate'])} duplicate groups found whole, "
          f"{len(flagged)}/{len(DESCRIPTIONS['distinct'])} distinct groups flagged")
    assert len(right) == len(DESCRIPTIONS["duplicate"]) and flagged == []
    everything = [t for g in DESCRIPTIONS["duplicate"] + DESCRIPTIONS["distinct"] for t in g]
    assert len(groups(everything)) == len(DESCRIPTIONS["duplicate"])  # one catalog: one group per duplicate set


def test_audit_runs_inside_check_and_only_catalog_checks_in_audit() -> None:
    """`feeler audit` refuses a check that needs calls; `feeler check` runs the audit checks too."""
    code, out, err = run_cli(["audit", "--only-check", "no_crash", "--", PY, str(SERVERS / "sloppy_catalog.py")])
    assert code == 2 and "looks at calls" in err
    code, out, err = run_cli(["check", "--format", "json", "--samples", "0", "--no-probes", "--only-check", "schema_keywords",
                              "--only-check", "tool_names_unique", "--", PY, str(SERVERS / "sloppy_catalog.py")])
    found = {(f["check"], f["signature"].split("|")[-1]) for f in json.loads(out)["findings"]}
    assert ("schema_keywords", "mistaken:ge") in found and ("tool_names_unique", "duplicate") in found


# -- the demo and two real third-party servers: every finding reviewed --------------------------------------

#: The demo (Saltmarsh Quay). Its schemas are hand-written without parameter descriptions: real, a model sees
#: only the names (`nights`, `season`...) to understand what to send. Nothing else is wrong in its catalog.
DEMO_EXPECTED = {("descriptions", t, "parameters") for t in
                 ("book_berth", "cancel_booking", "list_berths", "order_services", "quote_fee", "register_vessel")}

#: server-everything (npm). Reviewed one by one:
#: - get-resource-reference: its `resourceType` parameter has no description (real: the enum alone says little).
#: - gzip-file-as-resource: the default of its `data` parameter is a URL on an outside host that the tool
#:   fetches when called with the default; a link to a host the user did not list (real, a warning).
EVERYTHING_EXPECTED = {
    ("descriptions", "get-resource-reference", "parameters"),
    ("poisoned_text", "gzip-file-as-resource", "foreign-link:inputSchema/properties/data/default"),
}


def test_audit_of_the_demo() -> None:
    code, report = _audit("--", PY, "-m", "feeler.demo")
    assert code == 0
    assert _found(report) == DEMO_EXPECTED


def test_audit_of_mcp_server_time() -> None:
    """mcp-server-time: names, schemas, descriptions and annotations are clean; nothing to report."""
    import os

    found = shutil.which("mcp-server-time") or shutil.which("mcp-server-time", path=os.path.dirname(sys.executable))
    if found is None:
        pytest.skip("mcp-server-time is not installed: python -m pip install -e '.[test]'")
    code, report = _audit("--", found)
    assert code == 0 and _found(report) == set()


@pytest.mark.thirdparty
def test_audit_of_server_everything() -> None:
    if shutil.which("node") is None or not EVERYTHING.exists():
        pytest.skip("server-everything needs Node.js and .ci/run (npm install into third_party_servers/)")
    code, report = _audit("--env", "GZIP_ALLOWED_DOMAINS=127.0.0.1", "--", str(EVERYTHING), "stdio")
    assert code == 0
    assert _found(report) == EVERYTHING_EXPECTED
