"""Which records a folder's worklist lists: the folder's own, or every record below it.

A core lab files a study either as one folder of records or as a tree of site / subject /
visit folders (common practice, no source), and a folder of records may also hold a
separate study in a subfolder (the bundled demo: the 11-record worklist and, in ``study/``,
the 75-record QT study). The rule:

- a folder with records of its own lists those, and says how many more lie in which
  subfolders (``elsewhere``), so nothing below it is hidden without a word;
- a folder with no records of its own (a tree of sites or subjects) lists every record below
  it, each with the subfolder it came from (``folder_of``);
- the reader can include or leave out the subfolders either way (``include_subfolders``).

Rows are in folder order: the folder's own records first, then each subfolder's, each group
sorted by name, so records of one subfolder stay together. No Qt; the worklist widget shows
the result.

Example:
    >>> import tempfile
    >>> root = Path(tempfile.mkdtemp())
    >>> listing = list_folder(root)
    >>> listing.records, listing.include_subfolders, listing.elsewhere
    ((), True, ())
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path

from reviewapp.core.io import find_records


@dataclass(frozen=True)
class FolderListing:
    """The records a worklist shows for ``root`` and what it leaves out.

    ``elsewhere``: (subfolder of ``root``, number of records in it and below) for each
    subfolder whose records are not listed; empty when the subfolders are included.
    """

    root: Path
    include_subfolders: bool
    records: tuple[Path, ...]
    elsewhere: tuple[tuple[str, int], ...] = ()

    @property
    def n_elsewhere(self) -> int:
        return sum(n for _name, n in self.elsewhere)

    @property
    def from_subfolders(self) -> bool:
        """Whether any listed record lies in a subfolder (the worklist then shows a folder
        column)."""
        return any(p.parent != self.root for p in self.records)

    def folder_of(self, path: Path) -> str:
        """``path``'s folder relative to the root ("" for the root itself), "/"-separated."""
        return folder_of(path, self.root)

    def covers(self, path: Path) -> bool:
        """Whether a record at ``path`` belongs to this listing (the root's own records, or
        any record below the root when subfolders are included)."""
        path = Path(path)
        if path.parent == self.root:
            return True
        return self.include_subfolders and self.root in path.parents


def folder_of(path: Path, root: Path) -> str:
    try:
        rel = Path(path).parent.relative_to(root)
    except ValueError:
        return str(Path(path).parent)
    return "" if rel == Path(".") else rel.as_posix()


def has_own_records(root: Path, keep: Callable[[Path], bool] | None = None) -> bool:
    """Whether ``root`` holds records directly (not only in subfolders)."""
    return any(keep is None or keep(p) for p in find_records(root, recursive=False))


def list_folder(
    root: str | Path,
    include_subfolders: bool | None = None,
    *,
    keep: Callable[[Path], bool] | None = None,
) -> FolderListing:
    """The records to list for ``root`` (see the module docstring).

    Args:
        root: the folder opened.
        include_subfolders: True lists every record below ``root``, False only its own;
            None decides by the rule: subfolders are included when ``root`` has no records
            of its own.
        keep: a further test of each path the record finder returns (e.g. the window's own
            check that a CSV is an ECG).

    Raises:
        RecordError: ``root`` is not a folder.
    """
    root = Path(root)
    every = [p for p in find_records(root, recursive=True) if keep is None or keep(p)]
    own = [p for p in every if p.parent == root]
    if include_subfolders is None:
        include_subfolders = not own
    if include_subfolders:
        records = sorted(every, key=lambda p: (p.parent != root, folder_of(p, root), p.name))
        return FolderListing(root, True, tuple(records))
    counts: dict[str, int] = {}
    for p in every:
        if p.parent != root:
            top = p.relative_to(root).parts[0]
            counts[top] = counts.get(top, 0) + 1
    return FolderListing(root, False, tuple(sorted(own)), tuple(sorted(counts.items())))
