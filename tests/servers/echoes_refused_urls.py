"""One tool that reads a page by URL and refuses every host but those allowed, echoing the URL and host.

A wire-level server (``_wire.WireServer``). ``compress_page`` takes ``source`` (a URL, with a ``default``
on a host that is not allowed) and an optional ``label``. Each call is checked with ``jsonschema``
against the published inputSchema (``isError`` on a violation, MCP 2025-11-25 server/tools "Error
Handling"); then a source whose host is not in ``FEELER_TEST_HOSTS`` (comma-separated, default
``127.0.0.1``) is refused with a message that repeats the URL and the host unquoted, so no two refusals
read alike word for word. An allowed source is "compressed" (its length is answered). No planted defect:
the tool works for the values of its world, and feeler should say which value to give, not that the
tool is broken.
"""

from __future__ import annotations

import os
import sys
from typing import Any
from urllib.parse import urlsplit

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

from _wire import INVALID_PARAMS, RpcError, WireServer, main, text_result as _text  # noqa: E402
from jsonschema import Draft202012Validator  # noqa: E402

HOSTS = {h.strip() for h in os.environ.get("FEELER_TEST_HOSTS", "127.0.0.1").split(",") if h.strip()}
TOOL = {
    "name": "compress_page",
    "description": "Fetch a page by URL and answer its compressed size.",
    "inputSchema": {
        "type": "object",
        "properties": {
            "source": {"type": "string", "format": "uri", "default": "https://pages.example/guide.md",
                       "description": "URL of the page to compress."},
            "label": {"type": "string", "maxLength": 40, "description": "Name of the compressed file."},
        },
        "additionalProperties": False,
    },
    "annotations": {"readOnlyHint": True, "openWorldHint": True},
}
_CHECKER = Draft202012Validator(TOOL["inputSchema"])


class EchoesRefusedUrls(WireServer):
    name = "echoes-refused-urls"

    def __init__(self) -> None:
        super().__init__()
        self.tools = [TOOL]

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        if params.get("name") != TOOL["name"]:
            raise RpcError(INVALID_PARAMS, f"Unknown tool: {params.get('name')!r}")
        arguments = params.get("arguments", {})
        if not isinstance(arguments, dict):
            raise RpcError(INVALID_PARAMS, "arguments must be an object")
        errors = list(_CHECKER.iter_errors(arguments))
        if errors:
            return _text(f"invalid arguments: {errors[0].message}", error=True)
        source = arguments.get("source", TOOL["inputSchema"]["properties"]["source"]["default"])
        try:
            host = urlsplit(source).hostname or ""
        except ValueError:
            host = ""
        if host not in HOSTS:
            return _text(f"Error reading page {source}: host {host or source} is not in the allowed hosts list.", error=True)
        return _text(f"compressed {len(source)} bytes")


if __name__ == "__main__":
    main(EchoesRefusedUrls)
