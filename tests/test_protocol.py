"""The uvicorn internals that service/api/protocol.py relies on are still there.

``protocol.py`` subclasses uvicorn's private ``H11Protocol``; pyproject pins uvicorn to the
range checked here. When a uvicorn release moves these names, this test fails and says
what moved, before a server silently loses its header deadline.
"""

import importlib.metadata
import inspect

from packaging.version import Version


def test_uvicorn_is_in_the_pinned_range():
    version = Version(importlib.metadata.version("uvicorn"))
    assert Version("0.30") <= version < Version("0.56"), (
        f"uvicorn {version} is outside the range whose internals protocol.py was checked "
        "against; re-check service/api/protocol.py and this test, then move the pin"
    )


def test_the_h11_protocol_internals_are_there():
    from uvicorn.protocols.http import h11_impl

    cls = getattr(h11_impl, "H11Protocol", None)
    assert cls is not None, "uvicorn.protocols.http.h11_impl.H11Protocol is gone"
    for name in ("connection_made", "data_received", "on_response_complete", "connection_lost"):
        assert callable(getattr(cls, name, None)), f"H11Protocol.{name} is gone"
    source = inspect.getsource(cls)
    for attribute in ("self.conn", "self.transport", "self.loop"):
        assert attribute in source, f"H11Protocol no longer sets {attribute}"
    assert "h11.Connection" in inspect.getsource(cls.__init__), "H11Protocol.conn is no longer h11"


def test_the_guarded_protocol_arms_and_disarms():
    import asyncio

    from haarline.service.api.protocol import guarded_protocol

    cls = guarded_protocol(0.05)
    assert cls.header_timeout == 0.05
    assert issubclass(
        cls, __import__("uvicorn.protocols.http.h11_impl").protocols.http.h11_impl.H11Protocol
    )
    _ = asyncio
