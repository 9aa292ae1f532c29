"""A second process that holds a record's marks lock, as another workbench would.

Run as a script (``python tests/lock_holder.py RECORD READER``) it opens the record's marks
with the marks store, under its lock, prints ``held <pid>`` and then obeys one command a line
on stdin: ``note TEXT`` saves a note (prints ``saved`` or ``refused <ErrorType>``), ``exit``
(or the end of stdin) closes the store and exits, ``vanish`` exits at once without closing it
(a crash: the lock file stays behind). ``LockHolderProcess`` drives it from a test.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

_SCRIPT = Path(__file__).resolve()
_REPO = _SCRIPT.parents[1]


class LockHolderProcess:
    """The script above in a subprocess; use as a context manager (it is always ended)."""

    def __init__(self, record: Path, reader: str) -> None:
        self.proc = subprocess.Popen(
            [sys.executable, str(_SCRIPT), str(record), reader],
            stdin=subprocess.PIPE,
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
            cwd=_REPO,
        )
        line = self._line()
        if not line.startswith("held "):
            self.end()
            raise RuntimeError(f"the lock holder did not start: {line!r}")
        self.pid = int(line.split()[1])

    def _line(self) -> str:
        assert self.proc.stdout is not None
        line = self.proc.stdout.readline().strip()
        if not line and self.proc.poll() is not None:
            assert self.proc.stderr is not None
            return "ended: " + self.proc.stderr.read()
        return line

    def command(self, text: str) -> str:
        assert self.proc.stdin is not None
        self.proc.stdin.write(text + "\n")
        self.proc.stdin.flush()
        return self._line()

    def vanish(self) -> int:
        """End the process as a crash would (its lock file left behind); returns its code."""
        assert self.proc.stdin is not None
        self.proc.stdin.write("vanish\n")
        self.proc.stdin.flush()
        return self.end()

    def end(self) -> int:
        """Close the store and wait for the process to exit; returns its exit code."""
        if self.proc.poll() is None:
            try:
                assert self.proc.stdin is not None
                self.proc.stdin.write("exit\n")
                self.proc.stdin.close()
            except (BrokenPipeError, OSError):
                pass
            try:
                self.proc.wait(timeout=30)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
        for stream in (self.proc.stdout, self.proc.stderr):
            if stream is not None:
                stream.close()
        return self.proc.returncode

    def __enter__(self) -> LockHolderProcess:
        return self

    def __exit__(self, *exc: object) -> None:
        self.end()


def _main(record_path: str, reader: str) -> int:
    import os

    from reviewapp.core.errors import ReviewError
    from reviewapp.core.io import open_record
    from reviewapp.core.marks import MarksStore

    store = MarksStore.open(open_record(record_path), reader)
    print(f"held {os.getpid()}", flush=True)
    try:
        for line in sys.stdin:
            cmd, _, arg = line.strip().partition(" ")
            if cmd == "exit":
                break
            if cmd == "vanish":
                os._exit(0)
            if cmd == "note":
                try:
                    store.do(store.edits.add_note(arg))
                    print("saved", flush=True)
                except ReviewError as err:
                    print(f"refused {type(err).__name__}", flush=True)
    finally:
        store.close()
    return 0


if __name__ == "__main__":
    sys.exit(_main(sys.argv[1], sys.argv[2]))
