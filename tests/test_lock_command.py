"""`reviewapp lock PATH`: who holds a record's marks lock, and taking it over on purpose.

Driven through the command line (``cli.main(argv)``), the marks file and the lock file read
back as plain JSON. A lock "from another computer" is a lock file naming another host (this
program cannot check a process there: it counts as held); a live holder on this computer is a
real second process (tests/lock_holder.py) holding the lock through the marks store.
"""

from __future__ import annotations

import json
import os
import shutil
from pathlib import Path

import pytest

from reviewapp import cli
from reviewapp.core.io import open_record
from reviewapp.core.marks import MarksStore
from tests.lock_holder import LockHolderProcess

SAMPLES = Path(__file__).resolve().parents[1] / "sample_records"
ELSEWHERE = {
    "pid": 4242,
    "host": "ws-cardio-7.invalid",
    "boot": "not-this-boot",
    "started": 1.0,
    "since": "2026-12-01T08:15:00.000000Z",
    "reviewer": "reader1",
    "token": "0123456789abcdef",
}


@pytest.fixture
def run(capsys):
    def _run(*argv: str) -> tuple[int, str, str]:
        try:
            code = cli.main(list(argv))
        except SystemExit as stop:
            code = int(stop.code or 0)
        out, err = capsys.readouterr()
        return code, out, err

    return _run


@pytest.fixture
def hea(tmp_path: Path) -> Path:
    for ext in (".hea", ".dat"):
        shutil.copy(SAMPLES / f"s001_predose{ext}", tmp_path / f"s001_predose{ext}")
    return tmp_path / "s001_predose.hea"


def _lock(hea: Path) -> Path:
    return hea.with_name("s001_predose.marks.json.lock")


def _sidecar(hea: Path) -> Path:
    return hea.with_name("s001_predose.marks.json")


def _one_line(err: str) -> str:
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err, err
    return lines[0]


def test_a_free_record(run, hea: Path) -> None:
    code, out, err = run("lock", str(hea))
    assert code == 0 and err == ""
    assert out.startswith("s001_predose: marks lock free")
    code, out, _ = run("lock", str(hea), "--take-over", "reader2", "--confirm")
    assert code == 0 and "nothing to take over" in out
    assert not _sidecar(hea).exists() and not _lock(hea).exists()


def test_a_lock_from_another_computer_is_shown_and_taken_over_only_when_confirmed(
    run, hea: Path
) -> None:
    _lock(hea).write_text(json.dumps(ELSEWHERE))
    before = _lock(hea).read_bytes()

    code, out, err = run("lock", str(hea))
    assert code == 0 and err == ""
    first = out.splitlines()[0]
    assert "held by reader1 (process 4242 on ws-cardio-7.invalid) since 2026-12-01 08:15 UTC" in (
        first
    )
    assert "another computer" in first and "--take-over" in out

    # Without --confirm: one line naming the lock file, exit 2, nothing touched.
    code, out, err = run("lock", str(hea), "--take-over", "reader2")
    assert code == 2
    assert _one_line(err).startswith(f"reviewapp: {_lock(hea)}: not taken over: add --confirm")
    assert _lock(hea).read_bytes() == before and not _sidecar(hea).exists()

    # The window refuses to write while the lock counts as held.
    with MarksStore.open(open_record(hea), "reader2", read_only=True, lock=False):
        pass
    with pytest.raises(Exception, match="already open in another window"):
        MarksStore.open(open_record(hea), "reader2")

    code, out, err = run("lock", str(hea), "--take-over", "reader2", "--confirm")
    assert code == 0 and err == ""
    assert "You took over this record from reader1" in out
    assert "lock released" in out
    assert not _lock(hea).exists()
    audit = json.loads(_sidecar(hea).read_text())["audit"]
    (event,) = [e for e in audit if e["action"] == "take_over_lock"]
    assert event["reviewer"] == "reader2"
    assert event["old"] == {
        "reviewer": "reader1",
        "pid": 4242,
        "host": "ws-cardio-7.invalid",
        "since": "2026-12-01T08:15:00.000000Z",
    }
    assert event["new"]["reviewer"] == "reader2" and event["new"]["pid"] == os.getpid()
    # Now the record opens for writing, as after the window's take-over.
    with MarksStore.open(open_record(hea), "reader2") as store:
        assert not store.read_only


