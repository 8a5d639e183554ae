"""openapi-notes/ stays true to the code: the exported document and one note per endpoint."""

import json
import re

from service.openapi_export import TARGET, render

NOTES = TARGET.parent


def test_exported_openapi_document_is_current():
    committed = TARGET.read_text(encoding="utf-8")
    assert committed == render(), "openapi-notes/openapi.json is stale: run `make openapi`"


def test_operation_ids_are_unique_and_stable():
    doc = json.loads(TARGET.read_text())
    ids = [op["operationId"] for ms in doc["paths"].values() for op in ms.values()]
    assert len(ids) == len(set(ids))
    assert all(re.fullmatch(r"[a-z][A-Za-z]+", i) for i in ids)
