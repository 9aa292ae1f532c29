"""Identity of a record: a SHA-256 over the files it was read from.

A sidecar stores this fingerprint; opening it against a record with a different fingerprint is
refused, so marks are never applied to the wrong or a changed record.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import numpy as np

from reviewapp.core.errors import MarksError
from reviewapp.core.record import Record

_CHUNK = 1 << 20


def record_source_files(record: Record) -> list[Path]:
    """The files a record was read from, in a fixed order.

    WFDB: the header, then every signal file the header names (in header order, each once,
    e.g. ``s0010_re.dat`` and ``s0010_re.xyz``); a multi-segment header adds each segment's
    header and signal files. Other formats: the one source file. No source file: empty.
    """
    src = record.source_path
    if src is None:
        return []
    src = Path(src)
    if src.suffix.lower() != ".hea":
        return [src]
    return _wfdb_files(src, depth=0)


def _wfdb_files(header: Path, depth: int) -> list[Path]:
    try:
        lines = header.read_text("utf-8", errors="replace").splitlines()
    except OSError as exc:
        raise MarksError(
            f"cannot read the record header to fingerprint it: {exc.strerror}", header
        ) from None
    body = [ln.strip() for ln in lines if ln.strip() and not ln.lstrip().startswith("#")]
    files = [header]
    if not body:
        return files
    first = body[0].split()
    # Record line: "name[/n_segments] n_signals ...": single records list n_signals signal
    # lines, multi-segment records list n_segments segment lines.
    multi = "/" in first[0]
    count = first[0].split("/", 1)[1] if multi else (first[1] if len(first) > 1 else "0")
    n_items = int(count) if count.isdigit() else 0
    for line in body[1 : 1 + n_items]:
        name = line.split()[0]
        if multi:
            if name != "~" and depth == 0:
                files += _wfdb_files(header.with_name(name + ".hea"), depth + 1)
            continue
        path = header.with_name(name)
        if name != "~" and path not in files:
            files.append(path)
    return files


def record_fingerprint(record: Record) -> str:
    """``"sha256:<hex>"`` over the record's source files (see ``record_source_files``).

    Each file contributes its length and bytes, so no two file lists hash alike; names do not
    enter, so a record copied to another folder keeps its identity. A record with no source
    file (synthetic, in memory) is hashed over its samples, rate and lead names instead and
    gets the prefix ``"sha256-signal:"``.

    >>> import numpy as np
    >>> from reviewapp.core.record import record_from_array
    >>> rec = record_from_array(np.zeros((10, 1)), 500.0, ["V1"])
    >>> record_fingerprint(rec).startswith("sha256-signal:")
    True
    """
    files = record_source_files(record)
    h = hashlib.sha256()
    if not files:
        h.update(repr((float(record.fs_hz), record.lead_names, record.n_samples)).encode())
        data = np.ascontiguousarray(record.signal_mv, dtype="<f4")
        h.update(data.tobytes())
        return "sha256-signal:" + h.hexdigest()
    for path in files:
        try:
            with open(path, "rb") as fh:
                size = fh.seek(0, 2)
                fh.seek(0)
                h.update(size.to_bytes(8, "little"))
                while chunk := fh.read(_CHUNK):
                    h.update(chunk)
        except OSError as exc:
            raise MarksError(
                f"cannot read a record file to fingerprint it: {exc.strerror or exc}", path
            ) from None
    return "sha256:" + h.hexdigest()
