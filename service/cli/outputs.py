"""Writing an analysis or a comparison to a directory (the ``--out DIR`` option)."""

from __future__ import annotations

import json
import os
from pathlib import Path
from typing import Any

import haarline
from haarline.service.api.page import comparison_page, report_page

__all__ = ["write_analysis", "write_comparison"]


def _target(directory: str) -> Path:
    path = Path(directory)
    try:
        path.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise haarline.InputError(
            [haarline.Problem("--out", f"cannot create {directory!r}: {exc.strerror}")]
        ) from None
    if not os.access(path, os.W_OK):
        raise haarline.InputError([haarline.Problem("--out", f"{directory!r} is not writable")])
    return path


def _write(path: Path, data: bytes) -> None:
    tmp = path.with_name(path.name + ".tmp")
    tmp.write_bytes(data)
    tmp.replace(path)  # never leave a half-written file under the final name


def write_analysis(
    directory: str,
    report: dict[str, Any],
    program: haarline.Program,
    *,
    circuit: haarline.Circuit | None = None,
    source: str = "circuit.json",
) -> list[str]:
    """Write ``report.json``, every PNG, ``summary.md`` and ``report.html``; return PNG names."""
    path = _target(directory)
    pngs = haarline.plot_files(report, program)
    for name, data in pngs.items():
        _write(path / name, data)
    images = sorted(pngs)
    _write(path / "report.json", json.dumps(report, indent=2, allow_nan=False).encode())
    _write(
        path / "summary.md",
        haarline.to_markdown(report, images=images, page="report.html").encode(),
    )
    description = circuit.model_dump(mode="json", exclude_none=True) if circuit else None
    _write(
        path / "report.html",
        report_page(report, pngs, description=description, source=source).encode(),
    )
    return images


def write_comparison(directory: str, result: dict[str, Any]) -> list[str]:
    """Write ``comparison.json``, ``comparison.md`` and the comparison plot."""
    path = _target(directory)
    pngs = haarline.comparison_files(result["reports"])
    for name, data in pngs.items():
        _write(path / name, data)
    images = sorted(pngs)
    _write(path / "comparison.json", json.dumps(result, indent=2, allow_nan=False).encode())
    _write(path / "comparison.md", haarline.compare_markdown(result, images=images).encode())
    _write(path / "comparison.html", comparison_page(result, pngs).encode())
    return images
