"""The score route's own small process pool, with a wall-clock limit per request.

``POST /v1/score`` never uses the job workers: it runs in ``HAARLINE_SCORE_WORKERS``
processes of its own (1 by default), also when jobs run on Dask. Each process is a
one-process executor (a *slot*), so a score that runs past ``HAARLINE_SCORE_TIMEOUT``
seconds (20 by default) is stopped by killing exactly its process, and a fresh process
takes the slot's place; nothing abandoned keeps a worker busy. The processes start with
the first score (a service that is never asked to score runs none).

=============================  ==================================================  ======
case                           answer                                              status
=============================  ==================================================  ======
the report is ready in time    the report, computed by the same                    200
                               :func:`haarline.service.jobs.worker.run_request` as a job's
over the time limit            ``score-timeout``; the process is killed; the       504
                               detail says the limit and to submit a job instead
every slot is busy             ``score-busy``, at once (requests never queue       503
                               behind a slow score); ``Retry-After`` is the time
                               until the soonest running score must end
the process died (killed,      ``score-worker-lost``; the slot gets a new process  503
out of memory)
=============================  ==================================================  ======

504 rather than 503 for the time limit: the compute process did not answer in time, and
the same request would run over the limit again, so it carries no ``Retry-After``.
"""

from __future__ import annotations

import asyncio
import multiprocessing
import os
import threading
import time
from concurrent.futures import Future, ProcessPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from typing import Any

from haarline.service.errors import TimedOut, Unavailable
from haarline.service.jobs.backoff import clamp_seconds
from haarline.service.jobs.worker import follow_parent, run_request, warm_up
from haarline.service.settings import Settings

__all__ = ["ScorePool"]

JOB_HINT = "submit the circuit as a job with POST /v1/analyses, which has no time limit"


class _Slot:
    """One score process: a one-process executor whose process may be killed."""

    def __init__(self) -> None:
        self.executor = ProcessPoolExecutor(
            max_workers=1,
            mp_context=multiprocessing.get_context("spawn"),
            initializer=follow_parent,  # the process exits when the server is killed
            initargs=(os.getpid(),),
        )
        # start the process now and learn its pid (it also imports the numerical core)
        self.pid: Future[int] = self.executor.submit(warm_up)
        self.deadline = 0.0

    def known_pid(self) -> int | None:
        """The process id once the process has started, else ``None``."""
        if self.pid.done() and not self.pid.cancelled() and self.pid.exception() is None:
            return self.pid.result()
        return None

    def kill(self) -> None:
        """Kill the process and drop the executor.

        The kill goes through the process's own handle, which signals only a process that
        has not been reaped yet, so a pid the system has already reused is never hit.
        ``kill_workers`` does exactly this from Python 3.14 on; before, the executor's
        process table (``_processes``, unchanged since 3.9) is the only way to it.
        """
        kill_workers = getattr(self.executor, "kill_workers", None)
        if kill_workers is not None:
            kill_workers()
        else:
            for process in list((getattr(self.executor, "_processes", None) or {}).values()):
                process.kill()
        self.executor.shutdown(wait=False, cancel_futures=True)

    def close(self) -> None:
        """Let an idle process exit."""
        self.executor.shutdown(wait=False, cancel_futures=True)


class ScorePool:
    """``HAARLINE_SCORE_WORKERS`` slots; one score per slot, each within the time limit."""

    def __init__(self, settings: Settings):
        self.settings = settings
        self._lock = threading.Lock()
        self._free: list[_Slot] = []
        self._busy: list[_Slot] = []

    @property
    def limit(self) -> float:
        """The wall-clock limit of one score, in seconds."""
        return self.settings.score_timeout

    def start(self) -> None:
        """Start the processes now (else the first score starts them)."""
        with self._lock:
            self._fill()

    def stop(self) -> None:
        """Kill running scores and let idle processes exit."""
        with self._lock:
            busy, free = self._busy, self._free
            self._busy, self._free = [], []
        for slot in busy:
            slot.kill()
        for slot in free:
            slot.close()

    def pids(self) -> list[int]:
        """Process ids of the started score processes."""
        with self._lock:
            slots = self._free + self._busy
        return [pid for pid in (s.known_pid() for s in slots) if pid is not None]

    def busy(self) -> int:
        """Scores running now."""
        with self._lock:
            return len(self._busy)

    async def run(self, kind: str, request: dict[str, Any]) -> Any:
        """Run an admitted request; return what :func:`run_request` returns.

        Raises
        ------
        Unavailable
            Every slot is busy, or the score process died.
        TimedOut
            The score ran past the limit (its process has been killed).
        """
        slot = self._acquire()
        future: Future[Any] | None = None
        try:
            # an idle process that died (killed, out of memory) breaks the executor, and
            # submit raises BrokenProcessPool at once
            future = slot.executor.submit(
                run_request, kind, request, memory_budget=self.settings.memory_budget
            )
            return await asyncio.wait_for(asyncio.wrap_future(future), self.limit)
        except TimeoutError:
            raise TimedOut(
                f"the score did not finish within the limit of {self.limit:g} s "
                f"(HAARLINE_SCORE_TIMEOUT) and was stopped; {JOB_HINT}",
                kind="score-timeout",
                limit=self.limit,
            ) from None
        except BrokenProcessPool:
            raise Unavailable(
                f"the score process died (killed or out of memory); retry, or {JOB_HINT}",
                kind="score-worker-lost",
            ) from None
        finally:
            self._release(slot, healthy=future is not None and _healthy(future))

    def _fill(self) -> None:
        while len(self._free) + len(self._busy) < self.settings.score_workers:
            self._free.append(_Slot())

    def _acquire(self) -> _Slot:
        now = time.monotonic()
        with self._lock:
            self._fill()
            if not self._free:
                soonest = min(s.deadline for s in self._busy)
                wait = clamp_seconds(soonest - now)
                raise Unavailable(
                    f"all {len(self._busy)} score workers are busy "
                    f"(HAARLINE_SCORE_WORKERS); retry in {wait} s, or {JOB_HINT}",
                    kind="score-busy",
                    retry_after=wait,
                )
            slot = self._free.pop()
            slot.deadline = now + self.limit
            self._busy.append(slot)
        return slot

    def _release(self, slot: _Slot, *, healthy: bool) -> None:
        with self._lock:
            if slot not in self._busy:
                healthy = False  # the pool was stopped meanwhile
            else:
                self._busy.remove(slot)
                if healthy:
                    self._free.append(slot)
                else:
                    self._fill()  # a fresh process takes the slot's place
        if not healthy:
            slot.kill()


def _healthy(future: Future[Any]) -> bool:
    """Whether the slot that ran ``future`` may run the next score."""
    if not future.done():
        return False  # still running: over the limit, or the request went away
    if future.cancelled():
        return True  # it never started
    return not isinstance(future.exception(), BrokenProcessPool)
