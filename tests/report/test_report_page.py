"""The report page is at true scale: paper size, grid pitch, speed and gain read back from files.

References:
- ISO 216: A4 is 210 x 297 mm; ANSI/ASME Y14.1: US Letter is 8.5 x 11 in (215.9 x 279.4 mm).
- PDF 32000-1:2008 section 8.3.2.3: default user space unit is 1/72 inch, so a MediaBox in points
  gives the physical sheet size.
- ECG paper: 1 mm minor / 5 mm major grid, 25 mm/s, 10 mm/mV, 1 mV calibration pulse (AHA/ACCF/HRS
  recommendations for the standardization of the ECG, Kligfield et al., Circulation
  2007;115:1306-1324; from memory).
- PNG pHYs chunk (PNG spec, ISO/IEC 15948 section 11.3.5.3): pixels per metre.
"""

from __future__ import annotations

import re
import zlib
from pathlib import Path

import numpy as np
import pytest

from reviewapp import CLINICAL_CAUTION
from reviewapp.core.engine import analyse
from reviewapp.core.synth import SynthParams, generate
from reviewapp.report.content import build_report_content
from reviewapp.report.export import render_image, write_pdf, write_png
from reviewapp.report.layout import page_layout

MM_PER_PT = 25.4 / 72.0


@pytest.fixture(scope="module")
def synth_content():
    """60 bpm synthetic 12-lead, so R peaks are exactly 1 s apart (invented data)."""
    syn = generate(SynthParams(hr_bpm=60.0, duration_s=10.0, seed=3), name="synthetic-60")
    return build_report_content(analyse(syn.record))


def _pdf_content_stream(data: bytes) -> bytes:
    """The page's drawing stream: the Flate stream that holds path operators."""
    for raw in re.findall(rb"stream\r?\n(.*?)\r?\nendstream", data, re.S):
        try:
            text = zlib.decompress(raw)
        except zlib.error:
            text = raw
        if b" cm" in text and b" m\n" in text:
            return text
    raise AssertionError("no page content stream found")


def _stroked_segments(
    stream: bytes,
) -> tuple[float, dict[tuple[str, ...], list[tuple[float, ...]]]]:
    """(points per device unit from the page ``cm``, line segments grouped by stroke colour)."""
    tokens = stream.split()
    scale = None
    colour: tuple[str, ...] = ()
    segs: dict[tuple[str, ...], list[tuple[float, ...]]] = {}
    stack: list[bytes] = []
    last_m: tuple[float, float] | None = None
    for tok in tokens:
        if tok == b"cm" and scale is None:
            scale = float(stack[-6])
        elif tok == b"SCN":
            colour = tuple(t.decode() for t in stack[-3:])
        elif tok == b"m":
            last_m = (float(stack[-2]), float(stack[-1]))
        elif tok == b"l" and last_m is not None:
            x2, y2 = float(stack[-2]), float(stack[-1])
            segs.setdefault(colour, []).append((*last_m, x2, y2))
            last_m = (x2, y2)
        if tok.isalpha() or tok in (b"SCN", b"cm"):
            stack = []
        else:
            stack.append(tok)
    assert scale is not None
    return scale, segs


@pytest.mark.parametrize(
    ("paper", "w_mm", "h_mm"),
    [("a4", 297.0, 210.0), ("letter", 279.4, 215.9)],
)
def test_pdf_mediabox_is_the_landscape_sheet(tmp_path: Path, synth_content, paper, w_mm, h_mm):
    out = tmp_path / f"page-{paper}.pdf"
    write_pdf(out, synth_content, page_layout(paper))
    data = out.read_bytes()
    m = re.search(rb"/MediaBox\s*\[\s*([-\d.]+)\s+([-\d.]+)\s+([-\d.]+)\s+([-\d.]+)\s*\]", data)
    assert m, "no MediaBox in the PDF"
    x0, y0, x1, y1 = (float(v) for v in m.groups())
    # A4 landscape = 841.89 x 595.28 pt (297 x 210 mm at 72 pt/in); within 1 %.
    assert (x1 - x0) * MM_PER_PT == pytest.approx(w_mm, rel=0.01)
    assert (y1 - y0) * MM_PER_PT == pytest.approx(h_mm, rel=0.01)
    assert (
        data.count(b"/Type /Page\n") + data.count(b"/Type /Page ") + data.count(b"/Type/Page") >= 1
    )


