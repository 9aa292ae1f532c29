"""The marks store: one reviewer's session on one record's sidecar.

Every change is saved at once (``durable.atomic_write``), the previous file kept as
``<name>.marks.json.bak``. Only a store holding the record's lock saves (``lock.SidecarLock``;
there is no unlocked writer), and each save is a compare-and-swap under an OS lock: the file on
disk is hashed and compared with the version this store loaded or last wrote, and written only
if they match and the lock is still this store's; otherwise nothing is written and
``ConflictError`` is raised (resolve with ``resolve_reload``, ``resolve_save_aside`` or
``resolve_merge``). ``MarksStore.take_over`` displaces another window's lock on purpose, with a
warning for the reader and an audit entry.
"""

from __future__ import annotations

import os
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any, Literal

from reviewapp.core.errors import MarksError
from reviewapp.core.fiducials import MarkOverride
from reviewapp.core.io.files import open_regular
from reviewapp.core.marks import codec
from reviewapp.core.marks.commands import Command
from reviewapp.core.marks.convert import overrides_for, record_identity, sidecar_path_for
from reviewapp.core.marks.durable import (
    atomic_write,
    host_name,
    remove_stale_temps,
    set_aside,
    utc_now,
    utc_stamp,
)
from reviewapp.core.marks.edits import Edits
from reviewapp.core.marks.errors import (
    BlindedError,
    ConflictError,
    ForeignSidecarError,
    LockedError,
    ReadOnlyError,
    TakenOverError,
    UnreadableSidecarError,
)
from reviewapp.core.marks.lock import SidecarLock, describe
from reviewapp.core.marks.merge import merge_sidecars
from reviewapp.core.marks.model import (
    AuditEvent,
    AutomaticMarks,
    RecordIdentity,
    ReviewerReading,
    Role,
    Sidecar,
)
from reviewapp.core.record import Record

REVIEWER_ID = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_.@-]{0,63}$")


def _new_event_id() -> str:
    import uuid

    return uuid.uuid4().hex


def backup_path_for(path: Path) -> Path:
    return path.with_name(path.name + ".bak")


def read_sidecar_bytes(path: Path) -> bytes | None:
    """The file's bytes (None if absent), refusing files above the size cap before reading."""
    try:
        # Never a FIFO or device: one named like a sidecar would block the read forever.
        with open_regular(path, UnreadableSidecarError) as fh:
            size = os.fstat(fh.fileno()).st_size
            if size > codec.MAX_SIDECAR_BYTES:
                raise UnreadableSidecarError(
                    f"marks file is {size / 1e6:.0f} MB, above the "
                    f"{codec.MAX_SIDECAR_BYTES // 2**20} MB limit; it is not a marks file this "
                    "program wrote",
                    path,
                )
            return fh.read(codec.MAX_SIDECAR_BYTES + 1)
    except FileNotFoundError:
        return None
    except OSError as exc:
        raise UnreadableSidecarError(
            f"cannot read the marks file: {exc.strerror or exc}", path
        ) from None


def load_sidecar(path: Path, identity: RecordIdentity | None = None) -> Sidecar:
    """Read and validate a sidecar; with ``identity``, refuse one made for another record."""
    path = Path(path)
    data = read_sidecar_bytes(path)
    if data is None:
        raise MarksError("marks file not found", path)
    sidecar = codec.decode(data, path)
    if identity is not None:
        check_identity(sidecar, identity, path)
    return sidecar


def check_identity(sidecar: Sidecar, identity: RecordIdentity, path: Path | None) -> None:
    if sidecar.record.fingerprint != identity.fingerprint:
        raise ForeignSidecarError(
            f"these marks were made for a different record or an earlier version of its files "
            f"(sidecar names record {sidecar.record.name!r}, fingerprint "
            f"{sidecar.record.fingerprint[:19]}..., the record's is "
            f"{identity.fingerprint[:19]}...); they are not applied",
            path,
            expected=identity.fingerprint,
            found=sidecar.record.fingerprint,
        )


