"""Bad inputs: each row is one bad file, option or schema, the exit code it gets and the message it prints.

The table is the answer key of issue 13 ("a table in the tests lists each bad input with the exit code and
message it gets"). Exit codes are feeler's own (README "Exit codes": 2 = usage error or unreadable file)
and pytest's (``pytest.ExitCode.USAGE_ERROR`` = 4, pytest docs "Exit codes"). Every message must be one
line on stderr, name the file or option, and never be a traceback.

Misbehaving *servers* are in ``test_fault_servers.py``.
"""

from __future__ import annotations

import json
import os
import signal
import sys
import subprocess
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pytest

from feeler.cli import run

PY = sys.executable
CATALOG = {"format": "feeler-catalog/1", "revision": "2025-11-25", "era": "handshake", "tools": []}


def _nested(levels: int) -> dict:
    schema: dict = {"type": "string"}
    for _ in range(levels):
        schema = {"type": "object", "properties": {"a": schema}}
    return schema


def _write(path: Path, data: bytes | str | dict | list) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    if isinstance(data, (dict, list)):
        data = json.dumps(data)
    path.write_bytes(data if isinstance(data, bytes) else data.encode())


BINARY = bytes(range(256)) * 4  # not UTF-8 (0x80.. continuation bytes with no lead byte)


@dataclass
class Row:
    name: str
    setup: Callable[[Path], None]
    argv: list[str]
    code: int
    message: str  # a substring of the one-line message
    fifo: bool = False  # run under an alarm: a regression would block on the FIFO
    bound: float | None = None  # run as a feeler process killed past this many seconds (a row that may hang)
    marks: tuple[Any, ...] = ()


def _pyproject(text: bytes | str) -> Callable[[Path], None]:
    return lambda d: _write(d / "pyproject.toml", text)


def _fifo(rel: str, before: Callable[[Path], None] | None = None) -> Callable[[Path], None]:
    def setup(d: Path) -> None:
        if before:
            before(d)
        (d / rel).parent.mkdir(parents=True, exist_ok=True)
        os.mkfifo(d / rel)

    return setup


def _baseline(catalog: bytes | dict) -> Callable[[Path], None]:
    return lambda d: _write(d / "bl" / "catalog.json", catalog)


CHECK_DRY = ["check", "--dry-run", "--", PY, "-c", "pass"]
REPORT = {"format": "feeler-report/1", "runs": [{}]}


def _string_schema(**keywords: Any) -> dict[str, Any]:
    return {"type": "object", "properties": {"a": {"type": "string", **keywords}}, "required": ["a"]}


def _replay(target: dict[str, Any]) -> dict[str, Any]:
    return {"format": "feeler-replay/2", "target": target, "request": "{}", "finding": {"check": "no_crash"}}

