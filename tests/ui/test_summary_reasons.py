"""The reasons and cautions under the measurements, as a reader sees them after moving from
one record to another: only the current record's, never painted over the previous record's
list, and each value named in words (never by a field name such as ``qrs_t_angle_deg``).

Records: QTDB sel100 (2 leads, no limb leads, so the axes and voltages have reasons) and PTB
s0010_re (15 leads, QRS >= 120 ms), PhysioNet, through the ``shared_data`` fixture; copied
to a temporary folder so no marks or lock file lands beside the reference data.
"""

from __future__ import annotations

import re
import shutil

from PySide6 import QtWidgets


def _copy(shared_data, tmp_path, folder: str, stem: str):
    for f in (shared_data / folder).glob(f"{stem}.*"):
        if f.suffix in (".hea", ".dat", ".xyz"):
            shutil.copy(f, tmp_path / f.name)
    return tmp_path / f"{stem}.hea"


def test_the_reasons_list_follows_the_record_and_names_values_in_words(
    window, qtbot, shared_data, tmp_path
):
    w = window
    qtdb = _copy(shared_data, tmp_path, "qtdb", "sel100")
    ptb = _copy(shared_data, tmp_path, "ptbdb", "s0010_re")
    assert w.open_path(qtdb, analyse_now=True)
    box = w.summary.reasons_box
    first = w.summary.reason_texts()
    assert first  # no limb leads: the axes and the voltages cannot be measured
    field_name = re.compile(r"\b[a-z]+(?:_[a-z]+)+\b")  # e.g. qrs_t_angle_deg
    for text in first:
        assert not field_name.search(text), text
    assert w.open_path(ptb, analyse_now=True)
    second = w.summary.reason_texts()
    assert second and second != first
    # What is painted is exactly the current list: the previous record's labels are gone
    # from the screen at once (not left under the new ones until the event loop deletes them).
    shown = [
        lab.text().removeprefix("• ")
        for lab in box.findChildren(QtWidgets.QLabel)
        if lab.isVisibleTo(box)
    ]
    assert shown == second
