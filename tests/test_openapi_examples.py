"""Every operation has a description and an example, and every example fits its schema.

The examples (service/api/examples.json) are validated with the route's own models: the
request body with the body model, the answer with the response model (the typed report
and comparison of haarline.report.schema for the report routes and the score), so the
document can never show an example that its schema refuses.
"""

import json
from pathlib import Path
from typing import Any

import haarline
import pytest
from fastapi.routing import APIRoute
from haarline.report.schema import CircuitFacts
from haarline.service.api.examples import examples
from haarline.service.api.schemas import JobPublic
from pydantic import TypeAdapter

DOCUMENT = json.loads((Path(__file__).parents[1] / "openapi-notes" / "openapi.json").read_text())
OPERATIONS = {
    op["operationId"]: op for methods in DOCUMENT["paths"].values() for op in methods.values()
}
# answers without a response model: what they are instead
OTHER_ANSWERS: dict[str, Any] = {
    "getAnalysisSummary": str,
    "getComparisonSummary": str,
    "getAnalysisPage": str,
    "getComparisonPage": str,
    "health": dict[str, str],
}


@pytest.fixture(scope="module")
def routes(tmp_path_factory):
    from haarline.service.api.app import create_app
    from haarline.service.settings import Settings

    data = tmp_path_factory.mktemp("examples")
    app = create_app(Settings.from_env({}, data_dir=str(data)), start_runner=False)
    return {r.operation_id: r for r in app.state.routes if isinstance(r, APIRoute)}


@pytest.mark.parametrize("operation_id", sorted(OPERATIONS))
def test_every_operation_has_a_description_and_an_example(operation_id):
    op = OPERATIONS[operation_id]
    assert op.get("description") and "\n" not in op["description"], "one line, please"
    answers = [
        media
        for status, response in op["responses"].items()
        if status.startswith("2")
        for media in response.get("content", {}).values()
        if "example" in media
    ]
    binary = all(
        media.get("schema", {}).get("format") == "binary"
        for status, response in op["responses"].items()
        if status.startswith("2")
        for media in response.get("content", {}).values()
    )
    # a PNG or an empty answer: the example is the request (its parameters)
    assert answers or binary, f"{operation_id}: no example of its answer"
    if "requestBody" in op:
        assert all("example" in m for m in op["requestBody"]["content"].values())
    unexampled = [p["name"] for p in op.get("parameters", []) if "example" not in p]
    assert not unexampled, f"{operation_id}: parameters without an example: {unexampled}"


@pytest.mark.parametrize("operation_id", sorted(examples()))
def test_each_example_fits_the_models_of_its_route(operation_id, routes):
    route = routes[operation_id]
    found = examples()[operation_id]
    if "request" in found:
        body = route.body_field.field_info.annotation
        TypeAdapter(body).validate_python(found["request"])
    status, answer = next((s, v) for s, v in found.items() if s != "request")
    assert status == str(route.status_code or 200)
    if operation_id == "getCircuitSchema":
        assert answer == haarline.circuit_schema()
    elif operation_id == "getReference":
        haarline.parse_circuit(answer)
    elif operation_id.startswith("stream"):
        # server-sent events: every data line is the job as its status route shows it
        data = [line[6:] for line in answer.splitlines() if line.startswith("data: ")]
        assert data and "event: end" in answer
        for line in data:
            JobPublic.model_validate_json(line)
    elif operation_id == "checkCircuit":
        facts = CircuitFacts.model_validate(answer)
        assert facts.model_extra == {}
    else:
        model = route.response_model or OTHER_ANSWERS[operation_id]
        TypeAdapter(model).validate_python(answer)


def test_every_example_belongs_to_an_operation():
    assert set(examples()) <= set(OPERATIONS)
