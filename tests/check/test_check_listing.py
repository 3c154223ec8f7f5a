"""`feeler check --list-checks` lists every registered check (the registry is the single source)."""

from __future__ import annotations

import pytest

from feeler.check import CHECKS
from feeler.cli import run


def test_list_checks_names_every_check(capsys: pytest.CaptureFixture[str]) -> None:
    assert run(["check", "--list-checks"]) == 0
    out = capsys.readouterr().out
    listed = {line.split()[0] for line in out.splitlines() if line and not line.startswith(" ")}
    assert listed == set(CHECKS)
    assert "JSON-RPC 2.0 section 5" in out  # each check names its reference
