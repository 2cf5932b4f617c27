"""Sensor recognition on synthetic boards whose answers are known by construction.

Areas are checked against the closed forms (disc pi r^2, annulus pi (R^2 - r^2), rectangles),
gaps against the distances the geometry was drawn with.
"""

from __future__ import annotations

import math

import pytest
import shapely
from shapely import affinity
from shapely.geometry import box

from sensorcheck.design.config import load_config
from sensorcheck.design.model import Config, Overlay, OverlayLayer, RoleByPlace, RolePattern, SensorGroup
from sensorcheck.design.sensors import build_design, split_electrode
from sensorcheck.design.zones import MIN_ZONE_MARGIN_MM, zone_margin_mm
from sensorcheck.errors import ConfigError

from .synth import disc, draw_feature, make_board, ring, sector, track


def cfg(**roles: list[str]) -> Config:
    c = Config(file="sensorcheck.toml")
    c.roles = [RolePattern(pattern=p, role=r) for r, pats in roles.items() for p in pats]  # type: ignore[arg-type]
    return c


def overlay(t_mm: float) -> Overlay:
    return Overlay(layers=(OverlayLayer("pmma", t_mm, 2.8, "test"),))


# --------------------------------------------------------------------------- self button


def button_board(with_features: bool = True, trace_w: float = 0.25):
    r = 6.0
    pad = disc(20, 20, r)
    trace_top = track([(20 + r - 0.5, 20), (50, 20)], trace_w)
    via = disc(50, 20, 0.4)
    trace_bottom = track([(50, 20), (50, 5)], trace_w)
    gnd = box(0, 0, 60, 40).difference(disc(20, 20, r + 1.0)).difference(track([(20, 20), (50, 20)], trace_w + 2.0))
    feats = {"top-copper": [draw_feature("TOUCH1", [(20 + r - 0.5, 20), (50, 20)], trace_w)]} if with_features else {}
    return make_board(
        {"top-copper": {"TOUCH1": [pad, trace_top, via], "GND": gnd}, "bottom-copper": {"TOUCH1": [via, trace_bottom]}},
        feats,
    ), r


@pytest.mark.parametrize("with_features", [True, False])
def test_self_button_electrode_and_trace(with_features: bool) -> None:
    board, r = button_board(with_features)
    c = cfg(self=["touch*"], ground=["GND"])  # case-insensitive pattern
    c.overlay = overlay(2.0)
    d = build_design(board, c)
    assert [s.kind for s in d.sensors] == ["self-button"]
    s = d.sensors[0]
    assert s.name == "TOUCH1" and s.layer == "top-copper" and s.how_found == "roles"
    (e,) = s.electrodes
    # electrode = the disc: pi r^2 (closed form) plus at most the trace root kept by the opening
    assert e.geometry.area == pytest.approx(math.pi * r * r, rel=0.01)
    assert e.geometry.area < math.pi * r * r + 0.5
    # the trace on top: 24 mm x 0.25 mm less the overlap with the disc; via pad stays with the trace
    assert e.trace["top-copper"].area == pytest.approx(24.5 * 0.25 - 0.5 * 0.25 + math.pi * 0.4**2, rel=0.1)
    assert "bottom-copper" in e.trace
    assert d.roles["GND"] == ("ground", None) and d.roles["TOUCH1"] == ("self", None)
    # zone: disc grown by the overlay thickness (2 mm > 1 mm floor): pi (r + 2)^2
    assert s.zone_margin_mm == 2.0
    assert s.zone.area == pytest.approx(math.pi * (r + 2.0) ** 2, rel=0.01)


def test_wide_trace_told_by_its_draw_width() -> None:
    """A 0.9 mm trace survives an opening sized for 0.25 mm traces only if the draw width is not read."""
    board, r = button_board(True, trace_w=0.9)
    top = board.layer("top-copper")
    assert top is not None
    electrode, trace = split_electrode(top, "TOUCH1")
    assert electrode.area == pytest.approx(math.pi * r * r, rel=0.02)
    assert trace.area > 20 * 0.9


def test_zone_margin_rule() -> None:
    c = Config()
    assert zone_margin_mm(c) == MIN_ZONE_MARGIN_MM  # no overlay: the 1 mm floor
    c.overlay = overlay(0.5)
    assert zone_margin_mm(c) == 1.0  # thin film: still 1 mm
    c.overlay = overlay(3.0)
    assert zone_margin_mm(c) == 3.0  # the overlay thickness
    c.zone_margin_mm = 1.5
    assert zone_margin_mm(c) == 1.5  # said in the config


