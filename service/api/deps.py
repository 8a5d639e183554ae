"""Dependencies of the routes, as ``Annotated`` aliases."""

from __future__ import annotations

from typing import Annotated

from fastapi import Depends, HTTPException, Request
from fastapi.security import HTTPAuthorizationCredentials, HTTPBearer
from haarline.service.api.keys import verify_key
from haarline.service.jobs.executor import Runner
from haarline.service.jobs.store import Store
from haarline.service.settings import Settings

__all__ = [
    "CallerDep",
    "RunnerDep",
    "SettingsDep",
    "StoreDep",
    "get_runner",
    "get_settings",
    "get_store",
]

DEV_OWNER = "dev"

_bearer = HTTPBearer(auto_error=False, description="API key: `Authorization: Bearer hl_…`")


def get_settings(request: Request) -> Settings:
    """The app's settings (override it in tests with ``app.dependency_overrides``)."""
    return request.app.state.settings  # type: ignore[no-any-return]


def get_store(request: Request) -> Store:
    """The app's job store (override it in tests with ``app.dependency_overrides``)."""
    return request.app.state.store  # type: ignore[no-any-return]


def get_runner(request: Request) -> Runner:
    """The app's runner (override it in tests with ``app.dependency_overrides``)."""
    return request.app.state.runner  # type: ignore[no-any-return]


SettingsDep = Annotated[Settings, Depends(get_settings)]
StoreDep = Annotated[Store, Depends(get_store)]
RunnerDep = Annotated[Runner, Depends(get_runner)]


def _caller(
    settings: SettingsDep,
    store: StoreDep,
    credentials: Annotated[HTTPAuthorizationCredentials | None, Depends(_bearer)],
) -> str:
    if settings.dev_mode:
        return DEV_OWNER
    if credentials is None or credentials.scheme.lower() != "bearer":
        raise HTTPException(
            401,
            "an API key is required: Authorization: Bearer hl_…",
            headers={"WWW-Authenticate": "Bearer"},
        )
    key_id = verify_key(store, credentials.credentials)
    if key_id is None:
        raise HTTPException(
            401, "the API key is not valid or was revoked", headers={"WWW-Authenticate": "Bearer"}
        )
    return key_id


CallerDep = Annotated[str, Depends(_caller)]
"""The id of the calling key (``dev`` in development mode)."""
