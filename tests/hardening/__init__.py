"""Shared harness of the hardening tests (issue 6, items 1 and 3) and of bench/fuzz_long.py.

Untrusted input may make a reader raise the wrong exception, loop, or eat memory. Running a
reader in the test process would let a hang stop the suite and a memory bomb take the machine,
so every example here runs in a *worker process* that

* caps its own address space with ``resource.setrlimit(RLIMIT_AS)`` (``MEMORY_BOUND_BYTES``), so
  an allocation past the bound fails inside the worker instead of swapping the machine;
* is given ``TIME_BOUND_S`` seconds per example by the parent, which kills and restarts it when
  they pass (a hang is reported with the input that caused it). This is a hang guard, generous for
  a loaded 2-core CI machine, never a speed limit: no test asserts how long a read took.

The worker is started once and reused (importing shapely and gerbonara takes about a second),
so one example costs a pipe round trip plus the read itself.

Outcome of one example (:class:`Outcome`): ``kind`` is one of

* ``"ok"``      the reader returned;
* ``"ours"``    it raised our InputError / LimitError / ConfigError (``file``, ``line``, ``message``);
* ``"escaped"`` another exception escaped (``error`` holds the traceback): a reader bug;
* ``"hang"``    no answer within the time bound;
* ``"died"``    the worker died (a crash in C code, or killed for memory).

:func:`problem` says what is wrong with an outcome (None: the contract holds).
"""

from __future__ import annotations

import os
import pickle
import select
import struct
import subprocess
import sys
import time
import traceback
from dataclasses import dataclass
from pathlib import Path
from typing import Any, BinaryIO, Literal

REPO = Path(__file__).resolve().parents[2]
SHARED = REPO.parent / "shared"
CORPUS = SHARED / "corpus"

#: per-example bounds (generous: a guard against hangs and memory bombs, not a speed target)
TIME_BOUND_S = 60.0
MEMORY_BOUND_BYTES = 2 * 1024**3

Reader = Literal["gerber", "excellon", "ipc356", "jobfile", "config"]
READERS: tuple[Reader, ...] = ("gerber", "excellon", "ipc356", "jobfile", "config")
OutcomeKind = Literal["ok", "ours", "escaped", "hang", "died"]

#: read_gerber's last-resort wrapper (sensorcheck/fab/gerber.py): an exception nobody foresaw,
#: turned into an InputError without a line. The user sees no traceback, but it is a reader bug
#: (the line is lost and the message is Python's), so the fuzz tests count it as a problem.
MASKED_BUG_PREFIX = "cannot read this Gerber file ("


@dataclass(frozen=True, slots=True)
class Outcome:
    kind: OutcomeKind
    error_type: str | None = None
    file: str | None = None
    line: int | None = None
    message: str | None = None
    error: str | None = None  # traceback (escaped) or a note (hang, died)
    seconds: float = 0.0


# --------------------------------------------------------------------------- in the worker


def _apply_memory_bound(limit_bytes: int) -> None:
    import resource

    soft, hard = resource.getrlimit(resource.RLIMIT_AS)
    want = limit_bytes if hard == resource.RLIM_INFINITY else min(limit_bytes, hard)
    resource.setrlimit(resource.RLIMIT_AS, (want, hard))