# --------------------------------------------------------------------------- mutual nodes


def ring_board():
    rx = [disc(0, 0, 4.0), track([(0, 0), (0, -20)], 0.3)]
    slot = box(-0.75, -10, 0.75, 0)
    tx = [ring(0, 0, 4.5, 6.0).difference(slot), track([(5.5, 0), (20, 0)], 0.3)]
    # a foreign TX trace routed beside the RX trace (0.3 mm apart over 12 mm): no node
    tx2 = [track([(0.6, -8), (0.6, -20)], 0.3), disc(30, 30, 5)]
    return make_board({"top-copper": {"RX1": rx, "TX1": tx, "TX2": tx2}})


def test_tx_ring_around_rx_disc() -> None:
    d = build_design(ring_board(), cfg(transmitter=["TX*"], receiver=["RX*"]))
    mutual = [s for s in d.sensors if s.kind == "mutual-button"]
    assert [s.name for s in mutual] == ["TX1/RX1"]  # the parallel TX2 trace makes no node
    s = mutual[0]
    (rxe,) = s.electrodes_with("receiver")
    (txe,) = s.electrodes_with("transmitter")
    # RX electrode: the 4 mm disc (pi 16) plus a short trace stub inside the footprint
    assert rxe.geometry.contains(disc(0, 0, 3.99))
    assert math.pi * 16 <= rxe.geometry.area + 0.05 < math.pi * 16 + 0.3 * 6
    # TX electrode: the ring pi (6^2 - 4.5^2) less its 1.5 mm slot, and a stub of its trace
    ring_area = math.pi * (36 - 4.5**2) - 1.5 * 1.5
    assert txe.geometry.area == pytest.approx(ring_area, rel=0.08)
    # the gap drawn: 0.5 mm between disc and ring
    assert rxe.geometry.distance(txe.geometry) == pytest.approx(0.5, abs=0.01)
    assert "TX2" in " ".join(d.notes)  # TX2 faces no receiver: said so


def comb(x0: float, y0: float, n: int, finger_w: float, gap: float, length: float, up: bool) -> list:
    """A comb: spine along x and n fingers; pitch between own fingers = 2 (finger_w + gap)."""
    pitch = 2 * (finger_w + gap)
    width = n * pitch
    spine = box(x0, y0, x0 + width, y0 + finger_w) if up else box(x0, y0 - finger_w, x0 + width, y0)
    fingers = []
    for k in range(n):
        fx = x0 + k * pitch
        fingers.append(box(fx, y0, fx + finger_w, y0 + length) if up else box(fx, y0 - length, fx + finger_w, y0))
    return [spine, *fingers]


def test_interleaved_fingers() -> None:
    w, g = 0.5, 0.5
    tx = comb(0, 0, 5, w, g, 9.0, up=True)
    # RX comb from the top, shifted by half a pitch: its fingers sit between the TX fingers
    rx = comb(w + g, 10.0, 5, w, g, 9.0, up=False)
    rx.append(track([(5, 10), (5, 25)], 0.25))
    tx.append(track([(0, 0), (-15, 0)], 0.25))
    board = make_board({"top-copper": {"KEY_TX": tx, "KEY_RX": rx}})
    d = build_design(board, cfg(transmitter=["*_TX"], receiver=["*_RX"]))
    assert [s.kind for s in d.sensors] == ["mutual-button"]
    s = d.sensors[0]
    (rxe,) = s.electrodes_with("receiver")
    (txe,) = s.electrodes_with("transmitter")
    assert rxe.geometry.distance(txe.geometry) == pytest.approx(g, abs=1e-6)
    # the whole RX comb (5 fingers 9 x 0.5, spine 10 x 0.5, less overlaps) is electrode
    rx_comb = shapely.union_all(comb(w + g, 10.0, 5, w, g, 9.0, up=False)).area
    assert rxe.geometry.area >= rx_comb - 1e-6
    assert "top-copper" in rxe.trace  # the rest of the RX trace


def test_tx_under_rx_on_another_layer() -> None:
    rx = comb(0, 10, 4, 0.5, 1.5, 9.0, up=False)
    tx_plane = box(-0.5, 0.5, 16.5, 10.5)
    board = make_board({"top-copper": {"RX": rx}, "bottom-copper": {"TX": tx_plane}})
    d = build_design(board, cfg(transmitter=["TX"], receiver=["RX"]))
    assert [(s.kind, s.layer) for s in d.sensors] == [("mutual-button", "top-copper")]
    layers = {e.role: e.layer for e in d.sensors[0].electrodes}
    assert layers == {"receiver": "top-copper", "transmitter": "bottom-copper"}


