"""Shared fixtures of the service tests: settings, app, client, key and a live server.

Every test gets its own data directory under ``tmp_path``:

- ``make_settings(**overrides)``: validated settings (one worker unless told otherwise) on
  ``tmp_path / "data"`` (a second call: ``data2``, and so on);
- ``make_app(runner=True, **overrides)``: ``create_app`` on those settings; ``runner=False``
  gives an app whose jobs stay queued (fast API tests);
- ``make_client(runner=True, key="alice", **overrides)``: a started test client that sends
  a fresh key of that name (``key=None``: no key); closed after the test;
- ``client`` (jobs run) and ``quiet`` (jobs stay queued): ``make_client()`` with the
  defaults; ``bearer(app, name)`` is the ``Authorization`` header of another fresh key;
- ``live_server``: a real ``haarline serve`` on loopback (:class:`live_server.LiveServer`)
  with ``.client(key)`` and ``.key()``; ``live_client`` is a client of it with a fresh key.
"""

import sys
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import pytest

# tests import the reference helpers beside them
sys.path.insert(0, str(Path(__file__).parent))

FIXTURES = Path(__file__).parent / "fixtures"


def bench_module(name: str):
    """A module of bench/ by its file (bench/ is not put on the import path)."""
    import importlib.util

    path = Path(__file__).resolve().parents[1] / "bench" / f"{name}.py"
    spec = importlib.util.spec_from_file_location(f"bench_{name}", path)
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def bearer(app: Any, name: str = "bob") -> dict[str, str]:
    """The Authorization header of a fresh key in ``app``'s store."""
    from haarline.service.api.keys import issue_key

    return {"Authorization": f"Bearer {issue_key(app.state.store, name)[1]}"}


@pytest.fixture
def make_settings(tmp_path: Path) -> Callable[..., Any]:
    from haarline.service.settings import Settings

    made = [0]

    def make(**overrides: Any) -> Settings:
        made[0] += 1  # a second app in one test gets a directory of its own: data2, data3…
        overrides.setdefault(
            "data_dir", str(tmp_path / ("data" if made[0] == 1 else f"data{made[0]}"))
        )
        overrides.setdefault("workers", 1)
        return Settings.from_env({}, **overrides)

    return make


@pytest.fixture
def settings(make_settings: Callable[..., Any]) -> Any:
    return make_settings()


@pytest.fixture
def make_app(make_settings: Callable[..., Any]) -> Callable[..., Any]:
    from haarline.service.api.app import create_app

    def make(*, runner: bool = True, **overrides: Any) -> Any:
        return create_app(make_settings(**overrides), start_runner=runner)

    return make


@pytest.fixture
def app(make_app: Callable[..., Any]) -> Any:
    """An app whose dispatcher does not run."""
    return make_app(runner=False)


@pytest.fixture
def make_client(make_app: Callable[..., Any]) -> Iterator[Callable[..., Any]]:
    from fastapi.testclient import TestClient

    opened: list[TestClient] = []

    def make(
        *,
        runner: bool = True,
        key: str | None = "alice",
        raise_server_exceptions: bool = True,
        **overrides: Any,
    ) -> TestClient:
        client = TestClient(
            make_app(runner=runner, **overrides), raise_server_exceptions=raise_server_exceptions
        )
        client.__enter__()
        opened.append(client)
        if key is not None:
            client.headers.update(bearer(client.app, key))
        return client

    yield make
    for client in reversed(opened):
        client.__exit__(None, None, None)


@pytest.fixture
def client(make_client: Callable[..., Any]) -> Any:
    """A started app whose jobs run, with the key "alice"."""
    return make_client()


@pytest.fixture
def quiet(make_client: Callable[..., Any]) -> Any:
    """A started app whose jobs stay queued, with the key "alice"."""
    return make_client(runner=False)


@pytest.fixture
def live_server(tmp_path: Path) -> Iterator[Any]:
    """A real server process on loopback, one worker, on this test's data directory."""
    from live_server import LiveServer

    with LiveServer(tmp_path / "live") as server:
        yield server


@pytest.fixture
def live_client(live_server: Any) -> Iterator[Any]:
    """An HTTP client of ``live_server`` with a fresh key; closed after the test."""
    with live_server.client(live_server.key()) as c:
        yield c
