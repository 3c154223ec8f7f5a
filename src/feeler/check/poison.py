"""Poisoned-description heuristics: text in a catalog that is aimed at the model rather than the user.

A tool's description, title and every text inside its schemas reach the model verbatim, so a server can
steer it there (ask it to read secrets, call other tools, keep something from the user) or hide text from
the human reviewing the catalog (invisible Unicode, comments, encoded blobs). :func:`scan` returns one
:class:`Suspicion` per place and reason; the ``poisoned_text`` check reports them, and ``feeler diff``
gives a breaking-grade ``review`` verdict to a description change that adds one.

Tuned on ``tests/check/corpus/catalogs.json`` (our own benign and malicious tools); the test prints how
many of each are flagged. Change a pattern only together with a corpus sample that shows why.
"""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from typing import Any
from urllib.parse import urlsplit

from feeler.check.registry import CallContext, Problem, register

__all__ = ["REASONS", "Suspicion", "scan", "scan_text", "tool_texts"]


@dataclass(frozen=True)
class Suspicion:
    """One suspicious excerpt: *reason* (a key of :data:`REASONS`), *where* (e.g. ``description`` or
    ``inputSchema/properties/path/description``) and the *excerpt* quoted."""

    reason: str
    where: str
    excerpt: str


#: reason -> what it means (shown in findings).
REASONS = {
    "override": "tells the model to ignore or override earlier instructions",
    "secrecy": "tells the model to hide something from the user",
    "sensitive-read": "asks the model to read files, keys or secrets",
    "tool-steering": "tells the model to call or avoid other tools",
    "invisible-unicode": "contains invisible or bidirectional Unicode characters",
    "hidden-comment": "contains an HTML or Markdown comment (hidden when rendered)",
    "encoded-blob": "contains a long base64 or data: blob",
    "foreign-link": "links to a host the user did not list (allowed_hosts)",
    "model-tags": "wraps text in tags aimed at the model (<IMPORTANT>, <system>...)",
}

_I = re.IGNORECASE
_WHO = r"(?:the )?(?:user|human|operator|them|person|people|customer|requester|anyone)"
_SECRETS = (r"(?:private keys?|ssh keys?|api keys?|secrets?|passwords?|passphrases?|credentials?|tokens|session cookies?|"
            r"cookies|environment variables|conversation|chat history|messages)")
