"""The metric registry: one row per metric, and every part of haarline reads it.

Checks that every name ``--metrics`` accepts has a row and every row is reachable from the
CLI and the service; that the options, plots and policy paths a row names exist; that a
row's progress stages bound what its computation reports (so a job's progress cannot
reach 100% while it still works: the drift that made ``lie`` jobs look finished); and that
the summaries show each computed metric.
"""

from __future__ import annotations

import json
import typing

import haarline
import pytest
from fastapi.testclient import TestClient
from haarline import REGISTRY, AnalysisOptions, Context, StageFraction, analyze, parse_circuit
from haarline.plots.figures import DRAWERS
from haarline.report.options import Metric
from haarline.report.policy import _resolve
from haarline.service.cli import main as cli

# a small re-uploading model: every metric of the registry applies to it
DESCRIPTION = {
    "name": "registry-check",
    "qubits": 3,
    "inputs": 3,
    "layers": 2,
    "layer": [
        {"gate": "rx", "on": "all", "input": "qubit"},
        {"gate": "rzz", "on": "chain"},
        {"gate": "ry", "on": "all"},
    ],
}
SMALL = parse_circuit(DESCRIPTION)
OPTIONS = {
    "pairs": 200,
    "bins": 10,
    "samples": 100,
    "grad_samples": 30,
    "scan": [2, 3],
    "capacity_points": 2,
    "kernel_pairs": 100,
    "spectrum_samples": 3,
    "seed": 3,
}


@pytest.fixture(scope="module")
def reports() -> dict[str, dict]:
    return {name: analyze(SMALL, AnalysisOptions(metrics=[name], **OPTIONS)) for name in REGISTRY}


def test_the_rows_and_the_metric_names_agree():
    assert tuple(REGISTRY) == typing.get_args(Metric) == haarline.METRICS
    for name, row in REGISTRY.items():
        assert row.name == name and row.title and row.about


def test_every_option_a_row_reads_exists_and_every_metric_option_is_read():
    fields = set(AnalysisOptions.model_fields)
    read = {option for row in REGISTRY.values() for option in row.options}
    assert read <= fields
    # read by the report itself, not by one metric
    general = {"metrics", "seed", "precision", "layers_sweep"}
    assert fields - general == read


def test_every_plot_a_row_names_has_a_drawer():
    named = [plot for row in REGISTRY.values() for plot in row.plots]
    assert len(named) == len(set(named))
    assert set(named) == set(DRAWERS)


@pytest.mark.parametrize("name", list(REGISTRY))
def test_each_row_computes_its_section_and_its_policy_paths_resolve(name, reports):
    report = reports[name]
    assert report[name] is not None
    for other in REGISTRY:
        assert (report[other] is None) == (other != name)
    for path in REGISTRY[name].policy_paths:
        _resolve(report, path)  # raises KeyError when the path does not exist


@pytest.mark.parametrize("name", list(REGISTRY))
def test_each_computed_metric_shows_in_every_summary(name, reports):
    report = reports[name]
    row = REGISTRY[name]
    assert row.text(report[name], report)[0] in haarline.to_text(report)
    markdown = haarline.to_markdown(report)
    for table_row in row.table(report[name], report):
        assert table_row.label in markdown


@pytest.mark.parametrize("name", list(REGISTRY))
def test_progress_stages_bound_what_each_metric_reports(name):
    options = AnalysisOptions(metrics=[name], **OPTIONS)
    stages: list[str] = []

    def record(stage: str, done: int, total: int) -> None:
        if not stages or stages[-1] != stage:
            stages.append(stage)

    analyze(SMALL, options, context=Context(progress=record))
    bound = haarline.progress_stages(SMALL, options)
    assert 1 <= len(stages) <= bound
    if name not in ("lie", "kernel"):  # these two may skip stages; the others know them
        assert len(stages) == bound


def test_a_lie_job_never_shows_100_percent_while_it_still_works():
    # the worker's fraction, fed by a real analysis with lie and trainability
    options = AnalysisOptions(metrics=["trainability", "lie"], **OPTIONS)
    fraction = StageFraction(haarline.progress_stages(SMALL, options))
    seen: list[float] = []
    analyze(SMALL, options, context=Context(progress=lambda *a: seen.append(fraction(*a))))
    assert len(seen) > 3
    assert all(f < 1.0 for f in seen[:-1])
    assert seen == sorted(seen)


def test_the_cli_accepts_every_row_and_says_what_each_measures(capsys, tmp_path):
    assert cli.main(["--help"]) == 0
    text = " ".join(capsys.readouterr().out.split())
    for name, row in REGISTRY.items():
        assert f"{name}: {' '.join(row.about.split())}" in text
    path = tmp_path / "model.json"
    path.write_text(json.dumps(DESCRIPTION))
    code = cli.main(
        ["analyze", str(path), "--metrics", ",".join(REGISTRY), "--format", "json",
         "--pairs", "50", "--samples", "20", "--grad-samples", "10", "--scan", "2,3",
         "--capacity-points", "1", "--bins", "5", "--kernel-pairs", "50",
         "--spectrum-samples", "2"]
    )  # fmt: skip
    assert code == 0
    report = json.loads(capsys.readouterr().out)
    assert all(report[name] is not None for name in REGISTRY)


def test_the_service_accepts_every_row_and_its_schema_lists_them(make_app):
    with TestClient(make_app(runner=False, dev_mode=True)) as client:
        schema = client.get("/openapi.json").json()
        metrics = schema["components"]["schemas"]["JobOptions"]["properties"]["metrics"]
        assert metrics["items"]["enum"] == list(REGISTRY)
        for row in REGISTRY.values():
            assert row.about in metrics["description"]
        for name in REGISTRY:
            body = {"circuit": DESCRIPTION, "options": {"metrics": [name], "scan": [2, 3]}}
            assert client.post("/v1/analyses", json=body).status_code == 202, name
