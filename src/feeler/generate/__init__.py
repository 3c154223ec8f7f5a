"""Go and no-go arguments from a tool's input schema, each proven by the oracle (``jsonschema``); sampled go
arguments of an exact schema are valid by construction, the oracle auditing a share (``fast_go_cases``).

Public API only; the code lives in the private modules and in the keyword tables
(:data:`~feeler.generate.mutators.MUTATORS`, :data:`~feeler.generate.boundaries.BOUNDARIES`)::

    from feeler.generate import ToolSchema, go_cases, nogo_cases, arguments, coverage
"""

from __future__ import annotations

from feeler.generate._fast import GeneratorBugWarning
from feeler.generate._model import compile_schema
from feeler.generate._schema import DEFAULT_RECURSION_DEPTH, DIALECTS, ToolSchema
from feeler.generate.boundaries import BOUNDARIES
from feeler.generate.cases import Case, Tally, arguments, drawn_cases, fast_go_cases, go_cases, nogo_cases
from feeler.generate.coverage import KeywordCoverage, coverage
from feeler.generate.mutators import MUTATORS
from feeler.generate.probes import Probe, protocol_probes

__all__ = [
    "BOUNDARIES",
    "DEFAULT_RECURSION_DEPTH",
    "DIALECTS",
    "MUTATORS",
    "Case",
    "GeneratorBugWarning",
    "KeywordCoverage",
    "Probe",
    "Tally",
    "ToolSchema",
    "arguments",
    "compile_schema",
    "coverage",
    "drawn_cases",
    "fast_go_cases",
    "go_cases",
    "nogo_cases",
    "protocol_probes",
]
