"""PNG plots of models with inputs: kernel concentration, the kernel matrix, the spectrum.

As in :mod:`haarline.plots.figures` (which documents the palette and the conventions),
each plot has a pure ``*_series`` function giving the drawn numbers and a ``*_png``
function returning PNG bytes; missing report data raises :class:`ValueError`.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np
from haarline.plots import _data as data
from haarline.plots import _style as style
from haarline.plots.scans import _fit_curves, _fits

__all__ = [
    "kernel_matrix_png",
    "kernel_matrix_series",
    "kernel_scan_png",
    "kernel_scan_series",
    "spectrum_png",
    "spectrum_series",
]

Report = Mapping[str, Any]

BLUE = style.PALETTE["blue"]
HAAR = style.PALETTE["vermillion"]
GREEN = style.PALETTE["green"]


def kernel_scan_series(report: Report) -> dict[str, Any]:
    """The numbers drawn by :func:`kernel_scan_png`: the scan points, fits and Haar values.

    ``haar`` is the variance of ``|⟨a|b⟩|²`` for independent Haar-random states at each
    scanned ``n``: ``(N - 1) / (N² (N + 1))`` with ``N = 2^n`` (the Beta(1, N - 1) law).
    """
    points = data.variance_points(report, "points", "kernel")
    kernel = data.need(report, "kernel")
    size = 2.0 ** points["qubits"]
    return {
        "name": str(data.need(report, "circuit", "name")),
        "points": points,
        "haar": (size - 1) / (size**2 * (size + 1)),
        "fits": _fit_curves(kernel.get("fit"), points["qubits"]),
        "reason": str(kernel.get("reason") or ""),
        "pairs": int(kernel["pairs"]),
    }


def kernel_scan_png(report: Report) -> bytes:
    """Kernel variance against qubit count (log axis), with both fits and the Haar value."""
    s = kernel_scan_series(report)
    p = s["points"]
    reason = s["reason"]
    footer = [f"{reason[:1].upper()}{reason[1:].rstrip('.')}."] if reason else []
    with style.house_style():
        fig, rect = style.figure(
            2.95,
            f"{s['name']}: fidelity-kernel variance",
            f"{s['pairs']} random input pairs per point; bars: 95% intervals",
            footer,
        )
        ax = style.panels(fig, rect, titled=False)[0, 0]
        style.variance_errorbars(
            ax, p["qubits"], p, color=BLUE, marker="o", zorder=3, label="Var of k(x, x')"
        )
        ax.plot(p["qubits"], s["haar"], color=GREEN, linestyle=":", label="Haar-random states")
        _fits(ax, s["fits"])
        ax.set_yscale("log")
        style.widen_log_axis(ax, np.concatenate([p["low"], p["high"], s["haar"]]))
        style.integer_ticks(ax, p["qubits"])
        ax.set_xlabel("qubits n")
        ax.set_ylabel("kernel variance (log)")
        ax.legend(loc="best")
        return style.render(fig)


def kernel_matrix_series(report: Report) -> dict[str, Any]:
    """The kernel matrix with rows and columns sorted by label (a stable sort)."""
    matrix = data.need(report, "kernel", "matrix")
    values = np.asarray(matrix["values"], dtype=float)
    labels = list(matrix["labels"])
    order = sorted(range(len(labels)), key=lambda i: str(labels[i]))
    sorted_labels = [labels[i] for i in order]
    bounds = [i for i in range(1, len(order)) if sorted_labels[i] != sorted_labels[i - 1]]
    kernel = data.need(report, "kernel")
    return {
        "name": str(data.need(report, "circuit", "name")),
        "values": values[np.ix_(order, order)],
        "labels": sorted_labels,
        "bounds": bounds,
        "alignment": kernel.get("alignment"),
        "geometric_difference": kernel.get("geometric_difference"),
    }


def kernel_matrix_png(report: Report) -> bytes:
    """The kernel matrix of the labelled rows, sorted by label, with class boundaries."""
    s = kernel_matrix_series(report)
    n = len(s["labels"])
    subtitle = (
        f"{n} labelled rows sorted by label; alignment {s['alignment']:.3f}, geometric "
        f"difference g = {s['geometric_difference']:.3g} against an RBF kernel"
    )
    with style.house_style():
        fig, rect = style.figure(4.2, f"{s['name']}: kernel matrix", subtitle)
        ax = style.panels(fig, rect, titled=False)[0, 0]
        image = ax.imshow(s["values"], vmin=0.0, vmax=1.0, cmap="viridis", interpolation="nearest")
        ax.grid(False)
        for b in s["bounds"]:  # where one label ends and the next begins
            ax.axhline(b - 0.5, color="white", linewidth=1.6)
            ax.axvline(b - 0.5, color="white", linewidth=1.6)
        ax.set_aspect("equal")
        ax.set_xlabel("row (sorted by label)")
        ax.set_ylabel("row (sorted by label)")
        # the colour bar in its own axes right of the matrix, inside the figure
        width = fig.get_figwidth()
        box = ax.get_position()
        ax.set_position((box.x0, box.y0, box.width - 1.1 / width, box.height))
        box = ax.get_position()
        cax = fig.add_axes((box.x1 + 0.25 / width, box.y0, 0.15 / width, box.height))
        fig.colorbar(image, cax=cax, label="k(x_i, x_j)")
        return style.render(fig)


def spectrum_series(report: Report) -> dict[str, Any]:
    """Per feature with sampled weights: frequencies and mean ``|c_ω|²`` (at most 4 features)."""
    features = [
        f for f in data.need(report, "spectrum", "features") if f.get("weights") is not None
    ][:4]
    if not features:
        raise ValueError("the report's spectrum has no sampled weights; nothing to plot")
    return {
        "name": str(data.need(report, "circuit", "name")),
        "cost": str(data.need(report, "spectrum", "cost")),
        "features": [
            {
                "input": int(f["input"]),
                "frequencies": np.asarray(f["frequencies"], dtype=float),
                "weights": np.asarray(f["weights"], dtype=float),
                "samples": int(f["samples"]),
            }
            for f in features
        ],
    }


def spectrum_png(report: Report) -> bytes:
    """Bars of the mean Fourier weight at each reachable frequency, one panel per feature."""
    s = spectrum_series(report)
    count = len(s["features"])
    with style.house_style():
        fig, rect = style.figure(
            2.4 * count + 0.4 * (count - 1),
            f"{s['name']}: Fourier spectrum",
            f"mean |c_ω|² of ⟨{s['cost']}⟩ over {s['features'][0]['samples']} random parameter "
            "draws at every frequency the encoding can reach (log axis)",
        )
        axes = style.panels(fig, rect, count, 1, row_gap=0.75)
        for ax, f in zip(axes[:, 0], s["features"], strict=True):
            weights = np.maximum(f["weights"], 1e-300)
            width = 0.6 * (np.min(np.diff(f["frequencies"])) if len(f["frequencies"]) > 1 else 1)
            ax.bar(f["frequencies"], weights, width=width, color=BLUE)
            ax.set_yscale("log")
            if np.allclose(f["frequencies"], np.round(f["frequencies"])):
                style.integer_ticks(ax, f["frequencies"])
            ax.set_title(f"x_{f['input']}")
            ax.set_xlabel("frequency ω")
            ax.set_ylabel("mean |c_ω|²")
        return style.render(fig)
