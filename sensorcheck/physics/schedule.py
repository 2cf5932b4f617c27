"""Many sensors' estimates: identical windows solved once, the solves spread over processes.

:func:`solve_sensors` is the work behind :func:`estimate_design` (below):

1. every sensor's window fingerprint (:mod:`sensorcheck.physics.fingerprint`), in this process
   (cheap: the window's copper is clipped, not meshed);
2. one solve per distinct fingerprint (the first sensor of each, in the order asked), in a pool
   of worker processes (``spawn``; one BLAS thread each, the processes share the cores); the
   design is sent to each worker once, not with every sensor;
3. every other sensor of a fingerprint takes its twin's estimate, moved and renamed
   (:func:`sensorcheck.physics.fingerprint.translated`).  A twin whose solve failed, or whose mesh
   had to be coarsened (its window then differs from the fingerprinted one), is solved on its own.

Results do not depend on the number of workers or on which finishes first: the representative
of a fingerprint is fixed by the order asked, and the results are returned in that order.

Progress: one message per finished sensor, ``sensor 3/18 BTN3, 1 min 20 s, about 4 min left``
(the time left from the solves still to do), and ``estimates done: ...`` at the end.
"""

from __future__ import annotations

import os
import time
from collections.abc import Callable
from concurrent.futures import FIRST_COMPLETED, Executor, Future, ProcessPoolExecutor, wait
from typing import TYPE_CHECKING, Any

from sensorcheck.errors import ConfigError, InputError

if TYPE_CHECKING:
    from sensorcheck.design.model import Design
    from sensorcheck.physics.estimate import SensorEstimate
    from sensorcheck.physics.fingerprint import WindowKey

Progress = Callable[[str], None]
#: a note build_model writes when the window had to shrink: the fingerprinted window is then not the solved one
COARSENED_PREFIX = "mesh reduced to stay within"

_WORKER_DESIGN: list[Any] = []


def duration(seconds: float) -> str:
    """``45 s``, ``1 min 20 s``, ``2 h 05 min``: for people."""
    s = int(round(max(seconds, 0.0)))
    if s < 60:
        return f"{s} s"
    if s < 3600:
        return f"{s // 60} min {s % 60} s"
    return f"{s // 3600} h {(s % 3600) // 60:02d} min"


def _init_worker(design: "Design") -> None:
    _WORKER_DESIGN[:] = [design]


def _solve_in_worker(job: tuple[str, int, float]) -> tuple[str, Any]:
    from sensorcheck.physics.sensors import _one

    name, heights, max_h = job
    return _one((_WORKER_DESIGN[0], name, heights, max_h))


def _keys(design: "Design", names: list[str], heights: int, max_h: float) -> tuple[dict[str, "WindowKey | None"], int]:
    """Window fingerprints (None where one cannot be made: that sensor is solved alone and reports
    its own error) and the number of stackup notes that lead every estimate's notes."""
    from sensorcheck.limits import DEFAULT_LIMITS
    from sensorcheck.physics.finger import FINGER_DEFAULTS
    from sensorcheck.physics.fingerprint import _net_roles, context_digest, window_key
    from sensorcheck.physics.sensors import SolverOptions, build_stack

    cfg = design.config
    opts = SolverOptions.from_config(cfg.estimate, cfg.file)
    limits = getattr(cfg, "limits", None) or DEFAULT_LIMITS
    try:
        if cfg.overlay is None or not cfg.overlay.layers:
            raise ValueError("no overlay")
        stack = build_stack(design, cfg.overlay)
    except Exception:  # noqa: BLE001 - every sensor then reports the error from its own solve
        return {n: None for n in names}, 0
    context = context_digest([
        stack.medium.eps_r, stack.medium.interfaces_m, sorted(stack.copper_z_m.items()), stack.surface_m,
        repr(cfg.overlay), repr(cfg.finger or FINGER_DEFAULTS), repr(opts), heights, max_h,
        limits.max_mesh_panels,
    ])
    roles = _net_roles(design)
    by_name = {s.name: s for s in design.sensors}
    out: dict[str, WindowKey | None] = {}
    for n in names:
        try:
            s = by_name[n]
            # a sensor touched from another face than the overlay's is solved alone (the context is the board's)
            out[n] = (None if s.outline.is_empty or s.face not in (None, cfg.overlay.face)
                      else window_key(design, s, opts.window_mm, context, roles))
        except Exception:  # noqa: BLE001 - bad copper: the sensor's own solve says what is wrong
            out[n] = None
    return out, len(dict.fromkeys(stack.notes))


