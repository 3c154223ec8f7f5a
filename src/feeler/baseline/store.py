"""The baseline store: ``baselines/<target-slug>/catalog.json`` and ``outputs.json``.

Both files are canonical JSON (sorted keys, two-space indent, trailing newline) with a ``baseline`` header:
format version, feeler version, date and the code revision given by the user (``sourceRef``) — never an environment
variable, a header or a token. ``catalog.json`` is a catalog file in its own right (``feeler diff`` reads
it directly); the header is one extra key.

Writes are atomic: each file goes to a temp file in the same folder, is flushed and fsynced, then moved
over the old one with :func:`os.replace`; all temp files (and a copy of each old file) are written
before the first replace, and a failure between two replaces puts the first file back, so a failure
while writing leaves the old baseline untouched. Only one process writes: pytest-xdist workers
never do (as pytest's stepwise plugin, #10641), and writers take an ``O_EXCL`` lock file in the folder.
Unchanged content is not rewritten, so the header's date does not churn git.
"""

from __future__ import annotations

import contextlib
import datetime as _dt
import json
import os
import tempfile
import time
import warnings
from collections.abc import Iterable, Iterator, Mapping
from pathlib import Path
from typing import Any

from feeler._json import canonical_dumps
from feeler._read import read_json, read_text
from feeler.catalog import Catalog
from feeler.errors import BaselineError, UsageError
from feeler.target import target_slug

__all__ = [
    "BASELINE_FORMAT",
    "BaselineStore",
    "BaselineWarning",
    "is_writer",
    "stale_baselines",
    "stale_records",
    "target_slug",
    "writer_lock",
]

#: Stamped into every baseline file's header; bumped when the layout changes incompatibly.
BASELINE_FORMAT = "feeler-baseline/2"
#: Older header formats still read: ``feeler-baseline/1`` (code revision under ``revision``, catalog
#: keys ``revision``/``supportedRevisions``). The next approve writes the current format.
OLD_BASELINE_FORMATS = ("feeler-baseline/1",)
CATALOG_FILE = "catalog.json"
OUTPUTS_FILE = "outputs.json"
LOCK_FILE = ".feeler-write.lock"
#: How long a writer waits for another writer's lock before giving up (seconds), and when a lock is stale.
LOCK_WAIT = 10.0
LOCK_STALE = 600.0
FIX = "restore it from git or run `feeler approve` to write it again"


class BaselineWarning(UserWarning):
    """A baseline could not be read and is treated as missing (storage never breaks a run)."""


def is_writer() -> bool:
    """True unless this process is a pytest-xdist worker (those never write baselines)."""
    return not os.environ.get("PYTEST_XDIST_WORKER")


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    except OSError:
        return False
    return True


@contextlib.contextmanager
def writer_lock(folder: Path, *, wait: float = LOCK_WAIT) -> Iterator[Path]:
    """Hold ``<folder>/.feeler-write.lock`` (created with ``O_EXCL``) while writing.

    A lock whose process is gone, or older than ten minutes, is taken over. Waits at most *wait*
    seconds, then raises :class:`BaselineError` naming the lock file.
    """
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / LOCK_FILE
    deadline = time.monotonic() + wait
    while True:
        try:
            fd = os.open(path, os.O_CREAT | os.O_EXCL | os.O_WRONLY, 0o644)
        except FileExistsError:
            if _stale_lock(path):
                with contextlib.suppress(FileNotFoundError):
                    path.unlink()
                continue
            if time.monotonic() >= deadline:
                raise BaselineError(
                    f"{path}: another feeler process is writing this baseline (lock held for more than "
                    f"{wait:g} s); if none is running, delete the lock file and try again"
                ) from None
            time.sleep(0.05)
            continue
        break
    try:
        os.write(fd, str(os.getpid()).encode())
        os.close(fd)
        yield path
    finally:
        with contextlib.suppress(FileNotFoundError):
            path.unlink()


def _stale_lock(path: Path) -> bool:
    try:
        text = path.read_text(encoding="ascii").strip()
        age = time.time() - path.stat().st_mtime
    except (OSError, UnicodeDecodeError):
        return False
    if age > LOCK_STALE:
        return True
    return text.isdigit() and not _pid_alive(int(text))


