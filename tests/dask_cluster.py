"""A real Dask cluster on loopback for the tests and the benchmark.

``dask scheduler`` and ``dask worker`` run as separate processes, as on a real cluster: the
scheduler picks a free port itself (``--port 0``) and writes its address to a scheduler
file, which the workers read. Each process leads its own process group, so a worker is
killed with its nanny and nothing survives :meth:`LocalDask.close`; the scheduler also stops
itself after ``IDLE`` seconds without work and the workers when their scheduler is gone, in
case the test process itself dies.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

IDLE = "300s"
"""The scheduler ends itself after this long without clients or tasks."""

WORKER_MEMORY = "800MiB"
"""Memory limit of each worker (its nanny restarts it above the limit)."""


class LocalDask:
    """A scheduler and ``workers`` single-thread workers on 127.0.0.1."""

    def __init__(self, folder: Path, workers: int = 2, memory: str = WORKER_MEMORY):
        self.folder = folder
        folder.mkdir(parents=True, exist_ok=True)
        self.memory = memory
        self.file = folder / "scheduler.json"
        self.procs: dict[str, subprocess.Popen[bytes]] = {}
        self.address = ""
        try:
            self._start(
                "scheduler",
                [
                    "scheduler",
                    "--host",
                    "127.0.0.1",
                    "--port",
                    "0",
                    "--scheduler-file",
                    str(self.file),
                    "--idle-timeout",
                    IDLE,
                ],
            )
            self.address = self._wait_for_file()
            for i in range(workers):
                self.add_worker(f"w{i}")
            self.wait_for_workers(workers)
        except BaseException:
            self.close()
            raise

    def _start(self, name: str, args: list[str]) -> None:
        log = open(self.folder / f"{name}.log", "wb")
        try:  # the child writes to its own copy of the descriptor
            self.procs[name] = subprocess.Popen(
                [sys.executable, "-m", "dask", *args, "--no-dashboard"],
                stdout=log,
                stderr=subprocess.STDOUT,
                start_new_session=True,
            )
        finally:
            log.close()

    def _wait_for_file(self, timeout: float = 60.0) -> str:
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            if self.file.exists():
                try:
                    return str(json.loads(self.file.read_text())["address"])
                except (ValueError, KeyError):
                    pass  # written but not yet complete
            if self.procs["scheduler"].poll() is not None:
                raise RuntimeError(self.log("scheduler"))
            time.sleep(0.05)
        raise RuntimeError(f"no scheduler file after {timeout} s: {self.log('scheduler')}")

    def add_worker(self, name: str) -> None:
        """Start one more worker (one thread, the memory limit, loopback only)."""
        self._start(
            name,
            [
                "worker",
                "--name",
                name,
                "--nthreads",
                "1",
                "--memory-limit",
                self.memory,
                "--host",
                "127.0.0.1",
                "--death-timeout",
                "30",
                "--local-directory",
                str(self.folder / name),
                "--scheduler-file",
                str(self.file),
            ],
        )

    def client(self) -> Any:
        """A client of the test's own, to read the scheduler's records."""
        from distributed import Client

        return Client(self.address, set_as_default=False, timeout=30)

    def wait_for_workers(self, count: int, timeout: float = 60.0) -> None:
        with self.client() as c:
            c.wait_for_workers(count, timeout=timeout)

    def log(self, name: str) -> str:
        path = self.folder / f"{name}.log"
        return path.read_text(errors="replace") if path.exists() else ""

    def kill(self, name: str) -> None:
        """SIGKILL a worker and its nanny at once (a machine that vanished)."""
        proc = self.procs.pop(name)
        os.killpg(proc.pid, signal.SIGKILL)
        proc.wait(timeout=30)

    def close(self) -> None:
        """Stop every process: SIGTERM, then SIGKILL what is still there after 10 s."""
        procs = list(self.procs.values())
        self.procs.clear()
        for proc in procs:
            if proc.poll() is None:
                try:
                    os.killpg(proc.pid, signal.SIGTERM)
                except ProcessLookupError:
                    pass
        for proc in procs:
            try:
                proc.wait(timeout=10)
            except subprocess.TimeoutExpired:
                pass
            try:  # the whole group: a nanny's worker may outlive the nanny
                os.killpg(proc.pid, signal.SIGKILL)
            except ProcessLookupError:
                pass
            proc.wait(timeout=10)

    def __enter__(self) -> LocalDask:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()
