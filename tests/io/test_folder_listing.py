"""Which records a folder's worklist lists (``core.io.folder_listing``), on folder trees built
here, so the expected listing is known by construction."""

from __future__ import annotations

from pathlib import Path

import pytest

from reviewapp.core.errors import RecordError
from reviewapp.core.io.folder_listing import folder_of, has_own_records, list_folder
from reviewapp.core.synth import SynthParams, generate
from reviewapp.core.synth.wfdb_out import write_synthetic


def _write(folder: Path, name: str) -> Path:
    syn = generate(SynthParams(duration_s=3.0, seed=len(name)), name=name)
    return write_synthetic(syn, folder, name)


@pytest.fixture(scope="module")
def tree(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    """root: two records of its own (r2, r1), site-b/ with two, site-c/visit1/ with one, and
    a table beside the records that is not an ECG."""
    root = tmp_path_factory.mktemp("tree")
    paths = {n: _write(root, n) for n in ("r2", "r1")}
    paths |= {n: _write(root / "site-b", n) for n in ("b2", "b1")}
    paths["c1"] = _write(root / "site-c" / "visit1", "c1")
    (root / "visits.csv").write_text("visit,date\n1,2026-01-02\n")
    paths["root"] = root
    return paths


def test_a_folder_with_records_of_its_own_lists_those_and_counts_the_rest(tree):
    root = tree["root"]
    listing = list_folder(root)
    assert not listing.include_subfolders
    assert listing.records == (tree["r1"], tree["r2"])
    assert listing.elsewhere == (("site-b", 2), ("site-c", 1))
    assert listing.n_elsewhere == 3 and not listing.from_subfolders
    assert listing.covers(tree["r2"]) and not listing.covers(tree["b1"])
    assert has_own_records(root)


def test_subfolders_included_own_records_first_then_each_folder_together(tree):
    root = tree["root"]
    listing = list_folder(root, include_subfolders=True)
    assert listing.records == tuple(tree[n] for n in ("r1", "r2", "b1", "b2", "c1"))
    assert listing.elsewhere == () and listing.from_subfolders
    assert [listing.folder_of(p) for p in listing.records] == [
        "",
        "",
        "site-b",
        "site-b",
        "site-c/visit1",
    ]
    assert listing.covers(tree["c1"]) and listing.covers(tree["r1"])
    assert not listing.covers(root.parent / "elsewhere" / "x.hea")


def test_a_folder_of_folders_lists_everything_below_it(tree):
    site_c = tree["root"] / "site-c"
    listing = list_folder(site_c)
    assert listing.include_subfolders and not has_own_records(site_c)
    assert listing.records == (tree["c1"],)
    assert folder_of(tree["c1"], site_c) == "visit1"


def test_leaving_out_subfolders_on_a_folder_of_folders_lists_nothing_but_says_where(tree):
    listing = list_folder(tree["root"] / "site-c", include_subfolders=False)
    assert listing.records == () and listing.elsewhere == (("visit1", 1),)


def test_keep_filters_the_listing_and_the_counts(tree):
    listing = list_folder(tree["root"], keep=lambda p: not p.stem.endswith("2"))
    assert listing.records == (tree["r1"],)
    assert listing.elsewhere == (("site-b", 1), ("site-c", 1))


def test_not_a_folder_is_refused_by_name(tree):
    with pytest.raises(RecordError, match="not a folder"):
        list_folder(tree["r1"])