def _atomic_prepare(path: Path, text: str) -> Path:
    """Write *text* to a temp file beside *path* (flushed and fsynced); return the temp file."""
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise
    return Path(tmp)


def _load(path: Path) -> Any:
    if not os.path.lexists(path):
        raise BaselineError(f"{path}: no baseline here; run `feeler approve` to record one")
    return read_json(path, what="the baseline file", fix=f"the file is corrupt or was edited by hand; {FIX}",
                     expect=dict, error=BaselineError)


def _check_header(path: Path, data: Any) -> dict[str, Any]:
    if not isinstance(data, dict):
        raise BaselineError(f"{path}:1:1: expected a JSON object with a 'baseline' header; {FIX}")
    header = data.get("baseline")
    if not isinstance(header, dict) or header.get("format") not in (BASELINE_FORMAT, *OLD_BASELINE_FORMATS):
        got = header.get("format") if isinstance(header, dict) else header
        raise BaselineError(f"{path}: baseline header format={got!r} is not {BASELINE_FORMAT!r}; {FIX}")
    if header.get("format") in OLD_BASELINE_FORMATS and "revision" in header:
        header = {k: v for k, v in header.items() if k != "revision"}
        header["sourceRef"] = data["baseline"]["revision"]
    return header


class BaselineStore:
    """One target's baseline folder.

    :param root: the baselines directory (``baselines/`` at the project root by default).
    :param target: the target spec; the folder is ``root / target_slug(target)``.
    """

    def __init__(self, root: str | os.PathLike[str] = "baselines", target: str = "target") -> None:
        self.root = Path(root)
        self.folder = self.root / target_slug(target)

    @classmethod
    def for_target(cls, root: str | os.PathLike[str], target: Any) -> BaselineStore:
        """The store of a :class:`~feeler.target.Target`: ``root / <target name>`` for a ``[tool.feeler]``
        target, ``root / <slug of the spec>`` for one given on the command line."""
        store = cls(root, "x")
        store.folder = store.root / target.slug()
        return store

    @classmethod
    def from_folder(cls, folder: str | os.PathLike[str]) -> BaselineStore:
        """A store for an existing folder, e.g. one given to ``feeler diff``."""
        path = Path(folder)
        store = cls(path.parent, "x")
        store.folder = path
        return store

    @property
    def catalog_path(self) -> Path:
        return self.folder / CATALOG_FILE

    @property
    def outputs_path(self) -> Path:
        return self.folder / OUTPUTS_FILE

    def exists(self) -> bool:
        """Whether anything is at the catalog's path (a folder or FIFO there is a corrupt baseline, not none)."""
        return os.path.lexists(self.catalog_path)

    # -- reading -------------------------------------------------------------------------------
    def read_header(self) -> dict[str, Any]:
        return dict(_check_header(self.catalog_path, _load(self.catalog_path)))

    def read_catalog(self) -> Catalog:
        """The approved catalog; :class:`BaselineError` naming the file, line and fix when unusable."""
        data = _load(self.catalog_path)
        _check_header(self.catalog_path, data)
        try:
            return Catalog.from_json(data, source=str(self.catalog_path))
        except UsageError as exc:
            raise BaselineError(f"{exc}; {FIX}") from exc

    def read_outputs(self) -> list[dict[str, Any]]:
        """The recorded outputs (``[]`` when none were recorded)."""
        if not os.path.lexists(self.outputs_path):
            return []
        data = _load(self.outputs_path)
        _check_header(self.outputs_path, data)
        records = data.get("records")
        if not isinstance(records, list) or not all(
            isinstance(r, dict) and isinstance(r.get("tool"), str) and "result" in r for r in records
        ):
            raise BaselineError(f"{self.outputs_path}: 'records' must be a list of {{tool, arguments, result}} "
                                f"objects; {FIX}")
        return records

    def catalog_or_none(self) -> Catalog | None:
        """Like :meth:`read_catalog`, but a missing or corrupt file gives ``None`` (and a warning if corrupt)."""
        if not self.exists():
            return None
        try:
            return self.read_catalog()
        except BaselineError as exc:
            warnings.warn(f"feeler: {exc} (treated as no baseline)", BaselineWarning, stacklevel=2)
            return None

    # -- writing -------------------------------------------------------------------------------
    def render(self, catalog: Catalog, outputs: list[Mapping[str, Any]] | None, header: Mapping[str, Any]
               ) -> dict[Path, str]:
        """The exact bytes (as text) each file would get: deterministic for the same inputs."""
        files = {self.catalog_path: canonical_dumps({**catalog.to_json(), "baseline": dict(header)})}
        if outputs is not None:
            records = sorted((dict(r) for r in outputs),
                             key=lambda r: (str(r.get("tool")), json.dumps(r.get("arguments"), sort_keys=True)))
            files[self.outputs_path] = canonical_dumps({"baseline": dict(header), "records": records})
        return files

    def write(self, catalog: Catalog, outputs: list[Mapping[str, Any]] | None = None, *,
              source_ref: str | None = None, today: _dt.date | None = None) -> list[Path]:
        """Write the baseline atomically under the writer lock; return the files actually changed.

        :param outputs: recorded output records, or None to leave ``outputs.json`` as it is.
        :param source_ref: the code revision being approved (e.g. a git commit), stored in the header
            as ``sourceRef``.
        :param today: the date for the header (tests pass a fixed one).
        :raises BaselineError: in a pytest-xdist worker, or when the lock cannot be taken.
        """
        if not is_writer():
            raise BaselineError(f"{self.folder}: pytest-xdist worker {os.environ.get('PYTEST_XDIST_WORKER')} "
                                "does not write baselines; the controller process does")
        from feeler import __version__

        header = {"format": BASELINE_FORMAT, "feeler": __version__,
                  "date": (today or _dt.date.today()).isoformat()}
        if source_ref:
            header["sourceRef"] = source_ref
        with writer_lock(self.folder):
            files = {p: t for p, t in self.render(catalog, outputs, header).items() if self._differs(p, t)}
            temps: dict[Path, Path] = {}
            backups: dict[Path, Path] = {}
            done: list[Path] = []
            try:
                for path, text in files.items():
                    temps[path] = _atomic_prepare(path, text)
                    if path.exists():  # kept so a failure between two replaces can roll the first back
                        backups[path] = _atomic_prepare(path, read_text(path, fix=FIX, error=BaselineError))
                for path, tmp in temps.items():
                    os.replace(tmp, path)
                    done.append(path)
            except BaseException:
                for path in reversed(done):
                    with contextlib.suppress(OSError):
                        if path in backups:
                            os.replace(backups[path], path)
                        else:
                            path.unlink()
                raise
            finally:
                for tmp in [*temps.values(), *backups.values()]:
                    with contextlib.suppress(FileNotFoundError):
                        tmp.unlink()
        return sorted(files)

    def _differs(self, path: Path, text: str) -> bool:
        """Whether *path* needs rewriting: its content other than the header differs from *text*."""
        try:
            old = read_json(path, what="the baseline file", fix=FIX, expect=None, error=BaselineError)
        except BaselineError:
            return True
        new = json.loads(text)
        if isinstance(old, dict):
            old_header = old.pop("baseline", None)
            new_header = new.pop("baseline", None)
            if isinstance(old_header, dict) and isinstance(new_header, dict):
                if new_header.get("format") and old_header.get("format") != new_header.get("format"):
                    return True
                if old_header.get("sourceRef", old_header.get("revision")) != new_header.get("sourceRef"):
                    return True
        return bool(old != new)


def stale_baselines(root: str | os.PathLike[str], targets: Iterable[str]) -> list[Path]:
    """Baseline folders under *root* that match none of *targets* (candidates for deletion)."""
    base = Path(root)
    if not base.is_dir():
        return []
    wanted = {target_slug(t) for t in targets}
    return sorted(p for p in base.iterdir() if p.is_dir() and (p / CATALOG_FILE).exists() and p.name not in wanted)


def stale_records(records: Iterable[Mapping[str, Any]], catalog: Catalog) -> list[Mapping[str, Any]]:
    """Recorded outputs whose tool no longer exists in *catalog*."""
    names = {t.name for t in catalog.tool_list()}
    return [r for r in records if r.get("tool") not in names]