def call_reader(reader: Reader, data: bytes, name: str, limits_overrides: dict[str, Any] | None = None) -> Outcome:
    """Run one reader on ``data`` in this process and classify what happened."""
    from sensorcheck.errors import ConfigError, InputError
    from sensorcheck.limits import DEFAULT_LIMITS

    limits = DEFAULT_LIMITS.with_overrides(limits_overrides or {})
    t0 = time.perf_counter()
    try:
        if reader == "gerber":
            from sensorcheck.fab.gerber import read_gerber

            read_gerber(data, name, limits=limits)
        elif reader == "excellon":
            from sensorcheck.fab.excellon import read_excellon

            read_excellon(data, name, limits=limits)
        elif reader == "ipc356":
            from sensorcheck.fab.ipc356 import read_ipc356

            read_ipc356(data, name, limits=limits)
        elif reader == "jobfile":
            from sensorcheck.fab.jobfile import read_jobfile

            read_jobfile(data, name)
        elif reader == "config":
            import tempfile

            from sensorcheck.design.config import load_config

            with tempfile.TemporaryDirectory(prefix="sc-fuzz-") as tmp:
                path = Path(tmp) / name
                path.write_bytes(data)
                try:
                    load_config(path, profiles_dir=REPO / "rules")
                except ConfigError as exc:
                    # the file the user gave, and the key path (or "line N") where it went wrong; an
                    # error in a profile file the config names (profile = "path") names that file,
                    # which is right: it is shown in the message, the outcome keeps the config's name
                    if exc.file == str(path):
                        return Outcome("ours", type(exc).__name__, name, None, f"{exc.key}: {exc.message}",
                                       seconds=time.perf_counter() - t0)
                    return Outcome("ours", type(exc).__name__, name if exc.file else None, None,
                                   f"(in the profile {exc.file}) {exc.key}: {exc.message}",
                                   seconds=time.perf_counter() - t0)
        else:
            raise ValueError(reader)
    except InputError as exc:
        return Outcome("ours", type(exc).__name__, exc.file, exc.line, exc.message, seconds=time.perf_counter() - t0)
    except BaseException as exc:  # noqa: BLE001 - the point: anything else is a finding
        if isinstance(exc, KeyboardInterrupt):
            raise
        return Outcome("escaped", type(exc).__name__, name, None, str(exc)[:500],
                       error=traceback.format_exc()[-4000:], seconds=time.perf_counter() - t0)
    return Outcome("ok", seconds=time.perf_counter() - t0)


def _read_frame(stream: BinaryIO) -> Any:
    head = stream.read(8)
    if len(head) < 8:
        raise EOFError
    (size,) = struct.unpack("<Q", head)
    return pickle.loads(stream.read(size))


def _write_frame(stream: BinaryIO, obj: Any) -> None:
    blob = pickle.dumps(obj)
    stream.write(struct.pack("<Q", len(blob)) + blob)
    stream.flush()


def serve() -> None:
    """Worker main loop: (reader, data, name, overrides) frames in, Outcome frames out."""
    _apply_memory_bound(int(os.environ.get("SC_FUZZ_MEMORY_BYTES", MEMORY_BOUND_BYTES)))
    # import once, before the first example, so that its time is not charged to the example
    import sensorcheck.design.config  # noqa: F401
    import sensorcheck.fab.excellon  # noqa: F401
    import sensorcheck.fab.gerber  # noqa: F401
    import sensorcheck.fab.ipc356  # noqa: F401
    import sensorcheck.fab.jobfile  # noqa: F401

    stdin, stdout = sys.stdin.buffer, sys.stdout.buffer
    sys.stdout = sys.stderr  # a stray print() in a library must not corrupt the frames
    _write_frame(stdout, "ready")
    while True:
        try:
            reader, data, name, overrides = _read_frame(stdin)
        except EOFError:
            return
        _write_frame(stdout, call_reader(reader, data, name, overrides))


# --------------------------------------------------------------------------- in the parent


