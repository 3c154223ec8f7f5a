"""The project's own baselines/ holds the demo server's approved catalog; the suite fails if the demo drifts."""

from __future__ import annotations

from pathlib import Path

import pytest

from feeler.baseline import BaselineStore
from feeler.diff import diff_catalogs, render

ROOT = Path(__file__).resolve().parents[2] / "baselines"
TARGET = "feeler.demo.server:server"


def test_demo_matches_its_approved_baseline() -> None:
    store = BaselineStore(ROOT, TARGET)
    if not store.exists():
        pytest.fail(f"no approved baseline at {store.folder}; record it with "
                    f"`feeler approve {TARGET} --yes` from the project root")
    from feeler.connect import capture_catalog

    report = diff_catalogs(store.read_catalog(), capture_catalog(TARGET), samples=5)
    assert report.changes == [], "the demo drifted from its baseline; if intended, run `feeler approve " \
        f"{TARGET}`:\n{render(report)}"


def test_demo_outputs_match_their_recorded_baseline() -> None:
    """The recorded outputs of the demo's pinned go cases (read-only tools) still come back the same."""
    from feeler.baseline.record import record_outputs, rerun_records
    from feeler.connect import capture, connected
    from feeler.diff.outputs import compare_outputs

    store = BaselineStore(ROOT, TARGET)
    records = store.read_outputs()
    assert records, f"no recorded outputs at {store.outputs_path}; run `feeler approve {TARGET} --record-outputs --yes`"
    with connected(TARGET) as session:
        again = rerun_records(session, records)
        # The pinned cases are deterministic: recording afresh gives the same cases (same arguments).
        fresh = record_outputs(session, capture(session))
    assert compare_outputs(records, again) == [], "the demo's outputs drifted from outputs.json"
    def cases(rs: list) -> list:
        import json

        return sorted((r["tool"], json.dumps(r["arguments"], sort_keys=True)) for r in rs)

    assert cases(fresh) == cases(records)
    # Only read-only tools are recorded by default: calling others would change the server's state.
    assert {r["tool"] for r in records} == {"list_berths", "quote_fee"}


def test_output_change_is_reported_with_masks(tmp_path) -> None:
    """A changed output is listed (deepdiff); a masked volatile field is not."""
    from feeler.diff.outputs import OutputMasks, compare_outputs

    old = [{"tool": "quote_fee", "arguments": {"nights": 1}, "result": {"structuredContent": {"total_cents": 100, "issuedAt": "a"}}}]
    new = [{"tool": "quote_fee", "arguments": {"nights": 1}, "result": {"structuredContent": {"total_cents": 120, "issuedAt": "b"}}}]
    changes = compare_outputs(old, new, OutputMasks(paths=("$.structuredContent.issuedAt",)))
    assert [c.path for c in changes] == ["/structuredContent/total_cents"]
