"""Durable writes: a file or a whole folder appears complete, or not at all.

* :func:`write_atomic` writes one file under a unique temporary name in the
  same folder, flushes it to disk and renames it into place (``os.replace`` is
  atomic on one file system).  The temporary file is removed on every exit
  path, including an exception or Ctrl-C.
* :class:`StagedFolder` builds a run folder as a fresh sibling and swaps it in
  at the end, so a reader finds either the previous complete run or the new
  complete run, never a mix of both.
* :func:`temp_name` gives the unique names both use; :func:`remove_stale_temps`
  clears what a killed process (``kill -9``) left behind.
"""
from __future__ import annotations

import contextlib
import os
import re
import secrets
import shutil
import socket
from pathlib import Path
from typing import Callable, Iterator, BinaryIO

from ..errors import CircuitodeError, EnvironmentFault, environment_fault

__all__ = ["temp_name", "write_atomic", "StagedFolder", "remove_stale_temps", "check_out_folder"]

_HOST = socket.gethostname().replace(".", "_").replace("-", "_") or "host"
_TEMP = re.compile(r"^\.(?P<name>.+)\.(?P<host>[^.]+)-(?P<pid>\d+)-[0-9a-f]{8}\.(?P<kind>tmp|staging|old)$")


def temp_name(target: Path, kind: str = "tmp") -> Path:
    """A unique sibling name of ``target``: ``.NAME.HOST-PID-RANDOM.KIND``.

    Host and pid let a later run tell whether the writer is still alive."""
    return target.with_name(f".{target.name}.{_HOST}-{os.getpid()}-{secrets.token_hex(4)}.{kind}")


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:  # alive, but another user's
        return True
    return True


def remove_stale_temps(folder: Path) -> int:
    """Delete temporaries in ``folder`` left by dead processes of this host; returns how many."""
    removed = 0
    try:
        entries = list(Path(folder).iterdir())
    except OSError:
        return 0
    for entry in entries:
        m = _TEMP.match(entry.name)
        if not m or m["host"] != _HOST or _pid_alive(int(m["pid"])):
            continue
        with contextlib.suppress(OSError):
            if entry.is_dir() and not entry.is_symlink():
                shutil.rmtree(entry)
            else:
                entry.unlink()
            removed += 1
    return removed


@contextlib.contextmanager
def _temporary(target: Path) -> Iterator[tuple[Path, BinaryIO]]:
    tmp = temp_name(target)
    try:
        with open(tmp, "xb") as handle:
            yield tmp, handle
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise


def write_atomic(target: str | os.PathLike, data: bytes | Callable[[BinaryIO], None]) -> Path:
    """Write ``data`` (bytes, or a function writing to a binary handle) to ``target`` atomically.

    Raises
    ------
    EnvironmentFault : disk full, permission denied, read-only file system (exit 4).
    """
    target = Path(target)
    try:
        with _temporary(target) as (_, handle):
            if callable(data):
                data(handle)
            else:
                handle.write(data)
    except OSError as exc:
        raise environment_fault(exc, f"write {target}") from None
    return target


def check_out_folder(folder: str | os.PathLike) -> Path:
    """Refuse an output folder that is an existing file (or a device such as /dev/null)
    before any work starts (exit 2: the argument is wrong)."""
    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise CircuitodeError(
            f"error: the output folder {folder} is an existing file, not a folder\n"
            "  hint: give --out a folder name (it is created when missing)")
    return folder


def _refuse_foreign_content(folder: Path, own_files: frozenset[str]) -> None:
    """A folder about to be replaced whole may hold only what a previous run wrote there:
    never swap away someone's other files (``--out .`` or a batch folder)."""
    try:
        names = sorted(p.name for p in folder.iterdir()) if folder.is_dir() else []
    except OSError as exc:
        raise environment_fault(exc, f"look into the output folder {folder}") from None
    foreign = [n for n in names if n not in own_files]
    if foreign:
        shown = ", ".join(foreign[:5]) + (f" and {len(foreign) - 5} more" if len(foreign) > 5 else "")
        raise CircuitodeError(
            f"error: the output folder {folder} holds files a run did not write ({shown}); a run replaces "
            "its folder whole, so it is not used\n  hint: give --out a new or empty folder, or the folder "
            "of an earlier run")


class StagedFolder:
    """A run folder built beside its final place and swapped in when complete.

    Use ``with StagedFolder(out) as stage:`` and write every file into
    ``stage.path``; :meth:`publish` swaps it in.  With ``own_files`` given, an
    existing folder holding any other name is refused before anything is done.  On an exception the staging
    folder is removed, unless :meth:`keep_on_failure` was called (e.g. once the
    waveforms are safely written): then it is renamed to ``NAME-incomplete``
    and the exception carries that folder in ``kept``.
    """

    def __init__(self, target: str | os.PathLike, own_files: frozenset[str] | None = None):
        self.target = Path(os.path.abspath(check_out_folder(target)))
        here = Path.cwd().resolve()
        if self.target.exists() and (here == self.target.resolve() or self.target.resolve() in here.parents):
            raise CircuitodeError(f"error: the output folder {target} is the current folder or holds it; "
                                  "a run replaces its folder whole\n  hint: give --out a new folder")
        if own_files is not None:
            _refuse_foreign_content(self.target, own_files)
        self.path = temp_name(self.target, "staging")
        self._keep = False
        self.published = False

    def __enter__(self) -> "StagedFolder":
        parent = self.target.parent
        try:
            parent.mkdir(parents=True, exist_ok=True)
            remove_stale_temps(parent)
            self.path.mkdir()
        except OSError as exc:
            raise environment_fault(exc, f"create the run folder beside {self.target}") from None
        return self

    def keep_on_failure(self) -> None:
        self._keep = True

    def publish(self) -> Path:
        """Swap the staged folder into place; the previous run (if any) is removed after."""
        old = temp_name(self.target, "old")
        try:
            if self.target.is_dir():
                os.replace(self.target, old)
            os.replace(self.path, self.target)
        except OSError as exc:
            if old.exists() and not self.target.exists():
                with contextlib.suppress(OSError):
                    os.replace(old, self.target)  # put the previous run back
            raise environment_fault(exc, f"move the finished run into {self.target}") from None
        self.published = True
        if old.exists():
            shutil.rmtree(old, ignore_errors=True)
        return self.target

    def __exit__(self, kind, exc, tb) -> None:
        if self.published or not self.path.exists():
            return
        if exc is not None and self._keep and not isinstance(exc, (EnvironmentFault, OSError)):
            kept = self.target.with_name(self.target.name + "-incomplete")
            with contextlib.suppress(OSError):
                if kept.is_dir():
                    shutil.rmtree(kept)
                os.replace(self.path, kept)
                if isinstance(exc, CircuitodeError):
                    exc.kept = str(kept)
                return
        shutil.rmtree(self.path, ignore_errors=True)
