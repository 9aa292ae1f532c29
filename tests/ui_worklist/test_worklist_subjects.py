"""The worklist lists only ECG records (not the study's CSV table beside them) and shows each
record's subject and timepoint from its header, as wfdb (the reference reader) reads them."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from reviewapp.ui.worklist import COLUMNS, PathRole, WorklistWidget, is_listable


@pytest.fixture
def sample_folder(sample_records_dir: Path, tmp_path: Path) -> Path:
    if not sample_records_dir.is_dir():
        pytest.skip("no sample_records folder in this checkout")
    for f in sample_records_dir.iterdir():
        if f.suffix in (".hea", ".dat", ".csv"):
            shutil.copy(f, tmp_path / f.name)
    # A table that is not an ECG, beside the records (e.g. a site's visit list).
    (tmp_path / "visits.csv").write_text("visit,date\n1,2026-01-02\n")
    return tmp_path


def test_lists_records_not_tables_with_subject_and_timepoint(qtbot, sample_folder: Path):
    import wfdb

    w = WorklistWidget()
    qtbot.addWidget(w)
    with qtbot.waitSignal(w.scanFinished, timeout=30_000):
        w.open_folder(sample_folder)
    listed = w.visible_paths()
    heas = sorted(sample_folder.glob("*.hea"))
    assert sorted(listed) == heas
    assert all(p.suffix == ".hea" for p in listed)
    assert not is_listable(sample_folder / "visits.csv")
    if (sample_folder / "worklist.csv").exists():
        assert not is_listable(sample_folder / "worklist.csv")
    col = {k: i for i, (k, _) in enumerate(COLUMNS)}
    for r in range(w.proxy.rowCount()):
        path = Path(w.proxy.index(r, 0).data(PathRole))
        # Reference: the header comments as wfdb reads them ("subject: S-001", ...).
        comments = wfdb.rdheader(str(path.with_suffix(""))).comments
        facts = {k.strip(): v.strip() for k, _, v in (c.partition(":") for c in comments)}
        assert w.proxy.index(r, col["subject"]).data() == facts.get("subject", "")
        assert w.proxy.index(r, col["timepoint"]).data() == facts.get("timepoint", "")
        assert w.proxy.index(r, col["status"]).data() == "unread"
