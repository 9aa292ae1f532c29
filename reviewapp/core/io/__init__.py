"""Record readers: one entry point, ``open_record``, dispatching to one module per format.

Formats: WFDB (PhysioNet), EDF/EDF+/BDF, CSV/TSV text, HL7 aECG XML, DICOM waveform objects.
Every reader returns the same ``Record`` (mV, float32, lazily served) via ``build_record``, and
every failure is a ``RecordError`` naming the file.
"""

from __future__ import annotations

from pathlib import Path

from reviewapp.core.errors import RecordError
from reviewapp.core.io.files import is_regular, read_regular, require_regular
from reviewapp.core.record import Record

WFDB_SUFFIXES = (".hea",)
EDF_SUFFIXES = (".edf", ".bdf")
CSV_SUFFIXES = (".csv", ".tsv", ".txt")
AECG_SUFFIXES = (".xml",)
DICOM_SUFFIXES = (".dcm", ".dicom")
SUPPORTED_SUFFIXES: tuple[str, ...] = (
    WFDB_SUFFIXES + EDF_SUFFIXES + CSV_SUFFIXES + AECG_SUFFIXES + DICOM_SUFFIXES
)

_DICOM_MAGIC_OFFSET = 128
_SIDECAR_ENDINGS = (".marks.json",)


def _sniff(path: Path) -> bytes:
    try:
        return read_regular(path, _DICOM_MAGIC_OFFSET + 4)
    except FileNotFoundError:
        raise RecordError("file not found", path) from None
    except OSError as err:
        raise RecordError(f"cannot open file: {err.strerror or err}", path) from None


def _is_dicom(head: bytes) -> bool:
    return len(head) >= _DICOM_MAGIC_OFFSET + 4 and head[128:132] == b"DICM"


def _not_a_record(problem: str, path: Path) -> RecordError:
    if problem.startswith("is a folder"):
        problem = "is a folder, not a record file"
    return RecordError(problem, path)


def detect_format(path: Path) -> str:
    """Short format name for ``path`` ("WFDB", "EDF", "CSV", "HL7 aECG", "DICOM").

    Extension first; files with other or no extension are sniffed (DICOM preamble, XML
    declaration, EDF version field "0       ", a WFDB header beside the file).
    """
    suffix = path.suffix.lower()
    if suffix in WFDB_SUFFIXES:
        return "WFDB"
    if suffix in EDF_SUFFIXES:
        return "EDF"
    if suffix in CSV_SUFFIXES:
        return "CSV"
    if suffix in AECG_SUFFIXES:
        return "HL7 aECG"
    if suffix in DICOM_SUFFIXES:
        return "DICOM"
    from reviewapp.core.io.wfdb_format import is_wfdb_record

    if path.name not in ("", ".", "..") and is_wfdb_record(path):
        return "WFDB"
    # stat, never open: a FIFO or device would block the sniffing read below.
    require_regular(path, _not_a_record)
    head = _sniff(path)
    if _is_dicom(head):
        return "DICOM"
    stripped = head.lstrip(b"\xef\xbb\xbf \t\r\n")
    if stripped.startswith(b"<?xml") or stripped.startswith(b"<AnnotatedECG"):
        return "HL7 aECG"
    if head[:8] == b"0       " or head[:8] == b"\xffBIOSEMI":
        return "EDF"
    raise RecordError(
        f"unsupported or unknown record format (supported: {', '.join(SUPPORTED_SUFFIXES)}, "
        "a WFDB record name, or a DICOM file)",
        path,
    )


