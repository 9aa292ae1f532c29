"""`reviewapp export`: reviewer-corrected fiducials to WFDB (read back with wfdb.rdann, the
reference reader), the measurements CSV, and clear errors.

Record: LUDB record 1 (PhysioNet, via the shared_data fixture), copied into tmp.
"""

from __future__ import annotations

import csv
import shutil
from pathlib import Path

import numpy as np
import pytest
import wfdb

from reviewapp.cli import main
from reviewapp.core.engine import analyse
from reviewapp.core.io import open_record
from reviewapp.core.marks import MarksStore
from reviewapp.report.content import load_report_content
from reviewapp.report.export import write_wfdb_annotations


@pytest.fixture
def reviewed_record(tmp_path: Path, shared_data: Path) -> Path:
    for ext in (".hea", ".dat"):
        shutil.copy(shared_data / "ludb" / f"1{ext}", tmp_path / f"1{ext}")
    path = tmp_path / "1.hea"
    a = analyse(open_record(path))
    fs = a.fs_hz
    beat = a.beats[3]
    t_off_auto = a.beat_marks[3].t_off
    assert t_off_auto is not None
    with MarksStore.open(open_record(path), "reader1") as store:
        # The reader moves T end of beat 4 by +20 ms, and the global QRS end of the median beat.
        store.do(
            store.edits.move_fiducial(
                "t_off", (t_off_auto + 10) / fs, scope="beat", beat_r_s=beat.r / fs
            )
        )
        rep = a.representative
        assert rep is not None and rep.marks.qrs_off is not None
        store.do(store.edits.move_fiducial("qrs_off", (rep.marks.qrs_off - rep.r_index + 5) / fs))
    return path


def _rdann_waves(folder: Path, name: str, ext: str) -> dict[str, list[int]]:
    """Onsets/offsets per wave from the annotation file, LUDB convention: "(" peak ")"."""
    ann = wfdb.rdann(str(folder / name), ext)
    sym, smp = list(ann.symbol), np.asarray(ann.sample)
    out: dict[str, list[int]] = {k: [] for k in ("p_on", "p_off", "qrs_on", "qrs_off", "t_off")}
    wave = {"p": "p", "N": "qrs", "t": "t"}
    for i, s in enumerate(sym):
        if s in wave or (s not in "()" and s.isalpha()):
            w = wave.get(s, "qrs")
            if i > 0 and sym[i - 1] == "(" and w != "t":
                out[f"{w}_on"].append(int(smp[i - 1]))
            if i + 1 < len(sym) and sym[i + 1] == ")":
                out[f"{w}_off"].append(int(smp[i + 1]))
    return out


def test_wfdb_annotations_read_back_to_the_final_fiducials(reviewed_record: Path):
    content = load_report_content(reviewed_record)
    assert content.status == "in_progress" and content.reviewer == "reader1"
    assert content.n_corrected == 2
    out = write_wfdb_annotations(content)
    assert out == reviewed_record.with_suffix(".rvw")
    got = _rdann_waves(out.parent, "1", "rvw")
    for fid in ("p_on", "p_off", "qrs_on", "qrs_off", "t_off"):
        want = sorted(
            getattr(m, fid) for m in content.final_beat_marks if getattr(m, fid) is not None
        )
        assert sorted(got[fid]) == want, fid
    # The corrected T end is in the file, the automatic one it replaced is not.
    pair = content.beat_marks[3][4]
    assert pair.fiducial == "t_off" and pair.corrected
    assert pair.final in got["t_off"] and pair.auto not in got["t_off"]
    assert wfdb.rdann(str(out.parent / "1"), "rvw").fs == pytest.approx(500.0)


def test_export_command_writes_every_output(reviewed_record: Path, tmp_path: Path, capsys):
    pdf, png, csv_path = tmp_path / "r.pdf", tmp_path / "r.png", tmp_path / "r.csv"
    rc = main(
        [
            "export",
            str(reviewed_record),
            "--pdf",
            str(pdf),
            "--png",
            str(png),
            "--csv",
            str(csv_path),
            "--wfdb-annotations",
            "--paper",
            "letter",
            "--dpi",
            "100",
        ]
    )
    assert rc == 0, capsys.readouterr().err
    assert pdf.stat().st_size > 10_000 and png.stat().st_size > 10_000
    assert (reviewed_record.parent / "1.rvw").is_file()
    with open(csv_path, newline="") as fh:
        rows = [r for r in csv.DictReader(fh) if r["quantity"]]
    by_q = {r["quantity"]: r for r in rows if not r["record"].startswith("#")}
    # The CSV holds the values recomputed with the reader's corrections (not the automatic).
    content = load_report_content(reviewed_record)
    qrs = next(r for r in content.rows if r.quantity == "qrs_ms")
    assert by_q["qrs_ms"]["value"] == f"{qrs.value:.0f}"  # as the page prints it
    assert by_q["qrs_ms"]["marks"] == "reviewer-corrected"
    assert by_q["qrs_ms"]["reading_status"] == "in_progress"
    auto = analyse(open_record(reviewed_record)).reading().measurements.intervals.qrs_ms
    assert qrs.value == pytest.approx(auto + 10.0, abs=2.1)  # QRS end moved +5 samples = 10 ms


