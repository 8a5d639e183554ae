"""Sampled blocks as Dask tasks: the connection, the shared arguments and the block futures.

With a scheduler address in the context (``Context(scheduler="tcp://HOST:PORT")``),
:func:`haarline.engine.batching.block_map` hands its blocks to :func:`submit` instead of a
local process pool:

- :func:`connect` opens one ``distributed.Client`` per address and process, importing
  ``distributed`` only then (the optional ``dask`` extra), and checks the cluster first:
  something listens at the address, the scheduler answers within :data:`CONNECT_SECONDS`,
  it has a worker within :data:`WORKER_WAIT_SECONDS`, and every worker runs the same
  haarline and numpy as this process (the reports are identical only then).
- The arguments that every block shares (the program, the options, the cost: the same
  object in every task) are scattered once with ``broadcast=True``, so they travel to each
  worker once; a block's task carries only its own small arguments (its first sample and
  its count), and only its per-sample values come back (fidelities, purities, costs and
  gradients, never states).
- A worker that dies mid-run costs only the blocks it held: the scheduler runs them again
  on the others (Dask's own recovery), and since a block's numbers depend only on the
  program, the seed, the stream and the block's samples, the report does not change.

:func:`recording` collects what each call sent and received (the benchmark's bytes and
seconds per block).

Examples
--------
>>> check_address("tcp://10.0.0.5:8786")
'tcp://10.0.0.5:8786'
>>> check_address("10.0.0.5")
Traceback (most recent call last):
...
haarline.errors.OptionError: scheduler: expected a Dask scheduler address tcp://HOST:PORT \
(or tls://HOST:PORT), got '10.0.0.5'
"""

from __future__ import annotations

import pickle
import re
import socket
import threading
import time
import uuid
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from typing import Any

from haarline.errors import ClusterError, OptionError, Problem

__all__ = [
    "CONNECT_SECONDS",
    "WORKER_WAIT_SECONDS",
    "Dispatch",
    "Submitted",
    "check_address",
    "connect",
    "disconnect",
    "recording",
    "submit",
    "threads",
]

CONNECT_SECONDS = 10.0
"""How long the scheduler may take to answer a new connection."""

WORKER_WAIT_SECONDS = 30.0
"""How long a scheduler without workers is given to get one before the call fails."""

_ADDRESS = re.compile(r"(tcp|tls)://(\[[0-9A-Fa-f:.]+\]|[A-Za-z0-9._-]+):([0-9]{1,5})")

_SMALL = (bool, int, float, complex, str, bytes, type(None), type)
"""Arguments sent with every task rather than scattered: a few bytes each."""


def check_address(value: object, path: str = "scheduler") -> str:
    """``value`` if it is a scheduler address ``tcp://HOST:PORT`` or ``tls://HOST:PORT``.

    Raises
    ------
    OptionError
        Naming ``path``, the value and the accepted form.
    """
    m = _ADDRESS.fullmatch(value) if isinstance(value, str) else None
    if m is None:
        raise OptionError(
            [
                Problem(
                    path,
                    "expected a Dask scheduler address tcp://HOST:PORT (or tls://HOST:PORT), "
                    f"got {value!r}",
                )
            ]
        )
    port = int(m.group(3))
    if not 1 <= port <= 65535:
        raise OptionError([Problem(path, f"port {port} of {value!r} is not in 1..65535")])
    return str(value)


def _fail(message: str) -> ClusterError:
    return ClusterError([Problem("scheduler", message)])


_clients: dict[str, Any] = {}
_clients_lock = threading.Lock()


def _reachable(address: str) -> None:
    """Fail at once, and plainly, when nothing listens at the address."""
    m = _ADDRESS.fullmatch(address)
    assert m is not None  # checked by the context
    host, port = m.group(2).strip("[]"), int(m.group(3))
    try:
        with socket.create_connection((host, port), timeout=CONNECT_SECONDS):
            pass
    except OSError as exc:
        reason = exc.strerror or type(exc).__name__
        raise _fail(
            f"no Dask scheduler at {address} ({reason}); start one with 'dask scheduler' "
            "or check the address"
        ) from None