class Worker:
    """One reader process with the memory bound; :meth:`run` applies the time bound."""

    def __init__(self, *, time_bound_s: float = TIME_BOUND_S, memory_bytes: int = MEMORY_BOUND_BYTES) -> None:
        self.time_bound_s = time_bound_s
        self.memory_bytes = memory_bytes
        self.proc: subprocess.Popen[bytes] | None = None
        self.restarts = 0

    def _start(self) -> None:
        env = dict(os.environ, SC_FUZZ_MEMORY_BYTES=str(self.memory_bytes), OPENBLAS_NUM_THREADS="1",
                   OMP_NUM_THREADS="1", MKL_NUM_THREADS="1", PYTHONPATH=os.pathsep.join([str(REPO), str(REPO / "tests")]))
        self.proc = subprocess.Popen(
            [sys.executable, "-c", "from hardening import serve; serve()"],
            stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, env=env, cwd=str(REPO),
        )
        ready = self._receive(120.0)
        if ready != "ready":
            raise RuntimeError(f"fuzz worker did not start: {ready!r}")

    def _receive(self, timeout_s: float) -> Any:
        assert self.proc is not None and self.proc.stdout is not None
        fd = self.proc.stdout.fileno()
        ready, _, _ = select.select([fd], [], [], timeout_s)
        if not ready:
            raise TimeoutError
        return _read_frame(self.proc.stdout)

    def run(self, reader: Reader, data: bytes, name: str, limits_overrides: dict[str, Any] | None = None) -> Outcome:
        if self.proc is None or self.proc.poll() is not None:
            self._start()
        assert self.proc is not None and self.proc.stdin is not None
        t0 = time.perf_counter()
        try:
            _write_frame(self.proc.stdin, (reader, data, name, limits_overrides))
            # the answer's header arrives only once the read is done; the frame itself is small
            return self._receive(self.time_bound_s)
        except TimeoutError:
            self.kill()
            return Outcome("hang", file=name, error=f"hang guard: no answer within {self.time_bound_s:g} s (a guard "
                                                    "against a reader that never returns, not a speed limit)",
                           seconds=time.perf_counter() - t0)
        except (EOFError, BrokenPipeError, pickle.UnpicklingError):
            code = self.proc.wait()
            self.proc = None
            self.restarts += 1
            return Outcome("died", file=name, error=f"worker exited with {code}", seconds=time.perf_counter() - t0)

    def kill(self) -> None:
        if self.proc is not None:
            self.proc.kill()
            self.proc.wait()
            self.proc = None
            self.restarts += 1

    def close(self) -> None:
        if self.proc is not None:
            assert self.proc.stdin is not None
            self.proc.stdin.close()
            try:
                self.proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait()
            self.proc = None

    def __enter__(self) -> "Worker":
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


def problem(outcome: Outcome, name: str, data: bytes) -> str | None:
    """What breaks the readers' contract in ``outcome`` (None: it holds).

    Contract (BRIEF, "Bad input"; sensorcheck/errors.py): return, or raise our error naming the
    file (and the line, which may be None only when the whole file is at fault).
    """
    if outcome.kind == "ok":
        return None
    if outcome.kind != "ours":
        return f"{outcome.kind}: {outcome.error_type or ''} {outcome.message or ''} {outcome.error or ''}".strip()
    if outcome.file != name:
        return f"error names file {outcome.file!r}, not {name!r}: {outcome.message}"
    if outcome.message and outcome.message.startswith(MASKED_BUG_PREFIX):
        return f"masked reader bug (no line): {outcome.message}"
    if outcome.line is not None:
        lines = data.count(b"\n") + data.count(b"\r") + 1  # CR-only files count their CRs as lines
        if not 1 <= outcome.line <= lines:
            return f"line {outcome.line} outside the file's {lines} lines: {outcome.message}"
    return None


def corpus_files(reader: Reader) -> list[Path]:
    """Real files of ../shared/corpus the reader is meant for (by extension); [] when absent."""
    if not CORPUS.is_dir():
        return []
    files = sorted(p for p in CORPUS.glob("*/fab/*") if p.is_file())
    if reader == "gerber":
        return [p for p in files if p.suffix.lower() in {".gbr", ".gtl", ".gbl", ".gto", ".gbo", ".gts", ".gbs",
                                                         ".gtp", ".gbp", ".gm1", ".g2", ".g3", ".gba", ".gta"}]
    if reader == "excellon":
        return [p for p in files if p.suffix.lower() in {".drl", ".txt"}]
    if reader == "ipc356":
        return [p for p in files if p.suffix.lower() == ".ipc"]
    if reader == "jobfile":
        return [p for p in files if p.suffix.lower() == ".gbrjob"]
    return sorted((REPO / "tests/corpus/configs").glob("*.toml")) + sorted(REPO.glob("boards/*/sensorcheck.toml"))
