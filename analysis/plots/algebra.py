"""PNG plot of the Lie-algebraic diagnosis: algebra dimension against qubit count.

As in :mod:`haarline.plots.figures` (which documents the palette and conventions), a pure
:func:`algebra_dimension_series` gives the drawn numbers and
:func:`algebra_dimension_png` draws them; a report without ``lie`` raises
:class:`ValueError` naming the key.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
from haarline.plots import _data as data
from haarline.plots import _style as style

__all__ = ["algebra_dimension_png", "algebra_dimension_series"]

BLUE = style.PALETTE["blue"]
SU = style.PALETTE["vermillion"]
SQUARE = style.PALETTE["purple"]
FIT = style.PALETTE["green"]


def algebra_dimension_series(report: Mapping[str, Any]) -> dict[str, Any]:
    """The numbers drawn by :func:`algebra_dimension_png`.

    Parameters
    ----------
    report : mapping
        A report whose ``lie`` key holds :meth:`haarline.lie.diagnosis.LieDiagnosis.to_dict`.

    Returns
    -------
    dict
        ``name``; ``qubits``, ``dimension`` (float arrays) and ``complete``, ``full``
        (boolean arrays), one entry per scanned qubit count (an incomplete entry is a
        lower bound); ``guides``: ``qubits`` (a fine grid over the scan), ``su``
        (``4**n - 1``) and ``square`` (``n**2``); ``fit``: ``None`` or the better growth
        fit with its ``model``, ``label`` and curve ``qubits``, ``dimension`` (over the
        exact points only: no extrapolation); ``cap``,
        ``layers_rule`` and ``summary``.

    Raises
    ------
    ValueError
        If ``lie`` or ``lie.points`` is missing or empty.
    """
    lie = data.need(report, "lie")
    points = data.need(report, "lie", "points")
    if not isinstance(points, Sequence) or not points:
        raise ValueError("the report's 'lie.points' is empty; nothing to plot")
    circuit = report.get("circuit")
    name = circuit.get("name") if isinstance(circuit, Mapping) else None
    qubits = np.array([float(p["qubits"]) for p in points])
    grid = np.linspace(qubits.min(), qubits.max(), 50) if qubits.size > 1 else qubits.copy()
    exact = qubits[[bool(p["complete"]) for p in points]]
    span = np.linspace(exact.min(), exact.max(), 50) if exact.size > 1 else exact
    fit = None
    growth = lie.get("growth")
    if isinstance(growth, Mapping) and growth.get("better") in ("polynomial", "exponential"):
        model = str(growth["better"])
        f = growth[model]
        scale = style.fmt(float(np.exp(f["intercept"])), 2)
        if model == "polynomial":
            curve = np.exp(f["intercept"]) * span ** f["degree"]
            label = f"polynomial fit: {scale}·$n^{{{f['degree']:.2f}}}$"
        else:
            curve = np.exp(f["intercept"]) * f["base"] ** span
            label = f"exponential fit: {scale}·${f['base']:.2f}^n$"
        fit = {"model": model, "label": label, "qubits": span, "dimension": curve}
    return {
        "name": str(name or "circuit"),
        "qubits": qubits,
        "dimension": np.array([float(p["dimension"]) for p in points]),
        "complete": np.array([bool(p["complete"]) for p in points]),
        "full": np.array([bool(p["full"]) for p in points]),
        "guides": {"qubits": grid, "su": 4.0**grid - 1.0, "square": grid**2},
        "fit": fit,
        "cap": int(lie.get("cap", 0)),
        "layers_rule": str(lie.get("layers_rule", "")),
        "summary": str(lie.get("summary", "")),
    }


def algebra_dimension_png(report: Mapping[str, Any]) -> bytes:
    """Dynamical Lie algebra dimension against qubit count on a log axis, as PNG bytes.

    Filled circles are exact dimensions, open triangles lower bounds (the closure stopped
    at its cap). The dimension of su(2^n), ``4^n - 1``, is dashed and ``n^2`` dotted, so
    exponential and polynomial growth read at a glance; the better growth fit is drawn
    thin. Each point is labelled with its dimension.

    Parameters
    ----------
    report : mapping
        A report with ``lie``.

    Returns
    -------
    bytes
        A PNG, 900 px wide.

    Raises
    ------
    ValueError
        As :func:`algebra_dimension_series`.
    """
    s = algebra_dimension_series(report)
    n, d, done = s["qubits"], s["dimension"], s["complete"]
    g = s["guides"]
    rule = {"saturate": "layers raised until no new generator appears"}.get(
        s["layers_rule"], f"layers: {s['layers_rule']}"
    )
    subtitle = f"closure under commutators, capped at {s['cap']} elements; {rule}"
    footer = [s["summary"].rstrip(".") + "."] if s["summary"] else []
    with style.house_style():
        fig, rect = style.figure(3.0, f"{s['name']}: dynamical Lie algebra", subtitle, footer)
        ax = style.panels(fig, rect, titled=False)[0, 0]
        ax.plot(
            g["qubits"],
            g["su"],
            color=SU,
            linewidth=1.2,
            linestyle=(0, (5, 2)),
            label="su($2^n$): $4^n$ − 1",
        )
        ax.plot(g["qubits"], g["square"], color=SQUARE, linewidth=1.2, linestyle=":", label="$n^2$")
        if s["fit"] is not None:
            f = s["fit"]
            ax.plot(f["qubits"], f["dimension"], color=FIT, linewidth=0.9, label=f["label"])
        if done.any():
            ax.plot(n[done], d[done], color=BLUE, linewidth=0.8, alpha=0.6, zorder=2)
            ax.plot(n[done], d[done], "o", color=BLUE, zorder=3, label="DLA dimension")
        if (~done).any():
            ax.plot(
                n[~done],
                d[~done],
                "^",
                color=BLUE,
                markerfacecolor="white",
                markersize=6,
                zorder=3,
                label="at least (closure stopped at the cap)",
            )
        for x, y, exact in zip(n, d, done, strict=True):
            text = f"{int(y)}" if exact else f"≥{int(y)}"
            ax.annotate(
                text,
                (x, y),
                xytext=(0, 7),
                textcoords="offset points",
                ha="center",
                fontsize=6.5,
                color=style.INK_SOFT,
            )
        ax.set_yscale("log")
        low = float(min(d[d > 0].min(initial=1.0), g["square"].min()))
        high = float(max(d.max(), g["su"].max()))
        ax.set_ylim(low / 2.0, high * 4.0)
        style.integer_ticks(ax, n)
        ax.set_xlabel("qubits n")
        ax.set_ylabel("dimension (log)")
        ax.legend(loc="upper left")
        return style.render(fig)
