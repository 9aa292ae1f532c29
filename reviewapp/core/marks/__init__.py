"""Reviewer marks that are never lost: the ``<record>.marks.json`` sidecar.

File and location
-----------------
One plain JSON file beside each record: ``<record stem>.marks.json`` (for WFDB the ``.hea``
stem, e.g. ``1.hea`` -> ``1.marks.json``). UTF-8, keys sorted, indent 2, one value per line,
so it reads and diffs well. Times are seconds from record start, rounded to the record's
sample grid (``round(t * fs) / fs``); representative-beat times are seconds relative to the
representative beat's R (negative before R); ``null`` means absent. The format is versioned
(``schema_version``, now 2) and described by the JSON Schema ``sidecar.schema.json`` in this
package; every load and every save is validated against it. A version-1 file (before the
reader's interpretation statements) is validated against ``sidecar-1.schema.json``, migrated
in memory (every reading gets an empty statement list; every mark, caliper, note, status and
audit event stays as it was) and written as version 2 with the next change.

Top-level fields
----------------
- ``format``: always ``"reviewapp-marks"``; ``schema_version``: 2.
- ``record``: ``name``, ``fingerprint`` (``"sha256:<hex>"`` over the header and every signal
  file it names, or the one source file; ``"sha256-signal:<hex>"`` over the samples for a
  record without a file), ``fs_hz``, ``n_samples``, ``lead_names``. A sidecar whose
  fingerprint differs from the record's is refused (ForeignSidecarError), never applied.
- ``automatic``: the engine's marks and the ``engine_version`` that made them:
  ``representative.marks_s`` / ``lead_marks_s`` (relative to R) and ``beats`` (``r_s``,
  ``kind``, global ``marks_s``). Replaced by ``store.set_automatic``; readings untouched.
- ``readings``: one per reviewer id, each with ``role`` (first/second/adjudicator),
  ``blinded``, ``status`` (unread/in_progress/signed_off), ``signed_off_by``/``_at``,
  ``overrides`` (``scope`` representative|beat, ``fiducial``, ``beat_r_s`` for a beat,
  ``lead`` or null for global, ``old_s`` (the automatic value replaced) and ``new_s``),
  ``calipers`` (``id``, ``kind`` time|amplitude, ``lead``, ``t1_s``, ``t2_s``, ``v1_mv``,
  ``v2_mv``, ``label``), ``notes`` (``id``, ``text``) and ``statements``, the reader's
  interpretation in their order (``id``, ``code`` from ``core.interpret.catalogue`` or
  ``other.free_text``, ``text`` as the reader keeps it, ``origin`` automatic|catalogue|
  free_text|reader and ``from_reader`` for a statement adopted from another reading).
- ``audit``: append-only list of events: ``id``, ``at`` (UTC ISO 8601), ``reviewer``,
  ``action`` (move_fiducial, reset_fiducial, add/move/delete_caliper, add/edit/delete_note,
  set_status, sign_off, adjudicate, add/edit/delete/move_statement, set_automatic, reopen,
  restore_sign_off, merge, and
  ``undo:<action>`` / ``redo:<action>``), ``target`` (what changed), ``old``, ``new``.
- ``listing_cache`` (optional, written by ``reviewapp batch``): a few global values computed
  from the automatic marks (``hr_bpm``, ``pr_ms``, ``qrs_ms``, ``qt_ms``, ``qtc_*_ms``,
  ``flags``, and ``reasons``: ``quantity``, ``kind`` not_comparable|caution, ``text``),
  labelled with ``kind``, ``engine_version`` and ``record_fingerprint``, so the worklist can
  list thousands of records fast. A cache, never truth: values are recomputed
  from signal + marks when the record is opened (see reviewapp/batch/summary.py).

Example (a complete, schema-valid file; a real one has an event for every change)::

    {
      "audit": [
        {
          "action": "move_fiducial",
          "at": "2026-12-02T00:52:06.679442Z",
          "id": "da2c2198a55b485cb00b9152db082550",
          "new": {"beat_r_s": null, "fiducial": "t_off", "lead": null,
                  "new_s": 0.372, "old_s": 0.35, "scope": "representative"},
          "old": null,
          "reviewer": "reader1",
          "target": "t_off of representative beat, global"
        }
      ],
      "automatic": {
        "beats": [{"kind": "dominant", "r_s": 0.6, "marks_s": {"p_on": 0.45,
                   "p_off": 0.54, "qrs_on": 0.556, "qrs_off": 0.652, "t_off": 0.95}}],
        "computed_at": "2026-12-02T00:40:00.000000Z",
        "engine_version": "0.1.0",
        "representative": {"lead_marks_s": {}, "marks_s": {"p_on": -0.15, "p_off": -0.06,
                           "qrs_on": -0.044, "qrs_off": 0.052, "t_off": 0.35}}
      },
      "format": "reviewapp-marks",
      "readings": {
        "reader1": {
          "blinded": false,
          "calipers": [{"id": "47643d95a13444c1", "kind": "time", "label": "QT",
                        "lead": "II", "t1_s": 0.556, "t2_s": 0.95, "v1_mv": 0.0,
                        "v2_mv": 0.0}],
          "notes": [{"id": "3b577bc5d9364bb0", "text": "T end taken from II."}],
          "overrides": [{"beat_r_s": null, "fiducial": "t_off", "lead": null,
                         "new_s": 0.372, "old_s": 0.35, "scope": "representative"}],
          "reviewer": "reader1",
          "role": "first",
          "signed_off_at": "2026-12-02T00:52:06.807307Z",
          "signed_off_by": "reader1",
          "statements": [{"code": "rhythm.sinus", "from_reader": null,
                          "id": "9f1c2a7be0d34c55", "origin": "automatic",
                          "text": "sinus rhythm"}],
          "status": "signed_off"
        }
      },
      "record": {
        "fingerprint":
          "sha256:c0ffeec0ffeec0ffeec0ffeec0ffeec0ffeec0ffeec0ffeec0ffeec0ffee0123",
        "fs_hz": 500.0,
        "lead_names": ["I", "II"],
        "n_samples": 5000,
        "name": "demo"
      },
      "schema_version": 2
    }

Never losing a mark
-------------------
- Every change is saved at once: a temporary file in the same folder, flush + ``os.fsync``,
  ``os.replace``, fsync of the folder. The previous version is kept as
  ``<name>.marks.json.bak``. A kill at any instant leaves the old or the new file.
- Before each save the file is hashed and compared with the version this store loaded or
  wrote. If another instance changed it, nothing is written and ``ConflictError`` offers:
  ``store.resolve_reload()``, ``store.resolve_save_aside()`` (keeps this store's version as
  ``<name>.marks.<reviewer>.<utc>.json``) or ``store.resolve_merge()`` (three-way merge;
  ``MergeConflictError`` if both changed the same override, caliper, note or status).
- ``<name>.marks.json.lock`` (pid, host, boot id, process start time, reviewer) detects a
  second window (``LockedError`` naming the holder, ``holder`` holding its fields); a lock
  whose process is gone (dead, its pid reused by another process, or from before a reboot) is
  taken over silently. Only the lock's holder saves: there is no unlocked writer
  (``lock=False`` is for read-only stores), and each save is a compare-and-swap under an OS
  lock. ``MarksStore.take_over(record, reviewer)`` displaces a live lock on purpose (a hung
  window, another computer): ``store.took_over.warning`` is the text to show and a
  ``take_over_lock`` audit event is saved; the displaced window's next save is refused with
  ``TakenOverError`` (a ``ConflictError`` naming the new holder), whose way out is
  ``store.resolve_save_aside()``.
- A corrupt, hostile (wrong types, over-long strings, nesting deeper than 32, NaN/Infinity,
  files over 50 MB), future-version or foreign sidecar raises ``UnreadableSidecarError``
  naming the file and touches nothing. To start a fresh reading beside it, open with
  ``fresh_if_unreadable=True``: the bad file (and its ``.bak``) are renamed to
  ``*.set-aside-<utc>``; nothing is ever deleted.
- Signing off freezes a reading; a later edit reopens it (``reopen`` event, status back to
  ``in_progress``).

Using it
--------
Window: ``store = MarksStore.open(record, reviewer, role=...)``; make commands with
``store.edits`` (``move_fiducial``, ``from_mark`` for an engine ``MarkOverride``,
``reset_fiducial``, ``add_caliper``/``move_caliper``/``delete_caliper``,
``add_note``/``edit_note``/``delete_note``, ``set_status``, ``sign_off``); run them with
``store.apply(cmd, mode="do"|"undo"|"redo")`` then ``store.save()`` (or ``store.do``), e.g.
from a QUndoCommand, or with the plain ``UndoStack``; clear the undo history when
``store.revision`` changes (reload or merge). Measure with
``analysis.reading(store.engine_overrides(rep.r_index))``. Batch:
``write_automatic(record, automatic_from_analysis(analysis))``.

Blinded second read and comparison
----------------------------------
A second reader opens with ``role="second"`` (blinded by default): ``store.reading`` is theirs,
``store.automatic`` is the engine's marks only if ``show_automatic``; ``store.audit`` holds
only their own events; ``store.readings()`` and ``store.sidecar`` raise ``BlindedError``.
``compare_readings`` lists both readers' fiducials and recomputed intervals with differences
and flags; an adjudicator (``role="adjudicator"``) records final values with
``store.edits.adjudicate_fiducial`` or ``store.edits.adopt_interval``.
"""

