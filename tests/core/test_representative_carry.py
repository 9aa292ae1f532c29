"""A correction on the median beat carries to every dominant beat; a beat's own wins."""

from __future__ import annotations

import pytest

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


def test_global_j_point_correction_moves_every_lead_st_unless_that_lead_was_set() -> None:
    # ST deviation is read at the J point, the QRS end (Thygesen et al., Fourth Universal
    # Definition of Myocardial Infarction, 2018): a reader's corrected QRS end must be where
    # every lead's ST levels are then measured, except in a lead the reader set on its own.
    from reviewapp.core.measure.amplitudes import isoelectric_level

    syn = generate(SynthParams(hr_bpm=72, seed=3))
    a = analyse(syn.record)
    rep = a.representative
    fs = a.fs_hz
    new_j = rep.marks.qrs_off + round(0.012 * fs)
    own_j = rep.marks.qrs_off - round(0.008 * fs)
    names = a.record.lead_names
    ovs = [
        MarkOverride("representative", "qrs_off", new_j),
        MarkOverride("representative", "qrs_off", own_j, lead=names[0]),
    ]
    reading = a.reading(ovs)
    marked_rep = reading.marked.representative
    assert marked_rep.lead_marks[0].qrs_off == own_j
    for j, lm in enumerate(reading.measurements.leads):
        expect_j = own_j if j == 0 else new_j
        assert marked_rep.lead_marks[j].qrs_off == expect_j
        wave = rep.waveform_mv[:, j]
        base = isoelectric_level(wave, marked_rep.marks.qrs_on, marked_rep.marks.p_off, fs)
        assert lm.st_j_mv == pytest.approx(float(wave[expect_j]) - base, abs=1e-6)
    # The dominant beats' own lead marks follow the carried correction too.
    dom = next(i for i, b in enumerate(a.beats) if b.kind is BeatKind.DOMINANT)
    moved = reading.marked.beat_marks[dom].qrs_off
    assert moved == a.beat_marks[dom].qrs_off + (new_j - rep.marks.qrs_off)
    assert all(m.qrs_off == moved for m in reading.marked.beat_lead_marks[dom])