def test_separate_keys_sharing_lines_stay_keys() -> None:
    """Two TX lines x two RX lines, keys 20 mm apart: four nodes, not a matrix."""
    nets: dict = {"TXA": [], "TXB": [], "RXA": [], "RXB": []}
    for i, tx in enumerate(("TXA", "TXB")):
        for j, rx in enumerate(("RXA", "RXB")):
            x, y = 20.0 * j, 20.0 * i
            nets[rx].append(disc(x, y, 3.0))
            nets[tx].append(ring(x, y, 3.5, 4.5))
    board = make_board({"top-copper": nets})
    d = build_design(board, cfg(transmitter=["TX*"], receiver=["RX*"]))
    assert sorted(s.name for s in d.sensors) == ["TXA/RXA", "TXA/RXB", "TXB/RXA", "TXB/RXB"]
    assert all(s.kind == "mutual-button" for s in d.sensors)
    for s in d.sensors:
        (rxe,) = s.electrodes_with("receiver")
        assert rxe.geometry.area == pytest.approx(math.pi * 9, rel=0.01)  # only this key's disc


# --------------------------------------------------------------------------- sliders and wheels


SEG_W, SEG_GAP = 7.5, 0.5


def slider_board(names_left_to_right: list[str]):
    nets = {n: box(k * (SEG_W + SEG_GAP), 0, k * (SEG_W + SEG_GAP) + SEG_W, 12) for k, n in
            enumerate(names_left_to_right)}
    # insertion order scrambled too: recognition must not depend on it
    scrambled = {n: nets[n] for n in sorted(nets, reverse=True)}
    return make_board({"top-copper": scrambled})


def test_five_segment_slider_named_out_of_order() -> None:
    left_to_right = ["SL2", "SL0", "SL4", "SL1", "SL3"]
    d = build_design(slider_board(left_to_right), cfg(self=["SL*"]))
    assert [s.kind for s in d.sensors] == ["slider"]
    s = d.sensors[0]
    # position order (known by construction); names tie both directions, so left to right
    assert list(s.order) == left_to_right
    assert [e.net for e in s.electrodes] == left_to_right
    for e in s.electrodes:
        assert e.geometry.area == pytest.approx(SEG_W * 12)
    # zone: the segments' outer box grown by 1 mm (no overlay given): rectangle + rim + round corners
    w, h = 5 * SEG_W + 4 * SEG_GAP, 12
    assert s.zone.area == pytest.approx(w * h + 2 * (w + h) * 1.0 + math.pi, rel=0.01)


def test_slider_direction_follows_names() -> None:
    right_to_left = ["SL4", "SL3", "SL2", "SL1", "SL0"]
    d = build_design(slider_board(right_to_left), cfg(self=["SL*"]))
    assert list(d.sensors[0].order) == ["SL0", "SL1", "SL2", "SL3", "SL4"]


def test_spaced_buttons_with_similar_names_stay_buttons() -> None:
    nets = {f"BTN{k}": disc(15.0 * k, 0, 5.0) for k in range(4)}  # 5 mm edge gaps: a row of keys
    d = build_design(make_board({"top-copper": nets}), cfg(self=["BTN*"]))
    assert sorted((s.kind, s.name) for s in d.sensors) == [("self-button", f"BTN{k}") for k in range(4)]


def wheel_board(names_ccw: list[str]):
    nets = {}
    for k, n in enumerate(names_ccw):
        a0 = 90 + 120 * k
        seg = sector(0, 0, 6, 15, a0 - 60, a0 + 60)
        nets[n] = seg
    # 0.5 mm gaps between segments: cut strips along the three borders
    cuts = shapely.union_all([
        track([(0, 0), (20 * math.cos(math.radians(a)), 20 * math.sin(math.radians(a)))], SEG_GAP)
        for a in (30, 150, 270)
    ])
    return make_board({"top-copper": {n: g.difference(cuts) for n, g in nets.items()}})


