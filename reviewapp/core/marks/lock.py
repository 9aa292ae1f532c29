"""One writer per record: a lock file ``<name>.marks.json.lock``, and saves made under it.

The lock file holds the holder's process id, host, boot id, process start time, reviewer and
a random token. It is created atomically with its full content (write a temporary file, then
hard-link it to the lock name, which fails if the lock exists), so another process never sees
a half-written lock.

Who holds it (``is_live``): a lock from another host cannot be checked and counts as held. On
this host a lock is stale when its process is gone, when the machine has rebooted since (boot
id), or when its process id now belongs to another process (a different start time: process
ids are reused). A stale lock is taken over silently; a live one raises ``LockedError`` naming
the holder, and only an explicit take-over (``MarksStore.take_over``) displaces it, with an
audit entry.

Saves are a compare-and-swap under an OS lock (``SidecarLock.guard``): the saving store holds
``flock`` on the lock file while it checks that the lock is still its own and that the sidecar
on disk is the version it last saw, and while it writes. A take-over and a release take the
same OS lock before they replace or remove the lock file, so a take-over can never slip in
between a save's check and its write: the taker reads the sidecar after the last save of the
displaced window, and that window's next save is refused (``ConflictError``). Where the OS has
no ``flock`` (Windows) the lock file alone still keeps two windows apart.
"""

from __future__ import annotations

import json
import os
import secrets
import stat
import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from functools import cache
from pathlib import Path
from typing import Any

from reviewapp.core.errors import MarksError
from reviewapp.core.marks.durable import (
    atomic_write,
    fsync_dir,
    host_name,
    pid_alive,
    temp_name,
    utc_now,
)
from reviewapp.core.marks.errors import LockedError

try:
    import fcntl
except ImportError:  # Windows
    fcntl = None  # type: ignore[assignment]

# A save holds the OS lock for a few milliseconds (two fsynced writes); waiting this long for
# it means the other process is stuck (a hung network share): refuse instead of hanging.
OS_LOCK_WAIT_S = 10.0
# Process start times are compared to this tolerance: psutil derives them from the boot time,
# which the kernel reports to the second.
_START_TOLERANCE_S = 1.5


def lock_path_for(sidecar: Path) -> Path:
    return sidecar.with_name(sidecar.name + ".lock")


@cache
def boot_id() -> str | None:
    """This machine's boot: Linux's random boot id, else the boot time; None if unknown."""
    try:
        with open("/proc/sys/kernel/random/boot_id", encoding="ascii") as fh:
            return fh.read().strip() or None
    except OSError:
        pass
    try:
        import psutil

        return f"boot-time:{int(psutil.boot_time())}"
    except Exception:
        return None


def process_start(pid: int) -> float | None:
    """Start time (seconds since the epoch) of process ``pid``; None if it cannot be told."""
    try:
        import psutil

        return float(psutil.Process(pid).create_time())
    except Exception:
        return None


def _read_fd(fd: int) -> dict[str, Any]:
    os.lseek(fd, 0, os.SEEK_SET)
    return _parse(os.read(fd, 4096))


def _parse(raw: bytes) -> dict[str, Any]:
    try:
        holder = json.loads(raw.decode("utf-8"))
    except (ValueError, UnicodeDecodeError):
        return {}
    return holder if isinstance(holder, dict) else {}


