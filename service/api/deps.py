"""Dependencies of the routes, as ``Annotated`` aliases.

The key check is here once: :data:`CallerDep` (a key is required) for the API routes, and
:data:`KeyOwnerDep` (a key if one is sent) for the page routes, which a share token opens
too. Both read the same ``Authorization: Bearer`` header through one security scheme.
"""

from __future__ import annotations

from typing import Annotated

from fastapi import Depends, HTTPException, Request
from fastapi.security import HTTPAuthorizationCredentials, HTTPBearer
from haarline.service.api.keys import verify_key
from haarline.service.api.tokens import load_secret
from haarline.service.jobs.executor import Runner
from haarline.service.jobs.store import Store
from haarline.service.settings import Settings

__all__ = [
    "DEV_OWNER",
    "CallerDep",
    "KeyOwnerDep",
    "PageSecretDep",
    "RunnerDep",
    "SettingsDep",
    "StoreDep",
    "get_page_secret",
    "get_runner",
    "get_settings",
    "get_store",
]

DEV_OWNER = "dev"
"""The one owner of every job in development mode (no keys are checked)."""

_bearer = HTTPBearer(auto_error=False, description="API key: `Authorization: Bearer hl_…`")


def get_settings(request: Request) -> Settings:
    """The app's settings (override it in tests with ``app.dependency_overrides``)."""
    settings: Settings = request.app.state.settings
    return settings


def get_store(request: Request) -> Store:
    """The app's job store (override it in tests with ``app.dependency_overrides``)."""
    store: Store = request.app.state.store
    return store


def get_runner(request: Request) -> Runner:
    """The app's runner (override it in tests with ``app.dependency_overrides``)."""
    runner: Runner = request.app.state.runner
    return runner


SettingsDep = Annotated[Settings, Depends(get_settings)]
StoreDep = Annotated[Store, Depends(get_store)]
RunnerDep = Annotated[Runner, Depends(get_runner)]


def get_page_secret(request: Request, settings: SettingsDep) -> bytes:
    """The key that signs share links: ``HAARLINE_PAGE_SECRET``, else the data directory's.

    Read (or created) once, on the first link made or checked.
    """
    state = request.app.state
    secret: bytes | None = getattr(state, "page_secret", None)
    if secret is None:
        configured = settings.page_secret
        secret = load_secret(
            settings.data_dir, None if configured is None else configured.get_secret_value()
        )
        state.page_secret = secret
    return secret


PageSecretDep = Annotated[bytes, Depends(get_page_secret)]


def _unauthorized(detail: str) -> HTTPException:
    return HTTPException(401, detail, headers={"WWW-Authenticate": "Bearer"})


def _key_owner(
    settings: SettingsDep,
    store: StoreDep,
    credentials: Annotated[HTTPAuthorizationCredentials | None, Depends(_bearer)],
) -> str | None:
    if settings.dev_mode:
        return DEV_OWNER
    if credentials is None:
        return None
    key_id = verify_key(store, credentials.credentials)
    if key_id is None:
        raise _unauthorized("the API key is not valid or was revoked")
    return key_id


KeyOwnerDep = Annotated[str | None, Depends(_key_owner)]
"""The id of the calling key, ``None`` when no Bearer key was sent (``dev`` in development
mode); a key that was sent but is not valid is a 401."""


def _caller(owner: KeyOwnerDep) -> str:
    if owner is None:
        raise _unauthorized("an API key is required: Authorization: Bearer hl_…")
    return owner


CallerDep = Annotated[str, Depends(_caller)]
"""The id of the calling key (``dev`` in development mode); no key is a 401."""