def test_export_errors_are_one_clear_line(tmp_path: Path, capsys):
    assert main(["export", str(tmp_path / "nope.hea"), "--pdf", str(tmp_path / "x.pdf")]) == 2
    err = capsys.readouterr().err
    assert "nope.hea" in err and "Traceback" not in err
    assert main(["export", str(tmp_path / "nope.hea")]) == 2
    assert "nothing to export" in capsys.readouterr().err


def test_export_of_a_reviewer_without_a_reading_is_refused(reviewed_record: Path, tmp_path, capsys):
    rc = main(
        [
            "export",
            str(reviewed_record),
            "--pdf",
            str(tmp_path / "x.pdf"),
            "--reviewer",
            "someone-else",
        ]
    )
    assert rc == 2
    err = capsys.readouterr().err
    assert "someone-else" in err and "1.marks.json" in err
    assert not (tmp_path / "x.pdf").exists()


# --- subject facts, marks key, command options, CSV columns ---------------------------------


def _pdf_text(path: Path) -> str:
    from tests.report.test_report_page import _squash, pdf_text

    return _squash(pdf_text(path.read_bytes()))


def test_subject_facts_and_time_point_are_printed(tmp_path: Path, shared_data: Path):
    """A WFDB header written by wfdb.wrsamp (the reference writer) with QT-study comments;
    the subject facts and the time point come back on the page. The signal is LUDB record 1's
    (PhysioNet); the comments are invented for this test."""
    src = wfdb.rdrecord(str(shared_data / "ludb" / "1"))
    wfdb.wrsamp(
        "study1",
        fs=src.fs,
        units=src.units,
        sig_name=src.sig_name,
        p_signal=src.p_signal,
        fmt=["16"] * src.n_sig,
        comments=["subject: S-042", "age: 61", "sex: female", "timepoint: post-dose 2 h"],
        write_dir=str(tmp_path),
    )
    pdf = tmp_path / "study1.pdf"
    assert main(["export", str(tmp_path / "study1.hea"), "--pdf", str(pdf)]) == 0
    text = _pdf_text(pdf)
    assert "SubjectS-042" in text and "61y" in text and "female" in text
    assert "timepoint:post-dose2h" in text


def test_qtdb_header_age_and_sex_are_printed(tmp_path: Path, shared_data: Path):
    """QTDB sel100's header comment "69 M ..." (PhysioNet): 69 years, male."""
    for ext in (".hea", ".dat"):
        shutil.copy(shared_data / "qtdb" / f"sel100{ext}", tmp_path / f"sel100{ext}")
    pdf = tmp_path / "sel100.pdf"
    assert main(["export", str(tmp_path / "sel100.hea"), "--pdf", str(pdf)]) == 0
    text = _pdf_text(pdf)
    assert "69y" in text and "male" in text and "SubjectIDnotstated" in text


def _ink(rgb: np.ndarray, x0_px: int, x1_px: int, y0_px: int, y1_px: int) -> np.ndarray:
    """Inked, non-red pixels (grey or blue marks and text, not the red grid) in a box."""
    a = rgb[y0_px:y1_px, x0_px:x1_px].astype(int)
    return (a.min(axis=2) < 190) & ((a[..., 0] - a[..., 1]) < 30)


