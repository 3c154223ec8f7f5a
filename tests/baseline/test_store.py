"""Baseline store: atomic writes, deterministic bytes, corrupt-file errors, the writer lock, stale folders."""

from __future__ import annotations

import datetime as dt
import json
import os
from pathlib import Path

import pytest

from feeler.baseline import (
    BaselineStore,
    BaselineWarning,
    is_writer,
    stale_baselines,
    stale_records,
    target_slug,
    writer_lock,
)
from feeler.catalog import Catalog
from feeler.errors import BaselineError

DAY = dt.date(2026, 1, 2)


def catalog(*names: str) -> Catalog:
    return Catalog(revision="2025-11-25", era="handshake", supported_revisions=["2025-11-25"],
                   server={"name": "quay", "version": "1.0"},
                   tools=[{"name": n, "inputSchema": {"type": "object", "properties": {"x": {"type": "number"}}}}
                          for n in names])


OUTPUTS = [{"tool": "b", "arguments": {"x": 1.0}, "result": {"content": []}},
           {"tool": "a", "arguments": {}, "result": {"content": [{"type": "text", "text": "ok"}]}}]


def test_slug_keeps_no_secret() -> None:
    assert target_slug("http://user:pw@127.0.0.1:8000/mcp?token=abc#x") == "127.0.0.1-8000-mcp"
    assert target_slug("feeler.demo.server:server") == "feeler.demo.server-server"
    assert target_slug("python /home/me/servers/shop.py --port 1") == "python-shop.py-port-1"
    assert len(target_slug("x" * 500)) <= 60


def test_write_read_round_trip_and_header(tmp_path: Path) -> None:
    store = BaselineStore(tmp_path, "feeler.demo.server:server")
    written = store.write(catalog("a", "b"), OUTPUTS, source_ref="abc123", today=DAY)
    assert written == [store.catalog_path, store.outputs_path]
    assert store.read_catalog().to_json() == catalog("a", "b").to_json()
    assert [r["tool"] for r in store.read_outputs()] == ["a", "b"]  # sorted for stable diffs
    header = store.read_header()
    assert header == {"format": "feeler-baseline/2", "feeler": header["feeler"], "date": "2026-01-02",
                      "sourceRef": "abc123"}
    text = store.catalog_path.read_text()
    assert text.endswith("\n") and '"x": 1' not in text  # canonical: 1.0 is written as 1 in outputs
    assert '"x": 1\n' in store.outputs_path.read_text() or '"x": 1,' in store.outputs_path.read_text()
    assert "environ" not in text and "token" not in text


def test_deterministic_bytes(tmp_path: Path) -> None:
    one, two = BaselineStore(tmp_path / "1", "t"), BaselineStore(tmp_path / "2", "t")
    one.write(catalog("b", "a"), OUTPUTS, today=DAY)
    two.write(catalog("a", "b"), list(reversed(OUTPUTS)), today=DAY)
    assert one.catalog_path.read_bytes() == two.catalog_path.read_bytes()
    assert one.outputs_path.read_bytes() == two.outputs_path.read_bytes()


def test_unchanged_content_is_not_rewritten(tmp_path: Path) -> None:
    store = BaselineStore(tmp_path, "t")
    store.write(catalog("a"), today=DAY)
    before = store.catalog_path.read_bytes()
    assert store.write(catalog("a"), today=dt.date(2027, 5, 5)) == []  # the date alone never churns git
    assert store.catalog_path.read_bytes() == before


@pytest.mark.parametrize(("text", "where"), [
    ('{\n  "format": "feeler-catalog/1",\n  "tools": [,]\n}\n', ":3:13:"),
    ("", ":1:1:"),
])
def test_corrupt_file_names_file_line_and_fix(tmp_path: Path, text: str, where: str) -> None:
    store = BaselineStore(tmp_path, "t")
    store.folder.mkdir(parents=True)
    store.catalog_path.write_text(text)
    with pytest.raises(BaselineError) as info:
        store.read_catalog()
    message = str(info.value)
    assert f"{store.catalog_path}{where}" in message
    assert "restore it from git or run `feeler approve`" in message


def test_hand_edited_header_is_reported(tmp_path: Path) -> None:
    store = BaselineStore(tmp_path, "t")
    store.write(catalog("a"), today=DAY)
    data = json.loads(store.catalog_path.read_text())
    data["baseline"]["format"] = "feeler-baseline/0"
    store.catalog_path.write_text(json.dumps(data))
    with pytest.raises(BaselineError, match="format='feeler-baseline/0'"):
        store.read_catalog()
    with pytest.warns(BaselineWarning):
        assert store.catalog_or_none() is None  # storage never breaks a run


def test_missing_baseline_says_to_approve(tmp_path: Path) -> None:
    with pytest.raises(BaselineError, match="run `feeler approve`"):
        BaselineStore(tmp_path, "nothing").read_catalog()


