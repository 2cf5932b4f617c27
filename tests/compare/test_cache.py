"""The window cache on disk: a later run reads back what an earlier one solved, and a cache file
is data, never code (Python's pickle documentation: "Warning: the pickle module is not secure ...
restricting globals" with ``Unpickler.find_class``, which the cache does)."""

from __future__ import annotations

import os
import pickle
from pathlib import Path

from sensorcheck import __version__
from sensorcheck.physics.cache import WindowCache
from sensorcheck.physics.estimate import SensorEstimate
from sensorcheck.physics.fingerprint import WindowKey


def _key(digest: str, centre: tuple[float, float] = (0.0, 0.0)) -> WindowKey:
    return WindowKey(digest, centre, ("T1",), ("B1",), ())


def _estimate() -> SensorEstimate:
    return SensorEstimate(sensor="B1", kind="self", model="test", baseline_pf=2.0, touch_delta_pf=0.5,
                          percent_change=25.0, turning_point_mm=None, best_point_mm=(1.0, 2.0))


def test_a_later_run_reads_what_an_earlier_one_solved(tmp_path: Path) -> None:
    first = WindowCache(tmp_path)
    first.store(_key("abc"), _estimate(), 0)
    assert first.solved == 1
    assert [p.name for p in tmp_path.iterdir()] == [f"abc-{__version__}.pickle"]
    later = WindowCache(tmp_path)
    est = later.lookup(_key("abc", (10.0, 0.0)), "B7", 0)  # a twin window 10 mm to the right
    assert est is not None and est.sensor == "B7" and est.best_point_mm == (11.0, 2.0)
    assert est.touch_delta_pf == 0.5 and later.hits == 1
    assert later.lookup(_key("other"), "B7", 0) is None and later.hits == 1


class _Boom:
    def __reduce__(self):  # what a planted file would carry: a call on load
        return (os.system, ("echo planted > planted.txt",))


def test_a_cache_file_that_is_not_an_estimate_is_refused_not_run(tmp_path: Path, monkeypatch) -> None:
    monkeypatch.chdir(tmp_path)
    (tmp_path / f"bad-{__version__}.pickle").write_bytes(pickle.dumps(_Boom()))
    (tmp_path / f"junk-{__version__}.pickle").write_bytes(b"not a pickle")
    cache = WindowCache(tmp_path)
    assert cache.lookup(_key("bad"), "B1", 0) is None
    assert cache.lookup(_key("junk"), "B1", 0) is None
    assert not (tmp_path / "planted.txt").exists()


def test_with_a_cache_the_pool_starts_only_for_windows_to_solve() -> None:
    # the same numbers whichever way they are solved (the scheduler's own contract): two different
    # windows, solved in worker processes started once the cache said they are needed, then both
    # taken from the cache with no worker at all
    from sensorcheck.commands.estimate import estimates_json
    from sensorcheck.physics.schedule import estimate_design

    from .helpers import buttons

    plain = estimates_json(estimate_design(buttons((5.0, 6.0)), workers=1))
    cache = WindowCache()
    with cache.active():
        pooled = estimates_json(estimate_design(buttons((5.0, 6.0)), workers=2))
        assert (cache.solved, cache.hits) == (2, 0)
        again = estimates_json(estimate_design(buttons((5.0, 6.0)), workers=2))
        assert (cache.solved, cache.hits) == (2, 2)
    assert pooled == plain and again == plain
