"""Write PNGs of the main views: ``python -m reviewapp.ui.screenshots OUTDIR [--record PATH]``.

Runs without a screen (offscreen Qt) at a fixed 96 dpi scale, so the images are reproducible.
"""

from __future__ import annotations

import argparse
import os
import shutil
import sys
import tempfile
from pathlib import Path

SIZE = (1760, 1120)
PX_PER_MM = 96.0 / 25.4


def _default_record() -> Path | None:
    from reviewapp.ui.app import sample_records_dir
    from reviewapp.ui.records_dock import list_records

    folder = sample_records_dir()
    if folder.is_dir():
        recs = list_records(folder)
        if recs:
            return recs[0]
    return None


def write_screenshots(outdir: Path, record_path: Path | None = None) -> list[Path]:
    from PySide6 import QtCore

    from reviewapp.ui.app import create_app
    from reviewapp.ui.main_window import MainWindow

    app = create_app()
    outdir.mkdir(parents=True, exist_ok=True)
    ini = outdir / ".screenshots-settings.ini"
    settings = QtCore.QSettings(str(ini), QtCore.QSettings.Format.IniFormat)
    settings.clear()
    # A demo reviewer id (the window asks for one at the first edit otherwise).
    settings.setValue("reader/id", "reader1")
    record_path = record_path or _default_record()
    if record_path is None:
        raise SystemExit("no sample record found; pass --record PATH")
    # Work on a copy of the record's folder: the demo corrections below are saved as a marks
    # sidecar, which must not land beside the original record. The whole folder is copied so
    # the worklist shows the folder's records as a reader would see them.
    tmp = tempfile.TemporaryDirectory(prefix="reviewapp-shots-")
    # The folder keeps its own name: the records dock's title shows it.
    folder = Path(tmp.name) / record_path.parent.name
    folder.mkdir()
    for f in record_path.parent.iterdir():
        if f.is_file() and ".marks." not in f.name:
            shutil.copy(f, folder / f.name)
    record_path = folder / record_path.name
    w = MainWindow(
        settings, px_per_mm=PX_PER_MM, speed_mm_per_s=25.0, gain_mm_per_mv=10.0, theme="light"
    )
    w.resize(*SIZE)
    w.show()
    if not w.open_path(record_path.parent, analyse_now=True):
        raise SystemExit(f"cannot open {record_path.parent}")
    if w.record is None or w.record.source_path != record_path:
        if not w.open_path(record_path, analyse_now=True):
            raise SystemExit(f"cannot open {record_path}")
    _wait_for_worklist(w, app)
    written: list[Path] = []

    def shot(name: str) -> None:
        for _ in range(3):
            app.processEvents()
        p = outdir / f"{name}.png"
        w.grab().save(str(p))
        written.append(p)

    def fit_if_needed() -> None:
        g = w.paper.geom
        if g is not None and g.height_mm * PX_PER_MM > w.paper.vb.height():
            w.view.fit_page()
        else:
            w.paper.true_size()

    w.view.set_layout("3x4+1")
    app.processEvents()
    w.paper.true_size()
    shot("worklist")
    w.view.set_layout("12x1")
    app.processEvents()
    fit_if_needed()
    shot("layout_12x1")
    w.view.set_layout("6x2")
    app.processEvents()
    w.paper.true_size()
    shot("layout_6x2")
    w.view.set_layout("3x4+1")
    app.processEvents()
    w.paper.true_size()
    _demo_calipers_and_correction(w)
    shot("layout_3x4_rhythm1")
    w.view.set_layout("3x4+3")
    app.processEvents()
    w.paper.true_size()
    shot("layout_3x4_rhythm3")
    w.view.show_median(True)
    w.median.set_superimpose(True)
    shot("median_beat")
    w.median.set_superimpose(False)
    # Back to automatic placement: the median beats fill the room below the page, whatever
    # the theme.
    w.view.set_median_automatic()
    w.view.set_theme("dark")
    w.view.set_layout("3x4+1")
    app.processEvents()
    w.paper.true_size()
    _demo_calipers_and_correction(w)
    shot("dark_3x4_rhythm1")
    w.view.show_median(True)
    w.median.set_superimpose(True)
    shot("dark_median_beat")
    w.median.set_superimpose(False)
    w.view.set_theme("light")
    _sign_off_and_compare(w, app, outdir, shot, written)
    _shared_record_shots(w, app, Path(tmp.name), shot)
    w.settings.clear()
    w.close()
    ini.unlink(missing_ok=True)
    tmp.cleanup()
    return written


