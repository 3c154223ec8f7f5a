"""Former option, key and check names still work for one release, each with a one-line notice naming
the new one (issue 12; the names are in DEVELOPERS.md, "Vocabulary")."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from feeler import _deprecated
from feeler.check.registry import select_checks
from feeler.config import load_config

PY = sys.executable
DEMO = "feeler.demo.server:server"


@pytest.fixture(autouse=True)
def _fresh_notices() -> None:
    _deprecated._shown.clear()


def test_old_config_keys_are_read_under_their_new_names(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    (tmp_path / "pyproject.toml").write_text(
        '[tool.feeler]\ngo_examples = 4\nseed = 9\nrevision = "2025-11-25"\nchecks = ["envelope"]\nprofile = "nightly"\n',
        encoding="utf-8",
    )
    cfg = load_config(str(tmp_path / "pyproject.toml"))
    assert cfg.values == {"samples": 4, "sample_seed": 9, "protocol_version": "2025-11-25",
                          "only_checks": ["envelope"], "depth": "deep"}
    err = capsys.readouterr().err.splitlines()
    assert "feeler: [tool.feeler] go_examples is deprecated and will be removed in the next release; use samples" in err
    assert any(line.endswith("use depth") for line in err) and len(err) == 5


def test_the_new_key_wins_over_the_old_one(tmp_path: Path) -> None:
    (tmp_path / "pyproject.toml").write_text("[tool.feeler]\ngo_examples = 4\nsamples = 7\n", encoding="utf-8")
    assert load_config(str(tmp_path / "pyproject.toml")).values == {"samples": 7}


def test_an_unknown_depth_is_a_usage_error(tmp_path: Path) -> None:
    from feeler.errors import UsageError

    (tmp_path / "pyproject.toml").write_text('[tool.feeler]\ndepth = "nightly-ish"\n', encoding="utf-8")
    with pytest.raises(UsageError, match="depth='nightly-ish' must be one of quick, standard, deep"):
        load_config(str(tmp_path / "pyproject.toml"))


def test_old_check_names_select_the_renamed_checks(capsys: pytest.CaptureFixture[str]) -> None:
    chosen = [c.name for c in select_checks(["go_accepted", "nogo_rejected"], ["accepts_some_go"])]
    assert chosen == ["go_enters", "nogo_stops"]
    assert "use 'go_enters'" in capsys.readouterr().err


def test_old_cli_options_work_with_a_notice() -> None:
    # --go-examples/--seed/--check/--revision on a dry run against the in-process demo (calls no tool).
    args = [PY, "-m", "feeler.cli", "check", "--dry-run", "--go-examples", "2", "--seed", "3", "--check", "envelope",
            "--revision", "2025-11-25", "--include", "quote_fee", DEMO]
    done = subprocess.run(args, capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    for old, new in (("--go-examples", "--samples"), ("--seed", "--sample-seed"), ("--check", "--only-check"),
                     ("--revision", "--protocol-version")):
        assert f"feeler: {old} is deprecated and will be removed in the next release; use {new}" in done.stderr
    planned = [json.loads(line) for line in done.stdout.splitlines()]
    assert sum(1 for p in planned if p["source"] == "sampled") == 2  # --go-examples 2 became --samples 2
    again = subprocess.run([PY, "-m", "feeler.cli", "check", "--dry-run", "--samples", "2", "--sample-seed", "3",
                            "--only-check", "envelope", "--protocol-version", "2025-11-25", "--include", "quote_fee",
                            DEMO], capture_output=True, text=True, timeout=120)
    assert again.returncode == 0 and again.stdout == done.stdout and "deprecated" not in again.stderr
