"""feeler: tests servers speaking the Model Context Protocol."""

from __future__ import annotations

__version__ = "0.1.0"

from feeler import _lazy_iri

_lazy_iri.install()  # before anything imports jsonschema: its iri checkers compile grammars at import
