"""Fixtures for the study tests: synthetic WFDB records (invented signals) written at test time.

The records only carry what a check needs (a QT and a rate known by construction, header
comments naming subject and timepoint); the references each test compares with are computed
from the generating model or by hand, never by the code under test.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest

from reviewapp.core.record import SubjectFacts
from reviewapp.core.synth import SynthParams, generate
from reviewapp.core.synth.wfdb_out import write_synthetic


def write_record(
    folder: Path,
    name: str,
    *,
    subject: str | None = None,
    timepoint: str | None = None,
    seed: int = 0,
    **params: float,
) -> Path:
    """A 10 s 12-lead 500 Hz synthetic WFDB record; returns its header path."""
    comments = (f"timepoint: {timepoint}",) if timepoint else ()
    facts = SubjectFacts(subject_id=subject, comments=comments)
    syn = generate(SynthParams(seed=seed, **params), name=name, subject=facts)  # type: ignore[arg-type]
    hea = write_synthetic(syn, folder, name)
    (folder / f"{name}.truth.json").unlink()
    return hea


@pytest.fixture
def record_writer() -> Callable[..., Path]:
    return write_record


@pytest.fixture
def run_cli(capsys) -> Callable[..., tuple[int, str, str]]:
    """``reviewapp ARGS...`` in this process: (exit code, stdout, stderr)."""
    from reviewapp import cli

    def run(*argv: str) -> tuple[int, str, str]:
        try:
            code = cli.main(list(argv))
        except SystemExit as stop:  # argparse usage errors and --help
            code = int(stop.code or 0)
        out, err = capsys.readouterr()
        return code, out, err

    return run
