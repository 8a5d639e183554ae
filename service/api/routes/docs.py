"""The interactive API docs, served from files installed with the package (never a CDN).

Swagger UI and ReDoc come from the ``fastapi-offline`` distribution, a PyPI package that
ships their built files (``fastapi_offline/static``); the app serves them under
:data:`ASSETS` and ``/docs`` and ``/redoc`` point there, so the docs work on a network
without internet. ``tests/test_browser.py`` loads ``/docs`` in headless Chromium with every
host but the server's unreachable and finds the operations listed.
"""

from __future__ import annotations

from importlib.resources import files
from pathlib import Path

from fastapi import APIRouter
from fastapi.openapi.docs import get_redoc_html, get_swagger_ui_html
from fastapi.responses import HTMLResponse
from fastapi.staticfiles import StaticFiles

__all__ = ["ASSETS", "assets", "router"]

ASSETS = "/docs-assets"
"""Where the Swagger UI and ReDoc files are served."""

router = APIRouter(include_in_schema=False)


def assets() -> StaticFiles:
    """The installed Swagger UI and ReDoc files, as a static-files app to mount at ASSETS."""
    return StaticFiles(directory=Path(str(files("fastapi_offline") / "static")))


@router.get("/docs")
def swagger() -> HTMLResponse:
    """Swagger UI on the app's own OpenAPI document."""
    return get_swagger_ui_html(
        openapi_url="/openapi.json",
        title="haarline API",
        swagger_js_url=f"{ASSETS}/swagger-ui-bundle.js",
        swagger_css_url=f"{ASSETS}/swagger-ui.css",
        swagger_favicon_url=f"{ASSETS}/favicon.png",
    )


@router.get("/redoc")
def redoc() -> HTMLResponse:
    """ReDoc on the app's own OpenAPI document (no web fonts fetched)."""
    return get_redoc_html(
        openapi_url="/openapi.json",
        title="haarline API",
        redoc_js_url=f"{ASSETS}/redoc.standalone.js",
        redoc_favicon_url=f"{ASSETS}/favicon.png",
        with_google_fonts=False,
    )
