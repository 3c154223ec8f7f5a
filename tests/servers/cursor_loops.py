"""tools/list always returns the same tool and a new ``nextCursor`` (page-1, page-2, ...): the pages never end."""

from __future__ import annotations

from typing import Any

from _wire import WireServer, main


class CursorLoops(WireServer):
    name = "cursor_loops"
    pages = 0

    def on_tools_list(self, params: dict[str, Any]) -> dict[str, Any]:
        self.pages += 1
        return {**super().on_tools_list(params), "nextCursor": f"page-{self.pages}"}


if __name__ == "__main__":
    main(CursorLoops)
