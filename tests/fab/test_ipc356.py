"""IPC-D-356 reader against gerbonara's independent reader and the drill files of the same boards.

External references:
* gerbonara 1.6.3 ``gerbonara.ipc356.Netlist`` (Apache-2.0): an independent parser of the format;
* pcb-tools-resources ``ipc-d-356.ipc`` (an Eagle 7.1 export with a ``P  NNAME1`` alias);
* corpus b01 (KiCad 8): every via (317 record with refdes ``VIA``) must sit on a plated hole of
  the board's own Excellon file: two files written by the same tool, read by different readers.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from gerbonara.ipc356 import Netlist
from gerbonara.utils import MM

from sensorcheck.errors import InputError
from sensorcheck.fab.excellon import read_excellon
from sensorcheck.fab.ipc356 import read_ipc356


@pytest.mark.parametrize("rel", ["gerber-suites/pcb-tools-resources/ipc-d-356.ipc", "corpus/b01-slider-proto/fab/netlist.ipc",
                                 "corpus/b03-wheel/fab/netlist.ipc"])
def test_points_agree_with_gerbonara(shared_dir: Path, rel: str) -> None:
    path = shared_dir / rel
    ours = read_ipc356(path.read_bytes(), rel)
    theirs = Netlist.open(path)
    expected = sorted((r.net_name, MM(r.x, r.unit), MM(r.y, r.unit)) for r in theirs.test_records if r.net_name)
    got = sorted((p.net, p.x_mm, p.y_mm) for p in ours)
    assert [g[0] for g in got] == [e[0] for e in expected]
    for g, e in zip(got, expected):
        assert g[1:] == pytest.approx(e[1:], abs=1e-9)


def test_long_name_alias_is_resolved(shared_dir: Path) -> None:
    pts = read_ipc356((shared_dir / "gerber-suites/pcb-tools-resources/ipc-d-356.ipc").read_bytes(), "x.ipc")
    alias = [p for p in pts if p.net == "A_REALLY_LONG_NET_NAME"]
    # line 112: "327NNAME1 ... NA -69 ... A01X   8396Y   3850" (CUST 0: 0.0001 inch)
    assert len(alias) == 1 and alias[0].side == "top" and alias[0].component == "NA" and alias[0].pin == "69"
    assert (alias[0].x_mm, alias[0].y_mm) == pytest.approx((0.8396 * 25.4, 0.3850 * 25.4))
    assert not any(p.net.startswith("NNAME") for p in pts)


def test_vias_sit_on_plated_holes_of_the_same_board(shared_dir: Path) -> None:
    fab = shared_dir / "corpus/b01-slider-proto/fab"
    pts = read_ipc356((fab / "netlist.ipc").read_bytes(), "netlist.ipc")
    holes = read_excellon((fab / "slider_rev_1_0-PTH.drl").read_bytes(), "PTH.drl").holes
    vias = [p for p in pts if p.component is None and p.side == "both"]
    assert len(vias) > 50
    for v in vias:
        # IPC resolution 0.0001 inch (2.54 um), drill 0.001 mm: agree within 5 um
        near = min(holes, key=lambda h: (h.x_mm - v.x_mm) ** 2 + (h.y_mm - v.y_mm) ** 2)
        assert abs(near.x_mm - v.x_mm) < 0.005 and abs(near.y_mm - v.y_mm) < 0.005
        assert near.plated is True
        assert near.diameter_mm == pytest.approx(v.hole_mm, abs=0.005)


def test_metric_units() -> None:
    # columns: 1-3 type, 4-17 net, 21-26 refdes, 27 '-', 28-31 pin, 39-41 access, 42- X/Y
    rec = "327" + "SIG1".ljust(14) + "   " + "R1".ljust(6) + "-" + "1".ljust(4) + " " * 7 + "A01" + "X+012500Y-003000X0500Y0500R000S0"
    data = b"P  UNITS CUST 1\n" + rec.encode() + b"\n999\n"
    (p,) = read_ipc356(data, "m.ipc")
    assert (p.net, p.x_mm, p.y_mm, p.side, p.component, p.pin) == ("SIG1", 12.5, -3.0, "top", "R1", "1")


@pytest.mark.parametrize(
    "data, line, expected",
    [
        (b"", None, "IPC-D-356"),
        (b"P  UNITS FURLONGS\n", 1, "CUST 0"),
        (b"317GND              VIA         D  24PA00X  14900Y   1450X 396Y 396\n", 1, "UNITS"),
        (b"P  UNITS CUST 0\n317GND              VIA         D  24PA00\n", 2, "X<sign>"),
        (b"P  UNITS CUST 0\nhello\n", 2, "IPC-D-356 record"),
        (b"P  UNITS CUST 0\n\x00\x01\x02\n", 2, "IPC-D-356 text"),
        (b"P  UNITS CUST 0\n999\n", None, "test records"),
    ],
)
def test_bad_netlists(data: bytes, line: int | None, expected: str) -> None:
    with pytest.raises(InputError) as exc:
        read_ipc356(data, "bad.ipc")
    assert exc.value.file == "bad.ipc" and exc.value.line == line and expected in (exc.value.expected or "")


# --- robustness: mutated real files either read or raise our InputError (issue 6, item 1) ----------
from hypothesis import HealthCheck, given, settings  # noqa: E402

from board.fuzz import MUTATIONS, apply  # noqa: E402  (tests/board/fuzz.py)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(ops=MUTATIONS)
def test_mutated_netlists_read_or_raise_input_error(shared_dir: Path, ops: list) -> None:
    src = (shared_dir / "gerber-suites/pcb-tools-resources/ipc-d-356.ipc").read_bytes()
    try:
        read_ipc356(apply(src, ops), "m.ipc")
    except InputError as exc:
        assert exc.file == "m.ipc" and exc.expected