ROWS = [
    # -- config (pyproject.toml) ------------------------------------------------------------------
    Row("pyproject non-UTF-8", _pyproject(b"[tool.feeler]\nexclude = ['\xff\xfe']\n"), CHECK_DRY, 2,
        "pyproject.toml: is not UTF-8 text"),
    Row("pyproject FIFO", _fifo("pyproject.toml"), CHECK_DRY, 2, "pyproject.toml: is a FIFO", fifo=True),
    Row("pyproject not TOML", _pyproject("[tool.feeler\n"), CHECK_DRY, 2, "is not valid TOML"),
    Row("[tool.feeler] a string", _pyproject('[tool]\nfeeler = "all"\n'), CHECK_DRY, 2,
        "[tool.feeler] must be a table"),
    Row("unknown key", _pyproject("[tool.feeler]\nexlude = []\n"), CHECK_DRY, 2, "did you mean 'exclude'?"),
    Row("budgets a string", _pyproject('[tool.feeler]\nbudgets = "fast"\n'), CHECK_DRY, 2,
        "[tool.feeler] budgets='fast' must be a table"),
    Row("budget value a string", _pyproject('[tool.feeler]\nbudgets = { "*" = "2" }\n'), CHECK_DRY, 2,
        "budgets.*='2' must be a positive number of seconds"),
    Row("timeout nan in config", _pyproject("[tool.feeler]\ntimeout = nan\n"), CHECK_DRY, 2,
        "timeout=nan must be a finite number"),
    Row("env a string", _pyproject('[tool.feeler.targets.t]\ncommand = "x"\nenv = "A=1"\n'), CHECK_DRY, 2,
        "env='A=1' must be a table"),
    Row("headers value a number", _pyproject('[tool.feeler.targets.t]\nurl = "http://127.0.0.1:1/mcp"\nheaders = { X = 1 }\n'),
        CHECK_DRY, 2, "headers={'X': 1} must be a table"),
    Row("exclude with a number", _pyproject("[tool.feeler]\nexclude = [1]\n"), CHECK_DRY, 2,
        "exclude must list only strings"),
    # -- options -----------------------------------------------------------------------------------
    Row("--timeout nan", lambda d: None, ["check", "--timeout", "nan", "--", PY, "-c", "pass"], 2,
        "'nan' must be a finite number of seconds"),
    Row("--timeout inf", lambda d: None, ["diff", "--timeout", "inf", "a.json", "b.json"], 2,
        "'inf' must be a finite number of seconds"),
    Row("--budget nan", lambda d: None, ["check", "--dry-run", "--budget", "nan", "--", PY, "-c", "pass"], 2,
        "the seconds must be a finite number"),
    Row("--timeout 1e10", lambda d: None, ["check", "--timeout", "1e10", "--", PY, "-c", "pass"], 2,
        "'1e10' is more than a day (86400 seconds); give at most 86400"),
    Row("timeout 1e10 in config", _pyproject("[tool.feeler]\ntimeout = 1e10\n"), CHECK_DRY, 2,
        "timeout=10000000000.0 is more than a day; give at most 86400 seconds"),
    # -- baselines ---------------------------------------------------------------------------------
    Row("binary catalog.json in a baseline folder", _baseline(BINARY), ["diff", "bl", "bl"], 2,
        "bl/catalog.json: is not UTF-8 text"),
    Row("FIFO catalog.json in a baseline folder", _fifo("bl/catalog.json"), ["diff", "bl", "bl"], 2,
        "bl/catalog.json: is a FIFO", fifo=True),
    Row("folder as catalog.json", lambda d: (d / "bl" / "catalog.json").mkdir(parents=True), ["diff", "bl", "bl"], 2,
        "bl/catalog.json: is a folder"),
    Row("baseline without header", _baseline(CATALOG), ["diff", "bl", "bl"], 2, "baseline header format=None"),
    Row("baseline a JSON list", _baseline(b"[]"), ["diff", "bl", "bl"], 2, "must be a JSON object at the top level"),
    # -- catalog files given to diff ---------------------------------------------------------------
    Row("binary catalog file", lambda d: _write(d / "c.json", BINARY), ["diff", "c.json", "c.json"], 2,
        "c.json: is not UTF-8 text"),
    Row("FIFO catalog file", _fifo("c.json"), ["diff", "c.json", "c.json"], 2, "c.json: is a FIFO", fifo=True),
    Row("tool entry a string", lambda d: _write(d / "c.json", {**CATALOG, "tools": ["oops"]}), ["diff", "c.json", "c.json"], 2,
        "tools[0] must be a JSON object, got str 'oops'"),
    Row("tool without a name", lambda d: _write(d / "c.json", {**CATALOG, "tools": [{}]}), ["diff", "c.json", "c.json"], 2,
        "tools[0] has no string 'name'"),
    Row("catalog nested too deeply", lambda d: _write(d / "c.json", "[" * 100_000 + "]" * 100_000), ["diff", "c.json", "c.json"], 2,
        "nested too deeply to parse"),
    # -- replay files ------------------------------------------------------------------------------
    Row("binary replay file", lambda d: _write(d / "r.json", BINARY), ["replay", "r.json"], 2, "r.json: is not UTF-8 text"),
    Row("FIFO replay file", _fifo("r.json"), ["replay", "r.json"], 2, "r.json: is a FIFO", fifo=True),
    Row("replay file a list", lambda d: _write(d / "r.json", b"[1]"), ["replay", "r.json"], 2, "must be a JSON object"),
    Row("replay request not a string", lambda d: _write(d / "r.json", {"format": "feeler-replay/2", "target": {}, "request": 1, "finding": {}}),
        ["replay", "r.json"], 2, "has no 'request' string"),
    Row("replay target.command a string", lambda d: _write(d / "r.json", _replay({"kind": "stdio", "command": "python s.py"})),
        ["replay", "r.json"], 2, "r.json: the replay file's target.command must be a list of strings, got str 'python s.py'"),
    Row("replay target.envNames a number", lambda d: _write(d / "r.json", _replay({"kind": "stdio", "command": ["x"], "envNames": 3})),
        ["replay", "r.json"], 2, "r.json: the replay file's target.envNames must be a list of strings, got int"),
    # -- report files (feeler report render / merge) -------------------------------------------------
    Row("report with an empty run (render)", lambda d: _write(d / "rep.json", REPORT), ["report", "render", "rep.json"], 2,
        "rep.json: not a valid feeler report: (root): 'feelerVersion' is a required property"),
    Row("report with an empty run (merge)", lambda d: _write(d / "rep.json", REPORT), ["report", "merge", "rep.json", "rep.json"],
        2, "rep.json: not a valid feeler report: (root): 'feelerVersion' is a required property"),
    Row("binary report file", lambda d: _write(d / "rep.json", BINARY), ["report", "render", "rep.json"], 2,
        "rep.json: is not UTF-8 text"),
    Row("report nested too deeply", lambda d: _write(d / "rep.json", "[" * 100_000 + "]" * 100_000),
        ["report", "render", "rep.json"], 2, "nested too deeply to parse"),
    # -- schema files given to cases ---------------------------------------------------------------
    Row("binary schema file", lambda d: _write(d / "s.json", BINARY), ["cases", "s.json"], 2, "s.json: is not UTF-8 text"),
    Row("FIFO schema file", _fifo("s.json"), ["cases", "s.json"], 2, "s.json: is a FIFO", fifo=True),
    Row("schema a number", lambda d: _write(d / "s.json", b"3"), ["cases", "s.json"], 2, "must be a JSON object or bool"),
    Row("100-level nested schema", lambda d: _write(d / "s.json", _nested(100)), ["cases", "s.json"], 2,
        "nests more than 64 levels deep"),
    Row("5 MB schema", lambda d: _write(d / "s.json", {"type": "object", "properties": {
        f"p{i}": {"type": "string", "description": "x" * 500} for i in range(10_000)}}), ["cases", "s.json"], 2,
        "larger than 1,048,576 bytes"),
    Row("20,000-value enum", lambda d: _write(d / "s.json", {"enum": list(range(20_000))}), ["cases", "s.json"], 2,
        "has 20,000 values, over the limit of 5,000"),
    # Catastrophic backtracking (a hang in a backtracking oracle) is refused by generate/_ecma.py.
    Row("pattern ^(a+)+$ with minLength 30", lambda d: _write(d / "s.json", {"type": "object", "properties": {
        "a": {"type": "string", "pattern": "^(a+)+$", "minLength": 30}}, "required": ["a"]}), ["cases", "s.json"], 2,
        "nests an open-ended repeat inside another"),
    # Counts and patterns that made the generator crash or hang (each run as a process, killed past its bound).
    # feeler._limits.MAX_COUNT: a lower count over 10,000 is refused; JSON Schema 2020-12 validation 6.3.2
    # and 6.4.2 (any non-negative integer, 1e308 included, is a valid count).
    Row("minLength 1e308", lambda d: _write(d / "s.json", _string_schema(minLength=1e308)), ["cases", "s.json"], 2,
        "s.json: /properties/a/minLength: minLength 1e+308 is over the limit of 10,000", bound=20),
    Row("minItems 1e9", lambda d: _write(d / "s.json", {"type": "object", "properties": {"a": {"type": "array", "minItems": 10**9}},
        "required": ["a"]}), ["cases", "s.json"], 2, "/properties/a/minItems: minItems 1,000,000,000 is over the limit of 10,000",
        bound=20),
    # An upper count that large is no problem: generation treats it as absent (exit 0, the summary line).
    Row("maxLength 1e308", lambda d: _write(d / "s.json", _string_schema(maxLength=1e308)), ["cases", "s.json"], 0,
        "no-go cases; refuted by the oracle and dropped", bound=20),
    # generate/_ecma.check refuses these shapes up front (exponential on a near miss in a backtracking engine)
    Row("pattern ^(a|a)*$", lambda d: _write(d / "s.json", _string_schema(pattern="^(a|a)*$", minLength=30, maxLength=60)),
        ["cases", "s.json"], 2, "pattern '^(a|a)*$' repeats alternatives that can match the same text", bound=20),
    Row("pattern ^(.*a){20}$", lambda d: _write(d / "s.json", _string_schema(pattern="^(.*a){20}$", minLength=30, maxLength=60)),
        ["cases", "s.json"], 2, "pattern '^(.*a){20}$' repeats a part whose matches can be split in more than one way",
        bound=20),
    Row("pattern ^(a{1,30}){1,30}$", lambda d: _write(d / "s.json", _string_schema(pattern="^(a{1,30}){1,30}$", minLength=30)),
        ["cases", "s.json"], 2, "pattern '^(a{1,30}){1,30}$' repeats a part whose matches can be split in more than one way",
        bound=20),
    # No repeat, so no shape check sees it: the time budget of every match (generate/_ecma.search) ends it.
    Row("pattern (a|a) thirty times", lambda d: _write(d / "s.json", _string_schema(pattern="^" + "(a|a)" * 30 + "$")),
        ["cases", "s.json"], 2, "took more than 2s to match one value (catastrophic backtracking)", bound=30),
]


