"""The typed report schema (haarline.report.schema) against real reports and comparisons.

Every golden report, reports that fill every section (kernel with its matrix, spectrum,
capacity, Lie algebra, a sweep, a policy, a data set), a comparison and a score from the
service validate against the models, and no key is left over: a key the report gains must
be typed in the schema in the same change (the models accept unknown keys so that
clients keep working, so this walk is what keeps the schema complete).
"""

import json
from pathlib import Path
from typing import Any

import haarline
import numpy as np
import pytest
from haarline.circuit.model import parse_circuit
from haarline.report.options import AnalysisOptions
from haarline.report.schema import Comparison, Report
from live_server import wait_for
from pydantic import BaseModel

GOLDEN = sorted((Path(__file__).parent / "golden").glob("*.json"))


def unlisted(model: Any, path: str = "$") -> list[str]:
    """Paths of keys that no model field lists (pydantic keeps them in ``model_extra``)."""
    out: list[str] = []
    if isinstance(model, BaseModel):
        out += [f"{path}.{key}" for key in model.model_extra or {}]
        for name in type(model).model_fields:
            out += unlisted(getattr(model, name), f"{path}.{name}")
    elif isinstance(model, list):
        for i, item in enumerate(model):
            out += unlisted(item, f"{path}[{i}]")
    return out


def check_report(report: dict[str, Any]) -> Report:
    typed = Report.model_validate(report)
    assert unlisted(typed) == []
    # the typed form holds every value: dumped again it is the report itself
    assert typed.model_dump(mode="json", exclude_unset=True) == report
    return typed


@pytest.mark.parametrize("path", GOLDEN, ids=lambda p: p.stem)
def test_every_golden_report_validates_with_no_key_left_over(path):
    # the golden files leave out the two keys that vary between runs (tests/test_golden.py)
    report = json.loads(path.read_text())
    check_report({**report, "haarline_version": haarline.__version__, "timings": {"total": 0.5}})


def test_every_metric_of_the_registry_has_a_typed_section():
    sections = {name: Report.model_fields[name].annotation for name in haarline.REGISTRY}
    assert all(annotation is not Any for annotation in sections.values())


@pytest.fixture(scope="module")
def data_report():
    """A report with every section filled: inputs, labelled data, a sweep and a policy."""
    rng = np.random.default_rng(5)
    x = rng.uniform(0, np.pi, size=(12, 2))
    data = haarline.dataset_from({"x": x.tolist(), "labels": ["a", "b"] * 6})
    circuit = parse_circuit(
        {
            "qubits": 2,
            "inputs": 2,
            "layer": [
                {"gate": "rx", "input": "qubit"},
                {"gate": "ry"},
                {"gate": "cz", "on": "chain"},
            ],
        }
    )
    options = AnalysisOptions(
        metrics=list(haarline.REGISTRY),
        pairs=40,
        bins=4,
        samples=10,
        grad_samples=4,
        scan=[2],
        depth_scan=[1, 2],
        capacity_points=2,
        kernel_pairs=20,
        kernel_rows=6,
        spectrum_samples=2,
        layers_sweep=[1, 2],
    )
    report = haarline.analyze(circuit, options, data=data)
    policy = haarline.parse_policy(
        {
            "name": "schema",
            "rules": [
                {"metric": "expressibility.kl_corrected", "fail_above": 10},
                {"metric": "trainability.barren_plateau", "expect": False, "note": "n"},
            ],
        }
    )
    report["policy"] = haarline.evaluate_policy(policy, report)
    return report


def test_a_report_with_every_section_validates(data_report):
    typed = check_report(data_report)
    assert typed.kernel is not None and typed.kernel.matrix is not None
    assert typed.kernel.law.kind == "data"
    assert typed.spectrum is not None and typed.lie is not None and typed.capacity is not None
    assert typed.sweep is not None and typed.sweep[0].meyer_wallach is not None
    assert typed.policy is not None and [r.status for r in typed.policy.rules] == ["pass", "warn"]
    assert typed.data is not None and typed.data.classes == 2


def test_a_key_no_model_lists_is_found(data_report):
    grown = json.loads(json.dumps(data_report))
    grown["kernel"]["points"][0]["new_number"] = 1.0
    assert unlisted(Report.model_validate(grown)) == ["$.kernel.points[0].new_number"]
    grown["capacity"]["redundant_parameters"] = [{"parameter": 0, "extra": 1}]
    with pytest.raises(ValueError, match="redundant_parameters"):
        Report.model_validate(grown)


def test_a_live_comparison_and_a_score_validate(client):
    small = {"pairs": 40, "bins": 4, "samples": 10}
    body = {
        "circuits": [{"reference": "rx-product"}, {"reference": "ry-cz-ring"}],
        "options": {
            **small,
            "policy": {"rules": [{"metric": "entanglement.std", "fail_above": 1}]},
        },
    }
    r = client.post("/v1/comparisons", json=body)
    assert r.status_code == 202, r.text
    wait_for(client, r.headers["Location"], ("succeeded",), timeout=60)
    comparison = client.get(r.headers["Location"] + "/report").json()
    typed = Comparison.model_validate(comparison)
    assert unlisted(typed) == []
    assert [row.rank for row in typed.ranking] == [1, 2]
    assert {row.policy for row in typed.ranking} == {"pass"}
    score = client.post("/v1/score", json={"reference": "rx-product", "options": small})
    assert score.status_code == 200, score.text
    check_report(score.json())
