"""Crash-safe file writes and never-deleting file moves.

``atomic_write`` writes a temporary file in the same folder, flushes and fsyncs it, renames it
over the target with ``os.replace`` (atomic on POSIX and on Windows for one volume) and fsyncs
the folder so the rename itself survives a power cut. A kill at any instant leaves the old or
the new file, never a torn one; at worst a stray ``.<name>.tmp-<pid>-<hex>`` file, which
``remove_stale_temps`` clears once its writer is dead.
"""

from __future__ import annotations

import os
import re
import secrets
import socket
from collections.abc import Callable
from datetime import UTC, datetime
from pathlib import Path

from reviewapp.core.errors import MarksError

_TEMP = re.compile(r"^\.(?P<target>.+)\.tmp-(?P<pid>\d+)-[0-9a-f]+$")


def utc_now() -> str:
    """Current UTC time as ISO 8601 with microseconds and a ``Z`` suffix."""
    return datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")


def utc_stamp() -> str:
    """Current UTC time for file names (no colons): ``20261202T004501.123456Z``."""
    return datetime.now(UTC).strftime("%Y%m%dT%H%M%S.%fZ")


def fsync_dir(folder: Path) -> None:
    """Make a rename in ``folder`` durable (no-op where folders cannot be opened, e.g. Windows)."""
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass  # some file systems refuse fsync on folders; the rename is still atomic
    finally:
        os.close(fd)


def temp_name(path: Path) -> Path:
    """Where a write to ``path`` is staged: hidden, beside it, named after this process (so
    ``remove_stale_temps`` can tell a dead writer's leftovers)."""
    return path.with_name(f".{path.name}.tmp-{os.getpid()}-{secrets.token_hex(4)}")


def atomic_write(path: Path, data: bytes, failure: str = "could not save") -> None:
    """Replace ``path`` with ``data`` atomically and durably; MarksError(``failure``: why) on
    any OS failure."""
    path = Path(path)
    tmp = temp_name(path)
    try:
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_BINARY", 0), 0o644)
        try:
            view = memoryview(data)
            while view:
                written = os.write(fd, view)
                view = view[written:]
            os.fsync(fd)
        finally:
            os.close(fd)
        os.replace(tmp, path)
    except OSError as exc:
        try:
            tmp.unlink(missing_ok=True)
        except OSError:
            pass
        raise MarksError(f"{failure}: {exc.strerror or exc}", path) from None
    fsync_dir(path.parent)


def pid_alive(pid: int) -> bool:
    """Whether a process with this id runs on this machine (True when it cannot be told)."""
    if not isinstance(pid, int) or isinstance(pid, bool) or pid <= 0 or pid > 2**31:
        return False
    if os.name == "nt":
        return _pid_alive_windows(pid)
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True  # it exists, it is just not ours
    except (OSError, OverflowError, ValueError):
        return False
    return True


def _pid_alive_windows(pid: int) -> bool:
    # os.kill(pid, 0) would terminate the process on Windows; ask the kernel instead.
    import ctypes

    kernel32 = ctypes.WinDLL("kernel32", use_last_error=True)  # type: ignore[attr-defined]
    handle = kernel32.OpenProcess(0x1000, False, pid)  # PROCESS_QUERY_LIMITED_INFORMATION
    if not handle:
        return ctypes.get_last_error() == 5  # type: ignore[attr-defined]  # Windows only  # ERROR_ACCESS_DENIED: exists, not ours
    try:
        code = ctypes.c_ulong()
        if not kernel32.GetExitCodeProcess(handle, ctypes.byref(code)):
            return True
        return code.value == 259  # STILL_ACTIVE
    finally:
        kernel32.CloseHandle(handle)


def _sweep_dead_temps(folder: Path, wanted: Callable[[str], bool]) -> list[Path]:
    """Remove temporary files in ``folder`` whose target name ``wanted`` accepts and whose
    writing process is dead. Returns what was removed."""
    removed: list[Path] = []
    try:
        entries = list(os.scandir(folder))
    except OSError:
        return removed
    me = os.getpid()
    for entry in entries:
        m = _TEMP.match(entry.name) if entry.name.startswith(".") else None
        if not m or not wanted(m.group("target")):
            continue
        pid = int(m.group("pid"))
        if pid == me or pid_alive(pid):
            continue
        try:
            os.unlink(entry.path)
            removed.append(Path(entry.path))
        except OSError:
            pass
    return removed


def remove_stale_temps(path: Path) -> list[Path]:
    """Remove this program's temporary files for ``path`` whose writing process is dead.

    These are never a saved sidecar (a save is complete only once renamed), so removing them
    loses nothing. Returns what was removed.
    """
    path = Path(path)
    return _sweep_dead_temps(path.parent, lambda target: target.startswith(path.name))


def remove_stale_temps_in(folder: Path, marker: str = ".marks.json") -> list[Path]:
    """``remove_stale_temps`` for every file of the folder whose name contains ``marker``.

    A batch over a folder of thousands of records calls this once per folder instead of
    listing the whole folder again for each record's save.
    """
    return _sweep_dead_temps(folder, lambda target: marker in target)


def set_aside(path: Path, reason: str = "set-aside") -> Path:
    """Rename ``path`` to ``<path>.<reason>-<utc>`` (content untouched); returns the new path.

    Never overwrites: the name gets a counter if taken. Used to start a fresh reading beside a
    sidecar that cannot be used.
    """
    path = Path(path)
    base = f"{path.name}.{reason}-{utc_stamp()}"
    for n in range(1000):
        target = path.with_name(base if n == 0 else f"{base}.{n}")
        try:
            # link + unlink instead of rename: link fails if the target exists, so nothing is
            # ever overwritten even if two processes race.
            os.link(path, target)
        except FileExistsError:
            continue
        except OSError:
            if target.exists():
                continue
            try:
                os.rename(path, target)  # file systems without hard links
            except OSError as exc:
                raise MarksError(
                    f"could not move the file aside: {exc.strerror or exc}", path
                ) from None
            fsync_dir(path.parent)
            return target
        os.unlink(path)
        fsync_dir(path.parent)
        return target
    raise MarksError("could not find a free name to move the file aside", path)


def host_name() -> str:
    return socket.gethostname()