class _Blocked(Exception):
    pass


def _alarm(signum: int, frame: object) -> None:
    raise _Blocked("feeler blocked on a special file")


def _run_bounded(row: Row, tmp_path: Path) -> tuple[int, str]:
    """*row* as a real feeler process in its own group, killed past ``row.bound`` (a hang fails the row)."""
    with open(tmp_path / "err.txt", "wb") as err:
        proc = subprocess.Popen([PY, "-c", "import sys; from feeler.cli import run; sys.exit(run(sys.argv[1:]))", *row.argv],
                                cwd=tmp_path, stdin=subprocess.DEVNULL, stdout=subprocess.DEVNULL, stderr=err,
                                start_new_session=True)
    try:
        code = proc.wait(row.bound)
    except subprocess.TimeoutExpired:
        os.killpg(proc.pid, signal.SIGKILL)
        proc.wait(10)
        pytest.fail(f"feeler {' '.join(row.argv)} did not end within {row.bound:g}s")
    return code, (tmp_path / "err.txt").read_text(errors="replace")


def _run(row: Row, tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch) -> tuple[int, str]:
    monkeypatch.chdir(tmp_path)
    if row.bound is not None:
        return _run_bounded(row, tmp_path)
    if not row.fifo:
        return run(row.argv), capsys.readouterr().err
    # a FIFO row must not block: a bounded alarm turns a regression into a failure instead of a hang
    previous = signal.signal(signal.SIGALRM, _alarm)
    signal.setitimer(signal.ITIMER_REAL, 30.0)
    try:
        code = run(row.argv)
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
    return code, capsys.readouterr().err


