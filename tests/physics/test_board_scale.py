"""Estimates at board scale (issue 10): identical windows solved once, any number of workers, the
reference run kept in bench/, progress a person can read.

Outside references: a twin's estimate is checked against the same sensor solved on its own (the
solver's own answer for that copper, not a number of ours), and the touchpad case against
bench/board_reference.json, made by the solver settings of the commit before the speed-ups
(bench/bench_board.py --write-reference).  Work is bounded by counting solves, never by timing.
"""

from __future__ import annotations

import importlib.util
import io
import json
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest
from shapely.geometry import Point, box

from .designs import make_design
from sensorcheck.commands.estimate import estimates_json
from sensorcheck.commands.progress import StageLines
from sensorcheck.design.model import Electrode, Sensor
from sensorcheck.physics.schedule import duration
from sensorcheck.physics.schedule import estimate_design
from sensorcheck.physics.sensors import SolverOptions, estimate_with

REPO = Path(__file__).resolve().parents[2]
FAST = {"h_edge_mm": 1.0, "h_near_mm": 1.5, "h_far_mm": 4.0, "window_mm": 8.0, "finger_sides": 16, "search": False,
        "heights": 4}
SHIFT_MM = 60.0


def _pairs():
    """Two pairs of self buttons 12 mm apart, the second pair 60 mm to the right of the first, each
    pair in its own ground pour: B1/B3 and B2/B4 see the same copper in their windows."""
    nets: dict = {}
    sensors = []
    grounds = []
    for k, dx in enumerate((0.0, SHIFT_MM)):
        pads = [Point(dx, 0).buffer(5.0, quad_segs=16), Point(dx + 12.0, 0).buffer(5.0, quad_segs=16)]
        grounds.append(box(dx - 12, -12, dx + 24, 12).difference(pads[0].buffer(1.0)).difference(pads[1].buffer(1.0)))
        for j, pad in enumerate(pads):
            n = 2 * k + j + 1
            nets[f"T{n}"] = pad
            sensors.append(Sensor(f"B{n}", "self-button", "top-copper", [Electrode(f"T{n}", "self", "top-copper", pad)],
                                  pad.buffer(1.0), 1.0))
    nets["GND"] = grounds[0].union(grounds[1])
    roles = {n: "self" for n in nets if n != "GND"} | {"GND": "ground"}
    return make_design(nets, roles, sensors, estimate=FAST)


def test_twin_windows_are_solved_once_and_match_their_own_solve() -> None:
    d = _pairs()
    lines: list[str] = []
    est = estimate_design(d, workers=1, progress=lines.append)
    assert lines[-1].startswith("estimates done: 4 sensors (2 solved, 2 from identical windows)")
    assert lines[0].startswith("sensor 1/4 B1, ")
    own = estimate_with(d, d.sensors[2], opts=SolverOptions.from_config(FAST), heights=4)  # B3 on its own
    twin = est["B3"]
    assert twin.sensor == "B3"
    # the same copper 60 mm away meshes the same up to floating-point ties in the mesher (a cell
    # centre exactly on an outline): a few parts in 100 000, far below the mesh's own error
    for a, b in ((twin.baseline_pf, own.baseline_pf), (twin.touch_delta_pf, own.touch_delta_pf)):
        assert a == pytest.approx(b, rel=1e-4)
    assert set(twin.crosstalk_pf) == set(own.crosstalk_pf) == {"B4"}
    assert twin.crosstalk_pf["B4"] == pytest.approx(own.crosstalk_pf["B4"], rel=1e-3, abs=1e-9)
    assert twin.best_point_mm == pytest.approx(own.best_point_mm, abs=1e-6)
    assert twin.best_point_mm[0] == pytest.approx(est["B1"].best_point_mm[0] + SHIFT_MM, abs=1e-9)
    assert twin.notes == own.notes


def test_results_are_the_same_for_any_number_of_workers() -> None:
    one = estimates_json(estimate_design(_pairs(), workers=1))
    two = estimates_json(estimate_design(_pairs(), workers=2))
    assert json.dumps(one, sort_keys=True) == json.dumps(two, sort_keys=True)