def test_three_segment_wheel() -> None:
    d = build_design(wheel_board(["W0", "W1", "W2"]), cfg(self=["W?"]))
    assert [s.kind for s in d.sensors] == ["wheel"]
    assert list(d.sensors[0].order) == ["W0", "W1", "W2"]
    # each segment: a third of the annulus pi (15^2 - 6^2) less two half gaps of 9 mm x 0.5 mm
    for e in d.sensors[0].electrodes:
        assert e.geometry.area == pytest.approx(math.pi * (225 - 36) / 3 - 9 * SEG_GAP, rel=0.01)
    # a wheel zone has no hole: the centre is inside it
    assert d.sensors[0].zone.contains(shapely.Point(0, 0))


def test_wheel_named_against_its_direction() -> None:
    d = build_design(wheel_board(["W0", "W2", "W1"]), cfg(self=["W?"]))
    s = d.sensors[0]
    assert s.kind == "wheel"
    assert list(s.order) == ["W0", "W1", "W2"]  # clockwise here; the names decide the direction


def test_explicit_slider_group_keeps_its_order_and_notes_a_mismatch() -> None:
    board = slider_board(["A", "B", "C"])
    c = cfg()
    c.groups = [SensorGroup(name="volume", kind="slider", nets=("A", "C", "B"))]
    d = build_design(board, c)
    assert [(s.name, s.kind, s.order, s.how_found) for s in d.sensors] == [("volume", "slider", ("A", "C", "B"), "group")]
    assert any("volume" in n and "order" in n for n in d.notes)


# --------------------------------------------------------------------------- matrices


def manhattan_board(n: int = 3):
    pitch = 6.0
    top = {f"Y{j}": box(j * pitch - 0.5, -3, j * pitch + 0.5, (n - 1) * pitch + 3) for j in range(n)}
    bottom = {f"X{i}": box(-3, i * pitch - 2, (n - 1) * pitch + 3, i * pitch + 2) for i in range(n)}
    return make_board({"top-copper": top, "bottom-copper": bottom})


def test_three_by_three_matrix_by_names() -> None:
    d = build_design(manhattan_board(), cfg(transmitter=["X*"], receiver=["Y*"]))
    assert [s.kind for s in d.sensors] == ["matrix"]
    s = d.sensors[0]
    assert s.rows == ("X0", "X1", "X2") and s.columns == ("Y0", "Y1", "Y2")
    assert {e.layer for e in s.electrodes_with("receiver")} == {"top-copper"}
    assert s.layer == "top-copper"
    # zone: the strips span -3..15 mm in x (rows) and in y (columns); grown by the 1 mm floor
    assert s.zone.bounds == pytest.approx((-4, -4, 16, 16))


def test_three_by_three_matrix_by_group() -> None:
    c = cfg()
    c.groups = [SensorGroup(name="pad", kind="matrix", rows=("X0", "X1", "X2"), columns=("Y0", "Y1", "Y2"))]
    d = build_design(manhattan_board(), c)
    (s,) = d.sensors
    assert (s.name, s.kind, s.rows, s.columns) == ("pad", "matrix", ("X0", "X1", "X2"), ("Y0", "Y1", "Y2"))
    assert d.roles["X0"][0] == "transmitter" and d.roles["Y2"][0] == "receiver"
    assert any("rows taken as transmitters" in n for n in d.notes)  # an assumption is said out loud


def test_diamond_pad_from_geometry() -> None:
    """Same-layer diamonds (rows joined on top, columns bridged on the bottom): the nodes touch, one matrix."""
    pitch, half = 6.0, 2.75
    nets: dict = {}
    bottom: dict = {}
    for i in range(3):
        for j in range(3):
            cx, cy = j * pitch, i * pitch
            # row diamonds at the grid points, column diamonds half a pitch off in x and y
            nets.setdefault(f"ROWA{i}", []).append(shapely.Point(cx, cy).buffer(half, quad_segs=1))
            nets.setdefault(f"COLB{j}", []).append(shapely.Point(cx + pitch / 2, cy + pitch / 2).buffer(half, quad_segs=1))
        nets[f"ROWA{i}"].append(box(-1, i * pitch - 0.2, 2 * pitch + 1, i * pitch + 0.2))
    for j in range(3):
        bottom[f"COLB{j}"] = box(j * pitch + pitch / 2 - 0.2, 0, j * pitch + pitch / 2 + 0.2, 3 * pitch)
    board = make_board({"top-copper": nets, "bottom-copper": bottom})
    d = build_design(board, cfg(transmitter=["ROWA*"], receiver=["COLB*"]))
    kinds = [s.kind for s in d.sensors]
    assert kinds == ["matrix"], d.notes
    assert d.sensors[0].rows == ("ROWA0", "ROWA1", "ROWA2")


