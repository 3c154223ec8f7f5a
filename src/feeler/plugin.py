"""The feeler pytest plugin (registered through the ``pytest11`` entry point).

When ``[tool.feeler] targets`` (pyproject.toml) or ``--feeler-target`` names servers, the plugin adds
test items per target x tool x kind, created at collection (so pytest counts them)::

    feeler::<target>::catalog                 the catalog itself (and its baseline, if one is approved)
    feeler::<target>::<tool>[go]              go cases must enter
    feeler::<target>::<tool>[no-go]           no-go cases must be stopped cleanly
    feeler::<target>::<tool>[probe]           malformed requests (protocol level)
    feeler::<target>::chains                  call chains (sequences linked by returned values)

They are collected as pytest collects files: with no paths given, with a folder that holds the config
file, with the config file itself (``pytest pyproject.toml``), or by node id (``pytest
feeler::harbour::catalog``; ``feeler::harbour::quote_fee`` selects every kind of that tool). ``-k`` matches
their exact names (target, tool, kind, item name), not substrings. They work with ``-x``, ``-n``
(pytest-xdist: each worker opens its own session) and ``--junitxml`` (every finding in full as
properties). A "feeler" section at the end of the run counts findings per target and says where the
replay files and reports went. Hand-written tests get a connected session from the ``feeler_session``
fixture.

This module stays cheap to import: everything heavy is imported inside hooks.
"""

from __future__ import annotations

import os
from typing import TYPE_CHECKING, Any

import pytest

if TYPE_CHECKING:
    from feeler.check.runner import Runner
    from feeler.target import Target

__all__: list[str] = []

GROUP = "feeler"
OPT_TARGET = "--feeler-target"
OPT_DEPTH = "--feeler-depth"
OPT_DESTRUCTIVE = "--feeler-allow-destructive"
OPT_STRICT_GO = "--feeler-strict-go"
OPT_SAMPLE_SEED = "--feeler-sample-seed"
OPT_RECURSION_DEPTH = "--feeler-recursion-depth"
OPT_PROTOCOL_VERSION = "--feeler-protocol-version"
OPT_APPROVE = "--feeler-approve"
OPT_OFF = "--feeler-off"
OPT_REPORT = "--feeler-report"

#: Former option -> (its new name, its dest): accepted for one release with a notice.
RENAMED_OPTIONS: dict[str, tuple[str, str]] = {
    "--feeler-profile": (OPT_DEPTH, "feeler_depth"),
    "--feeler-strict": (OPT_STRICT_GO, "feeler_strict_go"),
    "--feeler-seed": (OPT_SAMPLE_SEED, "feeler_sample_seed"),
    "--feeler-revision": (OPT_PROTOCOL_VERSION, "feeler_protocol_version"),
}
_KINDS = ("go", "no-go", "probe")
_plugin_key = pytest.StashKey["FeelerPlugin"]()


def pytest_addoption(parser: pytest.Parser) -> None:
    group = parser.getgroup(GROUP, "feeler: testing MCP servers")
    group.addoption(OPT_TARGET, action="append", default=[], metavar="TARGET",
                    help="A server to test: URL, module:attribute, or a quoted command line (repeatable). "
                    "Adds to [tool.feeler] targets.")  # fmt: skip
    group.addoption(OPT_DEPTH, choices=["quick", "standard", "deep"], default=None,
                    help="How many cases: quick, standard (the default, locally and in CI) or deep.")  # fmt: skip
    group.addoption(OPT_DESTRUCTIVE, action="store_true", default=False,
                    help="Also call tools annotated destructiveHint: true. Never against production.")  # fmt: skip
    group.addoption(OPT_STRICT_GO, action="store_true", default=False, help="isError on a go case fails the item.")
    group.addoption(OPT_SAMPLE_SEED, type=int, default=None, help="Seed of the sampled go cases (default 0).")
    group.addoption(OPT_RECURSION_DEPTH, type=int, default=None,
                    help="How often generation follows a recursive $ref on one path (default 3).")  # fmt: skip
    group.addoption(OPT_PROTOCOL_VERSION, default=None, help="Pin one protocol version (e.g. 2025-11-25).")
    import argparse

    group.addoption("--feeler-profile", dest="feeler_old_profile", choices=["dev", "ci", "nightly"], default=None,
                    help=argparse.SUPPRESS)  # fmt: skip
    group.addoption("--feeler-strict", dest="feeler_old_strict", action="store_true", default=False, help=argparse.SUPPRESS)
    group.addoption("--feeler-seed", dest="feeler_old_seed", type=int, default=None, help=argparse.SUPPRESS)
    group.addoption("--feeler-revision", dest="feeler_old_revision", default=None, help=argparse.SUPPRESS)
    group.addoption(OPT_APPROVE, action="store_true", default=False,
                    help="Write the live catalog as the new approved baseline instead of comparing with it.")  # fmt: skip
    group.addoption(OPT_OFF, action="store_true", default=False, help="Add no feeler items even if targets are configured.")
    group.addoption(OPT_REPORT, default=None, metavar="DIR",
                    help="Write each target's reports (JSON, Markdown, JUnit XML, SARIF, HTML) into DIR/<target>[-<worker>]; "
                    "join workers with `feeler report merge`.")  # fmt: skip