def _versions(client: Any, address: str) -> None:
    """Every worker must run this haarline and this numpy: else the numbers could differ."""
    from importlib.metadata import PackageNotFoundError, version

    wrong = []
    for package in ("haarline", "numpy"):
        try:
            ours = version(package)
        except PackageNotFoundError:  # a source tree: nothing to compare with
            continue
        answers = client.run(version, package, on_error="return")
        for worker, theirs in sorted(answers.items()):
            if isinstance(theirs, BaseException):
                wrong.append(f"{worker} has no {package} (this process has {ours})")
            elif theirs != ours:
                wrong.append(f"{worker} has {package} {theirs} (this process has {ours})")
    if wrong:
        raise _fail(
            f"the workers of {address} must run the same haarline and numpy as this process: "
            + "; ".join(wrong)
        )


def connect(address: str) -> Any:
    """The ``distributed.Client`` of ``address`` (one per process, opened on first use).

    Raises
    ------
    ClusterError
        Dask is not installed, nothing answers at the address, the scheduler has no worker
        within :data:`WORKER_WAIT_SECONDS`, or a worker runs another haarline or numpy.
    """
    with _clients_lock:
        client = _clients.get(address)
        if client is not None and client.status == "running":
            return client
        try:
            from distributed import Client
        except ImportError:
            raise _fail(
                "Dask is not installed; install the extra: pip install 'haarline[dask]'"
            ) from None
        _reachable(address)
        try:
            client = Client(address, timeout=CONNECT_SECONDS, set_as_default=False)
        except (OSError, TimeoutError) as exc:
            raise _fail(
                f"the Dask scheduler at {address} did not answer within {CONNECT_SECONDS:g} s "
                f"({exc})"
            ) from None
        try:
            try:
                client.wait_for_workers(1, timeout=WORKER_WAIT_SECONDS)
            except TimeoutError:
                raise _fail(
                    f"the Dask scheduler at {address} has no workers (waited "
                    f"{WORKER_WAIT_SECONDS:g} s); start them with 'dask worker {address}'"
                ) from None
            _versions(client, address)
        except BaseException:
            client.close()
            raise
        _clients[address] = client
        return client


def disconnect() -> None:
    """Close every client this process opened (the CLI does, before it exits)."""
    with _clients_lock:
        clients = list(_clients.values())
        _clients.clear()
    for client in clients:
        client.close()


def threads(address: str) -> int:
    """Worker threads of the cluster at ``address`` (tasks it runs at once)."""
    return int(sum(connect(address).nthreads().values()))


@dataclass(frozen=True, kw_only=True)
class Dispatch:
    """What one call sent to the cluster and got back (collected by :func:`recording`).

    Byte counts are pickled sizes; ``shared_bytes`` went to every worker once.
    """

    stage: str
    workers: int
    shared_bytes: int
    sent_bytes: tuple[int, ...]
    returned_bytes: tuple[int, ...]
    compute_seconds: tuple[float, ...]
    wall_seconds: float


_recorders: list[list[Dispatch]] = []
_recorders_lock = threading.Lock()


@contextmanager
def recording() -> Iterator[list[Dispatch]]:
    """Collect a :class:`Dispatch` for each call sent to a Dask cluster in this process.

    Examples
    --------
    >>> with recording() as sent:
    ...     pass
    >>> sent
    []
    """
    sent: list[Dispatch] = []
    with _recorders_lock:
        _recorders.append(sent)
    try:
        yield sent
    finally:
        with _recorders_lock:
            _recorders.remove(sent)


def _timed(func: Callable[..., Any], *args: Any) -> tuple[float, Any]:
    """Run one block on a worker; its compute time travels back with its values."""
    t = time.perf_counter()
    value = func(*args)
    return time.perf_counter() - t, value


def _size(value: Any) -> int:
    return len(pickle.dumps(value, protocol=5))


