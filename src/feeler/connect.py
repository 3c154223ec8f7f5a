"""One-call entry points: open a session on a target, capture its catalog."""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from typing import Any

from feeler.catalog import Catalog
from feeler.errors import HandshakeError, RemoteProtocolError
from feeler.session import MessageLog, Session
from feeler.target import Target
from feeler.transport.base import DEFAULT_MAX_MESSAGE_BYTES

__all__ = ["capture", "capture_catalog", "connected", "open_session"]

#: capability -> (list method) captured into the catalog when the server declares it
_SECTIONS = (
    ("tools", "tools/list", "tools"),
    ("prompts", "prompts/list", "prompts"),
    ("resources", "resources/list", "resources"),
    ("resources", "resources/templates/list", "resource_templates"),
)


def _as_target(target: Target | str) -> Target:
    return target if isinstance(target, Target) else Target.parse(target)


def open_session(
    target: Target | str,
    *,
    revision: str | None = None,
    timeout: float = 30.0,
    probe_timeout: float = 5.0,
    max_message_bytes: int = DEFAULT_MAX_MESSAGE_BYTES,
    log: MessageLog | None = None,
) -> Session:
    """Open a :class:`~feeler.session.Session` on *target* (negotiated, ready for requests).

    A Streamable HTTP URL whose server refuses the POST with 404/405 and no JSON-RPC body is tried
    once more as a legacy HTTP+SSE server (MCP 2025-03-26 basic/transports, backwards compatibility).
    """
    tgt = _as_target(target)
    session = Session(
        tgt.transport(max_message_bytes=max_message_bytes),
        revision=revision,
        request_timeout=timeout,
        probe_timeout=min(probe_timeout, timeout),
        log=log,
    )
    try:
        return session.open()
    except HandshakeError as exc:
        if tgt.kind != "http" or exc.http_status not in (400, 404, 405):
            raise
        legacy = Target(kind="sse", url=tgt.url, headers=tgt.headers, bearer_env=tgt.bearer_env)
        fallback = Session(
            legacy.transport(max_message_bytes=max_message_bytes), revision=revision, request_timeout=timeout,
            probe_timeout=min(probe_timeout, timeout), log=log,
        )
        try:
            return fallback.open()
        except Exception:
            raise exc from None


@contextmanager
def connected(target: Target | str, **options: Any) -> Iterator[Session]:
    """``with connected("pkg.server:app") as session: ...`` — the session is closed afterwards."""
    session = open_session(target, **options)
    try:
        yield session
    finally:
        session.close()


def capture(session: Session) -> Catalog:
    """Read every page of everything the server declares, into a :class:`~feeler.catalog.Catalog`."""
    sections: dict[str, list[Any]] = {"tools": [], "prompts": [], "resources": [], "resource_templates": []}
    for capability, method, attr in _SECTIONS:
        if capability not in session.capabilities:
            continue
        try:
            items, _ = session.list_all(method)
        except RemoteProtocolError:
            if method == "resources/templates/list":
                continue  # optional even for servers with resources
            raise
        sections[attr] = items
    _check_entries(session, sections)
    session.learn_tools(sections["tools"])
    return Catalog(
        revision=str(session.revision),
        era=str(session.era),
        server=session.server_info,
        supported_revisions=session.supported_revisions,
        capabilities=session.capabilities,
        instructions=session.instructions,
        **sections,
    )


def _check_entries(session: Session, sections: dict[str, list[Any]]) -> None:
    """Every listed entry must be a JSON object, and every tool must have a string name (MCP schema
    ``Tool``: ``name`` is required); anything else is a clear error, not a crash later."""
    for attr, items in sections.items():
        for index, entry in enumerate(items):
            if not isinstance(entry, dict) or (attr == "tools" and not isinstance(entry.get("name"), str)):
                shown = repr(entry)[:60]
                what = "not a JSON object" if not isinstance(entry, dict) else "an object without a string name"
                raise RemoteProtocolError(f"{attr}[{index}] in the list the server sent is {what} ({shown}); "
                                          "every entry must be an object (MCP schema: Tool, Prompt, Resource)",
                                          target=session.target)


def capture_catalog(target: Target | str, *, revision: str | None = None, timeout: float = 30.0, **options: Any) -> Catalog:
    """Connect to *target*, capture its catalog, disconnect."""
    with connected(target, revision=revision, timeout=timeout, **options) as session:
        return capture(session)
