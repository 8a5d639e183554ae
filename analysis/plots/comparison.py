"""A PNG comparing several circuits: expressibility against entanglement, variance curves.

As in :mod:`haarline.plots.figures` (which documents the palette and the conventions),
:func:`comparison_series` gives the drawn numbers and :func:`comparison_png` the PNG.
Each circuit keeps one colour and one marker in both panels.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

import numpy as np
from haarline.metrics.haar import haar_meyer_wallach
from haarline.plots import _data as data
from haarline.plots import _style as style

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure
    from matplotlib.transforms import Bbox

__all__ = ["comparison_files", "comparison_png", "comparison_series"]

Report = Mapping[str, Any]


def _unique(names: list[str], layers: list[int]) -> list[str]:
    """Circuit names made unique: by layer count where that tells repeats apart, else by number."""
    out = []
    for name, lay in zip(names, layers, strict=True):
        twins = [k for n, k in zip(names, layers, strict=True) if n == name]
        out.append(f"{name} ({style.plural(lay, 'layer')})" if len(set(twins)) > 1 else name)
    seen: dict[str, int] = {}
    final = []
    for label in out:
        seen[label] = seen.get(label, 0) + 1
        final.append(f"{label} #{seen[label]}" if out.count(label) > 1 else label)
    return final


def _look(index: int) -> tuple[str, str]:
    """Colour and marker of the circuit at ``index``; no pair repeats before 49 circuits."""
    k = len(style.SERIES)
    return style.SERIES[index % k], style.MARKERS[(index + index // k) % len(style.MARKERS)]


def comparison_series(reports: Sequence[Report]) -> list[dict[str, Any]]:
    """The numbers drawn by :func:`comparison_png`, one dict per report, in order.

    Parameters
    ----------
    reports : sequence of mapping
        Reports of :func:`haarline.analyze`.

    Returns
    -------
    list of dict
        ``label`` (the circuit name, made unique with its layer count or a number),
        ``qubits``, ``layers``; ``kl``, ``kl_interval``, ``pairs`` and ``meyer_wallach``,
        ``meyer_wallach_interval``, ``samples`` (``None`` where the report lacks the
        metric); ``variance``: ``None`` or the arrays ``qubits``, ``layers``,
        ``variance``, ``low``, ``high`` of ``trainability.points``; ``grad_samples``.

    Raises
    ------
    ValueError
        If ``reports`` is empty or a report lacks ``circuit.name``.
    """
    if not reports:
        raise ValueError("comparison_png needs at least one report; got none")
    out: list[dict[str, Any]] = []
    for report in reports:
        expr = report.get("expressibility") or {}
        ent = report.get("entanglement") or {}
        train = report.get("trainability") or {}
        has_expr, has_ent = expr.get("kl") is not None, ent.get("meyer_wallach") is not None
        out.append(
            {
                "label": str(data.need(report, "circuit", "name")),
                "qubits": int(data.need(report, "circuit", "qubits")),
                "layers": int(data.need(report, "circuit", "layers")),
                # the bias-corrected KL: the value that lies inside its interval
                "kl": float(expr["kl_corrected"]) if has_expr else None,
                "kl_interval": (
                    data.interval(report, "expressibility", "interval") if has_expr else None
                ),
                "pairs": expr.get("pairs"),
                "meyer_wallach": float(ent["meyer_wallach"]) if has_ent else None,
                "meyer_wallach_interval": (
                    data.interval(report, "entanglement", "interval") if has_ent else None
                ),
                "samples": ent.get("samples"),
                "variance": (
                    data.variance_points(report, "points") if train.get("points") else None
                ),
                "grad_samples": train.get("samples"),
            }
        )
    labels = _unique([e["label"] for e in out], [e["layers"] for e in out])
    for e, label in zip(out, labels, strict=True):
        e["label"] = label
    return out


def _sizes_text(entries: Sequence[Mapping[str, Any]]) -> str:
    def one(e: Mapping[str, Any]) -> str:
        parts = [
            f"{e['pairs']} pairs" if e["kl"] is not None else "",
            f"{e['samples']} entanglement samples" if e["meyer_wallach"] is not None else "",
            f"{e['grad_samples']} gradient samples per point" if e["variance"] is not None else "",
        ]
        return ", ".join(p for p in parts if p) or "no sampled metrics"

    groups: dict[str, list[str]] = {}
    for e in entries:
        groups.setdefault(one(e), []).append(e["label"])
    if len(groups) == 1:
        return f"each circuit: {next(iter(groups))}; bars: 95% intervals"
    each = "; ".join(f"{text} ({', '.join(names)})" for text, names in groups.items())
    return f"{each}; bars: 95% intervals"


def comparison_png(reports: Sequence[Report]) -> bytes:
    """Several circuits in one figure, as PNG bytes.

    Top panel: expressibility (KL from Haar, log axis) against Meyer-Wallach entanglement,
    one labelled point per circuit with its intervals as bars. Bottom panel, for the
    reports with ``trainability``: their gradient-variance curves against qubit count on
    one log axis. A panel without data is left out.

    Parameters
    ----------
    reports : sequence of mapping
        Reports of :func:`haarline.analyze`; each needs ``circuit.name``.

    Returns
    -------
    bytes
        A PNG, 900 px wide.

    Raises
    ------
    ValueError
        If ``reports`` is empty, or no report has both ``expressibility`` and
        ``entanglement`` nor ``trainability.points``.
    """
    entries = comparison_series(reports)
    scatter = [e for e in entries if e["kl"] is not None and e["meyer_wallach"] is not None]
    curves = [e for e in entries if e["variance"] is not None]
    if not _drawable(entries):
        raise ValueError(
            "no report has both 'expressibility' and 'entanglement', nor "
            "'trainability.points'; nothing to compare"
        )
    look = {e["label"]: _look(i) for i, e in enumerate(entries)}
    key = 0.2 + 0.16 * math.ceil((len(entries) + 1) / 3)
    heights = [h for h, used in ((3.0, scatter), (2.5, curves)) if used]
    with style.house_style():
        title = f"{style.plural(len(entries), 'circuit')} compared"
        fig, rect = style.figure(sum(heights) + key, title, _sizes_text(entries))
        axes = list(
            style.panels(fig, rect, len(heights), 1, heights=heights, row_gap=0.8, reserve=key)[
                :, 0
            ]
        )
        if scatter:
            _scatter(axes[0], scatter, look)
        if curves:
            _curves(axes[-1], curves, look, {e["label"] for e in scatter})
        style.legend_strip(fig, rect, key, axes, ncols=3, first=[e["label"] for e in entries])
        if scatter:
            _label_points(fig, axes[0], scatter)
        return style.render(fig)


def _scatter(ax: Axes, entries: Sequence[Mapping[str, Any]], look: Mapping[str, Any]) -> None:
    for e in entries:
        colour, marker = look[e["label"]]
        x, y = max(e["kl"], 1e-9), e["meyer_wallach"]
        (xlo, xhi), (ylo, yhi) = e["kl_interval"], e["meyer_wallach_interval"]
        xerr = [[max(x - max(xlo, x / 20), 0.0)], [max(xhi - x, 0.0)]]
        yerr = [[max(y - ylo, 0.0)], [max(yhi - y, 0.0)]]
        ax.errorbar(
            [x],
            [y],
            xerr=xerr,
            yerr=yerr,
            color=colour,
            marker=marker,
            markersize=5.5,
            linestyle="none",
            label=e["label"],
            zorder=3,
        )
    qubits = sorted({e["qubits"] for e in entries})
    if len(qubits) == 1:
        ax.axhline(
            haar_meyer_wallach(qubits[0]),
            color=style.PALETTE["vermillion"],
            linewidth=1.1,
            linestyle=(0, (4, 2)),
            label=f"Haar-random Meyer-Wallach ({style.plural(qubits[0], 'qubit')})",
        )
    xs = [max(e["kl"], 1e-9) for e in entries]
    ys = [e["meyer_wallach"] for e in entries]
    ax.set_xscale("log")
    ax.set_xlim(min(xs) / 4.0, max(xs) * 4.0)
    ax.set_ylim(min(-0.03, min(ys) - 0.1), max(1.03, max(ys) + 0.1))
    ax.set_xlabel("KL from Haar (nats, log; further left is more expressive)")
    ax.set_ylabel("Meyer-Wallach Q (mean)")
    ax.set_title("expressibility against entanglement")


def _curves(
    ax: Axes, entries: Sequence[Mapping[str, Any]], look: Mapping[str, Any], named: set[str]
) -> None:
    for e in entries:
        colour, marker = look[e["label"]]
        order = np.argsort(e["variance"]["qubits"], kind="stable")
        p = {k: v[order] for k, v in e["variance"].items()}
        ok = p["variance"] > 0
        ax.plot(p["qubits"][ok], p["variance"][ok], color=colour, linewidth=0.9, alpha=0.7)
        label = None if e["label"] in named else e["label"]  # one legend entry per circuit
        style.variance_errorbars(ax, p["qubits"], p, color=colour, marker=marker, label=label)
    ax.set_yscale("log")
    style.integer_ticks(ax, np.concatenate([e["variance"]["qubits"] for e in entries]))
    ax.set_xlabel("qubits n")
    ax.set_ylabel("gradient variance (log)")
    ax.set_title("gradient variance against qubit count")


_SPOTS = (
    (7, 5, "left", "bottom"),
    (7, -5, "left", "top"),
    (-7, 5, "right", "bottom"),
    (-7, -5, "right", "top"),
    (0, 9, "center", "bottom"),
    (0, -9, "center", "top"),
)
"""Offsets (points) and alignments tried, in order, for a point's label."""


