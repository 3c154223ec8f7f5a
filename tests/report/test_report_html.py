"""The HTML report opened in a real headless Chromium (Debian package ``chromium``).

Chromium runs with --headless --no-sandbox --disable-gpu --disable-background-networking and a fresh
--user-data-dir, logs the page's console to stderr (--enable-logging=stderr), dumps the DOM after the
page's script ran (--dump-dom) and writes a screenshot (--screenshot); it is ended by its pid (process
group). The page's Content-Security-Policy forbids every outside resource, and Chromium reports a blocked
load as a console message (CSP Level 3, "Report a violation"), so "no console message" also means "no
network resource". A deliberately broken page shows that the console capture sees errors.
"""

from __future__ import annotations

import contextlib
import os
import re
import shutil
import signal
import subprocess
from pathlib import Path
from typing import Any

import pytest

from feeler.report.html import SECTIONS

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
pytestmark = pytest.mark.skipif(
    CHROMIUM is None, reason="chromium not installed (Debian package chromium; .ci/run installs it with apt-get)"
)
#: a bounded wait for one page: Chromium starts in about a second on this machine (from memory)
CHROMIUM_TIMEOUT = 60.0
_CONSOLE = re.compile(r":CONSOLE[:(]")


def _chromium(page: Path, profile: Path, *extra: str) -> tuple[str, str]:
    """Open *page*; return (stdout, stderr). Ended by pid (its process group) in every case."""
    argv = [
        str(CHROMIUM), "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
        f"--user-data-dir={profile}", "--enable-logging=stderr", "--v=0", "--no-first-run",
        "--window-size=1280,2400", *extra, page.as_uri(),
    ]  # fmt: skip
    proc = subprocess.Popen(argv, stdout=subprocess.PIPE, stderr=subprocess.PIPE, start_new_session=True)
    try:
        out, err = proc.communicate(timeout=CHROMIUM_TIMEOUT)
    finally:
        for sig in (signal.SIGTERM, signal.SIGKILL):
            with contextlib.suppress(ProcessLookupError, PermissionError):
                os.killpg(proc.pid, sig)
        with contextlib.suppress(subprocess.TimeoutExpired):
            proc.wait(5)
    return out.decode("utf-8", "replace"), err.decode("utf-8", "replace")


def _console(stderr: str) -> list[str]:
    return [line for line in stderr.splitlines() if _CONSOLE.search(line)]


def test_console_capture_sees_errors(tmp_path: Path) -> None:
    """The check below can fail: a page with a script error and an outside image shows both."""
    page = tmp_path / "broken.html"
    page.write_text(
        '<!DOCTYPE html><html><head><meta http-equiv="Content-Security-Policy" content="default-src \'none\'; '
        "script-src 'unsafe-inline'\"></head><body><img src=\"http://127.0.0.1:9/x.png\">"
        "<script>noSuchFunction();</script></body></html>",
        encoding="utf-8",
    )
    _out, err = _chromium(page, tmp_path / "profile", "--dump-dom")
    lines = _console(err)
    assert any("noSuchFunction" in line for line in lines)
    assert any("Content Security Policy" in line for line in lines)


def test_html_report_in_chromium(checked: dict[str, Any], tmp_path: Path) -> None:
    page = checked["folder"] / "feeler-report.html"
    html = page.read_text(encoding="utf-8")
    assert not re.search(r"""(src|href)\s*=\s*["']?(https?:)?//""", html)  # no outside resource named at all
    dom, err = _chromium(page, tmp_path / "profile-dom", "--dump-dom")
    assert _console(err) == []
    for section in SECTIONS:
        assert f'<section id="{section}">' in dom
    doc = checked["doc"]
    # The page's own script ran to its end (it marks the page with the number of findings).
    assert f'data-ready="{len(doc["findings"])}"' in dom
    assert dom.count("<svg") == sum(1 for t in doc["tools"] if t["latency"]["count"])
    for f in doc["findings"]:
        if f.get("replayCommand"):
            assert f["replayCommand"] in dom
    shown = re.findall(r'<li class="finding"><span class="(\w+)">', dom)
    assert len(shown) == len(doc["findings"]) and {"error", "warning"} <= set(shown)
    assert shown == sorted(shown, key=lambda severity: severity != "error")  # errors first, as in Markdown
    shot = Path(os.environ.get("FEELER_SCREENSHOT_DIR", str(tmp_path))) / "feeler-report.png"
    shot.parent.mkdir(parents=True, exist_ok=True)
    _out, err = _chromium(page, tmp_path / "profile-shot", f"--screenshot={shot}")
    assert _console(err) == []
    assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (RFC 2083 section 3.1)
