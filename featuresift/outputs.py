"""Safe output folders: atomic writes, no symbolic links, one run at a time, runs never mix.

Everything featuresift writes goes through this module.

* **Atomic files.** :func:`write_files` writes each file under a fresh random temporary
  name in the same folder (created with ``O_CREAT | O_EXCL | O_NOFOLLOW``) and renames it
  over the final name with :func:`os.replace`, so a reader sees the old file or the new
  one, never half of one.
* **No symbolic links.** The folder is opened with ``O_NOFOLLOW`` and every later
  operation is relative to that open folder; a symbolic link found in place of the folder,
  of a file to write or of the journal is an :class:`~featuresift.errors.InputError`
  naming the path (the CLI exits 2). Links are never followed and never replaced.
* **One run per output folder.** :class:`RunFolder` takes an exclusive lock
  (``fcntl.flock`` on ``.featuresift.lock`` in the output folder). A second run into a
  folder that is in use **fails at once** with exit 2, naming the folder and the pid of
  the run holding it (it does not wait: a command that silently hangs behind another long
  search is worse than a clear message). The lock dies with its process, so a killed run
  never blocks the next one.
* **Runs never mix.** Each ``run`` / ``sweep`` / ``screen`` writes its files into a
  hidden staging folder (``.004-run.partial``) which is renamed to ``004-run`` once
  every file is written: a numbered run folder always holds the complete, self-consistent
  set of files of one invocation. ``latest.json`` in the output folder (a small JSON file,
  not a symbolic link) names the latest run folder and the latest one of each command.
  The evaluation journal stays in the output folder itself, shared by every run of the
  config, so runs resume and reuse each other's evaluations.
* **Clean-up removes only what this run created.** On failure the staging folder (made by
  this run), a journal this run created (unless interrupted: an interrupted run keeps its
  journal to resume from), the lock file and the folders this run created (only when
  empty) are removed; nothing another run wrote is touched.

Examples
--------
>>> import json, tempfile
>>> from pathlib import Path
>>> with tempfile.TemporaryDirectory() as d:
...     with RunFolder(Path(d) / "out", "run") as out:
...         _ = out.write_files({"result.json": "{}\\n"})
...         final = out.commit()
...     latest = json.loads((Path(d) / "out" / "latest.json").read_text())
...     names = sorted(p.name for p in (Path(d) / "out").iterdir())
>>> final.name, latest["folder"], names
('001-run', '001-run', ['001-run', 'latest.json'])
"""

from __future__ import annotations

import datetime as _dt
import errno
import json
import os
import re
import secrets
import stat
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

from featuresift.errors import InputError

try:  # POSIX only; elsewhere the lock is an exclusively created file
    import fcntl
except ImportError:  # pragma: no cover - not reached on Linux/macOS
    fcntl = None  # type: ignore[assignment]

__all__ = [
    "LATEST_NAME",
    "LOCK_NAME",
    "PLOTS_HINT",
    "RunFolder",
    "figure_png",
    "latest_run",
    "open_run_folder",
    "plots_available",
    "refuse_symlink",
    "write_files",
]

LOCK_NAME = ".featuresift.lock"
LATEST_NAME = "latest.json"
PLOTS_HINT = 'plots need matplotlib: pip install "featuresift[plots]"'
COMMANDS = ("run", "sweep", "screen")

_NOFOLLOW = getattr(os, "O_NOFOLLOW", 0)
_DIRECTORY = getattr(os, "O_DIRECTORY", 0)
_CLOEXEC = getattr(os, "O_CLOEXEC", 0)
_RUN_NAME = re.compile(r"^\.?(\d+)-([a-z]+)(\.partial)?$")
#: Files SQLite keeps beside a journal.
JOURNAL_SUFFIXES = ("", "-wal", "-shm", "-journal")


def plots_available() -> bool:
    """True when matplotlib can be imported (the ``plots`` extra is installed).

    Examples
    --------
    >>> isinstance(plots_available(), bool)
    True
    """
    try:
        import matplotlib  # noqa: F401
        import matplotlib.pyplot  # noqa: F401
    except ImportError:
        return False
    return True


def figure_png(draw: Callable[[Any], Any], figsize: tuple[float, float]) -> bytes | None:
    """PNG bytes of a figure drawn by ``draw(figure)``; None without matplotlib.

    The figure is a bare :class:`matplotlib.figure.Figure`: no pyplot, so the user's
    matplotlib backend is never changed. The bytes go to a file through
    :func:`write_files` (atomic, never through a link).

    Examples
    --------
    >>> png = figure_png(lambda fig: fig.subplots().plot([0, 1]), (2, 2))
    >>> png is None or png[:8] == b"\\x89PNG\\r\\n\\x1a\\n"
    True
    """
    if not plots_available():
        return None
    import io

    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize)
    draw(fig)
    fig.tight_layout()
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=120)
    return buf.getvalue()


