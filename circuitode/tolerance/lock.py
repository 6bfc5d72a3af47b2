"""One batch at a time per folder: an exclusive lock file with its owner's pid and host.

The lock file ``DIR/batch.lock`` is written complete under a temporary name
and hard-linked into place; ``os.link`` fails when the name exists, so exactly
one process holds it.  A lock left by a dead process of this host (``kill -9``,
power cut) is taken over: it is renamed aside, checked to be the very lock
judged stale (a live owner's new lock is put back), and removed.  A lock held
by a live process, or by another host, is refused with exit 4 and the owner
named.
"""
from __future__ import annotations

import contextlib
import errno
import json
import os
import socket
import time
from pathlib import Path

from ..errors import EnvironmentFault, environment_fault
from ..output.atomic import temp_name

__all__ = ["LOCK_NAME", "FolderLock"]

LOCK_NAME = "batch.lock"
#: Seconds an unreadable lock file is respected before it counts as stale.
UNREADABLE_GRACE = 10.0


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    return True


class FolderLock:
    """Exclusive lock on a batch folder; a context manager.

    Parameters
    ----------
    folder : the batch folder (must exist).
    """

    def __init__(self, folder: str | os.PathLike):
        self.folder = Path(folder)
        self.path = self.folder / LOCK_NAME
        self.owner = {"pid": os.getpid(), "host": socket.gethostname(), "since": time.time()}
        self.held = False

    # -- acquire / release -------------------------------------------------
    def acquire(self) -> "FolderLock":
        body = json.dumps(self.owner).encode()
        tmp = temp_name(self.path)
        try:
            with open(tmp, "xb") as handle:
                handle.write(body)
                handle.flush()
                os.fsync(handle.fileno())
            for _ in range(3):
                try:
                    self._place(tmp, body)
                    self.held = True
                    return self
                except FileExistsError:
                    if not self._take_over_stale():
                        raise self._refusal() from None
        except OSError as exc:
            raise environment_fault(exc, f"lock the batch folder {self.folder}") from None
        finally:
            with contextlib.suppress(OSError):
                tmp.unlink()
        raise self._refusal()

    def release(self) -> None:
        if not self.held:
            return
        with contextlib.suppress(OSError):
            if self._read(self.path) == self.owner:
                self.path.unlink()
        self.held = False

    def __enter__(self) -> "FolderLock":
        return self.acquire()

    def __exit__(self, *exc) -> None:
        self.release()

    # -- helpers -----------------------------------------------------------
    def _place(self, tmp: Path, body: bytes) -> None:
        """Put the lock in place, complete, or raise FileExistsError.  A file system without
        hard links gets an exclusive create instead (its content is written just after)."""
        try:
            os.link(tmp, self.path)
            return
        except FileExistsError:
            raise
        except OSError as exc:
            if exc.errno not in (errno.EPERM, errno.ENOTSUP, errno.EOPNOTSUPP, errno.EXDEV, errno.EMLINK):
                raise
        fd = os.open(self.path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
        with os.fdopen(fd, "wb") as handle:
            handle.write(body)
            handle.flush()
            os.fsync(handle.fileno())

    @staticmethod
    def _read(path: Path) -> dict | None:
        try:
            body = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, ValueError):
            return None
        return body if isinstance(body, dict) else None

    def _is_stale(self, holder: dict | None) -> bool:
        if holder is None:  # unreadable: a crash, or a lock being written right now
            try:
                return time.time() - self.path.stat().st_mtime > UNREADABLE_GRACE
            except OSError:
                return True
        if holder.get("host") != self.owner["host"]:
            return False  # another machine's process: we cannot tell whether it is alive
        pid = holder.get("pid")
        return not (isinstance(pid, int) and pid > 0 and _alive(pid))

    def _take_over_stale(self) -> bool:
        """Remove the lock if its owner is dead; True when it was removed (or vanished)."""
        holder = self._read(self.path)
        if not self._is_stale(holder):
            return False
        aside = temp_name(self.path, "old")
        try:
            os.rename(self.path, aside)
        except FileNotFoundError:
            return True  # released meanwhile
        if self._read(aside) != holder:  # someone replaced it between our read and rename
            with contextlib.suppress(OSError):
                os.link(aside, self.path)  # put theirs back, unless yet another lock is there
            with contextlib.suppress(OSError):
                aside.unlink()
            return False
        with contextlib.suppress(OSError):
            aside.unlink()
        return True

    def _refusal(self) -> EnvironmentFault:
        holder = self._read(self.path) or {}
        who = f"process {holder.get('pid', '?')} on {holder.get('host', '?')}"
        return EnvironmentFault(
            f"error: the batch folder {self.folder} is in use by {who} (lock file {self.path})\n"
            "  what to do: wait for that run to finish, choose another --out folder, or — only if "
            "you are sure that process is gone — delete the lock file")
