"""Checks on every answer: the registry, the built-in checks, the runner and its findings."""

from __future__ import annotations

from feeler.check import builtin as _builtin  # noqa: F401 - registers the built-in checks
from feeler.check import probes as _probes  # noqa: F401 - registers the probe check
from feeler.check import trust as _trust  # noqa: F401 - registers failure_as_success
from feeler.check import audit as _audit  # noqa: F401 - registers the catalog audit checks
from feeler.check import poison as _poison  # noqa: F401 - registers poisoned_text
from feeler.world import invariants as _invariants  # noqa: F401 - registers the chain invariants
from feeler.check.findings import Finding, FindingSet
from feeler.check.registry import CHECKS, CallContext, Check, CheckSettings, Problem, register, select_checks

__all__ = ["CHECKS", "CallContext", "Check", "CheckSettings", "Finding", "FindingSet", "Problem", "register", "select_checks"]
