"""The default limits pass every real board of ../shared/corpus, with a wide margin (issue 6, item 3).

sensorcheck/limits.py promises defaults that "pass every board of the test corpus with a wide
margin". Checked here on the real boards (skipped when ../shared is absent): load_board with
DEFAULT_LIMITS reads every board with no file failing on a limit, and the largest value seen of each
limited quantity stays at least MIN_MARGIN times under its limit (the printed line gives each margin).
The archive limits are checked on each board's files packed into a zip in memory at the highest
deflate level (the worst compression ratio an honest archive of these files can have).

Takes about 15 s (the 8 boards are read once, in one module-scoped fixture).
"""

from __future__ import annotations

import io
import re
import zipfile
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pytest
import shapely

from hardening import CORPUS
from sensorcheck.board.build import load_board
from sensorcheck.board.model import Board
from sensorcheck.fab.archive import check_zip_members
from sensorcheck.fab.gerber_parser import decode_gerber, parse_gerber_text
from sensorcheck.limits import DEFAULT_LIMITS

pytestmark = [pytest.mark.corpus, pytest.mark.slow]

#: "a wide margin": each quantity at most a tenth of its limit (our choice of "wide")
MIN_MARGIN = 10.0

#: text of our limit errors (sensorcheck/fab/*: every LimitError names its limits.<field>)
LIMIT_TEXT = re.compile(r"limits\.|max_\w+|LimitError")


@dataclass
class Seen:
    board: str
    board_obj: Board
    file_bytes: int
    members: int
    objects: int
    vertices: int
    holes: int
    step_repeat_copies: int
    expanded_objects: int
    compression_ratio: float


def _step_repeat_copies(text: bytes) -> int:
    return max((int(x) * int(y) for x, y in re.findall(rb"%SRX(\d+)Y(\d+)", text)), default=1)


def _expanded_objects(data: bytes, name: str) -> int:
    # objects made by copying, as the reader counts them; a file without AB or SR statements makes
    # none (the count only grows at a block flash or a step-and-repeat), so only those are parsed
    if b"%SR" not in data and b"%AB" not in data:
        return 0
    return parse_gerber_text(decode_gerber(data, name), name, DEFAULT_LIMITS).expanded_objects


def _seen(folder: Path) -> Seen:
    board = load_board(folder / "fab")
    files = [p for p in sorted((folder / "fab").iterdir()) if p.is_file()]
    vertices = 0
    for layer in board.layers:
        if layer.features:
            geoms = np.array([f.geometry for f in layer.features], dtype=object)
            vertices = max(vertices, int(shapely.get_num_coordinates(geoms).sum()))
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED, compresslevel=9) as zf:
        for p in files:
            zf.write(p, p.name)
    with zipfile.ZipFile(io.BytesIO(buf.getvalue())) as zf:
        infos = zf.infolist()
        check_zip_members(folder.name + ".zip", infos, DEFAULT_LIMITS)  # raises on a limit
        ratio = max(i.file_size / max(i.compress_size, 1) for i in infos)
    return Seen(
        board=folder.name,
        board_obj=board,
        file_bytes=max(p.stat().st_size for p in files),
        members=len(files),
        objects=max((f.object_count or 0) for f in board.files),
        vertices=vertices,
        holes=len(board.holes),
        step_repeat_copies=max(_step_repeat_copies(p.read_bytes()) for p in files),
        expanded_objects=max(_expanded_objects(p.read_bytes(), p.name) for p in files),
        compression_ratio=ratio,
    )


@pytest.fixture(scope="module")
def corpus() -> list[Seen]:
    boards = sorted(p for p in CORPUS.glob("*") if (p / "fab").is_dir()) if CORPUS.is_dir() else []
    if not boards:
        pytest.skip("../shared/corpus is not present")
    return [_seen(b) for b in boards]


def test_no_corpus_file_fails_on_a_limit(corpus: list[Seen]) -> None:
    for s in corpus:
        for info in s.board_obj.files:
            assert not (info.error and LIMIT_TEXT.search(info.error)), f"{s.board}/{info.path}: {info.error}"


def test_every_limit_has_a_wide_margin_on_the_corpus(corpus: list[Seen]) -> None:
    lim = DEFAULT_LIMITS
    pairs = {
        "max_file_bytes": (max(s.file_bytes for s in corpus), lim.max_file_bytes),
        "max_archive_members": (max(s.members for s in corpus), lim.max_archive_members),
        "max_gerber_objects": (max(s.objects for s in corpus), lim.max_gerber_objects),
        "max_vertices": (max(s.vertices for s in corpus), lim.max_vertices),
        "max_holes": (max(s.holes for s in corpus), lim.max_holes),
        "max_step_repeat_copies": (max(s.step_repeat_copies for s in corpus), lim.max_step_repeat_copies),
        "max_expanded_objects": (max(s.expanded_objects for s in corpus), lim.max_expanded_objects),
        "max_compression_ratio": (max(s.compression_ratio for s in corpus), lim.max_compression_ratio),
    }
    line = "; ".join(f"{k}: largest {v:.4g} vs limit {m:.4g} (x{m / max(v, 1e-9):.0f})" for k, (v, m) in pairs.items())
    print(f"\ncorpus margins ({len(corpus)} boards): {line}")
    for key, (value, limit) in pairs.items():
        assert value * MIN_MARGIN <= limit, f"{key}: largest on the corpus {value} is not {MIN_MARGIN}x under {limit}"


def test_the_corpus_is_not_trivial(corpus: list[Seen]) -> None:
    # the margins above mean something only if the corpus holds real, non-trivial boards
    assert len(corpus) >= 8
    assert max(s.objects for s in corpus) > 1000 and max(s.vertices for s in corpus) > 100_000
