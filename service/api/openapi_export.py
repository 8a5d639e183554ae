"""Write the service's OpenAPI document (``make openapi``).

``python -m haarline.service.api.openapi_export [PATH]`` writes it to ``PATH``, by default
``openapi-notes/openapi.json`` under the current directory (the repository's root).
"""

from __future__ import annotations

import json
import sys
import tempfile
from pathlib import Path
from typing import Any

__all__ = ["document", "main"]

TARGET = Path("openapi-notes") / "openapi.json"
"""Where ``main`` writes by default, relative to the current directory."""


def document() -> dict[str, Any]:
    """The OpenAPI document of an app built with default settings."""
    from haarline.service.api.app import create_app
    from haarline.service.settings import Settings

    with tempfile.TemporaryDirectory() as tmp:
        app = create_app(Settings.from_env({}, data_dir=tmp), start_runner=False)
        return app.openapi()


def render() -> str:
    """The document as committed: sorted keys, two-space indent, final newline."""
    return json.dumps(document(), indent=2, sort_keys=True, ensure_ascii=False) + "\n"


def main(argv: list[str] | None = None) -> int:
    """Write the file; print where."""
    args = sys.argv[1:] if argv is None else argv
    target = Path(args[0]) if args else TARGET
    target.write_text(render(), encoding="utf-8")
    sys.stdout.write(f"wrote {target}\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
