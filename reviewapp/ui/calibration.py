"""Screen calibration: the reader matches an on-screen bar to a real ruler or an ID-1 card.

The result (logical pixels per millimetre) is stored with QSettings per screen, so each monitor
keeps its own; until then the screen's reported physical size is used.
"""

from __future__ import annotations

from PySide6 import QtCore, QtGui, QtWidgets

from reviewapp.ui.paper import (
    ID1_CARD_WIDTH_MM,
    physical_px_per_mm,
    screen_key,
    screen_px_per_mm,
    store_px_per_mm,
)

TARGETS = (
    (f"Bank / ID card width ({ID1_CARD_WIDTH_MM:.2f} mm, ISO/IEC 7810 ID-1)", ID1_CARD_WIDTH_MM),
    ("Ruler: 100 mm", 100.0),
    ("Ruler: 50 mm", 50.0),
)


class _Bar(QtWidgets.QWidget):
    """A bar ``length_mm`` long at ``px_per_mm``, with millimetre ticks like a ruler."""

    def __init__(self, parent=None) -> None:
        super().__init__(parent)
        self.length_mm = ID1_CARD_WIDTH_MM
        self.px_per_mm = 96 / 25.4
        self.setMinimumHeight(90)

    def bar_width_px(self) -> float:
        return self.length_mm * self.px_per_mm

    def paintEvent(self, ev) -> None:
        p = QtGui.QPainter(self)
        p.setRenderHint(QtGui.QPainter.RenderHint.Antialiasing, True)
        pal = self.palette()
        fg = pal.color(QtGui.QPalette.ColorRole.WindowText)
        x0, y0 = 20.0, 20.0
        w = self.bar_width_px()
        p.fillRect(QtCore.QRectF(x0, y0, w, 36), pal.color(QtGui.QPalette.ColorRole.Highlight))
        p.setPen(QtGui.QPen(fg, 1))
        mm = 0
        while mm <= self.length_mm + 1e-9:
            x = x0 + mm * self.px_per_mm
            h = 14 if mm % 10 == 0 else (9 if mm % 5 == 0 else 5)
            p.drawLine(QtCore.QPointF(x, y0 + 36), QtCore.QPointF(x, y0 + 36 + h))
            mm += 1
        p.drawLine(QtCore.QPointF(x0 + w, y0 - 6), QtCore.QPointF(x0 + w, y0 + 50))
        p.end()


class CalibrationDialog(QtWidgets.QDialog):
    def __init__(
        self, screen: QtGui.QScreen | None, settings: QtCore.QSettings, parent=None
    ) -> None:
        super().__init__(parent)
        self.setWindowTitle("Calibrate screen scale")
        self.screen_ = screen
        self.settings = settings
        self.bar = _Bar()
        self.target = QtWidgets.QComboBox()
        for text, mm in TARGETS:
            self.target.addItem(text, mm)
        self.spin = QtWidgets.QDoubleSpinBox()
        self.spin.setRange(1.0, 60.0)
        self.spin.setDecimals(4)
        self.spin.setSingleStep(0.005)
        self.spin.setSuffix(" px/mm")
        self.slider = QtWidgets.QSlider(QtCore.Qt.Orientation.Horizontal)
        self.slider.setRange(1000, 60000)
        info = QtWidgets.QLabel(
            "Hold a ruler or a bank/ID card against the screen and stretch the bar until its "
            "right edge meets the end of the ruler length or the card's edge. The paper is then "
            "true size: at 25 mm/s one second is 25 mm on the glass."
        )
        info.setWordWrap(True)
        reported = physical_px_per_mm(screen)
        self.reported_label = QtWidgets.QLabel(
            f"Screen reports {reported:.3f} px/mm ({reported * 25.4:.0f} dpi). "
            f"Stored under {screen_key(screen)}."
        )
        reset = QtWidgets.QPushButton("Use the screen's reported size")
        reset.clicked.connect(lambda: self.set_value(reported))
        buttons = QtWidgets.QDialogButtonBox(
            QtWidgets.QDialogButtonBox.StandardButton.Save
            | QtWidgets.QDialogButtonBox.StandardButton.Cancel
        )
        buttons.accepted.connect(self.accept)
        buttons.rejected.connect(self.reject)
        form = QtWidgets.QFormLayout()
        form.addRow("Match against", self.target)
        form.addRow("Scale", self.spin)
        lay = QtWidgets.QVBoxLayout(self)
        lay.addWidget(info)
        lay.addLayout(form)
        lay.addWidget(self.slider)
        lay.addWidget(self.bar)
        lay.addWidget(self.reported_label)
        lay.addWidget(reset)
        lay.addWidget(buttons)
        self.target.currentIndexChanged.connect(self._target_changed)
        self.spin.valueChanged.connect(self._spin_changed)
        self.slider.valueChanged.connect(lambda v: self.spin.setValue(v / 1000.0))
        self.set_value(screen_px_per_mm(screen, settings))
        self._target_changed()
        self.resize(max(560, int(130 * self.value()) + 60), 320)

    def value(self) -> float:
        return float(self.spin.value())

    def set_value(self, px_per_mm: float) -> None:
        self.spin.setValue(px_per_mm)

    def _spin_changed(self, v: float) -> None:
        self.slider.blockSignals(True)
        self.slider.setValue(round(v * 1000))
        self.slider.blockSignals(False)
        self.bar.px_per_mm = v
        self.bar.setMinimumWidth(int(self.bar.bar_width_px() + 40))
        self.bar.update()

    def _target_changed(self) -> None:
        self.bar.length_mm = float(self.target.currentData())
        self._spin_changed(self.value())

    def accept(self) -> None:
        store_px_per_mm(self.screen_, self.value(), self.settings)
        super().accept()
