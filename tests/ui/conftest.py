"""Fixtures for the window tests: a real 12-lead record (PTB s0010_re via wfdb) and a window
with its own settings file and a fixed screen scale."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

PX_PER_MM = 4.0  # a round scale so pixel arithmetic in the tests is easy to follow


@pytest.fixture(scope="session")
def ptb_12lead(shared_data: Path):
    """PTB s0010_re, the 12 standard leads, 10 s at 1000 Hz, read with wfdb (the reference
    reader) and wrapped with ``record_from_array``."""
    import wfdb

    from reviewapp.core.record import record_from_array

    w = wfdb.rdrecord(str(shared_data / "ptbdb" / "s0010_re"), sampto=10_000)
    names = [n for n in w.sig_name][:12]
    return record_from_array(
        np.asarray(w.p_signal[:, :12], dtype=np.float32),
        float(w.fs),
        names,
        name="s0010_re",
        source_format="WFDB",
    )


@pytest.fixture(scope="session")
def ptb_analysis(ptb_12lead):
    from reviewapp.core.engine import analyse

    return analyse(ptb_12lead)


@pytest.fixture
def settings(tmp_path):
    from PySide6 import QtCore

    return QtCore.QSettings(str(tmp_path / "settings.ini"), QtCore.QSettings.Format.IniFormat)


@pytest.fixture
def window(qtbot, settings):
    from reviewapp.ui.main_window import MainWindow

    w = MainWindow(settings, px_per_mm=PX_PER_MM, speed_mm_per_s=25.0, gain_mm_per_mv=10.0)
    w.resize(1600, 1000)
    qtbot.addWidget(w)
    w.show()
    qtbot.waitExposed(w)
    return w


@pytest.fixture
def loaded(window, ptb_12lead, ptb_analysis, monkeypatch):
    """The window showing PTB s0010_re with its analysis (analysed once per session)."""
    import reviewapp.core.engine as engine

    monkeypatch.setattr(engine, "analyse", lambda rec, **kw: ptb_analysis)
    window.load_record(ptb_12lead, analyse_now=True)
    assert window.session is not None
    return window