def test_marks_are_glyphs_in_their_lanes_with_a_key(reviewed_record: Path, tmp_path: Path):
    """Each boundary sits in its own lane (P, QRS, T) under the rhythm strip at its true-scale
    position (x = trace start + t x 25 mm/s); onsets have a foot pointing right, ends left; the
    corrected T end carries a dot the automatic ones do not; the key is printed."""
    from reviewapp.report.export import render_page, write_pdf
    from reviewapp.report.layout import page_layout

    content = load_report_content(reviewed_record)
    lo = page_layout("a4")
    dpi = 400.0
    k = dpi / 25.4
    from tests.report.test_report_page import _qimage_to_array

    img = _qimage_to_array(render_page(content, lo, dpi=dpi)[0])
    lanes = lo.lanes(3)
    fs = content.fs_hz
    checked = {"onset": 0, "end": 0}
    for row in content.beat_marks:
        for m in row:
            if m.final is None or not (0.2 < m.final / fs < lo.shown_s - 0.2):
                continue
            lane = lanes[{"p": "P", "qrs": "QRS", "t": "T"}[m.fiducial.rsplit("_", 1)[0]]]
            x = lo.x_of(m.final / fs)
            # The stroke: ink in the middle of its lane at x.
            mid = _ink(
                img,
                round((x - 0.15) * k),
                round((x + 0.15) * k) + 1,
                round((lane.y + 1.0) * k),
                round((lane.y + 1.5) * k),
            )
            assert mid.any(), (m.fiducial, m.final)
            # The foot, along the lane's bottom: right of x for an onset, left for an end.
            y_foot = (round((lane.bottom - 0.45) * k), round((lane.bottom - 0.15) * k))
            right = _ink(img, round((x + 0.3) * k), round((x + 0.6) * k), *y_foot).any()
            left = _ink(img, round((x - 0.6) * k), round((x - 0.3) * k), *y_foot).any()
            if m.fiducial.endswith("_on"):
                assert right and not left, (m.fiducial, m.final)
                checked["onset"] += 1
            else:
                assert left and not right, (m.fiducial, m.final)
                checked["end"] += 1
            # A dot on top for a reviewer-corrected mark only (shape, not colour alone): the
            # strokes start 0.3 mm below the lane top, the dot reaches above them.
            above = _ink(
                img,
                round((x - 0.3) * k),
                round((x + 0.3) * k),
                round((lane.y + 0.05) * k),
                round((lane.y + 0.22) * k),
            )
            assert above.any() == m.corrected, (m.fiducial, m.final, m.corrected)
    assert checked["onset"] > 10 and checked["end"] > 10
    assert any(m.corrected for row in content.beat_marks for m in row)
    pdf = tmp_path / "key.pdf"
    write_pdf(pdf, content, lo)
    text = _pdf_text(pdf)
    for words in (
        "lanesP/QRS/T",
        "onset",
        "end",
        "thin:automatic",
        "reviewer-corrected",
        "dotted:automaticpositionreplaced",
    ):
        assert words in text, words


@pytest.mark.parametrize(
    ("option", "value", "message"),
    [("--speed", "33", "standard paper speed"), ("--gain", "7", "standard gain")],
)
def test_non_standard_speed_and_gain_are_refused(tmp_path: Path, capsys, option, value, message):
    with pytest.raises(SystemExit) as exc:
        main(["export", str(tmp_path / "x.hea"), "--pdf", str(tmp_path / "x.pdf"), option, value])
    assert exc.value.code == 2
    err = capsys.readouterr().err
    assert message in err and value in err
    assert not (tmp_path / "x.pdf").exists()


def test_standard_settings_are_accepted():
    from reviewapp.cli import build_parser

    args = build_parser().parse_args(["export", "r.hea", "--speed", "12.5", "--gain", "2.5"])
    assert (args.speed, args.gain) == (12.5, 2.5)
    args = build_parser().parse_args(["export", "r.hea", "--speed", "100", "--gain", "40"])
    assert (args.speed, args.gain) == (100.0, 40.0)


@pytest.mark.parametrize(
    ("target", "message"),
    [
        ("folder", "is a folder"),
        ("missing/x.pdf", "does not exist"),
        ("page.png", "ending in .pdf"),
    ],
)
def test_unwritable_pdf_target_is_one_clear_line(tmp_path: Path, capfd, target, message):
    (tmp_path / "folder").mkdir()
    out = tmp_path / target
    rc = main(["export", str(tmp_path / "nope.hea"), "--pdf", str(out)])
    assert rc == 2
    captured = capfd.readouterr()  # file-descriptor level: Qt's own warnings would show here
    err = captured.err.strip()
    assert len(err.splitlines()) == 1 and message in err and str(out) in err
    assert "QPainter" not in captured.err and "Traceback" not in captured.err


