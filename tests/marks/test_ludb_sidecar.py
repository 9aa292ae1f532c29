"""A real record (LUDB record 1, PhysioNet) through the sidecar: identity, schema, and the
seconds <-> samples conversions checked against wfdb's reading of the cardiologists' marks.

The record's files are copied to tmp_path for the test run only (sidecars are never written
into the read-only shared data folder, and nothing is committed).
"""

from __future__ import annotations

import hashlib
import json
import shutil
from pathlib import Path

import jsonschema
import numpy as np
import pytest
import wfdb

from reviewapp.core import engine
from reviewapp.core.marks import (
    ForeignSidecarError,
    MarksStore,
    automatic_from_analysis,
    load_sidecar,
    override_from_mark,
    overrides_for,
    record_fingerprint,
    record_identity,
    record_source_files,
    schema,
)
from reviewapp.core.record import Record, record_from_array


def _wfdb_record(header: Path) -> Record:
    """Read with wfdb-python itself (the reference reader), wrapped as a Record."""
    r = wfdb.rdrecord(str(header.with_suffix("")))
    return record_from_array(
        r.p_signal, r.fs, r.sig_name, name=header.stem, source_path=header, source_format="WFDB"
    )


@pytest.fixture
def ludb_copy(shared_data, tmp_path) -> Path:
    src = shared_data / "ludb"
    if not (src / "1.hea").exists():
        pytest.skip("LUDB record 1 not in the shared data")
    for name in ("1.hea", "1.dat", "1.ii"):
        shutil.copy2(src / name, tmp_path / name)
    return tmp_path / "1.hea"


def test_fingerprint_covers_the_files_wfdb_names_and_only_their_content(ludb_copy, shared_data):
    rec = _wfdb_record(ludb_copy)
    header = wfdb.rdheader(str(ludb_copy.with_suffix("")))
    # The signal files are the ones wfdb-python's header parser names (each once).
    expected = [ludb_copy] + [ludb_copy.with_name(f) for f in dict.fromkeys(header.file_name)]
    assert record_source_files(rec) == expected
    # Independent recomputation of the documented scheme: length (8 bytes LE) + bytes.
    h = hashlib.sha256()
    for f in expected:
        data = f.read_bytes()
        h.update(len(data).to_bytes(8, "little") + data)
    assert record_fingerprint(rec) == "sha256:" + h.hexdigest()
    # Same content elsewhere (the read-only original): same identity.
    original = _wfdb_record(shared_data / "ludb" / "1.hea")
    assert record_fingerprint(original) == record_fingerprint(rec)
    # One changed byte in the signal file: a different record.
    before = record_fingerprint(rec)
    dat = ludb_copy.with_suffix(".dat")
    raw = bytearray(dat.read_bytes())
    raw[1000] ^= 1
    dat.write_bytes(bytes(raw))
    assert record_fingerprint(_wfdb_record(ludb_copy)) != before


def test_ptb_fingerprint_includes_the_xyz_signal_file(shared_data):
    hea = shared_data / "ptbdb" / "s0010_re.hea"
    if not hea.exists():
        pytest.skip("PTB record s0010_re not in the shared data")
    header = wfdb.rdheader(str(hea.with_suffix("")))
    rec = _wfdb_record(hea)
    names = [p.name for p in record_source_files(rec)]
    assert names == ["s0010_re.hea", *dict.fromkeys(header.file_name)]
    assert "s0010_re.xyz" in names  # the Frank leads' file, per the header


def _ludb_qrs_onsets(header: Path) -> list[tuple[int, int]]:
    """(QRS peak, QRS onset) sample pairs from LUDB's lead-II cardiologist annotations."""
    ann = wfdb.rdann(str(header.with_suffix("")), "ii")
    out = []
    for i, sym in enumerate(ann.symbol):
        if sym == "N" and i > 0 and ann.symbol[i - 1] == "(":
            out.append((int(ann.sample[i]), int(ann.sample[i - 1])))
    return out


