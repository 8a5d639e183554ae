"""The job workers: processes that the service starts, feeds and watches itself.

Each worker is a ``spawn`` process with a pipe of its own. One watcher thread in the
server does all the talking: it hands queued tasks to idle workers, reads their answers,
and waits with :func:`multiprocessing.connection.wait` on every pipe, on every process's
sentinel (which becomes ready when the process exits, however it exits) and on a wake-up
pipe for new tasks. So the pool always knows which process ran which task:

- a worker that dies (SIGKILL, the out-of-memory killer, a crash in native code) fails
  exactly the task it was running with :class:`WorkerLost`, which carries its pid and exit
  status; it is reaped at once and a fresh process takes its place; the other workers and
  their tasks are untouched;
- futures are resolved by the watcher with no lock held, so a done-callback may submit
  the next task, or stop the pool, without deadlocking.

:class:`concurrent.futures.ProcessPoolExecutor` gives neither: a dead worker marks the
whole executor broken and fails every running future, and from Python 3.13 on it does so
while holding the executor's own lock, so a done-callback that shuts the broken executor
down (as the runner did, to build a new one) blocked the executor's manager thread for
ever: the dead worker was never reaped and its job stayed ``running``.

Workers ignore SIGINT (a Ctrl-C in the terminal reaches the whole process group; the
server stops them itself) and run :func:`haarline.service.jobs.worker.follow_parent`, so
they exit when the server is killed. Importing this module in a new worker imports the
numerical core, so a worker is warm before its first task.
"""

from __future__ import annotations

import collections
import logging
import multiprocessing
import multiprocessing.connection
import multiprocessing.context
import multiprocessing.process
import os
import signal
import threading
import time
import traceback
from collections.abc import Callable
from concurrent.futures import Future
from dataclasses import dataclass
from typing import Any

from haarline.service.errors import PoolStopped, WorkerLost
from haarline.service.jobs.worker import follow_parent

__all__ = ["WorkerPool"]

log = logging.getLogger("haarline.pool")

RESTART_DELAY_MAX = 30.0
"""Longest wait, in seconds, before replacing workers that keep dying before any task
(0.5 s after the first such death, doubling with each one after it)."""

STOP_GRACE = 2.0
"""Seconds a stopping worker gets to exit before it is killed."""


@dataclass
class _Task:
    future: Future[Any]
    func: Callable[..., Any]
    args: tuple[Any, ...]
    started: bool = False  # the future has been moved to running

    def fail(self, exc: BaseException) -> None:
        """Fail the future unless it was cancelled before it started."""
        if self.started or self.future.set_running_or_notify_cancel():
            self.future.set_exception(exc)


class _Worker:
    """One worker process and the server's end of its pipe."""

    def __init__(self, context: multiprocessing.context.SpawnContext, parent: int, number: int):
        ours, theirs = context.Pipe(duplex=True)
        self.process: multiprocessing.process.BaseProcess = context.Process(
            target=_serve, args=(theirs, parent), name=f"haarline-worker-{number}"
        )
        self.process.start()
        theirs.close()  # else the pipe never reports end-of-file when the worker dies
        self.conn: multiprocessing.connection.Connection = ours
        self.task: _Task | None = None
        self.took_task = False  # it was given at least one task
        self.hung_up = False  # its end of the pipe is closed: it is exiting

    @property
    def pid(self) -> int | None:
        return self.process.pid

    def reap(self) -> int | None:
        """Join the exited process, release its handles, return its exit status."""
        self.process.join(timeout=5)
        code = self.process.exitcode
        self.conn.close()
        if code is not None:
            self.process.close()
        return code


