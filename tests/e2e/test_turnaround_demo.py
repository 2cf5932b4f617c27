"""The flawed demo key K1 in a product whose ground reaches earth through only 2 pF (issue 15).

Fault (a) of the flawed revision (boards/README.md: a 20 mm receiver with no ground within 10 mm).
With the shipped scenario (10 pF to earth) its signal peaks and falls back (tests/e2e/
test_check_cli.py).  With 2 pF the finger's return path (150 pF body in series with 2 pF: 1.97 pF,
circuit theory) is weaker than its coupling to the key at touch: the finger acts as a floating
conductor, which passes the transmitter's field on to the receiver (textbook electrostatics of
conductors), so Cm first falls, then rises above its baseline: the signal reverses sign.  The
peak search that reported turning points before missed this case (|signal| is largest at touch).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from sensorcheck.cli import main

REPO = Path(__file__).resolve().parents[2]
FLAWED = REPO / "boards" / "tm1-flawed"


@pytest.mark.slow  # one sensor of the demo board through the field solver
def test_a_2_pf_product_reverses_the_sign_of_the_flawed_key(tmp_path: Path, capsys) -> None:
    cfg = tmp_path / "sensorcheck.toml"
    text = (FLAWED / "sensorcheck.toml").read_text(encoding="utf-8")
    assert "device_ground = 10.0" in text
    cfg.write_text(text.replace("device_ground = 10.0", "device_ground = 2.0"), encoding="utf-8")
    rc = main(["estimate", str(FLAWED), "--config", str(cfg), "--sensor", "K1", "--format", "json"])
    assert rc == 0
    (k1,) = json.loads(capsys.readouterr().out)["estimates"]
    signal = [v - k1["baseline_pf"] for _, v in k1["curve"]]
    assert k1["touch_delta_pf"] > 0 and min(signal) < -0.1 * k1["touch_delta_pf"]  # fell first, then rose
    kinds = [t["kind"] for t in k1["turnarounds"]]
    assert kinds[0] == "turns" and "reverses sign" in kinds
    assert k1["turning_point_mm"] == k1["turnarounds"][0]["height_mm"] > 0