class _CountingExecutor(ThreadPoolExecutor):
    """Stands in for a cluster's executor (sensorcheck.cluster): counts the jobs it is given."""

    def __init__(self) -> None:
        super().__init__(max_workers=1)
        self.jobs: list[str] = []

    def submit(self, fn, /, *args, **kwargs):  # type: ignore[no-untyped-def, override]
        self.jobs.append(args[0][1] if args and isinstance(args[0], tuple) else "?")
        return super().submit(fn, *args, **kwargs)


def test_an_executor_solves_each_window_once_like_the_local_pool() -> None:
    """--scheduler used to send every sensor; now twins are filled as in the local pool (counted jobs)."""
    with _CountingExecutor() as ex:
        on_ex = estimate_design(_pairs(), executor=ex)
    assert ex.jobs == ["B1", "B2"]
    local = estimate_design(_pairs(), workers=1)
    assert json.dumps(estimates_json(on_ex), sort_keys=True) == json.dumps(estimates_json(local), sort_keys=True)


def test_an_executor_isolates_a_failing_sensor(monkeypatch: pytest.MonkeyPatch) -> None:
    import sensorcheck.physics.sensors as sensors_mod

    real = sensors_mod.estimate_sensor

    def fails_for_b2(design, sensor, **kw):  # type: ignore[no-untyped-def]
        if sensor.name == "B2":
            raise RuntimeError("boom")
        return real(design, sensor, **kw)

    monkeypatch.setattr(sensors_mod, "estimate_sensor", fails_for_b2)
    errors: list[str] = []
    with _CountingExecutor() as ex:
        est = estimate_design(_pairs(), executor=ex, errors=errors)
    # B3 is B1's twin; B2 failed alone, and its twin B4 was then solved on its own
    assert set(est) == {"B1", "B3", "B4"}
    assert errors == ["B2: internal error: RuntimeError: boom"]
    assert ex.jobs == ["B1", "B2", "B4"]


def _make_touchpad():
    spec = importlib.util.spec_from_file_location("_make_touchpad", REPO / "bench" / "make_touchpad.py")
    assert spec and spec.loader
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def test_touchpad_nodes_match_the_reference_run(tmp_path: Path) -> None:
    # issue 10: every estimate within 1 % of the reference run, the turning point within 0.1 mm
    ref_all = json.loads((REPO / "bench" / "board_reference.json").read_text())
    ref = ref_all["touchpad-2x2"]
    from sensorcheck.check import build_design_for

    root = _make_touchpad().make(tmp_path, 2, 2)
    design = build_design_for(root / "fab", root / "sensorcheck.toml")
    names = ["N0_0", "N1_1"]
    est = estimate_design(design, sensors=names, workers=1)
    for n in names:
        e, r = est[n], ref[n]
        for key in ("baseline_pf", "touch_delta_pf", "percent_change"):
            assert getattr(e, key) == pytest.approx(r[key], rel=0.01), (n, key)
        assert set(e.crosstalk_pf) == set(r["crosstalk_pf"])
        for nb, v in r["crosstalk_pf"].items():
            assert e.crosstalk_pf[nb] == pytest.approx(v, rel=0.01, abs=1e-4), (n, nb)
        if r["turning_point_mm"] is None:
            assert e.turning_point_mm is None
        else:
            assert e.turning_point_mm == pytest.approx(r["turning_point_mm"], abs=0.1)


def test_progress_when_piped_is_one_line_per_stage() -> None:
    out = io.StringIO()
    p = StageLines(out)
    for m in ("reading a.gbr", "reading b.gbr", "finding nets", "sensor 1/3 K1, 2 s", "sensor 2/3 K2, 4 s, about 2 s left",
              "estimates done: 3 sensors (3 solved, 0 from identical windows) in 6 s", "rule 1/2: a", "rule 2/2: b"):
        p(m)
    assert out.getvalue().splitlines() == ["reading a.gbr", "finding nets", "sensor 1/3 K1, 2 s",
                                           "estimates done: 3 sensors (3 solved, 0 from identical windows) in 6 s",
                                           "rule 1/2: a"]


@pytest.mark.parametrize("s,text", [(0.4, "0 s"), (45, "45 s"), (80, "1 min 20 s"), (3600 + 5 * 60, "1 h 05 min")])
def test_durations_read_like_a_person_writes_them(s: float, text: str) -> None:
    assert duration(s) == text
