"""The request and response example of every operation in the OpenAPI document.

``examples.json`` beside this module holds, by ``operationId``, the request body (under
``"request"``) and the success answer (under its status) of a real exchange with the
service: small jobs on the bundled circuits, answered by a test app whose public URL was
``https://haarline.example.org``, with numbers rounded to six significant digits. Path,
query and header parameters get the examples of :func:`parameters`. :func:`add_examples`
writes them into the document (``example`` of each media type and parameter), so they
live in one place instead of in every route's decorator.

``tests/test_openapi_examples.py`` checks that every operation has an example and that
each one validates against the route's own body and response models, so an example can
never disagree with the schema beside it. A plot is PNG bytes: its example is its
parameters (``name``: ``fidelity.png``).
"""

from __future__ import annotations

import json
from functools import cache
from pathlib import Path
from typing import Any

__all__ = ["PARAMETERS", "add_examples", "examples", "parameters"]

PARAMETERS: dict[str, Any] = {
    "name": "fidelity.png",
    "label": ["pr:17"],
    "state": ["succeeded"],
    "limit": 20,
    "wait": 30,
    "Idempotency-Key": "ci-run-4711",
    "If-None-Match": '"845e91831319e89c4d656bdb80c278ac"',
}
"""Example values of the parameters, by name (job, link, token and cursor: :func:`parameters`)."""


@cache
def examples() -> dict[str, dict[str, Any]]:
    """The examples by ``operationId``: ``request`` and the answer under its status."""
    text = (Path(__file__).parent / "examples.json").read_text(encoding="utf-8")
    loaded: dict[str, dict[str, Any]] = json.loads(text)
    return loaded


def parameters() -> dict[str, Any]:
    """:data:`PARAMETERS` and the ids, token and cursor of the exchange in ``examples.json``."""
    table = examples()
    link = table["shareAnalysis"]["200"]
    return {
        **PARAMETERS,
        "job_id": table["getAnalysis"]["200"]["id"],
        "link_id": link["id"],
        "token": link["token"],
        "cursor": table["listAnalyses"]["200"]["next"].rpartition("cursor=")[2],
    }


def add_examples(document: dict[str, Any]) -> dict[str, Any]:
    """Write every operation's examples into ``document`` (in place); return it.

    Examples
    --------
    >>> doc = {"paths": {"/healthz": {"get": {"operationId": "health", "responses": {
    ...     "200": {"content": {"application/json": {"schema": {}}}}}}}}}
    >>> add_examples(doc)["paths"]["/healthz"]["get"]["responses"]["200"]["content"]
    {'application/json': {'schema': {}, 'example': {'status': 'ok'}}}
    """
    table, values = examples(), parameters()
    for methods in document.get("paths", {}).values():
        for operation in methods.values():
            found = table.get(operation.get("operationId", ""), {})
            for parameter in operation.get("parameters", []):
                if parameter["name"] in values:
                    parameter["example"] = values[parameter["name"]]
            if "request" in found:
                for media in operation["requestBody"]["content"].values():
                    media["example"] = found["request"]
            for status, response in operation.get("responses", {}).items():
                if status in found:
                    for media in response.get("content", {}).values():
                        media["example"] = found[status]
    return document
