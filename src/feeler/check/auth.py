"""Authorization checks for HTTP targets, from outside and only against loopback.

Each check is one small function in :data:`AUTH_CHECKS` that sends plain HTTP requests (an ``initialize``
POST with or without a token, a GET of the Protected Resource Metadata) and yields problems:

- ``auth_challenge``: no credentials -> 401 with ``WWW-Authenticate: Bearer`` carrying ``resource_metadata``
  (RFC 6750 section 3; MCP 2025-06-18 basic/authorization: MUST). Since 2025-11-25 the parameter OR the
  well-known URI is enough, so a missing parameter is a warning when the well-known metadata is there.
- ``auth_metadata``: the Protected Resource Metadata (RFC 9728 sections 2, 3) is JSON with ``resource`` equal
  to the URL and at least one ``authorization_servers`` entry (MCP basic/authorization: MUST).
- ``auth_invalid_token``: an invalid token -> 401 (RFC 6750 section 3.1, ``invalid_token``).
- ``auth_origin``: a request with a foreign ``Origin`` -> 403 (MCP 2025-11-25 basic/transports, Security).
- ``auth_visibility``: the tools seen without credentials and with each lower-privilege token are compared
  with those the main token sees; a destructive tool visible to them is an error.
"""

from __future__ import annotations

import json
import os
import re
import secrets
from collections.abc import Callable, Iterator, Mapping
from dataclasses import dataclass, field
from typing import Any
from urllib.parse import urlsplit, urlunsplit

from feeler.check.findings import Finding, FindingSet
from feeler.check.registry import Problem
from feeler.errors import FeelerError, UsageError

__all__ = ["AUTH_CHECKS", "AuthContext", "auth_check", "run_auth"]

_LOOPBACK = frozenset({"127.0.0.1", "localhost", "::1", "[::1]"})
PROTOCOL_VERSION = "2025-11-25"


@dataclass
class AuthContext:
    """What the auth checks share: the URL, the tokens by label (``main`` first), answers seen so far."""

    url: str
    tokens: Mapping[str, str]
    timeout: float = 10.0
    seen: dict[str, Any] = field(default_factory=dict)

    @property
    def main_token(self) -> str:
        return next(iter(self.tokens.values()))

    def post(self, token: str | None, *, origin: str | None = None) -> Any:
        """POST an ``initialize`` request; the httpx2 response (never follows redirects)."""
        import httpx2

        body = {"jsonrpc": "2.0", "id": 1, "method": "initialize", "params": {
            "protocolVersion": PROTOCOL_VERSION, "capabilities": {}, "clientInfo": {"name": "feeler-auth", "version": "0"}}}
        headers = {"Accept": "application/json, text/event-stream", "Content-Type": "application/json"}
        if token is not None:
            headers["Authorization"] = f"Bearer {token}"
        if origin is not None:
            headers["Origin"] = origin
        with httpx2.Client(trust_env=False, timeout=self.timeout, follow_redirects=False) as client:
            return client.post(self.url, content=json.dumps(body), headers=headers)

    def get(self, url: str) -> Any:
        import httpx2

        with httpx2.Client(trust_env=False, timeout=self.timeout, follow_redirects=False) as client:
            return client.get(url, headers={"Accept": "application/json"})


AuthFunc = Callable[[AuthContext], Iterator[Problem]]
#: name -> (function, reference)
AUTH_CHECKS: dict[str, tuple[AuthFunc, str]] = {}


def auth_check(name: str, reference: str) -> Callable[[AuthFunc], AuthFunc]:
    """Register an authorization check (docstring required)."""

    def decorate(func: AuthFunc) -> AuthFunc:
        if not (func.__doc__ or "").strip():
            raise UsageError(f"auth check {name!r}: give it a docstring")
        AUTH_CHECKS[name] = (func, reference)
        return func

    return decorate


def _loopback(url: str) -> bool:
    return (urlsplit(url).hostname or "") in _LOOPBACK


_PARAM = re.compile(r'([A-Za-z_]+)\s*=\s*(?:"([^"]*)"|([^\s,]+))')


def _challenge(response: Any) -> tuple[str, dict[str, str]]:
    """The scheme and parameters of ``WWW-Authenticate`` (RFC 9110 11.6.1; RFC 6750 section 3)."""
    header = response.headers.get("www-authenticate", "")
    scheme, _, rest = header.strip().partition(" ")
    return scheme, {m.group(1).lower(): m.group(2) if m.group(2) is not None else m.group(3) for m in _PARAM.finditer(rest)}


