"""Fixtures for the reading-workflow tests (plain Python, no Qt): a demo record analysed once,
rebound per test to a fresh copy of its files so each test writes its own marks file."""

from __future__ import annotations

import dataclasses
import json
import shutil
from pathlib import Path

import pytest

RECORD = "s003_post6h"  # the demo record whose automatic QTc is flagged


@pytest.fixture(scope="session")
def demo_analysis(sample_records_dir, tmp_path_factory):
    from reviewapp.core.engine import analyse
    from reviewapp.core.io import open_record

    if not (sample_records_dir / f"{RECORD}.hea").exists():
        pytest.skip("no sample_records folder in this checkout")
    folder = tmp_path_factory.mktemp("demo")
    for f in sample_records_dir.glob(f"{RECORD}.*"):
        if not f.name.endswith(".json"):
            shutil.copy(f, folder / f.name)
    return analyse(open_record(folder / f"{RECORD}.hea"))


@pytest.fixture
def analysis(demo_analysis, tmp_path):
    """The demo analysis, its record now the copy in this test's own folder."""
    src = demo_analysis.record.source_path
    for f in src.parent.glob(f"{RECORD}.*"):
        if not f.name.endswith(".json"):
            shutil.copy(f, tmp_path / f.name)
    record = dataclasses.replace(demo_analysis.record, source_path=tmp_path / src.name)
    return dataclasses.replace(demo_analysis, record=record)


def sidecar_json(analysis) -> dict | None:
    """The marks file read back as plain JSON (what an auditor reads), or None if absent."""
    p = Path(analysis.record.source_path).with_name(f"{RECORD}.marks.json")
    return json.loads(p.read_text()) if p.exists() else None


@pytest.fixture
def open_workflow(analysis):
    """``open_workflow(reader, mode)``: a workflow on the test's record; closed afterwards."""
    from reviewapp.core.workflow import FIRST, ReadingWorkflow, open_marks

    made = []

    def make(reader: str | None = "reader1", mode=FIRST):
        w = ReadingWorkflow(
            analysis, open_marks(analysis.record, reader, mode), mode=mode, reader=reader
        )
        made.append(w)
        return w

    yield make
    for w in made:
        w.close()