def test_pdf_grid_lines_are_1_mm_and_5_mm_apart(tmp_path: Path, synth_content):
    out = tmp_path / "page.pdf"
    layout = write_pdf(out, synth_content, page_layout("a4"))
    scale, segs = _stroked_segments(_pdf_content_stream(out.read_bytes()))
    pitches = {}
    for colour, lines in segs.items():
        # Vertical grid lines span the whole grid height.
        xs = sorted(
            {
                round(x1, 3)
                for x1, y1, x2, y2 in lines
                if x1 == x2 and abs(y2 - y1) * scale * MM_PER_PT > 100
            }
        )
        if len(xs) > 20:
            pitches[colour] = np.median(np.diff(xs)) * scale * MM_PER_PT
    values = sorted(pitches.values())
    assert len(values) == 2, f"expected a minor and a major grid colour, got {pitches}"
    minor, major = values
    assert minor == pytest.approx(1.0, rel=0.01)
    # The major pitch seen between majors (minor colour skips the majors: spacing 1 mm still).
    assert major == pytest.approx(5.0, rel=0.01)
    assert layout.grid.w % 5 == 0 and layout.grid.h % 5 == 0


def _grid_columns(img: np.ndarray, y_px: int) -> np.ndarray:
    """x centres of reddish grid-line pixel runs along row ``y_px``."""
    row = img[y_px - 2 : y_px + 3].astype(int)
    r, g = row[..., 0], row[..., 1]
    reddish = ((r - g) > 8).mean(axis=0) > 0.5
    edges = np.flatnonzero(np.diff(reddish.astype(np.int8)))
    starts, ends = edges[::2] + 1, edges[1::2] + 1
    n = min(len(starts), len(ends))
    return (starts[:n] + ends[:n] - 1) / 2.0


def _qimage_to_array(img) -> np.ndarray:
    from PySide6.QtGui import QImage

    img = img.convertToFormat(QImage.Format.Format_RGB888)
    w, h, bpl = img.width(), img.height(), img.bytesPerLine()
    buf = np.frombuffer(img.constBits(), dtype=np.uint8, count=bpl * h).reshape(h, bpl)
    return buf[:, : w * 3].reshape(h, w, 3).copy()


def test_png_physical_size_grid_speed_and_gain(tmp_path: Path, synth_content):
    from PySide6.QtGui import QImage

    dpi = 300.0
    out = tmp_path / "page.png"
    layout = page_layout("a4")
    write_png(out, synth_content, layout, dpi=dpi)
    img = QImage(str(out))
    assert not img.isNull()
    # pHYs read back: physical size of the sheet within 1 %.
    w_mm = img.width() / img.dotsPerMeterX() * 1000.0
    h_mm = img.height() / img.dotsPerMeterY() * 1000.0
    assert w_mm == pytest.approx(297.0, rel=0.01)
    assert h_mm == pytest.approx(210.0, rel=0.01)
    px_per_mm = img.dotsPerMeterX() / 1000.0
    a = _qimage_to_array(img)

    # Grid: along a row inside the bottom grid box (below the rhythm strip marks).
    y = round((layout.grid.bottom - 1.5) * px_per_mm)
    xs = _grid_columns(a, y)
    assert len(xs) == round(layout.grid.w) + 1  # every 1 mm line of the grid is seen
    pitch_px = np.polyfit(np.arange(len(xs)), xs, 1)[0]
    assert pitch_px / px_per_mm == pytest.approx(1.0, rel=0.01)

    # Gain: the calibration pulse of row 1 is 1 mV high = 10 mm at 10 mm/mV: ink of its top
    # (middle of the pulse) against ink of the flat lead-in before it.
    top = round(layout.grid.y * px_per_mm)
    bottom = round((layout.row_baselines_mm[0] + 5.0) * px_per_mm)

    def ink_row(x_mm: float) -> float:
        x = round(x_mm * px_per_mm)
        col = a[top:bottom, x - 1 : x + 2].max(axis=2).min(axis=1)
        dark = np.flatnonzero(col < 90)
        assert dark.size > 0
        return (dark.mean() + top) / px_per_mm

    pulse_top = ink_row(layout.grid.x + layout.cal_width_mm / 2)
    lead_in = ink_row(layout.grid.x + 1.6)
    assert lead_in - pulse_top == pytest.approx(10.0, abs=0.2)
    assert lead_in == pytest.approx(layout.row_baselines_mm[0], abs=0.2)

    # Speed: on the rhythm strip the R peaks of a 60 bpm record are 1 s = 25 mm apart.
    base = layout.row_baselines_mm[3]
    band = a[round((base - 12) * px_per_mm) : round((base - 4) * px_per_mm)]
    x0 = round(layout.trace_x0_mm * px_per_mm)
    inked = (band[:, x0:].max(axis=2) < 80).any(axis=0)
    runs = np.flatnonzero(np.diff(inked.astype(np.int8)) == 1)
    peaks_mm = (runs + x0) / px_per_mm
    assert len(peaks_mm) >= 8
    spacing = np.median(np.diff(peaks_mm))
    assert spacing == pytest.approx(25.0, rel=0.01)


def test_png_letter_and_speed_50(tmp_path: Path, synth_content):
    layout = page_layout("letter", speed_mm_per_s=50.0, gain_mm_per_mv=20.0)
    img = render_image(synth_content, layout, dpi=150.0)
    assert img.width() / img.dotsPerMeterX() * 1000 == pytest.approx(279.4, rel=0.01)
    assert layout.shown_s == pytest.approx(5.0)
    assert layout.grid.x >= 5.0 and layout.grid.right <= 279.4 - 5.0


