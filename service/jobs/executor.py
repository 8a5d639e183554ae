"""Runs queued jobs off the event loop: a local process pool, or a Dask cluster.

A dispatcher thread moves queued jobs to ``running`` as workers free up and submits
:func:`haarline.service.jobs.worker.execute_job` for each. With ``HAARLINE_DASK_SCHEDULER``
set, ``HAARLINE_DASK_UNIT`` chooses what a Dask task is: ``job``, each job runs as one task
on the cluster (whose workers share the data directory), or ``block``, each job runs in
the local pool and sends the sampled blocks of its analysis to the cluster
(:mod:`haarline.engine.cluster`), so one large analysis uses every worker. Local workers are a
:class:`haarline.service.jobs.pool.WorkerPool`, which watches its processes itself: a
worker that dies (killed, out of memory) fails exactly its own job's future with
:class:`~haarline.service.jobs.pool.WorkerLost` and is replaced; the job is queued again
once, then failed with the reason, and the service keeps serving. A job interrupted
because the store could not be written (locked, full disk) is queued again; an outcome
the store refuses to record is written on a later round. On start-up, jobs that were
running when the previous process died, or when the service stopped, are queued again
(:meth:`Store.requeue_interrupted`). The same thread runs retention
(:mod:`haarline.service.jobs.retention`) when ``HAARLINE_RETENTION_DAYS`` is set.

The synchronous score route never uses these workers: the runner also owns the score
route's own small pool (:class:`haarline.service.jobs.scoring.ScorePool`), whose processes
start with the first score and stop with the runner.
"""

from __future__ import annotations

import logging
import threading
from concurrent.futures import Future
from typing import Any

from haarline.service.errors import PoolStopped, StoreUnavailable, WorkerLost
from haarline.service.jobs.pool import WorkerPool
from haarline.service.jobs.retention import Retention
from haarline.service.jobs.scoring import ScorePool
from haarline.service.jobs.states import JobState
from haarline.service.jobs.store import Store
from haarline.service.jobs.worker import execute_job
from haarline.service.settings import Settings

__all__ = ["MAX_ATTEMPTS", "Runner"]

log = logging.getLogger("haarline.executor")

MAX_ATTEMPTS = 2
"""Runs of one job before a dying worker makes it fail."""