def blinded_view(sidecar: Sidecar, reviewer: str, *, show_automatic: bool) -> Sidecar:
    """What a blinded reader may see: their own reading and audit events, and (if chosen) the
    automatic marks; never another reader's marks, values or notes."""
    own = sidecar.reading(reviewer)
    return replace(
        sidecar,
        automatic=sidecar.automatic if show_automatic else None,
        # the worklist cache is derived from the automatic marks only
        listing_cache=sidecar.listing_cache if show_automatic else None,
        readings=() if own is None else (own,),
        audit=tuple(e for e in sidecar.audit if e.reviewer == reviewer),
    )


@dataclass(frozen=True)
class LockTakeover:
    """What ``MarksStore.take_over`` displaced: the previous holder and the warning to show."""

    previous: Mapping[str, Any]
    warning: str


def _takeover_warning(holder: Mapping[str, Any]) -> str:
    return (
        f"You took over this record from {describe(dict(holder))}. If that window is still "
        "open, it can no longer save there: its next change is refused and can be kept as a "
        "separate file. The take-over is recorded in the audit trail."
    )


class MarksStore:
    """One reviewer's session on one sidecar. Use ``MarksStore.open``; close when done.

    Reading side: ``reading`` (this reviewer's), ``automatic``, ``audit``, ``view``;
    ``readings()`` and ``sidecar`` (everyone's) are refused to a blinded reader.
    Writing side: ``edits`` makes commands, ``do``/``undo``/``redo`` run them and save
    (``apply`` + ``save`` separately for undo stacks); ``set_automatic`` replaces the engine's
    marks without touching any reading.
    """

    def __init__(
        self,
        path: Path,
        identity: RecordIdentity,
        reviewer: str,
        role: Role,
        blinded: bool,
        show_automatic: bool,
        read_only: bool,
        lock: SidecarLock | None,
        clock: Callable[[], str],
    ) -> None:
        self.path = path
        self.identity = identity
        self.reviewer = reviewer
        self.role: Role = role
        self.blinded = blinded
        self.show_automatic = show_automatic
        self.read_only = read_only
        self.clock = clock
        self.revision = 0  # bumped whenever the reading is replaced from disk
        self.set_aside_paths: tuple[Path, ...] = ()
        self.took_over: LockTakeover | None = None  # set by a take-over of a live lock
        self._lock = lock
        self._sidecar = Sidecar(record=identity)
        self._base = self._sidecar  # the version on disk as last loaded or written
        self._disk_hash: str | None = None
        self._dirty = False
        self._pending: bytes | None = None  # encoded unsaved state
        self.edits = Edits(self)

    # --- opening and closing --------------------------------------------------------------

    @classmethod
    def open(
        cls,
        record: Record,
        reviewer: str,
        *,
        role: Role = "first",
        blinded: bool | None = None,
        show_automatic: bool = True,
        path: Path | None = None,
        fingerprint: str | None = None,
        read_only: bool = False,
        lock: bool = True,
        force_lock: bool = False,
        fresh_if_unreadable: bool = False,
        clock: Callable[[], str] = utc_now,
        sweep_temps: bool = True,
    ) -> MarksStore:
        """Open (or start) the sidecar of ``record`` for ``reviewer``.

        path: the sidecar file; default ``<record folder>/<record stem>.marks.json``.
        role: "first", "second" or "adjudicator". A second reader is blinded unless
            ``blinded=False`` is given; an adjudicator is never blinded.
        show_automatic: a blinded reader sees the automatic marks only if True.
        lock: take the record's lock (LockedError if another live window holds it). A store
            that writes always holds it: ``lock=False`` is only allowed with ``read_only``.
        force_lock: take the lock even from a live holder: the same as ``take_over``.
        fresh_if_unreadable: if the sidecar is corrupt, hostile, of a future version or made
            for another record, move it (and its backup) aside to ``*.set-aside-<utc>`` and
            start a fresh one; otherwise raise the UnreadableSidecarError and touch nothing.
        fingerprint: the record's fingerprint if already computed (saves hashing twice).
        sweep_temps: remove dead writers' temporary files of this sidecar first; a batch that
            swept the whole folder already (``durable.remove_stale_temps_in``) passes False.
        """
        if not REVIEWER_ID.match(reviewer or ""):
            raise MarksError(
                f"reviewer id {reviewer!r} is not usable: use 1-64 letters, digits, '.', '_', "
                "'@' or '-', starting with a letter or digit"
            )
        if role not in ("first", "second", "adjudicator"):
            raise MarksError(f"unknown reader role {role!r}")
        if blinded is None:
            blinded = role == "second"
        if role == "adjudicator" and blinded:
            raise MarksError("an adjudicator sees both readings and cannot be blinded")
        if not lock and not read_only:
            raise MarksError(
                "marks are saved only under the record's lock: open with lock=True, or read-only"
            )
        path = Path(path) if path is not None else sidecar_path_for(record)
        identity = record_identity(record, fingerprint)
        held = None
        if not read_only:
            if sweep_temps:
                remove_stale_temps(path)
            held = SidecarLock.acquire(path, reviewer, force=force_lock)
        store = cls(path, identity, reviewer, role, blinded, show_automatic, read_only, held, clock)
        try:
            try:
                store._load()
            except UnreadableSidecarError:
                if not fresh_if_unreadable or read_only:
                    raise
                store._start_fresh()
            store._check_role()
            if held is not None and held.displaced is not None:
                store._record_takeover(held.displaced)
        except BaseException:
            store.close()
            raise
        return store

    @classmethod
    def take_over(cls, record: Record, reviewer: str, **open_kw: Any) -> MarksStore:
        """Open ``record``'s marks for writing although another window holds the lock.

        For a reader whose other window is closed but whose lock looks alive (a hung program,
        a lock from another computer): the lock is taken, ``store.took_over`` holds the
        previous holder and the warning to show, and an audit event ``take_over_lock`` (old:
        the previous holder, new: this one) is saved at once. The displaced window, if still
        running, can no longer save (its next save raises ConflictError). A stale lock (its
        process gone) is simply taken, with no warning. Other arguments as ``open``.
        """
        open_kw.pop("force_lock", None)
        return cls.open(record, reviewer, force_lock=True, **open_kw)

    def _record_takeover(self, holder: Mapping[str, Any]) -> None:
        previous = {k: holder.get(k) for k in ("reviewer", "pid", "host", "since") if k in holder}
        self.took_over = LockTakeover(previous, _takeover_warning(holder))
        mine = {"reviewer": self.reviewer, "pid": os.getpid(), "host": host_name()}
        event = self._event("take_over_lock", "record lock", previous, mine)
        self._stage(replace(self._sidecar, audit=(*self._sidecar.audit, event)))
        self.save()

    def close(self) -> None:
        """Release the lock. Everything is already saved (or a save error was raised)."""
        if self._lock is not None:
            self._lock.release()
            self._lock = None

    def __enter__(self) -> MarksStore:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def _load(self) -> None:
        data = read_sidecar_bytes(self.path)
        if data is None:
            self._sidecar = self._base = Sidecar(record=self.identity)
            self._disk_hash = None
        else:
            sidecar = codec.decode(data, self.path)
            check_identity(sidecar, self.identity, self.path)
            self._sidecar = self._base = sidecar
            self._disk_hash = codec.sha256_hex(data)
        self._dirty = False
        self._pending = None

    def _start_fresh(self) -> None:
        moved = [set_aside(self.path)]
        backup = backup_path_for(self.path)
        if backup.exists():
            moved.append(set_aside(backup))
        self.set_aside_paths = tuple(moved)
        self._sidecar = self._base = Sidecar(record=self.identity)
        self._disk_hash = None
        self._dirty = False
        self._pending = None

    def _check_role(self) -> None:
        mine = self._sidecar.reading(self.reviewer)
        if mine is not None and mine.role != self.role:
            raise MarksError(
                f"{self.reviewer} already reads this record as {mine.role} reader, "
                f"not as {self.role}",
                self.path,
            )
        # A second reader sees other readings only once their own is signed off, so the
        # blinding of a study cannot be lifted by mistake in mid-read.
        if self.role == "second" and not self.blinded:
            if mine is None or mine.status != "signed_off":
                raise MarksError(
                    f"{self.reviewer} is a second reader: the record opens blinded until "
                    "their own reading is signed off",
                    self.path,
                )

    # --- what the reader sees --------------------------------------------------------------

    @property
    def fs_hz(self) -> float:
        return self.identity.fs_hz

    @property
    def reading(self) -> ReviewerReading:
        """This reviewer's reading (a fresh unread one until their first edit)."""
        mine = self._sidecar.reading(self.reviewer)
        if mine is None:
            mine = ReviewerReading(reviewer=self.reviewer, role=self.role, blinded=self.blinded)
        return mine

    @property
    def automatic(self) -> AutomaticMarks | None:
        """The engine's marks, or None (none computed, or hidden from a blinded reader)."""
        if self.blinded and not self.show_automatic:
            return None
        return self._sidecar.automatic

    def engine_overrides(self, rep_r_index: int | None) -> list[MarkOverride]:
        """This reader's overrides for ``analysis.reading(...)`` (engine sample indices)."""
        return overrides_for(self.reading, self.fs_hz, rep_r_index)

    @property
    def audit(self) -> tuple[AuditEvent, ...]:
        if self.blinded:
            return tuple(e for e in self._sidecar.audit if e.reviewer == self.reviewer)
        return self._sidecar.audit

    @property
    def view(self) -> Sidecar:
        """The sidecar as this reader may see it (blinded view for a blinded reader)."""
        if self.blinded:
            return blinded_view(self._sidecar, self.reviewer, show_automatic=self.show_automatic)
        return self._sidecar

    @property
    def sidecar(self) -> Sidecar:
        """Everything in the file; refused to a blinded reader."""
        self._refuse_if_blinded("the whole marks file")
        return self._sidecar

    def readings(self) -> dict[str, ReviewerReading]:
        """All readings by reviewer id; refused to a blinded reader."""
        self._refuse_if_blinded("other readers' marks")
        return {r.reviewer: r for r in self._sidecar.readings}

    @property
    def dirty(self) -> bool:
        """True while a change is held in memory but not yet on disk (after a save error)."""
        return self._dirty

    def _refuse_if_blinded(self, what: str) -> None:
        if self.blinded:
            raise BlindedError(
                f"{self.reviewer} reads this record blinded and cannot see {what}", self.path
            )

    def require_adjudicator(self) -> None:
        if self.role != "adjudicator":
            raise MarksError(
                f"{self.reviewer} is {self.role} reader; only an adjudicator sets final values",
                self.path,
            )

    # --- changing ---------------------------------------------------------------------------

    def _event(self, action: str, target: str, old: Any, new: Any) -> AuditEvent:
        return AuditEvent(
            _new_event_id(), self.clock(), self.reviewer, action, target[:500], old, new
        )

    def apply(self, cmd: Command, mode: Literal["do", "undo", "redo"] = "do") -> ReviewerReading:
        """Run ``cmd`` (or revert it) on this reviewer's reading in memory and append the audit
        events; nothing is written (``save`` does). Returns the new reading."""
        if self.read_only:
            raise ReadOnlyError("this marks file was opened read-only", self.path)
        before = self.reading
        if mode == "do" and cmd.changes_nothing:
            return before  # a new value equal to the old one: nothing to record or audit
        after = cmd.revert(before) if mode == "undo" else cmd.apply(before)
        events: list[AuditEvent] = []
        if before.status == "signed_off" and after.status != "signed_off":
            events.append(self._event("reopen", "reading status", "signed_off", after.status))
        if mode == "undo":
            events.append(
                self._event(f"undo:{cmd.action}", cmd.target, cmd.new_value(), cmd.old_value())
            )
        else:
            action = cmd.action if mode == "do" else f"redo:{cmd.action}"
            events.append(self._event(action, cmd.target, cmd.old_value(), cmd.new_value()))
        if after.status == "signed_off" and before.status != "signed_off" and mode == "undo":
            events.append(
                self._event("restore_sign_off", "reading status", before.status, "signed_off")
            )
        sidecar = self._sidecar.with_reading(after)
        self._stage(replace(sidecar, audit=sidecar.audit + tuple(events)))
        return after

    def _stage(self, sidecar: Sidecar) -> None:
        """Make ``sidecar`` the unsaved state, encoding it first: a value that cannot be
        written (invalid, unencodable) is refused here and leaves the state unchanged."""
        data = codec.encode(sidecar, self.path, trusted=self._sidecar)
        self._sidecar = sidecar
        self._pending = data
        self._dirty = True

    def do(self, cmd: Command) -> ReviewerReading:
        """Apply ``cmd`` and save at once. On a save error the edit stays applied in memory
        (``dirty``) and the error (e.g. ConflictError) is raised."""
        after = self.apply(cmd)
        self.save()
        return after

    def undo(self, cmd: Command) -> ReviewerReading:
        """Revert ``cmd`` (the latest applied edit) and save; recorded as an ``undo:`` event."""
        after = self.apply(cmd, mode="undo")
        self.save()
        return after

    def redo(self, cmd: Command) -> ReviewerReading:
        after = self.apply(cmd, mode="redo")
        self.save()
        return after

    def set_automatic(
        self,
        automatic: AutomaticMarks,
        listing_cache: Mapping[str, Any] | None = None,
        *,
        save: bool = True,
    ) -> None:
        """Replace the engine's marks (e.g. a newer engine version); readings are untouched.
        Saved at once (``save=False``: with the next save, e.g. together with the first
        correction); recorded in the audit trail with old and new engine versions.
        ``listing_cache`` (batch step): the worklist cache made from these marks, stored with
        them."""
        if self.read_only:
            raise ReadOnlyError("this marks file was opened read-only", self.path)
        old = self._sidecar.automatic
        new = self._sidecar
        if listing_cache is not None:
            new = replace(new, listing_cache=dict(listing_cache))
        if old != automatic:
            event = self._event(
                "set_automatic", "automatic marks", _summary(old), _summary(automatic)
            )
            new = replace(new, automatic=automatic, audit=(*new.audit, event))
        if new != self._sidecar:
            self._stage(new)
            if save:
                self.save()

    # --- saving and conflicts ---------------------------------------------------------------

    def _current_disk(self) -> tuple[bytes | None, str | None]:
        try:
            data = read_sidecar_bytes(self.path)
        except UnreadableSidecarError as exc:
            raise ConflictError(
                f"the marks file was replaced on disk by something unreadable ({exc.problem}); "
                "nothing was saved",
                self.path,
            ) from None
        return data, None if data is None else codec.sha256_hex(data)

    def save(self) -> None:
        """Write the sidecar if there are unsaved changes (atomic, durable, with backup).

        Raises ConflictError (nothing written) if the file changed on disk since it was
        loaded or last written by this store, MarksError if it cannot be written.
        """
        if not self._dirty:
            return
        if self._lock is None:
            raise ReadOnlyError("this store does not hold the record's lock", self.path)
        data = (
            self._pending if self._pending is not None else codec.encode(self._sidecar, self.path)
        )
        for _ in range(3):
            with self._lock.guard() as state:
                if state == "taken":
                    holder = self._lock.holder() or {}
                    raise TakenOverError(
                        f"another window took over this record: {describe(holder)}; nothing "
                        "was saved. Close this window, or save this reading as a separate file",
                        self.path,
                        holder,
                    )
                if state == "ours":
                    self._swap(data)
                    return
            # The lock file vanished (removed by hand or by a cleanup): take it again.
            try:
                self._lock = SidecarLock.acquire(self.path, self.reviewer)
            except LockedError as exc:
                raise TakenOverError(
                    f"another window has this record open ({exc.problem}); nothing was saved. "
                    "Close this window, or save this reading as a separate file",
                    self.path,
                    exc.holder,
                ) from None
        raise MarksError("could not keep the record's lock to save; nothing was saved", self.path)

    def _swap(self, data: bytes) -> None:
        """Write ``data`` if the file on disk is the version this store last saw (called with
        the OS lock held, so the check and the write are one step for every other store)."""
        current, current_hash = self._current_disk()
        if current_hash != self._disk_hash:
            what = "removed" if current is None else "changed by another window or program"
            raise ConflictError(
                f"the marks file was {what} since it was opened; nothing was saved. Reload it, "
                "save this reading as a separate file, or merge the changes",
                self.path,
            )
        if current is not None:
            atomic_write(backup_path_for(self.path), current)
        atomic_write(self.path, data)
        self._disk_hash = codec.sha256_hex(data)
        self._base = self._sidecar
        self._dirty = False
        self._pending = None

    def changed_on_disk(self) -> bool:
        """Whether another instance changed the file since this store loaded or wrote it."""
        return self._current_disk()[1] != self._disk_hash

    def resolve_reload(self) -> None:
        """Drop unsaved changes and continue from the file on disk (undo history is reset)."""
        self._load()
        self._check_role()
        self.revision += 1

    def resolve_save_aside(self) -> Path:
        """Keep this store's version as ``<name>.marks.<reviewer>.<utc>.json`` beside the
        record, then continue from the file on disk. Returns the separate file's path."""
        stem = (
            self.path.name[: -len(".marks.json")]
            if self.path.name.endswith(".marks.json")
            else self.path.stem
        )
        data = codec.encode(self._sidecar, self.path)
        for n in range(100):
            aside = self.path.with_name(
                f"{stem}.marks.{self.reviewer}.{utc_stamp()}{'' if n == 0 else f'.{n}'}.json"
            )
            if not aside.exists():
                break
        atomic_write(aside, data)
        try:
            self.resolve_reload()
        except UnreadableSidecarError as exc:
            raise UnreadableSidecarError(
                f"{exc.problem}; this reading was kept as {aside.name}", exc.path
            ) from None
        return aside

    def resolve_merge(self) -> None:
        """Merge this store's changes with the file on disk and save the result.

        Raises MergeConflictError (nothing written) if both changed the same item.
        """
        current, current_hash = self._current_disk()
        if current is None:
            self._disk_hash = None
            self.save()
            return
        theirs = codec.decode(current, self.path)
        check_identity(theirs, self.identity, self.path)
        merged = merge_sidecars(self._base, self._sidecar, theirs, self.path)
        event = self._event(
            "merge",
            "marks file",
            {"their_events": len(theirs.audit) - len(self._base.audit)},
            {"our_events": len(self._sidecar.audit) - len(self._base.audit)},
        )
        self._stage(replace(merged, audit=(*merged.audit, event)))
        self._base = theirs
        self._disk_hash = current_hash
        self.revision += 1
        self.save()


def _summary(a: AutomaticMarks | None) -> dict[str, Any] | None:
    if a is None:
        return None
    return {
        "engine_version": a.engine_version,
        "computed_at": a.computed_at,
        "n_beats": len(a.beats),
    }


def write_automatic(
    record: Record,
    automatic: AutomaticMarks,
    *,
    actor: str = "batch",
    path: Path | None = None,
    fingerprint: str | None = None,
    listing_cache: Mapping[str, Any] | None = None,
    sweep_temps: bool = True,
) -> Path:
    """Batch use: store the engine's marks in the record's sidecar (creating it if needed),
    leaving every reading untouched. Raises LockedError if a window has the record open and
    UnreadableSidecarError if the existing sidecar cannot be used. Returns the sidecar path.
    ``listing_cache``: the worklist cache derived from these marks (see set_automatic).
    ``sweep_temps``: see ``MarksStore.open``."""
    with MarksStore.open(
        record, actor, path=path, fingerprint=fingerprint, sweep_temps=sweep_temps
    ) as store:
        store.set_automatic(automatic, listing_cache)
        return store.path