def _symlink_error(path: str | os.PathLike) -> InputError:
    return InputError(
        f"{path} is a symbolic link; featuresift never writes through links "
        "(remove it, or choose another output folder)"
    )


def refuse_symlink(path: str | os.PathLike) -> bool:
    """Raise :class:`InputError` if ``path`` is a symbolic link; return whether it exists.

    Examples
    --------
    >>> import os, tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     os.symlink("/etc/hostname", os.path.join(d, "link"))
    ...     refuse_symlink(os.path.join(d, "missing"))
    ...     refuse_symlink(os.path.join(d, "link"))  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    featuresift.errors.InputError: .../link is a symbolic link; featuresift never writes ...
    """
    try:
        st = os.lstat(path)
    except FileNotFoundError:
        return False
    if stat.S_ISLNK(st.st_mode):
        raise _symlink_error(path)
    return True


def _open_dir(path: Path) -> int:
    """Open a folder without following a link in its last component."""
    try:
        return os.open(path, os.O_RDONLY | _DIRECTORY | _NOFOLLOW | _CLOEXEC)
    except OSError as exc:
        if exc.errno in (errno.ELOOP, errno.ENOTDIR) and os.path.islink(path):
            raise _symlink_error(path) from None
        if exc.errno == errno.ENOTDIR:
            raise InputError(f"{path} exists and is not a folder") from None
        raise


def _lstat_at(name: str, dir_fd: int) -> os.stat_result | None:
    try:
        return os.stat(name, dir_fd=dir_fd, follow_symlinks=False)
    except FileNotFoundError:
        return None


def _check_name(name: str) -> None:
    if not name or name in (".", "..") or "/" in name or "\0" in name or (
            os.sep != "/" and os.sep in name):
        raise InputError(f"{name!r} is not a plain file name")


def _as_bytes(data: str | bytes) -> bytes:
    return data.encode("utf-8") if isinstance(data, str) else bytes(data)


def _write_at(dir_fd: int, folder: Path, files: Mapping[str, str | bytes]) -> list[Path]:
    """Write ``files`` atomically into the open folder ``dir_fd`` (shown as ``folder``).

    Every file is first written in full under a fresh random name; the renames come last,
    so a failure while writing leaves none of the new files and no temporary file.
    """
    for name in files:
        _check_name(name)
        st = _lstat_at(name, dir_fd)
        if st is not None and stat.S_ISLNK(st.st_mode):
            raise _symlink_error(folder / name)
        if st is not None and stat.S_ISDIR(st.st_mode):
            raise InputError(f"{folder / name} is a folder; cannot write a file there")
    temps: list[tuple[str, str]] = []
    try:
        for name, data in files.items():
            while True:
                tmp = f".{name}.{secrets.token_hex(6)}.tmp"
                try:
                    fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL | _NOFOLLOW
                                 | _CLOEXEC, 0o666, dir_fd=dir_fd)
                except FileExistsError:  # a name planted or left there: draw another
                    continue
                break
            temps.append((tmp, name))
            with os.fdopen(fd, "wb") as fh:
                fh.write(_as_bytes(data))
                fh.flush()
                os.fsync(fh.fileno())
        written = []
        for tmp, name in temps:
            st = _lstat_at(name, dir_fd)  # checked again just before the rename
            if st is not None and stat.S_ISLNK(st.st_mode):
                raise _symlink_error(folder / name)
            os.replace(tmp, name, src_dir_fd=dir_fd, dst_dir_fd=dir_fd)
            written.append(folder / name)
        temps.clear()
        return written
    finally:
        for tmp, _ in temps:
            try:
                os.unlink(tmp, dir_fd=dir_fd)
            except FileNotFoundError:
                pass


