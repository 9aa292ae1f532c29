"""HL7 v3 annotated ECG (aECG) XML: reader and writer.

Structure read (HL7 Annotated ECG, namespace ``urn:hl7-org:v3``)::

    AnnotatedECG
      effectiveTime/low@value (or center@value)     acquisition time
      componentOf/.../trialSubject/id@extension       subject id
      .../subjectDemographicPerson/administrativeGenderCode@code, birthTime@value
      component/series                              code RHYTHM
        component/sequenceSet/component/sequence    one per lead plus one time sequence
          code@code  TIME_ABSOLUTE | TIME_RELATIVE | MDC_ECG_LEAD_*
          value      GLIST_TS/GLIST_PQ: increment@value,@unit  (sampling interval)
                     SLIST_PQ: origin@value,@unit; scale@value,@unit; digits
        derivation/derivedSeries                    code REPRESENTATIVE_BEAT (median beat)

A sample's physical value is ``origin + scale * digit`` in the units of ``scale``.
XML is parsed with defusedxml: entity declarations (entity-expansion "billion laughs") and
external entities are refused.
"""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as StdET
from datetime import datetime
from pathlib import Path
from typing import Literal
from xml.etree.ElementTree import Element

import defusedxml
import defusedxml.ElementTree as SafeET
import numpy as np

from reviewapp.core.errors import RecordError
from reviewapp.core.io._common import (
    completed_years,
    frozen_mv,
    mv_factor,
    require_finite,
    unique_names,
)
from reviewapp.core.io.files import atomic_output, require_regular
from reviewapp.core.io.numbers import DECIMAL_EXP, parse_number
from reviewapp.core.record import (
    READ_WHOLE,
    STANDARD_12,
    ArraySource,
    LeadInfo,
    Record,
    SubjectFacts,
    build_record,
    check_signal_budget,
)

NS = "urn:hl7-org:v3"
XSI = "http://www.w3.org/2001/XMLSchema-instance"
_N = f"{{{NS}}}"
MDC_PREFIX = "MDC_ECG_LEAD_"
# HL7 code systems used by the aECG implementation guide: ActCode (series and sequence codes),
# MDC (ISO/IEEE 11073 lead codes), AdministrativeGender.
ACT_CODE_SYSTEM = "2.16.840.1.113883.5.4"
MDC_CODE_SYSTEM = "2.16.840.1.113883.6.24"
GENDER_CODE_SYSTEM = "2.16.840.1.113883.5.1"
MAX_AECG_BYTES = 500_000_000

Series = Literal["rhythm", "derived"]


def _q(*tags: str) -> str:
    return "/".join(_N + t for t in tags)


def _parse_ts(value: str | None) -> datetime | None:
    """HL7 TS ``YYYYMMDDHHMMSS[.fff]`` (any prefix length from the year) -> datetime."""
    if not value:
        return None
    digits = value.split("+")[0].split("-")[0]
    main = digits.split(".")[0]
    fmt = "%Y%m%d%H%M%S"[: {4: 2, 6: 4, 8: 6, 10: 8, 12: 10, 14: 12}.get(len(main), 0)]
    if not fmt:
        return None
    try:
        return datetime.strptime(main, fmt)
    except ValueError:
        return None


def read_aecg(path: Path, *, series: Series = "rhythm") -> Record:
    """Read an HL7 aECG file.

    Args:
        path: the XML file.
        series: ``"rhythm"`` (the recorded signal, default) or ``"derived"`` (the
            representative/median beat the acquiring system computed). When the rhythm series
            is absent the derived one is read, with a note.
    """
    path = Path(path)
    if require_regular(path).st_size > MAX_AECG_BYTES:
        raise RecordError("XML file is too large to be read", path)
    root = _parse(path)
    if root.tag != _N + "AnnotatedECG":
        raise RecordError(
            f"not an HL7 aECG file (root element is {root.tag!r}, expected AnnotatedECG in "
            f"namespace {NS})",
            path,
        )
    notes: list[str] = []
    all_series = list(root.iter(_N + "series"))
    rhythm = [s for s in all_series if _code(s) == "RHYTHM"] or all_series[:1]
    derived = list(root.iter(_N + "derivedSeries"))
    if series == "rhythm":
        chosen = rhythm[0] if rhythm else None
        if chosen is None and derived:
            chosen = derived[0]
            notes.append("no rhythm series in the file; the derived (representative beat) read")
        elif derived:
            notes.append("the file also holds a derived (representative beat) series")
    elif series == "derived":
        chosen = derived[0] if derived else None
        if chosen is None:
            raise RecordError("the file holds no derived (representative beat) series", path)
        notes.append(f"derived series {_code(chosen) or '(no code)'} read")
    else:
        raise RecordError(f"unknown series {series!r}; expected 'rhythm' or 'derived'", path)
    if chosen is None:
        raise RecordError("no waveform series in the aECG file", path)
    fs_hz, names, columns, more_notes = _read_series(chosen, path)
    notes += more_notes
    data = frozen_mv(
        np.column_stack(columns), path, "origin and scale give values beyond any voltage"
    )
    leads = [LeadInfo(name=n, original_name=o, units="mV") for n, o in names]
    return build_record(
        name=path.stem,
        fs_hz=fs_hz,
        source=ArraySource(data),
        leads=leads,
        subject=_subject(root),
        source_path=path,
        source_format="HL7 aECG",
        notes=notes,
    )