def solve_sensors(design: "Design", names: list[str], *, heights: int, max_h: float, workers: int,
                  progress: Progress | None = None, executor: Executor | None = None) -> dict[str, Any]:
    """name -> SensorEstimate, or the error text of that sensor; in the order of ``names``.

    ``executor``: solve on it (a Dask cluster, :mod:`sensorcheck.cluster`) instead of a local pool,
    with the same fingerprints, twins and per-sensor failure isolation (the design then travels
    with each job: a cluster's workers did not receive it up front).
    """
    t0 = time.perf_counter()
    if executor is not None:
        def submit(n: str) -> "Future[tuple[str, Any]]":
            from sensorcheck.physics.sensors import _one

            return executor.submit(_one, (design, n, heights, max_h))

        return _solve(design, names, heights, max_h, submit, progress, t0)
    from sensorcheck.physics.cache import active_cache

    n_workers = memory_workers(design, min(workers, len(names)), progress)
    # started first: the workers import while the fingerprints are made; with a window cache, only
    # once the windows still to solve are known (a cached run often needs no worker at all)
    with _Pool(design, n_workers, lazy=active_cache() is not None) as pool:
        def pooled(n: str) -> "Future[tuple[str, Any]]":
            ex = pool.start().executor
            assert ex is not None  # more than one worker
            return ex.submit(_solve_in_worker, (n, heights, max_h))

        return _solve(design, names, heights, max_h, pooled if n_workers > 1 else None, progress, t0)


def memory_workers(design: "Design", wanted: int, progress: Progress | None = None) -> int:
    """``wanted`` workers, fewer where the free memory does not hold that many windows at the panel
    limit (:func:`sensorcheck.physics.operator.workers_for_memory`); says so through ``progress``."""
    from sensorcheck.limits import DEFAULT_LIMITS
    from sensorcheck.physics.operator import available_bytes, worker_bytes, workers_for_memory

    limits = getattr(design.config, "limits", None) or DEFAULT_LIMITS
    free = available_bytes()
    n = workers_for_memory(wanted, limits.max_mesh_panels, free)
    if n < wanted and progress is not None and free is not None:
        progress(f"{n} of {wanted} worker processes: {free / 2**30:.1f} GB free, up to "
                 f"{worker_bytes(limits.max_mesh_panels) / 2**30:.1f} GB each at {limits.max_mesh_panels} panels")
    return n


def _solve(design: "Design", names: list[str], heights: int, max_h: float,
           submit: "Callable[[str], Future[tuple[str, Any]]] | None", progress: Progress | None, t0: float) -> dict[str, Any]:
    """Fingerprint, solve one sensor per distinct window (``submit``: on workers; None: here), fill the twins."""
    from sensorcheck.physics.fingerprint import translated
    from sensorcheck.physics.sensors import _one

    keys, stack_notes = _keys(design, names, heights, max_h)
    groups: dict[str, list[str]] = {}
    reps: list[str] = []
    for n in names:
        k = keys[n]
        if k is None:
            reps.append(n)
            continue
        if k.digest not in groups:
            groups[k.digest] = []
            reps.append(n)
        groups[k.digest].append(n)
    results: dict[str, Any] = {}
    state = {"solved": 0, "to_solve": len(reps)}
    total = len(names)

    def report(name: str) -> None:
        if progress is None:
            return
        elapsed = time.perf_counter() - t0
        left = state["to_solve"] - state["solved"]
        msg = f"sensor {len(results)}/{total} {name}, {duration(elapsed)}"
        if left > 0 and state["solved"]:
            msg += f", about {duration(elapsed / state['solved'] * left)} left"
        progress(msg)

    def finished(name: str, res: Any) -> list[str]:
        """Record a solve; fill its twins; return the twins that must be solved on their own."""
        results[name] = res
        state["solved"] += 1
        report(name)
        k = keys.get(name)
        own: list[str] = []
        if k is None:
            return own
        twins = [t for t in groups.get(k.digest, []) if t != name and t not in results]
        ok = not isinstance(res, str) and not any(x.startswith(COARSENED_PREFIX) for x in res.notes)
        for t in twins:
            kt = keys[t]
            if ok and kt is not None:
                results[t] = translated(res, k, kt, t, stack_notes, k.notes, kt.notes)
                report(t)
            else:
                own.append(t)
        if own:
            groups[k.digest] = [g for g in groups[k.digest] if g not in own]
            for t in own:
                keys[t] = None
        state["to_solve"] += len(own)
        return own

    reps = _from_cache(keys, reps, stack_notes, finished)
    if submit is None or len(reps) <= 1:
        queue = list(reps)
        while queue:  # _one runs on one BLAS thread, as in a worker: the same digits either way
            n = queue.pop(0)
            queue.extend(finished(n, _one((design, n, heights, max_h))[1]))
    else:
        _pool_solve(submit, reps, finished)
    _to_cache(keys, reps, results, stack_notes)
    if progress is not None:
        solved = state["solved"]
        progress(f"estimates done: {total} sensors ({solved} solved, {total - solved} from identical windows) "
                 f"in {duration(time.perf_counter() - t0)}")
    return {n: results[n] for n in names}


