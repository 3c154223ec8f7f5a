"""The bundled demo: the berth-booking office of Saltmarsh Quay, a small invented harbour.

Skippers ask for a berth, a quote, shore services or a vessel registration; the office answers with
bookings and notices. Its world is kept per server: shore services, extending and cancelling a stay
need the reference of an existing booking. Two releases are served from the same code: ``server`` (the current release,
1.4.0) and ``next_server`` (the next release, 1.5.0, with its own schema edits).
"""

from __future__ import annotations

import copy
import hashlib
import json
import re
import traceback
from typing import Annotated, Any, Literal

from mcp.server.mcpserver import MCPServer
from mcp.server.mcpserver.exceptions import ResourceNotFoundError, ToolError
from mcp.shared.exceptions import MCPError
from mcp_types import INTERNAL_ERROR, ToolAnnotations
from pydantic import BaseModel, Field

from feeler.demo._declared import declared_tool

__all__ = ["RELEASES", "build_server", "next_server", "server"]

RELEASES = {"current": "1.4.0", "next": "1.5.0"}

JsonObject = dict[str, Any]

ZONES = ["north", "south", "east", "outer"]
VESSEL_KINDS = ["sail", "motor", "catamaran", "workboat"]
SERVICES = ["fresh_water", "shore_power", "waste_pumpout", "laundry", "fuel"]
BERTH_CODE = {"type": "string", "pattern": "^[NSEO]-[0-9]{2}$", "description": "Berth code, zone letter and number, e.g. N-07."}
BOOKING_REF = {"type": "string", "pattern": "^BK-[0-9]{6}$", "description": "Booking reference, e.g. BK-004211."}
EMAIL = {"type": "string", "format": "email", "maxLength": 120}

# Berths of the quay: code, zone, usable length in metres, occupied today.
BERTHS: list[JsonObject] = [
    {"code": f"{zone[0].upper()}-{number:02d}", "zone": zone, "length_m": length, "occupied": (number % 3 == 0)}
    for zone, lengths in (
        ("north", (8, 10, 12, 12, 15)),
        ("south", (10, 14, 18, 22)),
        ("east", (6, 6, 8, 9)),
        ("outer", (25, 40, 60)),
    )
    for number, length in enumerate(lengths, start=1)
]

_RATE_CENTS = {"low": 180, "shoulder": 240, "high": 320}  # per metre and night
_SERVICE_CENTS = {"fresh_water": 400, "shore_power": 650, "waste_pumpout": 900, "laundry": 1200, "fuel": 0}


class Bookings:
    """The office's ledger of bookings, keyed by booking reference (bounded: the oldest are archived)."""

    LIMIT = 2000

    def __init__(self) -> None:
        self.ledger: dict[str, JsonObject] = {}

    def file(self, key: str, booking: JsonObject) -> None:
        self.ledger[key] = booking
        while len(self.ledger) > self.LIMIT:
            del self.ledger[next(iter(self.ledger))]

    def find(self, booking_ref: str) -> JsonObject:
        booking = self.ledger.get(booking_ref)
        if booking is None:
            raise ToolError(f"no booking {booking_ref}; book_berth gives the reference")
        return booking


def _on_form(text: str) -> str:
    """A reference as read off a dockside form: only its six digits count."""
    digits = re.search(r"[0-9]{6}", text)
    return f"BK-{digits.group(0)}" if digits else text


def _reference(*parts: object) -> str:
    digest = hashlib.sha256(json.dumps(parts, sort_keys=True).encode("ascii")).hexdigest()
    return f"BK-{int(digest[:8], 16) % 1_000_000:06d}"


# --- list_berths ------------------------------------------------------------------------------------

LIST_BERTHS_INPUT: JsonObject = {
    "type": "object",
    "properties": {
        "zone": {"type": "string", "enum": ZONES, "description": "Only berths in this zone."},
        "min_length_m": {"type": "number", "minimum": 4, "maximum": 60, "description": "Shortest usable length."},
        "include_occupied": {"type": "boolean", "default": False},
    },
    "additionalProperties": False,
}
LIST_BERTHS_OUTPUT: JsonObject = {
    "type": "object",
    "properties": {
        "berths": {
            "type": "array",
            "items": {
                "type": "object",
                "properties": {
                    "code": BERTH_CODE,
                    "zone": {"type": "string", "enum": ZONES},
                    "length_m": {"type": "number", "minimum": 0},
                    "occupied": {"type": "boolean"},
                },
                "required": ["code", "zone", "length_m", "occupied"],
            },
        },
        "count": {"type": "integer", "minimum": 0},
    },
    "required": ["berths", "count"],
}


