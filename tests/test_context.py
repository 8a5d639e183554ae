"""One execution context: every metric honours its workers and its precision.

Workers never change a number (DESIGN section 2: results are a pure function of circuit,
options, seed and version): every metric of the registry is run with one and with two
worker processes and the reports must be equal, bit for bit (common practice for seeded
parallel code; the sample blocks follow ``SeedSequence.spawn``).

Single precision changes numbers only by rounding. The documented bounds (DEVELOPERS.md,
"Precision"), from complex64's unit roundoff 2^-24 ≈ 6e-8 accumulated over a few hundred
gate applications (common practice: error ~ gates x roundoff) and from the measured
figures in ``bench/precision.json``:

- a fidelity, a Meyer-Wallach value or a cost value moves by at most 1e-5 (measured: 7e-7,
  6e-6);
- a variance (of gradients, of the loss or of the kernel) moves by at most 1e-4 relative
  (measured 2e-6); a Fourier weight by at most 1e-6;
- the fidelity histogram moves by at most one pair per 1000 (a fidelity within 1e-5 of a
  bin edge can change bins), and so the KL by little;
- capacity does not move at all: it always runs in double precision (its rank threshold
  1e-8 is below single precision's rounding).
"""

from __future__ import annotations

import haarline
import numpy as np
import pytest
from haarline import AnalysisOptions, Context, analyze, parse_circuit

# a pattern-written 4-qubit re-uploading model, so every metric of the registry applies
ISING = parse_circuit(
    {
        "name": "context-check",
        "qubits": 4,
        "inputs": 4,
        "layers": 2,
        "layer": [
            {"gate": "rx", "on": "all", "input": "qubit"},
            {"gate": "rzz", "on": "chain"},
            {"gate": "ry", "on": "all"},
            {"gate": "cz", "on": "ring"},
        ],
    }
)

EVERY = AnalysisOptions(
    metrics=list(haarline.REGISTRY),
    pairs=600,
    bins=20,
    samples=300,
    grad_samples=200,
    scan=[2, 3, 4],
    capacity_points=3,
    kernel_pairs=600,
    spectrum_samples=4,
    cost="local",
    seed=11,
)


# every call goes to the two worker processes, however small (parallel_from=0)
POOLED = Context(workers=2, parallel_from=0)


def _strip(report: dict) -> dict:
    out = dict(report)
    out.pop("timings")
    return out


@pytest.fixture(scope="module")
def one() -> dict:
    return _strip(analyze(ISING, EVERY))


@pytest.mark.slow
def test_every_metric_gives_the_same_report_with_two_workers(one):
    two = _strip(analyze(ISING, EVERY, context=POOLED))
    for name in haarline.REGISTRY:
        assert one[name] is not None, name
        assert two[name] == one[name], name
    assert two == one