def write_files(folder: str | os.PathLike | RunFolder,
                files: Mapping[str, str | bytes]) -> list[Path]:
    """Write several files into ``folder``, each atomically, never through a link.

    Parameters
    ----------
    folder : path-like or RunFolder
        Created (with its parents) when missing; must not be a symbolic link. A
        :class:`RunFolder` receives the files in its run folder.
    files : mapping of str to str or bytes
        Plain file names (no folder part) and their content (text is UTF-8 encoded).

    Returns
    -------
    list of pathlib.Path
        The paths written, in the order given.

    Raises
    ------
    InputError
        When the folder or one of the files is a symbolic link (the message names it).

    Examples
    --------
    >>> import tempfile
    >>> from pathlib import Path
    >>> with tempfile.TemporaryDirectory() as d:
    ...     paths = write_files(Path(d) / "new", {"a.txt": "one\\n", "b.bin": b"\\x00"})
    ...     [p.name for p in paths], sorted(p.name for p in (Path(d) / "new").iterdir())
    (['a.txt', 'b.bin'], ['a.txt', 'b.bin'])
    """
    if isinstance(folder, RunFolder):
        return folder.write_files(files)
    out = Path(folder)
    refuse_symlink(out)
    out.mkdir(parents=True, exist_ok=True)
    fd = _open_dir(out)
    try:
        return _write_at(fd, out, files)
    finally:
        os.close(fd)


# --------------------------------------------------------------------- the lock
def _read_pid(fd: int) -> int | None:
    try:
        text = os.pread(fd, 32, 0).decode("ascii", "replace").strip()
    except OSError:
        return None
    return int(text) if text.isdigit() else None


def _acquire_lock(dir_fd: int, folder: Path) -> int:
    """Exclusive lock on ``folder``; returns the lock file's descriptor."""
    for _ in range(20):
        try:
            flags = os.O_RDWR | os.O_CREAT | _NOFOLLOW | _CLOEXEC
            if fcntl is None:  # pragma: no cover
                flags |= os.O_EXCL
            fd = os.open(LOCK_NAME, flags, 0o644, dir_fd=dir_fd)
        except FileExistsError:  # pragma: no cover - no flock: the file is the lock
            raise InputError(f"output folder {folder} is in use by another featuresift run "
                             f"(remove {folder / LOCK_NAME} if no run is active)") from None
        except OSError as exc:
            if exc.errno == errno.ELOOP:
                raise _symlink_error(folder / LOCK_NAME) from None
            raise
        if fcntl is not None:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except BlockingIOError:
                pid = _read_pid(fd)
                os.close(fd)
                holder = f"pid {pid}" if pid is not None else "another process"
                raise InputError(
                    f"output folder {folder} is in use by another featuresift run ({holder}); "
                    "wait until it finishes, or write elsewhere with --output DIR"
                ) from None
        # The holder before us may have removed the file after we opened it: the lock is
        # only ours if the name still points at the file we locked.
        mine, now = os.fstat(fd), _lstat_at(LOCK_NAME, dir_fd)
        if now is None or (now.st_ino, now.st_dev) != (mine.st_ino, mine.st_dev):
            os.close(fd)
            continue
        os.ftruncate(fd, 0)
        os.pwrite(fd, f"{os.getpid()}\n".encode("ascii"), 0)
        return fd
    raise InputError(f"could not lock the output folder {folder}")  # pragma: no cover


def _release_lock(fd: int, dir_fd: int) -> None:
    try:
        mine, now = os.fstat(fd), _lstat_at(LOCK_NAME, dir_fd)
        if now is not None and (now.st_ino, now.st_dev) == (mine.st_ino, mine.st_dev):
            os.unlink(LOCK_NAME, dir_fd=dir_fd)  # removed while still held: see _acquire_lock
    finally:
        os.close(fd)


# ------------------------------------------------------------------ run folders
def _scan_runs(dir_fd: int) -> list[tuple[int, str, str, bool]]:
    """(number, command, name, complete) of every run folder, by number."""
    found = []
    with os.scandir(dir_fd) as entries:
        for entry in entries:
            m = _RUN_NAME.match(entry.name)
            if m is None or not entry.is_dir(follow_symlinks=False):
                continue
            partial = entry.name.startswith(".") or m.group(3) is not None
            found.append((int(m.group(1)), m.group(2), entry.name, not partial))
    return sorted(found)