def _anonymous(ctx: AuthContext) -> Any:
    if "anonymous" not in ctx.seen:
        ctx.seen["anonymous"] = ctx.post(None)
    return ctx.seen["anonymous"]


@auth_check("auth_challenge", "RFC 6750 section 3; RFC 9728 sections 3.1 and 5.1; MCP 2025-06-18 and 2025-11-25 basic/authorization")
def auth_challenge(ctx: AuthContext) -> Iterator[Problem]:
    """A request without credentials gets 401 with ``WWW-Authenticate: Bearer resource_metadata="..."``
    (without the parameter: a warning when the metadata is at the well-known URI, else an error)."""
    response = _anonymous(ctx)
    if response.status_code < 300:
        yield Problem(f"a request without credentials was answered with HTTP {response.status_code}: the server "
                      "requires no authorization (auth_visibility compares what it shows)", severity="warning", error_class="open")
        return
    if response.status_code != 401:
        yield Problem(f"a request without credentials got HTTP {response.status_code}, expected 401", error_class="status")
        return
    scheme, params = _challenge(response)
    if scheme.lower() != "bearer":
        yield Problem(f"the 401 has no WWW-Authenticate: Bearer challenge (got {scheme or 'none'!r})", error_class="no-bearer")
    elif "resource_metadata" not in params:
        found = _well_known(ctx)
        if found:  # 2025-11-25: the header parameter OR the well-known URI is enough
            yield Problem(f"the 401 challenge carries no resource_metadata; clients of 2025-11-25 find the metadata at "
                          f"{found}, clients of 2025-06-18 need the parameter", severity="warning",
                          error_class="no-resource-metadata")
        else:
            yield Problem("the 401 challenge carries no resource_metadata and no Protected Resource Metadata is at the "
                          "well-known URI: a client cannot find the authorization server", error_class="no-resource-metadata")


def _well_known_urls(url: str) -> list[str]:
    """RFC 9728 section 3.1, in the order of MCP 2025-11-25 basic/authorization: the path-suffixed URI first."""
    parts = urlsplit(url)
    well_known = "/.well-known/oauth-protected-resource"
    path = parts.path.rstrip("/")
    return [urlunsplit((parts.scheme, parts.netloc, well_known + path, "", "")), urlunsplit((parts.scheme, parts.netloc, well_known, "", ""))]


def _well_known(ctx: AuthContext) -> str | None:
    """The first well-known metadata URI that answers 200 (loopback only), or None."""
    if "well-known" not in ctx.seen:
        ctx.seen["well-known"] = next((u for u in _well_known_urls(ctx.url) if _loopback(u) and ctx.get(u).status_code == 200), None)
    return ctx.seen["well-known"]


def _metadata_urls(ctx: AuthContext) -> list[str]:
    _, params = _challenge(_anonymous(ctx))
    if params.get("resource_metadata"):
        return [params["resource_metadata"]]
    return _well_known_urls(ctx.url)


@auth_check("auth_metadata", "RFC 9728 sections 2, 3 and 3.3; MCP 2025-11-25 basic/authorization (authorization_servers MUST)")
def auth_metadata(ctx: AuthContext) -> Iterator[Problem]:
    """The Protected Resource Metadata is JSON naming this resource and at least one authorization server."""
    if _anonymous(ctx).status_code < 300:
        return
    for url in _metadata_urls(ctx):
        if not _loopback(url):
            yield Problem(f"the Protected Resource Metadata is at {url}, not on loopback: not fetched", severity="warning", error_class="not-loopback")
            return
        response = ctx.get(url)
        if response.status_code == 200:
            break
    else:
        yield Problem(f"no Protected Resource Metadata at {' or '.join(_metadata_urls(ctx))} (HTTP {response.status_code})", error_class="missing")
        return
    try:
        data = response.json()
    except ValueError:
        yield Problem(f"the Protected Resource Metadata at {url} is not JSON", error_class="not-json")
        return
    if not isinstance(data, dict):
        yield Problem("the Protected Resource Metadata is not a JSON object", error_class="not-object")
        return
    if data.get("resource") != ctx.url:
        yield Problem(f"its resource is {data.get('resource')!r}, not the server's URL {ctx.url!r}", error_class="resource")
    servers = data.get("authorization_servers")
    if not (isinstance(servers, list) and servers and all(isinstance(s, str) and s for s in servers)):
        yield Problem(f"authorization_servers is {servers!r}; it must list at least one authorization server", error_class="authorization-servers")