# --------------------------------------------------------------------------- roles and config problems


def test_roles_by_place_on_unnamed_copper() -> None:
    board = make_board({"top-copper": {"~n1a2b": disc(10, 10, 5), "~n3c4d": box(0, 20, 30, 30)}})
    c = Config(file="c.toml")
    c.roles_by_place = [
        RoleByPlace(layer="top-copper", role="self", point_mm=(11, 9), sensor="B1"),
        RoleByPlace(layer="top-copper", role="ground", box_mm=(0, 19, 40, 40)),
        RoleByPlace(layer="top-copper", role="self", point_mm=(50, 50)),
    ]
    d = build_design(board, c)
    assert [(s.name, s.kind) for s in d.sensors] == [("B1", "self-button")]
    assert d.roles["~n3c4d"] == ("ground", None)
    assert any("roles.place[2]" in n for n in d.notes)  # nothing under (50, 50)
    c.roles_by_place = [RoleByPlace(layer="inner1-copper", role="self", point_mm=(1, 1))]
    with pytest.raises(ConfigError) as info:
        build_design(board, c)
    assert info.value.key == "roles.place[0].layer"


def test_pattern_matching_no_net_is_a_note() -> None:
    board, _ = button_board()
    d = build_design(board, cfg(self=["TOUCH*"], transmitter=["TX*"]))
    assert any("'TX*' matches no net" in n for n in d.notes)
    assert [s.name for s in d.sensors] == ["TOUCH1"]


def test_group_naming_a_missing_net_is_a_config_error(tmp_path) -> None:
    p = tmp_path / "sensorcheck.toml"
    p.write_text('[[sensors]]\nname = "k"\nkind = "self-button"\nnets = ["TOUCH2"]\n'
                 '[[sensors]]\nname = "s"\nkind = "slider"\nnets = ["TOUCH1", "TOUCH9"]\n')
    c = load_config(p, profiles_dir=tmp_path)
    board, _ = button_board()
    with pytest.raises(ConfigError) as info:
        build_design(board, c)
    assert info.value.file == str(p) and info.value.key == "sensors[0].nets"
    assert "TOUCH2" in info.value.message and "TOUCH1" in info.value.message  # the near miss is suggested


def test_without_roles_no_sensors_and_a_note_on_how() -> None:
    board, _ = button_board()
    d = build_design(board, Config())
    assert d.sensors == []
    assert any("sensorcheck init" in n and "[roles]" in n for n in d.notes)


def test_conflicting_patterns_keep_the_first() -> None:
    board, _ = button_board()
    d = build_design(board, cfg(self=["TOUCH1"], ground=["TOUCH*", "GND"]))
    assert d.roles["TOUCH1"][0] == "self"
    assert any("keeps the first" in n for n in d.notes)


def test_proximity_loop_by_name_keeps_all_its_copper() -> None:
    """A thin loop (0.5 mm wide, 40 x 20 mm) is a proximity electrode: none of it is 'trace'."""
    loop = box(0, 0, 40, 20).difference(box(0.5, 0.5, 39.5, 19.5))
    d = build_design(make_board({"top-copper": {"PROX1": loop}}), cfg(self=["PROX*"]))
    (s,) = d.sensors
    assert s.kind == "proximity"
    assert s.electrodes[0].geometry.area == pytest.approx(40 * 20 - 39 * 19)
    # the zone fills the loop's inside: a hand anywhere over it is in the zone
    assert s.zone.area == pytest.approx(42 * 22 - (4 - math.pi), rel=1e-3)


def test_place_sets_how_found() -> None:
    board = make_board({"top-copper": {"~n1": disc(0, 0, 5)}})
    c = Config()
    c.roles_by_place = [RoleByPlace(layer="top-copper", role="self", point_mm=(0, 0), sensor="K")]
    (s,) = build_design(board, c).sensors
    assert (s.name, s.how_found) == ("K", "place")


