"""Identification of every file of the shared peer suites and the corpus against a truth table.

The table (``tests/fab/data/identify_truth.toml``) was written by hand from each folder's file names
and contents, and for the tracespace boards compared with the layer their authors state in each
folder's ``manifest.json`` (tracespace fixtures, MIT, github.com/tracespace/tracespace
packages/fixtures @ ef2a3f0); the drill files' units are those their headers state. Issue 18's
target: every copper layer (inner included) and every drill file identified, no silent unit error.
Scoring is bench/bench_identify.py's (the same code prints the table).
"""

from __future__ import annotations

import importlib.util
import json
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[2]
_spec = importlib.util.spec_from_file_location("bench_identify", REPO / "bench" / "bench_identify.py")
assert _spec is not None and _spec.loader is not None
bench = importlib.util.module_from_spec(_spec)
sys.modules["bench_identify"] = bench  # its dataclasses look their module up
_spec.loader.exec_module(bench)

LAYERS, UNITS = bench.load_truth()
SUITES = sorted(g for g in LAYERS if g.startswith("gerber-suites/"))
CORPUS = sorted(g for g in LAYERS if g.startswith("corpus/"))

#: files of the table we still get wrong, and why (each is checked to still be wrong: a fix shows here)
KNOWN_WRONG = {
    # the specification's example images: "contour" names them as outlines (a weak outline word);
    # they close around no copper, so they are refused as the outline and listed as drawings, not as
    # "not understood"
    "gerber-suites/pcb-tools-resources#examples": {
        "example_not_overlapping_contour.gbr", "example_overlapping_contour.gbr", "example_simple_contour.gbr",
        # "Y50000Y50000D01" (two Y coordinates in one statement): refused by the reader (issue 17's files)
        "example_single_contour_1.gbr", "example_single_contour_2.gbr", "example_single_contour_3.gbr",
        # spec examples of holes in regions: the name word "holes" makes them drill drawings ("other")
        "example_holes_dont_clear.gbr", "example_level_holes.gbr",
    },
}


def test_table_covers_every_file_of_each_folder(shared_dir: Path) -> None:
    for group, files in LAYERS.items():
        folder = shared_dir / bench.folder_of(group)
        assert folder.is_dir(), group
        listed = set(bench.listed_files(folder))
        assert set(files) <= listed, (group, set(files) - listed)
        if "#" not in group:  # a whole folder: nothing left out
            assert set(files) == listed, (group, listed - set(files))
    # the split folder: its two groups together are the whole folder
    pcb = [g for g in LAYERS if g.startswith("gerber-suites/pcb-tools-resources#")]
    together = set().union(*(set(LAYERS[g]) for g in pcb))
    assert together == set(bench.listed_files(shared_dir / "gerber-suites/pcb-tools-resources"))


def test_table_agrees_with_the_tracespace_manifests(shared_dir: Path) -> None:
    # an outside check of the hand-written table: the tracespace authors' own layer of each file
    kinds = {"copper": "copper", "soldermask": "mask", "silkscreen": "silk", "solderpaste": "paste",
             "outline": "outline", "drill": "drill"}
    checked = 0
    for group in SUITES:
        manifest = shared_dir / group / "manifest.json"
        if not manifest.is_file():
            continue
        for entry in json.loads(manifest.read_text())["layers"]:
            ours = LAYERS[group][entry["name"]]
            kind = kinds[entry["type"]]
            assert ours == "drill" if kind == "drill" else ours.endswith(kind if kind != "copper" else "-copper"), entry
            if kind in ("copper", "mask", "silk", "paste"):
                assert ours.startswith(entry["side"]), entry
            checked += 1
    assert checked > 60


def _check(shared: Path, group: str) -> None:
    s = bench.score_group(shared, group, LAYERS[group], UNITS.get(group, {}))
    assert s.copper_right == s.copper, s.problems
    assert s.drills_right == s.drills, s.problems
    assert s.silent_unit_errors == 0 and s.unit_errors == 0, s.problems
    wrong = {p.split(" ", 2)[1].rstrip(":") for p in s.problems if p.startswith(("wrong", "missing"))}
    assert wrong == KNOWN_WRONG.get(group, set()), s.problems


@pytest.mark.parametrize("group", SUITES)
def test_peer_suite_folders_against_the_table(shared_dir: Path, group: str) -> None:
    _check(shared_dir, group)


@pytest.mark.corpus
@pytest.mark.parametrize("group", CORPUS)
def test_corpus_folders_against_the_table(shared_dir: Path, group: str) -> None:
    _check(shared_dir, group)