@pytest.mark.slow
def test_single_precision_moves_each_metric_only_within_its_bound(one):
    single = analyze(ISING, EVERY.model_copy(update={"precision": "single"}))
    e1, e2 = one["expressibility"], single["expressibility"]
    moved = np.abs(np.array(e1["histogram"]) - np.array(e2["histogram"])).sum() / 2
    assert moved <= max(1, e1["pairs"] // 1000) / e1["pairs"]
    assert e2["second_moment"] == pytest.approx(e1["second_moment"], abs=1e-5)
    m1, m2 = one["entanglement"], single["entanglement"]
    assert m2["meyer_wallach"] == pytest.approx(m1["meyer_wallach"], abs=1e-5)
    for p1, p2 in zip(one["trainability"]["points"], single["trainability"]["points"], strict=True):
        assert p2["variance"] == pytest.approx(p1["variance"], rel=1e-4)
        assert p2["mean_cost"] == pytest.approx(p1["mean_cost"], abs=1e-5)
    assert single["capacity"] == one["capacity"]
    assert any("double precision" in c for c in single["cautions"])
    sampled = [
        (a["sampled"], b["sampled"])
        for a, b in zip(one["lie"]["points"], single["lie"]["points"], strict=True)
        if a["sampled"] is not None
    ]
    assert sampled, "the check needs at least one sampled deep-circuit point"
    for a, b in sampled:
        assert b["variance"] == pytest.approx(a["variance"], rel=1e-4)
    k1, k2 = one["kernel"], single["kernel"]
    assert k2["mean"] == pytest.approx(k1["mean"], abs=1e-5)
    assert k2["variance"] == pytest.approx(k1["variance"], rel=1e-4)
    for f1, f2 in zip(one["spectrum"]["features"], single["spectrum"]["features"], strict=True):
        assert f2["frequencies"] == f1["frequencies"]
        np.testing.assert_allclose(f2["weights"], f1["weights"], atol=1e-6)


def test_the_deep_loss_variance_honours_workers_and_precision():
    from haarline.metrics.sampled_loss import deep_loss_variance

    args = (ISING, 3, 15, "local")
    base = deep_loss_variance(*args, samples=700, seed=4)
    two = deep_loss_variance(*args, samples=700, seed=4, context=POOLED)
    assert two == base
    single = deep_loss_variance(*args, samples=700, seed=4, context=Context(precision="single"))
    assert single.variance == pytest.approx(base.variance, rel=1e-4)
    assert single.variance != base.variance  # it really ran in complex64


def test_capacity_shares_its_points_between_workers():
    from haarline.metrics.capacity import capacity

    program = haarline.expand(haarline.load_reference("ry-cz-ring"), qubits=6)
    one = capacity(program, points=4, seed=2)
    two = capacity(program, points=4, seed=2, context=POOLED)
    assert two == one


@pytest.mark.parametrize(
    ("field", "value", "message"),
    [
        ("workers", 0, "workers"),
        ("workers", 65, "workers"),
        ("memory_budget", 1024, "64 KiB"),
        ("precision", "half", "double or single"),
        ("scheduler", "10.0.0.5:8786", "scheduler: expected a Dask scheduler address"),
        ("scheduler", "tcp://10.0.0.5:99999", "port 99999"),
    ],
)
def test_a_bad_context_is_an_option_error(field, value, message):
    with pytest.raises(haarline.OptionError, match=message):
        Context(**{field: value})


def test_analyze_takes_the_precision_from_the_options():
    seen = []
    ctx = Context(precision="single", progress=lambda *a: seen.append(a))
    report = analyze(ISING, AnalysisOptions(pairs=50, samples=20), context=ctx)
    assert report["options"]["precision"] == "double"
    assert seen  # the progress callback of the context is used


def test_with_a_dask_scheduler_each_task_gets_the_budget_and_local_workers_stay_1():
    ctx = Context(scheduler="tcp://10.0.0.5:8786", memory_budget=1 << 24)
    share = ctx.for_workers(50)
    assert (share.memory_budget, share.scheduler, share.workers) == (1 << 24, None, 1)
    with pytest.raises(haarline.OptionError, match="workers: got 2 with a Dask scheduler"):
        Context(scheduler="tcp://10.0.0.5:8786", workers=2)


class _Stuck:
    """Blocks that never finish: the gather loop must still call progress (a heartbeat)."""

    cancelled = False

    def next_done(self, timeout):
        import queue
        import time

        time.sleep(timeout)
        raise queue.Empty

    def result(self, i):
        raise AssertionError("nothing finished")

    def cancel(self):
        self.cancelled = True


def test_a_cancel_seen_in_the_heartbeat_cancels_the_outstanding_blocks():
    from haarline.engine import batching

    class Cancelled(Exception):
        pass

    calls = []

    def progress(stage, done, total):
        calls.append((stage, done, total))
        raise Cancelled  # what the service's callback does for a cancelled job

    blocks = _Stuck()
    with pytest.raises(Cancelled):
        batching._gather(blocks, sizes=[64, 64], progress=progress, stage="expressibility")
    assert calls == [("expressibility", 0, 128)] and blocks.cancelled


def test_a_plain_analysis_never_imports_dask():
    # the optional extra costs nothing without a scheduler: start-up and a whole analysis
    import subprocess
    import sys

    code = (
        "import sys\n"
        "from haarline.service.cli.main import main\n"
        "assert main(['analyze', 'ref:ry-cz-ring', '--pairs', '200', '--samples', '50',"
        " '--format', 'json']) == 0\n"
        "sys.stderr.write(str(sorted(m for m in sys.modules if m.split('.')[0] in"
        " ('dask', 'distributed'))))\n"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert done.returncode == 0, done.stderr
    assert done.stderr.strip() == "[]"
