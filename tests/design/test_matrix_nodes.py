"""A mutual node's layer is the layer where its two lines face each other (issue 16 item 4).

The board: on the bottom a receiver disc (r 4) inside a transmitter ring (5-9 mm) -- a key; on the
top the receiver line leaves as a 5 mm wide strip that crosses over the ring.  Node detection sees
the pair twice: TX bottom / RX bottom (the disc facing the ring all around) and TX bottom / RX top
(the strip over the ring).  The two footprints overlap and merge into one node, whose layers must be
those of the key.  By hand: on the bottom the receiver facing the ring is the whole disc,
pi 4^2 = 50.3 mm2 (less than the ring's copper in the footprint); on the top the strip faces the
ring over one crossing only, about 5 mm x the 4 mm ring band plus the gap on each side, well under
50 mm2.
"""

from __future__ import annotations

import math

from sensorcheck.design.sensors import _facing_copper_mm2, find_nodes

from .synth import disc, make_board, ring, track


def test_node_layer_is_where_its_lines_face() -> None:
    board = make_board({
        "top-copper": {"RX": track([(0.0, 0.0), (20.0, 0.0)], 5.0)},
        "bottom-copper": {"RX": disc(0.0, 0.0, 4.0), "TX": ring(0.0, 0.0, 5.0, 9.0)},
    })
    nodes = find_nodes(board, ["TX"], ["RX"])
    assert len(nodes) == 1
    node = nodes[0]
    assert (node.tx_layer, node.rx_layer) == ("bottom-copper", "bottom-copper")
    assert _facing_copper_mm2(board, node) >= math.pi * 4.0 ** 2 * 0.99  # the whole disc faces the ring
