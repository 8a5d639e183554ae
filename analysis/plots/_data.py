"""Reading a report for the plots: values by key path, with errors that name the key.

A report (:func:`haarline.analyze`) is plain JSON data; a plot that needs a key the
report lacks raises :class:`ValueError` naming the dotted key path and, for a metric
that was not computed, how to get it.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
from numpy.typing import NDArray

__all__ = ["Floats", "Report", "floats", "interval", "need", "variance_points"]

Report = Mapping[str, Any]
Floats = NDArray[np.float64]

_HOW = {
    "expressibility": "analyze with the expressibility metric",
    "entanglement": "analyze with the entanglement metric",
    "trainability": "analyze with the trainability metric",
    "sweep": "analyze with --layers-sweep",
}


def need(report: Report, *path: str) -> Any:
    """``report[path[0]][path[1]]…``; a missing or null key raises naming its dotted path.

    Raises
    ------
    ValueError
        ``the report has no 'expressibility.haar' (missing or null); analyze with …``.
    """
    node: Any = report
    for i, key in enumerate(path):
        if not isinstance(node, Mapping) or node.get(key) is None:
            dotted = ".".join(path[: i + 1])
            how = f"; {_HOW[path[0]]}" if path[0] in _HOW else ""
            raise ValueError(f"the report has no {dotted!r} (missing or null){how}")
        node = node[key]
    return node


def floats(report: Report, *path: str) -> Floats:
    """The non-empty list of finite numbers at ``path``, as a float array."""
    where = ".".join(path)
    try:
        arr = np.asarray(need(report, *path), dtype=float)
    except (TypeError, ValueError) as exc:
        if str(exc).startswith("the report has no"):
            raise
        raise ValueError(f"report key {where!r}: expected a list of numbers") from exc
    if arr.ndim != 1 or arr.size == 0 or not np.all(np.isfinite(arr)):
        raise ValueError(f"report key {where!r}: expected a non-empty list of finite numbers")
    return arr


def interval(report: Report, *path: str) -> tuple[float, float]:
    """The ``[low, high]`` pair at ``path``."""
    arr = floats(report, *path)
    if arr.size != 2:
        raise ValueError(
            f"report key {'.'.join(path)!r}: expected [low, high], got {arr.size} numbers"
        )
    return float(arr[0]), float(arr[1])


def variance_points(report: Report, key: str, metric: str = "trainability") -> dict[str, Floats]:
    """Columns ``qubits``, ``layers``, ``variance``, ``low``, ``high`` of ``metric.key``."""
    raw = need(report, metric, key)
    if not isinstance(raw, Sequence) or isinstance(raw, str):
        raise ValueError(f"report key '{metric}.{key}': expected a list of points")
    names = ("qubits", "layers", "variance", "interval")
    cols: dict[str, list[float]] = {k: [] for k in ("qubits", "layers", "variance", "low", "high")}
    for i, p in enumerate(raw):
        if not isinstance(p, Mapping) or any(p.get(k) is None for k in names):
            raise ValueError(
                f"report key '{metric}.{key}[{i}]': expected qubits, layers, variance and interval"
            )
        for k in names[:3]:
            cols[k].append(float(p[k]))
        cols["low"].append(float(p["interval"][0]))
        cols["high"].append(float(p["interval"][1]))
    return {k: np.array(v, dtype=float) for k, v in cols.items()}
