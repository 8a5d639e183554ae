"""Write the service's OpenAPI document to ``openapi-notes/openapi.json`` (``make openapi``)."""

from __future__ import annotations

import json
import sys
import tempfile
from pathlib import Path
from typing import Any

__all__ = ["document", "main"]

TARGET = Path(__file__).resolve().parent.parent / "openapi-notes" / "openapi.json"


def document() -> dict[str, Any]:
    """The OpenAPI document of an app built with default settings."""
    from .app import create_app
    from .settings import Settings

    with tempfile.TemporaryDirectory() as tmp:
        app = create_app(Settings.from_env({}, data_dir=tmp), start_runner=False)
        return app.openapi()


def render() -> str:
    """The document as committed: sorted keys, two-space indent, final newline."""
    return json.dumps(document(), indent=2, sort_keys=True, ensure_ascii=False) + "\n"


def main() -> int:
    """Write the file; print where."""
    TARGET.write_text(render(), encoding="utf-8")
    sys.stdout.write(f"wrote {TARGET}\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