def _parse(path: Path) -> Element:
    try:
        tree = SafeET.parse(str(path), forbid_dtd=False, forbid_entities=True, forbid_external=True)
    except defusedxml.EntitiesForbidden:
        raise RecordError(
            "refused: the XML declares entities (entity expansion can exhaust memory); "
            "aECG files need none",
            path,
        ) from None
    except (defusedxml.ExternalReferenceForbidden, defusedxml.DTDForbidden):
        raise RecordError("refused: the XML refers to external entities or DTDs", path) from None
    except defusedxml.DefusedXmlException as err:
        raise RecordError(f"refused unsafe XML: {err}", path) from None
    except StdET.ParseError as err:
        raise RecordError(f"not well-formed XML: {err}", path) from None
    except (UnicodeError, ValueError, LookupError) as err:
        raise RecordError(f"cannot decode XML: {err}", path) from None
    except RecursionError:
        raise RecordError("XML is nested too deeply", path) from None
    return tree.getroot()


def _code(el: Element) -> str:
    code = el.find(_N + "code")
    return "" if code is None else str(code.get("code", "")).strip()


def _float_attr(el: Element | None, attr: str, what: str, path: Path) -> float:
    if el is None or el.get(attr) is None:
        raise RecordError(f"{what} is missing", path)
    # HL7 v3 REAL literal: decimal with an optional exponent.
    return parse_number(el.get(attr, ""), what, DECIMAL_EXP, path)