def _apply_renamed_options(config: pytest.Config) -> None:
    """Move values given under a former option name to the new option (with a notice)."""
    from feeler._deprecated import notice
    from feeler.depth import OLD_PROFILES

    opt = config.option
    for old, (new, dest) in RENAMED_OPTIONS.items():
        value = getattr(opt, "feeler_old_" + old.rsplit("-", 1)[-1], None)
        if value in (None, False):
            continue
        notice(old, new)
        if old == "--feeler-profile":
            value = OLD_PROFILES[value]
        if getattr(opt, dest, None) in (None, False):
            setattr(opt, dest, value)


def pytest_configure(config: pytest.Config) -> None:
    config.addinivalue_line("markers", "feeler: an item generated by feeler from a server's catalog")
    _apply_renamed_options(config)
    from feeler.config import load_config
    from feeler.errors import FeelerError

    try:  # a config or target error is a usage error (one line, exit 4), never an INTERNALERROR
        cfg = load_config(start=str(config.rootpath))
        named = cfg.targets()
        targets: dict[str, Target] = dict(named)
        if config.getoption(OPT_TARGET):
            from feeler.target import resolve_target

            for spec in config.getoption(OPT_TARGET):
                tgt = resolve_target(spec, named)  # a [tool.feeler] name is that target
                targets[tgt.label or tgt.slug()] = tgt
    except FeelerError as exc:
        raise pytest.UsageError(f"feeler: {exc}") from None
    if targets:  # SIGTERM/SIGHUP unwind like Ctrl-C, so pytest's teardown ends the servers
        from feeler import _signals

        _signals.install()
    plugin = FeelerPlugin(config, cfg, targets)
    plugin.take_arguments()
    config.stash[_plugin_key] = plugin
    config.pluginmanager.register(plugin, "feelerplugin")


def pytest_unconfigure(config: pytest.Config) -> None:
    plugin = config.stash.get(_plugin_key, None)
    if plugin is not None:
        plugin.close_all()
        config.pluginmanager.unregister(plugin)
        del config.stash[_plugin_key]


