"""The server's world: values that reach past the schema gate (known, from schema hints, learned from
answers, carried along call chains).

Public API only; see :mod:`feeler.world.values`.
"""

from __future__ import annotations

from feeler.world.values import SOURCES, Value, ValuePool

__all__ = ["SOURCES", "Value", "ValuePool"]