class RunFolder:
    """The output folder of one invocation: locked, staged, published whole.

    Use as a context manager. On entry the output folder is created if needed (only
    the folders actually created are remembered), locked, checked for planted links,
    and a staging folder is made; files go there (:meth:`write_files`). :meth:`commit`
    renames the staging folder to ``NNN-<command>`` and rewrites ``latest.json``. On an
    error before the commit, everything this run created is removed (see the module
    notes); on leaving, the lock is released.

    Parameters
    ----------
    root : path-like
        The output folder (of a config: ``output.folder`` or ``--output``).
    command : {"run", "sweep", "screen"}
        What is run (part of the run folder's name).
    journal : str, optional
        File name of the evaluation journal kept in ``root`` (checked for links; removed
        on failure when this run created it).

    Attributes
    ----------
    root : pathlib.Path
    folder : pathlib.Path
        Where files go: the staging folder before :meth:`commit`, the run folder after.
    name : str
        The run folder's name (``"004-run"``).
    written : list of pathlib.Path
        Files written so far (in ``folder``).
    journal_existed : bool
        Whether the journal was there before this run.

    Examples
    --------
    >>> import tempfile
    >>> from pathlib import Path
    >>> with tempfile.TemporaryDirectory() as d:
    ...     for command in ("run", "sweep"):
    ...         with RunFolder(d, command) as out:
    ...             _ = out.write_files({"x.txt": command})
    ...             _ = out.commit()
    ...     print(latest_run(d).name, latest_run(d, "run").name)
    002-sweep 001-run
    """

    def __init__(self, root: str | os.PathLike, command: str, *,
                 journal: str | None = None) -> None:
        if command not in COMMANDS:
            raise ValueError(f"command must be one of {COMMANDS}, got {command!r}")
        self.root = Path(os.path.abspath(root))
        self.command = command
        self.journal = journal
        self.journal_existed = False
        self.name = ""
        self.folder = self.root
        self.written: list[Path] = []
        self.committed = False
        self._created_dirs: list[Path] = []
        self._root_fd: int | None = None
        self._lock_fd: int | None = None
        self._stage_fd: int | None = None
        self._stage = ""
        self._journal_present: set[str] | None = None

    # ------------------------------------------------------------- entering
    def _make_root(self) -> None:
        missing = []
        for p in [self.root, *self.root.parents]:
            if os.path.lexists(p):
                break
            missing.append(p)
        for p in reversed(missing):
            try:
                os.mkdir(p)
            except FileExistsError:
                continue  # another process made it: not ours to remove
            self._created_dirs.append(p)

    def __enter__(self) -> RunFolder:
        try:
            refuse_symlink(self.root)
            try:
                self._make_root()
            except OSError as exc:
                raise InputError(
                    f"cannot create the output folder {self.root}: {exc.strerror or exc}"
                ) from None
            self._root_fd = _open_dir(self.root)
            self._lock_fd = _acquire_lock(self._root_fd, self.root)
            if self.journal is not None:
                _check_name(self.journal)
                present = set()
                for suffix in JOURNAL_SUFFIXES:
                    st = _lstat_at(self.journal + suffix, self._root_fd)
                    if st is not None and stat.S_ISLNK(st.st_mode):
                        raise _symlink_error(self.root / (self.journal + suffix))
                    if st is not None:
                        present.add(self.journal + suffix)
                self._journal_present = present
                self.journal_existed = self.journal in present
            st = _lstat_at(LATEST_NAME, self._root_fd)
            if st is not None and stat.S_ISLNK(st.st_mode):
                raise _symlink_error(self.root / LATEST_NAME)
            number = max([n for n, *_ in _scan_runs(self._root_fd)], default=0) + 1
            self.name = f"{number:03d}-{self.command}"
            self._stage = f".{self.name}.partial"
            os.mkdir(self._stage, dir_fd=self._root_fd)  # fails if it exists: never shared
            self._stage_fd = _open_dir_at(self._stage, self._root_fd, self.root)
            self.folder = self.root / self._stage
        except BaseException:
            self._cleanup(failed=True, interrupted=False)
            raise
        return self

    # -------------------------------------------------------------- writing
    def write_files(self, files: Mapping[str, str | bytes]) -> list[Path]:
        """Write files into the run folder (atomically); returns their paths."""
        if self._stage_fd is None or self.committed:
            raise RuntimeError("RunFolder is not open for writing")
        try:
            paths = _write_at(self._stage_fd, self.folder, files)
        except OSError as exc:  # disk full, permissions...: bad output place, exit 2
            raise InputError(
                f"cannot write the results to {self.root}: {exc.strerror or exc}"
            ) from None
        self.written.extend(p for p in paths if p not in self.written)
        return paths

    @property
    def journal_path(self) -> Path | None:
        """Full path of the journal (None: no journal)."""
        return None if self.journal is None else self.root / self.journal

    def commit(self) -> Path:
        """Publish the run folder under its final name and point ``latest.json`` at it."""
        if self._stage_fd is None or self._root_fd is None:
            raise RuntimeError("RunFolder is not open")
        if _lstat_at(self.name, self._root_fd) is not None:  # cannot happen under the lock
            raise InputError(f"{self.root / self.name} already exists")
        os.rename(self._stage, self.name, src_dir_fd=self._root_fd, dst_dir_fd=self._root_fd)
        self.committed = True
        os.close(self._stage_fd)
        self._stage_fd = None
        self.folder = self.root / self.name
        self.written = [self.folder / p.name for p in self.written]
        latest: dict[str, Any] = {"folder": self.name, "command": self.command}
        latest["files"] = [p.name for p in self.written]
        latest["finished_utc"] = _dt.datetime.now(_dt.timezone.utc).isoformat(
            timespec="seconds")
        by_command: dict[str, str] = {}
        for _, command, name, complete in _scan_runs(self._root_fd):
            if complete:
                by_command[command] = name
        latest["by_command"] = by_command
        _write_at(self._root_fd, self.root,
                  {LATEST_NAME: json.dumps(latest, indent=2) + "\n"})
        return self.folder

    # -------------------------------------------------------------- leaving
    def __exit__(self, exc_type, exc, tb) -> None:
        interrupted = exc_type is not None and issubclass(exc_type, KeyboardInterrupt)
        self._cleanup(failed=exc_type is not None, interrupted=interrupted)

    def _cleanup(self, *, failed: bool, interrupted: bool) -> None:
        root_fd = self._root_fd
        try:
            if root_fd is not None and not self.committed and self._stage:
                self._remove_stage(root_fd)
            # A journal this run created goes too (only after it was checked for links
            # under the lock: _journal_present is None before that).
            if (failed and not interrupted and not self.committed and root_fd is not None
                    and self.journal is not None and not self.journal_existed
                    and self._journal_present is not None):
                for suffix in JOURNAL_SUFFIXES:
                    name = self.journal + suffix
                    st = _lstat_at(name, root_fd)
                    if name in self._journal_present or st is None or stat.S_ISLNK(
                            st.st_mode):
                        continue
                    os.unlink(name, dir_fd=root_fd)
        finally:
            if self._lock_fd is not None and root_fd is not None:
                _release_lock(self._lock_fd, root_fd)
                self._lock_fd = None
            if root_fd is not None:
                os.close(root_fd)
                self._root_fd = None
            if failed and not self.committed:
                for p in reversed(self._created_dirs):
                    try:
                        os.rmdir(p)  # only when empty: another run's files stay
                    except OSError:
                        break
                self._created_dirs = []

    def _remove_stage(self, root_fd: int) -> None:
        """Remove the staging folder: only the files this run wrote, then the folder."""
        if self._stage_fd is not None:
            for p in self.written:
                try:
                    os.unlink(p.name, dir_fd=self._stage_fd)
                except FileNotFoundError:
                    pass
            os.close(self._stage_fd)
            self._stage_fd = None
        try:
            os.rmdir(self._stage, dir_fd=root_fd)
        except OSError:
            pass