class FeelerPlugin:
    """Session state: the configured targets and one runner (one live session) per target."""

    def __init__(self, config: pytest.Config, cfg: Any, targets: dict[str, Target]) -> None:
        self.config = config
        self.cfg = cfg
        self.targets = targets
        self.runners: dict[str, Runner] = {}
        self.catalog_errors: dict[str, str] = {}
        from feeler.depth import DEFAULT_DEPTH

        # The same default locally and in CI, so a run on a laptop draws the cases CI drew.
        self.depth = config.getoption(OPT_DEPTH) or cfg.get("depth") or DEFAULT_DEPTH
        #: node ids given on the command line (``feeler::<target>[::<item>]``); empty: no selection by id
        self.wanted: list[str] = []
        #: the config file was named on the command line (``pytest pyproject.toml``)
        self.config_named = False
        #: per target: finding signature -> (severity, replay command); filled from the item reports
        self.seen: dict[str, dict[str, tuple[str, str]]] = {}
        self.items_run: dict[str, int] = {}

    # -- runners ----------------------------------------------------------------------------------
    def options(self) -> Any:
        from feeler.check.cli import audit_settings
        from feeler.check.registry import CheckSettings
        from feeler.check.runner import RunOptions
        from feeler.depth import samples_for
        from feeler.generate import DEFAULT_RECURSION_DEPTH
        from feeler.world.known import known_pool

        cfg, config = self.cfg, self.config
        seed = config.getoption(OPT_SAMPLE_SEED)
        seed = seed if seed is not None else cfg.get("sample_seed", 0)
        return RunOptions(
            values=known_pool((), cfg.get("values"), cfg.get("values_hook"), seed=seed),
            sample_seed=seed,
            samples=cfg.get("samples", samples_for(self.depth)) if not config.getoption(OPT_DEPTH) else samples_for(self.depth),
            include=list(cfg.get("include", [])),
            exclude=list(cfg.get("exclude", [])),
            allow_destructive=config.getoption(OPT_DESTRUCTIVE) or bool(cfg.get("allow_destructive", False)),
            checks=cfg.get("only_checks"),
            skip_checks=list(cfg.get("skip_checks", [])),
            settings=CheckSettings(
                strict_go=config.getoption(OPT_STRICT_GO) or bool(cfg.get("strict_go", False)),
                latency_budget={str(k): float(v) for k, v in (cfg.get("budgets") or {}).items()},
                **audit_settings(cfg),
            ),
            replay_dir=self.replay_dir(),
            learn=bool(cfg.get("learn", True)),
            chain_runs=int(cfg.get("chain_runs", 20)),
            chain_steps=int(cfg.get("chain_steps", 8)),
            recursion_depth=next(v for v in (config.getoption(OPT_RECURSION_DEPTH), cfg.get("recursion_depth"),
                                              DEFAULT_RECURSION_DEPTH) if v is not None),  # fmt: skip
        )

    def replay_dir(self) -> str:
        return str(self.cfg.get("replay_dir", ".feeler/replays"))

    def runner(self, name: str) -> Runner:
        from feeler.check.runner import Runner
        from feeler.redact import redactor_for

        if name not in self.runners:
            revision = self.config.getoption(OPT_PROTOCOL_VERSION) or self.cfg.get("protocol_version")
            session_options = {"revision": revision, "timeout": float(self.cfg.get("timeout", 30.0))}
            options = self.options()
            options.redactor = redactor_for(self.targets[name], self.cfg.values)  # secret_env/secrets of [tool.feeler]
            self.runners[name] = Runner(self.targets[name], options, session_options=session_options)
        return self.runners[name]

    def close_all(self) -> None:
        for runner in self.runners.values():
            runner.close()
            runner.write_replays()
            self._write_report(runner)
        self.runners.clear()

    def report_folder(self, name: str) -> str | None:
        """Where ``--feeler-report`` puts target *name*'s reports (this process's share under xdist)."""
        folder = self.config.getoption(OPT_REPORT, None)
        if not folder:
            return None
        worker = getattr(self.config, "workerinput", {}).get("workerid")
        return os.path.join(folder, self.targets[name].slug() + (f"-{worker}" if worker else ""))

    def _write_report(self, runner: Runner) -> None:
        name = next((n for n, t in self.targets.items() if t is runner.target), None)
        folder = self.report_folder(name) if name else None
        if not folder or runner.report.catalog is None:
            return
        from feeler.report import build_report, write_reports

        write_reports(build_report(runner.report, command="pytest"), folder)

    # -- selection ----------------------------------------------------------------------------------
    def take_arguments(self) -> None:
        """Take the arguments that name feeler items out of pytest's own: node ids ``feeler::<target>...``
        (pytest would look for a file called ``feeler``) and the config file itself."""
        if not self.targets:
            return
        source = os.path.abspath(self.cfg.source) if self.cfg.source else None
        keep = []
        for arg in self.config.args:
            if arg == "feeler" or arg.startswith("feeler::"):
                if not os.path.exists(os.path.join(str(self.config.invocation_params.dir), "feeler")):
                    self.wanted.append(arg)
                    continue
            elif source and os.path.abspath(os.path.join(str(self.config.invocation_params.dir), arg)) == source:
                self.config_named = True
                continue
            keep.append(arg)
        self.config.args[:] = keep

    def selected(self) -> bool:
        """Whether this run asks for the generated items, as pytest decides for files: no paths given
        (pytest's own default), a folder given that holds the config file, the config file itself, or
        feeler node ids. ``--feeler-off`` turns them off; the ``feeler_session`` fixture works either way."""
        if self.config.getoption(OPT_OFF) or not self.targets:
            return False
        if self.wanted or self.config_named:
            return True
        args = [a for a in (self.config.option.file_or_dir or []) if a]
        if not args:
            return True
        source = os.path.abspath(self.cfg.source) if self.cfg.source else None
        here = str(self.config.invocation_params.dir)
        for arg in self.config.args:
            folder = os.path.abspath(os.path.join(here, arg.split("::")[0]))
            if source and os.path.isdir(folder) and source.startswith(folder.rstrip(os.sep) + os.sep):
                return True
        return False

    def wants(self, target: str, item: str | None = None) -> bool:
        """Whether node ids given on the command line select *target* (and *item*: ``quote_fee`` selects
        every kind of that tool, ``quote_fee[go]`` one), as pytest matches its own node ids."""
        if not self.wanted or self.config_named:
            return True
        for arg in self.wanted:
            parts = arg.split("::")[1:]
            if not parts:
                return True
            if parts[0] != target:
                continue
            if len(parts) == 1 or item is None:
                return True
            if parts[1] == item or ("[" not in parts[1] and item.split("[")[0] == parts[1]):
                return True
        return False

    @pytest.hookimpl(wrapper=True)
    def pytest_make_collect_report(self, collector: pytest.Collector) -> Any:
        rep = yield
        if isinstance(collector, pytest.Session) and rep.passed and self.selected():
            rep.result.append(FeelerRoot.from_parent(collector, name="feeler", nodeid="feeler", plugin=self))
        return rep

    @pytest.hookimpl(wrapper=True, tryfirst=True)
    def pytest_collection_modifyitems(self, session: pytest.Session, config: pytest.Config,
                                      items: list[pytest.Item]) -> Any:
        """``-k``, ``-m`` and ``--deselect`` on feeler items match exact names (target, tool, kind, item
        name), not any substring: ``-k catalog`` selects the catalog items, not a tool named
        ``search_catalogue``. pytest's own matching (substrings) applies to the other items."""
        ours = [i for i in items if isinstance(i, FeelerItem)]
        items[:] = [i for i in items if not isinstance(i, FeelerItem)]
        try:
            result = yield
        finally:
            items.extend(_select(ours, config))  # feeler's root is collected last: its items stay last
        return result

    def pytest_generate_tests(self, metafunc: pytest.Metafunc) -> None:
        if "feeler_target" in metafunc.fixturenames and self.targets:
            metafunc.parametrize("feeler_target", sorted(self.targets), indirect=True, scope="session")

    def pytest_sessionfinish(self, session: pytest.Session) -> None:
        self.close_all()

    # -- the summary --------------------------------------------------------------------------------
    def pytest_runtest_logreport(self, report: pytest.TestReport) -> None:
        if report.when != "call" or not report.nodeid.startswith("feeler::"):
            return
        target = report.nodeid.split("::")[1]
        self.items_run[target] = self.items_run.get(target, 0) + 1
        seen = self.seen.setdefault(target, {})
        groups: list[dict[str, str]] = []
        for name, value in report.user_properties:
            if name == "feeler_finding":
                groups.append({})
            if groups:
                groups[-1][name] = str(value)
        for group in groups:
            if group.get("feeler_signature"):
                seen.setdefault(group["feeler_signature"], (group.get("feeler_severity", "error"), group.get("feeler_replay", "")))

    def pytest_terminal_summary(self, terminalreporter: Any) -> None:
        if not self.selected() or not self.items_run:
            return
        terminalreporter.section("feeler")
        for name in sorted(self.targets):
            if not self.items_run.get(name):
                continue
            found = self.seen.get(name, {})
            errors = sum(1 for severity, _ in found.values() if severity == "error")
            from feeler.check.report import totals_words

            runs = self.items_run[name]
            line = f"{name}: {totals_words(len(found), errors)} in {runs} item{'s' if runs != 1 else ''}"
            replays = sorted({r for _, r in found.values() if r})
            if replays:
                line += f"; replay files in {os.path.join(self.replay_dir(), self.targets[name].slug())}{os.sep}"
            terminalreporter.write_line(line)
            for command in replays[:5]:
                terminalreporter.write_line(f"  {command}")
            if len(replays) > 5:
                terminalreporter.write_line(f"  ... and {len(replays) - 5} more replay files")
        folder = self.config.getoption(OPT_REPORT, None)
        if folder:
            names = ", ".join(f"{os.path.join(folder, self.targets[n].slug())}" for n in sorted(self.targets)
                              if self.items_run.get(n))  # fmt: skip
            workers = " (one folder per pytest-xdist worker: <target>-gwN; join them with `feeler report merge`)" \
                if getattr(self.config.option, "numprocesses", None) else ""
            terminalreporter.write_line(f"reports: {names}{workers}")


