"""Delimited text records: a header row of lead names, one row per sample.

Accepted: comma, semicolon or tab separators; an optional time column (``time``, ``t``,
``time_s``, ``time_ms``, ``time [s]``, ``seconds``, ``ms`` ...) that gives the sampling rate and
must be uniformly spaced; units per column from a suffix (``I [uV]``, ``I (mV)``, ``I_uV``) or
the ``units`` argument, else assumed mV with a note in ``Record.notes``.

Units plausibility (no units in the header and none given): a resting ECG's deflections lie
within about +/-5 mV (common practice, no source), so a lead whose typical peak-to-peak
(median over 1 s windows) exceeds ``MAX_PLAUSIBLE_MV`` is almost surely in uV, and a record
whose every varying lead stays below ``MIN_PLAUSIBLE_MV`` is almost surely in V. Either way
the file is refused, naming the lead and the ``--units`` to pass: a value 1000x off must
never be measured silently.

Errors name the file line (1-based, the header line counted) and the column name.
"""

from __future__ import annotations

import io
import math
import re
from pathlib import Path

import numpy as np

from reviewapp.core.errors import RecordError
from reviewapp.core.io._common import (
    clean_lead_label,
    frozen_mv,
    listed,
    mv_factor,
    unique_names,
)
from reviewapp.core.io.files import open_regular, require_regular
from reviewapp.core.record import (
    STANDARD_12,
    ArraySource,
    LeadInfo,
    Record,
    build_record,
    check_signal_budget,
    normalise_lead_name,
)

CONVERT_IT = "convert it to a binary format (WFDB or EDF), which is paged from disk"

# Text records are read whole; beyond this size the user should convert to a binary format.
MAX_CSV_BYTES = 500_000_000
# Relative spread of time steps accepted as "uniform": the time column is usually printed with
# a few decimals, so allow rounding of the last printed digit (common practice, no source).
_TIME_STEP_RTOL = 0.01

_TIME_NAMES = {
    "time": 1.0,
    "t": 1.0,
    "time_s": 1.0,
    "times": 1.0,
    "seconds": 1.0,
    "sec": 1.0,
    "s": 1.0,
    "time_ms": 1e-3,
    "ms": 1e-3,
    "milliseconds": 1e-3,
    "t_ms": 1e-3,
    "t_s": 1.0,
}
# See the module docstring; both common practice, no source.
MAX_PLAUSIBLE_MV = 20.0
MIN_PLAUSIBLE_MV = 0.005

_UNIT_SUFFIX = re.compile(
    r"^(?P<name>.*?)\s*(?:\[(?P<u1>[^\]]+)\]|\((?P<u2>[^)]+)\)|[_ ](?P<u3>[munµμ]?V))\s*$",
    re.IGNORECASE,
)


def _split_units(column: str) -> tuple[str, str | None]:
    """``"I [uV]"`` -> (``"I"``, ``"uV"``); ``"V1_mV"`` -> (``"V1"``, ``"mV"``); else unit None."""
    m = _UNIT_SUFFIX.match(column.strip())
    if m and m.group("name"):
        unit = m.group("u1") or m.group("u2") or m.group("u3")
        return m.group("name").strip(), unit.strip()
    return column.strip(), None


def _time_scale(column: str, split: tuple[str, str | None] | None = None) -> float | None:
    """Seconds per unit when ``column`` names a time column, else None (``split``: the
    column's ``_split_units``, when already known)."""
    name, unit = split if split is not None else _split_units(column)
    key = name.lower().replace(" ", "_")
    if unit is not None and key in ("time", "t"):
        u = unit.lower()
        return {"s": 1.0, "sec": 1.0, "ms": 1e-3, "us": 1e-6}.get(u)
    return _TIME_NAMES.get(key)


def _delimiter(header_line: str) -> str:
    counts = {d: header_line.count(d) for d in ("\t", ";", ",")}
    best = max(counts, key=lambda d: counts[d])
    return best if counts[best] > 0 else ","


def looks_like_ecg_csv(path: Path) -> bool:
    """Cheap check of the header row: a time column or a recognisable lead name."""
    try:
        with open_regular(path) as fh:
            first = fh.readline(10_000).decode("utf-8-sig", errors="replace")
    except (OSError, RecordError):
        return False
    cols = [c.strip().strip('"') for c in first.rstrip("\r\n").split(_delimiter(first))]
    known = set(STANDARD_12) | {"X", "Y", "Z", "MLII", "MLI", "MLIII"}
    for c in cols:
        name, _ = _split_units(c)
        if _time_scale(c) is not None or normalise_lead_name(clean_lead_label(name)) in known:
            return True
    return False