def test_thin_teeth_of_a_pad_stay_with_the_electrode() -> None:
    """X2 features tell pad from trace: 0.4 mm teeth drawn as part of a region pad are electrode,
    the 0.4 mm draw leaving it is trace (an opening alone would remove both)."""
    from sensorcheck.board.model import Feature, SourceRef

    body = box(0, 0, 10, 4)
    teeth = [box(0.5 + 2 * k, 4, 0.9 + 2 * k, 10) for k in range(5)]  # 0.4 x 6 mm each
    pad = shapely.union_all([body, *teeth])
    region = Feature(geometry=pad, polarity="dark", kind="region", source=SourceRef("s.gbr", 3),
                     aperture_function="SMDPad,CuDef", net="T0")
    trace = draw_feature("T0", [(5, 0), (5, -20)], 0.4)
    board = make_board({"top-copper": {"T0": [pad, trace.geometry]}}, {"top-copper": [region, trace]})
    layer = board.layer("top-copper")
    assert layer is not None
    electrode, rest = split_electrode(layer, "T0")
    assert electrode.area == pytest.approx(40 + 5 * 0.4 * 6, rel=1e-6)  # body + teeth
    assert rest.area == pytest.approx(20 * 0.4, rel=0.02)  # the draw outside the pad (its round cap inside)


def test_mutual_group_names_the_node_and_overrides_roles() -> None:
    c = cfg(self=["*X1"])  # a wrong guess the group corrects
    c.groups = [SensorGroup(name="K1", kind="mutual-button", tx=("TX1",), rx=("RX1",))]
    d = build_design(ring_board(), c)
    k1 = [s for s in d.sensors if s.name == "K1"]
    assert len(k1) == 1 and k1[0].kind == "mutual-button" and k1[0].how_found == "group"
    assert d.roles["TX1"][0] == "transmitter" and d.roles["RX1"][0] == "receiver"
    assert any("gives way to the group" in n for n in d.notes)
    # the group's RX electrode is the disc, as found from the roles (test_tx_ring_around_rx_disc)
    (rxe,) = k1[0].electrodes_with("receiver")
    assert rxe.geometry.contains(disc(0, 0, 3.99))


def test_proximity_group_takes_the_whole_net() -> None:
    loop = box(0, 0, 40, 20).difference(box(0.5, 0.5, 39.5, 19.5))
    c = cfg()
    c.groups = [SensorGroup(name="hand", kind="proximity", nets=("LOOP",))]
    (s,) = build_design(make_board({"top-copper": {"LOOP": loop}}), c).sensors
    assert (s.name, s.kind) == ("hand", "proximity")
    assert s.electrodes[0].geometry.area == pytest.approx(40 * 20 - 39 * 19)


# --------------------------------------------------------------------------- properties

from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402


@settings(max_examples=20, deadline=None)
@given(n=st.integers(3, 8), perm=st.randoms(use_true_random=False), angle=st.floats(0, 180))
def test_slider_order_follows_position_for_any_naming(n: int, perm, angle: float) -> None:
    """Segments on a line at any angle, named in any order: the order is the positions' order
    (either direction), so consecutive segments in the result are neighbours on the board."""
    names = [f"S{k}" for k in range(n)]
    perm.shuffle(names)
    ux, uy = math.cos(math.radians(angle)), math.sin(math.radians(angle))
    pitch = 8.0
    nets = {}
    for k, name in enumerate(names):
        seg = affinity.rotate(box(0, 0, 7.5, 12), angle, origin=(0, 0))
        nets[name] = affinity.translate(seg, k * pitch * ux, k * pitch * uy)
    d = build_design(make_board({"top-copper": nets}), cfg(self=["S*"]))
    (s,) = d.sensors
    assert s.kind == "slider"
    pos = [names.index(n_) for n_ in s.order]  # index = position along the line, by construction
    assert pos == sorted(pos) or pos == sorted(pos, reverse=True)


@settings(max_examples=20, deadline=None)
@given(n=st.integers(3, 8), perm=st.randoms(use_true_random=False), turn=st.floats(0, 360))
def test_wheel_order_follows_angle_for_any_naming(n: int, perm, turn: float) -> None:
    names = [f"R{k}" for k in range(n)]
    perm.shuffle(names)
    span = 360.0 / n
    nets = {name: sector(0, 0, 6, 15, turn + k * span + 0.3, turn + (k + 1) * span - 0.3) for k, name in enumerate(names)}
    d = build_design(make_board({"top-copper": nets}), cfg(self=["R*"]))
    (s,) = d.sensors
    assert s.kind == "wheel"
    pos = [names.index(n_) for n_ in s.order]
    steps = {(b - a) % n for a, b in zip(pos, pos[1:] + pos[:1])}
    assert steps in ({1}, {n - 1})  # consecutive around the circle, one way or the other
    assert s.order[0] == "R0"  # starts at the first name