def _tokens(item: FeelerItem) -> set[str]:
    """The exact names ``-k`` matches on a feeler item (lower case)."""
    names = {"feeler", item.target_name, item.name, item.kind, *(m.name for m in item.iter_markers())}
    if item.tool_name:
        names.add(item.tool_name)
    if item.kind == "chain":
        names.add("chains")
    return {n.lower() for n in names}


def _select(items: list[FeelerItem], config: pytest.Config) -> list[FeelerItem]:
    """*items* after ``--deselect``, ``-k`` (exact names) and ``-m``; the rest reported as deselected."""
    from _pytest.mark.expression import Expression

    prefixes = tuple(config.getoption("deselect") or [])
    keyword = (config.option.keyword or "").strip()
    marks = (config.option.markexpr or "").strip()
    try:
        k = Expression.compile(keyword) if keyword else None
        m = Expression.compile(marks) if marks else None
    except SyntaxError:
        return items  # pytest reports the bad expression itself
    kept, dropped = [], []
    for item in items:
        tokens = _tokens(item)
        ok = not (prefixes and item.nodeid.startswith(prefixes))
        ok = ok and (k is None or k.evaluate(lambda name, **kw: not kw and name.lower() in tokens))
        markers = {mark.name for mark in item.iter_markers()}
        ok = ok and (m is None or m.evaluate(lambda name, **kw: not kw and name in markers))
        (kept if ok else dropped).append(item)
    if dropped:
        config.hook.pytest_deselected(items=dropped)
    return kept


