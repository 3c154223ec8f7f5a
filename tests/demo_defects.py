"""The demo server's planted defects: the answer key the checks are graded against.

The demo (``feeler.demo.server:server``) does not announce these anywhere; later tests import
:data:`DEFECTS` and assert that feeler finds each one (and :data:`CLEAN_TOOLS` stay without findings,
apart from the destructive tool that is skipped unless opted in).

Each entry gives the tool, a concrete triggering call, what the server does, and the check that
should report it. ``arguments`` is a go case (valid under the published ``inputSchema`` by
``jsonschema``) except for ``missing_validation``, which is a no-go case the server accepts. The demo
has a world (bookings): ``needs`` lists the calls to make first, in order, so that the booking the
triggering call names exists; a ``chain`` defect is reachable only that way.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

__all__ = ["CLEAN_TOOLS", "DEFECTS", "Defect", "UNANNOTATED_TOOLS", "DESTRUCTIVE_TOOLS"]


@dataclass(frozen=True)
class Defect:
    """One planted defect.

    :param key: a short stable name.
    :param tool: the tool that carries it.
    :param case_kind: ``"go"`` (schema-valid arguments), ``"no-go"`` (schema-invalid arguments) or
        ``"chain"`` (schema-valid arguments naming what an earlier call returned).
    :param keyword: the JSON Schema keyword involved (``None`` when none is).
    :param path: the instance location of the argument involved, a JSON Pointer (RFC 6901; ``""`` is the
        arguments object).
    :param arguments: a concrete call that triggers it.
    :param behaviour: what the server does.
    :param expected_check: the check (issue 4 wording) that should report it.
    :param reference: where the rule it breaks is written.
    :param needs: ``(tool, arguments)`` calls to make first, in order.
    """

    key: str
    tool: str
    case_kind: str
    keyword: str | None
    path: str
    arguments: dict[str, Any]
    behaviour: str
    expected_check: str
    reference: str
    needs: tuple[tuple[str, dict[str, Any]], ...] = ()


_CONTACT = {"name": "Ada Quill", "email": "ada@example.org"}
_STAY = {"vessel_name": "Tern", "arrival": "2026-05-01", "nights": 3}
#: BK-423419 (no phone) and BK-823387 (with a phone) are the references book_berth answers for these
_BOOKED = ("book_berth", {"berth_code": "N-01", **_STAY, "contact": _CONTACT})
_BOOKED_WITH_PHONE = ("book_berth", {"berth_code": "N-02", **_STAY, "contact": {**_CONTACT, "phone": "+44 1632 960123"}})

DEFECTS: tuple[Defect, ...] = (
    Defect(
        key="off_by_one_at_maximum",
        tool="book_berth",
        case_kind="go",
        keyword="maximum",
        path="/nights",
        arguments={"berth_code": "N-01", "vessel_name": "Tern", "arrival": "2026-05-01", "nights": 14, "contact": _CONTACT},
        behaviour='inputSchema says "maximum": 14; the implementation rejects 14 with isError: true '
        '("nights must be between 1 and 14"); 13 is accepted.',
        expected_check="go case accepted (isError on a go case at the inclusive bound)",
        reference="JSON Schema 2020-12 Validation 6.2.2 (maximum is inclusive)",
    ),
    Defect(
        key="missing_validation_pattern",
        tool="order_services",
        case_kind="no-go",
        keyword="pattern",
        path="/booking_ref",
        arguments={"booking_ref": "BK-423419!", "services": [{"service": "fuel", "quantity": 2}]},
        behaviour='inputSchema says booking_ref matches "^BK-[0-9]{6}$"; the pattern is published but never '
        "enforced: a near miss of an existing reference (a stray character, lower case, a leading space) "
        "finds the booking by its six digits and gets a success result; an unknown reference is refused.",
        expected_check="no-go case rejected cleanly (success answer on a no-go case)",
        reference="JSON Schema 2020-12 Validation 6.3.3 (pattern); MCP 2025-11-25 server/tools (input validation)",
        needs=(_BOOKED,),
    ),
    Defect(
        key="unicode_crash_leaks_traceback",
        tool="register_vessel",
        case_kind="go",
        keyword=None,
        path="/vessel_name",
        arguments={
            "vessel_name": "Ωmega",
            "home_port": "Saltmarsh",
            "length_m": 9.5,
            "kind": "sail",
            "owner": {"name": "Ada Quill", "email": "ada@example.org"},
        },
        behaviour="any character outside Latin-1 (after upper-casing, so also e.g. \"ÿ\") in vessel_name or "
        "home_port raises UnicodeEncodeError; the "
        "answer is a JSON-RPC -32603 error whose message names the exception and whose data.detail holds "
        "the Python traceback with absolute file paths.",
        expected_check="go case accepted (-32603 on a go case) and no internals leaked in errors (stack trace, paths)",
        reference="JSON-RPC 2.0 section 5.1 (-32603); MCP 2025-11-25 server/tools (Security: sanitize errors)",
    ),
    Defect(
        key="structured_output_breaks_schema",
        tool="quote_fee",
        case_kind="go",
        keyword="required",
        path="/total_cents",
        arguments={"length_m": 9.5, "nights": 3, "season": "low", "discount_code": "CLUB10"},
        behaviour="with the optional discount_code, structuredContent omits the required total_cents "
        "(it carries discounted_total_cents instead); without it the output conforms.",
        expected_check="structuredContent validates against outputSchema",
        reference="MCP 2025-06-18 server/tools (Output Schema: servers MUST provide conforming results)",
    ),
)

DEFECTS += (
    Defect(
        key="booking_filed_under_phone",
        tool="order_services",
        case_kind="chain",
        keyword=None,
        path="/booking_ref",
        arguments={"booking_ref": "BK-823387", "services": [{"service": "fresh_water", "quantity": 1}]},
        behaviour="book_berth answers with a reference made from the contact's email, but files a booking "
        "whose contact has a phone under a reference made from the phone; order_services then refuses the "
        'reference book_berth just returned ("no booking BK-..."), with isError. Without a phone it works.',
        expected_check="read_your_writes (chain: book_berth, then order_services with the returned booking_ref)",
        reference="common practice (read-your-writes); MCP 2025-11-25 server/tools (isError results)",
        needs=(_BOOKED_WITH_PHONE,),
    ),
)

# Tools with no planted defect: feeler should report nothing about them.
CLEAN_TOOLS: tuple[str, ...] = ("list_berths", "cancel_booking")
# Skipped unless the user opts in (issue 4, Safety).
DESTRUCTIVE_TOOLS: tuple[str, ...] = ("cancel_booking",)
# Published with no annotations at all (listed as such in feeler's output).
UNANNOTATED_TOOLS: tuple[str, ...] = ("register_vessel",)