def _from_cache(keys: dict[str, Any], reps: list[str], stack_notes: int,
                finished: Callable[[str, Any], list[str]]) -> list[str]:
    """The representatives still to solve: those whose window the active cache
    (:mod:`sensorcheck.physics.cache`) holds are finished from it, twins included."""
    from sensorcheck.physics.cache import active_cache

    cache = active_cache()
    if cache is None:
        return reps
    todo: list[str] = []
    for n in reps:
        hit = cache.lookup(keys[n], n, stack_notes)
        todo.extend([n] if hit is None else finished(n, hit))
    return todo


def _to_cache(keys: dict[str, Any], reps: list[str], results: dict[str, Any], stack_notes: int) -> None:
    """Keep what was solved in the active cache (a coarsened window is not the fingerprinted one)."""
    from sensorcheck.physics.cache import active_cache

    cache = active_cache()
    if cache is None:
        return
    for n in reps:
        res = results.get(n)
        if res is None or isinstance(res, str):
            continue
        ok = not any(x.startswith(COARSENED_PREFIX) for x in res.notes)
        cache.store(keys.get(n) if ok else None, res, stack_notes)


class _Pool:
    """A spawn process pool with one BLAS thread per worker and the design sent once; none for one worker."""

    def __init__(self, design: "Design", n_workers: int, lazy: bool = False) -> None:
        self.design = design
        self.n = n_workers
        self.lazy = lazy  # started by start(), not on entering
        self.executor: ProcessPoolExecutor | None = None
        self.saved: dict[str, str | None] = {}

    def __enter__(self) -> "_Pool":
        return self if self.lazy else self.start()

    def start(self) -> "_Pool":
        if self.n <= 1 or self.executor is not None:
            return self
        import multiprocessing as mp

        self.saved = {k: os.environ.get(k) for k in BLAS_THREADS}
        for k in BLAS_THREADS:
            os.environ[k] = "1"  # one BLAS thread per worker process: the processes share the cores
        self.executor = ProcessPoolExecutor(max_workers=self.n, mp_context=mp.get_context("spawn"),
                                            initializer=_init_worker, initargs=(self.design,))
        for _ in range(self.n):
            self.executor.submit(_warm)
        return self

    def __exit__(self, *exc: object) -> None:
        if self.executor is not None:
            self.executor.shutdown(wait=True, cancel_futures=True)
        for k, v in self.saved.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v


BLAS_THREADS = ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS")


def _warm() -> None:
    import sensorcheck.physics.sensors  # noqa: F401  (the import is the work: done while the parent makes fingerprints)


def _pool_solve(submit: "Callable[[str], Future[tuple[str, Any]]]", reps: list[str],
                finished: Callable[[str, Any], list[str]]) -> None:
    from sensorcheck.physics.sensors import INTERNAL_PREFIX

    pending: dict[Future[tuple[str, Any]], str] = {submit(n): n for n in reps}
    order = {n: i for i, n in enumerate(reps)}
    while pending:
        done, _ = wait(pending, return_when=FIRST_COMPLETED)
        # in the order asked, not the order finished: the same twins get the same representative
        for fut in sorted(done, key=lambda f: order.get(pending[f], len(reps))):
            name = pending.pop(fut)
            try:
                _, res = fut.result()
            except Exception as exc:  # noqa: BLE001 - a dead worker loses only its own sensor
                res = f"{INTERNAL_PREFIX}{type(exc).__name__}: {exc}"
            for t in finished(name, res):
                pending[submit(t)] = t


def estimate_design(
    design: Design,
    *,
    sensors: list[str] | None = None,
    workers: int | None = None,
    progress: Callable[[str], None] | None = None,
    errors: list[str] | None = None,
    executor: Executor | None = None,
) -> dict[str, SensorEstimate]:
    """Estimates for the design's sensors (or those named), in parallel across processes.

    ``executor``: run the sensors there instead (a Dask cluster, :mod:`sensorcheck.cluster`), with
    the same window fingerprints and per-sensor failure isolation as the local pool.

    Errors of one sensor (bad copper, over the mesh budget) are raised as one InputError after
    the others ran; pass ``errors`` (a list) to collect their messages there instead and keep
    the estimates of the other sensors.
    """
    names = [s.name for s in design.sensors] if sensors is None else list(sensors)
    known = {s.name for s in design.sensors}
    for n in names:
        if n not in known:
            raise ConfigError(design.config.file, "sensor", f"no sensor named {n!r} (known: {', '.join(sorted(known))})")
    opts = design.config.estimate
    heights = int(opts.get("heights", 12))
    max_h = float(opts.get("max_height_mm", 20.0))

    results: dict[str, SensorEstimate] = {}
    failed: list[str] = errors if errors is not None else []
    outcomes = solve_sensors(design, names, heights=heights, max_h=max_h, workers=workers or os.cpu_count() or 1,
                             progress=progress, executor=executor)
    for name, res in outcomes.items():
        if isinstance(res, str):
            failed.append(f"{name}: {res}")
        else:
            results[name] = res
    if failed and errors is None:
        raise InputError(design.board.source, None, "; ".join(failed), "sensors the field solver can model")
    return results