def _label_points(fig: Figure, ax: Axes, entries: Sequence[Mapping[str, Any]]) -> None:
    """Write each label beside its point where it overlaps no other label or point."""
    from matplotlib.transforms import Bbox

    renderer = fig.canvas.get_renderer()  # type: ignore[attr-defined]
    frame = ax.get_window_extent(renderer)
    where = [(max(e["kl"], 1e-9), e["meyer_wallach"]) for e in entries]
    dots = [ax.transData.transform(xy) for xy in where]
    marks = [Bbox.from_extents(d[0] - 5, d[1] - 5, d[0] + 5, d[1] + 5) for d in dots]
    placed: list[Bbox] = []
    for xy, e in zip(where, entries, strict=True):
        best, best_cost = None, math.inf
        for dx, dy, ha, va in _SPOTS:
            text = ax.annotate(
                e["label"],
                xy,
                xytext=(dx, dy),
                textcoords="offset points",
                ha=ha,
                va=va,
                fontsize=7,
                color=style.INK,
            )
            text.set_in_layout(False)
            box = text.get_window_extent(renderer)
            cost = sum(_overlap(box, other) for other in [*placed, *marks])
            inside = frame.x0 <= box.x0 and box.x1 <= frame.x1 and frame.y0 <= box.y0
            cost += 0.0 if inside and box.y1 <= frame.y1 else 1e6
            if cost < best_cost:
                if best is not None:
                    best.remove()
                best, best_cost = text, cost
            else:
                text.remove()
            if cost == 0:
                break
        if best is not None:
            placed.append(best.get_window_extent(renderer))


def _overlap(a: Bbox, b: Bbox) -> float:
    w = min(a.x1, b.x1) - max(a.x0, b.x0)
    h = min(a.y1, b.y1) - max(a.y0, b.y0)
    return float(w * h) if w > 0 and h > 0 else 0.0


def _drawable(entries: Sequence[dict[str, Any]]) -> bool:
    return any(
        (e["kl"] is not None and e["meyer_wallach"] is not None) or e["variance"] is not None
        for e in entries
    )


def comparison_files(reports: Sequence[Report]) -> dict[str, bytes]:
    """``{"comparison.png": …}`` when the reports support the plot, else ``{}``.

    Examples
    --------
    >>> c = {"name": "a", "qubits": 2, "layers": 1, "parameters": 2}
    >>> comparison_files([{"circuit": c, "capacity": {"qfi_rank": 2}}])
    {}
    """
    if not reports or not _drawable(comparison_series(reports)):
        return {}
    return {"comparison.png": comparison_png(reports)}