def _open_dir_at(name: str, dir_fd: int, parent: Path) -> int:
    try:
        return os.open(name, os.O_RDONLY | _DIRECTORY | _NOFOLLOW | _CLOEXEC, dir_fd=dir_fd)
    except OSError as exc:
        if exc.errno in (errno.ELOOP, errno.ENOTDIR):
            raise _symlink_error(parent / name) from None
        raise


def latest_run(root: str | os.PathLike, command: str | None = None) -> Path:
    """The latest complete run folder in ``root`` (of one command, if given).

    Reads ``latest.json``; raises :class:`InputError` when there is none.

    Examples
    --------
    >>> import tempfile
    >>> with tempfile.TemporaryDirectory() as d:
    ...     latest_run(d)  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    featuresift.errors.InputError: no finished run in ...
    """
    root = Path(root)
    path = root / LATEST_NAME
    refuse_symlink(path)
    try:
        latest = json.loads(path.read_text(encoding="utf-8"))
    except (FileNotFoundError, ValueError):
        raise InputError(f"no finished run in {root} (no readable {LATEST_NAME})") from None
    name = latest.get("folder") if command is None else latest.get("by_command", {}).get(command)
    if not isinstance(name, str) or _RUN_NAME.match(name) is None:
        raise InputError(f"no finished {command or 'run'} in {root}")
    return root / name



def open_run_folder(cfg: Any, command: str) -> RunFolder:
    """The :class:`RunFolder` of a run configuration (its output folder and journal).

    ``cfg`` is a :class:`featuresift.config.RunConfig`; use the result as a context
    manager.

    Examples
    --------
    >>> import tempfile
    >>> from featuresift.config import load_config
    >>> from featuresift.demo import write_demo
    >>> with tempfile.TemporaryDirectory() as d:
    ...     folder = open_run_folder(load_config(write_demo(d, n_lots=60)[1]), "run")
    >>> folder.command, folder.journal, folder.root.name
    ('run', 'journal.sqlite', 'grain_lab')
    """
    engine = cfg.extra.get("engine") or {}
    journal = engine.get("journal") if command != "screen" else None
    return RunFolder(cfg.output, command, journal=journal)
