"""Authorization checks, each against a loopback server that passes it (tests/servers/guarded_http.py) and
one that fails it (the same server with one --fault).

References: RFC 6750 section 3 (the WWW-Authenticate Bearer challenge) and 3.1 (invalid_token -> 401);
RFC 9728 sections 2, 3 and 5.1 (Protected Resource Metadata: resource, authorization_servers, the
resource_metadata challenge parameter); MCP 2025-11-25 basic/authorization (servers MUST serve the
metadata and name at least one authorization server) and basic/transports (Security: an invalid Origin
gets 403); MCP 2025-11-25 server/tools (destructiveHint).
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
from check_helpers import SERVERS, run_cli
from test_servers_smoke import ready_url, started

MAIN, LOW = "main-token-4b1d9e0c7a", "low-token-93ac51e2f0"
ENV = {"FEELER_MAIN_TOKEN": MAIN, "FEELER_LOW_TOKEN": LOW}


@pytest.fixture(scope="module")
def servers(tmp_path_factory: pytest.TempPathFactory) -> Iterator[dict[str | None, str]]:
    """One guarded server per fault (and one without), started once for the module, ended by pid."""
    tmp = tmp_path_factory.mktemp("auth")
    faults = [None, "no-resource-metadata", "no-metadata", "no-auth-servers", "any-token", "no-origin-check", "purge-for-all", "open"]
    stack = [started(tmp, str(SERVERS / "guarded_http.py"), "--port", "0", *(["--fault", f] if f else []), env=ENV) for f in faults]
    wires = []
    try:
        for ctx in stack:
            wires.append(ctx.__enter__())
        yield {f: ready_url(w) for f, w in zip(faults, wires)}
    finally:
        for ctx in stack[: len(wires)]:
            ctx.__exit__(None, None, None)


def _auth(url: str, monkeypatch: pytest.MonkeyPatch, *extra: str) -> tuple[int, set[tuple[str, str]], dict[str, Any]]:
    monkeypatch.setenv("FEELER_MAIN_TOKEN", MAIN)
    monkeypatch.setenv("FEELER_LOW_TOKEN", LOW)
    code, out, err = run_cli(["auth", url, "--bearer-env", "FEELER_MAIN_TOKEN", "--bearer-env", "low=FEELER_LOW_TOKEN",
                              "--format", "json", *extra])
    assert out.strip(), err
    data = json.loads(out)
    assert MAIN not in out and LOW not in out  # tokens never printed
    return code, {(f["check"], f["signature"].split("|")[-1]) for f in data["findings"]}, data


def test_a_guarded_server_passes_every_check(servers: dict[str | None, str], monkeypatch: pytest.MonkeyPatch) -> None:
    code, found, _ = _auth(servers[None], monkeypatch)
    assert (code, found) == (0, set())


def test_challenge_without_resource_metadata(servers: dict[str | None, str], monkeypatch: pytest.MonkeyPatch) -> None:
    """MCP 2025-06-18 basic/authorization: the 401 MUST carry resource_metadata (RFC 9728 section 5.1); since
    2025-11-25 the parameter OR the well-known URI (RFC 9728 section 3.1) is enough. So without the parameter
    but with the well-known metadata it is a warning (exit 0); with neither, an error and no metadata found."""
    code, found, data = _auth(servers["no-resource-metadata"], monkeypatch)
    (challenge,) = [f for f in data["findings"] if f["check"] == "auth_challenge"]
    assert (code, found) == (0, {("auth_challenge", "no-resource-metadata")}) and challenge["severity"] == "warning"
    assert "/.well-known/oauth-protected-resource/mcp" in challenge["message"]
    code, found, data = _auth(servers["no-metadata"], monkeypatch)
    (challenge,) = [f for f in data["findings"] if f["check"] == "auth_challenge"]
    assert code == 1 and challenge["severity"] == "error"
    assert found == {("auth_challenge", "no-resource-metadata"), ("auth_metadata", "missing")}


@pytest.mark.parametrize(("fault", "expected"), [
    ("no-auth-servers", ("auth_metadata", "authorization-servers")),  # RFC 9728 2; MCP basic/authorization MUST
    ("any-token", ("auth_invalid_token", "status")),  # RFC 6750 3.1
    ("no-origin-check", ("auth_origin", "status")),  # MCP 2025-11-25 basic/transports, Security
    ("purge-for-all", ("auth_visibility", "destructive:with the 'low' token")),  # least privilege
    ("open", ("auth_visibility", "destructive:without credentials")),
])
def test_each_check_fails_on_its_fault(servers: dict[str | None, str], monkeypatch: pytest.MonkeyPatch,
                                       fault: str, expected: tuple[str, str]) -> None:
    code, found, data = _auth(servers[fault], monkeypatch)
    assert code == 1 and expected in found, found
    if fault == "purge-for-all":
        (finding,) = [f for f in data["findings"] if f["check"] == "auth_visibility"]
        assert finding["tools"] == ["purge_ledger"]


def test_only_loopback(monkeypatch: pytest.MonkeyPatch) -> None:
    """Nothing is sent to a host that is not loopback (project rule: traffic only to 127.0.0.1)."""
    monkeypatch.setenv("FEELER_MAIN_TOKEN", MAIN)
    code, _, err = run_cli(["auth", "http://192.0.2.7/mcp", "--bearer-env", "FEELER_MAIN_TOKEN"])
    assert code == 2 and "loopback" in err
