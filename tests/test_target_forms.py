"""One way to name a target for every command (issue 12): a ``[tool.feeler]`` target name, a URL,
``module:attribute`` and a command after ``--`` work with catalog, check, audit, approve, diff, campaign
and replay; folders are named after the target name (a slug for command-line targets).

The server is tests/servers/clean_reference.py (official SDK): over stdio, in-process, and over
Streamable HTTP on 127.0.0.1 (uvicorn in a subprocess, ended by pid). The forms are feeler's own
(README, "Naming a server"); exit codes are feeler's (src/feeler/cli.py).
"""

from __future__ import annotations

import io
import json
import sys
from contextlib import redirect_stderr, redirect_stdout
from pathlib import Path

import pytest

from feeler.cli import run
from feeler.target import target_slug

PY = sys.executable
SERVERS = Path(__file__).resolve().parent / "servers"
REFERENCE = SERVERS / "clean_reference.py"
FORMS = ("name", "url", "module", "command")
COMMANDS = ("catalog", "check", "audit", "approve", "diff", "campaign", "replay")


def _cli(*args: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        code = run(list(args))
    return code, out.getvalue(), err.getvalue()


@pytest.fixture
def reference_url(reference_http_url: str) -> str:
    return reference_http_url  # uvicorn on 127.0.0.1, ended by pid (tests/conftest.py)


@pytest.fixture
def project(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A project folder: pyproject.toml names the reference server ``ref``; ``refserver.py`` makes it
    importable as ``refserver:server`` from here."""
    (tmp_path / "pyproject.toml").write_text(
        f"[tool.feeler]\ntargets = {{ ref = {{ command = [{json.dumps(PY)}, {json.dumps(str(REFERENCE))}] }} }}\n",
        encoding="utf-8",
    )
    (tmp_path / "refserver.py").write_text(
        f"import sys\nsys.path.insert(0, {json.dumps(str(SERVERS))})\nfrom clean_reference import server  # noqa: E402\n",
        encoding="utf-8",
    )
    monkeypatch.chdir(tmp_path)
    monkeypatch.delenv("PYTEST_XDIST_WORKER", raising=False)  # this CLI run is not a worker of this suite
    return tmp_path


def _words(form: str, url: str) -> list[str]:
    return {"name": ["ref"], "url": [url], "module": ["refserver:server"], "command": ["--", PY, str(REFERENCE)]}[form]


def _shown(form: str, url: str) -> str:
    """The target as reports name it: the target name, else the spec."""
    import shlex

    return {"name": "ref", "url": url, "module": "refserver:server", "command": shlex.join([PY, str(REFERENCE)])}[form]


def _folder(form: str, url: str) -> str:
    """The folder name of the target's baselines, replays and campaigns."""
    return "ref" if form == "name" else target_slug(" ".join(_words(form, url)[1:] if form == "command" else _words(form, url)))


@pytest.mark.parametrize("command", COMMANDS)
@pytest.mark.parametrize("form", FORMS)
def test_each_target_form_works_with_every_command(form: str, command: str, project: Path, reference_url: str) -> None:
    words = _words(form, reference_url)
    folder = _folder(form, reference_url)
    if command == "catalog":
        code, out, err = _cli("catalog", *words)
        assert code == 0, err
        assert {t["name"] for t in json.loads(out)["tools"]} >= {"convert_length", "word_count"}
    elif command == "check":
        code, out, err = _cli("check", "--samples", "1", "--chain-runs", "0", "--format", "json", *words)
        assert code == 0, err
        report = json.loads(out)
        assert report["target"] == _shown(form, reference_url) and report["tools"]
    elif command == "audit":
        code, out, err = _cli("audit", "--format", "json", *words)
        assert code == 0, err
        assert json.loads(out)["target"] == _shown(form, reference_url)
    elif command == "approve":
        code, out, err = _cli("approve", "--yes", "--baselines", "bl", *words)
        assert code == 0, out + err
        assert (project / "bl" / folder / "catalog.json").is_file(), sorted(p.name for p in (project / "bl").iterdir())
    elif command == "diff":
        if form == "command":
            # a command after `--` cannot name two sides: said so, exit 2; quoted command lines work
            code, out, err = _cli("diff", "--", PY, str(REFERENCE))
            assert code == 2 and "cannot name two sides" in err, out + err
            line = f"{PY} {REFERENCE}"
            code, out, err = _cli("diff", line, line)
        else:
            code, out, err = _cli("diff", words[0], words[0])
        assert code == 0, out + err
    elif command == "campaign":
        code, out, err = _cli("campaign", "--budget", "3s", "--samples", "1", "--example-db", "none", *words)
        assert code == 0, out + err
        assert (project / ".feeler" / "campaigns" / folder / "state.json").is_file()
    elif command == "replay":
        code, out, err = _cli("check", "--samples", "1", "--chain-runs", "0", "--format", "json", *words)
        assert code == 0, err
        replays = [f["replay"] for f in json.loads(out)["findings"] if f["replay"]]
        assert replays, "the reference server shows no finding with a replay file (its probe warnings have them)"
        assert all(Path(r).parts[:3] == (".feeler", "replays", folder) for r in replays)
        data = json.loads(Path(replays[0]).read_text(encoding="utf-8"))
        assert data["target"].get("name") == ("ref" if form == "name" else None)
        code, out, err = _cli("replay", replays[0])
        assert code == 1 and "reproduced:" in out, out + err  # the warning shows again


def test_an_unknown_name_lists_the_known_ones(project: Path) -> None:
    code, _, err = _cli("catalog", "reff")
    assert code == 2
    assert "'reff' is not a target name (known: ref)" in err


def _env_target(project: Path, also_missing: str, message: str) -> None:
    """Target ``envref``: the reference server behind a script that exits with *message* unless NEEDED=yes
    (configured) and *also_missing* is false."""
    (project / "needs_env.py").write_text(
        "import os, runpy, sys\n"
        f"if os.environ.get('NEEDED') != 'yes' or {also_missing}:\n"
        f"    sys.exit({message!r})\n"
        f"runpy.run_path({json.dumps(str(REFERENCE))}, run_name='__main__')\n",
        encoding="utf-8",
    )
    (project / "pyproject.toml").write_text(
        "[tool.feeler]\ntargets = { envref = { command = "
        f"[{json.dumps(PY)}, 'needs_env.py'], env = {{ NEEDED = 'yes' }} }} }}\n",
        encoding="utf-8",
    )


def test_env_given_on_the_command_line_is_merged_into_a_named_target(project: Path) -> None:
    # The configured env stays, the command line adds to it (README, "Naming a server").
    _env_target(project, "os.environ.get('OTHER') != '1'", "NEEDED=yes and OTHER=1 must both be set")
    code, _, err = _cli("catalog", "envref")
    assert code == 2 and "OTHER=1 must both be set" in err
    code, out, err = _cli("catalog", "--env", "OTHER=1", "envref")
    assert code == 0, err
    assert json.loads(out)["tools"]


def test_env_and_cwd_are_refused_for_a_url(project: Path, reference_url: str) -> None:
    code, _, err = _cli("catalog", "--env", "A=1", reference_url)
    assert code == 2 and "--env cannot apply to the target" in err and "already running" in err
    code, _, err = _cli("catalog", "--cwd", str(project), reference_url)
    assert code == 2 and "--cwd cannot apply" in err


def test_module_attribute_takes_cwd_and_env(project: Path) -> None:
    # --cwd: the folder the module is imported from; --env: set in feeler's process while the session is
    # open, and restored when it closes (README, "Naming a server"). The module checks both when imported.
    import os

    (project / "sub").mkdir()
    (project / "sub" / "envmod.py").write_text(
        "import os, sys\n"
        "if os.environ.get('FEELER_FORMS_MARK') != '1':\n"
        "    raise RuntimeError('FEELER_FORMS_MARK is not set')\n"
        f"sys.path.insert(0, {json.dumps(str(SERVERS))})\n"
        "from clean_reference import server  # noqa: E402\n",
        encoding="utf-8",
    )
    code, _, err = _cli("catalog", "--cwd", "sub", "envmod:server")
    assert code == 2 and "FEELER_FORMS_MARK is not set" in err
    sys.modules.pop("envmod", None)
    code, out, err = _cli("catalog", "--cwd", "sub", "--env", "FEELER_FORMS_MARK=1", "envmod:server")
    assert code == 0, err
    assert {t["name"] for t in json.loads(out)["tools"]} >= {"convert_length"}
    assert "FEELER_FORMS_MARK" not in os.environ and os.getcwd() == str(project)


def test_replay_uses_the_configured_env_of_the_named_target(project: Path) -> None:
    # The replay file keeps env names only (never values); the named target gives the values again.
    _env_target(project, "False", "NEEDED must be yes")
    code, out, err = _cli("check", "--samples", "1", "--chain-runs", "0", "--format", "json", "envref")
    assert code == 0, err
    replay = next(f["replay"] for f in json.loads(out)["findings"] if f["replay"])
    data = json.loads(Path(replay).read_text(encoding="utf-8"))
    assert data["target"]["name"] == "envref" and data["target"]["envNames"] == ["NEEDED"]
    assert "yes" not in json.dumps(data["target"])
    code, out, err = _cli("replay", replay)
    assert code == 1 and "reproduced:" in out, out + err