@pytest.mark.parametrize("row", [pytest.param(r, id=r.name, marks=r.marks) for r in ROWS])
def test_bad_input_gets_its_exit_code_and_message(row: Row, tmp_path: Path, capsys: pytest.CaptureFixture[str],
                                                  monkeypatch: pytest.MonkeyPatch) -> None:
    row.setup(tmp_path)
    code, err = _run(row, tmp_path, capsys, monkeypatch)
    assert "Traceback" not in err, err
    assert code == row.code, err
    assert row.message in err, err
    lines = [line for line in err.splitlines() if line.strip() and not line.startswith(("Usage:", "Try "))]
    assert len(lines) == 1, f"expected one line, got: {err!r}"


def test_the_limits_keep_a_deep_but_reasonable_schema() -> None:
    """25 levels of nesting is within the limits: cases are generated (JSON Schema 2020-12 section 10.3.2.1)."""
    from feeler.generate import go_cases

    assert list(go_cases(_nested(25)))


def test_diff_of_an_over_limit_schema_is_likely_breaking_not_a_crash() -> None:
    """The diff engine refuses before recursing, and never calls such a change compatible (a corrupt input
    must not make a run pass)."""
    from feeler.diff.engine import diff_schemas
    from feeler.diff.model import Direction, Verdict

    changes = diff_schemas(_nested(100), _nested(101), Direction.INPUT, subject="tool:deep")
    assert [(c.rule, c.verdict) for c in changes] == [("schema-limit", Verdict.LIKELY_BREAKING)]
    assert "64 levels" in changes[0].message