def test_a_live_holder_in_another_process_loses_the_lock_and_cannot_save(run, hea: Path) -> None:
    with LockHolderProcess(hea, "reader1") as holder:
        assert holder.command("note first") == "saved"
        code, out, _ = run("lock", str(hea))
        assert code == 0
        assert f"held by reader1 (process {holder.pid} on " in out
        assert "running on this computer" in out
        code, out, _ = run("lock", str(hea), "--take-over", "reader2", "--confirm")
        assert code == 0 and "You took over this record from reader1" in out
        # The displaced process's next save is refused: the file changed under it.
        assert holder.command("note second").startswith("refused ")
    side = json.loads(_sidecar(hea).read_text())
    assert [n["text"] for n in side["readings"]["reader1"]["notes"]] == ["first"]
    assert [e["action"] for e in side["audit"]][-1] == "take_over_lock"


def test_a_stale_lock_is_cleared_without_an_audit_event(run, hea: Path) -> None:
    gone = dict(ELSEWHERE, host=os.uname().nodename, pid=2**22 + 4321)  # above pid_max
    _lock(hea).write_text(json.dumps(gone))
    code, out, _ = run("lock", str(hea))
    assert code == 0 and "left by reader1" in out and "gone" in out
    assert "--take-over" not in out
    code, out, _ = run("lock", str(hea), "--take-over", "reader2", "--confirm")
    assert code == 0 and "stale lock was cleared" in out
    assert not _lock(hea).exists()
    assert not _sidecar(hea).exists()  # nothing to record


def test_a_take_over_that_could_not_write_leaves_the_holder_its_lock(run, hea: Path) -> None:
    with MarksStore.open(open_record(hea), "reader2", role="second") as store:
        store.do(store.edits.add_note("blinded read"))
    _lock(hea).write_text(json.dumps(ELSEWHERE))
    before = _lock(hea).read_bytes()
    code, _, err = run("lock", str(hea), "--take-over", "reader2", "--confirm")
    assert code == 2
    assert "reader2 already reads this record as second reader, not as first" in _one_line(err)
    assert _lock(hea).read_bytes() == before  # refused before the holder was displaced
    code, out, _ = run("lock", str(hea), "--take-over", "reader2", "--role", "second", "--confirm")
    assert code == 0 and "You took over" in out


@pytest.mark.parametrize(
    ("argv", "expected"),
    [
        (("--confirm",), "--confirm confirms a take-over: give --take-over READER with it"),
        (("--take-over", "-bad id", "--confirm"), "reader id '-bad id' is not usable"),
    ],
)
def test_bad_options_give_one_line_and_exit_2(run, hea: Path, argv, expected) -> None:
    code, out, err = run("lock", str(hea), *argv)
    assert code == 2 and out == ""
    assert _one_line(err).startswith(f"reviewapp: {hea}: {expected}")


def test_an_unreadable_lock_file_is_said_to_be_one(run, hea: Path) -> None:
    _lock(hea).write_bytes(b"\x00 not a lock \xff")
    code, out, _ = run("lock", str(hea))
    assert code == 0 and "left as an unreadable lock file" in out
    code, out, _ = run("lock", str(hea), "--take-over", "reader2", "--confirm")
    assert code == 0 and "stale lock was cleared" in out and not _lock(hea).exists()


def test_a_missing_record_names_the_file(run, tmp_path: Path) -> None:
    missing = tmp_path / "nothing.hea"
    code, _, err = run("lock", str(missing))
    assert code == 2 and str(missing) in _one_line(err)
