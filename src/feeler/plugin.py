"""The feeler pytest plugin (registered through the ``pytest11`` entry point).

When ``[tool.feeler] targets`` (pyproject.toml) or ``--feeler-target`` names servers, the plugin adds
test items per target x tool x kind::

    feeler::<target>::catalog                 the catalog itself (and its baseline, if one is approved)
    feeler::<target>::<tool>[go]              go cases must enter
    feeler::<target>::<tool>[no-go]           no-go cases must be stopped cleanly
    feeler::<target>::<tool>[probe]           malformed requests (protocol level)
    feeler::<target>::chains                  call chains (sequences linked by returned values)

They work with ``-k``, ``-x``, ``-n`` (pytest-xdist: each worker opens its own session) and
``--junitxml`` (findings are attached as properties). Hand-written tests get a connected session from
the ``feeler_session`` fixture.

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
        targets: dict[str, Target] = dict(cfg.targets())
        if config.getoption(OPT_TARGET):
            from feeler.target import Target

            for spec in config.getoption(OPT_TARGET):
                tgt = Target.parse(spec)
                targets[tgt.slug()] = tgt
    except FeelerError as exc:
        raise pytest.UsageError(f"feeler: {exc}") from None
    if targets:  # SIGTERM/SIGHUP unwind like Ctrl-C, so pytest's teardown ends the servers
        from feeler import _signals

        _signals.install()
    plugin = FeelerPlugin(config, cfg, targets)
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

    # -- runners ----------------------------------------------------------------------------------
    def options(self) -> Any:
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
            ),
            replay_dir=cfg.get("replay_dir", ".feeler/replays"),
            learn=bool(cfg.get("learn", True)),
            chain_runs=int(cfg.get("chain_runs", 20)),
            chain_steps=int(cfg.get("chain_steps", 8)),
            recursion_depth=next(v for v in (config.getoption(OPT_RECURSION_DEPTH), cfg.get("recursion_depth"),
                                              DEFAULT_RECURSION_DEPTH) if v is not None),  # fmt: skip
        )

    def runner(self, name: str) -> Runner:
        from feeler.check.runner import Runner

        if name not in self.runners:
            revision = self.config.getoption(OPT_PROTOCOL_VERSION) or self.cfg.get("protocol_version")
            session_options = {"revision": revision, "timeout": float(self.cfg.get("timeout", 30.0))}
            self.runners[name] = Runner(self.targets[name], self.options(), session_options=session_options)
        return self.runners[name]

    def close_all(self) -> None:
        for runner in self.runners.values():
            runner.close()
            runner._write_replays()
            self._write_report(runner)
        self.runners.clear()

    def _write_report(self, runner: Runner) -> None:
        folder = self.config.getoption(OPT_REPORT, None)
        if not folder or runner.report.catalog is None:
            return
        from feeler.report import build_report, write_reports

        worker = getattr(self.config, "workerinput", {}).get("workerid")
        name = runner.target.slug() + (f"-{worker}" if worker else "")
        write_reports(build_report(runner.report, command="pytest"), os.path.join(folder, name))

    # -- collection ---------------------------------------------------------------------------------
    def selected(self) -> bool:
        """Whether this run asks for the generated items: no paths given (pytest's own default), or the
        config file itself named (``pytest pyproject.toml``). ``--feeler-off`` turns them off; the
        ``feeler_session`` fixture keeps working either way."""
        if self.config.getoption(OPT_OFF):
            return False
        args = [a for a in (self.config.option.file_or_dir or []) if a]
        if not args:
            return True
        source = os.path.abspath(self.cfg.source) if self.cfg.source else None
        return any(source and os.path.abspath(str(self.config.invocation_params.dir / a.split("::")[0])) == source
                   for a in args)

    @pytest.hookimpl(tryfirst=True)
    def pytest_collection_modifyitems(self, session: pytest.Session, config: pytest.Config, items: list[pytest.Item]) -> None:
        if not self.selected():
            return
        for name in self.targets:
            collector = TargetCollector.from_parent(
                session, name=f"feeler::{name}", nodeid=f"feeler::{name}", plugin=self, target_name=name
            )
            items.extend(collector.collect())

    def pytest_generate_tests(self, metafunc: pytest.Metafunc) -> None:
        if "feeler_target" in metafunc.fixturenames and self.targets:
            metafunc.parametrize("feeler_target", sorted(self.targets), indirect=True, scope="session")

    def pytest_sessionfinish(self, session: pytest.Session) -> None:
        self.close_all()


class TargetCollector(pytest.Collector):
    """All items of one target; connects once at collection to learn the tool list."""

    def __init__(self, *, plugin: FeelerPlugin, target_name: str, **kwargs: Any) -> None:
        super().__init__(**kwargs)
        self.plugin = plugin
        self.target_name = target_name

    def collect(self) -> list[pytest.Item]:
        from feeler.errors import FeelerError

        items: list[pytest.Item] = [FeelerItem.from_parent(self, name="catalog", tool=None, kind="catalog")]
        runner = self.plugin.runner(self.target_name)
        try:
            runner.open()
        except FeelerError as exc:
            self.plugin.catalog_errors[self.target_name] = str(exc)
            return items
        for tool in runner.tools():
            for kind in _KINDS:
                items.append(FeelerItem.from_parent(self, name=f"{tool.name}[{kind}]", tool=tool.name, kind=kind))
        if runner.options.chain_runs > 0:
            items.append(FeelerItem.from_parent(self, name="chains", tool=None, kind="chain"))
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
            self._fail_on(runner.run_chains())
            return
        tool = runner.report.catalog.tool(self.tool_name) if runner.report.catalog else None
        if tool is None:
            raise FeelerFailure(f"tool {self.tool_name!r} is no longer advertised")
        reason = runner.skip_reason(tool)
        if reason and self.kind != "catalog":
            pytest.skip(f"{self.tool_name}: {reason}")
        runner.run_tool(tool, kinds=(self.kind,))
        mine = [
            f for f in runner.report.findings
            if self.tool_name in f.tools and _kind_of(f.kind) == self.kind
        ]  # fmt: skip
        self._fail_on(mine)

    def _fail_on(self, mine: list[Any]) -> None:
        for finding in mine:
            self.user_properties.append(("feeler_finding", f"{finding.check}: {finding.message}"))
        errors = [f for f in mine if f.severity == "error"]
        if errors:
            raise FeelerFailure("\n".join(_lines(errors)))

    def _catalog(self, runner: Runner) -> None:
        from feeler.check.registry import CallContext

        runner.open()
        findings_before = runner.report.findings.signatures()
        if not runner.report.tools_audited:
            runner.audit_catalog()  # the catalog-wide checks (names unique, size, near-duplicates)
        for tool in runner.tools():
            runner._evaluate(CallContext("catalog", tool, runner.revision, runner.era, runner.settings))
        new = [f for f in runner.report.findings if f.signature not in findings_before and f.severity == "error"]
        problems = _lines(new)
        problems += _baseline_problems(self.plugin, self.target_name, runner)
        if problems:
            raise FeelerFailure("\n".join(problems))
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


def _lines(findings: list[Any]) -> list[str]:
    import json

    out = []
    for f in findings:
        out.append(f"[{f.check}] {f.message}")
        if f.arguments is not None:
            out.append(f"    arguments: {json.dumps(f.arguments, ensure_ascii=False)[:300]}")
        if f.replay:
            out.append(f"    replay: feeler replay {f.replay}")
    return out


def _missing_baseline(plugin: FeelerPlugin, runner: Runner) -> str | None:
    """The skip reason when no baseline is approved yet: it names the command that creates it."""
    import shlex

    from feeler.baseline.store import BaselineStore

    if plugin.config.getoption(OPT_APPROVE):
        return None
    folder = plugin.cfg.get("baselines", "baselines")
    if BaselineStore(folder, runner.target.spec).exists():
        return None
    return (f"no approved baseline for {runner.target.name} in {folder}/; create it with: "
            f"feeler approve --baselines {shlex.quote(folder)} --yes {shlex.quote(runner.target.spec)}"
            f"  (or: pytest --feeler-approve)")


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
        runner.target, catalog, folder=plugin.cfg.get("baselines", "baselines"),
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