def list_berths(zone: str | None = None, min_length_m: float = 0, include_occupied: bool = False) -> JsonObject:
    found = [
        dict(berth)
        for berth in BERTHS
        if (zone is None or berth["zone"] == zone)
        and berth["length_m"] >= min_length_m
        and (include_occupied or not berth["occupied"])
    ]
    return {"berths": found, "count": len(found)}


# --- quote_fee --------------------------------------------------------------------------------------

QUOTE_FEE_INPUT: JsonObject = {
    "type": "object",
    "properties": {
        "length_m": {"type": "number", "exclusiveMinimum": 0, "maximum": 60, "description": "Length overall in metres."},
        "nights": {"type": "integer", "minimum": 1, "maximum": 14},
        "season": {"type": "string", "enum": ["low", "shoulder", "high"]},
        "services": {
            "type": "array",
            "items": {"type": "string", "enum": SERVICES},
            "uniqueItems": True,
            "maxItems": 5,
        },
        "discount_code": {"type": "string", "pattern": "^[A-Z]{4}[0-9]{2}$", "description": "Club or rally code."},
    },
    "required": ["length_m", "nights", "season"],
    "additionalProperties": False,
}
QUOTE_FEE_OUTPUT: JsonObject = {
    "type": "object",
    "properties": {
        "total_cents": {"type": "integer", "minimum": 0},
        "currency": {"type": "string", "enum": ["EUR"]},
        "lines": {
            "type": "array",
            "items": {
                "type": "object",
                "properties": {"item": {"type": "string"}, "cents": {"type": "integer"}},
                "required": ["item", "cents"],
            },
        },
    },
    "required": ["total_cents", "currency", "lines"],
}


