"""Answers tools/call with an id that is not the request's (integer ids + 1000, string ids + "-other")."""

from __future__ import annotations

from typing import Any

from _wire import NoAnswer, WireServer, main


def other_id(request_id: Any) -> Any:
    return request_id + 1000 if isinstance(request_id, int) else f"{request_id}-other"


class WrongId(WireServer):
    name = "wrong_id"

    def on_tools_call(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        result = self.call_echo(params)
        if self.is_modern(params):
            result = {"resultType": "complete", **result}
        self.answer(other_id(request_id), result)
        raise NoAnswer  # the right id never gets an answer


if __name__ == "__main__":
    main(WrongId)
