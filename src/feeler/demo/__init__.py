"""The bundled demo MCP server (Saltmarsh Quay harbour office) that ``feeler demo`` runs against.

Needs the ``demo`` extra (the official ``mcp`` SDK and uvicorn). Import :mod:`feeler.demo.server` for the
server objects; run ``python -m feeler.demo`` to serve it (``--help`` for the options).
"""