# -- the same config errors through the pytest plugin: usage errors, exit 4 ----------------------------

PLUGIN_ROWS = [
    ("[tool.feeler] a string", '[tool]\nfeeler = "all"\n', "[tool.feeler] must be a table"),
    ("unknown key", "[tool.feeler]\nexlude = []\n", "unknown key [tool.feeler] exlude"),
    ("env a string", '[tool.feeler.targets.t]\ncommand = "x"\nenv = "A=1"\n', "env='A=1' must be a table"),
    ("budgets a string", '[tool.feeler]\nbudgets = "fast"\n', "budgets='fast' must be a table"),
    ("budget value a list", '[tool.feeler]\nbudgets = { "*" = [1] }\n', "must be a positive number of seconds"),
    ("targets a list", '[tool.feeler]\ntargets = ["x"]\n', "targets=['x'] must be a table"),
    ("target a number", "[tool.feeler]\ntargets = { t = 3 }\n", "must be a string or a table, got int"),
    ("headers value a number", '[tool.feeler.targets.t]\nurl = "http://127.0.0.1:1/mcp"\nheaders = { X = 1 }\n',
     "headers={'X': 1} must be a table"),
    ("timeout inf", "[tool.feeler]\ntimeout = inf\n", "timeout=inf must be a finite number"),
    # (a non-UTF-8 pyproject.toml is not in this list: pytest itself reads the file first and stops on it)
]


@pytest.mark.parametrize(("text", "message"), [r[1:] for r in PLUGIN_ROWS], ids=[r[0] for r in PLUGIN_ROWS])
def test_plugin_config_error_is_a_usage_error(pytester: pytest.Pytester, text: str | bytes, message: str) -> None:
    """pytest docs "Exit codes": 4 = command line usage error; no INTERNALERROR."""
    (pytester.path / "pyproject.toml").write_bytes(text if isinstance(text, bytes) else text.encode())
    result = pytester.runpytest("-p", "no:cacheprovider")
    assert result.ret == pytest.ExitCode.USAGE_ERROR
    errors = [line for line in result.errlines if line.startswith("ERROR:")]
    assert len(errors) == 1 and message in errors[0], result.errlines
    assert not any("INTERNALERROR" in line or "Traceback" in line for line in result.outlines + result.errlines)
