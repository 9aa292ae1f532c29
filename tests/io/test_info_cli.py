"""`reviewapp info` on every reference record, and its one-line errors."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
import wfdb

from reviewapp import cli
from reviewapp.core.io import find_records, open_record

REPO = Path(__file__).resolve().parents[2]


@pytest.fixture
def run_cli(monkeypatch, capsys):
    """Run ``reviewapp.cli.main`` in-process; returns (exit code, stdout, stderr).

    While sibling subcommands are still missing from the tree, the parser is limited to
    ``info`` so this suite checks its own command through the real ``main``.
    """
    try:
        cli.build_parser()
    except ImportError:
        monkeypatch.setattr(cli, "SUBCOMMANDS", ("info",))

    def run(*argv: str) -> tuple[int, str, str]:
        code = cli.main(list(argv))
        out, err = capsys.readouterr()
        return code, out, err

    return run


def test_find_records_lists_every_reference_record_once(shared_data: Path) -> None:
    records = find_records(shared_data)
    # Reference: one .hea per WFDB record in the folders (PhysioNet layout); ludb.csv is a
    # diagnosis table, not an ECG, and annotation files are not records.
    expected = sorted(shared_data.glob("**/*.hea"))
    assert records == expected
    assert not any(p.suffix == ".csv" for p in records)


def test_open_record_on_all_reference_records(shared_data: Path) -> None:
    """Every record in the shared data opens; WFDB metadata agrees with wfdb.rdheader."""
    records = find_records(shared_data)
    assert len(records) >= 4
    for k, path in enumerate(records):
        rec = open_record(path)
        assert np.isfinite(rec.window(0, 100)).all(), path
        if k % 4 and path.parent.name in ("ludb", "qtdb"):
            continue  # wfdb's header parser is slow: compare every fourth of the large sets
        # Reference: wfdb.rdheader (sampling rate, length, signal count).
        h = wfdb.rdheader(str(path.with_suffix("")))
        assert rec.fs_hz == h.fs and rec.n_samples == h.sig_len, path
        assert sum(not lead.derived for lead in rec.leads) == h.n_sig, path


def test_info_on_reference_records(shared_data: Path, run_cli) -> None:
    records = find_records(shared_data)
    chosen = [p for p in records if p.parent.name in ("mitdb", "ptbdb")]
    chosen += [p for p in records if p.parent.name == "ludb"][:10]
    chosen += [p for p in records if p.parent.name == "qtdb"][:10]
    for path in chosen:
        code, out, err = run_cli("info", str(path))
        assert code == 0, (path, err)
        assert f"record:       {path.stem}" in out and "sampling:" in out and err == ""
    code, out, _ = run_cli("info", str(shared_data / "ptbdb" / "s0010_re.hea"))
    assert "age 81 y, female" in out and "1000 Hz" in out and "38400 samples" in out


def test_info_on_other_formats(run_cli, tmp_path: Path) -> None:
    code, out, _ = run_cli("info", str(Path(__file__).parent / "fixtures" / "small_aecg.xml"))
    assert code == 0 and "HL7 aECG" in out and "[derived]" in out
    from pydicom.data import get_testdata_file

    dcm = get_testdata_file("waveform_ecg.dcm")
    if dcm is not None:
        code, out, _ = run_cli("info", dcm)
        assert code == 0 and "DICOM" in out and "gain 800 adu/mV" in out
    csv = tmp_path / "plain.csv"
    csv.write_text("I,II\n0.1,0.2\n0.2,0.3\n0.0,0.1\n")
    code, out, err = run_cli("info", str(csv))
    assert code == 2 and "plain.csv" in err and "--fs" in err
    code, out, _ = run_cli("info", str(csv), "--fs", "250", "--units", "uV")
    assert code == 0 and "250 Hz" in out


def test_info_garbage_exits_2_with_one_line(run_cli, tmp_path: Path) -> None:
    bad = tmp_path / "garbage.edf"
    bad.write_bytes(bytes(range(256)) * 8)
    code, out, err = run_cli("info", str(bad))
    assert code == 2 and out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "garbage.edf" in lines[0] and "Traceback" not in err


def test_info_subprocess_once(tmp_path: Path) -> None:
    """The installed entry point behaves the same from a shell (one subprocess run)."""
    cli.build_parser()  # every subcommand's module imports (a missing one fails here)
    bad = tmp_path / "junk.xml"
    bad.write_text("<not-closed")
    proc = subprocess.run(
        [sys.executable, "-m", "reviewapp", "info", str(bad)],
        capture_output=True, text=True, cwd=REPO, timeout=120,
    )  # fmt: skip
    assert proc.returncode == 2
    assert len(proc.stderr.strip().splitlines()) == 1 and "junk.xml" in proc.stderr
