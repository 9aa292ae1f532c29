"""One worklist row per record, read from its sidecar's listing cache (no Qt, no signal read).

Listing 10,000 records must be quick, so a row never opens the record: it reads the sidecar's
status, reviewer and cached values. Cached values are marked stale when they were made by
another engine version; the window recomputes everything from signal + marks on open.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass
from pathlib import Path

from reviewapp.batch import sidecar_adapter as sidecars
from reviewapp.core.errors import ReviewError


@dataclass(frozen=True)
class ListingRow:
    """What the worklist shows for one record (ms, bpm; None = not known)."""

    path: Path
    name: str
    folder: str  # relative to the listed root ("" at the root)
    status: str  # unread | in_progress | signed_off
    reviewer: str | None = None
    hr_bpm: float | None = None
    pr_ms: float | None = None
    qrs_ms: float | None = None
    qt_ms: float | None = None
    qtc_bazett_ms: float | None = None
    qtc_fridericia_ms: float | None = None
    flags: tuple[str, ...] = ()
    has_values: bool = False  # a listing cache exists
    stale: bool = False  # cache made by another engine version
    problem: str = ""  # sidecar unreadable: shown, never hidden
    status_by_reviewer: tuple[tuple[str, str], ...] = ()  # each reader's own status

    def status_for(self, reviewer: str | None) -> str:
        """``reviewer``'s own reading status ("unread" where they have no reading)."""
        return next((st for rid, st in self.status_by_reviewer if rid == reviewer), "unread")

    @property
    def flagged(self) -> bool:
        return bool(self.flags)

    def qtc_ms(self, formula: str = "fridericia") -> float | None:
        return self.qtc_bazett_ms if formula == "bazett" else self.qtc_fridericia_ms


def listing_row(
    path: Path, root: Path | None = None, engine_version: str | None = None
) -> ListingRow:
    """Build the row of ``path`` from its sidecar; never raises for a bad sidecar."""
    path = Path(path)
    folder = ""
    if root is not None:
        try:
            rel = path.parent.relative_to(root)
            folder = "" if str(rel) == "." else str(rel)
        except ValueError:
            folder = str(path.parent)
    try:
        view = sidecars.read_view(path)
    except ReviewError as err:
        return ListingRow(path, path.stem, folder, "unread", problem=err.problem)
    if view is None:
        return ListingRow(path, path.stem, folder, "unread")
    s = view.summary
    if s is None:
        return ListingRow(
            path,
            path.stem,
            folder,
            view.status,
            view.reviewer,
            status_by_reviewer=view.status_by_reviewer,
        )
    return ListingRow(
        path=path,
        name=path.stem,
        folder=folder,
        status=view.status,
        reviewer=view.reviewer,
        hr_bpm=s.hr_bpm,
        pr_ms=s.pr_ms,
        qrs_ms=s.qrs_ms,
        qt_ms=s.qt_ms,
        qtc_bazett_ms=s.qtc_bazett_ms,
        qtc_fridericia_ms=s.qtc_fridericia_ms,
        flags=s.flags,
        has_values=True,
        stale=engine_version is not None and s.engine_version != engine_version,
        status_by_reviewer=view.status_by_reviewer,
    )


def iter_listing(root: Path, engine_version: str | None = None) -> Iterator[ListingRow]:
    """Rows of every record under ``root`` (recursively), in path order."""
    from reviewapp.core.io import find_records

    for p in find_records(root, recursive=True):
        yield listing_row(p, root, engine_version)