def test_image_format_follows_the_suffix(reviewed_record: Path, tmp_path: Path, capsys):
    from PySide6.QtGui import QImageReader

    jpg = tmp_path / "page.jpg"
    assert main(["export", str(reviewed_record), "--png", str(jpg), "--dpi", "60"]) == 0
    # JPEG SOI marker FF D8 (ISO/IEC 10918-1) and Qt's reader agrees.
    assert jpg.read_bytes()[:2] == b"\xff\xd8"
    assert bytes(QImageReader(str(jpg)).format().data()).lower() in (b"jpeg", b"jpg")
    png = tmp_path / "page.png"
    assert main(["export", str(reviewed_record), "--png", str(png), "--dpi", "60"]) == 0
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (ISO/IEC 15948)
    capsys.readouterr()
    assert main(["export", str(reviewed_record), "--png", str(tmp_path / "page.gif")]) == 2
    assert ".png or .jpg" in capsys.readouterr().err
    assert not (tmp_path / "page.gif").exists()


def test_csv_to_stdout_has_all_qtc_formulas_axes_hr_rr(
    reviewed_record: Path, tmp_path: Path, capsys, monkeypatch
):
    """'--csv -' writes to standard output (no file named '-'). The rows are the global columns
    of `reviewapp measure`'s CSV, with the same values; the four QTc values agree with the
    published formulas applied to the CSV's own QT and RR:
    Bazett 1920: QT / sqrt(RR s); Fridericia 1920: QT / RR^(1/3);
    Framingham (Sagie et al., Am J Cardiol 1992): QT + 154 (1 - RR s);
    Hodges et al. (JACC 1983): QT + 1.75 (HR - 60), HR = 60 / RR s."""
    from reviewapp.core.measure.output import CSV_COLUMNS, csv_row, reading_to_dict
    from reviewapp.report.content import QUANTITIES

    monkeypatch.chdir(tmp_path)
    assert main(["export", str(reviewed_record), "--csv", "-"]) == 0
    out = capsys.readouterr().out
    assert not (tmp_path / "-").exists()
    assert "wrote" not in out  # progress goes to stderr, the CSV stays clean
    rows = [r for r in csv.DictReader(out.splitlines()) if r["quantity"]]
    by_q = {r["quantity"]: r for r in rows}
    want = {
        "rr_ms",
        "hr_bpm",
        "qt_ms",
        "qtc_bazett_ms",
        "qtc_fridericia_ms",
        "qtc_framingham_ms",
        "qtc_hodges_ms",
        "p_axis_deg",
        "qrs_axis_deg",
        "t_axis_deg",
    }
    assert want <= set(by_q)
    assert [q for q, *_ in QUANTITIES] == [c for c in CSV_COLUMNS if c in by_q]
    # Same values as `reviewapp measure` under the same reviewer marks.
    content = load_report_content(reviewed_record)
    a = analyse(open_record(reviewed_record))
    from reviewapp.batch.sidecar_adapter import reading_for_report

    chosen = reading_for_report(a.record, a, None)
    measured = csv_row(reading_to_dict(a, a.reading(chosen.overrides)))
    for q in (q for q, *_ in QUANTITIES):  # the global rows (other rows hold reasons only)
        if measured[q] is None:
            assert by_q[q]["value"] == ""
        else:
            # The report CSV prints values as the page does (whole ms, bpm, degrees; 0.01 mV).
            assert float(by_q[q]["value"]) == pytest.approx(measured[q], abs=0.51), q
    assert content.status == by_q["qt_ms"]["reading_status"]
    qt, rr = float(by_q["qt_ms"]["value"]), float(by_q["rr_ms"]["value"])
    rr_s = rr / 1000.0
    hr = 60.0 / rr_s
    # The CSV rounds QT, RR and each QTc to 1 ms: up to 0.5 ms on QTc itself plus 0.5 ms of QT
    # (times <= 1.3 for RR >= 0.6 s) and a negligible share of RR's 0.5 ms.
    tol = 1.2
    assert float(by_q["qtc_bazett_ms"]["value"]) == pytest.approx(qt / rr_s**0.5, abs=tol)
    assert float(by_q["qtc_fridericia_ms"]["value"]) == pytest.approx(qt / rr_s ** (1 / 3), abs=tol)
    assert float(by_q["qtc_framingham_ms"]["value"]) == pytest.approx(
        qt + 154.0 * (1 - rr_s), abs=tol
    )
    assert float(by_q["qtc_hodges_ms"]["value"]) == pytest.approx(qt + 1.75 * (hr - 60.0), abs=tol)
    assert float(by_q["hr_bpm"]["value"]) == pytest.approx(hr, abs=0.6)  # whole bpm
    assert out.rstrip().splitlines()[-1].startswith("# ")  # the clinical caution closes it