class Runner:
    """Owns the compute pool and the dispatcher thread."""

    def __init__(self, settings: Settings, store: Store):
        self.settings = settings
        self.store = store
        self._lock = threading.Lock()
        self._wake = threading.Event()
        self._stop = threading.Event()
        self._inflight: dict[str, Future[Any]] = {}
        self._unrecorded: dict[str, tuple[JobState, str]] = {}
        self._pool: WorkerPool | None = None
        self._dask: Any = None
        self._thread: threading.Thread | None = None
        self.scores = ScorePool(settings)
        """The score route's own processes (never the job workers)."""
        self.retention = Retention(store, settings.retention_days)
        """Deletes old finished jobs, from the dispatcher thread (HAARLINE_RETENTION_DAYS)."""

    # --- life cycle -------------------------------------------------------------------------

    def start(self) -> None:
        """Start the pool (or connect to Dask), requeue interrupted jobs, start dispatching."""
        self._stop.clear()  # a lifespan may start the same app again after a stop
        if self.settings.dask_scheduler and self.settings.dask_unit == "job":
            from distributed import Client  # optional extra: pip install 'haarline[dask]'

            self._dask = Client(self.settings.dask_scheduler, set_as_default=False)
        else:
            self._pool = WorkerPool(self.settings.workers, name="haarline-job-workers")
        self.store.requeue_interrupted()
        self._thread = threading.Thread(target=self._loop, name="haarline-dispatch", daemon=True)
        self._thread.start()
        self._wake.set()

    def stop(self) -> None:
        """Stop dispatching and the workers (running jobs are requeued next start)."""
        self._stop.set()
        self._wake.set()
        if self._thread is not None:
            self._thread.join(timeout=5)
        if self._pool is not None:
            self._pool.stop()
            self._pool = None
        if self._dask is not None:
            self._dask.close()
        self.scores.stop()

    def alive(self) -> bool:
        """Whether the dispatcher (and the workers' watcher) runs (for ``/readyz``)."""
        running = self._thread is not None and self._thread.is_alive()
        return running and (self._pool is None or self._pool.alive())

    def notify(self) -> None:
        """Wake the dispatcher (a job was queued)."""
        self._wake.set()

    @property
    def capacity(self) -> int:
        """Jobs that may run at once."""
        return self.settings.workers

    # --- dispatching ------------------------------------------------------------------------

    def _loop(self) -> None:
        while not self._stop.is_set():
            self._wake.wait(timeout=1.0)
            self._wake.clear()
            try:
                self._dispatch()
                self.retention.maybe_sweep()
            except PoolStopped:  # stop() is under way; a claimed job is requeued next start
                return
            except StoreUnavailable as exc:
                log.warning("job store unavailable, retrying: %s", exc)
            except Exception:  # keep dispatching whatever happens to one job
                log.exception("dispatcher error")

    def _dispatch(self) -> None:
        self._record_pending()
        with self._lock:
            free = self.capacity - len(self._inflight)
        if free <= 0:
            return
        for job_id in self.store.queued(free):
            job = self.store.claim(job_id)
            if job is None:
                continue
            future = self._submit(job_id)
            with self._lock:
                self._inflight[job_id] = future
            future.add_done_callback(self._callback(job_id, job["attempts"] + 1))

    def _callback(self, job_id: str, attempts: int) -> Any:
        def done(future: Future[Any]) -> None:
            self._done(job_id, attempts, future)

        return done

    def _submit(self, job_id: str) -> Future[Any]:
        args: tuple[Any, ...] = (str(self.store.path), job_id, self.settings.memory_budget)
        if self.settings.dask_unit == "block":
            args = (*args, self.settings.dask_scheduler)
        if self._dask is not None:
            return _DaskFuture(self._dask.submit(execute_job, *args, pure=False))
        pool = self._pool
        if pool is None:
            raise PoolStopped("the runner is stopped")
        return pool.submit(execute_job, *args)

    def _done(self, job_id: str, attempts: int, future: Future[Any]) -> None:
        with self._lock:
            self._inflight.pop(job_id, None)
        try:
            exc = future.exception()
        except Exception as err:  # cancelled future
            exc = err
        if isinstance(exc, PoolStopped):
            # the service is stopping: the job stays running and is queued again at the
            # next start (Store.requeue_interrupted), like after a crash
            return
        if exc is not None:
            again = False
            if isinstance(exc, WorkerLost):
                log.warning("job %s lost its worker: %s", job_id, exc)
                reason = "the worker process died (killed or out of memory)"
                again = attempts < MAX_ATTEMPTS
            elif isinstance(exc, StoreUnavailable):
                # the store, not the job, failed (locked, full disk): run it again later
                reason, again = f"the job store was unavailable ({exc})", True
                log.warning("job %s interrupted: %s", job_id, reason)
            else:
                reason = f"internal error: {type(exc).__name__}: {exc}"
                log.error("job %s failed: %s", job_id, reason)
            try:
                if again:
                    self.store.mark(job_id, JobState.QUEUED, error=f"{reason}; retrying")
                else:
                    self.store.mark(job_id, JobState.FAILED, error=reason)
            except StoreUnavailable:
                log.warning("could not record the outcome of job %s; will retry", job_id)
                with self._lock:
                    self._unrecorded[job_id] = (
                        (JobState.QUEUED, f"{reason}; retrying")
                        if again
                        else (JobState.FAILED, reason)
                    )
        self._wake.set()

    def _record_pending(self) -> None:
        """Write outcomes that the store refused earlier (else the job looks running)."""
        with self._lock:
            pending = dict(self._unrecorded)
        for job_id, (state, reason) in pending.items():
            self.store.mark(job_id, state, error=reason)  # StoreUnavailable: next round
            with self._lock:
                self._unrecorded.pop(job_id, None)


class _DaskFuture(Future[Any]):
    """Adapts a ``distributed.Future`` to :class:`concurrent.futures.Future`."""

    def __init__(self, inner: Any):
        super().__init__()
        self._inner = inner
        inner.add_done_callback(self._copy)

    def _copy(self, inner: Any) -> None:
        try:
            self.set_result(inner.result())
        except BaseException as exc:  # handed to whoever waits on this future
            self.set_exception(exc)