# Records of other shapes, from the open reference data beside the checkout (PhysioNet; never
# copied into the repository): (picture, folder, record, layout).
SHARED_SHOTS = (
    ("qtdb_2lead", "qtdb", "sel100", "3x4+1"),
    ("ptb_15lead", "ptbdb", "s0010_re", "3x4+1"),
)


def shared_data_dir() -> Path:
    """The open reference records: REVIEWAPP_SHARED_DATA, else ../shared/data beside the
    checkout (the same place the tests look)."""
    repo = Path(__file__).resolve().parents[2]
    return Path(os.environ.get("REVIEWAPP_SHARED_DATA", repo.parent / "shared" / "data"))


def _shared_record_shots(w, app, scratch: Path, shot) -> None:
    """A 2-lead QTDB and a 15-lead PTB record (Frank X/Y/Z in their own group), each only
    when the reference data are present; each is read from a scratch copy so no marks or lock
    file lands beside the reference data."""
    from reviewapp.ui.reader import FIRST

    shared = shared_data_dir()
    w.settings.setValue("reader/id", "reader1")
    w.adapter.set_read_mode(FIRST)
    for name, folder, stem, layout in SHARED_SHOTS:
        files = sorted((shared / folder).glob(f"{stem}.*"))
        if not files:
            continue
        dst = scratch / "shared" / folder
        dst.mkdir(parents=True, exist_ok=True)
        for f in files:
            if f.suffix in (".hea", ".dat", ".xyz"):
                shutil.copy(f, dst / f.name)
        if not w.open_path(dst / f"{stem}.hea", analyse_now=True):
            continue
        w.view.set_layout(layout)
        w.view.set_median_automatic()
        app.processEvents()
        w.paper.true_size()
        shot(name)


def _wait_for_worklist(w, app) -> None:
    """Let the worklist's background listing finish, so its rows are in the image."""
    import time

    wl = w.worklist
    deadline = time.monotonic() + 20.0
    while wl is not None and wl.is_scanning() and time.monotonic() < deadline:
        app.processEvents()
        time.sleep(0.02)
    app.processEvents()
    if w.record is not None and w.record.source_path is not None:
        w.records.show_page(w.record.source_path)