def _shared(tasks: Sequence[tuple[Any, ...]]) -> list[int]:
    """Positions whose argument is the same object in every task and worth scattering."""
    first = tasks[0]
    return [
        i
        for i, arg in enumerate(first)
        if not isinstance(arg, _SMALL)
        and not callable(arg)
        and all(len(t) == len(first) and t[i] is arg for t in tasks)
    ]


@dataclass(kw_only=True)
class Submitted:
    """The futures of one call's blocks on the cluster."""

    address: str
    stage: str
    client: Any
    futures: list[Any]
    shared: list[Any]
    workers: int
    started: float
    shared_bytes: int = 0
    sent_bytes: tuple[int, ...] = ()
    seconds: dict[int, float] = field(default_factory=dict)
    returned: dict[int, int] = field(default_factory=dict)

    def result(self, i: int) -> Any:
        """The values of block ``i`` (finished); cluster failures become ClusterError."""
        from concurrent.futures import CancelledError

        from distributed import KilledWorker

        try:
            seconds, value = self.futures[i].result()
        except KilledWorker as exc:
            raise _fail(
                f"a block of {self.stage or 'the work'} was running on Dask workers that died "
                f"each time ({exc}); give the workers more memory or lower the memory budget"
            ) from None
        except CancelledError:
            raise _fail(
                f"lost the Dask scheduler at {self.address} while {self.stage or 'the work'} "
                "was running"
            ) from None
        self.seconds[i] = seconds
        if self.sent_bytes:
            self.returned[i] = _size(value)
        return value

    def cancel(self) -> None:
        """Cancel the blocks that have not finished (cancel on request, an error)."""
        pending = [f for f in self.futures if not f.done()]
        if pending:
            self.client.cancel(pending)

    def close(self) -> None:
        """Release the shared arguments on the workers; record the call if asked."""
        self.shared.clear()
        with _recorders_lock:
            recorders = list(_recorders)
        if not recorders or len(self.seconds) < len(self.futures):
            return
        record = Dispatch(
            stage=self.stage,
            workers=self.workers,
            shared_bytes=self.shared_bytes,
            sent_bytes=self.sent_bytes,
            returned_bytes=tuple(self.returned[i] for i in range(len(self.futures))),
            compute_seconds=tuple(self.seconds[i] for i in range(len(self.futures))),
            wall_seconds=time.perf_counter() - self.started,
        )
        for sent in recorders:
            sent.append(record)


def submit(
    address: str, func: Callable[..., Any], tasks: Sequence[tuple[Any, ...]], stage: str = ""
) -> Submitted:
    """Send ``func(*task)`` for every task as one Dask task each.

    ``func`` must be a module-level function of haarline (the workers import it by name);
    arguments shared by every task are scattered to every worker once. The task keys start
    with ``haarline-`` and the stage, so the scheduler's dashboard names them.
    """
    client = connect(address)
    started = time.perf_counter()
    positions = _shared(tasks) if len(tasks) > 1 else []
    payload = [tasks[0][i] for i in positions]
    shared = client.scatter(payload, broadcast=True, hash=False) if payload else []
    record = bool(_recorders)
    label = re.sub(r"[^a-z0-9]+", "_", stage.lower()).strip("_") or func.__name__.strip("_")
    prefix = f"haarline-{label}-{uuid.uuid4().hex}"
    futures = []
    sent = []
    for k, task in enumerate(tasks):
        args = list(task)
        for i, future in zip(positions, shared, strict=True):
            args[i] = future
        if record:
            sent.append(_size([func, *(a for i, a in enumerate(task) if i not in positions)]))
        futures.append(client.submit(_timed, func, *args, key=f"{prefix}-{k}", pure=False))
    return Submitted(
        address=address,
        stage=stage,
        client=client,
        futures=futures,
        shared=shared,
        workers=len(client.nthreads()),
        started=started,
        shared_bytes=_size(payload) if record else 0,
        sent_bytes=tuple(sent),
    )
