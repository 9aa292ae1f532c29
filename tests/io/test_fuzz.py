"""Property-based fuzzing of every reader with mutated copies of REAL files.

Seeds: LUDB record 1 and MIT-BIH record 100 (PhysioNet, via the shared_data fixture, trimmed
to a few seconds in tmp), pydicom's waveform_ecg.dcm test file (trimmed), the hand-written aECG
fixture, and a CSV and an EDF+ file written from LUDB record 1. Mutations: truncation, byte
flips, insertions, deletions, and edits of header fields / XML attributes / DICOM elements.

Property: ``open_record`` either returns a valid Record (finite fs > 0, consistent shapes,
window reads work) or raises RecordError naming a file in the test folder. Any other
exception, or a hang, is a reader bug.
"""

from __future__ import annotations

import math
import os
import re
import signal
import tempfile
from collections import Counter
from collections.abc import Iterator
from datetime import timedelta
from pathlib import Path

import numpy as np
import pydicom
import pytest
import wfdb
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from pydicom.data import get_testdata_file

from reviewapp.core.errors import RecordError
from reviewapp.core.io import UNEXPECTED, open_record

FUZZ_COUNTS: Counter[str] = Counter()
# Per-example wall-clock limit: opening any of these small files takes milliseconds, so
# seconds mean a hang (an endless loop or a huge allocation).
HANG_LIMIT_S = 20.0
# REVIEWAPP_FUZZ_SCALE=10 multiplies the example counts and draws fresh random inputs (a deep
# local run); by default the same inputs are drawn every run so CI stays reproducible.
FUZZ_SCALE = float(os.environ.get("REVIEWAPP_FUZZ_SCALE", "1"))
FUZZ_SETTINGS = dict(
    deadline=timedelta(seconds=10),
    derandomize=FUZZ_SCALE == 1,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture],
)


class Hang(BaseException):
    """Raised by the alarm; BaseException so no reader's error wrapping can swallow it."""


def _on_alarm(signum, frame):
    raise Hang(f"open_record did not return within {HANG_LIMIT_S} s")