class FeelerCollectError(Exception):
    """A node id on the command line names no feeler item."""


class _Collector(pytest.Collector):
    """A feeler collector: knows the plugin; a node id that names nothing is one line, not a traceback."""

    def __init__(self, *, plugin: FeelerPlugin, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.plugin = plugin

    def repr_failure(self, excinfo: pytest.ExceptionInfo[BaseException]) -> str:  # type: ignore[override]
        if isinstance(excinfo.value, FeelerCollectError):
            return f"feeler: {excinfo.value}"
        return str(super().repr_failure(excinfo))


class FeelerRoot(_Collector):
    """Every feeler item (node id ``feeler``): one collector per target below it."""

    def collect(self) -> list[pytest.Collector]:
        out: list[pytest.Collector] = []
        for name in sorted(self.plugin.targets):
            if self.plugin.wants(name):
                out.append(TargetCollector.from_parent(self, name=name, plugin=self.plugin, target_name=name))
        if self.plugin.wanted and not out:
            raise FeelerCollectError(f"no feeler target matches {' '.join(self.plugin.wanted)} "
                                     f"(targets: {', '.join(sorted(self.plugin.targets))})")
        return out


class TargetCollector(_Collector):
    """All items of one target (node id ``feeler::<target>``); connects once at collection to learn the
    tool list, so pytest counts the items it collected."""

    def __init__(self, *, target_name: str, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.target_name = target_name

    def collect(self) -> list[pytest.Item]:
        from feeler.errors import FeelerError

        wants = self.plugin.wants
        items: list[pytest.Item] = []
        if wants(self.target_name, "catalog"):
            items.append(FeelerItem.from_parent(self, name="catalog", tool=None, kind="catalog"))
        runner = self.plugin.runner(self.target_name)
        try:
            runner.open()
        except FeelerError as exc:
            self.plugin.catalog_errors[self.target_name] = str(exc)
            return items or [FeelerItem.from_parent(self, name="catalog", tool=None, kind="catalog")]
        for tool in runner.tools():
            for kind in _KINDS:
                if wants(self.target_name, f"{tool.name}[{kind}]"):
                    items.append(FeelerItem.from_parent(self, name=f"{tool.name}[{kind}]", tool=tool.name, kind=kind))
        if runner.options.chain_runs > 0 and wants(self.target_name, "chains"):
            items.append(FeelerItem.from_parent(self, name="chains", tool=None, kind="chain"))
        if not items:
            raise FeelerCollectError(f"no item of target {self.target_name} matches {' '.join(self.plugin.wanted)} "
                                     f"(items: catalog, chains, <tool>[go], <tool>[no-go], <tool>[probe])")
        return items


class FeelerFailure(Exception):
    """The findings of one item."""


class FeelerItem(pytest.Item):
    """One target x tool x kind."""

    def __init__(self, *, tool: str | None, kind: str, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.tool_name = tool
        self.kind = kind
        self.add_marker("feeler")

    @property
    def plugin(self) -> FeelerPlugin:
        return self.parent.plugin  # type: ignore[attr-defined,no-any-return]

    @property
    def target_name(self) -> str:
        return self.parent.target_name  # type: ignore[attr-defined,no-any-return]

    def runtest(self) -> None:
        error = self.plugin.catalog_errors.get(self.target_name)
        if error:
            raise FeelerFailure(f"cannot reach the target: {error}")
        runner = self.plugin.runner(self.target_name)
        if self.kind == "catalog":
            self._catalog(runner)
            return
        if self.kind == "chain":
            self._fail_on(runner, runner.run_chains())
            return
        tool = runner.report.catalog.tool(self.tool_name) if runner.report.catalog else None
        if tool is None:
            raise FeelerFailure(f"tool {self.tool_name!r} is no longer advertised")
        reason = runner.skip_reason(tool, option=OPT_DESTRUCTIVE)
        if reason:
            pytest.skip(f"{self.tool_name}: {reason}")
        new = runner.run_tool(tool, kinds=(self.kind,))
        # A catalog finding made while this item made its cases (schema_usable: no value found, a pattern past
        # its time budget) fails this item: the catalog item ran before it was known.
        mine = [
            f for f in runner.report.findings
            if self.tool_name in f.tools and (_kind_of(f.kind) == self.kind or (f.kind == "catalog" and f in new))
        ]  # fmt: skip
        self._fail_on(runner, mine)

    def _fail_on(self, runner: Runner, mine: list[Any], more: list[str] | None = None) -> None:
        """Write the replay files of *mine* now (so the failure and JUnit name them), attach every finding
        as JUnit properties, and fail on the errors (and on *more* problems)."""
        runner.write_replays(mine)
        for finding in mine:
            self.user_properties.extend(_properties(finding))
        problems = _lines([f for f in mine if f.severity == "error"]) + list(more or [])
        if problems:
            raise FeelerFailure("\n".join(problems))

    def _catalog(self, runner: Runner) -> None:
        from feeler.check.registry import CallContext

        runner.open()
        findings_before = runner.report.findings.signatures()
        if not runner.report.tools_audited:
            runner.audit_catalog()  # the catalog-wide checks (names unique, size, near-duplicates)
        for tool in runner.tools():
            runner._evaluate(CallContext("catalog", tool, runner.revision, runner.era, runner.settings))
        new = [f for f in runner.report.findings if f.signature not in findings_before]
        self._fail_on(runner, new, _baseline_problems(self.plugin, self.target_name, runner))
        missing = _missing_baseline(self.plugin, runner)
        if missing:
            pytest.skip(missing)

    def repr_failure(self, excinfo: pytest.ExceptionInfo[BaseException], style: Any = None) -> str:  # type: ignore[override]
        if isinstance(excinfo.value, FeelerFailure):
            return f"feeler: {self.target_name} {self.name}\n{excinfo.value}"
        return super().repr_failure(excinfo)  # type: ignore[return-value]

    def reportinfo(self) -> tuple[Any, int | None, str]:
        return self.path, None, f"feeler::{self.target_name}::{self.name}"


def _kind_of(kind: str) -> str:
    # Tool-level verdicts (gate_opens, values_needed) are drawn from the go cases: the [go] item shows them.
    return "go" if kind == "tool" else kind


def _properties(finding: Any) -> list[tuple[str, str]]:
    """One finding as JUnit properties, in full (no text is cut): ``feeler_finding`` opens each group."""
    import json

    props = [
        ("feeler_finding", f"{finding.check}: {finding.message}"),
        ("feeler_check", finding.check),
        ("feeler_severity", finding.severity),
        ("feeler_kind", finding.kind),
        ("feeler_tools", ", ".join(finding.tools)),
        ("feeler_keywordLocation", finding.keyword_location or ""),
        ("feeler_instanceLocation", finding.instance_location if finding.instance_location is not None else ""),
        ("feeler_arguments", json.dumps(finding.arguments, ensure_ascii=False) if finding.arguments is not None else ""),
        ("feeler_message", finding.message),
        ("feeler_replay", _replay_command(finding.replay) if finding.replay else ""),
        ("feeler_signature", finding.signature),
    ]
    return props


def _replay_command(path: str) -> str:
    import shlex

    return f"feeler replay {shlex.quote(path)}"


def _lines(findings: list[Any]) -> list[str]:
    import json

    out = []
    for f in findings:
        out.append(f"[{f.check}] {f.message}")
        if f.arguments is not None:
            out.append(f"    arguments: {json.dumps(f.arguments, ensure_ascii=False)}")
        if f.replay:
            out.append(f"    replay: {_replay_command(f.replay)}")
    return out


def _missing_baseline(plugin: FeelerPlugin, runner: Runner) -> str | None:
    """The skip reason when no baseline is approved yet: it names the command that creates it."""
    from feeler.baseline.pytest_support import approve_command
    from feeler.baseline.store import BaselineStore

    if plugin.config.getoption(OPT_APPROVE):
        return None
    folder = str(plugin.cfg.get("baselines", "baselines"))
    if BaselineStore.for_target(folder, runner.target).exists():
        return None
    return (f"no approved baseline for {runner.target.name} in {folder}/; create it with: "
            f"{approve_command(runner.target, folder, plugin.cfg.values)}  (or: pytest --feeler-approve)")


def _baseline_problems(plugin: FeelerPlugin, name: str, runner: Runner) -> list[str]:
    """Compare with the approved baseline, if the baselines layer is installed and one exists."""
    try:
        from feeler.baseline.pytest_support import check_catalog_against_baseline
    except ImportError:
        return []
    catalog = runner.report.catalog
    if catalog is None:
        return []
    if plugin.config.getoption(OPT_APPROVE) and hasattr(plugin.config, "workerinput"):
        return ["--feeler-approve writes baselines from one process only and this is a pytest-xdist worker: "
                "nothing was written; run `pytest --feeler-approve -p no:xdist` (or with -n 0)"]
    return check_catalog_against_baseline(
        runner.target, catalog, folder=str(plugin.cfg.get("baselines", "baselines")),
        approve=bool(plugin.config.getoption(OPT_APPROVE)),
        is_worker=hasattr(plugin.config, "workerinput"),
        session=runner.open(), config=plugin.cfg.values,
    )  # fmt: skip


@pytest.fixture(scope="session")
def feeler_target(request: pytest.FixtureRequest) -> Any:
    """The :class:`~feeler.target.Target` a hand-written test runs against (one per configured target)."""
    plugin = request.config.stash.get(_plugin_key, None)
    if plugin is None or not plugin.targets:
        pytest.skip("feeler: no target configured ([tool.feeler] targets or --feeler-target)")
    name = getattr(request, "param", None) or sorted(plugin.targets)[0]
    return plugin.targets[name]


@pytest.fixture(scope="session")
def feeler_session(feeler_target: Any, request: pytest.FixtureRequest) -> Any:
    """A connected :class:`~feeler.session.Session` on the configured target, closed after the run."""
    from feeler.connect import open_session

    revision = request.config.getoption(OPT_PROTOCOL_VERSION) or None
    session = open_session(feeler_target, revision=revision)
    yield session
    session.close()
