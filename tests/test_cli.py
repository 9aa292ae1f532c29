"""The command line's contract: exit codes, one-line errors, quiet broken pipes, no tracebacks.

Exit codes (documented in `reviewapp --help`): 0 ok; 1 finished but some records failed;
2 bad input / nothing could be done; 3 internal error; 141 output pipe closed.
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from reviewapp import CLINICAL_CAUTION, cli

REPO = Path(__file__).resolve().parents[1]
SAMPLES = REPO / "sample_records"


@pytest.fixture
def run(capsys):
    def _run(*argv: str) -> tuple[int, str, str]:
        try:
            code = cli.main(list(argv))
        except SystemExit as stop:  # argparse: usage errors and --help
            code = int(stop.code or 0)
        out, err = capsys.readouterr()
        return code, out, err

    return _run


def _one_line(err: str) -> str:
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    return lines[0]


def test_exit_0_ok(run) -> None:
    code, out, err = run("info", str(SAMPLES / "s001_predose.hea"))
    assert code == 0 and "s001_predose" in out and err == ""


def test_exit_1_some_records_failed(run, tmp_path: Path) -> None:
    bad = tmp_path / "garbage.csv"
    bad.write_text("hello\nworld\n")
    code, _, err = run("measure", str(SAMPLES / "s001_predose.hea"), str(bad), "--format", "csv")
    assert code == 1
    assert "garbage.csv" in _one_line(err)


def test_exit_2_single_unreadable_record(run, tmp_path: Path) -> None:
    bad = tmp_path / "empty.hea"
    bad.write_text("")
    code, _, err = run("measure", str(bad))
    assert code == 2
    assert _one_line(err) == f"reviewapp: {bad}: cannot read WFDB header: the header is empty"


def test_exit_2_all_records_failed(run, tmp_path: Path) -> None:
    a, b = tmp_path / "a.csv", tmp_path / "b.csv"
    a.write_text("x\n")
    b.write_text("y\n")
    assert run("measure", str(a), str(b))[0] == 2


def test_exit_2_batch_without_records(run, tmp_path: Path) -> None:
    code, _, err = run("batch", str(tmp_path))
    assert code == 2 and "no records found" in _one_line(err)


def test_exit_2_usage_error(run) -> None:
    code, _, err = run("measure", "--format", "pdf", "x.hea")
    assert code == 2 and "invalid choice" in err


def test_exit_2_too_short_record(run, tmp_path: Path) -> None:
    two = tmp_path / "two.csv"
    two.write_text("time_s,I,II\n0,0.1,0.2\n0.002,0.1,0.3\n")
    code, _, err = run("measure", str(two))
    line = _one_line(err)
    assert code == 2 and "record too short to measure (2 samples" in line
    assert "at least 2 s needed" in line


def test_exit_3_internal_error_logged(run, monkeypatch, tmp_path: Path) -> None:
    import reviewapp.commands.info as info

    def boom(args):  # a bug anywhere in a command
        raise RuntimeError("something broke")

    monkeypatch.setattr(info, "run", boom)
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    code, out, err = run("info", str(SAMPLES / "s001_predose.hea"))
    log = tmp_path / "reviewapp" / "last-error.log"
    assert code == 3 and out == ""
    line = _one_line(err)
    assert line.startswith("reviewapp: internal error: RuntimeError: something broke")
    assert f"please report; details in {log}" in line
    text = log.read_text()
    assert "Traceback" in text and "something broke" in text and "boom" in text


def test_os_errors_name_path_and_problem(run, tmp_path: Path) -> None:
    a_file = tmp_path / "x.csv"
    a_file.write_text("")
    code, _, err = run("samples", str(a_file / "sub"))
    assert code == 2
    assert _one_line(err).startswith(f"reviewapp: {a_file / 'sub'}: Not a directory")
    code, _, err = run("samples", str(a_file))  # an existing file is not a folder
    assert code == 2 and "exists and is not a folder" in _one_line(err)


def test_os_error_from_any_command(run, monkeypatch) -> None:
    import reviewapp.commands.info as info

    def denied(args):
        raise PermissionError(13, "Permission denied", "/data/locked.hea")

    monkeypatch.setattr(info, "run", denied)
    code, _, err = run("info", "whatever.hea")
    assert code == 2 and _one_line(err) == "reviewapp: /data/locked.hea: Permission denied"


def test_help_lists_exit_codes(run) -> None:
    code, out, _ = run("--help")
    assert code == 0 and "exit codes:" in out and "internal error" in out
    code, out, _ = run("measure", "--help")
    assert code == 0 and "--units U" in out and "exit codes:" in out
    # info and measure describe --fs the same way.
    fs_help = "sampling rate for CSV files without a time column"
    assert fs_help in " ".join(out.split())
    assert fs_help in " ".join(run("info", "--help")[1].split())


def _subcommand_parsers() -> dict[str, argparse.ArgumentParser]:
    """Every subcommand the parser knows (so a subcommand added later is checked too)."""
    parser = cli.build_parser()
    (action,) = [a for a in parser._actions if isinstance(a, argparse._SubParsersAction)]
    return dict(action.choices)


def test_every_help_carries_the_clinical_caution_once(run) -> None:
    # RULES: automated measurements verified by a clinician, not a certified device, local
    # protocols govern: in the top-level help and in each subcommand's, from one constant.
    names = _subcommand_parsers()
    assert set(cli.SUBCOMMANDS) <= set(names)
    caution = " ".join(CLINICAL_CAUTION.split())
    for argv in (["--help"], *([name, "--help"] for name in names)):
        code, out, _ = run(*argv)
        assert code == 0, argv
        assert " ".join(out.split()).count(caution) == 1, argv
    for name, sub in names.items():  # straight from each parser too, whatever main routes
        assert " ".join(sub.format_help().split()).count(caution) == 1, name


@pytest.mark.skipif(shutil.which("bash") is None or shutil.which("head") is None,
                    reason="needs bash and head")  # fmt: skip
def test_broken_pipe_is_quiet(tmp_path: Path) -> None:
    records = " ".join(str(SAMPLES / f"{n}.hea") for n in ("s001_predose", "s002_predose"))
    err_file = tmp_path / "err.txt"
    cmd = (
        f"set -o pipefail; '{sys.executable}' -m reviewapp measure {records} "
        f"2>'{err_file}' | head -1"
    )
    proc = subprocess.run(
        ["bash", "-c", cmd], capture_output=True, text=True, cwd=REPO, timeout=300
    )
    assert proc.stdout.startswith("Record s001_predose")
    err = err_file.read_text()
    assert "Traceback" not in err and "BrokenPipe" not in err and err.strip() == ""
    assert proc.returncode in (0, 141)  # pipefail: the reviewapp exit code, 141 when cut off


# ---------------------------------------------------------------- bad inputs: exit 2, one line


@pytest.mark.parametrize(
    "arg,message",
    [
        (".", "reviewapp: .: is a folder, not a record file"),
        ("/", "reviewapp: /: is a folder, not a record file"),
        ("", "reviewapp: '' is not a record file: the path is empty"),
    ],
)
def test_info_on_a_folder_or_an_empty_path_is_one_line_exit_2(run, arg: str, message: str):
    code, out, err = run("info", arg)
    assert code == 2 and out == "" and _one_line(err) == message


def test_info_on_a_fifo_is_refused_without_blocking(run, tmp_path: Path) -> None:
    import signal

    fifo = tmp_path / "f"
    os.mkfifo(fifo)
    signal.alarm(10)  # a blocking open would hang here; the alarm fails the test instead
    try:
        code, _, err = run("info", str(fifo))
    finally:
        signal.alarm(0)
    assert code == 2 and _one_line(err) == (
        f"reviewapp: {fifo}: is a FIFO (named pipe), not a regular file; refused without reading it"
    )


def test_a_file_name_with_a_newline_stays_on_one_line(run, tmp_path: Path) -> None:
    bad = tmp_path / "two\nlines.csv"
    bad.write_text("hello\n")
    code, _, err = run("info", str(bad))
    line = _one_line(err)
    assert code == 2 and line.startswith(f"reviewapp: {tmp_path}/two\\nlines.csv: ")


def _csv_at(path: Path, fs_hz: float, seconds: float = 10.0) -> Path:
    t = np.arange(int(fs_hz * seconds)) / fs_hz
    x = np.sin(2 * np.pi * 1.2 * t)
    rows = "\n".join(f"{a:.6f},{b:.6f},{b / 2:.6f}" for a, b in zip(t, x, strict=True))
    path.write_text("time_s,I,II\n" + rows + "\n")
    return path


def test_export_of_a_record_sampled_too_coarsely_is_exit_2(run, tmp_path: Path) -> None:
    """A 10 Hz record: the engine's QRS band-pass (5-18 Hz) cannot be designed below 45 Hz;
    before, export failed with exit 3 (ValueError from the filter design)."""
    rec = _csv_at(tmp_path / "ten_hz.csv", 10.0)
    code, out, err = run("export", str(rec), "--pdf", str(tmp_path / "out.pdf"))
    assert code == 2 and out == ""
    assert _one_line(err) == (
        f"reviewapp: {rec}: sampling rate 10 Hz is too low to measure (at least 50 Hz "
        "needed: a QRS complex must span several samples)"
    )
    assert not (tmp_path / "out.pdf").exists()
    assert run("measure", str(rec))[0] == 2


def test_third_party_warnings_go_to_the_log_not_the_terminal(tmp_path: Path) -> None:
    # In a fresh interpreter: pytest records warnings itself, in-process.
    code = (
        "import warnings, sys\n"
        "import reviewapp.commands.info as info\n"
        "def noisy(args):\n"
        "    warnings.warn('Mean of empty slice (a library notice)', RuntimeWarning)\n"
        "    print('done')\n"
        "    return 0\n"
        "info.run = noisy\n"
        "from reviewapp.cli import main\n"
        "sys.exit(main(['info', 'whatever.hea']))\n"
    )
    env = dict(os.environ, XDG_CACHE_HOME=str(tmp_path), PYTHONPATH=str(REPO))
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, env=env, timeout=120
    )
    assert out.returncode == 0 and out.stdout == "done\n" and out.stderr == ""
    log = (tmp_path / "reviewapp" / "reviewapp.log").read_text()
    assert "RuntimeWarning: Mean of empty slice" in log


def test_an_export_that_fails_midway_leaves_the_previous_file_whole(
    run, monkeypatch, tmp_path: Path
) -> None:
    import reviewapp.report.export as report_export

    rec = SAMPLES / "s001_predose.hea"
    out = tmp_path / "page.csv"
    assert run("export", str(rec), "--csv", str(out))[0] == 0
    previous = out.read_bytes()

    def disk_full(path, content):  # writes half a file, then the disk is full
        Path(path).write_text("record,quantity\ns001_predose,hr")
        raise OSError(28, "No space left on device", str(path))

    monkeypatch.setattr(report_export, "write_measurements_csv", disk_full)
    code, _, err = run("export", str(rec), "--csv", str(out))
    assert code == 2 and "No space left on device" in _one_line(err)
    assert out.read_bytes() == previous
    assert [p.name for p in tmp_path.iterdir()] == ["page.csv"]  # no temporary file left
