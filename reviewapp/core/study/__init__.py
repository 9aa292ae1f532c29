"""Drug-safety QT study: the study table of final readings and the analysis a core lab reports.

- ``timepoints``: subject and timepoint from record headers or a mapping CSV; timepoint roles
  (baseline, drug-free, on drug) and order.
- ``task``: one record's row (open, sidecar, engine, final reading), as a batch worker runs it.
- ``table``: ``StudyRow``, ``records.csv`` and ``beats.csv`` (written and read back).
- ``qt_rr``: QT = a * RR^b fits (Malik et al., Heart 2002): QTcI and QTcP.
- ``change``: replicate averaging, change from baseline, mean change with its 90 % CI.
- ``ich_e14``: categorical outliers (ICH E14, 2005).
- ``analysis``: every step on the table; ``analysis_csv``: ``analysis.csv``.

The final reading of each record comes from ``reviewapp.core.marks.final``. No Qt here; the
report is drawn by ``reviewapp.study_report``.
"""