def check_outcome(path: Path, folder: Path, **kw) -> str:
    """Open ``path``; assert the property; return "ok" or "error"."""
    old = signal.signal(signal.SIGALRM, _on_alarm)
    signal.setitimer(signal.ITIMER_REAL, HANG_LIMIT_S)
    try:
        try:
            rec = open_record(path, **kw)
            assert math.isfinite(rec.fs_hz) and rec.fs_hz > 0
            n = rec.n_samples
            assert n > 0 and rec.n_leads == len(rec.leads) == rec.source.n_leads
            for a, b in ((0, min(n, 64)), (max(n - 32, 0), n), (n // 2, n // 2 + 7)):
                w = rec.window(a, b)
                assert w.shape == (min(b, n) - a, rec.n_leads) and w.dtype == np.float32
                assert not np.isinf(w).any(), "infinite mV values"  # NaN = gap, inf = bug
            return "ok"
        except RecordError as err:
            assert err.path is not None, f"RecordError without a file: {err}"
            assert err.path.parent.resolve() == folder.resolve(), str(err)
            assert err.path.name in str(err)
            # open_record's safety net caught something no reader wrapped: a reader bug.
            assert UNEXPECTED not in str(err), str(err)
            return "error"
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, old)


# ---------------------------------------------------------------- mutation strategies


@st.composite
def byte_mutations(draw, size: int) -> list[tuple]:
    ops = []
    for _ in range(draw(st.integers(1, 4))):
        kind = draw(st.sampled_from(["truncate", "flip", "insert", "delete", "zero"]))
        pos = draw(st.integers(0, max(size - 1, 0)))
        if kind == "flip":
            ops.append((kind, pos, draw(st.integers(1, 255))))
        elif kind == "insert":
            ops.append((kind, pos, draw(st.binary(min_size=1, max_size=16))))
        elif kind in ("delete", "zero"):
            ops.append((kind, pos, draw(st.integers(1, 64))))
        else:
            ops.append((kind, pos, None))
    return ops


def apply_bytes(data: bytes, ops: list[tuple]) -> bytes:
    buf = bytearray(data)
    for kind, pos, arg in ops:
        pos = min(pos, len(buf))
        if kind == "truncate":
            del buf[pos:]
        elif kind == "flip" and pos < len(buf):
            buf[pos] ^= arg
        elif kind == "insert":
            buf[pos:pos] = arg
        elif kind == "delete":
            del buf[pos : pos + arg]
        elif kind == "zero":
            buf[pos : pos + arg] = bytes(len(buf[pos : pos + arg]))
    return bytes(buf)


NASTY_VALUES = [
    "0",
    "-1",
    "-500",
    "1e308",
    "nan",
    "inf",
    "",
    "abc",
    "99999999999",
    "999999999999999999999999",
    "0.000001",
    "16",
    "212",
    "8",
    "80",
    "24",
    "310",
    "1/0",
    "(",
    ")",
    "/",
    "#",
    "-0",
    "2147483648",
    "1.5",
    "\u00e9",
    "mV",
    "uV",
    "V",
    "x" * 300,
]
token_values = st.one_of(
    st.sampled_from(NASTY_VALUES),
    st.integers(-(2**40), 2**40).map(str),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.text(max_size=12),
)


@st.composite
def token_edits(draw, n_tokens: int) -> list[tuple[int, str]]:
    k = draw(st.integers(1, 3))
    return [(draw(st.integers(0, max(n_tokens - 1, 0))), draw(token_values)) for _ in range(k)]


def apply_token_edits(text: str, edits: list[tuple[int, str]], pattern: str = r"(\s+)") -> str:
    parts = re.split(pattern, text)
    slots = [i for i, p in enumerate(parts) if p and not re.fullmatch(pattern, p)]
    for idx, value in edits:
        if slots:
            parts[slots[idx % len(slots)]] = value
    return "".join(parts)


# ---------------------------------------------------------------- seeds (real files)


@pytest.fixture(scope="module")
def seeds(shared_data: Path, tmp_path_factory) -> dict[str, Path]:
    root = tmp_path_factory.mktemp("fuzz_seeds")
    out: dict[str, Path] = {}
    # LUDB record 1, trimmed to 2 s (12 leads, format 16): header + data, sig_len edited.
    n = 1000
    text = (shared_data / "ludb" / "1.hea").read_text().replace("1 12 500 5000", f"1 12 500 {n}")
    (root / "1.hea").write_text(text)
    (root / "1.dat").write_bytes((shared_data / "ludb" / "1.dat").read_bytes()[: n * 12 * 2])
    out["ludb"] = root / "1.hea"
    # MIT-BIH 100, 5 s (format 212: 3 bytes per frame of 2 samples), sig_len edited.
    n = 1800
    text = (shared_data / "mitdb" / "100.hea").read_text().replace("650000", str(n))
    (root / "100.hea").write_text(text)
    (root / "100.dat").write_bytes((shared_data / "mitdb" / "100.dat").read_bytes()[: n * 3])
    out["mit"] = root / "100.hea"
    # pydicom's waveform_ecg.dcm, each multiplex group trimmed to 300 samples.
    src = get_testdata_file("waveform_ecg.dcm")
    if src is not None:
        ds = pydicom.dcmread(src)
        for g in ds.WaveformSequence:
            keep = 300 * int(g.NumberOfWaveformChannels) * int(g.WaveformBitsAllocated) // 8
            g.WaveformData = bytes(g.WaveformData)[:keep]
            g.NumberOfWaveformSamples = 300
        ds.save_as(root / "ecg.dcm")
        out["dicom"] = root / "ecg.dcm"
    out["aecg"] = Path(__file__).parent / "fixtures" / "small_aecg.xml"
    # CSV and EDF+ written from LUDB record 1 (3 leads, 1 s).
    rec = wfdb.rdrecord(str(shared_data / "ludb" / "1"), sampto=500, channels=[0, 1, 6])
    t = np.arange(500) / 500
    np.savetxt(
        root / "ludb.csv",
        np.column_stack([t, rec.p_signal]),
        delimiter=",",
        header="time_s,I [mV],II [mV],V1 [mV]",
        comments="",
        fmt="%.6g",
    )
    out["csv"] = root / "ludb.csv"
    from pyedflib import highlevel

    headers = [
        highlevel.make_signal_header(
            f"ECG {n}", dimension="mV", sample_frequency=500, physical_min=-5, physical_max=5
        )
        for n in ("I", "II", "V1")
    ]
    highlevel.write_edf(
        str(root / "ludb.edf"), [np.ascontiguousarray(c) for c in rec.p_signal.T], headers
    )
    out["edf"] = root / "ludb.edf"
    return out


@pytest.fixture(scope="module", autouse=True)
def report_counts(request) -> Iterator[None]:
    yield
    total = sum(v for k, v in FUZZ_COUNTS.items() if not k.startswith("outcome:"))
    line = f"fuzz: {total} mutated inputs opened ({dict(FUZZ_COUNTS)})"
    request.config.reviewapp_fuzz_line = line  # shown by tests/io/conftest.py


def _case(files: dict[str, bytes], name: str, main: str) -> str:
    """Write ``files`` into a fresh folder and open ``main`` there."""
    with tempfile.TemporaryDirectory(prefix="fuzz_") as d:
        folder = Path(d)
        for fname, data in files.items():
            (folder / fname).write_bytes(data)
        outcome = check_outcome(folder / main, folder)
    FUZZ_COUNTS[name] += 1
    FUZZ_COUNTS[f"outcome:{outcome}"] += 1
    return outcome


# ---------------------------------------------------------------- the properties


def _wfdb_files(seed: Path) -> dict[str, bytes]:
    stem = seed.stem
    return {p.name: p.read_bytes() for p in seed.parent.glob(f"{stem}.*")}


@settings(max_examples=round(150 * FUZZ_SCALE), **FUZZ_SETTINGS)
@given(data=st.data())
def test_fuzz_wfdb_header_fields_ludb(seeds, data) -> None:
    files = _wfdb_files(seeds["ludb"])
    text = files["1.hea"].decode()
    edits = data.draw(token_edits(len(text.split())))
    files["1.hea"] = apply_token_edits(text, edits).encode("utf-8", "replace")
    _case(files, "wfdb_header_ludb", "1.hea")


@settings(max_examples=round(150 * FUZZ_SCALE), **FUZZ_SETTINGS)
@given(data=st.data())
def test_fuzz_wfdb_bytes_ludb(seeds, data) -> None:
    files = _wfdb_files(seeds["ludb"])
    target = data.draw(st.sampled_from(["1.hea", "1.dat"]))
    files[target] = apply_bytes(files[target], data.draw(byte_mutations(len(files[target]))))
    _case(files, "wfdb_bytes_ludb", "1.hea")


@settings(max_examples=round(200 * FUZZ_SCALE), **FUZZ_SETTINGS)
@given(data=st.data())
def test_fuzz_wfdb_mit_header_and_212_data(seeds, data) -> None:
    files = _wfdb_files(seeds["mit"])
    if data.draw(st.booleans()):
        text = files["100.hea"].decode()
        files["100.hea"] = apply_token_edits(
            text, data.draw(token_edits(len(text.split())))
        ).encode("utf-8", "replace")
    else:
        target = data.draw(st.sampled_from(["100.hea", "100.dat"]))
        files[target] = apply_bytes(files[target], data.draw(byte_mutations(len(files[target]))))
    _case(files, "wfdb_mit", "100.hea")


@settings(max_examples=round(150 * FUZZ_SCALE), **FUZZ_SETTINGS)
@given(data=st.data())
def test_fuzz_dicom_bytes(seeds, data) -> None:
    if "dicom" not in seeds:
        pytest.skip("pydicom test file not available")
    raw = seeds["dicom"].read_bytes()
    mutated = apply_bytes(raw, data.draw(byte_mutations(len(raw))))
    _case({"ecg.dcm": mutated}, "dicom_bytes", "ecg.dcm")


# Waveform elements edited in place in the Explicit VR Little Endian bytes of the seed
# (tag group/element little-endian, then the VR; PS3.5 section 7.1.2). Editing bytes directly
# keeps each example fast (writing through pydicom costs ~50 ms per file).
DICOM_BINARY_TAGS = {
    "NumberOfWaveformSamples": (b"\x3a\x00\x10\x00UL", "<u4"),
    "NumberOfWaveformChannels": (b"\x3a\x00\x05\x00US", "<u2"),
    "WaveformBitsAllocated": (b"\x00\x54\x04\x10US", "<u2"),
}
DICOM_TEXT_TAGS = {
    "SamplingFrequency": b"\x3a\x00\x1a\x00DS",
    "WaveformSampleInterpretation": b"\x00\x54\x06\x10CS",
    "ChannelSensitivity": b"\x3a\x00\x10\x02DS",
    "ChannelSensitivityCorrectionFactor": b"\x3a\x00\x12\x02DS",
    "ChannelBaseline": b"\x3a\x00\x13\x02DS",
}
DICOM_TEXT_VALUES = [
    "0",
    "-1",
    "-500",
    "1e308",
    "nan",
    "inf",
    "abc",
    "",
    "2.5",
    "0.001",
    "SS",
    "US",
    "SB",
    "MB",
    "XX",
    "1e-300",
    "-0",
]


def _edit_dicom_element(raw: bytes, tag: bytes, occurrence: int, value: bytes) -> bytes:
    hits = [m.start() for m in re.finditer(re.escape(tag), raw)]
    if not hits:
        return raw
    pos = hits[occurrence % len(hits)] + len(tag)
    length = int.from_bytes(raw[pos : pos + 2], "little")
    body = value[:length].ljust(length, b" ")
    return raw[: pos + 2] + body + raw[pos + 2 + length :]


@settings(max_examples=round(150 * FUZZ_SCALE), **FUZZ_SETTINGS)
@given(data=st.data())
def test_fuzz_dicom_elements(seeds, data) -> None:
    if "dicom" not in seeds:
        pytest.skip("pydicom test file not available")
    raw = seeds["dicom"].read_bytes()
    for _ in range(data.draw(st.integers(1, 3))):
        occurrence = data.draw(st.integers(0, 23))
        if data.draw(st.booleans()):
            key = data.draw(st.sampled_from(sorted(DICOM_BINARY_TAGS)))
            tag, dtype = DICOM_BINARY_TAGS[key]
            top = np.iinfo(np.dtype(dtype)).max
            n = data.draw(st.one_of(st.integers(0, 64), st.integers(0, int(top))))
            raw = _edit_dicom_element(raw, tag, occurrence, np.array(n, dtype=dtype).tobytes())
        else:
            key = data.draw(st.sampled_from(sorted(DICOM_TEXT_TAGS)))
            value = data.draw(st.sampled_from(DICOM_TEXT_VALUES)).encode()
            raw = _edit_dicom_element(raw, DICOM_TEXT_TAGS[key], occurrence, value)
    _case({"ecg.dcm": raw}, "dicom_elements", "ecg.dcm")


_EDITABLE = re.compile(r'(?:value|unit|code)="([^"]*)"|<digits>([^<]*)<')


def _editable_spans(text: str) -> list[tuple[int, int]]:
    """Spans of attribute values (value/unit/code) and digit lists in an aECG file."""
    return [m.span(1) if m.group(1) is not None else m.span(2) for m in _EDITABLE.finditer(text)]


@settings(max_examples=round(600 * FUZZ_SCALE), **FUZZ_SETTINGS)
@given(data=st.data())
def test_fuzz_aecg(seeds, data) -> None:
    text = seeds["aecg"].read_text()
    how = data.draw(st.sampled_from(["attr", "token", "bytes"]))
    if how == "attr":
        # Edit attribute values (increment, scale, origin, codes, units) and digit lists.
        for idx, value in data.draw(token_edits(len(_editable_spans(text)))):
            spans = _editable_spans(text)
            a, b = spans[idx % len(spans)]
            text = text[:a] + value.replace('"', "").replace("<", "") + text[b:]
        raw = text.encode("utf-8", "replace")
    elif how == "token":
        raw = apply_token_edits(text, data.draw(token_edits(len(text.split())))).encode()
    else:
        raw = apply_bytes(text.encode(), data.draw(byte_mutations(len(text))))
    _case({"ecg.xml": raw}, "aecg", "ecg.xml")


@settings(max_examples=round(500 * FUZZ_SCALE), **FUZZ_SETTINGS)
@given(data=st.data())
def test_fuzz_csv(seeds, data) -> None:
    text = seeds["csv"].read_text()
    if data.draw(st.booleans()):
        raw = apply_token_edits(text, data.draw(token_edits(len(text.split(",")))), r"([,\n])")
        raw = raw.encode("utf-8", "replace")
    else:
        raw = apply_bytes(text.encode(), data.draw(byte_mutations(len(text))))
    kw = data.draw(st.sampled_from([{}, {"fs_hz": 500.0}, {"units": "uV"}]))
    with tempfile.TemporaryDirectory() as d:
        folder = Path(d)
        (folder / "ecg.csv").write_bytes(raw)
        outcome = check_outcome(folder / "ecg.csv", folder, **kw)
    FUZZ_COUNTS["csv"] += 1
    FUZZ_COUNTS[f"outcome:{outcome}"] += 1


@settings(max_examples=round(400 * FUZZ_SCALE), **FUZZ_SETTINGS)
@given(data=st.data())
def test_fuzz_edf(seeds, data) -> None:
    raw = seeds["edf"].read_bytes()
    if data.draw(st.booleans()):
        # Edit a header field (the first 256 + 3 * 256 bytes are ASCII fields).
        pos = data.draw(st.integers(0, 1023))
        field = data.draw(st.text(alphabet="0123456789 .-+eEabc", min_size=1, max_size=8))
        buf = bytearray(raw)
        buf[pos : pos + len(field)] = field.encode()
        raw = bytes(buf)
    else:
        raw = apply_bytes(raw, data.draw(byte_mutations(len(raw))))
    _case({"ecg.edf": raw}, "edf", "ecg.edf")


def test_fuzz_seeds_open_cleanly(seeds) -> None:
    """The unmutated seeds are valid records (so mutations start from real, readable files)."""
    for key, path in seeds.items():
        rec = open_record(path)
        assert rec.n_samples > 0, key


def test_zz_fuzz_total(request) -> None:
    """At least 2,000 mutated inputs across the suite (when every fuzz test above ran)."""
    names = {
        "wfdb_header_ludb",
        "wfdb_bytes_ludb",
        "wfdb_mit",
        "dicom_bytes",
        "dicom_elements",
        "aecg",
        "csv",
        "edf",
    }
    if not names <= {k for k, v in FUZZ_COUNTS.items() if v > 0}:
        pytest.skip("not every fuzz test ran in this session")
    total = sum(FUZZ_COUNTS[n] for n in names)
    assert total >= 2000, FUZZ_COUNTS
    # Both outcomes must occur, or the mutations are too weak (or too strong) to test anything.
    assert FUZZ_COUNTS["outcome:ok"] > 0 and FUZZ_COUNTS["outcome:error"] > 0, FUZZ_COUNTS


# ---------------------------------------------------------------- hostile files (issue 14)
# FIFOs, devices, sockets and folders under every record suffix; sparse files whose length
# matches what the header declares; header numbers in exponent notation; very wide CSVs. The
# property is the same: a valid Record or one RecordError naming the file, never a hang
# (check_outcome's alarm).

SUFFIXES = ["", ".hea", ".dat", ".csv", ".tsv", ".txt", ".edf", ".bdf", ".xml", ".dcm"]


def _special(path: Path, kind: str) -> object:
    import socket

    if kind == "fifo":
        os.mkfifo(path)
    elif kind == "device":
        path.symlink_to("/dev/null")
    elif kind == "folder":
        path.mkdir()
    elif kind == "dangling":
        path.symlink_to(path.with_name("nowhere"))
    elif kind == "loop":
        path.symlink_to(path)
    else:
        sock = socket.socket(socket.AF_UNIX)
        sock.bind(str(path))
        return sock
    return None


@settings(max_examples=round(60 * FUZZ_SCALE), **FUZZ_SETTINGS)
@given(
    suffix=st.sampled_from(SUFFIXES),
    kind=st.sampled_from(["fifo", "device", "folder", "dangling", "loop", "socket"]),
    beside=st.sampled_from(["none", "header", "sidecar"]),
)
def test_fuzz_special_files(suffix: str, kind: str, beside: str) -> None:
    with tempfile.TemporaryDirectory(prefix="fuzz_") as d:
        folder = Path(d)
        target = folder / f"rec{suffix}"
        keep = _special(target, kind)
        if beside == "header" and suffix != ".hea":
            # A header naming the special file as its signal file.
            (folder / "rec.hea").write_text(f"rec 1 500 100\nrec{suffix} 16 200 16 0 0 0 0 I\n")
            target = folder / "rec.hea"
        elif beside == "sidecar":
            os.mkfifo(folder / "rec.marks.json")
        try:
            outcome = check_outcome(target, folder)
        finally:
            if keep is not None:
                keep.close()
    assert outcome == "error"
    FUZZ_COUNTS["special_files"] += 1
    FUZZ_COUNTS["outcome:error"] += 1


@settings(max_examples=round(40 * FUZZ_SCALE), **FUZZ_SETTINGS)
@given(
    n_samples=st.integers(1, 2_000_000_000),
    n_signals=st.integers(1, 12),
    fmt=st.sampled_from(["16", "212", "80", "32"]),
)
def test_fuzz_sparse_wfdb(n_samples: int, n_signals: int, fmt: str) -> None:
    """A signal file of exactly the declared size, with nothing on disk (sparse): opened as a
    paged record, never read whole; the analysis refuses what exceeds the memory budget."""
    from reviewapp.core.record import check_analysable, signal_budget_bytes

    bits = {"16": 16, "212": 12, "80": 8, "32": 32}[fmt]
    with tempfile.TemporaryDirectory(prefix="fuzz_") as d:
        folder = Path(d)
        lines = [f"rec {n_signals} 500 {n_samples}"]
        lines += [f"rec.dat {fmt} 200 12 0 0 0 0 s{k}" for k in range(n_signals)]
        (folder / "rec.hea").write_text("\n".join(lines) + "\n")
        with open(folder / "rec.dat", "wb") as fh:
            fh.truncate(-(-n_samples * n_signals * bits // 8))
        assert check_outcome(folder / "rec.hea", folder) == "ok"
        rec = open_record(folder / "rec.hea")
        held = rec.n_samples * rec.n_leads * 4
        if held > signal_budget_bytes() or rec.duration_s < 2.0:
            with pytest.raises(RecordError):
                check_analysable(rec)
        else:
            check_analysable(rec)
    FUZZ_COUNTS["sparse_wfdb"] += 1
    FUZZ_COUNTS["outcome:ok"] += 1


@st.composite
def exponent_forms(draw) -> tuple[str, float]:
    """A sampling rate and one of its spellings with an exponent (5e2, 0.5E3, 5000e-1)."""
    value = float(draw(st.integers(50, 20_000)))
    shift = draw(st.integers(-3, 3))
    mantissa = value / 10**shift
    text = draw(st.sampled_from([f"{mantissa!r}", f"{mantissa:.6f}".rstrip("0")]))
    marker = draw(st.sampled_from(["e", "E"]))
    sign = "+" if shift >= 0 and draw(st.booleans()) else ""
    return f"{text}{marker}{sign}{shift}", value


@settings(max_examples=round(60 * FUZZ_SCALE), **FUZZ_SETTINGS)
@given(form=exponent_forms())
def test_fuzz_exponent_header_numbers(seeds, form) -> None:
    """WFDB: the frequency reads as the number written (header(5) floating-point field).
    EDF: an exponent in the record duration is refused by name (EDF numbers are plain)."""
    written, value = form
    files = _wfdb_files(seeds["ludb"])
    text = files["1.hea"].decode()
    files["1.hea"] = text.replace("1 12 500 1000", f"1 12 {written} 1000", 1).encode()
    with tempfile.TemporaryDirectory(prefix="fuzz_") as d:
        folder = Path(d)
        for fname, data in files.items():
            (folder / fname).write_bytes(data)
        rec = open_record(folder / "1.hea")
        assert rec.fs_hz == pytest.approx(value, rel=1e-12), written
        raw = bytearray(seeds["edf"].read_bytes())
        edf_text = written if len(written) <= 8 else f"{value / 100:g}E2"[:8]  # 8-char field
        assert "e" in edf_text.lower()
        raw[244:252] = edf_text.ljust(8).encode()
        (folder / "ecg.edf").write_bytes(bytes(raw))
        with pytest.raises(RecordError, match=r"data record duration .* is not a plain decimal"):
            open_record(folder / "ecg.edf")
    FUZZ_COUNTS["exponent_headers"] += 2
    FUZZ_COUNTS["outcome:ok"] += 1
    FUZZ_COUNTS["outcome:error"] += 1


@settings(max_examples=round(8 * FUZZ_SCALE), **FUZZ_SETTINGS)
@given(n_columns=st.integers(1_000, 40_000), n_rows=st.integers(2, 5))
def test_fuzz_wide_csv(n_columns: int, n_rows: int) -> None:
    rng = np.random.default_rng(n_columns)
    values = rng.normal(0.0, 0.5, (n_rows, n_columns))
    t = np.arange(n_rows) / 500.0
    with tempfile.TemporaryDirectory(prefix="fuzz_") as d:
        folder = Path(d)
        header = "time_s," + ",".join(f"ch{i} [mV]" for i in range(n_columns))
        body = "\n".join(
            f"{t[r]:.3f}," + ",".join(f"{v:.4f}" for v in values[r]) for r in range(n_rows)
        )
        (folder / "wide.csv").write_text(header + "\n" + body + "\n")
        assert check_outcome(folder / "wide.csv", folder) == "ok"
        rec = open_record(folder / "wide.csv")
        assert rec.n_leads == n_columns
        np.testing.assert_allclose(rec.window(0, n_rows)[:, -1], values[:, -1], atol=6e-5)
    FUZZ_COUNTS["wide_csv"] += 1
    FUZZ_COUNTS["outcome:ok"] += 1


# Peak memory of `reviewapp measure` on tiny hostile inputs, each in its own interpreter so the
# figure is that input's: every one must be refused cheaply (before, the sparse WFDB record and
# the EDF claiming 14,000 records made measure allocate about 2 GB, the NUL-filled CSV 1 GB).
# The interpreter with numpy, scipy and the readers imported takes about 100-150 MB. The peak
# is the kernel's high-water mark of the process's own address space (VmHWM, Linux), which an
# exec starts afresh; resource.getrusage's ru_maxrss (the fallback elsewhere) also carries the
# forking parent's peak across exec on Linux, so under pytest it would report pytest's.
RSS_BUDGET_MB = 300
RSS_FIGURES: dict[str, float] = {}
_RSS_SCRIPT = (
    "import resource, sys\n"
    "from reviewapp.cli import main\n"
    "code = main(['measure', sys.argv[1]])\n"
    "kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss\n"
    "try:\n"
    "    status = open('/proc/self/status').read().split('VmHWM:')[1]\n"
    "    kb = int(status.split()[0])\n"
    "except (OSError, IndexError, ValueError):\n"
    "    pass\n"
    "print('RSS', code, kb)\n"
)


def _hostile_inputs(folder: Path) -> dict[str, Path]:
    from pyedflib import highlevel

    (folder / "sparse.hea").write_text("sparse 1 500 49000000\nsparse.dat 16 200 16 0 0 0 0 I\n")
    with open(folder / "sparse.dat", "wb") as fh:
        fh.truncate(98_000_000)
    hdr = [highlevel.make_signal_header("ECG I", dimension="mV", sample_frequency=500)]
    highlevel.write_edf(str(folder / "many.edf"), [np.zeros(1000)], hdr)
    raw = bytearray((folder / "many.edf").read_bytes())
    raw[236:244] = b"14000   "
    (folder / "many.edf").write_bytes(bytes(raw))
    with open(folder / "nul.csv", "wb") as fh:
        fh.truncate(400_000_000)
    return {n: folder / n for n in ("sparse.hea", "many.edf", "nul.csv")}


def test_tiny_hostile_inputs_are_refused_within_a_memory_budget(tmp_path: Path, request) -> None:
    import subprocess
    import sys

    repo = Path(__file__).resolve().parents[2]
    env = dict(os.environ, PYTHONPATH=str(repo) + os.pathsep + os.environ.get("PYTHONPATH", ""))
    inputs = _hostile_inputs(tmp_path)
    procs = {
        name: subprocess.Popen(
            [sys.executable, "-c", _RSS_SCRIPT, str(path)],
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
            env=env,
        )
        for name, path in inputs.items()
    }
    for name, proc in procs.items():
        out, err = proc.communicate(timeout=300)
        _, code, rss_kb = out.strip().splitlines()[-1].split()
        assert code == "2", (name, err)
        line = err.strip().splitlines()
        assert len(line) == 1 and name in line[0], (name, err)
        RSS_FIGURES[name] = int(rss_kb) / 1024
        assert RSS_FIGURES[name] < RSS_BUDGET_MB, (name, RSS_FIGURES[name])
    request.config.reviewapp_rss_line = "max RSS of `measure` on hostile inputs (MB): " + ", ".join(
        f"{k} {v:.0f}" for k, v in RSS_FIGURES.items()
    )
