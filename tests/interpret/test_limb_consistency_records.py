"""The limb-lead consistency check never warns on consistent recordings: the real PTB record
s0010_re (Bousseljot R et al., Biomed Tech 1995; PhysioNet) and the invented demo worklist
(sample_records/, synthetic). Its largest relative residuals, measured: PTB 0.0016, demo
0.0017 to 0.0030, against the threshold of 0.08 (``measure.limb_consistency``)."""

from __future__ import annotations

from pathlib import Path

from reviewapp.core.engine import analyse
from reviewapp.core.interpret import interpret
from reviewapp.core.io import find_records, open_record
from reviewapp.core.measure.limb_consistency import MAX_RELATIVE_RESIDUAL


def _check(path: Path) -> tuple[float, set[str]]:
    rec = open_record(path)
    reading = analyse(rec).reading()
    found = reading.measurements.limb_consistency
    assert found is not None, path  # six recorded limb leads
    return max(v for _, v in found.residual_by_lead), set(interpret(reading, rec.subject).codes())


def test_no_warning_on_the_real_ptb_record(shared_data: Path):
    worst, codes = _check(shared_data / "ptbdb" / "s0010_re.hea")
    assert worst < MAX_RELATIVE_RESIDUAL / 20, worst
    assert "lead_check.limb_inconsistent" not in codes


def test_no_warning_on_the_demo_worklist(sample_records_dir: Path):
    paths = find_records(sample_records_dir)
    assert len(paths) >= 10
    for path in paths:
        worst, codes = _check(path)
        assert worst < MAX_RELATIVE_RESIDUAL / 10, (path.name, worst)
        assert "lead_check.limb_inconsistent" not in codes, path.name