def _read_series(
    series: Element, path: Path
) -> tuple[float, list[tuple[str, str]], list[np.ndarray], list[str]]:
    notes: list[str] = []
    for seq_set in series.findall(_q("component", "sequenceSet")):
        sequences = seq_set.findall(_q("component", "sequence"))
        time_seqs = [s for s in sequences if _code(s).startswith("TIME_")]
        lead_seqs = [s for s in sequences if not _code(s).startswith("TIME_")]
        if lead_seqs:
            break
    else:
        raise RecordError("the series holds no lead sequences", path)
    if not time_seqs:
        raise RecordError("the sequence set has no time sequence (sampling interval)", path)
    inc = time_seqs[0].find(_q("value", "increment"))
    step = _float_attr(inc, "value", "time increment", path)
    unit = (inc.get("unit") if inc is not None else None) or "s"
    per_s = {"s": 1.0, "ms": 1e-3, "us": 1e-6}.get(unit.strip())
    if per_s is None:
        raise RecordError(f"time increment unit {unit!r} is not s or ms", path)
    if step <= 0:
        raise RecordError(f"time increment must be positive, file says {step:g} {unit}", path)
    fs_hz = 1.0 / (step * per_s)
    if abs(fs_hz - round(fs_hz)) < 1e-6 * fs_hz:
        fs_hz = float(round(fs_hz))
    raw_names: list[str] = []
    columns: list[np.ndarray] = []
    held = 0
    for seq in lead_seqs:
        code = _code(seq) or f"lead {len(raw_names) + 1}"
        value = seq.find(_N + "value")
        if value is None:
            raise RecordError(f"sequence {code} has no value", path)
        origin_el = value.find(_N + "origin")
        scale_el = value.find(_N + "scale")
        digits_el = value.find(_N + "digits")
        if digits_el is None or not (digits_el.text or "").strip():
            raise RecordError(f"sequence {code} has no digits", path)
        scale = _float_attr(scale_el, "value", f"{code} scale", path)
        origin = (
            _float_attr(origin_el, "value", f"{code} origin", path)
            if origin_el is not None
            else 0.0
        )
        unit_scale = scale_el.get("unit") if scale_el is not None else None
        unit_origin = origin_el.get("unit", unit_scale) if origin_el is not None else unit_scale
        f_scale, f_origin = mv_factor(unit_scale), mv_factor(unit_origin)
        if f_scale is None or f_origin is None:
            raise RecordError(
                f"sequence {code}: units {unit_scale!r} / {unit_origin!r} are not uV, mV or V", path
            )
        text = digits_el.text or ""
        if _NOT_DIGITS.search(text):
            raise RecordError(f"sequence {code}: digits are not all numbers", path)
        held += _count_tokens(text)
        check_signal_budget(held, 1, path, "the aECG lead sequences", READ_WHOLE)
        try:
            digits = np.array(text.split(), dtype=np.float64)
        except ValueError:
            raise RecordError(f"sequence {code}: digits are not all numbers", path) from None
        require_finite(digits, path, f"aECG sequence {code}")
        columns.append(origin * f_origin + scale * f_scale * digits)
        raw_names.append(code)
    lengths = {c.shape[0] for c in columns}
    if len(lengths) > 1:
        n = min(lengths)
        if n == 0:
            raise RecordError("a lead sequence is empty", path)
        notes.append(
            f"lead sequences differ in length ({min(lengths)}-{max(lengths)}); "
            f"the common first {n} samples read"
        )
        columns = [c[:n] for c in columns]
    names = unique_names(
        [c[len(MDC_PREFIX) :] if c.startswith(MDC_PREFIX) else c for c in raw_names]
    )
    return fs_hz, list(zip(names, raw_names, strict=True)), columns, notes


# Anything but a decimal digit list (HL7 aECG "digits": whitespace-separated numbers); Python's
# float would also take "nan", "inf" and "1_000".
_NOT_DIGITS = re.compile(r"[^0-9eE.+\-\s]")


def _count_tokens(text: str) -> int:
    """Whitespace-separated tokens of ``text`` without making a string for each (a long digit
    list is held against the memory budget before it is split)."""
    if not text:
        return 0
    raw = np.frombuffer(text.encode("ascii", errors="replace"), dtype=np.uint8)
    blank = (raw == 32) | ((raw >= 9) & (raw <= 13))
    return int((~blank[0]) + np.count_nonzero(blank[:-1] & ~blank[1:]))


def _subject(root: Element) -> SubjectFacts:
    # The implementation guide allows an interval (low/high) or a single time (center).
    low = root.find(_q("effectiveTime", "low"))
    if low is None:
        low = root.find(_q("effectiveTime", "center"))
    acquired = _parse_ts(low.get("value")) if low is not None else None
    trial_subject = next(root.iter(_N + "trialSubject"), None)
    subject_id = sex = None
    age = None
    if trial_subject is not None:
        sid = trial_subject.find(_N + "id")
        subject_id = (sid.get("extension") or None) if sid is not None else None
        person = trial_subject.find(_N + "subjectDemographicPerson")
        if person is not None:
            g = person.find(_N + "administrativeGenderCode")
            sex = (
                {"F": "female", "M": "male"}.get((g.get("code") or "").upper())
                if g is not None
                else None
            )
            b = person.find(_N + "birthTime")
            birth = _parse_ts(b.get("value")) if b is not None else None
            if birth is not None and acquired is not None:
                age = completed_years(birth.date(), acquired.date())
    return SubjectFacts(subject_id=subject_id, age_years=age, sex=sex, acquired_at=acquired)


def _lead_code(name: str) -> str:
    return MDC_PREFIX + name.upper() if name in STANDARD_12 or name in ("X", "Y", "Z") else name


