"""Values the user knows about the server's world: ``--value``, ``[tool.feeler.values]``, ``values_hook``.

* ``--value [TOOL:]PROPERTY=JSON`` (repeatable): PROPERTY is a property name (offered wherever a property
  of that name appears in the arguments) or a place (``$.owner.email`` or ``/owner/email``); ``TOOL:``
  limits it to one tool. The value is JSON; text that is not JSON is taken as a string
  (``--value root=/srv/data`` means ``"/srv/data"``). A JSON list means "one of these"; to give one
  array value, wrap it in a list (``--value tags='[["a","b"]]'``).
* ``[tool.feeler.values]``: the same keys, TOML values (``root = "/srv/data"``,
  ``"read_file:limit" = [1, 10]``).
* ``values_hook = "package.module:function"``: the function takes no arguments and returns a mapping
  of the same keys to hypothesis strategies, for what a table cannot say; a few values are drawn from
  each strategy (deterministic for a sample seed).

Every value lands in a :class:`~feeler.world.values.ValuePool` with source ``known``.
:func:`check_known` then refuses, as a usage error, a known value that breaks the schema of a place it
would go to (naming the tool, property, value and keyword).
"""

from __future__ import annotations

import importlib
import json
from collections.abc import Iterable, Mapping
from typing import Any

from feeler.errors import UsageError
from feeler.world.values import ValuePool, pointer_of

__all__ = ["HOOK_DRAWS", "check_known", "known_pool", "load_hook", "parse_value_option", "split_key"]

#: values drawn from each strategy a values hook returns
HOOK_DRAWS = 8


def split_key(key: str) -> tuple[str | None, str]:
    """``"read_file:root"`` -> ``("read_file", "root")``; ``"root"`` and ``"$.a.b"`` have no tool."""
    if not key.startswith(("$", "/")) and ":" in key:
        tool, _, rest = key.partition(":")
        if tool and rest:
            return tool, rest
    return None, key


def _key_ok(key: str, where: str) -> str:
    if not key:
        raise UsageError(f"{where}: the property is empty; write PROPERTY=JSON, TOOL:PROPERTY=JSON or $.a.b=JSON")
    try:
        pointer_of(key)
    except ValueError as exc:
        raise UsageError(f"{where}: {exc}") from None
    return key


def parse_value_option(text: str) -> tuple[str | None, str, list[Any]]:
    """Parse one ``--value [TOOL:]PROPERTY=JSON``: ``(tool, key, values)``; a JSON list is several values.

    :raises UsageError: no ``=``, or an empty or malformed property.
    """
    where = f"--value {text!r}"
    name, sep, raw = text.partition("=")
    if not sep:
        raise UsageError(f"{where}: expected [TOOL:]PROPERTY=JSON, e.g. --value root=/srv/data or --value 'limit=[1,10]'")
    tool, key = split_key(name.strip())
    try:
        value = json.loads(raw)
    except ValueError:
        value = raw  # not JSON: a plain string, as typed
    return tool, _key_ok(key, where), value if isinstance(value, list) else [value]


def load_hook(spec: str) -> Mapping[str, Any]:
    """Call the ``values_hook`` *spec* (``package.module:function``); returns its mapping of strategies.

    :raises UsageError: the spec is malformed, the module or function is missing, or it returns no mapping.
    """
    where = f"values_hook = {spec!r}"
    module_name, sep, attr = spec.partition(":")
    if not sep or not module_name or not attr:
        raise UsageError(f"{where}: expected \"package.module:function\"")
    try:
        module = importlib.import_module(module_name)
    except ImportError as exc:
        raise UsageError(f"{where}: cannot import {module_name!r} ({exc}); is it on the Python path?") from None
    func = getattr(module, attr, None)
    if not callable(func):
        raise UsageError(f"{where}: {module_name} has no function {attr!r}")
    result = func()
    if not isinstance(result, Mapping):
        raise UsageError(f"{where}: the function must return a mapping of property to hypothesis strategy, got {type(result).__name__}")
    return result


def _draw(strategy: Any, count: int, seed: int, where: str) -> list[Any]:
    from hypothesis import HealthCheck, Phase, given, settings
    from hypothesis import seed as hypothesis_seed
    from hypothesis.strategies import SearchStrategy

    if not isinstance(strategy, SearchStrategy):
        raise UsageError(f"{where}: expected a hypothesis strategy, got {type(strategy).__name__}")
    out: list[Any] = []

    @settings(max_examples=count, database=None, phases=[Phase.generate], deadline=None,
              suppress_health_check=list(HealthCheck))  # fmt: skip
    @hypothesis_seed(seed)
    @given(strategy)
    def collect(value: Any) -> None:
        if len(out) < count and value not in out:
            out.append(value)

    collect()
    return out


def known_pool(
    options: Iterable[str] = (), table: Mapping[str, Any] | None = None, hook: str | None = None, *,
    seed: int = 0, pool: ValuePool | None = None,
) -> ValuePool:
    """A pool holding every known value: ``--value`` *options*, the config *table*, the *hook*'s draws.

    :param seed: the sample seed the hook's strategies are drawn with.
    :raises UsageError: a malformed option, key or hook.
    """
    pool = pool if pool is not None else ValuePool()
    for text in options:
        tool, key, values = parse_value_option(text)
        for value in values:
            pool.add(key, value, source="known", provenance=f"--value {text}", tool=tool)
    for name, raw in (table or {}).items():
        tool, key = split_key(str(name))
        _key_ok(key, f"[tool.feeler.values] {name!r}")
        for value in raw if isinstance(raw, list) else [raw]:
            pool.add(key, value, source="known", provenance=f"[tool.feeler.values] {name}", tool=tool)
    if hook:
        for name, strategy in load_hook(hook).items():
            tool, key = split_key(str(name))
            where = f"values_hook {hook!r} key {name!r}"
            _key_ok(key, where)
            for value in _draw(strategy, HOOK_DRAWS, seed, where):
                pool.add(key, value, source="known", provenance=f"values_hook {hook} {name}", tool=tool)
    return pool


def check_known(schema: Any, tool: str, pool: ValuePool, instances: Iterable[Any]) -> None:
    """Refuse a known value that breaks the schema of a place it would go to in *tool*'s arguments.

    The places are the slots (:func:`feeler.world.apply.slots`) of *instances* (valid arguments, e.g. the
    fullest and the smallest): each known value offered there is checked against that property's subschema.

    :raises UsageError: naming the tool, the property, the value, the keyword it breaks and what to do.
    """
    from feeler.generate import compile_schema
    from feeler.world.apply import unique_slots

    ts = compile_schema(schema)
    for slot in unique_slots(ts, instances):
        for value in pool.values_for(tool, slot.pointer, slot.name):
            if value.source != "known" or ts.valid_under(slot.schema, value.value):
                continue
            error = min(ts.validator.evolve(schema=slot.schema).iter_errors(value.value), key=lambda e: len(e.path), default=None)
            keyword = error.validator if error is not None else "?"
            raise UsageError(
                f"{value.provenance}: tool {tool!r}, property {slot.name!r} ({slot.pointer}): the value "
                f"{value.value!r} breaks the schema keyword {keyword!r}"
                + (f" ({error.message})" if error is not None else "")
                + f"; give a value the schema accepts, or name the tool it is for (TOOL:{slot.name}=...)"
            )
