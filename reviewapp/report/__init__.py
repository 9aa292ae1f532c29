"""The true-scale report page (Qt drawing on QPdfWriter / QImage) and the other exports.

- ``layout.page_layout(paper, speed_mm_per_s, gain_mm_per_mv)``: page geometry in mm (no Qt);
  ``PageLayout.blocks()`` are the named blocks that never overlap.
- ``content.load_report_content(path, reviewer=None)`` / ``build_report_content(analysis,
  overrides, ...)``: what the page shows, recomputed from signal + marks.
- ``export.write_pdf / write_image (PNG or JPEG by suffix; write_png is an alias) /
  write_measurements_csv ("-" = stdout) / write_wfdb_annotations``; ``render_page`` gives the
  image and the ``page.PageDrawing`` (where each text went, the beat panel's gain).
"""
