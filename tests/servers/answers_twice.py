"""Answers every call to ``bad`` twice, with the same id (JSON-RPC 2.0 section 5: one response per request)."""

from __future__ import annotations

from typing import Any

from _faulty import FaultyServer
from _wire import main


class AnswersTwice(FaultyServer):
    name = "answers_twice"

    def misbehave(self, params: dict[str, Any], request_id: Any) -> dict[str, Any]:
        self.answer(request_id, self.result_for(params, "first"))
        return self.result_for(params, "second")


if __name__ == "__main__":
    main(AnswersTwice)