class WorkerPool:
    """``size`` worker processes with a watcher thread that reports deaths explicitly.

    Parameters
    ----------
    size : int
        Worker processes; a dead one is replaced, so there are always ``size``.
    name : str
        Name of the watcher thread (in logs and thread dumps).
    """

    def __init__(self, size: int, *, name: str = "haarline-pool"):
        if size < 1:
            raise ValueError(f"a pool needs at least one worker, not {size}")
        self.size = size
        self._context = multiprocessing.get_context("spawn")
        self._parent = os.getpid()
        self._lock = threading.Lock()
        self._pending: collections.deque[_Task] = collections.deque()
        self._workers: list[_Worker] = []
        self._stopping = False
        self._started = 0
        self._early_deaths = 0
        self._restart_at = 0.0
        self._wake_r, wake_w = os.pipe()
        self._wake_w: int | None = wake_w
        os.set_blocking(self._wake_r, False)
        os.set_blocking(wake_w, False)
        try:
            for _ in range(size):  # start every worker now: the first task does not wait
                self._workers.append(self._spawn())
        except BaseException:
            self._shut_down()
            raise
        self._thread = threading.Thread(target=self._watch, name=name, daemon=True)
        self._thread.start()

    # --- the caller's side ------------------------------------------------------------------

    def submit(self, func: Callable[..., Any], *args: Any) -> Future[Any]:
        """Run ``func(*args)`` in a worker; ``func`` and ``args`` must be picklable.

        The future gets the return value, the exception ``func`` raised (with the worker's
        traceback as a note), :class:`WorkerLost` if the worker died while running it, or
        :class:`PoolStopped` if the pool stopped first.
        """
        task = _Task(Future(), func, args)
        with self._lock:
            if self._stopping:
                raise PoolStopped("the worker pool has been stopped")
            self._pending.append(task)
        self._wake()
        return task.future

    def pids(self) -> list[int]:
        """Process ids of the live workers."""
        with self._lock:
            return [w.pid for w in self._workers if w.pid is not None]

    def alive(self) -> bool:
        """Whether the watcher runs (tasks are handed out and deaths noticed)."""
        return self._thread.is_alive()

    def stop(self) -> None:
        """Stop the pool: pending tasks and running ones fail with :class:`PoolStopped`.

        Idle workers are asked to exit; busy ones (and ones still starting) are
        terminated: a job cut off this way stays ``running`` in the store and is queued
        again when the service starts. Safe to call more than once, and from a
        done-callback.
        """
        with self._lock:
            if self._stopping:
                return
            self._stopping = True
        self._wake()
        if threading.current_thread() is not self._thread:
            self._thread.join(timeout=10)

    # --- the watcher ------------------------------------------------------------------------

    def _wake(self) -> None:
        with self._lock:  # never write to a closed (perhaps reused) descriptor
            if self._wake_w is None:
                return
            try:
                os.write(self._wake_w, b"\0")
            except BlockingIOError:  # the pipe is full: the watcher is already due to wake
                pass

    def _spawn(self) -> _Worker:
        self._started += 1
        return _Worker(self._context, self._parent, self._started)

    def _watch(self) -> None:
        try:
            while not self._stopping:
                self._hand_out()
                busy = [w.conn for w in self._workers if w.task is not None and not w.hung_up]
                sentinels = [w.process.sentinel for w in self._workers]
                timeout = None
                if len(self._workers) < self.size:
                    timeout = max(0.0, self._restart_at - time.monotonic())
                ready = multiprocessing.connection.wait(
                    [self._wake_r, *busy, *sentinels], timeout=timeout
                )
                if self._wake_r in ready:
                    self._drain_wake()
                for worker in list(self._workers):
                    if worker.task is not None and not worker.hung_up and worker.conn in ready:
                        self._answer(worker)
                for worker in list(self._workers):
                    if worker.process.sentinel in ready:
                        self._lost(worker)
                self._refill()
        except Exception:  # a bug here must not leave futures hanging silently
            log.exception("worker pool watcher failed")
        finally:
            self._shut_down()

    def _drain_wake(self) -> None:
        try:
            while os.read(self._wake_r, 4096):
                pass
        except BlockingIOError:
            pass

    def _hand_out(self) -> None:
        """Give pending tasks to idle workers."""
        for worker in self._workers:
            if worker.task is not None or worker.hung_up:
                continue
            with self._lock:
                if not self._pending:
                    return
                task = self._pending.popleft()
            if not task.started:
                if not task.future.set_running_or_notify_cancel():
                    continue  # cancelled while it waited
                task.started = True
            try:
                worker.conn.send((task.func, task.args))  # pickles before it writes
            except (OSError, EOFError):
                worker.hung_up = True  # it just died: its sentinel tells; another worker
                with self._lock:  # takes the task
                    self._pending.appendleft(task)
                continue
            except Exception as exc:  # the task cannot be pickled
                task.future.set_exception(exc)
                continue
            worker.task, worker.took_task = task, True

    def _answer(self, worker: _Worker) -> None:
        """Read a busy worker's answer and resolve its future."""
        task = worker.task
        assert task is not None
        try:
            ok, value = worker.conn.recv()
        except (EOFError, OSError):
            worker.hung_up = True  # it is exiting; its sentinel tells the rest
            return
        except Exception as exc:  # the answer arrived whole but cannot be unpickled
            ok, value = False, RuntimeError(f"the worker's answer could not be read: {exc!r}")
        worker.task = None
        if ok:
            task.future.set_result(value)
        else:
            task.future.set_exception(value)

    def _lost(self, worker: _Worker) -> None:
        """A worker exited: fail its task (unless it answered first) and reap it."""
        if worker.task is not None and not worker.hung_up and worker.conn.poll(0):
            self._answer(worker)  # it answered just before it exited
        task = worker.task
        pid, code = worker.pid, worker.reap()
        with self._lock:
            self._workers.remove(worker)
        if worker.took_task:
            self._early_deaths = 0
        else:  # it died before its first task (a broken start-up?): back off
            self._early_deaths += 1
            delay = min(RESTART_DELAY_MAX, 0.5 * 2 ** (self._early_deaths - 1))
            self._restart_at = time.monotonic() + delay
        log.warning("worker process %s exited with status %s", pid, code)
        if task is not None:
            task.fail(WorkerLost(pid, code))

    def _refill(self) -> None:
        while len(self._workers) < self.size and time.monotonic() >= self._restart_at:
            if self._stopping:
                return
            worker = self._spawn()
            with self._lock:
                self._workers.append(worker)

    def _shut_down(self) -> None:
        """Fail what is left, end every worker, close the wake-up pipe."""
        with self._lock:
            self._stopping = True
            pending = list(self._pending)
            self._pending.clear()
            workers, self._workers = self._workers, []
        for worker in workers:
            if worker.task is None and worker.took_task and not worker.hung_up:
                try:
                    worker.conn.send(None)  # idle, waiting for work: exit now
                    continue
                except (OSError, EOFError):
                    pass
            worker.process.terminate()  # busy, or perhaps still starting up
        deadline = time.monotonic() + STOP_GRACE
        for worker in workers:
            worker.process.join(timeout=max(0.0, deadline - time.monotonic()))
            if worker.process.exitcode is None:
                worker.process.kill()
            worker.reap()
        with self._lock:
            os.close(self._wake_r)
            if self._wake_w is not None:
                os.close(self._wake_w)
            self._wake_w = None
        for task in pending + [w.task for w in workers if w.task is not None]:
            task.fail(PoolStopped("the worker pool was stopped"))


def _serve(conn: multiprocessing.connection.Connection, parent: int) -> None:
    """A worker's main loop: run each task received on ``conn``, send back the outcome."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    follow_parent(parent)  # exit at once if the server is killed
    while True:
        try:
            message = conn.recv()
        except EOFError:
            return
        if message is None:
            return
        func, args = message
        try:
            answer: tuple[bool, Any] = (True, func(*args))
        except Exception as exc:  # handed to the caller
            exc.add_note(f"in worker process {os.getpid()}:\n{traceback.format_exc()}")
            answer = (False, exc)
        try:
            conn.send(answer)
        except Exception as exc:  # the value or exception cannot be pickled
            conn.send((False, RuntimeError(f"the answer could not be sent back: {exc!r}")))
