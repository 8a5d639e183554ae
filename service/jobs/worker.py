"""The unit of work that runs in a worker process (or on a Dask worker).

:func:`execute_job` takes only the database path and the job id, reads the stored request,
runs the analysis, and writes progress and the result back to the store itself. It needs
nothing from the parent process, so the same function runs in a local process pool or on
a Dask cluster that shares the data directory, and a job that was running when the
service died can simply be run again: its seed makes the result identical.

A local worker process must not outlive the server: if the server is killed outright
(SIGKILL, out of memory), nothing tells its pool's processes, which would compute on, then
wait for work for ever. :func:`follow_parent`, which every job worker runs first
(:mod:`haarline.service.jobs.pool`) and the score pool passes as its initializer, starts a thread in
each worker that exits the process as soon as its parent is gone.
"""

from __future__ import annotations

import os
import re
import threading
import time
from typing import Any

import haarline
from haarline.service.errors import JobCancelled
from haarline.service.jobs.states import JobState
from haarline.service.jobs.store import Store

__all__ = [
    "ORPHAN_EXIT",
    "PARENT_POLL",
    "api_wording",
    "execute_job",
    "follow_parent",
    "run_request",
    "warm_up",
]

PROGRESS_INTERVAL = 0.25
"""Seconds between progress writes (and cancel checks)."""

PARENT_POLL = 0.5
"""Seconds between a worker's checks that the server that started it still runs."""

ORPHAN_EXIT = 70
"""Exit status of a worker that found its server gone."""


def _stages(kind: str, request: dict[str, Any]) -> int:
    """At most how many progress stages the job reports (for the overall fraction)."""
    options = haarline.AnalysisOptions.model_validate(request.get("options", {}))
    specs = request["circuits"] if kind == "compare" else [request]
    return max(1, sum(haarline.progress_stages(circuit_of(s), options) for s in specs))


def circuit_of(spec: dict[str, Any]) -> haarline.Circuit:
    """The description from a request entry: ``circuit``, ``qasm`` or ``reference``."""
    if spec.get("circuit") is not None:
        return haarline.parse_circuit(spec["circuit"])
    if spec.get("reference"):
        return haarline.load_reference(spec["reference"])
    if spec.get("qasm") is not None:
        return haarline.parse_qasm(spec["qasm"], source="qasm")
    raise haarline.CircuitError([haarline.Problem("(root)", "no circuit given")])


_FLAG = re.compile(r"(?<![\w-])--([a-z][a-z0-9]*(?:-[a-z0-9]+)*)")


def api_wording(markdown: str) -> str:
    """A summary for REST clients: a CLI flag such as ``--pairs`` becomes ``options.pairs``.

    The report's own text names the command line's flags; a client of the service sets the
    same values as request options. Only flags that are options are rewritten.

    Examples
    --------
    >>> api_wording("Raise --pairs or --grad-samples; see --help.")
    'Raise `options.pairs` or `options.grad_samples`; see --help.'
    """
    fields = haarline.AnalysisOptions.model_fields

    def option(match: re.Match[str]) -> str:
        name = match.group(1).replace("-", "_")
        return f"`options.{name}`" if name in fields else match.group(0)

    return _FLAG.sub(option, markdown)


