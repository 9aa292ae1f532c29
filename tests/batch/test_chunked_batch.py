"""Records in chunks with an overlapped sidecar writer: same results as one record at a time.

Outside references: the synthetic generator's construction-exact heart rate (invented signals
with known intervals, reviewapp.core.synth) and the marks store's schema validation of every
sidecar written (reviewapp.core.marks.load_sidecar). Timings are never checked here.
"""

from __future__ import annotations

import math
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from reviewapp.batch import sidecar_adapter as sidecars
from reviewapp.batch.runner import MAX_CHUNK, chunks, run_batch
from reviewapp.batch.task import DONE, FAILED, process_record, process_records
from reviewapp.core.io import open_record
from reviewapp.core.marks import MarksStore, load_sidecar, record_identity

REPO = Path(__file__).resolve().parents[2]
HR_BPM = (55.0, 70.0, 90.0)


@pytest.fixture
def synth_folder(tmp_path: Path) -> Path:
    from reviewapp.core.synth import SynthParams, generate
    from reviewapp.core.synth.wfdb_out import write_synthetic

    folder = tmp_path / "recs"
    for k, hr in enumerate(HR_BPM):
        syn = generate(SynthParams(hr_bpm=hr, duration_s=10.0, seed=k), name=f"r{k}")
        write_synthetic(syn, folder, f"r{k}")
    (folder / "bad.hea").write_bytes(b"\x00 not a header\n")
    return folder


def _paths(folder: Path) -> list[str]:
    # a bad record in the middle: it must not shift or stop the others
    return [str(folder / n) for n in ("r0.hea", "bad.hea", "r1.hea", "r2.hea")]


def test_chunk_gives_the_outcomes_of_single_records_in_input_order(
    synth_folder: Path, tmp_path: Path
):
    single_folder = tmp_path / "single"
    shutil.copytree(synth_folder, single_folder)
    chunked = process_records(_paths(synth_folder))
    single = [process_record(p) for p in _paths(single_folder)]
    assert [o.record for o in chunked] == ["r0", "bad", "r1", "r2"]
    assert [o.outcome for o in chunked] == [o.outcome for o in single]
    assert [o.outcome for o in chunked] == [DONE, FAILED, DONE, DONE]
    assert "bad.hea" in chunked[1].error
    for a, b, hr in zip((chunked[0], *chunked[2:]), (single[0], *single[2:]), HR_BPM, strict=True):
        assert a.summary is not None and b.summary is not None
        assert a.summary.hr_bpm == b.summary.hr_bpm
        assert a.summary.qt_ms == b.summary.qt_ms
        # construction-exact rate of the synthetic record
        assert a.summary.hr_bpm == pytest.approx(hr, abs=1.0)
        assert a.cpu_seconds > 0 and a.seconds > 0
        rec = open_record(a.path)
        sc = load_sidecar(sidecars.sidecar_path(Path(a.path)), record_identity(rec))
        assert sc.automatic is not None and sc.listing_cache is not None
    again = process_records(_paths(synth_folder))
    assert [o.outcome for o in again] == ["skipped", FAILED, "skipped", "skipped"]


def test_a_failed_write_fails_only_its_record(synth_folder: Path):
    held = open_record(synth_folder / "r1.hea")
    with MarksStore.open(held, "reader1"):  # a window has r1 open: its write is refused
        outs = process_records(_paths(synth_folder))
    assert [o.outcome for o in outs] == [DONE, FAILED, FAILED, DONE]
    assert "already open" in outs[2].error and outs[2].summary is None
    assert not sidecars.sidecar_path(synth_folder / "r1.hea").exists()


def test_dead_writers_temporaries_are_swept_once_per_folder(synth_folder: Path):
    dead_pid = 2**22 + 4321  # above Linux's default pid_max: never a live process
    stale = synth_folder / f".r0.marks.json.tmp-{dead_pid}-0a0b0c0d"
    stale.write_bytes(b"half a file")
    assert [o.outcome for o in process_records(_paths(synth_folder)[:1])] == [DONE]
    assert not stale.exists()


@pytest.mark.parametrize("n_items,n_workers", [(0, 1), (1, 2), (7, 1), (100, 2), (5000, 2)])
def test_chunks_cover_every_record_once_in_order(n_items: int, n_workers: int):
    items = [f"p{i}" for i in range(n_items)]
    got = chunks(items, n_workers)
    assert [p for c in got for p in c] == items
    assert all(1 <= len(c) <= MAX_CHUNK for c in got)
    if n_items >= 8 * n_workers * MAX_CHUNK:
        assert all(len(c) == MAX_CHUNK for c in got[:-1])
    else:
        assert len(got) >= min(n_items, 8 * n_workers) // 2


def test_run_batch_reports_start_up_apart_from_throughput(synth_folder: Path):
    paths = [Path(p) for p in _paths(synth_folder)]
    seen: list[str] = []
    result = run_batch(paths, workers=1, progress=lambda o: seen.append(o.record))
    assert seen == ["r0", "bad", "r1", "r2"]
    assert (result.done, result.failed) == (3, 1)
    assert 0 <= result.startup_seconds <= result.seconds
    assert math.isfinite(result.records_per_second) and result.records_per_second > 0


def test_core_io_imports_a_format_library_only_to_read_that_format(synth_folder: Path):
    heavy = ("wfdb", "pandas", "pydicom", "pyedflib", "defusedxml")
    code = (
        "import sys\n"
        "from pathlib import Path\n"
        "from reviewapp.core.io import SUPPORTED_SUFFIXES, detect_format, find_records, "
        "open_record\n"
        f"heavy = {heavy!r}\n"
        "find_records(Path(sys.argv[1]))\n"
        "assert detect_format(Path('x.edf')) == 'EDF'\n"
        "assert detect_format(Path(sys.argv[1]) / 'r0.hea') == 'WFDB'\n"
        "print(sorted(m for m in heavy if m in sys.modules))\n"
        "open_record(Path(sys.argv[1]) / 'r0.hea')\n"
        "print(sorted(m for m in heavy if m in sys.modules))\n"
    )
    env = dict(os.environ, PYTHONPATH=str(REPO) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    out = subprocess.run(
        [sys.executable, "-c", code, str(synth_folder)],
        capture_output=True,
        text=True,
        env=env,
        timeout=120,
    )
    assert out.returncode == 0, out.stderr
    before, after = out.stdout.strip().splitlines()
    assert before == "[]"
    assert "wfdb" in after and "pydicom" not in after and "pyedflib" not in after