def read_csv(path: Path, *, fs_hz: float | None = None, units: str | None = None) -> Record:
    """Read a delimited text record; see the module docstring for the accepted layout.

    Args:
        path: the text file.
        fs_hz: sampling rate in Hz, needed when there is no time column; when both are given
            they must agree within 1 %.
        units: units of every lead column ("uV", "mV", "V"), overriding header suffixes.
    """
    path = Path(path)
    raw = _read_text_bytes(path)
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise RecordError("not a text file (not UTF-8)", path) from None
    del raw
    lines = text.splitlines()
    first = 0
    while first < len(lines) and not lines[first].strip():
        first += 1
    if first == len(lines):
        raise RecordError("file is empty", path)
    header_line = lines[first]
    delim = _delimiter(header_line)
    columns = [c.strip().strip('"').strip() for c in header_line.split(delim)]
    if any(_is_number(c) for c in columns):
        raise RecordError(
            f"line {first + 1}: first row must name the leads (e.g. 'time_s,I,II,V1')", path
        )
    # 1-based file line numbers of the sample rows, for messages.
    line_numbers = [i + 1 for i in range(first + 1, len(lines)) if lines[i].strip()]
    body = "\n".join(lines[i - 1] for i in line_numbers)
    if not body:
        raise RecordError("no samples below the header row", path)
    # Semicolon files from European locales may use a decimal comma.
    if delim == ";" and "," in body and "." not in body:
        body = body.replace(",", ".")
    try:
        values = np.loadtxt(io.StringIO(body), delimiter=delim, dtype=np.float64, ndmin=2)
    except ValueError:
        raise RecordError(
            _first_bad_line(body.split("\n"), line_numbers, delim, columns), path
        ) from None
    if values.shape[1] != len(columns):
        raise RecordError(
            f"{len(columns)} column names but {values.shape[1]} columns of numbers", path
        )
    bad = ~np.isfinite(values)
    if bad.any():
        row, col = (int(i) for i in np.argwhere(bad)[0])
        raise RecordError(
            f"line {line_numbers[row]}, column {columns[col]!r}: {values[row, col]} is not a "
            "finite number",
            path,
        )

    notes: list[str] = []
    split = [_split_units(c) for c in columns]
    time_cols = [i for i, c in enumerate(columns) if _time_scale(c, split[i]) is not None]
    lead_cols = [i for i in range(len(columns)) if i not in time_cols[:1]]
    if not lead_cols:
        raise RecordError("no lead columns besides the time column", path)
    rate = _rate_from_time(values, time_cols, columns, path, line_numbers)
    if rate is not None and fs_hz is not None and not math.isclose(rate, fs_hz, rel_tol=0.01):
        raise RecordError(
            f"time column gives {rate:.6g} Hz but the sampling rate was given as {fs_hz:g} Hz",
            path,
        )
    if rate is None:
        if fs_hz is None:
            raise RecordError(
                "no time column (time, t, time_s, time_ms) and no sampling rate given (--fs)", path
            )
        rate = float(fs_hz)
        if not math.isfinite(rate) or rate <= 0:
            raise RecordError(f"sampling rate must be a positive number, got {fs_hz!r}", path)

    names, factors, leads = [], [], []
    unstated = []
    raw_names = [clean_lead_label(split[i][0]) for i in lead_cols]
    factor_of: dict[str, float | None] = {}
    for i, name in zip(lead_cols, unique_names(raw_names), strict=True):
        col_unit = split[i][1]
        unit = units if units is not None else col_unit
        if unit is None:
            unstated.append(name)
            unit = "mV"
        if unit not in factor_of:
            factor_of[unit] = mv_factor(unit)
        f = factor_of[unit]
        if f is None:
            raise RecordError(f"column {columns[i]!r}: units {unit!r} are not mV, uV or V", path)
        names.append(name)
        factors.append(f)
        leads.append(LeadInfo(name=name, original_name=columns[i], units=unit))
    if unstated:
        _check_plausible_mv(values[:, lead_cols], names, unstated, rate, path)
        notes.append(f"units not given in the file for leads {listed(unstated)}; assumed mV")
    data = frozen_mv(
        values[:, lead_cols] * np.array(factors), path, "values overflow when converted to mV"
    )
    return build_record(
        name=path.stem,
        fs_hz=rate,
        source=ArraySource(data),
        leads=leads,
        source_path=path,
        source_format="CSV",
        notes=notes,
    )


_CHUNK_BYTES = 1 << 20


