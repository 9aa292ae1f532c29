"""Words under the strip naming each beat that is not of the dominant rhythm.

A premature, paced or unclassified beat is left out of the median beat and of the dominant
heart rate; the reader should see which beats those are without opening anything. One small
muted word per such beat, centred under its R, in the page's bottom margin (below the display
filters line), with a tooltip saying what follows from it.
"""

from __future__ import annotations

import pyqtgraph as pg
from PySide6 import QtGui

from reviewapp.core.fiducials import Beat, BeatKind
from reviewapp.ui.geometry import BOTTOM_MARGIN_MM, PageGeometry
from reviewapp.ui.theme import Theme

TAG_TEXT = {
    BeatKind.PREMATURE: "premature",
    BeatKind.PACED: "paced",
    BeatKind.UNKNOWN: "unclassified",
}
_CONSEQUENCE = {
    BeatKind.PREMATURE: "early beat: left out of the median beat and of the dominant heart rate",
    BeatKind.UNKNOWN: "shape unlike the dominant beats: left out of the median beat",
}
# Below the footer line (which sits 1.5 mm under the last row), inside the bottom margin.
TAG_BELOW_ROWS_MM = 5.0


def tag_for(beat: Beat) -> str | None:
    """The word under ``beat``, or None for a beat of the dominant rhythm (a paced dominant
    rhythm too: every beat is paced there, so each gets the word)."""
    if beat.kind == BeatKind.DOMINANT:
        return None
    return TAG_TEXT.get(beat.kind)


def beat_tag_items(
    beats: tuple[Beat, ...], geom: PageGeometry, fs_hz: float, theme: Theme
) -> list[pg.TextItem]:
    """TextItems (paper mm coordinates) for the beats of the page at ``geom``."""
    end = geom.page_start + geom.page_samples
    y = geom.height_mm - BOTTOM_MARGIN_MM + TAG_BELOW_ROWS_MM
    font = QtGui.QFont()
    font.setPointSizeF(8.5)
    items: list[pg.TextItem] = []
    for beat in beats:
        text = tag_for(beat)
        if text is None or not geom.page_start <= beat.r < end:
            continue
        item = pg.TextItem(text, color=theme.text_muted, anchor=(0.5, 0))
        item.setFont(font)
        item.setPos(geom.x_of_sample(beat.r), y)
        why = _CONSEQUENCE.get(beat.kind)
        if beat.kind == BeatKind.PACED:
            why = (
                "pacing stimulus just before the QRS"
                + ("" if beat.in_dominant_rhythm else "; left out of the median beat")
                + "; infarction Q and ST criteria are not applied to a paced rhythm"
            )
        item.setToolTip(f"Beat at {beat.r / fs_hz:.2f} s: {text} ({why})")
        item.beat_r = beat.r
        item.setZValue(25)
        items.append(item)
    return items
