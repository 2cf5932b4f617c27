"""Every Gerber file of the eight real boards in ../shared/corpus reads without error.

Source: ../shared/corpus/README.md (boards exactly as their designers sent them to fabrication;
generators, units and where net names live are stated there). A file is taken as Gerber here
when its first 4 KB hold a format or unit command (%FS / %MO) and it is not an Excellon file:
the test checks the reader, not file identification (tested with identification).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from sensorcheck.fab.gerber import read_gerber

# reads ../shared (skips where absent); every corpus file read: the full suite (CI) runs it, the quick subset not
pytestmark = [pytest.mark.corpus, pytest.mark.slow]

_CORPUS = Path(__file__).resolve().parents[2].parent / "shared" / "corpus"
BOARDS = sorted(p.name for p in _CORPUS.iterdir() if (p / "fab").is_dir()) if _CORPUS.is_dir() else []


def _looks_like_gerber(p: Path) -> bool:
    """A file whose head holds a Gerber format or unit statement and is not an Excellon header."""
    head = p.read_bytes()[:4096]
    return bool(re.search(rb"%FS|%MO", head)) and b"M48" not in head[:300]


def gerber_files(board: Path) -> list[Path]:
    return [p for p in sorted((board / "fab").rglob("*")) if p.is_file() and _looks_like_gerber(p)]


@pytest.mark.skipif(not BOARDS, reason="../shared/corpus absent")
@pytest.mark.parametrize("board", BOARDS)
def test_every_gerber_file_reads(board: str) -> None:
    files = gerber_files(_CORPUS / board)
    assert files, "each corpus board has Gerber files"
    for path in files:
        got = read_gerber(path.read_bytes(), path.name)
        assert got.object_count == len(got.features)
        assert got.dark is not None
        if got.dark.is_empty and got.object_count:
            # b04's F_Silkscreen draws everything in clear polarity (LPC): by spec section 4.9.2
            # the image is empty; the reader must say so rather than stay silent
            assert any("empty" in w for w in got.warnings), path.name
        elif got.object_count:
            assert got.bounds_mm is not None
            x0, y0, x1, y1 = got.bounds_mm
            # extents of a real board: millimetres to half a metre, never the inch/mm mix-up scale
            assert 0 < max(x1 - x0, y1 - y0) < 500, path.name


@pytest.mark.skipif(not BOARDS, reason="../shared/corpus absent")
def test_corpus_facts_from_its_readme() -> None:
    # README: b07 is inch with file attributes as comments; b01 carries X2 nets in the comment form.
    b07 = [read_gerber(p.read_bytes(), p.name) for p in gerber_files(_CORPUS / "b07-slider-inch")
           if p.suffix.upper() == ".GTL"]
    assert b07 and b07[0].units == "inch"
    b01 = _CORPUS / "b01-slider-proto" / "fab" / "slider_rev_1_0-F_Cu.gtl"
    got = read_gerber(b01.read_bytes(), b01.name)
    assert got.file_attributes[".FileFunction"][:2] == ["Copper", "L1"]
    assert got.generator is not None and got.generator.startswith("KiCad")
    nets = {f.net for f in got.features if f.net}
    assert "GND" in nets and len(nets) > 10
    # copper pours are regions: they must keep their nets (DESIGN.md section 4)
    assert any(f.kind == "region" and f.net for f in got.features)


# Peer suites' real boards (../shared/gerber-suites/README.md): tracespace's eight boards from
# several generators (Eagle, KiCad, others; mostly inch) and pcb-tools' small board.
_SUITES = _CORPUS.parent / "gerber-suites"
_PEER_DIRS = sorted(p for p in (_SUITES / "tracespace-fixtures" / "boards").iterdir() if p.is_dir()) \
    if (_SUITES / "tracespace-fixtures" / "boards").is_dir() else []


def _peer_files(folder: Path) -> list[Path]:
    return [p for p in sorted(folder.rglob("*"))
            if p.is_file() and not p.name.startswith("example_")
            and p.suffix.lower() not in (".svg", ".json", ".md", ".ipc") and _looks_like_gerber(p)]


@pytest.mark.skipif(not _PEER_DIRS, reason="../shared/gerber-suites absent")
@pytest.mark.parametrize("folder", [*_PEER_DIRS, _SUITES / "pcb-tools-resources"], ids=lambda p: p.name)
def test_peer_suite_boards_read(folder: Path) -> None:
    files = _peer_files(folder)
    assert files
    for path in files:
        got = read_gerber(path.read_bytes(), path.name)
        if got.object_count and got.dark is not None and not got.dark.is_empty:
            x0, y0, x1, y1 = got.dark.bounds
            assert 0 < max(x1 - x0, y1 - y0) < 500, path.name