_PATTERNS: list[tuple[str, re.Pattern[str]]] = [
    ("override", re.compile(r"\b(?:ignore|disregard|forget|override|pay no attention to)\b[^.\n]{0,40}\b(?:previous|prior|earlier|above|all|other|system|any)\b[^.\n]{0,20}\b(?:instructions?|rules|prompts?|guidelines|guidance)\b", _I)),
    # "From now on, you can pass a prefix" explains a feature; "from now on you must..." re-instructs the model.
    ("override", re.compile(r"\b(?:new|updated) (?:system )?instructions?\s*:|\byou are now\b|\bfrom now on,? you (?:must|will|shall|should|have to|are to|only)\b", _I)),
    ("secrecy", re.compile(rf"\b(?:do not|don't|never|without)\b[^.\n]{{0,30}}\b(?:tell|telling|inform|informing|mention|mentioning|reveal|revealing|notify|notifying|alert|alerting)\b[^.\n]{{0,20}}\b{_WHO}\b", _I)),
    # "show": hiding is "do not show this to the user" or "...show the user that/what..."; "do not show the user
    # raw IDs" is about how to present data.
    ("secrecy", re.compile(rf"\b(?:do not|don't|never|without)\b[^.\n]{{0,30}}\bshow(?:ing)?\s+(?:(?:this|it|these|that|anything)\b[^.\n]{{0,20}}\b{_WHO}\b|{_WHO} (?:that|this|it|what|how|where)\b)", _I)),
    ("secrecy", re.compile(r"\b(?:keep|hide) (?:this|it|these)\b[^.\n]{0,30}\b(?:secret|hidden|from the user)\b|\bsilently\b[^.\n]{0,40}\b(?:send|include|append|attach|forward|upload)\b", _I)),
    # Files that hold secrets: dot-files in a home folder, key files, and the secrets file .env (not the
    # .env.example/.sample/.template that documents its format); mcp.json (a client's server list, with their
    # credentials) when it is in a path or is to be read, not when a config how-to names it.
    ("sensitive-read", re.compile(r"(?:~|\$HOME|%USERPROFILE%)[/\\]\.[\w.-]+|/(?:home|Users)/[^/\s]+/\.[\w.-]+|/root/\.[\w.-]+|"
                                  r"\bid_(?:rsa|ed25519|ecdsa)\b|\.ssh[/\\]|/etc/(?:passwd|shadow)\b|\.aws[/\\]credentials|"
                                  r"(?<![\w-])\.env(?![\w-]|\.\w)|[/\\~][\w./\\-]*\bmcp\.json\b|"
                                  r"\b(?:read|open|include|pass|send|attach|upload|copy|cat)\b[^.\n]{0,30}\bmcp\.json\b", _I)),
    ("sensitive-read", re.compile(rf"\b(?:read|include|pass|append|attach|upload|forward|copy|send|give)\b[^.\n]{{0,30}}\b(?:the user'?s|your|all|any|their)\b[^.\n]{{0,12}}\b{_SECRETS}\b", _I)),
    ("sensitive-read", re.compile(r"\b(?:full|whole|entire) (?:conversation|chat|chat history|message history)\b|\bconversation so far\b", _I)),
    ("tool-steering", re.compile(r"\binstead of (?:calling|using)\b[^.\n]{0,40}\btool\b", _I)),
    ("tool-steering", re.compile(r"\b(?:do not|don't|never) (?:use|call) (?:any |the )?(?:other|another)\b[^.\n]{0,20}\btools?\b", _I)),
    ("tool-steering", re.compile(r"\bbefore (?:using|calling) (?:this|any other|any) tool\b[^.\n]{0,30}\b(?:must|always|first)\b|"
                                 r"\b(?:call|use) this tool (?:first|before (?:any|all|every) other tools?)\b", _I)),
    ("tool-steering", re.compile(r"\bwhen(?:ever)? (?:the user|you) (?:calls?|uses?) (?:the )?[`'\"]?[\w.-]+[`'\"]? tool\b[^.\n]{0,40}\b(?:send|include|add|instead|also|first)\b", _I)),
    ("model-tags", re.compile(r"<\s*/?\s*(?:important|system|instructions?|secret|hidden|assistant|admin)\s*>", _I)),
    ("hidden-comment", re.compile(r"<!--.*?-->|\[//\]:\s*#|^\s*\[comment\]:\s*<>", re.DOTALL | re.MULTILINE)),
    ("encoded-blob", re.compile(r"data:[\w/+.-]+;base64,|(?<![\w/+=])[A-Za-z0-9+/]{80,}={0,2}(?![\w/+=])")),
]
#: Format (Cf) characters used to hide or reorder text: zero-width, bidirectional controls, tag characters.
_INVISIBLE = re.compile("[\u200b-\u200f\u202a-\u202e\u2060-\u2064\u2066-\u2069\ufeff\U000e0000-\U000e007f]")
_URL = re.compile(r"\b(?:https?|ftp|wss?)://[^\s<>\"')\]]+", _I)


def _excerpt(text: str, start: int, end: int) -> str:
    lo, hi = max(0, start - 30), min(len(text), end + 30)
    snippet = text[lo:hi].replace("\n", " ")
    snippet = _INVISIBLE.sub(lambda m: f"<U+{ord(m.group(0)):04X}>", snippet)
    return ("..." if lo else "") + snippet[:160] + ("..." if hi < len(text) else "")


def _host_allowed(host: str, allowed: Iterable[str]) -> bool:
    host = host.lower().rstrip(".")
    return any(host == a.lower() or host.endswith("." + a.lower()) for a in allowed)


