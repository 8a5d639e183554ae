"""Exact numbers in the OpenAPI document.

FastAPI reads every schema through its own OpenAPI model, whose ``minimum`` and
``maximum`` are floats: an integer bound comes out as a float (``0.0``), and one beyond
2**53 changes value (the seed's ``2**63 - 1`` became ``9.223372036854776e+18``, which is
2**63 and admits a seed the server refuses). :func:`exact_bounds` puts back the bounds
that pydantic wrote for the same models, so a generated client checks exactly what the
server checks.
"""

from __future__ import annotations

import typing
from collections.abc import Iterable
from typing import Any

from fastapi.routing import APIRoute
from pydantic import BaseModel
from starlette.routing import BaseRoute

__all__ = ["exact_bounds"]

_BOUNDS = ("minimum", "maximum", "exclusiveMinimum", "exclusiveMaximum")


def _models(annotation: Any) -> Iterable[type[BaseModel]]:
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        yield annotation
    for arg in typing.get_args(annotation):
        yield from _models(arg)


def _pydantic_schemas(routes: Iterable[BaseRoute]) -> dict[str, Any]:
    """Component name → the schema pydantic writes, for every model a route reads or returns."""
    found: dict[str, Any] = {}
    for route in routes:
        if not isinstance(route, APIRoute):
            continue
        body = getattr(getattr(route.body_field, "field_info", None), "annotation", None)
        for model in [*_models(body), *_models(route.response_model)]:
            schema = model.model_json_schema(ref_template="#/components/schemas/{model}")
            found.setdefault(model.__name__, schema)
            for name, sub in schema.get("$defs", {}).items():
                found.setdefault(name, sub)
    return found


def _copy(ours: Any, theirs: Any) -> None:
    if isinstance(ours, dict) and isinstance(theirs, dict):
        for key in _BOUNDS:
            exact = theirs.get(key)
            if key in ours and isinstance(exact, int) and not isinstance(exact, bool):
                ours[key] = exact
        for key, value in ours.items():
            if key in theirs:
                _copy(value, theirs[key])
    elif isinstance(ours, list) and isinstance(theirs, list) and len(ours) == len(theirs):
        for a, b in zip(ours, theirs, strict=True):
            _copy(a, b)


def exact_bounds(document: dict[str, Any], routes: Iterable[BaseRoute]) -> dict[str, Any]:
    """Replace the float bounds of ``document``'s components by pydantic's integers.

    Examples
    --------
    >>> from pydantic import Field
    >>> from fastapi import FastAPI
    >>> class Body(BaseModel):
    ...     seed: int = Field(le=2**63 - 1)
    >>> app = FastAPI()
    >>> @app.post("/x")
    ... def x(body: Body) -> None: ...
    >>> doc = exact_bounds(app.openapi(), app.routes)
    >>> doc["components"]["schemas"]["Body"]["properties"]["seed"]["maximum"]
    9223372036854775807
    """
    schemas = document.get("components", {}).get("schemas", {})
    for name, exact in _pydantic_schemas(routes).items():
        if name in schemas:
            _copy(schemas[name], exact)
    return document
