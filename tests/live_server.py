"""A real ``haarline serve`` process on loopback, for the load, fault and abuse checks.

The server runs in its own process group (its compute workers included), so a SIGKILL of
the group is a hard crash of everything at once; :meth:`LiveServer.kill_worker` kills one
compute process only. Nothing here talks to anything but 127.0.0.1.
"""

from __future__ import annotations

import os
import resource
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

import httpx2 as httpx
import psutil
from haarline.service.api.keys import issue_key
from haarline.service.jobs.store import Store

REPO = Path(__file__).resolve().parent.parent


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


class LiveServer:
    """Start, stop, crash and restart one server on a data directory of its own."""

    def __init__(
        self,
        root: Path,
        *,
        workers: int = 1,
        env: dict[str, str] | None = None,
        log_level: str = "warning",
        file_size_limit: int | None = None,
    ):
        self.root = Path(root)
        self.data = self.root / "data"
        self.data.mkdir(parents=True, exist_ok=True)
        self.log = self.root / "server.log"
        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.workers = workers
        self.env = env or {}
        self.log_level = log_level
        self.file_size_limit = file_size_limit
        self.proc: subprocess.Popen | None = None
        self.store = Store(self.data / "haarline.sqlite3")
        self.store.initialize()

    def key(self, name: str = "client") -> str:
        """A fresh API key (written straight to the store)."""
        return issue_key(self.store, name)[1]

    def client(self, key: str, timeout: float = 30) -> httpx.Client:
        return httpx.Client(
            base_url=self.url, headers={"Authorization": f"Bearer {key}"}, timeout=timeout
        )

    def _limits(self) -> None:  # runs in the child before exec
        if self.file_size_limit is not None:
            resource.setrlimit(resource.RLIMIT_FSIZE, (self.file_size_limit,) * 2)

    def start(self, timeout: float = 60) -> None:
        env = {
            **os.environ,
            "HAARLINE_DATA_DIR": str(self.data),
            "HAARLINE_WORKERS": str(self.workers),
            **self.env,
        }
        command = [
            sys.executable,
            "-m",
            "haarline.service.cli.main",
            "serve",
            "--port",
            str(self.port),
        ]
        with open(self.log, "ab") as out:
            self.proc = subprocess.Popen(
                [*command, "--log-level", self.log_level],
                cwd=REPO,
                env=env,
                stdout=out,
                stderr=subprocess.STDOUT,
                start_new_session=True,  # its own process group, workers included
                preexec_fn=self._limits if self.file_size_limit is not None else None,
            )
        deadline = time.time() + timeout
        while time.time() < deadline:
            if self.proc.poll() is not None:
                break
            try:
                if httpx.get(f"{self.url}/readyz", timeout=1).status_code == 200:
                    return
            except httpx.HTTPError:
                pass
            time.sleep(0.1)
        self.kill()
        raise AssertionError(f"server did not start: {self.log.read_text()[-3000:]}")

    def kill(self) -> None:
        """SIGKILL the whole process group (server and compute workers)."""
        if self.proc is None:
            return
        try:
            os.killpg(self.proc.pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
        self.proc.wait(timeout=30)
        self.proc = None

    def restart(self) -> None:
        self.kill()
        self.start()

    def processes(self) -> list[psutil.Process]:
        """The server and every process it started."""
        if self.proc is None:
            return []
        try:
            top = psutil.Process(self.proc.pid)
            return [top, *top.children(recursive=True)]
        except psutil.NoSuchProcess:
            return []

    def compute_workers(self) -> list[psutil.Process]:
        """The process-pool workers (spawned interpreters running ``spawn_main``).

        These are the job workers, and the score process once a score has run.
        """
        out = []
        for p in self.processes()[1:]:
            try:
                if any("spawn_main" in part for part in p.cmdline()):
                    out.append(p)
            except psutil.NoSuchProcess:
                pass
        return out

    def rss(self) -> int:
        """Resident memory of the server and its workers, in bytes."""
        total = 0
        for p in self.processes():
            try:
                total += p.memory_info().rss
            except psutil.NoSuchProcess:
                pass
        return total

    def __enter__(self) -> LiveServer:
        self.start()
        return self

    def __exit__(self, *exc: Any) -> None:
        self.kill()


def wait_for(client: httpx.Client, url: str, states: tuple[str, ...], timeout: float = 120) -> Any:
    """Poll a job until it is in one of ``states``; return it."""
    deadline = time.time() + timeout
    job: Any = None
    while time.time() < deadline:
        r = client.get(url)
        if r.status_code == 200:
            job = r.json()
            if job["state"] in states:
                return job
        time.sleep(0.1)
    raise AssertionError(f"{url} not in {states} after {timeout}s: {job}")
