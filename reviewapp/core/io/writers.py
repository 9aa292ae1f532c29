"""Writers: WFDB records (wfdb.wrsamp), CSV text, and per-beat wave boundaries as WFDB
annotations in the convention LUDB uses.

Annotation convention (LUDB, Kalyakulina et al., IEEE Access 8:186181, 2020; PhysioNet WFDB
annotation codes): every wave is written as ``(`` at its onset, a peak symbol, ``)`` at its
offset; peak symbols are ``p`` (P wave), ``N`` (QRS) and ``t`` (T wave). A P belongs to the
QRS that follows it, a T to the QRS that precedes it. A wave whose peak was not marked gets
its peak symbol at the midpoint of its boundaries with aux note ``"no peak"``, so that onset
and offset still pair with the right wave; the reader returns None for that peak.
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from pathlib import Path

import numpy as np
import wfdb

from reviewapp.core.errors import RecordError
from reviewapp.core.fiducials import Beat, BeatKind, WaveMarks
from reviewapp.core.io._common import reading
from reviewapp.core.io.files import atomic_output, atomic_outputs
from reviewapp.core.record import Record

NO_PEAK = "no peak"
_KIND_NOTE = {BeatKind.PREMATURE: "premature", BeatKind.PACED: "paced", BeatKind.UNKNOWN: "unknown"}
_WFDB_NAME = re.compile(r"^[A-Za-z0-9_.-]+$")


def _wfdb_name(name: str, path: Path) -> str:
    clean = re.sub(r"[^A-Za-z0-9_-]+", "_", name).strip("_") or "record"
    if not _WFDB_NAME.match(clean):
        raise RecordError(f"cannot make a WFDB record name from {name!r}", path)
    return clean


def write_wfdb(
    record: Record,
    folder: str | Path,
    name: str | None = None,
    fmt: str = "16",
    *,
    include_derived: bool = False,
) -> Path:
    """Write ``record`` as a WFDB record (header + one signal file); return the ``.hea`` path.

    Leads that carry their ADC gain and baseline (records read from WFDB) are written with
    them, so a WFDB record round-trips to the same digital values; otherwise wfdb chooses a
    gain that uses the format's range. Derived leads are left out unless ``include_derived``.
    """
    folder = Path(folder)
    rec_name = _wfdb_name(name or record.name, folder)
    cols = [i for i, lead in enumerate(record.leads) if include_derived or not lead.derived]
    leads = [record.leads[i] for i in cols]
    signal = record.window(0, record.n_samples)[:, cols].astype(np.float64)
    gains = [lead.adc_gain_per_mv for lead in leads]
    baselines = [lead.adc_baseline for lead in leads]
    kwargs: dict[str, object] = {}
    if all(g is not None and math.isfinite(g) and g > 0 for g in gains) and all(
        b is not None for b in baselines
    ):
        g_arr = np.array(gains, dtype=np.float64)
        b_arr = np.array(baselines, dtype=np.float64)
        with np.errstate(invalid="ignore"):
            digital = np.rint(signal * g_arr + b_arr)
        lim = {"16": 32767, "80": 127, "212": 2047, "32": 2**31 - 1, "8": 127}.get(fmt, 32767)
        if np.nanmax(np.abs(digital), initial=0) < lim:
            kwargs = {"adc_gain": [float(g) for g in g_arr], "baseline": [int(b) for b in b_arr]}
    names = [lead.name for lead in leads]
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise RecordError(f"cannot create folder: {err.strerror or err}", folder) from None
    hea = folder / f"{rec_name}.hea"
    with (
        atomic_outputs(folder, [f"{rec_name}.dat", f"{rec_name}.hea"]) as tmp,
        reading(hea, "WFDB record for writing"),
    ):
        wfdb.wrsamp(
            rec_name,
            fs=float(record.fs_hz),
            units=["mV"] * len(names),
            sig_name=names,
            p_signal=signal,
            fmt=[fmt] * len(names),
            write_dir=str(tmp),
            **kwargs,
        )
    return hea


def write_csv(record: Record, path: str | Path, *, include_derived: bool = True) -> Path:
    """Write ``time_s`` plus one column per lead (``I [mV]``) with 9 significant digits.

    Nine digits represent every float32 exactly, so the text round-trips to the same values.
    """
    path = Path(path)
    cols = [i for i, lead in enumerate(record.leads) if include_derived or not lead.derived]
    signal = record.window(0, record.n_samples)[:, cols]
    t = np.arange(record.n_samples, dtype=np.float64) / record.fs_hz
    header = ",".join(["time_s"] + [f"{record.leads[i].name} [mV]" for i in cols])
    table = np.column_stack([t, signal.astype(np.float64)])
    try:
        with atomic_output(path) as tmp:
            np.savetxt(tmp, table, delimiter=",", header=header, comments="", fmt="%.9g")
    except OSError as err:
        raise RecordError(f"cannot write CSV: {err.strerror or err}", path) from None
    return path


def _wave_triples(m: WaveMarks) -> list[tuple[int | None, int | None, int | None, str]]:
    return [
        (m.p_on, m.p_peak, m.p_off, "p"),
        (m.qrs_on, m.r_peak, m.qrs_off, "N"),
        (None, m.t_peak, m.t_off, "t"),
    ]


def write_wfdb_annotations(
    folder: str | Path,
    record_name: str,
    fs_hz: float,
    beats_marks: Sequence[WaveMarks],
    extension: str = "rvw",
    beats: Sequence[Beat] | None = None,
) -> Path:
    """Write per-beat wave boundaries as a WFDB annotation file ``<record_name>.<extension>``.

    Args:
        folder: where to write.
        record_name: the WFDB record the marks belong to.
        fs_hz: sampling rate in Hz (stored in the annotation file).
        beats_marks: one WaveMarks per beat, record sample indices; the QRS peak symbol is
            written at ``r_peak`` (or at the matching ``beats[k].r``).
        extension: annotation file extension (LUDB uses the lead name; default ``rvw``).
        beats: optional beats in the same order; their kind (premature, paced) goes into the
            aux note of the QRS peak.

    A wave is written only if at least one of its marks is present.
    """
    folder = Path(folder)
    out = folder / f"{record_name}.{extension}"
    if beats is not None and len(beats) != len(beats_marks):
        raise RecordError(f"{len(beats)} beats but {len(beats_marks)} sets of marks", out)
    if not (math.isfinite(fs_hz) and fs_hz > 0):
        raise RecordError(f"sampling rate must be positive, got {fs_hz!r}", out)
    samples: list[int] = []
    symbols: list[str] = []
    notes: list[str] = []
    order: list[tuple[int, int]] = []  # (beat rank, position within the beat) keeps ties stable
    for k, m in enumerate(beats_marks):
        if beats is not None and m.r_peak is None:
            m = m.with_mark("r_peak", beats[k].r)
        for w, (on, peak, off, sym) in enumerate(_wave_triples(m)):
            if on is None and peak is None and off is None:
                continue
            aux = ""
            if peak is None:
                present = [v for v in (on, off) if v is not None]
                peak = round(sum(present) / len(present))
                aux = NO_PEAK
            elif sym == "N" and beats is not None:
                aux = _KIND_NOTE.get(beats[k].kind, "")
            for pos, (s, sy, note) in enumerate(((on, "(", ""), (peak, sym, aux), (off, ")", ""))):
                if s is None:
                    continue
                if s < 0:
                    raise RecordError(f"beat {k + 1}: negative sample index {s}", out)
                samples.append(int(s))
                symbols.append(sy)
                notes.append(note)
                order.append((k, w * 3 + pos))
    if not samples:
        raise RecordError("no marks to write", out)
    idx = sorted(range(len(samples)), key=lambda i: (samples[i], order[i]))
    try:
        folder.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise RecordError(f"cannot create folder: {err.strerror or err}", folder) from None
    with (
        atomic_outputs(folder, [out.name]) as tmp,
        reading(out, "WFDB annotations for writing"),
    ):
        wfdb.wrann(
            record_name,
            extension,
            np.array([samples[i] for i in idx], dtype=np.int64),
            symbol=[symbols[i] for i in idx],
            aux_note=[notes[i] for i in idx],
            fs=float(fs_hz),
            write_dir=str(tmp),
        )
    return out


_BEAT_KEYS = ("p_on", "p_peak", "p_off", "qrs_on", "r_peak", "qrs_off", "t_on", "t_peak", "t_off")


def read_wfdb_annotations(
    folder: str | Path, record_name: str, extension: str = "rvw"
) -> list[dict[str, int | str | None]]:
    """Read wave boundaries written in the LUDB convention back into per-beat dicts.

    Works on files from ``write_wfdb_annotations`` and on LUDB's own per-lead files. Each dict
    has sample indices (or None) for ``p_on, p_peak, p_off, qrs_on, r_peak, qrs_off, t_on,
    t_peak, t_off`` and ``symbol``/``note`` of the QRS peak. Waves before the first QRS (a P
    without its QRS, a T of an earlier beat) are dropped.
    """
    folder = Path(folder)
    path = folder / f"{record_name}.{extension}"
    if not path.is_file():
        raise RecordError("annotation file not found", path)
    with reading(path, "WFDB annotation file"):
        ann = wfdb.rdann(str(folder / record_name), extension)
        samples = np.asarray(ann.sample, dtype=np.int64)
        symbols = list(ann.symbol)
        aux = list(ann.aux_note) if ann.aux_note is not None else [""] * len(symbols)
    waves: list[dict[str, int | str | None]] = []
    n = len(symbols)
    for i, sym in enumerate(symbols):
        if sym in ("(", ")"):
            continue
        on = int(samples[i - 1]) if i > 0 and symbols[i - 1] == "(" else None
        off = int(samples[i + 1]) if i + 1 < n and symbols[i + 1] == ")" else None
        note = (aux[i] or "").strip("\x00 ")
        peak = None if note == NO_PEAK else int(samples[i])
        kind = "p" if sym == "p" else "t" if sym == "t" else "qrs"
        waves.append(
            {"kind": kind, "on": on, "peak": peak, "off": off, "symbol": sym, "note": note}
        )
    beats: list[dict[str, int | str | None]] = []
    pending_p: dict[str, int | str | None] | None = None
    for w in waves:
        if w["kind"] == "p":
            pending_p = w
        elif w["kind"] == "qrs":
            beat: dict[str, int | str | None] = dict.fromkeys(_BEAT_KEYS)
            beat.update(
                qrs_on=w["on"],
                r_peak=w["peak"],
                qrs_off=w["off"],
                symbol=w["symbol"],
                note="" if w["note"] == NO_PEAK else w["note"],
            )
            if pending_p is not None:
                beat.update(p_on=pending_p["on"], p_peak=pending_p["peak"], p_off=pending_p["off"])
            pending_p = None
            beats.append(beat)
        elif beats and beats[-1]["t_peak"] is None and beats[-1]["t_off"] is None:
            beats[-1].update(t_on=w["on"], t_peak=w["peak"], t_off=w["off"])
    return beats
