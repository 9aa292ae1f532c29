"""One window per record: a lock file ``<name>.marks.json.lock`` holding pid, host and time.

The lock is created atomically with its full content (write a temporary file, then hard-link
it to the lock name, which fails if the lock exists), so another process never sees a
half-written lock. A lock whose process is dead on this host is stale and taken over. A lock
held by a live process (including another store in this same process) raises LockedError
naming the holder. A lock from another host cannot be checked and counts as held; the user
may take it over with ``force=True`` once they know that window is closed.
"""

from __future__ import annotations

import json
import os
import secrets
from dataclasses import dataclass
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


def lock_path_for(sidecar: Path) -> Path:
    return sidecar.with_name(sidecar.name + ".lock")


def read_holder(lock: Path) -> dict[str, Any] | None:
    """The lock's content, or None if there is no lock; {} if it cannot be read."""
    try:
        raw = lock.read_bytes()[:4096]
    except FileNotFoundError:
        return None
    except OSError:
        return {}
    try:
        holder = json.loads(raw.decode("utf-8"))
    except (ValueError, UnicodeDecodeError):
        return {}
    return holder if isinstance(holder, dict) else {}


def describe(holder: dict[str, Any]) -> str:
    who = holder.get("reviewer") or "someone"
    return (
        f"{who} (process {holder.get('pid', '?')} on {holder.get('host', '?')}, "
        f"since {holder.get('since', '?')})"
    )


@dataclass
class SidecarLock:
    """An acquired lock; ``release()`` removes it if it is still ours."""

    path: Path
    token: str

    @classmethod
    def acquire(cls, sidecar: Path, reviewer: str, *, force: bool = False) -> SidecarLock:
        lock = lock_path_for(sidecar)
        token = secrets.token_hex(8)
        content = {
            "pid": os.getpid(),
            "host": host_name(),
            "since": utc_now(),
            "reviewer": reviewer,
            "token": token,
        }
        data = json.dumps(content, sort_keys=True).encode("utf-8")
        for _ in range(3):
            if cls._create(lock, data):
                return cls(lock, token)
            holder = read_holder(lock)
            if holder is None:
                continue  # released meanwhile; try again
            if not force and _is_live(holder):
                raise LockedError(
                    f"this record is already open in another window: {describe(holder)}",
                    sidecar,
                    holder,
                )
            # Stale (dead process on this host, or unreadable) or forced: take it over.
            atomic_write(lock, data, failure="cannot take over the lock file")
            if (read_holder(lock) or {}).get("token") == token:
                return cls(lock, token)
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

    def release(self) -> None:
        if self.still_ours():
            try:
                self.path.unlink()
            except OSError:
                pass


def _is_live(holder: dict[str, Any]) -> bool:
    if not holder:
        return False  # unreadable: written by no working instance of this program
    pid = holder.get("pid")
    if not isinstance(pid, int) or isinstance(pid, bool):
        return False
    if holder.get("host") != host_name():
        return True  # cannot check a process on another machine
    return pid_alive(pid)
