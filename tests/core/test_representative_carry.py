"""A correction on the median beat carries to every dominant beat; a beat's own wins."""

from __future__ import annotations

from reviewapp.core.engine import analyse
from reviewapp.core.fiducials import BeatKind, MarkOverride
from reviewapp.core.synth import SynthParams, generate


def test_median_correction_moves_dominant_beats_and_beat_override_wins() -> None:
    # QT = QRS onset to T end (Rautaharju et al., AHA/ACCF/HRS 2009 Part IV): moving T end by
    # N samples moves each beat's QT by N / fs exactly.
    syn = generate(SynthParams(hr_bpm=72, ectopic_beats=(5,), seed=11))
    a = analyse(syn.record)
    fs = a.fs_hz
    rep = a.representative
    n = 15
    first_dom = next(i for i, b in enumerate(a.beats) if b.kind is BeatKind.DOMINANT)
    own = a.beat_marks[first_dom].t_off + 40
    ovs = [
        MarkOverride("representative", "t_off", rep.marks.t_off + n),
        MarkOverride("beat", "t_off", own, beat_r=a.beats[first_dom].r),
    ]
    before = a.reading().measurements.beats
    after = a.reading(ovs)
    for i, (b0, b1, beat) in enumerate(zip(before, after.measurements.beats, a.beats, strict=True)):
        if i == first_dom:
            assert after.marked.beat_marks[i].t_off == own
        elif beat.kind is BeatKind.DOMINANT and b0.qt_ms is not None:
            assert b1.qt_ms - b0.qt_ms == 1000.0 * n / fs
        else:
            assert b1.qt_ms == b0.qt_ms  # the premature beat keeps its own marks
    absent = a.reading([MarkOverride("representative", "p_on", None)]).marked
    assert all(
        m.p_on is None
        for m, b in zip(absent.beat_marks, a.beats, strict=True)
        if b.kind is BeatKind.DOMINANT
    )
