"""Per-format knowledge: one valid sample, near misses, and a hypothesis strategy.

Every value here is only a candidate: the oracle (jsonschema's format checker) decides. The near
misses are one small slip away from a valid value, the kind of input a careless client sends.
"""

from __future__ import annotations

import datetime as _dt
import string

from hypothesis import strategies as st

__all__ = ["FORMAT_NEAR_MISSES", "FORMAT_SAMPLES", "format_strategies"]

#: A valid value per format (the domain names are reserved for documentation, RFC 2606 / RFC 5737 / RFC 3849).
FORMAT_SAMPLES: dict[str, str] = {
    "date": "2024-05-06",  # RFC 3339 full-date
    "date-time": "2024-05-06T07:08:09Z",  # RFC 3339 date-time
    "time": "07:08:09Z",  # RFC 3339 full-time (offset required)
    "email": "keeper@example.org",  # RFC 5321 Mailbox
    "idn-email": "keeper@example.org",
    "uri": "https://example.org/shelf/1",  # RFC 3986 URI (absolute)
    "uri-reference": "/shelf/1",
    "iri": "https://example.org/shelf/1",
    "iri-reference": "/shelf/1",
    "uri-template": "https://example.org/shelf/{id}",
    "uuid": "123e4567-e89b-42d3-a456-426614174000",  # RFC 9562
    "ipv4": "192.0.2.10",  # RFC 2673 dotted quad
    "ipv6": "2001:db8::10",  # RFC 4291
    "hostname": "dock.example.org",  # RFC 1123
    "idn-hostname": "dock.example.org",
    "json-pointer": "/a/b",
    "relative-json-pointer": "0/a",
    "regex": "^[a-z]+$",
    "duration": "P1DT2H",
}

#: Near misses per format; each is proven invalid by jsonschema before use.
FORMAT_NEAR_MISSES: dict[str, tuple[str, ...]] = {
    "date": ("2024-02-30", "2024-5-06", "06/05/2024", "2024-05-06T00:00:00Z"),
    "date-time": ("2024-05-06T07:08:09", "2024-05-06 07:08", "2024-13-06T07:08:09Z", "2024-05-06"),
    "time": ("07:08:09", "25:08:09Z", "7:8:9Z"),
    "email": ("keeper.example.org", "keeper at example.org"),
    "idn-email": ("keeper.example.org",),
    "uri": ("shelf/1", "https://exa mple.org/", "://example.org"),
    "uuid": ("123e4567-e89b-42d3-a456-42661417400", "123e4567e89b42d3a456426614174000", "123e4567-e89b-42d3-a456-42661417400g"),
    "ipv4": ("256.0.2.10", "192.0.2", "192.0.2.10.7"),
    "ipv6": ("2001:db8::10::1", "2001:db8:::10", "12345::1"),
    "hostname": ("-dock.example.org", "dock_yard.example.org", "a" * 64 + ".example.org", "dock..example.org"),
    "idn-hostname": ("-dock.example.org",),
    "uri-reference": ("\\\\shelf",),
    "json-pointer": ("a/b",),
    "relative-json-pointer": ("/a",),
    "regex": ("[a-z",),
    "duration": ("1D", "P"),
}

_label = st.text(string.ascii_lowercase + string.digits, min_size=1, max_size=12)


def _date() -> st.SearchStrategy[str]:
    return st.dates(_dt.date(1970, 1, 1), _dt.date(2100, 12, 31)).map(lambda d: d.isoformat())


def _time() -> st.SearchStrategy[str]:
    return st.times().map(lambda t: t.replace(microsecond=0).isoformat() + "Z")


def format_strategies() -> dict[str, st.SearchStrategy[str]]:
    """A strategy per format we build by construction; other formats are drawn as plain strings and filtered by the oracle."""
    host = st.lists(_label, min_size=1, max_size=3).map(lambda ls: ".".join(ls) + ".example.org")
    return {
        "date": _date(),
        "time": _time(),
        "date-time": st.builds(lambda d, t: f"{d}T{t}", _date(), _time()),
        "email": st.builds(lambda a, h: f"{a}@{h}", _label, host),
        "uri": st.builds(lambda h, p: f"https://{h}/{p}", host, _label),
        "uuid": st.uuids().map(str),
        "ipv4": st.ip_addresses(v=4).map(str),
        "ipv6": st.ip_addresses(v=6).map(str),
        "hostname": host,
    }