def test_real_record_sidecar_validates_and_converts_to_the_annotated_samples(ludb_copy):
    rec = _wfdb_record(ludb_copy)
    analysis = engine.analyse(rec)
    assert analysis.representative is not None and analysis.beats
    fs = rec.fs_hz
    with MarksStore.open(rec, "reader1") as store:
        assert store.path == ludb_copy.with_name("1.marks.json")
        store.set_automatic(automatic_from_analysis(analysis))
        # The reader moves one beat's QRS onset to where the LUDB cardiologists put it.
        peaks = _ludb_qrs_onsets(ludb_copy)
        beat = analysis.beats[len(analysis.beats) // 2]
        _peak, onset = min(peaks, key=lambda p: abs(p[0] - beat.r))
        store.do(
            store.edits.move_fiducial("qrs_on", onset / fs, scope="beat", beat_r_s=beat.r / fs)
        )
        # And the representative T end by +12 ms (6 samples at 500 Hz).
        rep = analysis.representative
        t_off_rel_s = (rep.marks.t_off - rep.r_index) / fs
        store.do(store.edits.move_fiducial("t_off", t_off_rel_s + 0.012))
        reading = store.reading
    doc = json.loads(ludb_copy.with_name("1.marks.json").read_text("utf-8"))
    jsonschema.validate(doc, schema())  # the shipped schema, by the reference validator
    assert doc["record"]["fingerprint"] == record_fingerprint(rec)
    # Every time in the file lies on the 500 Hz sample grid.
    times = [b["r_s"] for b in doc["automatic"]["beats"]]
    times += [v for b in doc["automatic"]["beats"] for v in b["marks_s"].values() if v is not None]
    ovs = doc["readings"]["reader1"]["overrides"]
    times += [o[k] for o in ovs for k in ("new_s", "old_s") if o[k] is not None]
    grid = np.asarray(times) * fs
    assert np.allclose(grid, np.round(grid), atol=1e-6)
    # seconds -> samples: the engine override lands exactly on the annotated sample.
    marks = overrides_for(reading, fs, rep.r_index)
    beat_ov = next(m for m in marks if m.scope == "beat")
    assert beat_ov.sample == onset
    rep_ov = next(m for m in marks if m.scope == "representative")
    assert rep_ov.sample == rep.marks.t_off + 6
    marked, unmatched = analysis.marked(marks)
    assert unmatched == ()
    bi = analysis.beats.index(beat)
    assert marked.beat_marks[bi].qrs_on == onset
    assert marked.representative.marks.t_off == rep.marks.t_off + 6
    # samples -> seconds gives back what the sidecar holds.
    back = {o.key: o.new_s for o in (override_from_mark(m, fs, rep.r_index) for m in marks)}
    assert back == {o.key: o.new_s for o in reading.overrides}
    # The automatic marks in the file are the engine's, beat by beat (record indices / fs).
    sc = load_sidecar(ludb_copy.with_name("1.marks.json"), record_identity(rec))
    assert [round(b.r_s * fs) for b in sc.automatic.beats] == [b.r for b in analysis.beats]
    for fid in ("p_on", "qrs_on", "qrs_off", "t_off"):
        stored = [b.marks.get(fid) for b in sc.automatic.beats]
        assert [None if t is None else round(t * fs) for t in stored] == [
            m.get(fid) for m in analysis.beat_marks
        ]


def test_marks_of_one_ludb_record_are_refused_for_another(shared_data, tmp_path):
    src = shared_data / "ludb"
    if not (src / "2.hea").exists():
        pytest.skip("LUDB record 2 not in the shared data")
    for name in ("1.hea", "1.dat"):
        shutil.copy2(src / name, tmp_path / name)
    with MarksStore.open(_wfdb_record(tmp_path / "1.hea"), "reader1") as store:
        store.do(store.edits.add_note("record 1"))
    other = tmp_path / "other"
    other.mkdir()
    for name in ("2.hea", "2.dat"):
        shutil.copy2(src / name, other / name)
    # someone copies record 1's marks beside record 2 under its name
    shutil.copy2(tmp_path / "1.marks.json", other / "2.marks.json")
    with pytest.raises(ForeignSidecarError):
        MarksStore.open(_wfdb_record(other / "2.hea"), "reader1")


def test_window_flow_engine_marks_in_engine_marks_out(ludb_copy):
    """A drag in the window yields an engine MarkOverride (samples); stored and read back it
    is the same override, and the engine applies it to the beat LUDB's annotator marked."""
    from reviewapp.core.fiducials import MarkOverride
    from reviewapp.core.marks import UndoStack

    rec = _wfdb_record(ludb_copy)
    analysis = engine.analyse(rec)
    r_index = analysis.representative.r_index
    peak, onset = _ludb_qrs_onsets(ludb_copy)[2]
    drags = [
        MarkOverride("representative", "qrs_off", analysis.representative.marks.qrs_off + 3),
        MarkOverride("beat", "qrs_on", onset, beat_r=peak),
        MarkOverride("beat", "t_off", None, beat_r=peak, lead="II"),  # "no T end here"
    ]
    with MarksStore.open(rec, "reader1") as store:
        stack = UndoStack(store)
        for d in drags:
            stack.push(store.edits.from_mark(d, r_index))
        assert sorted(store.engine_overrides(r_index), key=repr) == sorted(drags, key=repr)
    with MarksStore.open(rec, "reader1") as again:
        out = again.engine_overrides(r_index)
    marked, unmatched = analysis.marked(out)
    assert unmatched == ()
    bi = next(i for i, b in enumerate(analysis.beats) if abs(b.r - peak) <= 0.075 * rec.fs_hz)
    assert marked.beat_marks[bi].qrs_on == onset
