"""hypothesis example databases for drawn go cases: a directory (default) or a shared Redis server."""

from __future__ import annotations

from typing import Any

from feeler.errors import UsageError

__all__ = ["DEFAULT_EXAMPLE_DB", "open_example_db", "redact_url"]

#: The example database of a campaign unless told otherwise (VOCABULARY.md: ``.feeler/examples``).
DEFAULT_EXAMPLE_DB = ".feeler/examples"


def redact_url(spec: str) -> str:
    """*spec* with the password of a URL's userinfo (RFC 3986 section 3.2.1: ``user:password@``) replaced
    by ``***``, so ``redis://:s3cret@host:6379/0`` is shown as ``redis://:***@host:6379/0``. Anything
    that is not such a URL is returned unchanged."""
    from urllib.parse import urlsplit, urlunsplit

    if "://" not in spec:
        return spec
    try:
        parts = urlsplit(spec)
    except ValueError:
        return spec
    if "@" not in parts.netloc:
        return spec
    userinfo, host = parts.netloc.rsplit("@", 1)
    # a lone userinfo without ":" is a password too for Redis (redis://secret@host), so it is hidden as well
    shown = userinfo.split(":", 1)[0] + ":***" if ":" in userinfo else "***"
    return urlunsplit(parts._replace(netloc=f"{shown}@{host}"))


def open_example_db(spec: str | None) -> Any:
    """A hypothesis ``ExampleDatabase`` for *spec*: ``none``/empty (no database), ``redis://HOST:PORT/DB``
    (hypothesis' own ``RedisExampleDatabase``; needs the ``redis`` package: ``pip install feeler[redis]``),
    or a directory (``DirectoryBasedExampleDatabase``)."""
    if not spec or spec == "none":
        return None
    if spec.startswith(("redis://", "rediss://", "unix://")):
        try:
            import redis
        except ImportError:
            raise UsageError(f"--example-db {redact_url(spec)!r} needs the redis package: pip install 'feeler[redis]'") from None
        from hypothesis.extra.redis import RedisExampleDatabase

        client = redis.Redis.from_url(spec)
        try:
            client.ping()
        except redis.RedisError as exc:
            said = str(exc).replace(spec, redact_url(spec))
            raise UsageError(f"--example-db {redact_url(spec)!r}: cannot reach the Redis server ({said}); is it running?") from None
        return RedisExampleDatabase(client, key_prefix=b"feeler-examples:")
    from hypothesis.database import DirectoryBasedExampleDatabase

    return DirectoryBasedExampleDatabase(spec)
