"""Tools whose JSON Schemas are written by hand instead of derived from Python signatures.

The SDK derives a tool's ``inputSchema`` from the function's parameters and checks calls with pydantic.
A hand-written schema says exactly what a client may send (formats, patterns, nested objects,
``additionalProperties``), so these tools check each call with ``jsonschema`` against the schema they
publish, and hand back the result they build together with its ``structuredContent``.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Mapping
from typing import Any

import re

from jsonschema import Draft202012Validator, validators
from jsonschema.exceptions import ValidationError
from mcp.server.mcpserver.exceptions import ToolError, UnexpectedToolError
from mcp.server.mcpserver.tools import Tool
from mcp.server.mcpserver.utilities.func_metadata import ArgModelBase, FuncMetadata
from mcp.shared.exceptions import MCPError
from mcp_types import CallToolResult, TextContent, ToolAnnotations
from pydantic import PrivateAttr

__all__ = ["DeclaredTool", "declared_tool"]

JsonObject = dict[str, Any]


class DeclaredTool(Tool):
    """A tool registered with a hand-written input schema and, optionally, an output schema.

    ``fn`` receives the checked arguments as keyword arguments. When an output schema is declared it
    returns the structured result (a JSON object), which is also sent as a JSON text block; otherwise it
    returns the text to send.
    """

    _checker: Any = PrivateAttr(default=None)

    async def run(self, arguments: dict[str, Any], context: Any, convert_result: bool = False) -> Any:
        if self._checker is None:
            # Formats are asserted, not just annotated: a date or an address the schema names is checked.
            self._checker = _Validator(self.parameters, format_checker=Draft202012Validator.FORMAT_CHECKER)
        errors = sorted(self._checker.iter_errors(arguments), key=lambda e: [str(p) for p in e.path])
        if errors:
            # A tool execution error the caller can act on (MCP 2025-11-25 server/tools, "Error Handling").
            detail = "; ".join(f"{_where(e.absolute_path)}: {e.message}" for e in errors[:5])
            raise ToolError(f"Invalid arguments for {self.name}: {detail}")
        try:
            value = self.fn(**arguments)
        except (ToolError, MCPError):
            raise
        except Exception as exc:
            # Same policy as the SDK's own tools: a crash's text stays on the server.
            raise UnexpectedToolError(f"Error executing tool {self.name}") from exc
        if self.output_schema is None:
            return CallToolResult(content=[TextContent(type="text", text=str(value))])
        return CallToolResult(
            content=[TextContent(type="text", text=json.dumps(value, ensure_ascii=False))],
            structured_content=value,
        )


def _pattern(validator: Any, regex: str, instance: Any, schema: Any) -> Any:
    # JSON Schema reads patterns as ECMA-262, where a final "$" matches only at the very end; Python's "$"
    # also matches before a final newline, so the demo's patterns (all anchored by a final "$") end in \Z here.
    if not validator.is_type(instance, "string"):
        return
    if regex.endswith("$") and not regex.endswith("\\$"):
        regex = regex[:-1] + "\\Z"
    if not re.search(regex, instance):
        yield ValidationError(f"{instance!r} does not match {regex!r}")


#: jsonschema's 2020-12 validator with ``pattern`` read as ECMA-262 reads an anchored pattern.
_Validator = validators.extend(Draft202012Validator, {"pattern": _pattern})


def declared_tool(
    fn: Callable[..., Any],
    *,
    name: str,
    description: str,
    input_schema: Mapping[str, Any],
    output_schema: Mapping[str, Any] | None = None,
    annotations: ToolAnnotations | None = None,
    title: str | None = None,
) -> DeclaredTool:
    """Build a :class:`DeclaredTool` for ``MCPServer(tools=[...])``.

    :param fn: the implementation; called with the checked arguments as keyword arguments.
    :param name: the tool name published in ``tools/list``.
    :param description: the tool description.
    :param input_schema: the published ``inputSchema``; every call is checked against it.
    :param output_schema: the published ``outputSchema``, or ``None`` for a text-only tool.
    :param annotations: behaviour hints, or ``None`` to publish none.
    :param title: a display title.
    """
    Draft202012Validator.check_schema(input_schema)
    if output_schema is not None:
        Draft202012Validator.check_schema(output_schema)
    return DeclaredTool(
        fn=fn,
        name=name,
        title=title,
        description=description,
        parameters=dict(input_schema),
        # No output model: the published schema is kept as written, the SDK does not rebuild it.
        fn_metadata=FuncMetadata(arg_model=ArgModelBase, output_schema=None if output_schema is None else dict(output_schema)),
        is_async=False,
        annotations=annotations,
    )


def _where(path: Any) -> str:
    parts = "".join(f"[{p}]" if isinstance(p, int) else f".{p}" for p in path)
    return "$" + parts