def scan_text(text: str, where: str, allowed_hosts: Iterable[str] = ()) -> Iterator[Suspicion]:
    """Every suspicion in one text (at most one per reason)."""
    seen: set[str] = set()
    invisible = _INVISIBLE.search(text)
    if invisible:
        seen.add("invisible-unicode")
        yield Suspicion("invisible-unicode", where, _excerpt(text, invisible.start(), invisible.end()))
    folded = unicodedata.normalize("NFKC", _INVISIBLE.sub("", text))  # hidden characters must not dodge the rest
    for reason, pattern in _PATTERNS:
        if reason in seen:
            continue
        match = pattern.search(folded)
        if match:
            seen.add(reason)
            yield Suspicion(reason, where, _excerpt(folded, match.start(), match.end()))
    for match in _URL.finditer(folded):
        host = urlsplit(match.group(0)).hostname or ""
        if host and not _host_allowed(host, allowed_hosts):
            yield Suspicion("foreign-link", where, _excerpt(folded, match.start(), match.end()))
            break


_SCHEMA_IDS = frozenset({"$schema", "$id", "$ref", "$dynamicRef", "$anchor", "$dynamicAnchor"})


def _schema_texts(node: Any, where: str) -> Iterator[tuple[str, str]]:
    """Every string inside a schema (descriptions, titles, enum values, defaults, examples, names)."""
    stack = [(where, node)]
    while stack:
        place, value = stack.pop()
        if isinstance(value, str):
            yield place, value
        elif isinstance(value, dict):
            for key, sub in value.items():
                if key in _SCHEMA_IDS:
                    continue  # identifiers (dialect, $id, $ref), not text for the model
                if isinstance(key, str) and len(key) > 40:
                    yield f"{place}/{key[:20]}...", key  # a property name long enough to carry a sentence
                stack.append((f"{place}/{key}", sub))
        elif isinstance(value, list):
            stack.extend((f"{place}/{i}", sub) for i, sub in enumerate(value))


def tool_texts(raw: dict[str, Any]) -> Iterator[tuple[str, str]]:
    """``(place, text)`` for every text of a tool the model reads."""
    for key in ("description", "title"):
        if isinstance(raw.get(key), str):
            yield key, raw[key]
    annotations = raw.get("annotations")
    if isinstance(annotations, dict) and isinstance(annotations.get("title"), str):
        yield "annotations/title", annotations["title"]
    for key in ("inputSchema", "outputSchema"):
        if key in raw:
            yield from _schema_texts(raw[key], key)


def scan(raw: dict[str, Any], allowed_hosts: Iterable[str] = ()) -> list[Suspicion]:
    """Every suspicion in one tool (raw catalog entry)."""
    hosts = tuple(allowed_hosts)
    return [s for where, text in tool_texts(raw) for s in scan_text(text, where, hosts)]


@register("poisoned_text", applies_to=("catalog",), reference="MCP 2025-11-25 server/tools (Security: tool descriptions are untrusted); common practice (prompt injection)")
def poisoned_text(ctx: CallContext) -> Iterator[Problem]:
    """No text a tool advertises is aimed at the model behind the user's back (instructions to ignore
    rules, read secrets, call tools, keep quiet; invisible Unicode, comments, blobs, unlisted links)."""
    if ctx.tool is None:
        if ctx.catalog is not None and isinstance(ctx.catalog.instructions, str):
            for s in scan_text(ctx.catalog.instructions, "instructions", ctx.settings.allowed_hosts):
                yield _problem(s)
        return
    for suspicion in scan(ctx.tool.raw, ctx.settings.allowed_hosts):
        yield _problem(suspicion)


def _problem(s: Suspicion) -> Problem:
    severity = "warning" if s.reason == "foreign-link" else None
    return Problem(f"{s.where} {REASONS[s.reason]}: {s.excerpt!r}", severity=severity, error_class=f"{s.reason}:{s.where}")
