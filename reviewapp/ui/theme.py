"""Colours and pens for the paper and the window: a light and a dark theme.

Chosen for hours of reading: a quiet blue-grey grid that recedes behind a near-black (light) or
near-white (dark) trace, and marks that differ by line style and glyph as well as by colour.
"""

from __future__ import annotations

from dataclasses import dataclass

from PySide6 import QtGui, QtWidgets


@dataclass(frozen=True)
class Theme:
    name: str
    paper: str
    grid_minor: str
    grid_major: str
    trace: str
    trace_width_px: float
    superimposed: str
    text: str
    text_muted: str
    mark_p: str
    mark_qrs: str
    mark_t: str
    mark_corrected: str
    caliper: str
    caliper_selected: str
    window: str
    window_text: str
    base: str
    highlight: str


LIGHT = Theme(
    name="light",
    paper="#fbfaf6",
    grid_minor="#e4e8ec",
    grid_major="#bcc6cf",
    trace="#15191d",
    trace_width_px=1.4,
    superimposed="#9aa6b2",
    text="#1c2329",
    text_muted="#5b6670",
    mark_p="#2e7d5b",
    mark_qrs="#24639c",
    mark_t="#8a4fa3",
    mark_corrected="#b4470f",
    caliper="#0d7a86",
    caliper_selected="#c2185b",
    window="#eef0f2",
    window_text="#1c2329",
    base="#ffffff",
    highlight="#2f6fa8",
)

DARK = Theme(
    name="dark",
    paper="#14181c",
    grid_minor="#1f262d",
    grid_major="#33404b",
    trace="#e8edf1",
    trace_width_px=1.4,
    superimposed="#56636f",
    text="#dfe6ec",
    text_muted="#93a1ad",
    mark_p="#6cc39a",
    mark_qrs="#78b4e8",
    mark_t="#c99be0",
    mark_corrected="#f2a05a",
    caliper="#4fd1c5",
    caliper_selected="#ff79a8",
    window="#1c2126",
    window_text="#dfe6ec",
    base="#151a1e",
    highlight="#3a7cc0",
)

THEMES = {LIGHT.name: LIGHT, DARK.name: DARK}


def mark_colour(theme: Theme, fiducial: str) -> str:
    if fiducial.startswith("p_"):
        return theme.mark_p
    if fiducial.startswith("qrs_"):
        return theme.mark_qrs
    return theme.mark_t


def apply_palette(app: QtWidgets.QApplication, theme: Theme) -> None:
    """Window colours to match the paper, so a dark reading room gets a dark window too."""
    pal = QtGui.QPalette()
    role = QtGui.QPalette.ColorRole
    pal.setColor(role.Window, QtGui.QColor(theme.window))
    pal.setColor(role.WindowText, QtGui.QColor(theme.window_text))
    pal.setColor(role.Base, QtGui.QColor(theme.base))
    pal.setColor(role.AlternateBase, QtGui.QColor(theme.window))
    pal.setColor(role.Text, QtGui.QColor(theme.window_text))
    pal.setColor(role.Button, QtGui.QColor(theme.window))
    pal.setColor(role.ButtonText, QtGui.QColor(theme.window_text))
    pal.setColor(role.ToolTipBase, QtGui.QColor(theme.base))
    pal.setColor(role.ToolTipText, QtGui.QColor(theme.window_text))
    pal.setColor(role.Highlight, QtGui.QColor(theme.highlight))
    pal.setColor(role.HighlightedText, QtGui.QColor("#ffffff"))
    pal.setColor(role.PlaceholderText, QtGui.QColor(theme.text_muted))
    app.setPalette(pal)