def _stream(body: bytes) -> bytes:
    m = re.search(rb"stream\r?\n(.*?)\r?\nendstream", body, re.S)
    assert m
    # The lazy "\r?\n" before "endstream" eats a compressed stream's last byte when that
    # byte is "\r" (1 time in 256): decompress what is there rather than fail on the checksum.
    try:
        return zlib.decompressobj().decompress(m.group(1))
    except zlib.error:
        return m.group(1)


def _cmap(text: bytes) -> dict[int, str]:
    """Glyph code -> text, from a ToUnicode CMap (bfchar and both bfrange forms)."""
    out: dict[int, str] = {}
    h = lambda b: int(b, 16)  # noqa: E731
    for block in re.findall(rb"beginbfrange(.*?)endbfrange", text, re.S):
        for lo, hi, dst in re.findall(
            rb"<([0-9A-Fa-f]+)>\s*<([0-9A-Fa-f]+)>\s*(\[[^\]]*\]|<[0-9A-Fa-f]+>)", block
        ):
            if dst.startswith(b"["):
                for k, u in enumerate(re.findall(rb"<([0-9A-Fa-f]+)>", dst)):
                    out[h(lo) + k] = chr(h(u))
            else:
                for k in range(h(hi) - h(lo) + 1):
                    out[h(lo) + k] = chr(h(dst[1:-1]) + k)
    for block in re.findall(rb"beginbfchar(.*?)endbfchar", text, re.S):
        for c, u in re.findall(rb"<([0-9A-Fa-f]+)>\s*<([0-9A-Fa-f]+)>", block):
            out[h(c)] = chr(h(u))
    return out


def pdf_text(data: bytes) -> str:
    """All text drawn on the page, in drawing order, decoded through each font's ToUnicode map.

    Qt writes one glyph (or a few) per Tj with explicit positions and no spaces; the result is
    the drawn characters concatenated, ligatures expanded.
    """
    objs = {int(n): body for n, body in re.findall(rb"(\d+) 0 obj(.*?)endobj", data, re.S)}
    fonts: dict[bytes, dict[int, str]] = {}
    for name, num in re.findall(rb"/(F\d+)\s+(\d+)\s+0\s+R", data):
        tu = re.search(rb"/ToUnicode\s+(\d+)\s+0\s+R", objs.get(int(num), b""))
        if tu:
            fonts[name] = _cmap(_stream(objs[int(tu.group(1))]))
    out: list[str] = []
    for body in objs.values():
        if b"stream" not in body:
            continue
        text = _stream(body)
        if b"BT" not in text:
            continue
        font: dict[int, str] = {}
        for m in re.finditer(rb"/(F\d+)\s+[\d.]+\s+Tf|<([0-9A-Fa-f]+)>\s*Tj", text):
            if m.group(1):
                font = fonts.get(m.group(1), {})
            else:
                hexs = m.group(2)
                out += [font.get(int(hexs[i : i + 4], 16), "?") for i in range(0, len(hexs), 4)]
    return "".join(out).replace("\ufb01", "fi").replace("\ufb02", "fl")


def _squash(s: str) -> str:
    return re.sub(r"\s+", "", s)


def test_caution_status_and_values_are_printed_in_the_pdf(tmp_path: Path, synth_content):
    out = tmp_path / "page.pdf"
    write_pdf(out, synth_content)
    text = _squash(pdf_text(out.read_bytes()))
    assert _squash(CLINICAL_CAUTION) in text
    assert "UNREAD" in text
    assert "25mm/s" in text and "10mm/mV" in text
    hr = next(r for r in synth_content.rows if r.quantity == "hr_bpm")
    assert hr.value is not None
    # 60 bpm by construction (invented synthetic record).
    assert f"{hr.value:.0f}" == "60"
    assert "Heartrate60bpm" in text


def test_two_lead_record_gets_full_width_strips(tmp_path: Path, shared_data: Path):
    """QTDB sel100 (MLII, V5; PhysioNet): not a 12-lead, so no empty 3 x 4 columns."""
    import wfdb

    from reviewapp.core.record import record_from_array

    src = wfdb.rdrecord(str(shared_data / "qtdb" / "sel100"), sampto=2500)
    rec = record_from_array(src.p_signal, src.fs, src.sig_name, name="sel100-window")
    content = build_report_content(analyse(rec))
    out = tmp_path / "strips.pdf"
    write_pdf(out, content)
    text = _squash(pdf_text(out.read_bytes()))
    assert "MLII" in text and "V5" in text
    # No empty 3 x 4 column and no rhythm-strip label (the interpretation may say "rhythm").
    assert "notrecorded" not in text and not re.search(r"(MLII|V5)rhythm", text)
