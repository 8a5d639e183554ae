"""Sampled blocks as Dask tasks: the connection, the shared arguments and the block futures.

With a scheduler address in the context (``Context(scheduler="tcp://HOST:PORT")``),
:func:`haarline.engine.batching.block_map` hands its blocks to :class:`Blocks` instead of a
local process pool:

- :func:`connect` opens one ``distributed.Client`` per address and process, importing
  ``distributed`` only then (the optional ``dask`` extra), and checks the cluster first:
  something listens at the address, the scheduler answers within :data:`CONNECT_SECONDS`,
  it has a worker within :data:`WORKER_WAIT_SECONDS`, and every worker runs the same
  haarline and numpy as this process (the reports are identical only then).
- The arguments that every block shares (the program, the options, the cost: the same
  object in every task) are scattered to every worker once; a block's task carries only
  its own small arguments (its first sample and its count), and only its per-sample
  values come back (fidelities, purities, costs and gradients, never states).
- A worker that dies mid-run costs only the blocks it held: the scheduler runs them again
  on the others (Dask's own recovery; a block whose shared arguments were lost with the
  worker is sent again with a fresh copy), and since a block's numbers depend only on
  the program, the seed, the stream and the block's samples, the report does not change.

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

import logging
import pickle
import re
import socket
import threading
import time
import uuid
from collections.abc import Callable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Any

from haarline.errors import ClusterError, OptionError, Problem

__all__ = [
    "CONNECT_SECONDS",
    "WORKER_WAIT_SECONDS",
    "AGAIN",
    "RESENDS",
    "Blocks",
    "Dispatch",
    "check_address",
    "connect",
    "disconnect",
    "recording",
    "threads",
]

log = logging.getLogger("haarline.cluster")

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
    m = _ADDRESS.fullmatch(check_address(address))
    host, port = (m.group(2).strip("[]"), int(m.group(3))) if m else ("", 0)
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
        client = _clients.pop(address, None)
        if client is not None:
            if client.status == "running":
                _clients[address] = client
                return client
            client.close()  # lost its scheduler for good: open a new one
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


RESENDS = 3
"""Times one block is sent again after the copies of its shared arguments were lost."""

AGAIN = object()
"""What :meth:`Blocks.result` returns for a block it had to send again."""


def _timed(func: Callable[..., Any], positions: tuple[int, ...], *args: Any) -> tuple[float, Any]:
    """Run one block on a worker; its compute time travels back with its values.

    ``args`` are the shared arguments (one per position) and then the block's own;
    ``func`` gets them in their original order.
    """
    shared, own = args[: len(positions)], list(args[len(positions) :])
    for i, arg in zip(positions, shared, strict=True):
        own.insert(i, arg)
    t = time.perf_counter()
    value = func(*own)
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


class Blocks:
    """One call's blocks on the cluster: ``func(*task)`` as one Dask task per task.

    ``func`` must be a module-level function of haarline (the workers import it by
    name). The arguments shared by every task are scattered to every worker once
    (``broadcast=True``, so that any worker can take any block); each task carries only
    its own arguments. Dask's memory manager may later drop extra copies of the shared
    arguments, so when a worker dies with their last copy the blocks that needed them are
    cancelled by the scheduler: they are sent again with a fresh copy (at most
    :data:`RESENDS` times each). Task keys start with ``haarline-`` and the stage, so the
    scheduler's dashboard names them.
    """

    def __init__(
        self, address: str, func: Callable[..., Any], tasks: Sequence[tuple[Any, ...]], stage: str
    ):
        import queue

        self.address, self.func, self.stage = address, func, stage
        self.client = connect(address)
        self.started = time.perf_counter()
        self.positions = tuple(_shared(tasks)) if len(tasks) > 1 else ()
        self.payload = [tasks[0][i] for i in self.positions]
        self.own = [[a for i, a in enumerate(t) if i not in self.positions] for t in tasks]
        label = re.sub(r"[^a-z0-9]+", "_", stage.lower()).strip("_") or func.__name__.strip("_")
        self.prefix = f"haarline-{label}-{uuid.uuid4().hex}"
        self.finished: queue.SimpleQueue[int] = queue.SimpleQueue()
        self.generation = 0
        self.sent_in = [0] * len(tasks)
        self.resent = [0] * len(tasks)
        self.seconds: dict[int, float] = {}
        self.returned: dict[int, int] = {}
        self.record = bool(_recorders)
        self.workers = len(self.client.nthreads())
        self.shared = self._scatter()
        self.futures = [self._send(k) for k in range(len(tasks))]

    def _scatter(self) -> list[Any]:
        if not self.payload:
            return []
        return list(self.client.scatter(self.payload, broadcast=True, hash=False))

    def _send(self, k: int) -> Any:
        again = f"-again{self.resent[k]}" if self.resent[k] else ""
        future = self.client.submit(
            _timed,
            self.func,
            self.positions,
            *self.shared,
            *self.own[k],
            key=f"{self.prefix}-{k}{again}",
            pure=False,
        )
        self.sent_in[k] = self.generation
        future.add_done_callback(lambda _, k=k: self.finished.put(k))
        return future

    def next_done(self, timeout: float) -> int:
        """The next block whose future finished; ``queue.Empty`` after ``timeout`` s."""
        return self.finished.get(timeout=timeout)

    def result(self, k: int) -> Any:
        """The values of finished block ``k``, or :data:`AGAIN` if it had to be resent.

        Raises
        ------
        ClusterError
            A block kept killing its workers, or the scheduler is gone.
        """
        from concurrent.futures import CancelledError

        from distributed import KilledWorker

        what = self.stage or "the work"
        try:
            seconds, value = self.futures[k].result()
        except KilledWorker as exc:
            raise _fail(
                f"a block of {what} was running on Dask workers that died each time ({exc}); "
                "give the workers more memory or lower the memory budget"
            ) from None
        except CancelledError:
            if self.resent[k] >= RESENDS or self.client.status != "running":
                raise _fail(
                    f"lost the Dask scheduler at {self.address} while {what} was running"
                ) from None
            try:
                if self.sent_in[k] == self.generation:  # one fresh copy for all lost blocks
                    self.generation += 1
                    self.shared = self._scatter()
            except (OSError, TimeoutError, CancelledError):
                raise _fail(
                    f"lost the Dask scheduler at {self.address} while {what} was running"
                ) from None
            self.resent[k] += 1
            log.warning(
                "block %d of %s sent again: the copies of its shared arguments were lost",
                k,
                what,
            )
            self.futures[k] = self._send(k)
            return AGAIN
        self.seconds[k] = seconds
        if self.record:
            self.returned[k] = _size(value)
        return value

    def cancel(self) -> None:
        """Cancel the blocks that have not finished (cancel on request, an error)."""
        pending = [f for f in self.futures if not f.done()]
        if pending:
            self.client.cancel(pending)

    def close(self) -> None:
        """Release the shared arguments on the workers; record the call if asked."""
        self.shared = []
        with _recorders_lock:
            recorders = list(_recorders)
        n = len(self.futures)
        if not recorders or len(self.seconds) < n:
            return
        record = Dispatch(
            stage=self.stage,
            workers=self.workers,
            shared_bytes=_size(self.payload),
            sent_bytes=tuple(_size([self.func, self.positions, *own]) for own in self.own),
            returned_bytes=tuple(self.returned[i] for i in range(n)),
            compute_seconds=tuple(self.seconds[i] for i in range(n)),
            wall_seconds=time.perf_counter() - self.started,
        )
        for sent in recorders:
            sent.append(record)
