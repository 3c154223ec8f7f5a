"""Our own corpus: one tool input schema per JSON Schema keyword and keyword combination.

Every scenario is invented (a lighthouse, an allotment, a ferry desk...); no real product, company
or person. Each entry names the specification sections it exercises: JSON Schema 2020-12 Core
("core") and Validation ("validation"), and the draft-07 / 2019-09 spellings (``items`` as an array,
``additionalItems``, ``dependencies``, ``definitions``). ``tests/generate/test_gen_keywords.py`` holds
every entry to the oracle and to "every constraint keyword at every place is broken".
"""

from __future__ import annotations

from typing import Any, NamedTuple


class Entry(NamedTuple):
    name: str
    sections: str
    schema: dict[str, Any]


DRAFT7 = "http://json-schema.org/draft-07/schema#"
DRAFT2019 = "https://json-schema.org/draft/2019-09/schema"

CORPUS: list[Entry] = [
    Entry("lantern_type_enum_const", "validation 6.1.1 type, 6.1.2 enum, 6.1.3 const", {
        "type": "object",
        "properties": {
            "lamp": {"type": "string", "enum": ["oil", "gas", "electric"]},
            "shift": {"type": ["integer", "null"]},
            "keeper": {"const": "night"},
            "wick": {"enum": [1, "long", None]},
        },
        "required": ["lamp", "keeper"],
    }),
    Entry("tide_numbers", "validation 6.2.1 multipleOf, 6.2.2 maximum, 6.2.3 exclusiveMaximum, 6.2.4 minimum, 6.2.5 exclusiveMinimum", {
        "type": "object",
        "properties": {
            "tide_cm": {"type": "integer", "minimum": -50, "maximum": 400},
            "depth_m": {"type": "number", "exclusiveMinimum": 0, "exclusiveMaximum": 12.5},
            "sounding": {"type": "integer", "multipleOf": 5},
            "ratio": {"type": "number", "multipleOf": 0.25, "minimum": 0},
        },
        "required": ["tide_cm", "depth_m"],
    }),
    Entry("seed_packet_strings", "validation 6.3.1 maxLength, 6.3.2 minLength, 6.3.3 pattern (ECMA-262, core 6.4)", {
        "type": "object",
        "properties": {
            "code": {"type": "string", "pattern": "^[A-Z]{3}-\\d{2}$"},
            "variety": {"type": "string", "minLength": 2, "maxLength": 12},
            "row": {"type": "string", "maxLength": 3.0},
        },
        "required": ["code", "variety"],
    }),
    Entry("ferry_desk_formats", "validation 7.3 format (dates, email, uri, uuid, ip addresses, hostname)", {
        "type": "object",
        "properties": {
            "sails_on": {"type": "string", "format": "date"},
            "boards_at": {"type": "string", "format": "date-time"},
            "gate_opens": {"type": "string", "format": "time"},
            "purser": {"type": "string", "format": "email"},
            "timetable": {"type": "string", "format": "uri"},
            "booking": {"type": "string", "format": "uuid"},
            "kiosk_v4": {"type": "string", "format": "ipv4"},
            "kiosk_v6": {"type": "string", "format": "ipv6"},
            "host": {"type": "string", "format": "hostname"},
        },
        "required": ["sails_on", "purser"],
    }),
    Entry("crate_arrays", "validation 6.4.1 maxItems, 6.4.2 minItems, 6.4.3 uniqueItems; core 10.3.1.2 items", {
        "type": "object",
        "properties": {
            "crates": {"type": "array", "items": {"type": "integer", "minimum": 1}, "minItems": 1, "maxItems": 4, "uniqueItems": True},
            "labels": {"type": "array", "items": {"type": "string", "maxLength": 5}, "minItems": 1.0},
        },
        "required": ["crates"],
    }),
    Entry("hive_contains", "core 10.3.1.3 contains; validation 6.4.4 maxContains, 6.4.5 minContains", {
        "type": "object",
        "properties": {
            "frames": {"type": "array", "items": {"type": "integer"}, "contains": {"type": "integer", "minimum": 10},
                       "minContains": 2, "maxContains": 3.0},
            "queens": {"type": "array", "contains": {"const": "marked"}},
        },
        "required": ["frames"],
    }),
    Entry("seat_prefix_items", "core 10.3.1.1 prefixItems, 10.3.1.2 items (false and a schema)", {
        "type": "object",
        "properties": {
            "seat": {"type": "array", "prefixItems": [{"type": "string", "maxLength": 4}, {"type": "integer", "minimum": 0}],
                     "items": False, "minItems": 2},
            "row": {"type": "array", "prefixItems": [{"enum": ["stalls", "circle"]}], "items": {"type": "number", "maximum": 5}},
        },
        "required": ["seat"],
    }),
    Entry("bakery_objects", "validation 6.5.1 maxProperties, 6.5.2 minProperties, 6.5.3 required, 6.5.4 dependentRequired; core 10.3.2.3 additionalProperties false", {
        "type": "object",
        "properties": {
            "loaf": {"type": "string", "maxLength": 10},
            "count": {"type": "integer", "minimum": 1},
            "discount": {"type": "boolean"},
            "coupon": {"type": "string", "minLength": 4},
        },
        "required": ["loaf"],
        "minProperties": 2,
        "maxProperties": 3.0,
        "dependentRequired": {"discount": ["coupon"]},
        "additionalProperties": False,
    }),
    Entry("allotment_additional_properties", "core 10.3.2.3 additionalProperties (a schema)", {
        "type": "object",
        "properties": {"plot": {"type": "string"}},
        "required": ["plot"],
        "additionalProperties": {"type": "integer", "maximum": 9},
    }),
    Entry("greenhouse_pattern_properties", "core 10.3.2.2 patternProperties, 10.3.2.3 additionalProperties false", {
        "type": "object",
        "properties": {"house": {"type": "string", "maxLength": 8}},
        "required": ["house"],
        "patternProperties": {"^bed_[0-9]+$": {"type": "string", "maxLength": 6}},
        "additionalProperties": False,
    }),
    Entry("choir_property_names", "core 10.3.2.4 propertyNames", {
        "type": "object",
        "properties": {"alto": {"type": "integer", "minimum": 0}},
        "required": ["alto"],
        "propertyNames": {"pattern": "^[a-z]+$", "maxLength": 8},
        "additionalProperties": {"type": "integer"},
    }),
    Entry("picnic_dependent_schemas", "core 10.2.2.4 dependentSchemas", {
        "type": "object",
        "properties": {"delivery": {"type": "boolean"}, "address": {"type": "string"}, "basket": {"type": "integer"}},
        "required": ["basket"],
        "dependentSchemas": {"delivery": {"required": ["address"], "properties": {"address": {"minLength": 5}}}},
    }),
    Entry("kiln_all_of", "core 10.2.1.1 allOf", {
        "type": "object",
        "allOf": [
            {"properties": {"cone": {"type": "integer", "minimum": 1}}},
            {"properties": {"cone": {"maximum": 9}}, "required": ["cone"]},
        ],
    }),
    Entry("parcel_any_of_branches", "core 10.2.1.2 anyOf: keywords broken inside each branch, valid under no branch", {
        "type": "object",
        "properties": {
            "contact": {"anyOf": [{"type": "string", "format": "email"}, {"type": "null"}]},
            "locker": {"anyOf": [{"type": "string", "maxLength": 4}, {"type": "integer", "minimum": 100}]},
        },
        "required": ["contact", "locker"],
    }),
    Entry("ticket_one_of", "core 10.2.1.3 oneOf: branch-local keywords, and a value valid under two branches", {
        "type": "object",
        "properties": {
            "pass": {"oneOf": [
                {"type": "object", "properties": {"kind": {"const": "day"}, "date": {"type": "string", "format": "date"}},
                 "required": ["kind", "date"]},
                {"type": "object", "properties": {"kind": {"const": "season"}, "months": {"type": "integer", "minimum": 1, "maximum": 12}},
                 "required": ["kind", "months"]},
            ]},
            "band": {"oneOf": [{"type": "integer", "multipleOf": 3}, {"type": "integer", "multipleOf": 5}]},
        },
        "required": ["pass", "band"],
    }),
    Entry("guest_not", "core 10.2.1.4 not", {
        "type": "object",
        "properties": {"name": {"type": "string", "not": {"pattern": "^admin"}}, "room": {"type": "integer"}, "suite": {"type": "integer"}},
        "required": ["name"],
        "not": {"required": ["room", "suite"]},
    }),
    Entry("order_if_then_else", "core 10.2.2.1 if, 10.2.2.2 then, 10.2.2.3 else", {
        "type": "object",
        "properties": {"method": {"enum": ["post", "pickup"]}, "address": {"type": "string"}, "counter": {"type": "integer"}},
        "required": ["method"],
        "if": {"properties": {"method": {"const": "post"}}},
        "then": {"required": ["address"], "properties": {"address": {"minLength": 6}}},
        "else": {"required": ["counter"], "properties": {"counter": {"minimum": 1, "maximum": 20}}},
    }),
    Entry("repair_else_alone", "core 10.2.2.3 else without then", {
        "type": "object",
        "properties": {"urgent": {"type": "boolean"}, "note": {"type": "string"}},
        "required": ["urgent"],
        "if": {"properties": {"urgent": {"const": True}}},
        "else": {"required": ["note"], "properties": {"note": {"maxLength": 10}}},
    }),
    Entry("workshop_unevaluated_properties", "core 11.3 unevaluatedProperties (false, and a schema)", {
        "type": "object",
        "properties": {
            "bench": {"type": "object", "allOf": [{"properties": {"vice": {"type": "integer"}}}],
                      "properties": {"clamp": {"type": "string"}}, "unevaluatedProperties": False},
            "drawer": {"type": "object", "properties": {"id": {"type": "integer"}},
                       "unevaluatedProperties": {"type": "string", "maxLength": 3}},
        },
        "required": ["bench", "drawer"],
    }),
    Entry("loom_unevaluated_items", "core 11.2 unevaluatedItems (false, and a schema)", {
        "type": "object",
        "properties": {
            "warp": {"type": "array", "prefixItems": [{"type": "string"}], "unevaluatedItems": False},
            "weft": {"type": "array", "prefixItems": [{"type": "string"}], "unevaluatedItems": {"type": "integer", "maximum": 3}},
        },
        "required": ["warp", "weft"],
    }),
    Entry("library_ids_and_anchors", "core 8.2.1 $id, 8.2.2 $anchor, 8.2.3.1 $ref, 8.2.4 $defs, 9.2 embedded resources", {
        "$id": "https://example.org/schemas/lending.json",
        "type": "object",
        "properties": {"member": {"$ref": "member.json"}, "days": {"$ref": "#loan-days"}, "shelf": {"$ref": "#/$defs/shelf"}},
        "required": ["member", "days"],
        "$defs": {
            "m": {"$id": "member.json", "type": "object", "properties": {"card": {"type": "string", "pattern": "^C[0-9]{4}$"}},
                  "required": ["card"]},
            "d": {"$anchor": "loan-days", "type": "integer", "minimum": 1, "maximum": 28},
            "shelf": {"type": "string", "maxLength": 3},
        },
    }),
    Entry("forum_recursive_thread", "core 8.2.3.1 $ref to an ancestor (recursion, generated to the depth setting)", {
        "type": "object",
        "properties": {"thread": {"$ref": "#/$defs/comment"}},
        "required": ["thread"],
        "$defs": {"comment": {"type": "object", "properties": {
            "text": {"type": "string", "maxLength": 20},
            "replies": {"type": "array", "items": {"$ref": "#/$defs/comment"}, "maxItems": 2},
        }, "required": ["text"]}},
    }),
    Entry("stable_draft07", "draft-07: items as an array, additionalItems, dependencies (both forms), definitions, $ref ignores siblings", {
        "$schema": DRAFT7,
        "type": "object",
        "definitions": {"stall": {"type": "integer", "minimum": 1}},
        "properties": {
            "pair": {"type": "array", "items": [{"type": "string"}, {"$ref": "#/definitions/stall"}], "additionalItems": False,
                     "minItems": 2},
            "feed": {"type": "array", "items": [{"type": "string"}], "additionalItems": {"type": "integer", "maximum": 3}},
            "pony": {"type": "integer"},
            "rider": {"type": "integer"},
            "saddle": {"type": "string"},
        },
        "required": ["pair", "pony"],
        "dependencies": {"pony": ["rider"], "saddle": {"properties": {"rider": {"maximum": 5}}}},
    }),
    Entry("mill_draft2019", "2019-09: items as an array with additionalItems, dependentRequired, $defs", {
        "$schema": DRAFT2019,
        "type": "object",
        "$defs": {"stone": {"type": "string", "enum": ["granite", "basalt"]}},
        "properties": {
            "run": {"type": "array", "items": [{"$ref": "#/$defs/stone"}], "additionalItems": {"type": "integer", "minimum": 0}},
            "sacks": {"type": "integer"},
            "miller": {"type": "string"},
        },
        "required": ["run"],
        "dependentRequired": {"sacks": ["miller"]},
    }),
    Entry("harbour_nested_combination", "core 10.3.1.2 items of objects, 10.2.1.2 anyOf inside, 10.2.2 if inside an item", {
        "type": "object",
        "properties": {
            "berths": {"type": "array", "minItems": 1, "items": {
                "type": "object",
                "properties": {
                    "boat": {"type": "string", "minLength": 1, "maxLength": 12},
                    "length_m": {"anyOf": [{"type": "number", "exclusiveMinimum": 0, "maximum": 30}, {"type": "null"}]},
                    "power": {"type": "boolean"},
                    "socket": {"type": "string"},
                },
                "required": ["boat"],
                "if": {"properties": {"power": {"const": True}}, "required": ["power"]},
                "then": {"required": ["socket"], "properties": {"socket": {"enum": ["16A", "32A"]}}},
            }},
        },
        "required": ["berths"],
    }),
]
