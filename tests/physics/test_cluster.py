"""``--scheduler ADDRESS``: check and estimate on a Dask distributed cluster (issue 10, item 6).

The outside reference is the local run itself: the same jobs on an in-process Dask cluster
(``distributed.LocalCluster``, a library of its own) must give byte-identical JSON.  Skipped where
the optional extra (``sensorcheck[cluster]``) is not installed.
"""

from __future__ import annotations

import argparse
import json
import socket
from pathlib import Path

import pytest

distributed = pytest.importorskip("distributed")

from sensorcheck import cluster  # noqa: E402
from sensorcheck.cli import main  # noqa: E402
from sensorcheck.commands import estimate as cmd  # noqa: E402

from .designs import button  # noqa: E402

BOARDS = Path(__file__).resolve().parents[2] / "boards"
FAST = {"h_edge_mm": 1.0, "h_near_mm": 1.5, "h_far_mm": 4.0, "window_mm": 8.0, "finger_sides": 16, "search": False, "heights": 3}


def _cluster():
    """An in-process Dask cluster (threads, no worker processes): two workers."""
    return distributed.LocalCluster(processes=False, n_workers=2, threads_per_worker=1, dashboard_address=None)


def test_check_of_many_boards_on_the_cluster_is_byte_identical(tmp_path: Path) -> None:
    # first in the file: the local run forks its process pool before any cluster thread exists
    boards = [str(BOARDS / "tm1-clean"), str(BOARDS / "tm1-flawed")]
    outs = []

    def run(*extra: str) -> None:
        out = tmp_path / f"r{len(outs)}.json"
        rc = main(["check", *boards, "--no-estimate", "--jobs", "2", "--report", f"json:{out}", *extra])
        assert rc == 1  # the flawed demo board has errors
        outs.append(out.read_bytes())

    run()
    with _cluster() as lc:
        run("--scheduler", lc.scheduler_address)
    assert outs[1] == outs[0]
    assert len(json.loads(outs[0])["boards"]) == 2


@pytest.fixture(scope="module")
def address():
    with _cluster() as lc:
        yield lc.scheduler_address


def _estimate_json(monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str], **kw) -> str:
    import sensorcheck.check as check

    design = button(estimate=FAST)
    monkeypatch.setattr(check, "build_design_for", lambda path, config=None: design)
    args = argparse.Namespace(path="x", config=None, sensor=None, plot=None, format="json", **kw)
    assert cmd.run(args) == 0
    return capsys.readouterr().out


def test_estimate_sweep_on_the_cluster_is_byte_identical(address, monkeypatch, capsys) -> None:
    sweep = "overlay_thickness_mm=1,2.5"
    local = _estimate_json(monkeypatch, capsys, sweep=sweep, scheduler=None)
    remote = _estimate_json(monkeypatch, capsys, sweep=sweep, scheduler=address)
    assert json.loads(local)["values"] == [1.0, 2.5]
    assert remote == local


def test_estimate_on_the_cluster_is_byte_identical(address, monkeypatch, capsys) -> None:
    local = _estimate_json(monkeypatch, capsys, sweep=None, scheduler=None)
    remote = _estimate_json(monkeypatch, capsys, sweep=None, scheduler=address)
    assert [e["sensor"] for e in json.loads(local)["estimates"]] == ["K1"]
    assert remote == local


def test_unreachable_scheduler_is_exit_2_naming_it(monkeypatch, capsys) -> None:
    with socket.socket() as s:  # a port nothing listens on: bound, then closed
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    monkeypatch.setattr(cluster, "CONNECT_TIMEOUT_S", 2.0)
    addr = f"tcp://127.0.0.1:{port}"
    rc = main(["check", str(BOARDS / "tm1-clean"), "--no-estimate", "--report", "json:-", "--scheduler", addr])
    err = capsys.readouterr().err
    assert rc == 2 and addr in err and "cannot reach" in err and "Traceback" not in err


def test_map_ordered_raises_a_workers_input_error_with_its_message(address) -> None:
    from sensorcheck.errors import InputError, SensorcheckError

    def bad(x: int) -> int:
        if x == 2:
            raise InputError("f.gbr", 7, "bad thing", "a good thing")
        return x * 10

    with cluster.cluster_executor(address) as ex:
        assert cluster.map_ordered(ex, bad, [((1,), {}), ((3,), {})]) == [10, 30]
        with pytest.raises(SensorcheckError, match=r"f\.gbr:7: bad thing \(expected a good thing\)"):
            cluster.map_ordered(ex, bad, [((1,), {}), ((2,), {})])
