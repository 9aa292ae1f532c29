"""Which reading the exported report prints, and says it prints: the record's final reading
(``core.marks.final.resolve_final``: a signed adjudication over the chosen reading, else the
first reader's signed reading) with its flags ("readers differ", "no adjudication") and the
reader, their role and the reading status; or, with ``--reviewer``, that reader's own reading,
said to be not the final one.

Readings are made through the marks store as readers' windows would, on a copy of a demo
record; the report goes through ``reviewapp export`` (CSV and PDF) and File > Export in the
window. Reference for the values: QT = T end - QRS onset (the definition), from the marks the
readers set, not from the report code.
"""

from __future__ import annotations

import csv
import shutil
from pathlib import Path

import pytest

from reviewapp.cli import main
from reviewapp.core.engine import analyse
from reviewapp.core.io import open_record
from reviewapp.core.marks import MarksStore

RECORD = "s003_post6h"
FIRST_S, SECOND_S, ADJ_S = 0.010, 0.040, 0.024  # T end moved later by each reader


@pytest.fixture
def double_read(sample_records_dir, tmp_path) -> dict:
    """A first and a second reader, both signed, 30 ms apart on T end; no adjudication."""
    if not (sample_records_dir / f"{RECORD}.hea").exists():
        pytest.skip("no sample_records folder in this checkout")
    for f in sample_records_dir.glob(f"{RECORD}.*"):
        if ".marks." not in f.name:
            shutil.copy(f, tmp_path / f.name)
    hea = tmp_path / f"{RECORD}.hea"
    record = open_record(hea)
    an = analyse(record)
    rep = an.representative
    t_off = (rep.marks.t_off - rep.r_index) / an.fs_hz
    qrs_on = (rep.marks.qrs_on - rep.r_index) / an.fs_hz
    for reviewer, role, shift in (("reader1", "first", FIRST_S), ("reader2", "second", SECOND_S)):
        with MarksStore.open(record, reviewer, role=role) as st:
            st.do(st.edits.move_fiducial("t_off", t_off + shift))
            st.do(st.edits.sign_off())
    return {"hea": hea, "record": record, "t_off": t_off, "qrs_on": qrs_on}


def _csv(path: Path) -> tuple[dict[str, dict[str, str]], list[str]]:
    rows = list(csv.reader(path.read_text().splitlines()))
    head = rows[0]
    values = {
        r[1]: dict(zip(head, r, strict=False)) for r in rows[1:] if r and r[0] and r[0][0] != "#"
    }
    comments = [r[0] for r in rows if r and r[0].startswith("#")]
    return values, comments


def _qt_ms(d: dict, shift_s: float) -> float:
    return (d["t_off"] + shift_s - d["qrs_on"]) * 1000.0


def _export_csv(hea: Path, out: Path, *extra: str) -> tuple[dict, list[str]]:
    assert main(["export", str(hea), "--csv", str(out), *extra]) == 0
    return _csv(out)


def test_the_final_reading_of_a_double_read_says_readers_differ_and_no_adjudication(
    double_read, tmp_path
):
    values, comments = _export_csv(double_read["hea"], tmp_path / "r.csv")
    qt = values["qt_ms"]
    # The first reader's signed reading is final (never an average of the two).
    assert float(qt["value"]) == pytest.approx(_qt_ms(double_read, FIRST_S), abs=0.5)
    assert (qt["reading_status"], qt["reviewer"]) == ("signed_off", "reader1")
    (printed,) = [c for c in comments if c.startswith("# Printed:")]
    assert "final reading: reader1's signed reading (first reader)" in printed
    assert "Readers differ, no adjudication" in printed
    assert "QT reader1" in printed and "30 ms apart (tolerance 10 ms)" in printed


def test_a_signed_adjudication_is_printed_as_the_final_reading(double_read, tmp_path):
    with MarksStore.open(double_read["record"], "adj1", role="adjudicator") as st:
        st.do(st.edits.move_fiducial("t_off", double_read["t_off"] + ADJ_S))
        st.do(st.edits.sign_off())
    values, comments = _export_csv(double_read["hea"], tmp_path / "r.csv")
    qt = values["qt_ms"]
    assert float(qt["value"]) == pytest.approx(_qt_ms(double_read, ADJ_S), abs=0.5)
    assert (qt["reading_status"], qt["reviewer"]) == ("adjudicated", "adj1")
    (printed,) = [c for c in comments if c.startswith("# Printed:")]
    assert "final reading: adjudicated by adj1 over reader1's signed reading" in printed
    assert "Readers differ, adjudicated" in printed and "no adjudication" not in printed
    # The page says it too: status, the adjudicator with their role, the flag.
    from tests.report.test_report_page import _squash, pdf_text

    pdf = tmp_path / "r.pdf"
    assert main(["export", str(double_read["hea"]), "--pdf", str(pdf)]) == 0
    text = _squash(pdf_text(pdf.read_bytes())).replace("\ufb00", "ff")  # the "ff" ligature
    assert "ADJUDICATED(finalreading)" in text and "adj1(adjudicator)" in text
    assert "readersdiffer,adjudicated" in text


def test_one_readers_own_reading_names_the_role_and_is_not_called_final(double_read, tmp_path):
    values, comments = _export_csv(double_read["hea"], tmp_path / "r.csv", "--reviewer", "reader2")
    qt = values["qt_ms"]
    assert float(qt["value"]) == pytest.approx(_qt_ms(double_read, SECOND_S), abs=0.5)
    assert qt["reviewer"] == "reader2"
    (printed,) = [c for c in comments if c.startswith("# Printed:")]
    assert "reader2's own reading (second reader)" in printed
    assert "not the final reading" in printed
