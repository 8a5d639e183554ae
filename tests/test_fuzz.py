"""API fuzzing: schemathesis drives every operation of the app's own OpenAPI document.

In process (ASGI, no network), with a bounded number of examples per operation: a small
budget in the suite, a larger one and schemathesis's coverage phase (boundary values of
every field) with ``make fuzz`` (``HAARLINE_FUZZ_EXAMPLES``, ``HAARLINE_FUZZ_COVERAGE``). Every
response must be no 5xx and must match the document: a documented status code, a
documented content type (problem+json for errors), a body that validates against the
declared schema, and an ``Allow`` header that names the path's documented methods.

Two of schemathesis's checks are left out, on purpose:

* ``positive_data_acceptance`` (a schema-valid body must be accepted): the document cannot
  state every rule of a circuit (a qubit index below the qubit count, exactly one of
  ``circuit``/``qasm``/``reference``, a known reference name), so schema-valid bodies are
  rightly refused with a 422 that names the field;
* unknown query parameters are not generated (``allow-extra-parameters``): the service
  ignores them, as HTTP APIs commonly do.

Accepted jobs run for real in one worker process, under a cost cap small enough that each
is a fraction of a second. ``HAARLINE_FUZZ_STATS=FILE`` writes the request count and the
status classes seen (the figures in the README's Reliability section).
"""

import collections
import json
import os
import shutil
import tempfile
from pathlib import Path

import pytest
import schemathesis
from haarline.service.api.app import create_app
from haarline.service.api.keys import issue_key
from haarline.service.settings import Settings
from hypothesis import HealthCheck, settings

EXAMPLES = int(os.environ.get("HAARLINE_FUZZ_EXAMPLES", "4"))
# the coverage phase adds several hundred boundary cases per body route: make fuzz only
COVERAGE = os.environ.get("HAARLINE_FUZZ_COVERAGE", "0") == "1"
SEEN: collections.Counter = collections.Counter()


# schemathesis needs the schema when tests are collected (its lazy, fixture-based loading
# does not run under this pytest), so the app is built at import on its own temp directory,
# removed again when the module's tests are done.
DATA = Path(tempfile.mkdtemp(prefix="haarline-fuzz-"))
APP = create_app(
    Settings.from_env(
        {},
        data_dir=str(DATA / "data"),
        workers=1,
        max_work=1e7,  # accepted jobs stay small
        max_score_work=1e6,
        max_body_bytes=65_536,
    )
)
_, KEY = issue_key(APP.state.store, "fuzz")

CONFIG = schemathesis.config.SchemathesisConfig.from_dict(
    {
        "generation": {"max-examples": EXAMPLES, "allow-extra-parameters": False},
        "phases": {"coverage": {"enabled": COVERAGE}},
        "checks": {
            "positive_data_acceptance": {"enabled": False},
            # 413 is how an oversize body is refused (the limit is below schema maxima)
            "negative_data_rejection": {
                "expected-statuses": [400, 401, 403, 404, 405, 409, 413, 415, 422, 429]
            },
        },
    }
)
schema = schemathesis.openapi.from_asgi("/openapi.json", APP, config=CONFIG)


@pytest.fixture(scope="module", autouse=True)
def _cleanup():
    yield
    APP.state.runner.stop()
    shutil.rmtree(DATA, ignore_errors=True)
    path = os.environ.get("HAARLINE_FUZZ_STATS")
    if path:
        stats = {
            "examples_per_operation": EXAMPLES,
            "coverage_phase": COVERAGE,
            "requests": sum(SEEN.values()),
            **SEEN,
        }
        with open(path, "w") as out:
            json.dump(stats, out, indent=2, sort_keys=True)


@schema.parametrize()
@settings(
    max_examples=EXAMPLES,
    deadline=None,
    derandomize=True,
    suppress_health_check=list(HealthCheck),
)
def test_every_operation_answers_within_its_documented_contract(case):
    response = case.call_and_validate(headers={"Authorization": f"Bearer {KEY}"})
    SEEN[f"{response.status_code // 100}xx"] += 1
    assert response.status_code < 500, response.text
