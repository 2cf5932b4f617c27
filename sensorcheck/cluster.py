"""Past one machine: ``check`` over many boards and ``estimate`` runs on a Dask distributed cluster.

Optional (``pip install 'sensorcheck[cluster]'``); the local process pool stays the default.  With
``--scheduler ADDRESS`` the same jobs go to the cluster's workers through the client's
``concurrent.futures`` executor, and the results come back in the order they were submitted, so
the reports are byte-identical to a local run.  The workers must run the same sensorcheck and
numpy versions and, for ``check``, see the board folders at the same paths (a shared file system).

An address that cannot be reached within ``CONNECT_TIMEOUT_S`` is an error naming it (exit 2),
never a hang.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from concurrent.futures import Executor
from contextlib import AbstractContextManager, contextmanager, nullcontext
from typing import Any

from sensorcheck.errors import SensorcheckError

#: seconds to reach the scheduler before giving up (a bounded connect: never a hang)
CONNECT_TIMEOUT_S = 10.0
INSTALL_HINT = "pip install 'sensorcheck[cluster]'"


def executor_for(address: str | None) -> AbstractContextManager[Executor | None]:
    """The cluster's executor for ``--scheduler ADDRESS``, or None (the local process pool) without one."""
    return nullcontext(None) if not address else cluster_executor(address)


@contextmanager
def cluster_executor(address: str, timeout_s: float | None = None) -> Iterator[Executor]:
    """A ``concurrent.futures`` executor on the Dask scheduler at ``address``; closed on exit."""
    try:
        from distributed import Client
    except ImportError:
        raise SensorcheckError(f"--scheduler {address}: Dask distributed is not installed ({INSTALL_HINT})") from None
    wait = CONNECT_TIMEOUT_S if timeout_s is None else timeout_s
    try:
        client = Client(address, timeout=f"{wait}s", set_as_default=False)
    except Exception as exc:  # noqa: BLE001 - any failure to connect is the user's address, named
        raise SensorcheckError(
            f"--scheduler {address}: cannot reach a Dask scheduler there within {wait:g} s ({type(exc).__name__}: {exc})"
        ) from None
    try:
        yield client.get_executor(pure=False)
    finally:
        client.close()


def _guarded(fn: Callable[..., Any], args: tuple[Any, ...], kwargs: dict[str, Any]) -> tuple[bool, Any]:
    """Run on a worker: (True, result) or (False, the message of a sensorcheck error).

    Our errors carry several constructor arguments and do not survive pickling as exceptions;
    their message does, and is raised again on the client.
    """
    try:
        return True, fn(*args, **kwargs)
    except SensorcheckError as exc:
        return False, exc.describe()


def map_ordered(executor: Executor, fn: Callable[..., Any], calls: Sequence[tuple[tuple[Any, ...], dict[str, Any]]]) -> list[Any]:
    """``fn(*args, **kwargs)`` for every call on the executor; results in call order.

    A sensorcheck error on a worker is raised here as a :class:`SensorcheckError` with its message.
    """
    futures = [executor.submit(_guarded, fn, a, k) for a, k in calls]
    out = []
    for fut in futures:
        ok, value = fut.result()
        if not ok:
            raise SensorcheckError(value)
        out.append(value)
    return out