from reviewapp.core.marks.codec import MAX_DEPTH, MAX_SIDECAR_BYTES, schema
from reviewapp.core.marks.commands import (
    Command,
    Composite,
    SetCaliper,
    SetNote,
    SetOverride,
    SetStatus,
    UndoStack,
)
from reviewapp.core.marks.compare import (
    Comparison,
    ComparisonRow,
    StatementRow,
    compare_readings,
    compare_statements,
)
from reviewapp.core.marks.convert import (
    automatic_from_analysis,
    override_from_mark,
    overrides_for,
    record_identity,
    sidecar_path_for,
)
from reviewapp.core.marks.edits import INTERVAL_ENDS, Edits, snap_s
from reviewapp.core.marks.errors import (
    BlindedError,
    ConflictError,
    ForeignSidecarError,
    FutureVersionError,
    LockedError,
    MergeConflictError,
    ReadOnlyError,
    TakenOverError,
    UnreadableSidecarError,
)
from reviewapp.core.marks.fingerprint import record_fingerprint, record_source_files
from reviewapp.core.marks.merge import merge_sidecars
from reviewapp.core.marks.model import (
    SCHEMA_VERSION,
    AuditEvent,
    AutoBeat,
    AutomaticMarks,
    Caliper,
    FiducialTimes,
    Note,
    Override,
    ReaderStatement,
    RecordIdentity,
    RepresentativeTimes,
    ReviewerReading,
    Sidecar,
)
from reviewapp.core.marks.store import (
    LockTakeover,
    MarksStore,
    backup_path_for,
    blinded_view,
    load_sidecar,
    write_automatic,
)