def run_request(
    kind: str,
    request: dict[str, Any],
    *,
    memory_budget: int,
    progress: Any = None,
    scheduler: str | None = None,
) -> tuple[dict[str, Any], str, dict[str, bytes]]:
    """Run one stored request; return (report or comparison, Markdown, PNGs).

    With a Dask ``scheduler`` the sampled blocks run on its cluster (block-level mode).
    """
    options = haarline.AnalysisOptions.model_validate(request.get("options", {}))
    context = haarline.Context(memory_budget=memory_budget, progress=progress, scheduler=scheduler)
    data = haarline.dataset_from(request["data"]) if request.get("data") else None
    policy = haarline.parse_policy(request["policy"]) if request.get("policy") else None

    def judged(report: dict[str, Any]) -> dict[str, Any]:
        if policy is not None:
            try:
                report["policy"] = haarline.evaluate_policy(policy, report)
            except haarline.PolicyError as exc:
                exc.problems = [
                    haarline.Problem(f"options.policy.{p.path}", p.message) for p in exc.problems
                ]
                raise
        return report

    if kind == "compare":
        reports, sources = [], []
        for i, spec in enumerate(request["circuits"]):
            circuit = circuit_of(spec)
            reports.append(judged(haarline.analyze(circuit, options, data=data, context=context)))
            sources.append(spec.get("reference") or f"circuits[{i}]")
        result = haarline.compare_reports(reports, sources)
        images = haarline.comparison_files(reports)
        links = [f"plots/{name}" for name in sorted(images)]
        return result, api_wording(haarline.compare_markdown(result, images=links)), images
    circuit = circuit_of(request)
    report = judged(haarline.analyze(circuit, options, data=data, context=context))
    images = haarline.plot_files(report, haarline.expand(circuit))
    # relative to .../{id}/summary, "plots/NAME" is the plot's own URL
    links = [f"plots/{name}" for name in sorted(images)]
    markdown = haarline.to_markdown(report, images=links, page="page")
    return report, api_wording(markdown), images


def follow_parent(parent: int, interval: float = PARENT_POLL) -> None:
    """Exit this process promptly once ``parent`` (the server's pid) is no longer its parent.

    Runs first in every worker process (a job worker's main loop, a process pool's
    initializer), with the server's pid taken before the workers start. A daemon thread
    compares :func:`os.getppid` with ``parent`` every ``interval`` seconds; when the
    server has died the worker has been re-parented (to init or a sub-reaper), and the
    thread ends the process with :func:`os._exit` (status :data:`ORPHAN_EXIT`) at once,
    whatever it is computing. A job cut off this way is
    still ``running`` in the store and is queued again when the server restarts.
    """

    def watch() -> None:
        while os.getppid() == parent:
            time.sleep(interval)
        os._exit(ORPHAN_EXIT)

    threading.Thread(target=watch, name="haarline-follow-parent", daemon=True).start()


def warm_up() -> int:
    """Run first in every new worker process: import the numerical core; return the pid."""
    return os.getpid()


def execute_job(
    database: str, job_id: str, memory_budget: int, scheduler: str | None = None
) -> str:
    """Run a claimed job to its end; return its final state.

    ``scheduler``: the Dask scheduler that computes the job's sampled blocks
    (``HAARLINE_DASK_UNIT=block``); cancelling the job cancels the blocks not yet done.
    """
    store = Store(database)
    job = store.get_job(job_id)
    if job is None or job["state"] is not JobState.RUNNING:
        return "skipped"
    kind, request = job["kind"], job["request"]
    try:
        total = _stages(kind, request)
    except (haarline.InputError, haarline.LimitError):
        total = 1  # run_request below fails with the problem itself
    fraction = haarline.StageFraction(total)
    last = [0.0]

    def progress(stage: str, done: int, count: int) -> None:
        frac = fraction(stage, done, count)
        now = time.monotonic()
        if now - last[0] < PROGRESS_INTERVAL and done < count:
            return
        last[0] = now
        if store.set_progress(job_id, round(frac, 4), stage):
            raise JobCancelled

    try:
        result, markdown, images = run_request(
            kind, request, memory_budget=memory_budget, progress=progress, scheduler=scheduler
        )
    except JobCancelled:
        store.mark(job_id, JobState.CANCELLED, error="cancelled on request")
        return "cancelled"
    except haarline.ClusterError as exc:  # block-level mode: the cluster, not the request
        reason = "; ".join(f"HAARLINE_DASK_SCHEDULER: {p.message}" for p in exc.problems)
        store.mark(job_id, JobState.FAILED, error=reason)
        return "failed"
    except (haarline.InputError, haarline.LimitError) as exc:
        store.mark(job_id, JobState.FAILED, error=str(exc))
        return "failed"
    except MemoryError:
        store.mark(
            job_id, JobState.FAILED, error="out of memory; lower the sample counts or qubits"
        )
        return "failed"
    if store.get_job(job_id) and store.set_progress(job_id, 1.0, "storing"):
        store.mark(job_id, JobState.CANCELLED, error="cancelled on request")
        return "cancelled"
    store.finish(job_id, report=result, markdown=markdown, artifacts=images)
    return "succeeded"