@auth_check("auth_invalid_token", "RFC 6750 section 3.1 (invalid_token: 401); MCP 2025-11-25 basic/authorization")
def auth_invalid_token(ctx: AuthContext) -> Iterator[Problem]:
    """A request with an invalid bearer token gets 401."""
    if _anonymous(ctx).status_code < 300:
        return
    response = ctx.post("feeler-invalid-" + secrets.token_hex(12))
    if response.status_code != 401:
        yield Problem(f"an invalid bearer token got HTTP {response.status_code}, expected 401", error_class="status")


@auth_check("auth_origin", "MCP 2025-11-25 basic/transports (Security: an invalid Origin gets 403)")
def auth_origin(ctx: AuthContext) -> Iterator[Problem]:
    """A request from a foreign ``Origin`` (with a valid token) gets 403 on a local server."""
    response = ctx.post(ctx.main_token, origin="http://feeler-foreign-origin.invalid")
    if response.status_code != 403:
        yield Problem(f"a request with Origin: http://feeler-foreign-origin.invalid got HTTP {response.status_code}, "
                      "expected 403 (DNS rebinding protection)", error_class="status")


def _visible_tools(ctx: AuthContext, variable: str | None) -> list[Any] | None:
    """The tools a principal sees (a full session), or None when it is refused."""
    from feeler.connect import capture, open_session
    from feeler.target import Target

    target = Target(kind="http", url=ctx.url, bearer_env=variable)
    try:
        session = open_session(target, timeout=ctx.timeout, revision=PROTOCOL_VERSION)
    except FeelerError:
        return None
    try:
        return capture(session).tool_list()
    except FeelerError:
        return None
    finally:
        session.close()


@auth_check("auth_visibility", "MCP 2025-11-25 server/tools (ToolAnnotations.destructiveHint); common practice (least privilege)")
def auth_visibility(ctx: AuthContext) -> Iterator[Problem]:
    """No destructive tool is visible without credentials or with a lower-privilege token."""
    variables = ctx.seen.get("variables", {})
    main = _visible_tools(ctx, variables.get("main"))
    if main is None:
        yield Problem("the main token cannot list the tools", error_class="main-refused")
        return
    destructive = {t.name for t in main if t.destructive}
    for label, variable in [("without credentials", None), *((f"with the {k!r} token", v) for k, v in variables.items() if k != "main")]:
        seen = _visible_tools(ctx, variable)
        if seen is None:
            continue
        exposed = sorted(t.name for t in seen if t.destructive or t.name in destructive)
        if exposed:
            yield Problem(f"destructive tool(s) visible {label}: {', '.join(exposed)} ({len(seen)} of {len(main)} "
                          "tools visible)", error_class=f"destructive:{label}", tools=tuple(exposed))


def run_auth(url: str, variables: Mapping[str, str], *, timeout: float = 10.0,
             only: list[str] | None = None) -> FindingSet:
    """Run the authorization checks against *url* (loopback only); *variables* maps labels to the names of
    the environment variables holding their tokens, ``main`` first (the fullest privilege)."""
    if urlsplit(url).scheme not in ("http", "https") or not _loopback(url):
        raise UsageError(f"{url!r}: authorization checks run only against loopback HTTP servers (127.0.0.1, localhost, ::1)")
    if "main" not in variables:
        raise UsageError("give the main token: --bearer-env VAR (then LABEL=VAR for each lower-privilege token)")
    tokens = {}
    for label, name in variables.items():
        value = os.environ.get(name)
        if not value:
            raise UsageError(f"--bearer-env {label}={name}: the environment variable {name} is not set")
        tokens[label] = value
    ctx = AuthContext(url, tokens, timeout)
    ctx.seen["variables"] = dict(variables)
    from feeler.redact import Redactor

    red = Redactor({v: variables[k] for k, v in tokens.items()})
    findings = FindingSet()
    for name, (func, _reference) in AUTH_CHECKS.items():
        if only and name not in only:
            continue
        try:
            problems = list(func(ctx))
        except Exception as exc:  # noqa: BLE001 - an unreachable server must not hide the other checks
            import httpx2

            if not isinstance(exc, (httpx2.HTTPError, FeelerError)):
                raise
            problems = [Problem(f"the request failed: {exc}", error_class="unreachable")]
        for p in problems:
            findings.add(Finding(check=name, severity=p.severity or "error", tool=None, kind="probe",
                                 message=red.text(p.message), error_class=p.error_class, tools=list(p.tools)))
    return findings
