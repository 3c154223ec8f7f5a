"""The values the diff engine produces: :class:`Change`, verdicts, directions and Semantic Versioning bumps.

A rule never builds a :class:`Change` itself: it yields a :class:`SchemaEdit` (what happened to the set of
accepted values, and a message), and the engine fills in tool, direction, paths, verdict and witness —
as jsonschema's ``iter_errors`` fills in the context of a keyword's error.
"""

from __future__ import annotations

import enum
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from typing import Any

__all__ = [
    "BUMP_ORDER",
    "Change",
    "Direction",
    "Effect",
    "SchemaEdit",
    "Verdict",
    "bump_for",
    "overall_bump",
]


class Direction(str, enum.Enum):
    """Which way values flow through the schema: arguments *into* the server or results *out of* it."""

    INPUT = "input"
    OUTPUT = "output"
    #: Catalog-level changes (tool removed, annotations, prompts...) that concern no schema.
    CATALOG = "catalog"


class Verdict(str, enum.Enum):
    """What a change means for existing clients."""

    #: A witness proves it: an old client's request (or an old client's expectation of a result) now fails.
    BREAKING = "breaking"
    #: A rule says breaking but no witness was found within the budget; kept, never dropped, with the reason.
    LIKELY_BREAKING = "likely-breaking"
    #: Existing clients keep working (an addition, a loosened input, a narrowed output).
    COMPATIBLE = "compatible"
    #: Nothing a validator can decide: a human should look (description, title, an unresolvable $ref...).
    REVIEW = "review"


class Effect(str, enum.Enum):
    """What a keyword edit does to the set of instances a schema accepts."""

    NARROWS = "narrows"  # new accepts a subset of old: breaks inputs
    WIDENS = "widens"  # new accepts a superset of old: breaks outputs
    CHANGES = "changes"  # neither a subset nor a superset (pattern replaced, const changed): breaks both
    NEUTRAL = "neutral"  # annotation-only keywords: description, title, examples
    ADDS = "adds"  # declares something new (an optional property): a compatible addition both ways


#: Witness candidates: called with (accepting subschema, rejecting subschema), yields local values.
Candidates = Callable[[Any, Any], Iterable[Any]]


@dataclass
class SchemaEdit:
    """What one rule reports at one place in a schema pair; the engine turns it into a :class:`Change`.

    :param effect: how the edit moves the set of accepted instances.
    :param message: a plain sentence, without tool or path (the engine adds them).
    :param candidates: a function yielding local witness candidates, given the schema that must accept
        the witness and the one that must reject it; ``None`` leaves the search to the generic builder.
    :param keyword: the keyword the finding is about, appended to the schema path.
    :param review: a non-validating change that a human should read (``effect`` is then NEUTRAL).
    """

    effect: Effect
    message: str
    candidates: Candidates | None = None
    keyword: str | None = None
    review: bool = False
    #: On an input schema, report REVIEW instead of the effect's verdict (e.g. an argument dropped from
    #: an open object: every old call still validates, but the server now ignores that argument).
    input_review: bool = False


@dataclass
class Change:
    """One difference between two catalogs (or two schemas), with its verdict and its proof.

    :param rule: the rule's name, e.g. ``"enum"`` or ``"tool-removed"``.
    :param direction: input, output, or catalog.
    :param verdict: see :class:`Verdict`.
    :param message: a human sentence naming what changed.
    :param subject: what the change is about: ``"tool:create_ticket"``, ``"prompt:triage"``, ``"capabilities"``.
    :param keyword_location: where in the schema, a JSON Pointer (``/properties/size/maximum``); empty
        for catalog changes.
    :param instance_location: where in the argument / result, a JSON Pointer (``/size``, ``""`` for the
        root); empty for catalog changes.
    :param witness: a whole argument object (input) or result (output) that proves the verdict, or None.
    :param samples_tried: how many instances were checked while looking for a witness.
    :param reason: why a breaking-looking change was downgraded to likely-breaking, or other detail.
    :param hint: an extra pointer (e.g. "probably renamed to X").
    """

    rule: str
    direction: Direction
    verdict: Verdict
    message: str
    subject: str = ""
    keyword_location: str = ""
    instance_location: str = ""
    witness: Any = None
    samples_tried: int = 0
    reason: str = ""
    hint: str = ""
    has_witness: bool = field(default=False)
    #: True when the change adds something clients may start to use (an input accepting more values).
    addition: bool = False
    #: A ``review`` a person must clear before release: it fails ``feeler diff`` like a breaking change
    #: and bumps major (e.g. a description that now carries text aimed at the model).
    blocks: bool = False

    @property
    def bump(self) -> str:
        return bump_for(self)

    @property
    def is_breaking(self) -> bool:
        """True for breaking *and* likely-breaking: both fail `feeler diff` (see diff-docs)."""
        return self.verdict in (Verdict.BREAKING, Verdict.LIKELY_BREAKING)

    @property
    def fails(self) -> bool:
        """True when the change fails ``feeler diff``: breaking, likely-breaking, or a blocking review."""
        return self.is_breaking or self.blocks

    def to_json(self) -> dict[str, Any]:
        out: dict[str, Any] = {
            "rule": self.rule,
            "direction": self.direction.value,
            "verdict": self.verdict.value,
            "bump": self.bump,
            "subject": self.subject,
            "message": self.message,
            "keywordLocation": self.keyword_location,
            "instanceLocation": self.instance_location,
            "samplesTried": self.samples_tried,
        }
        if self.has_witness:
            out["witness"] = self.witness
        if self.reason:
            out["reason"] = self.reason
        if self.hint:
            out["hint"] = self.hint
        if self.blocks:
            out["blocks"] = True
        return out


#: Semantic Versioning 2.0.0 bump levels, least to most severe.
BUMP_ORDER = ("none", "patch", "minor", "major")

#: Rules that add something a client may start to use: a MINOR bump (semver.org item 7).
ADDITIVE_KINDS = frozenset(
    {
        "tool-added",
        "prompt-added",
        "resource-added",
        "resource-template-added",
        "capability-added",
        "revision-added",
        "output-schema-added",
        "prompt-argument-added",
    }
)


def bump_for(change: Change) -> str:
    """Map a change to a Semantic Versioning 2.0.0 bump (semver.org items 6-8).

    Breaking and likely-breaking -> ``major`` (item 8: incompatible API changes); a compatible
    addition of functionality -> ``minor`` (item 7); every other change -> ``patch`` (item 6).
    A compatible input widening counts as an addition (new arguments are accepted), so ``minor``.
    """
    if change.is_breaking or change.blocks:
        return "major"
    if change.verdict is Verdict.COMPATIBLE and (change.rule in ADDITIVE_KINDS or change.addition):
        return "minor"
    return "patch"


def overall_bump(changes: Iterable[Change]) -> str:
    """The largest bump among *changes*, or ``"none"`` when there are none."""
    best = 0
    for change in changes:
        best = max(best, BUMP_ORDER.index(change.bump))
    return BUMP_ORDER[best]