def quote_fee(
    length_m: float,
    nights: int,
    season: str,
    services: list[str] | None = None,
    discount_code: str | None = None,
    pay_by: str | None = None,
) -> JsonObject:
    # Berths are let by the started metre.
    metres = int(-(-length_m // 1))
    lines = [{"item": f"berth {metres} m x {nights} nights ({season})", "cents": metres * nights * _RATE_CENTS[season]}]
    lines += [{"item": service, "cents": _SERVICE_CENTS[service] * nights} for service in services or []]
    subtotal = sum(line["cents"] for line in lines)
    if discount_code is not None:
        discount = subtotal // 10
        lines.append({"item": f"discount {discount_code}", "cents": -discount})
        return {"currency": "EUR", "lines": lines, "discounted_total_cents": subtotal - discount}
    return {"total_cents": subtotal, "currency": "EUR", "lines": lines}


# --- book_berth -------------------------------------------------------------------------------------

BOOK_BERTH_INPUT: JsonObject = {
    "type": "object",
    "properties": {
        "berth_code": BERTH_CODE,
        "vessel_name": {"type": "string", "minLength": 1, "maxLength": 40},
        "arrival": {"type": "string", "format": "date", "description": "Arrival day (YYYY-MM-DD)."},
        "nights": {"type": "integer", "minimum": 1, "maximum": 14},
        "contact": {
            "type": "object",
            "properties": {
                "name": {"type": "string", "minLength": 1, "maxLength": 60},
                "email": EMAIL,
                "phone": {"type": "string", "pattern": "^\\+?[0-9 ]{6,20}$"},
            },
            "required": ["name", "email"],
            "additionalProperties": False,
        },
        "crew": {
            "type": "array",
            "minItems": 1,
            "maxItems": 8,
            "items": {
                "type": "object",
                "properties": {
                    "name": {"type": "string", "minLength": 1, "maxLength": 40},
                    "role": {"type": "string", "enum": ["skipper", "crew", "guest"]},
                },
                "required": ["name", "role"],
                "additionalProperties": False,
            },
        },
    },
    "required": ["berth_code", "vessel_name", "arrival", "nights", "contact"],
    "additionalProperties": False,
}
BOOK_BERTH_OUTPUT: JsonObject = {
    "type": "object",
    "properties": {
        "booking_ref": BOOKING_REF,
        "berth_code": BERTH_CODE,
        "arrival": {"type": "string", "format": "date"},
        "nights": {"type": "integer", "minimum": 1},
        "status": {"type": "string", "enum": ["confirmed", "waitlisted"]},
    },
    "required": ["booking_ref", "berth_code", "arrival", "nights", "status"],
}


def _book_berth(longest_stay: int, bookings: Bookings) -> Any:
    def book_berth(
        berth_code: str,
        vessel_name: str,
        arrival: str,
        nights: int,
        contact: JsonObject,
        crew: list[JsonObject] | None = None,
        insurance_ref: str | None = None,
    ) -> JsonObject:
        if not 1 <= nights < longest_stay:
            raise ToolError(f"nights must be between 1 and {longest_stay}")
        occupied = any(b["code"] == berth_code and b["occupied"] for b in BERTHS)
        booking = {
            "booking_ref": _reference(berth_code, vessel_name, arrival, nights, contact["email"]),
            "berth_code": berth_code,
            "arrival": arrival,
            "nights": nights,
            "status": "waitlisted" if occupied else "confirmed",
        }
        bookings.file(_reference(berth_code, vessel_name, arrival, nights, contact.get("phone") or contact["email"]), booking)
        return dict(booking)

    return book_berth


# --- order_services ---------------------------------------------------------------------------------


class ServiceLine(BaseModel):
    """One service delivered to the berth."""

    service: Literal["fresh_water", "shore_power", "waste_pumpout", "laundry", "fuel"]
    quantity: Annotated[int, Field(strict=True, ge=1, le=20, description="Units: litres x 100, kWh x 10, loads.")]


def _order_services(bookings: Bookings) -> Any:
    def order_services(
        booking_ref: Annotated[
            str, Field(description="Booking reference, e.g. BK-004211.", json_schema_extra={"pattern": "^BK-[0-9]{6}$"})
        ],
        services: Annotated[list[ServiceLine], Field(min_length=1, max_length=5)],
        deliver_by: Literal["morning", "afternoon", "evening"] | None = None,
    ) -> str:
        """Order shore services (water, power, pump-out, laundry, fuel) to a booked berth."""
        reference = _on_form(booking_ref)
        booking = bookings.find(reference)
        summary = ", ".join(f"{line.quantity} x {line.service}" for line in services)
        when = f" by {deliver_by}" if deliver_by else ""
        return f"Order for {reference} at {booking['berth_code']}: {summary}{when}. The dock crew will call on VHF channel 12."

    return order_services


# --- register_vessel --------------------------------------------------------------------------------

REGISTER_VESSEL_INPUT: JsonObject = {
    "type": "object",
    "properties": {
        "vessel_name": {"type": "string", "minLength": 1, "maxLength": 40},
        "home_port": {"type": "string", "minLength": 1, "maxLength": 60},
        "length_m": {"type": "number", "exclusiveMinimum": 0, "maximum": 60},
        "kind": {"type": "string", "enum": VESSEL_KINDS},
        "owner": {
            "type": "object",
            "properties": {
                "name": {"type": "string", "minLength": 1, "maxLength": 60},
                "email": EMAIL,
                "address": {
                    "type": "object",
                    "properties": {
                        "line1": {"type": "string", "minLength": 1, "maxLength": 80},
                        "postcode": {"type": "string", "pattern": "^[A-Z0-9 -]{3,10}$"},
                        "country": {"type": "string", "pattern": "^[A-Z]{2}$"},
                    },
                    "required": ["line1", "postcode", "country"],
                },
            },
            "required": ["name", "email"],
        },
    },
    "required": ["vessel_name", "home_port", "length_m", "kind", "owner"],
    "additionalProperties": False,
}


def _plate_line(vessel_name: str, home_port: str, length_m: float) -> bytes:
    # The quay's plate printer takes single-byte text.
    return f"{vessel_name.upper():<40}{home_port.upper():<60}{length_m:>6.1f}".encode("latin-1")


def register_vessel(vessel_name: str, home_port: str, length_m: float, kind: str, owner: JsonObject) -> str:
    try:
        plate = _plate_line(vessel_name, home_port, length_m)
        number = int(hashlib.sha256(plate).hexdigest()[:6], 16) % 100_000
        return f"Registered {vessel_name} ({kind}, {length_m} m) of {home_port} as SQ-{number:05d}."
    except Exception as exc:
        raise MCPError(
            code=INTERNAL_ERROR,
            message=f"registration failed: {exc!r}",
            data={"detail": traceback.format_exc()},
        ) from exc


# --- cancel_booking ---------------------------------------------------------------------------------

CANCEL_BOOKING_INPUT: JsonObject = {
    "type": "object",
    "properties": {
        "booking_ref": BOOKING_REF,
        "reason": {"type": "string", "enum": ["plans_changed", "vessel_repair", "duplicate", "other"]},
        "note": {"type": "string", "maxLength": 200},
    },
    "required": ["booking_ref", "reason"],
    "additionalProperties": False,
}
CANCEL_BOOKING_OUTPUT: JsonObject = {
    "type": "object",
    "properties": {
        "booking_ref": BOOKING_REF,
        "cancelled": {"type": "boolean"},
        "refund_cents": {"type": "integer", "minimum": 0},
    },
    "required": ["booking_ref", "cancelled", "refund_cents"],
}


def _cancel_booking(bookings: Bookings) -> Any:
    def cancel_booking(booking_ref: str, reason: str, note: str | None = None) -> JsonObject:
        bookings.find(booking_ref)
        del bookings.ledger[booking_ref]
        refund = 0 if reason == "duplicate" else int(booking_ref[-3:]) * 10
        return {"booking_ref": booking_ref, "cancelled": True, "refund_cents": refund}

    return cancel_booking


# --- extend_stay (next release) ---------------------------------------------------------------------

EXTEND_STAY_INPUT: JsonObject = {
    "type": "object",
    "properties": {"booking_ref": BOOKING_REF, "extra_nights": {"type": "integer", "minimum": 1, "maximum": 7}},
    "required": ["booking_ref", "extra_nights"],
    "additionalProperties": False,
}


def _extend_stay(bookings: Bookings) -> Any:
    def extend_stay(booking_ref: str, extra_nights: int) -> str:
        booking = bookings.find(booking_ref)
        return f"{booking_ref} extended by {extra_nights} night(s) to {booking['nights'] + extra_nights}, subject to berth availability."

    return extend_stay


# --- assembly ---------------------------------------------------------------------------------------


def _hints(*, read_only: bool, destructive: bool | None = None, idempotent: bool) -> ToolAnnotations:
    return ToolAnnotations(
        read_only_hint=read_only, destructive_hint=destructive, idempotent_hint=idempotent, open_world_hint=False
    )


def _next_release_schemas() -> dict[str, JsonObject]:
    """The schema edits of release 1.5.0, each listed in ``tests/demo_changes.py``."""
    list_input = copy.deepcopy(LIST_BERTHS_INPUT)
    list_input["properties"]["zone"]["enum"] = ["north", "south", "east"]
    quote_input = copy.deepcopy(QUOTE_FEE_INPUT)
    quote_input["properties"]["pay_by"] = {"type": "string", "enum": ["card", "account", "cash"]}
    quote_output = copy.deepcopy(QUOTE_FEE_OUTPUT)
    quote_output["required"] = ["total_cents", "lines"]
    book_input = copy.deepcopy(BOOK_BERTH_INPUT)
    book_input["properties"]["nights"]["maximum"] = 21
    book_input["properties"]["insurance_ref"] = {"type": "string", "pattern": "^INS-[0-9]{8}$"}
    book_input["required"] = [*book_input["required"], "insurance_ref"]
    return {"list_input": list_input, "quote_input": quote_input, "quote_output": quote_output, "book_input": book_input}


def build_server(release: str = "current") -> MCPServer:
    """Build the demo server of one release.

    :param release: ``"current"`` (1.4.0) or ``"next"`` (1.5.0).
    """
    if release not in RELEASES:
        raise ValueError(f"release={release!r} is not one of {sorted(RELEASES)}")
    nxt = release == "next"
    edits = _next_release_schemas() if nxt else {}
    bookings = Bookings()
    tools = [
        declared_tool(
            list_berths,
            name="list_berths",
            title="List berths",
            description=(
                "List the quay's berths that are free today, optionally by zone and minimum length; "
                "occupied berths only when asked."
                if nxt
                else "List the quay's berths, optionally filtered by zone and minimum length."
            ),
            input_schema=edits.get("list_input", LIST_BERTHS_INPUT),
            output_schema=LIST_BERTHS_OUTPUT,
            annotations=_hints(read_only=True, idempotent=True),
        ),
        declared_tool(
            quote_fee,
            name="quote_fee",
            title="Quote berth fee",
            description="Quote the fee for a stay: berth by the started metre and night, plus services.",
            input_schema=edits.get("quote_input", QUOTE_FEE_INPUT),
            output_schema=edits.get("quote_output", QUOTE_FEE_OUTPUT),
            annotations=_hints(read_only=True, idempotent=True),
        ),
        declared_tool(
            _book_berth(21 if nxt else 14, bookings),
            name="book_berth",
            title="Book a berth",
            description="Book a berth for a vessel from an arrival day for a number of nights.",
            input_schema=edits.get("book_input", BOOK_BERTH_INPUT),
            output_schema=BOOK_BERTH_OUTPUT,
            annotations=_hints(read_only=False, destructive=nxt, idempotent=False),
        ),
        declared_tool(
            register_vessel,
            name="register_vessel",
            description="Register a visiting vessel and its owner with the harbour office.",
            input_schema=REGISTER_VESSEL_INPUT,
        ),
        declared_tool(
            _cancel_booking(bookings),
            name="cancel_booking",
            title="Cancel a booking",
            description="Cancel a booking. The berth is released at once and cannot be restored.",
            input_schema=CANCEL_BOOKING_INPUT,
            output_schema=CANCEL_BOOKING_OUTPUT,
            annotations=_hints(read_only=False, destructive=True, idempotent=True),
        ),
    ]
    if nxt:
        tools.append(
            declared_tool(
                _extend_stay(bookings),
                name="extend_stay",
                title="Extend a stay",
                description="Add nights to an existing booking.",
                input_schema=EXTEND_STAY_INPUT,
                annotations=_hints(read_only=False, destructive=False, idempotent=False),
            )
        )
    mcp = MCPServer(
        "saltmarsh-quay-harbour-office",
        title="Saltmarsh Quay harbour office",
        version=RELEASES[release],
        instructions="Berths, fees, shore services and vessel registration at Saltmarsh Quay.",
        tools=tools,
        log_level="WARNING",
    )
    if not nxt:
        mcp.add_tool(
            _order_services(bookings),
            name="order_services",
            title="Order shore services",
            annotations=_hints(read_only=False, destructive=False, idempotent=True),
            structured_output=False,
        )
    _add_prompts_and_resources(mcp, arrival_required=nxt)
    return mcp


def _add_prompts_and_resources(mcp: MCPServer, *, arrival_required: bool) -> None:
    def plan_arrival_text(vessel_name: str, arrival_date: str | None) -> str:
        when = f" on {arrival_date}" if arrival_date else ""
        return (
            f"Plan the arrival of the vessel {vessel_name} at Saltmarsh Quay{when}: pick a free berth "
            "that fits, quote the fee and list the shore services worth ordering."
        )

    if arrival_required:

        @mcp.prompt(name="plan_arrival", title="Plan an arrival")
        def plan_arrival_next(vessel_name: str, arrival_date: str) -> str:
            """Draft an arrival plan for a visiting vessel."""
            return plan_arrival_text(vessel_name, arrival_date)

    else:

        @mcp.prompt(name="plan_arrival", title="Plan an arrival")
        def plan_arrival(vessel_name: str, arrival_date: str | None = None) -> str:
            """Draft an arrival plan for a visiting vessel."""
            return plan_arrival_text(vessel_name, arrival_date)

    @mcp.resource("harbour://office/hours", name="office_hours", mime_type="text/plain")
    def office_hours() -> str:
        """Opening hours of the harbour office."""
        return "Harbour office: 07:00-19:00 daily; VHF channel 12 around the clock."

    @mcp.resource("harbour://berths/plan", name="berth_plan", mime_type="application/json")
    def berth_plan() -> str:
        """Every berth of the quay with its zone and length."""
        return json.dumps(BERTHS)

    @mcp.resource("harbour://berths/{code}", name="berth", mime_type="application/json")
    def berth(code: str) -> str:
        """One berth by its code, e.g. harbour://berths/N-07."""
        for entry in BERTHS:
            if entry["code"] == code:
                return json.dumps(entry)
        raise ResourceNotFoundError(f"no berth {code!r}; see harbour://berths/plan for the codes")


server = build_server("current")
next_server = build_server("next")
