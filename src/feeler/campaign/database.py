"""hypothesis example databases for drawn go cases: a directory (default) or a shared Redis server."""

from __future__ import annotations

from typing import Any

from feeler.errors import UsageError

__all__ = ["DEFAULT_EXAMPLE_DB", "open_example_db"]

#: The example database of a campaign unless told otherwise (VOCABULARY.md: ``.feeler/examples``).
DEFAULT_EXAMPLE_DB = ".feeler/examples"


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
            raise UsageError(f"--example-db {spec!r} needs the redis package: pip install 'feeler[redis]'") from None
        from hypothesis.extra.redis import RedisExampleDatabase

        client = redis.Redis.from_url(spec)
        try:
            client.ping()
        except redis.RedisError as exc:
            raise UsageError(f"--example-db {spec!r}: cannot reach the Redis server ({exc}); is it running?") from exc
        return RedisExampleDatabase(client, key_prefix=b"feeler-examples:")
    from hypothesis.database import DirectoryBasedExampleDatabase

    return DirectoryBasedExampleDatabase(spec)
