"""Which names are related: a value found under one name in an answer is offered to inputs of related names.

Names are split into lower-case words (``bookingRef``, ``booking_ref`` and ``booking-ref`` are the same
words ``["booking", "ref"]``). Two names are related when (:func:`related`):

* **exact**: the same words;
* **singular/plural**: the same words once the last word is singular (``roots`` / ``root``,
  ``entries`` / ``entry``);
* **x_id / id**: one is ``<noun> <suffix>`` and the other is ``<suffix>`` alone, where the suffix is an
  identifier word (``id``, ``ref``, ``code``, ``key``, ``uuid``...) and the noun is one of the *context*
  nouns of where the value was found (the producing tool's name without its verb, the keys above the
  value in the answer): ``id`` under ``/records/0`` of ``create_record`` is a ``record_id``; the other
  way round, ``record_id`` in an answer fills the ``id`` of ``read_record`` (the taking tool's nouns);
* **path family**: both end in a path word (``path``, ``root``, ``directory``, ``dir``, ``folder``...):
  ``roots`` from a listing reach ``path``, ``root_path`` and ``directory``.

Relatedness only decides what is *offered*; whoever puts a value into arguments keeps it only if the
oracle (``jsonschema``) accepts the result. Common practice (naming conventions of JSON APIs), no standard.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from functools import lru_cache

__all__ = ["ID_WORDS", "PATH_WORDS", "identifier_like", "nouns", "related", "singular", "words"]

#: Last words that make a name an identifier of something.
ID_WORDS = frozenset({"id", "ids", "ref", "refs", "reference", "key", "uuid", "guid", "slug", "code", "handle", "number"})
#: Last words that make a name a place in a file system or tree.
PATH_WORDS = frozenset({"path", "paths", "root", "roots", "directory", "directories", "dir", "dirs", "folder", "folders",
                        "file", "files", "filepath", "cwd", "workspace", "repo", "repository", "location"})
#: Leading words of tool names that are verbs, not the thing the tool is about.
VERBS = frozenset({"create", "new", "add", "make", "get", "read", "fetch", "show", "describe", "find", "search",
                   "list", "update", "edit", "set", "put", "patch", "delete", "remove", "cancel", "book", "order",
                   "register", "extend", "open", "close", "start", "stop", "run", "query", "lookup", "check",
                   "write", "save", "upsert", "view", "load", "move", "copy", "rename"})

_CAMEL = re.compile(r"(?<=[a-z0-9])(?=[A-Z])")
_SPLIT = re.compile(r"[^A-Za-z0-9]+")


@lru_cache(maxsize=4096)
def words(name: str) -> tuple[str, ...]:
    """*name* as lower-case words: ``"bookingRef"`` and ``"booking_ref"`` give ``("booking", "ref")``."""
    return tuple(w.lower() for w in _SPLIT.split(_CAMEL.sub("_", name)) if w)


@lru_cache(maxsize=4096)
def singular(word: str) -> str:
    """A plural English *word* made singular (``roots`` -> ``root``, ``entries`` -> ``entry``); common practice."""
    if len(word) <= 3 or word.endswith(("ss", "us", "is")):
        return word
    if word.endswith("ies"):
        return word[:-3] + "y"
    if word.endswith(("ches", "shes", "xes", "sses")):
        return word[:-2]
    if word.endswith("s"):
        return word[:-1]
    return word


def _base(name: str) -> tuple[str, ...]:
    ws = words(name)
    return (*ws[:-1], singular(ws[-1])) if ws else ws


def nouns(*names: str) -> frozenset[str]:
    """Context nouns of tool names and answer keys: their words in singular form, verbs dropped."""
    out: set[str] = set()
    for name in names:
        for word in words(name):
            if word not in VERBS and not word.isdigit():
                out.add(singular(word))
    return frozenset(out)


def identifier_like(name: str) -> bool:
    """True when *name* names an identifier or a place (``record_id``, ``bookingRef``, ``path``, ``id``)."""
    ws = words(name)
    return bool(ws) and (ws[-1] in ID_WORDS or ws[-1] in PATH_WORDS)


def related(wanted: str, found: str, found_context: Iterable[str] = (), wanted_context: Iterable[str] = ()) -> bool:
    """True when a value found under *found* may fill an input named *wanted* (rules in the module
    docstring). *found_context* are the nouns of where the value was found, *wanted_context* those of the
    tool that takes the input (see :func:`nouns`)."""
    return _related(wanted, found, frozenset(found_context), frozenset(wanted_context))


@lru_cache(maxsize=16384)
def _related(wanted: str, found: str, found_context: frozenset[str], wanted_context: frozenset[str]) -> bool:
    a, b = _base(wanted), _base(found)
    if not a or not b:
        return False
    if a == b:
        return True
    if a[-1] in PATH_WORDS or singular(a[-1]) in PATH_WORDS:
        return b[-1] in PATH_WORDS or singular(b[-1]) in PATH_WORDS
    if a[-1] in ID_WORDS and a[-1] == b[-1]:
        # record_id <- id (found about a record), id <- record_id (wanted by a tool about records)
        if len(a) == 2 and len(b) == 1:
            return a[0] in found_context
        if len(a) == 1 and len(b) == 2:
            return b[0] in wanted_context
    return False
