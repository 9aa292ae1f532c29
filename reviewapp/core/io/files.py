"""Only regular files are ever opened: FIFOs, devices and sockets are refused by their type.

Opening a FIFO for reading blocks until a writer appears (forever, for a hostile folder);
opening a device may block, rewind a tape or read without end. So every path a reader, the
marks store or the batch is about to read is first ``stat``-ed (which never opens it) and
refused unless it is a regular file. Where this program opens the file itself, it opens with
``O_NONBLOCK`` and checks the open descriptor again (``fstat``), so a file swapped for a FIFO
between the two steps is refused too instead of blocking. Libraries that take a path (wfdb,
pyedflib, pydicom) get it only after the ``stat`` check.

Output files are written the other way round: to a temporary file beside the target, fsynced,
then renamed over it (``atomic_output``), so a full disk or a kill never leaves a file cut
short in place of the previous one.
"""

from __future__ import annotations

import os
import secrets
import shutil
import stat
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import BinaryIO

from reviewapp.core.errors import RecordError, ReviewError

ErrorFactory = Callable[[str, Path], ReviewError]

_KINDS = (
    (stat.S_ISDIR, "a folder"),
    (stat.S_ISFIFO, "a FIFO (named pipe)"),
    (stat.S_ISCHR, "a character device"),
    (stat.S_ISBLK, "a block device"),
    (stat.S_ISSOCK, "a socket"),
)


def file_kind(mode: int) -> str:
    """``"a regular file"``, ``"a folder"``, ``"a FIFO (named pipe)"``, ... for a stat mode."""
    if stat.S_ISREG(mode):
        return "a regular file"
    return next((name for test, name in _KINDS if test(mode)), "not a regular file")


def _refusal(mode: int) -> str:
    kind = file_kind(mode)
    if kind == "a folder":
        return "is a folder, not a file"
    return f"is {kind}, not a regular file; refused without reading it"


def require_regular(
    path: str | os.PathLike[str], error: ErrorFactory = RecordError
) -> os.stat_result:
    """``os.stat`` of ``path``, or ``error(problem, path)`` unless it is a regular file.

    ``stat`` follows symbolic links and never opens the file, so it cannot block.
    """
    p = Path(path)
    try:
        st = os.stat(p)
    except FileNotFoundError:
        raise error("file not found", p) from None
    except NotADirectoryError:
        raise error("file not found (a part of the path is a file)", p) from None
    except (OSError, ValueError) as err:  # ValueError: a NUL byte in the path
        raise error(f"cannot open: {getattr(err, 'strerror', None) or err}", p) from None
    if not stat.S_ISREG(st.st_mode):
        raise error(_refusal(st.st_mode), p)
    return st


def is_regular(path: str | os.PathLike[str]) -> bool:
    """True for a regular file (after symbolic links); never opens it."""
    try:
        return stat.S_ISREG(os.stat(path).st_mode)
    except (OSError, ValueError):
        return False


def open_regular(path: str | os.PathLike[str], error: ErrorFactory = RecordError) -> BinaryIO:
    """Open a regular file for binary reading without ever blocking on a FIFO or device.

    The path is checked with ``stat`` first; the open itself uses ``O_NONBLOCK`` (a FIFO swapped
    in meanwhile opens at once instead of waiting for a writer) and the descriptor is checked
    again with ``fstat``. ``FileNotFoundError`` is raised as is, so callers can treat "absent"
    apart from "unusable"; every other problem is ``error(problem, path)``.
    """
    p = Path(path)
    try:
        st = os.stat(p)
    except FileNotFoundError:
        raise
    except (OSError, ValueError) as err:
        raise error(f"cannot open: {getattr(err, 'strerror', None) or err}", p) from None
    if not stat.S_ISREG(st.st_mode):
        raise error(_refusal(st.st_mode), p)
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0)
    flags |= getattr(os, "O_BINARY", 0)
    try:
        fd = os.open(p, flags)
    except FileNotFoundError:
        raise
    except OSError as err:
        raise error(f"cannot open: {err.strerror or err}", p) from None
    try:
        mode = os.fstat(fd).st_mode
        if not stat.S_ISREG(mode):
            raise error(_refusal(mode), p)
        if hasattr(os, "set_blocking"):
            os.set_blocking(fd, True)  # a regular file ignores it; reads stay plain reads
        return os.fdopen(fd, "rb")
    except BaseException:
        os.close(fd)
        raise


def read_regular(
    path: str | os.PathLike[str], limit: int, error: ErrorFactory = RecordError
) -> bytes:
    """Up to ``limit`` bytes of a regular file (``open_regular``)."""
    with open_regular(path, error) as fh:
        return fh.read(limit)


def _fsync_path(path: Path) -> None:
    fd = os.open(path, os.O_RDONLY)
    try:
        os.fsync(fd)
    except OSError:
        pass  # some file systems refuse fsync on folders; the rename is still atomic
    finally:
        os.close(fd)


@contextmanager
def atomic_output(
    path: str | os.PathLike[str], error: ErrorFactory = RecordError
) -> Iterator[Path]:
    """Write an output file all at once: yields a temporary path beside ``path`` (hidden, same
    suffix, so writers that choose a format by suffix still do), then fsyncs it and renames it
    over ``path``. A full disk, a crash or a kill leaves the previous file whole (or none),
    never one cut short; the temporary file is removed on failure."""
    path = Path(path)
    tmp = path.with_name(f".{path.stem}.tmp-{os.getpid()}-{secrets.token_hex(4)}{path.suffix}")
    try:
        yield tmp
        _fsync_path(tmp)
        os.replace(tmp, path)
        _fsync_path(path.parent)
    except OSError as err:
        raise error(f"cannot write: {err.strerror or err}", path) from None
    finally:
        try:
            tmp.unlink(missing_ok=True)
        except OSError:
            pass


@contextmanager
def atomic_outputs(
    folder: Path, names: list[str], error: ErrorFactory = RecordError
) -> Iterator[Path]:
    """Like ``atomic_output`` for writers that write several files into a folder (wfdb's
    wrsamp, wrann): yields a hidden temporary folder inside ``folder``; each of ``names`` is
    then fsynced and renamed into ``folder`` in the order given (a WFDB header last, so a
    header never names a signal file that is not complete)."""
    tmp = folder / f".tmp-{os.getpid()}-{secrets.token_hex(4)}"
    try:
        tmp.mkdir()
        yield tmp
        for name in names:
            _fsync_path(tmp / name)
            os.replace(tmp / name, folder / name)
        _fsync_path(folder)
    except OSError as err:
        raise error(f"cannot write: {err.strerror or err}", folder) from None
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
