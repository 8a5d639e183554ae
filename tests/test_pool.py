"""The job workers' pool notices a dead worker itself and blames only that worker's task.

The tasks are standard-library functions, so the spawned workers need nothing from the
tests: ``time.sleep`` keeps a worker busy, ``os.getpid`` names the worker that ran a task,
``math.sqrt(-1)`` raises in the worker.
"""

import math
import os
import pickle
import signal
import threading
import time

import pytest
from haarline.service.errors import PoolStopped, WorkerLost
from haarline.service.jobs.pool import WorkerPool

WAIT = 60  # seconds; a worker needs a second or two to start and import the core


@pytest.fixture
def pool():
    pools: list[WorkerPool] = []

    def make(size=1):
        pools.append(WorkerPool(size, name="test-pool"))
        return pools[-1]

    yield make
    for p in pools:
        p.stop()


def wait_until(condition):
    deadline = time.time() + WAIT
    while not condition():
        assert time.time() < deadline, "timed out"
        time.sleep(0.05)


def handed_out(task):
    """Wait until a worker has the task (its future runs just before it is sent)."""
    wait_until(task.running)
    time.sleep(0.2)


def test_results_and_exceptions_come_back(pool):
    p = pool()
    assert p.submit(pow, 2, 10).result(WAIT) == 1024
    with pytest.raises(ValueError, match="math domain error") as caught:
        p.submit(math.sqrt, -1).result(WAIT)
    assert any("in worker process" in note for note in caught.value.__notes__)
    assert p.submit(os.getpid).result(WAIT) in p.pids()  # still the same, live worker


def test_a_killed_worker_fails_its_task_and_is_replaced(pool):
    p = pool()
    first = p.submit(os.getpid).result(WAIT)
    task = p.submit(time.sleep, 60)
    handed_out(task)
    os.kill(first, signal.SIGKILL)
    with pytest.raises(WorkerLost) as lost:
        task.result(WAIT)
    assert (lost.value.pid, lost.value.exitcode) == (first, -signal.SIGKILL)
    assert "signal 9" in str(lost.value)
    second = p.submit(os.getpid).result(WAIT)  # a fresh process took its place
    assert second != first and p.pids() == [second]
    assert p.alive()


def test_only_the_dead_workers_task_fails(pool):
    p = pool(2)
    pids = {p.submit(os.getpid).result(WAIT) for _ in range(6)}
    assert len(p.pids()) == 2 and pids <= set(p.pids())
    short = p.submit(time.sleep, 1)
    doomed = p.submit(time.sleep, 60)
    assert short.result(WAIT) is None
    # one worker is idle again and takes the next task; the other runs the doomed one
    idle = p.submit(os.getpid).result(WAIT)
    (victim,) = [pid for pid in p.pids() if pid != idle]
    os.kill(victim, signal.SIGKILL)
    with pytest.raises(WorkerLost):
        doomed.result(WAIT)
    assert idle in p.pids() and victim not in p.pids()
    assert short.result() is None and p.submit(os.getpid).result(WAIT) == idle
    wait_until(lambda: len(p.pids()) == 2)  # the dead one is replaced


def test_a_done_callback_may_submit_and_stop_without_deadlock(pool):
    """What deadlocked the standard executor on Python 3.13: calling back into the pool
    from the callback of a future that a worker's death failed."""
    p = pool()
    first = p.submit(os.getpid).result(WAIT)
    follow_up = []
    called = threading.Event()

    def callback(future):
        follow_up.append(p.submit(os.getpid))  # from the watcher thread
        called.set()

    task = p.submit(time.sleep, 60)
    task.add_done_callback(callback)
    handed_out(task)
    os.kill(first, signal.SIGKILL)
    assert called.wait(WAIT)
    assert isinstance(task.exception(), WorkerLost)
    assert follow_up[0].result(WAIT) not in (first, None)

    stopped = threading.Event()
    last = p.submit(time.sleep, 60)
    last.add_done_callback(lambda f: (p.stop(), stopped.set()))
    handed_out(last)
    (busy,) = p.pids()
    os.kill(busy, signal.SIGKILL)
    assert stopped.wait(WAIT)
    assert isinstance(last.exception(), WorkerLost)
    wait_until(lambda: not p.alive())
    assert p.pids() == []


def test_stop_fails_waiting_and_running_tasks_and_ends_the_workers(pool):
    p = pool()
    pid = p.submit(os.getpid).result(WAIT)
    running = p.submit(time.sleep, 60)
    waiting = p.submit(time.sleep, 60)
    handed_out(running)
    started = time.monotonic()
    p.stop()
    assert time.monotonic() - started < 10
    for future in (running, waiting):
        with pytest.raises(PoolStopped):
            future.result(WAIT)
    assert not p.alive() and p.pids() == []
    with pytest.raises(ProcessLookupError):
        os.kill(pid, 0)  # reaped, not a zombie
    with pytest.raises(PoolStopped):
        p.submit(os.getpid)
    p.stop()  # a second stop is harmless


def test_an_unpicklable_task_fails_alone(pool):
    p = pool()
    with pytest.raises((pickle.PicklingError, AttributeError)):
        p.submit(lambda: 1).result(WAIT)
    assert p.submit(pow, 3, 2).result(WAIT) == 9
