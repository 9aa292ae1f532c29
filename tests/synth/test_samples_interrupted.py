"""`reviewapp samples` interrupted mid-write leaves every file whole or absent.

The faults are real ones, in a separate process: the kernel's file-size limit (RLIMIT_FSIZE,
POSIX setrlimit) stops a write part-way through the first signal file, the way a full disk or
a crash does, and SIGKILL stops the command at arbitrary instants. What is left in the folder
is compared byte for byte with the committed demo worklist (the command's own output, checked
by ``test_demo_record_regeneration_is_identical``).
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from reviewapp import cli

REPO = Path(__file__).resolve().parents[2]
SHIPPED = REPO / "sample_records"

pytestmark = pytest.mark.skipif(os.name != "posix", reason="setrlimit and SIGKILL are POSIX")

# Smaller than one demo signal file (10 s x 12 leads x 2 bytes = 120,000 bytes), larger than
# every header, truth file, worklist and README.
_FILE_SIZE_LIMIT = 60_000


def _child(out: Path, tmp: Path, *, ignore_sigxfsz: bool) -> subprocess.Popen[str]:
    code = (
        "import resource, signal, sys\n"
        f"resource.setrlimit(resource.RLIMIT_FSIZE, ({_FILE_SIZE_LIMIT}, {_FILE_SIZE_LIMIT}))\n"
        # Python ignores SIGXFSZ at start-up (a write past the limit then fails with an
        # error); the default action kills the process mid-write, like a crash.
        + ("" if ignore_sigxfsz else "signal.signal(signal.SIGXFSZ, signal.SIG_DFL)\n")
        + "from reviewapp import cli\n"
        f"sys.exit(cli.main(['samples', {str(out)!r}]))\n"
    )
    # The staging folder goes to the test's temporary folder, not the machine's.
    env = {**os.environ, "TMPDIR": str(tmp), "XDG_CACHE_HOME": str(tmp / "cache")}
    return subprocess.Popen(
        [sys.executable, "-c", code],
        env=env,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )


def _visible(folder: Path) -> list[Path]:
    return sorted(p for p in folder.iterdir() if not p.name.startswith("."))


def _assert_whole_or_absent(folder: Path) -> None:
    for path in _visible(folder):
        shipped = SHIPPED / path.name
        assert shipped.is_file(), f"unexpected file {path.name}"
        assert path.read_bytes() == shipped.read_bytes(), f"{path.name} is torn"
    for hea in folder.glob("*.hea"):  # a listed record has its signal and its truth
        assert hea.with_suffix(".dat").is_file(), f"{hea.name} names a missing signal file"
        assert hea.with_suffix(".truth.json").is_file(), f"{hea.name} without its truth file"


def test_a_crash_at_the_file_size_limit_leaves_no_torn_file(tmp_path: Path) -> None:
    out = tmp_path / "out"
    proc = _child(out, tmp_path, ignore_sigxfsz=False)
    proc.communicate(timeout=60)
    # The kernel killed it part-way through writing the first signal file.
    assert proc.returncode == -signal.SIGXFSZ
    _assert_whole_or_absent(out)
    assert not list(out.glob("*.dat")) and not list(out.glob("*.hea"))


def test_a_write_refused_by_the_system_gives_one_line_and_exit_2(tmp_path: Path) -> None:
    out = tmp_path / "out"
    proc = _child(out, tmp_path, ignore_sigxfsz=True)
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 2, err
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err
    # numpy's words for the short write follow ("120000 requested and 60000 written").
    assert lines[0].startswith(f"reviewapp: {out / 's001_predose.dat'}: cannot write the record: ")
    _assert_whole_or_absent(out)


def test_killed_at_any_instant_then_run_again(tmp_path: Path) -> None:
    out = tmp_path / "out"
    n_files = len(_visible(SHIPPED)) - 1  # the study subfolder is not written
    for kill_after in (1, 8, 17):
        proc = subprocess.Popen(
            [sys.executable, "-m", "reviewapp", "samples", str(out)],
            env={**os.environ, "TMPDIR": str(tmp_path)},
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
        )
        try:
            deadline = time.monotonic() + 60
            while proc.poll() is None and time.monotonic() < deadline:
                if out.is_dir() and len(_visible(out)) >= kill_after:
                    break
                time.sleep(0.001)
            proc.send_signal(signal.SIGKILL)
        finally:
            proc.wait(timeout=30)
        _assert_whole_or_absent(out)
        assert len(_visible(out)) < n_files  # stopped before the end
    # Run again: the folder ends exactly as a clean run leaves it, the dead writers' temporary
    # files gone.
    assert cli.main(["samples", str(out)]) == 0
    assert [p.name for p in out.iterdir()] != []
    assert sorted(p.name for p in out.iterdir()) == sorted(
        p.name for p in _visible(SHIPPED) if p.is_file()
    )
    _assert_whole_or_absent(out)