def test_crash_while_writing_temp_leaves_old_intact(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    store = BaselineStore(tmp_path, "t")
    store.write(catalog("a"), OUTPUTS, today=DAY)
    before = {p: p.read_bytes() for p in (store.catalog_path, store.outputs_path)}
    real_fsync = os.fsync
    calls = {"n": 0}

    def failing_fsync(fd: int) -> None:
        calls["n"] += 1
        if calls["n"] == 3:  # in the middle: after the first file's temp and backup, during the second's
            raise OSError("disk full")
        real_fsync(fd)

    monkeypatch.setattr(os, "fsync", failing_fsync)
    with pytest.raises(OSError, match="disk full"):
        store.write(catalog("a", "zz"), OUTPUTS[:1], today=DAY)
    assert {p: p.read_bytes() for p in before} == before
    assert sorted(p.name for p in store.folder.iterdir()) == ["catalog.json", "outputs.json"]  # no temp left


def test_crash_between_replaces_rolls_back(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    store = BaselineStore(tmp_path, "t")
    store.write(catalog("a"), OUTPUTS, today=DAY)
    before = {p: p.read_bytes() for p in (store.catalog_path, store.outputs_path)}
    real_replace = os.replace
    calls = {"n": 0}

    def failing_replace(src: str, dst: str) -> None:
        calls["n"] += 1
        if calls["n"] == 2:  # the first file is already replaced when the second fails
            raise OSError("power cut")
        real_replace(src, dst)

    monkeypatch.setattr(os, "replace", failing_replace)
    with pytest.raises(OSError, match="power cut"):
        store.write(catalog("a", "zz"), OUTPUTS[:1], today=DAY)
    assert {p: p.read_bytes() for p in before} == before
    assert sorted(p.name for p in store.folder.iterdir()) == ["catalog.json", "outputs.json"]


def test_xdist_worker_never_writes(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("PYTEST_XDIST_WORKER", "gw1")
    assert not is_writer()
    with pytest.raises(BaselineError, match="gw1 does not write"):
        BaselineStore(tmp_path, "t").write(catalog("a"))
    assert not (tmp_path / "t").exists() or not any((tmp_path / "t").iterdir())


def test_writer_lock_is_exclusive(tmp_path: Path) -> None:
    with writer_lock(tmp_path) as lock:
        assert lock.read_text() == str(os.getpid())
        with pytest.raises(BaselineError, match="another feeler process is writing"):
            with writer_lock(tmp_path, wait=0.1):
                pass
    assert not lock.exists()


def test_lock_of_a_dead_process_is_taken_over(tmp_path: Path) -> None:
    import subprocess
    import sys

    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    proc.wait()  # a pid that no longer runs
    (tmp_path / ".feeler-write.lock").write_text(str(proc.pid))
    with writer_lock(tmp_path, wait=0.5):
        pass


def test_stale_baselines_and_records(tmp_path: Path) -> None:
    BaselineStore(tmp_path, "a:server").write(catalog("x"), today=DAY)
    BaselineStore(tmp_path, "gone:server").write(catalog("x"), today=DAY)
    assert [p.name for p in stale_baselines(tmp_path, ["a:server"])] == ["gone-server"]
    assert stale_records(OUTPUTS, catalog("a")) == [OUTPUTS[0]]


def test_a_baseline_of_the_previous_format_is_still_read(tmp_path: Path) -> None:
    # Written by the previous release: header feeler-baseline/1 with the code revision under "revision",
    # catalog keys "revision"/"supportedRevisions" and era "modern" (our own earlier format, from memory of
    # what that release wrote; the keys are listed in feeler.catalog._from_old_catalog).
    folder = tmp_path / "quay"
    folder.mkdir()
    old = {
        "baseline": {"format": "feeler-baseline/1", "feeler": "0.1.0", "date": "2026-01-02", "revision": "abc123"},
        "format": "feeler-catalog/1", "revision": "2026-07-28", "era": "modern", "supportedRevisions": ["2026-07-28"],
        "server": {"name": "quay"}, "capabilities": {}, "tools": [{"name": "a", "inputSchema": {"type": "object"}}],
        "prompts": [], "resources": [], "resourceTemplates": [],
    }
    (folder / "catalog.json").write_text(json.dumps(old), encoding="utf-8")
    store = BaselineStore.from_folder(folder)
    cat = store.read_catalog()
    assert (cat.revision, cat.era, cat.supported_revisions) == ("2026-07-28", "stateless", ["2026-07-28"])
    assert store.read_header()["sourceRef"] == "abc123"
    # The next approve writes the current format, even though the catalog itself did not change.
    store.write(cat, source_ref="abc123", today=DAY)
    data = json.loads((folder / "catalog.json").read_text(encoding="utf-8"))
    assert data["baseline"]["format"] == "feeler-baseline/2" and data["protocolVersion"] == "2026-07-28"
    assert "revision" not in data and "supportedRevisions" not in data
