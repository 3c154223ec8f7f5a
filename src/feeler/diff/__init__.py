"""Breaking-change detection between two catalogs or two schemas, with witnesses (issue 5)."""
from __future__ import annotations

from feeler.diff.catalog import CATALOG_RULES, DiffReport, diff_catalogs, diff_tool
from feeler.diff.engine import DEFAULT_SAMPLES, diff_schemas
from feeler.diff.model import Change, Direction, Effect, SchemaEdit, Verdict, bump_for, overall_bump
from feeler.diff.outputs import OutputChange, OutputMasks, apply_masks, compare_outputs
from feeler.diff.report import render
from feeler.diff.rules import SCHEMA_RULES, schema_rule

__all__ = [
    "CATALOG_RULES",
    "DiffReport",
    "OutputChange",
    "OutputMasks",
    "apply_masks",
    "compare_outputs",
    "diff_catalogs",
    "diff_tool",
    "render",
    "DEFAULT_SAMPLES",
    "SCHEMA_RULES",
    "Change",
    "Direction",
    "Effect",
    "SchemaEdit",
    "Verdict",
    "bump_for",
    "diff_schemas",
    "overall_bump",
    "schema_rule",
]
