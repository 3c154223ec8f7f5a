"""Defer the cost of jsonschema's ``iri`` format checkers until a schema uses them.

``jsonschema._format`` imports ``rfc3987_syntax``, which compiles about 40 Lark grammars at import time:
seconds on a busy machine, paid by every feeler command that validates anything, though only schemas with
``"format": "iri"`` (or ``iri-reference``) need them. :func:`install` puts a stand-in module under that
name before jsonschema is imported. Its ``is_valid_syntax`` (the one name jsonschema imports) loads the
real module on first call and hands every call to it, so the checks themselves are exactly the real ones.
"""

from __future__ import annotations

import sys
import types

__all__ = ["install"]

_NAME = "rfc3987_syntax"
_real: types.ModuleType | None = None


def _load() -> types.ModuleType:
    global _real
    if _real is None:
        stand_in = sys.modules.pop(_NAME, None)
        try:
            import importlib

            _real = importlib.import_module(_NAME)
        except BaseException:
            if stand_in is not None:
                sys.modules[_NAME] = stand_in
            raise
    return _real


def _is_valid_syntax(term: str, value: str) -> bool:
    try:
        real = _load()
    except ImportError:
        return True  # not installed: the value is not checked, as jsonschema does without the module
    return bool(real.is_valid_syntax(term, value))


def _getattr(name: str) -> object:  # PEP 562: any other public name loads the real module
    if name.startswith("__"):
        raise AttributeError(name)  # the import system asks for __path__, __spec__...: not a reason to load
    return getattr(_load(), name)


def install() -> None:
    """Install the stand-in, unless jsonschema's format module or the real module is already loaded."""
    if _NAME in sys.modules or "jsonschema._format" in sys.modules:
        return
    stand_in = types.ModuleType(_NAME, "feeler's stand-in: loads rfc3987_syntax on first use")
    stand_in.is_valid_syntax = _is_valid_syntax  # type: ignore[attr-defined]
    stand_in.__getattr__ = _getattr  # type: ignore[method-assign]
    sys.modules[_NAME] = stand_in
