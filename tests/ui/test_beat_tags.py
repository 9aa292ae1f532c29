"""Words under the strip for beats outside the dominant rhythm (reviewapp.ui.beat_tags)."""

from __future__ import annotations

import shutil
from pathlib import Path

from reviewapp.core.fiducials import BeatKind


def _open_copy(window, src: Path, tmp_path: Path) -> None:
    tmp_path.mkdir(parents=True, exist_ok=True)
    for f in src.parent.glob(src.stem + ".*"):
        if not f.name.endswith(".json"):
            shutil.copy(f, tmp_path / f.name)
    assert window.open_path(tmp_path / src.name, analyse_now=True)


def _tags(window) -> dict[int, str]:
    return {t.beat_r: t.textItem.toPlainText() for t in window.paper.beat_tags}


def test_paced_beats_of_a_ludb_pacemaker_record_are_named_under_the_strip(
    window, shared_data: Path, tmp_path: Path
):
    # LUDB record 104: "Pacemaker presence" in ludb.csv (Kalyakulina et al., IEEE Access 2020);
    # the engine labels its paced beats (tests/dsp/test_pacing.py); every one on the page gets
    # the word, and no other beat does.
    _open_copy(window, shared_data / "ludb" / "104.hea", tmp_path)
    beats = window.workflow.analysis.beats
    page = window.paper.geom
    on_page = [b for b in beats if page.page_start <= b.r < page.page_start + page.page_samples]
    paced = {b.r for b in on_page if b.kind is BeatKind.PACED}
    assert len(paced) >= 5
    tags = _tags(window)
    assert {r for r, t in tags.items() if t == "paced"} == paced
    assert set(tags) == {b.r for b in on_page if b.kind is not BeatKind.DOMINANT}
    tip = next(t for t in window.paper.beat_tags).toolTip()
    assert "pacing stimulus" in tip and "Q and ST criteria" in tip
    # Its wide paced QRS is shown but not flagged in the summary; its cells say why.
    from reviewapp.ui.summary import GLOBAL_ROWS

    row = [k for k, *_ in GLOBAL_ROWS].index("qrs_ms")
    assert window.workflow.reading.measurements.intervals.qrs_ms > 110.0
    cells = [window.summary.table.item(row, c).text() for c in (2, 3)]
    assert cells == ["not applied", "paced rhythm"]  # no range, no "high"
    assert "paced rhythm" in window.summary.table.item(row, 1).toolTip()


def test_a_premature_beat_is_named_and_a_sinus_record_has_no_words(
    window, sample_records_dir: Path, tmp_path: Path
):
    # The demo worklist is invented (sample_records/README.md): here it only drives the
    # window; the expected words come from the engine's own beat kinds.
    _open_copy(window, sample_records_dir / "s009_post4h.hea", tmp_path / "a")
    kinds = {b.r: b.kind for b in window.workflow.analysis.beats}
    tags = _tags(window)
    assert tags and all(kinds[r] is BeatKind.PREMATURE for r in tags)
    assert set(tags.values()) == {"premature"}
    _open_copy(window, sample_records_dir / "s001_predose.hea", tmp_path / "b")
    assert _tags(window) == {}