def write_aecg(record: Record, path: str | Path, *, include_derived: bool = False) -> Path:
    """Write ``record`` as an HL7 aECG rhythm series (digits with per-lead scale, origin 0).

    Leads with a known ADC gain are written at that resolution (scale = 1/gain), so WFDB and
    DICOM records round-trip exactly; other leads at 1 uV per digit. Derived leads are left
    out unless ``include_derived`` (a reader derives them again).
    """
    path = Path(path)
    cols = [i for i, lead in enumerate(record.leads) if include_derived or not lead.derived]
    signal = record.window(0, record.n_samples)[:, cols]
    if not np.isfinite(signal).all():
        raise RecordError("cannot write missing (NaN) samples to HL7 aECG", path)
    StdET.register_namespace("", NS)
    StdET.register_namespace("xsi", XSI)
    root = Element(_N + "AnnotatedECG", {f"{{{XSI}}}type": "Observation"})
    StdET.SubElement(root, _N + "id", root="2.25.0", extension=record.name)
    StdET.SubElement(root, _N + "code", code="93000", codeSystem="2.16.840.1.113883.6.12")
    start = record.subject.acquired_at
    start_ts = start.strftime("%Y%m%d%H%M%S") if start else None
    if start_ts:
        eff = StdET.SubElement(root, _N + "effectiveTime")
        StdET.SubElement(eff, _N + "low", value=start_ts)
    subj = record.subject
    if subj.subject_id or subj.sex:
        tp = StdET.SubElement(StdET.SubElement(root, _N + "componentOf"), _N + "timepointEvent")
        sa = StdET.SubElement(StdET.SubElement(tp, _N + "componentOf"), _N + "subjectAssignment")
        ts = StdET.SubElement(StdET.SubElement(sa, _N + "subject"), _N + "trialSubject")
        StdET.SubElement(ts, _N + "id", root="2.25.0", extension=subj.subject_id or "")
        person = StdET.SubElement(ts, _N + "subjectDemographicPerson")
        if subj.sex:
            StdET.SubElement(
                person,
                _N + "administrativeGenderCode",
                code="F" if subj.sex == "female" else "M",
                codeSystem=GENDER_CODE_SYSTEM,
            )
    series = StdET.SubElement(StdET.SubElement(root, _N + "component"), _N + "series")
    StdET.SubElement(series, _N + "code", code="RHYTHM", codeSystem=ACT_CODE_SYSTEM)
    seq_set = StdET.SubElement(StdET.SubElement(series, _N + "component"), _N + "sequenceSet")
    tseq = StdET.SubElement(StdET.SubElement(seq_set, _N + "component"), _N + "sequence")
    if start_ts:
        StdET.SubElement(tseq, _N + "code", code="TIME_ABSOLUTE", codeSystem=ACT_CODE_SYSTEM)
        tval = StdET.SubElement(tseq, _N + "value", {f"{{{XSI}}}type": "GLIST_TS"})
        StdET.SubElement(tval, _N + "head", value=start_ts)
    else:
        StdET.SubElement(tseq, _N + "code", code="TIME_RELATIVE", codeSystem=ACT_CODE_SYSTEM)
        tval = StdET.SubElement(tseq, _N + "value", {f"{{{XSI}}}type": "GLIST_PQ"})
        StdET.SubElement(tval, _N + "head", value="0", unit="s")
    StdET.SubElement(tval, _N + "increment", value=repr(1.0 / record.fs_hz), unit="s")
    for j, i in enumerate(cols):
        lead = record.leads[i]
        gain = lead.adc_gain_per_mv
        scale_uv = 1000.0 / gain if gain and math.isfinite(gain) and gain > 0 else 1.0
        digits = np.rint(signal[:, j].astype(np.float64) * 1000.0 / scale_uv).astype(np.int64)
        seq = StdET.SubElement(StdET.SubElement(seq_set, _N + "component"), _N + "sequence")
        StdET.SubElement(seq, _N + "code", code=_lead_code(lead.name), codeSystem=MDC_CODE_SYSTEM)
        val = StdET.SubElement(seq, _N + "value", {f"{{{XSI}}}type": "SLIST_PQ"})
        StdET.SubElement(val, _N + "origin", value="0", unit="uV")
        StdET.SubElement(val, _N + "scale", value=repr(scale_uv), unit="uV")
        StdET.SubElement(val, _N + "digits").text = " ".join(map(str, digits.tolist()))
    tree = StdET.ElementTree(root)
    StdET.indent(tree, space=" ")
    try:
        with atomic_output(path) as tmp:
            tree.write(tmp, encoding="UTF-8", xml_declaration=True)
    except OSError as err:
        raise RecordError(f"cannot write aECG file: {err.strerror or err}", path) from None
    return path
