"""The approve flow end to end: differences shown, refused without confirmation, written with it."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from click.testing import CliRunner

from feeler.baseline import BaselineStore, approve
from feeler.baseline import cli as approve_cli
from feeler.catalog import Catalog


def catalog(enum: list[str]) -> Catalog:
    schema = {"type": "object", "properties": {"zone": {"type": "string", "enum": enum}}}
    return Catalog(revision="2025-11-25", era="handshake", tools=[{"name": "list_berths", "inputSchema": schema}])


@pytest.fixture
def files(tmp_path: Path) -> tuple[Path, Path, Path]:
    old, new = tmp_path / "old.json", tmp_path / "new.json"
    old.write_text(catalog(["inner", "outer"]).dumps())
    new.write_text(catalog(["inner"]).dumps())
    root = tmp_path / "baselines"
    result = CliRunner().invoke(approve_cli.approve, [str(old), "--baselines", str(root), "--name", "quay", "--yes"])
    assert result.exit_code == 0, result.output
    return old, new, root


def test_refused_without_terminal_or_yes(files: tuple[Path, Path, Path]) -> None:
    _, new, root = files
    before = BaselineStore(root, "quay").catalog_path.read_bytes()
    result = CliRunner().invoke(approve_cli.approve, [str(new), "--baselines", str(root), "--name", "quay"])
    assert result.exit_code == 2 and "pass --yes" in result.output
    assert BaselineStore(root, "quay").catalog_path.read_bytes() == before


def test_terminal_shows_diff_and_refusal_keeps_old(files: tuple[Path, Path, Path],
                                                   monkeypatch: pytest.MonkeyPatch) -> None:
    _, new, root = files
    monkeypatch.setattr(approve_cli, "_is_terminal", lambda: True)
    before = BaselineStore(root, "quay").catalog_path.read_bytes()
    result = CliRunner().invoke(approve_cli.approve, [str(new), "--baselines", str(root), "--name", "quay"],
                                input="n\n")
    assert "enum members removed: ['outer']" in result.output and "witness" in result.output
    assert result.exit_code == 1 and "nothing written" in result.output
    assert BaselineStore(root, "quay").catalog_path.read_bytes() == before


def test_terminal_confirmation_writes(files: tuple[Path, Path, Path], monkeypatch: pytest.MonkeyPatch) -> None:
    _, new, root = files
    monkeypatch.setattr(approve_cli, "_is_terminal", lambda: True)
    result = CliRunner().invoke(approve_cli.approve, [str(new), "--baselines", str(root), "--name", "quay"],
                                input="y\n")
    assert result.exit_code == 0, result.output
    assert "BREAKING" in result.output and "wrote" in result.output
    assert BaselineStore(root, "quay").read_catalog().to_json() == catalog(["inner"]).to_json()


def test_crash_mid_write_keeps_old_baseline(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    store = BaselineStore(tmp_path, "quay")
    approve(store, catalog(["inner", "outer"]), [], confirm=lambda _: True, echo=lambda _: None)
    before = {p: p.read_bytes() for p in (store.catalog_path, store.outputs_path)}
    real = os.replace
    calls = {"n": 0}

    def crash(src: str, dst: str) -> None:
        calls["n"] += 1
        if calls["n"] == 2:
            raise KeyboardInterrupt  # the user hits ^C between the two files
        real(src, dst)

    monkeypatch.setattr(os, "replace", crash)
    with pytest.raises(KeyboardInterrupt):
        approve(store, catalog(["inner"]), [{"tool": "list_berths", "arguments": {}, "result": {"n": 1}}],
                confirm=lambda _: True, echo=lambda _: None)
    assert {p: p.read_bytes() for p in before} == before


def test_outputs_changes_and_stale_records_are_shown(tmp_path: Path) -> None:
    store = BaselineStore(tmp_path, "quay")
    old_out = [{"tool": "list_berths", "arguments": {}, "result": {"n": 1}},
               {"tool": "gone", "arguments": {}, "result": {}}]
    approve(store, catalog(["inner"]), old_out, confirm=lambda _: True, echo=lambda _: None)
    shown: list[str] = []
    result = approve(store, catalog(["inner"]), [{"tool": "list_berths", "arguments": {}, "result": {"n": 2}}],
                     confirm=lambda _: False, echo=shown.append)
    text = "\n".join(shown)
    assert result.status == "refused"
    assert "'/n' 1 -> 2" in text and "stale: recorded output for tool 'gone'" in text


def test_nothing_to_approve(tmp_path: Path) -> None:
    store = BaselineStore(tmp_path, "quay")
    approve(store, catalog(["a"]), confirm=lambda _: True, echo=lambda _: None)
    asked: list[str] = []
    result = approve(store, catalog(["a"]), confirm=lambda q: asked.append(q) or True, echo=lambda _: None)
    assert result.status == "unchanged" and asked == []