def read_holder(lock: Path) -> dict[str, Any] | None:
    """The lock's content, or None if there is no lock; {} if it cannot be read (including a
    lock path that is not a regular file: a FIFO there is never opened)."""
    try:
        st = os.stat(lock)
    except FileNotFoundError:
        return None
    except OSError:
        return {}
    if not stat.S_ISREG(st.st_mode):
        return {}
    try:
        fd = os.open(lock, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except FileNotFoundError:
        return None
    except OSError:
        return {}
    try:
        return _read_fd(fd) if stat.S_ISREG(os.fstat(fd).st_mode) else {}
    except OSError:
        return {}
    finally:
        os.close(fd)


def describe(holder: dict[str, Any]) -> str:
    who = holder.get("reviewer") or "someone"
    return (
        f"{who} (process {holder.get('pid', '?')} on {holder.get('host', '?')}, "
        f"since {holder.get('since', '?')})"
    )


def is_live(holder: dict[str, Any]) -> bool:
    """Whether the lock's holder may still be running (see the module docstring)."""
    if not holder:
        return False  # unreadable: written by no working instance of this program
    pid = holder.get("pid")
    if not isinstance(pid, int) or isinstance(pid, bool):
        return False
    if holder.get("host") != host_name():
        return True  # cannot check a process on another machine
    boot = holder.get("boot")
    if isinstance(boot, str) and boot_id() is not None and boot != boot_id():
        return False  # the machine rebooted: every process of that boot is gone
    if not pid_alive(pid):
        return False
    started = holder.get("started")
    if isinstance(started, int | float) and not isinstance(started, bool):
        now = process_start(pid)
        if now is not None and abs(now - float(started)) > _START_TOLERANCE_S:
            return False  # the process id was reused by another process
    return True


@contextmanager
def os_locked(lock: Path) -> Iterator[int | None]:
    """Hold an exclusive OS lock on the lock file as it is now; yields its descriptor, or None
    when there is no (regular) lock file. Waits at most ``OS_LOCK_WAIT_S``."""
    deadline = time.monotonic() + OS_LOCK_WAIT_S
    while True:
        try:
            fd = os.open(lock, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
        except FileNotFoundError:
            yield None
            return
        except OSError as exc:
            raise MarksError(f"cannot open the lock file: {exc.strerror or exc}", lock) from None
        try:
            st = os.fstat(fd)
            regular = stat.S_ISREG(st.st_mode)
            if regular and fcntl is not None:
                while True:
                    try:
                        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                        break
                    except BlockingIOError:
                        if time.monotonic() > deadline:
                            raise MarksError(
                                "another process is saving this record's marks and does not "
                                "finish; nothing was saved, try again",
                                lock,
                            ) from None
                        time.sleep(0.002)
            try:
                now = os.stat(lock)
                same = (now.st_ino, now.st_dev) == (st.st_ino, st.st_dev)
            except FileNotFoundError:
                same = False
        except BaseException:
            os.close(fd)
            raise
        if not regular:
            os.close(fd)
            yield None
            return
        if same:
            break
        os.close(fd)  # replaced or removed while we waited: lock the file that is there now
    try:
        yield fd
    finally:
        os.close(fd)  # closing the descriptor releases the flock


@dataclass
class SidecarLock:
    """An acquired lock; ``release()`` removes it if it is still ours.

    ``displaced``: the holder this lock was taken from by force (a take-over), else None.
    """

    path: Path
    token: str
    displaced: dict[str, Any] | None = None

    @classmethod
    def acquire(cls, sidecar: Path, reviewer: str, *, force: bool = False) -> SidecarLock:
        """Take the record's lock; LockedError if a live holder has it (unless ``force``)."""
        lock = lock_path_for(sidecar)
        token = secrets.token_hex(8)
        data = _content(reviewer, token)
        for _ in range(5):
            if cls._create(lock, data):
                return cls(lock, token)
            with os_locked(lock) as fd:
                if fd is None and not _is_junk(lock):
                    continue  # released meanwhile: try to create it again
                holder: dict[str, Any] = {} if fd is None else _read_fd(fd)
                live = is_live(holder)
                if live and not force:
                    raise LockedError(
                        f"this record is already open in another window: {describe(holder)}",
                        sidecar,
                        holder,
                    )
                # Stale (dead process, rebooted, reused pid, unreadable) or forced: take it.
                # Under the OS lock no save of the old holder is under way.
                atomic_write(lock, data, failure="cannot take over the lock file")
            if (read_holder(lock) or {}).get("token") == token:
                return cls(lock, token, displaced=holder if live else None)
        raise MarksError("could not take the record's lock (another process keeps taking it)", lock)

    @staticmethod
    def _create(lock: Path, data: bytes) -> bool:
        tmp = temp_name(lock)
        try:
            with open(tmp, "wb") as fh:
                fh.write(data)
                fh.flush()
                os.fsync(fh.fileno())
            try:
                os.link(tmp, lock)
            except FileExistsError:
                return False
            except OSError:
                # No hard links on this file system: exclusive create, then write.
                try:
                    fd = os.open(lock, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o644)
                except FileExistsError:
                    return False
                with os.fdopen(fd, "wb") as fh:
                    fh.write(data)
            fsync_dir(lock.parent)
            return True
        except OSError as exc:
            raise MarksError(
                f"cannot write beside the record ({exc.strerror or exc}); open it read-only or "
                "keep its marks in another folder",
                lock,
            ) from None
        finally:
            try:
                tmp.unlink(missing_ok=True)
            except OSError:
                pass

    def holder(self) -> dict[str, Any] | None:
        return read_holder(self.path)

    def still_ours(self) -> bool:
        return (read_holder(self.path) or {}).get("token") == self.token

    @contextmanager
    def guard(self) -> Iterator[str]:
        """Hold the OS lock for a save; yields "ours", "gone" (no lock file) or "taken"
        (another holder's). The caller writes only on "ours", inside the block."""
        with os_locked(self.path) as fd:
            if fd is None:
                yield "gone"
            else:
                yield "ours" if _read_fd(fd).get("token") == self.token else "taken"

    def release(self) -> None:
        try:
            with os_locked(self.path) as fd:
                if fd is not None and _read_fd(fd).get("token") == self.token:
                    self.path.unlink()
        except (OSError, MarksError):
            pass


def _is_junk(lock: Path) -> bool:
    """Something that is not a regular file sits at the lock's name (a FIFO, a folder)."""
    try:
        return not stat.S_ISREG(os.stat(lock).st_mode)
    except FileNotFoundError:
        return False
    except OSError:
        return True


def _content(reviewer: str, token: str) -> bytes:
    pid = os.getpid()
    content = {
        "pid": pid,
        "host": host_name(),
        "boot": boot_id(),
        "started": process_start(pid),
        "since": utc_now(),
        "reviewer": reviewer,
        "token": token,
    }
    return json.dumps(content, sort_keys=True).encode("utf-8")


def remove_if_stale(sidecar: Path) -> bool:
    """Remove the record's lock file if its holder is gone (see ``is_live``); True if removed.

    Used by the batch on records it skips, so a crashed window's lock does not outlive a
    completed batch. Done under the OS lock, so a live taker is never removed.
    """
    lock = lock_path_for(sidecar)
    try:
        with os_locked(lock) as fd:
            if fd is None:
                return False
            holder = _read_fd(fd)
            if is_live(holder):
                return False
            lock.unlink()
            fsync_dir(lock.parent)
            return True
    except (OSError, MarksError):
        return False


__all__ = [
    "SidecarLock",
    "boot_id",
    "describe",
    "is_live",
    "lock_path_for",
    "process_start",
    "read_holder",
    "remove_if_stale",
]