def _read_text_bytes(path: Path) -> bytes:
    """The file's bytes, read in chunks and refused as soon as it cannot be a text record.

    A NUL byte (binary data, a file of zeros) is refused in the chunk where it appears, and
    the rows read so far times the header's columns are held against the memory budget, so a
    hostile file costs at most one chunk or the budget, never its whole size twice over.
    """
    size = require_regular(path).st_size
    if size > MAX_CSV_BYTES:
        raise RecordError(f"text file of {size / 1e6:.0f} MB is too large to read", path)
    chunks: list[bytes] = []
    rows = 0
    columns = 0
    try:
        with open_regular(path) as fh:
            while chunk := fh.read(_CHUNK_BYTES):
                nul = chunk.find(b"\x00")
                if nul >= 0:
                    at = sum(map(len, chunks)) + nul
                    raise RecordError(f"not a text file (a NUL byte at byte {at:,})", path)
                chunks.append(chunk)
                rows += chunk.count(b"\n")
                if not columns and rows:
                    first = b"".join(chunks).lstrip(b"\r\n \t").split(b"\n", 1)[0]
                    columns = max(first.count(d) for d in (b",", b";", b"\t")) + 1
                if columns:
                    check_signal_budget(rows, columns, path, "this text file", CONVERT_IT)
    except FileNotFoundError:
        raise RecordError("file not found", path) from None
    except OSError as err:
        raise RecordError(f"cannot read file: {err.strerror or err}", path) from None
    return b"".join(chunks)


def _first_bad_line(
    rows: list[str], line_numbers: list[int], delim: str, columns: list[str]
) -> str:
    """Where the numbers first fail to parse: file line (1-based) and column name."""
    for row, line in zip(rows, line_numbers, strict=True):
        cells = [c.strip().strip('"') for c in row.split(delim)]
        if len(cells) != len(columns):
            return (
                f"line {line}: {len(cells)} values but {len(columns)} columns ({listed(columns)})"
            )
        for name, cell in zip(columns, cells, strict=True):
            if not _is_number(cell):
                return f"line {line}, column {name!r}: {cell[:40]!r} is not a number"
    return "cannot read the numbers"


def robust_peak_to_peak(values: np.ndarray, fs_hz: float) -> np.ndarray:
    """Per column: median over 1 s windows of the window's peak-to-peak (whole span if shorter).

    One artefact spike or a baseline step moves a single window, not the median.

    >>> x = np.zeros((1000, 1)); x[::250] = 1.0; x[10] = 50.0
    >>> robust_peak_to_peak(x, 250.0).tolist()
    [1.0]
    """
    win = max(round(fs_hz), 2)
    n = values.shape[0]
    if n < 2 * win:
        return np.ptp(values, axis=0)
    k = n // win
    blocks = values[: k * win].reshape(k, win, values.shape[1])
    return np.median(np.ptp(blocks, axis=1), axis=0)


def _check_plausible_mv(
    values: np.ndarray, names: list[str], unstated: list[str], fs_hz: float, path: Path
) -> None:
    """Refuse samples that cannot be mV (see module docstring); ``values`` per lead column."""
    wanted = set(unstated)
    idx = [i for i, n in enumerate(names) if n in wanted]
    amp = robust_peak_to_peak(values[:, idx], fs_hz)
    big = int(np.argmax(amp))
    if amp[big] > MAX_PLAUSIBLE_MV:
        raise RecordError(
            f"no units given and lead {unstated[big]} spans {amp[big]:.4g} per second as mV, "
            f"far beyond an ECG (about +/-5 mV): the samples look like microvolts; pass "
            f"--units uV (or the right unit)",
            path,
        )
    varying = amp[amp > 0]
    if varying.size and float(varying.max()) < MIN_PLAUSIBLE_MV:
        raise RecordError(
            f"no units given and every lead spans less than {MIN_PLAUSIBLE_MV} mV per second: "
            "the samples look like volts; pass --units V (or the right unit)",
            path,
        )


def _is_number(s: str) -> bool:
    try:
        float(s)
    except ValueError:
        return False
    return True


def _rate_from_time(
    values: np.ndarray,
    time_cols: list[int],
    columns: list[str],
    path: Path,
    line_numbers: list[int],
) -> float | None:
    if not time_cols:
        return None
    col = time_cols[0]
    scale = _time_scale(columns[col])
    assert scale is not None
    t = values[:, col] * scale
    if t.shape[0] < 2:
        raise RecordError("one sample is not enough to tell the sampling rate", path)
    steps = np.diff(t)
    step = float(np.median(steps))
    if not step > 0:
        raise RecordError(f"time column {columns[col]!r} does not increase", path)
    spread = float(np.max(np.abs(steps - step)))
    if spread > _TIME_STEP_RTOL * step:
        bad = int(np.argmax(np.abs(steps - step)))
        raise RecordError(
            f"time column {columns[col]!r} is not evenly spaced (step {steps[bad]:.6g} s at "
            f"line {line_numbers[bad + 1]} vs median {step:.6g} s)",
            path,
        )
    # The mean step over the whole column is more precise than any single printed step.
    mean_step = (t[-1] - t[0]) / (t.shape[0] - 1)
    rate = 1.0 / mean_step
    if math.isfinite(rate) and abs(rate - round(rate)) < 1e-6 * rate:
        rate = float(round(rate))  # printed times carry rounding noise; whole-Hz rates are usual
    if not math.isfinite(rate) or rate <= 0:
        raise RecordError(f"time column {columns[col]!r} gives no usable sampling rate", path)
    return rate
