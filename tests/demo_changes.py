"""What changed between the demo's current release (1.4.0) and its next release (1.5.0).

``feeler.demo.server:server`` versus ``feeler.demo.server:next_server`` (``python -m feeler.demo
--release next``). The diff engine must list exactly :data:`CHANGES`, with these verdicts; later tests
import the table. ``where`` is a JSON Pointer into the element named by ``kind`` and ``name``.
"""

from __future__ import annotations

from dataclasses import dataclass

__all__ = ["CHANGES", "Change", "NOT_CHANGES"]

BREAKING = "breaking"
COMPATIBLE = "compatible"
REVIEW = "review"


@dataclass(frozen=True)
class Change:
    """One planted change.

    :param kind: ``tool``, ``prompt``, ``resource`` or ``template``.
    :param name: the tool or prompt name.
    :param where: JSON Pointer inside that element (``""`` for the element itself).
    :param what: the edit, in words.
    :param verdict: ``breaking``, ``compatible`` or ``review``.
    :param why: the reason for the verdict.
    """

    kind: str
    name: str
    where: str
    what: str
    verdict: str
    why: str


CHANGES: tuple[Change, ...] = (
    Change("tool", "book_berth", "/inputSchema/required", 'new required property "insurance_ref" '
           '(string, pattern "^INS-[0-9]{8}$")', BREAKING, "old calls without it are now rejected (input)"),
    Change("tool", "list_berths", "/inputSchema/properties/zone/enum", 'enum member "outer" removed', BREAKING,
           '{"zone": "outer"} was accepted and is now rejected (input)'),
    Change("tool", "book_berth", "/inputSchema/properties/nights/maximum", "maximum loosened from 14 to 21",
           COMPATIBLE, "every old value is still accepted (input)"),
    Change("tool", "quote_fee", "/inputSchema/properties/pay_by", 'new optional property "pay_by" '
           '(enum card, account, cash) in an object with additionalProperties false', COMPATIBLE,
           "old calls never carried it and are still accepted (input)"),
    Change("tool", "order_services", "", "tool removed", BREAKING, "clients calling it get -32602"),
    Change("tool", "extend_stay", "", "tool added", COMPATIBLE, "new capability, nothing old affected"),
    Change("tool", "quote_fee", "/outputSchema/required", '"currency" no longer required in the output',
           BREAKING, "results may now omit a field old clients rely on (output)"),
    Change("tool", "list_berths", "/description", "description reworded (now says only free berths are listed)",
           REVIEW, "descriptions steer a model's choice of tool"),
    Change("tool", "book_berth", "/annotations/destructiveHint", "destructiveHint false -> true", BREAKING,
           "annotation changed toward danger (safety)"),
    Change("prompt", "plan_arrival", "/arguments/1/required", 'argument "arrival_date" now required', BREAKING,
           "prompts/get without it now fails with -32602"),
)

# Differences that are not changes: the diff engine must NOT report them.
NOT_CHANGES: tuple[str, ...] = (
    "serverInfo.version 1.4.0 -> 1.5.0 (volatile, PROTOCOL.md section 10)",
)