def _demo_calipers_and_correction(w) -> None:
    """One time caliper over an RR interval, one amplitude caliper on an R wave, one corrected
    T end, so the images show what a reading looks like mid-review (once: a second call leaves
    the calipers already on the paper). The T ends are moved a little earlier, where a reader
    using the tangent method puts them (the steepest downslope of the T meets the baseline
    just before the wave is fully back on it): on a demo record the automatic mark is already
    where the generator ends the wave, so a later mark would sit on flat baseline."""
    from reviewapp.core.workflow import MarkTarget

    s = w.workflow
    if s is None or len(s.analysis.beats) < 3:
        return
    if w.paper.calipers:
        return
    beats = s.analysis.beats
    page_end = w.paper.page_start + w.paper.geom.page_samples
    on_page = [b for b in beats if w.paper.page_start <= b.r < page_end]
    if len(on_page) >= 3:
        c = w.paper.add_caliper("time", center_sample=on_page[1].r)
        if c is not None:
            c.set_legs(a=on_page[1].r, b=on_page[2].r)
        amp = w.paper.add_caliper("amplitude", center_sample=on_page[-2].r)
        if amp is not None:
            rec = w.record
            rhythm = next(cell for cell in w.paper.geom.layout.cells if cell.row == amp.row)
            v = float(rec.window(on_page[-2].r, on_page[-2].r + 1)[0, rec.lead_index(rhythm.lead)])
            amp.set_levels(a_mv=0.0, b_mv=round(v, 2))
    rep = s.reading.marked.representative
    t_end = MarkTarget("representative", "t_off")
    if rep is not None and rep.marks.t_off is not None and not s.is_corrected(t_end):
        s.move_mark(t_end, rep.marks.t_off - round(0.008 * s.fs_hz))
    mid = on_page[len(on_page) // 2] if on_page else None
    if mid is not None:
        i = beats.index(mid)
        wm = s.beat_marks()[i]
        beat_t_end = MarkTarget("beat", "t_off", beat_r=mid.r)
        if wm.t_off is not None and not s.is_corrected(beat_t_end):
            s.move_mark(beat_t_end, wm.t_off - round(0.012 * s.fs_hz))
    w._refresh_marks()


def _sign_off_and_compare(w, app, outdir: Path, shot, written: list[Path]) -> None:
    """The first reader signs off (confirm dialog, then the signed-off window); a blinded
    second reader corrects T end; an adjudicator compares both readings."""
    from PySide6 import QtCore, QtWidgets

    from reviewapp.core.workflow import MarkTarget
    from reviewapp.ui.reader import ADJUDICATOR, SECOND_BLINDED

    def confirm() -> None:
        dlg = w.adapter.sign_off_dialog
        if dlg is None:
            QtCore.QTimer.singleShot(20, confirm)
            return
        app.processEvents()
        p = outdir / "sign_off_confirm.png"
        dlg.grab().save(str(p))
        written.append(p)
        dlg.accept()

    w.view.set_median_automatic()
    # The first reader starts from the automatic statements and adds one of their own.
    if w.workflow is not None:
        w.interpretation.use_automatic()
        w.workflow.statements.add_free_text("Compare with the previous tracing.")
    QtCore.QTimer.singleShot(0, confirm)
    w.adapter.sign_off()
    shot("signed_off")
    w.interpretation_dock.raise_()
    shot("interpretation")
    w.reading_dock.raise_()
    s = w.workflow
    if s is None or s.store is None:
        return
    w.settings.setValue("reader/id", "reader2")
    w.adapter.set_read_mode(SECOND_BLINDED)
    rep = s.reading.marked.representative
    for fid, shift_s in (("t_off", -0.012), ("qrs_on", -0.004)):
        k = None if rep is None else rep.marks.get(fid)
        if k is not None:
            s.move_mark(MarkTarget("representative", fid), k + round(shift_s * s.fs_hz))
    # The second reader's interpretation differs in one statement.
    s.statements.start_from_automatic()
    if s.store is not None and s.store.reading.statements:
        s.statements.delete(s.store.reading.statements[-1].id)
    s.statements.add("axis.left_deviation")
    w._refresh_marks()
    shot("second_reader_blinded")
    w.settings.setValue("reader/id", "adj1")
    w.adapter.set_read_mode(ADJUDICATOR)
    w.adapter.open_compare()
    dlg = w.adapter.compare_dialog
    if dlg is None:
        return
    dlg.resize(980, 600)
    dlg.select_item("t_off")
    dlg.adjudicate("a")
    dlg.select_item("qt_ms")
    for _ in range(3):
        app.processEvents()
    p = outdir / "compare_readings.png"
    dlg.grab().save(str(p))
    written.append(p)
    dlg.tabs.setCurrentWidget(dlg.statements)
    if dlg.statements.rows:
        dlg.statements.table.selectRow(0)
        dlg.statements.adopt("a")
    for _ in range(3):
        app.processEvents()
    p = outdir / "compare_interpretation.png"
    dlg.grab().save(str(p))
    written.append(p)
    dlg.close()
    QtWidgets.QApplication.processEvents()


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(prog="python -m reviewapp.ui.screenshots", description=__doc__)
    ap.add_argument("outdir", type=Path)
    ap.add_argument(
        "--record", type=Path, default=None, help="record to show (default: first sample)"
    )
    args = ap.parse_args(argv)
    if not os.environ.get("DISPLAY") and not os.environ.get("WAYLAND_DISPLAY"):
        os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    for p in write_screenshots(args.outdir, args.record):
        print(p)
    return 0


if __name__ == "__main__":
    sys.exit(main())
