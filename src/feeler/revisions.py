"""The protocol revisions feeler knows, oldest to newest, and what each one allows.

Revisions are an enumerated set: compare them by position here, never as strings
(MCP 2026-07-28 basic/versioning).
"""

from __future__ import annotations

__all__ = [
    "HANDSHAKE_REVISIONS",
    "KNOWN_REVISIONS",
    "LATEST_HANDSHAKE",
    "LATEST_STATELESS",
    "STATELESS_REVISIONS",
    "allows_batches",
    "era_of",
    "is_known",
    "newest",
]

HANDSHAKE_REVISIONS: tuple[str, ...] = ("2024-11-05", "2025-03-26", "2025-06-18", "2025-11-25")
STATELESS_REVISIONS: tuple[str, ...] = ("2026-07-28",)
KNOWN_REVISIONS: tuple[str, ...] = HANDSHAKE_REVISIONS + STATELESS_REVISIONS
LATEST_HANDSHAKE = HANDSHAKE_REVISIONS[-1]
LATEST_STATELESS = STATELESS_REVISIONS[-1]


def is_known(revision: str) -> bool:
    return revision in KNOWN_REVISIONS


def era_of(revision: str) -> str:
    """``"stateless"`` for revisions without a handshake (2026-07-28 on), else ``"handshake"``."""
    return "stateless" if revision in STATELESS_REVISIONS else "handshake"


def newest(revisions: object) -> str | None:
    """The newest known revision among *revisions* (unknown strings are ignored)."""
    known = [r for r in (revisions if isinstance(revisions, (list, tuple)) else []) if r in KNOWN_REVISIONS]
    return max(known, key=KNOWN_REVISIONS.index) if known else None


def allows_batches(revision: str) -> bool:
    """Only 2025-03-26 requires servers to accept JSON-RPC batches (removed in 2025-06-18)."""
    return revision == "2025-03-26"