__all__ = [
    "INTERVAL_ENDS",
    "MAX_DEPTH",
    "MAX_SIDECAR_BYTES",
    "SCHEMA_VERSION",
    "AuditEvent",
    "AutoBeat",
    "AutomaticMarks",
    "BlindedError",
    "Caliper",
    "Command",
    "Comparison",
    "ComparisonRow",
    "Composite",
    "ConflictError",
    "Edits",
    "FiducialTimes",
    "ForeignSidecarError",
    "FutureVersionError",
    "LockTakeover",
    "LockedError",
    "MarksStore",
    "MergeConflictError",
    "Note",
    "Override",
    "ReadOnlyError",
    "ReaderStatement",
    "RecordIdentity",
    "RepresentativeTimes",
    "ReviewerReading",
    "SetCaliper",
    "SetNote",
    "SetOverride",
    "SetStatus",
    "Sidecar",
    "StatementRow",
    "TakenOverError",
    "UndoStack",
    "UnreadableSidecarError",
    "automatic_from_analysis",
    "backup_path_for",
    "blinded_view",
    "compare_readings",
    "compare_statements",
    "load_sidecar",
    "merge_sidecars",
    "override_from_mark",
    "overrides_for",
    "record_fingerprint",
    "record_identity",
    "record_source_files",
    "schema",
    "sidecar_path_for",
    "snap_s",
    "write_automatic",
]
