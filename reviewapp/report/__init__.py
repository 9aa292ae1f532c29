"""The true-scale report page (Qt drawing on QPdfWriter / QImage) and the other exports.

- ``layout.page_layout(paper, speed_mm_per_s, gain_mm_per_mv)``: page geometry in mm (no Qt).
- ``content.load_report_content(path, reviewer=None)`` / ``build_report_content(analysis,
  overrides, ...)``: what the page shows, recomputed from signal + marks.
- ``export.write_pdf / write_png / write_measurements_csv / write_wfdb_annotations``.
"""