def open_record(
    path: str | Path, *, fs_hz: float | None = None, units: str | None = None
) -> Record:
    """Open any supported ECG record.

    Args:
        path: record file (for WFDB the ``.hea``, a signal file, or the record name).
        fs_hz: sampling rate in Hz, for text formats that do not state it (CSV without a time
            column). Ignored by formats that carry their own rate.
        units: physical units of the samples where the file does not say (CSV) or to override
            a WFDB header ("uV", "mV", "V").

    Raises RecordError (naming the file) for missing, unsupported or damaged files.

    >>> rec = open_record("ludb/1.hea")  # doctest: +SKIP
    >>> rec.lead_names[:3], rec.fs_hz  # doctest: +SKIP
    (('I', 'II', 'III'), 500.0)
    """
    if isinstance(path, str) and not path.strip():
        raise RecordError(f"{path!r} is not a record file: the path is empty")
    path = Path(path)
    fmt = detect_format(path)
    try:
        return _open_as(path, fmt, fs_hz=fs_hz, units=units)
    except RecordError:
        raise
    except MemoryError:
        raise RecordError(f"not enough memory to read this {fmt} file", path) from None
    except Exception as err:
        # Readers wrap every failure they know of; anything else is a reader bug. The user
        # still gets one line naming the file, and the fuzz tests look for this wording.
        raise RecordError(
            f"{UNEXPECTED} while reading {fmt} ({type(err).__name__}: {err}); "
            "please report this file",
            path,
        ) from err


UNEXPECTED = "unexpected failure"


def _open_as(path: Path, fmt: str, *, fs_hz: float | None, units: str | None) -> Record:
    if fmt != "WFDB":
        require_regular(path, _not_a_record)  # the libraries below open it by name
    if fmt == "WFDB":
        from reviewapp.core.io.wfdb_format import read_wfdb

        return read_wfdb(path, units=units)
    if fmt == "EDF":
        from reviewapp.core.io.edf_format import read_edf

        return read_edf(path)
    if fmt == "CSV":
        from reviewapp.core.io.csv_format import read_csv

        return read_csv(path, fs_hz=fs_hz, units=units)
    if fmt == "HL7 aECG":
        from reviewapp.core.io.aecg_format import read_aecg

        return read_aecg(path)
    from reviewapp.core.io.dicom_format import read_dicom

    return read_dicom(path)


def find_records(folder: str | Path, recursive: bool = True) -> list[Path]:
    """One path per record under ``folder``, sorted.

    WFDB records are listed by their ``.hea`` (signal and annotation files are skipped);
    marks sidecars (``*.marks.json``) and other JSON (ground truth) are not records. Segment
    headers of multi-segment WFDB records are listed only through their master header.
    """
    from reviewapp.core.io.csv_format import looks_like_ecg_csv

    folder = Path(folder)
    if not folder.is_dir():
        raise RecordError("not a folder", folder)
    pattern = "**/*" if recursive else "*"
    found: list[Path] = []
    for p in folder.glob(pattern):
        if p.name.startswith(".") or not is_regular(p):
            continue
        name = p.name.lower()
        if name.endswith(_SIDECAR_ENDINGS) or name.endswith(".json"):
            continue
        suffix = p.suffix.lower()
        if suffix not in SUPPORTED_SUFFIXES:
            continue
        # Tables and XML beside the records (diagnosis lists, licences) are not ECGs.
        if suffix in CSV_SUFFIXES and not looks_like_ecg_csv(p):
            continue
        if suffix in AECG_SUFFIXES and not _mentions(p, b"AnnotatedECG"):
            continue
        found.append(p)
    found = sorted(set(found))
    return _without_wfdb_segments(found)


def _mentions(path: Path, marker: bytes) -> bool:
    try:
        return marker in read_regular(path, 4096)
    except (OSError, RecordError):
        return False


def _without_wfdb_segments(paths: list[Path]) -> list[Path]:
    """Drop headers that a multi-segment master header in the same folder names as segments."""
    segments: set[Path] = set()
    for p in paths:
        if p.suffix.lower() != ".hea":
            continue
        try:
            text = read_regular(p, 1_000_000).decode("latin-1")
        except (OSError, RecordError):
            continue
        first = text.lstrip().split("\n", 1)[0]
        # A master header's record line reads "name/n_segments n_sig fs len".
        if "/" in first.split(" ", 1)[0]:
            for line in text.splitlines()[1:]:
                parts = line.split()
                if len(parts) >= 2 and not line.startswith("#") and parts[0] != "~":
                    segments.add(p.with_name(parts[0] + ".hea"))
    return [p for p in paths if p not in segments]
