"""PNG plots of a report: fidelities against Haar, entanglement, and the files a report gets.

Every plot comes in two parts. A pure ``*_series`` function reads the report dict of
:func:`haarline.analyze` (keys as in the README, "What the numbers mean") and returns the
numbers that will be drawn, as plain floats and numpy arrays; a ``*_png`` function draws
them and returns PNG bytes. Tests check the series against the report, so what a figure
shows is tested without looking at pixels. A report without the data a plot needs raises
:class:`ValueError` naming the missing key.

This module draws the fidelity histogram and the Meyer-Wallach distribution and gathers
all of a report's figures in :func:`plot_files`; :mod:`haarline.plots.scans` draws the
gradient-variance scan and the layer sweep, :mod:`haarline.plots.comparison` several
circuits together, and :mod:`haarline.plots.diagram` the circuit itself.

Figures are 900 px wide at 150 dpi, drawn with matplotlib's Agg canvas only (never
pyplot, never a window). The PNG carries no software or date metadata, so the same report
gives the same bytes. Each figure has a bold title naming the circuit, a grey line with
the sample sizes, labelled axes, a legend and, where it helps, notes under the axes.

Palette
-------
Colours come from the eight-colour set of Okabe & Ito [1]_, chosen to stay distinct under
the common forms of colour-vision deficiency, without its yellow (too pale on white):

==============  =========  ===============================================
role            colour     use
==============  =========  ===============================================
circuit         #0072B2    the circuit's own numbers (blue)
Haar            #D55E00    Haar-random reference values (vermillion, dashed or stepped)
exponential     #D55E00    exponential fit of the variance scan (solid)
power law       #CC79A7    power-law fit (reddish purple, dashed)
depth scan      #009E73    variance against layers; Meyer-Wallach in sweeps (green)
bias, notes     #5F5F5F    plug-in bias, secondary text (grey, dotted)
gate families   by family  tiles of the circuit diagram (``diagram.COLOURS``)
series          in order   #0072B2 #E69F00 #009E73 #CC79A7 #56B4E9 #D55E00 #000000
==============  =========  ===============================================

Series also differ by marker (circle, square, triangle, diamond, …) and reference lines
by dash pattern, so no reading depends on colour alone. The look: white ground, only the
left and bottom spines, a light warm-grey grid behind the data, pale tints of the line
colours for filled areas, titles flush left.

References
----------
.. [1] M. Okabe and K. Ito, "Color Universal Design (CUD): how to make figures and
   presentations that are friendly to colorblind people", J*Fly, 2008.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from typing import TYPE_CHECKING, Any

import numpy as np
from haarline.circuit.program import Program
from haarline.plots import _data as data
from haarline.plots import _style as style
from haarline.plots.diagram import circuit_diagram_png
from haarline.plots.models import kernel_matrix_png, kernel_scan_png, spectrum_png
from haarline.plots.scans import sweep_png, variance_scan_png
from haarline.report.registry import REGISTRY

if TYPE_CHECKING:
    from matplotlib.axes import Axes

__all__ = [
    "DRAWERS",
    "LOG_PANEL_DECADES",
    "fidelity_histogram_png",
    "fidelity_series",
    "meyer_wallach_png",
    "meyer_wallach_series",
    "plot_files",
]

Report = Mapping[str, Any]

BLUE = style.PALETTE["blue"]
HAAR = style.PALETTE["vermillion"]

LOG_PANEL_DECADES = 3.0
"""Haar bin masses spanning more decades than this get a second, logarithmic panel."""


def _edges(bins: int) -> Any:
    return np.linspace(0.0, 1.0, bins + 1)


def fidelity_series(report: Report) -> dict[str, Any]:
    """The numbers drawn by :func:`fidelity_histogram_png`.

    Parameters
    ----------
    report : mapping
        A report of :func:`haarline.analyze` with ``expressibility``.

    Returns
    -------
    dict
        ``name``; ``edges``, K+1 equal bin edges on [0, 1]; ``circuit`` and ``haar``, K
        bin masses each; ``kl``, ``interval``, ``bias``, ``pairs``, ``bins``, ``qubits``;
        ``second_moment`` and ``haar_second_moment`` (``None`` if absent); ``log_panel``,
        whether the positive Haar masses span more than :data:`LOG_PANEL_DECADES`
        decades; ``floor``, the bottom of the logarithmic axis (half of one pair's mass).

    Raises
    ------
    ValueError
        If ``expressibility`` or one of its keys is missing, or the two mass lists differ
        in length.
    """
    circuit = data.floats(report, "expressibility", "histogram")
    haar = data.floats(report, "expressibility", "haar")
    if circuit.size != haar.size:
        raise ValueError(
            "report keys 'expressibility.histogram' and 'expressibility.haar' differ in "
            f"length ({circuit.size} and {haar.size} bins)"
        )
    pairs = int(data.need(report, "expressibility", "pairs"))
    positive = haar[haar > 0]
    decades = math.log10(positive.max() / positive.min()) if positive.size else 0.0
    expr = data.need(report, "expressibility")
    return {
        "name": str(data.need(report, "circuit", "name")),
        "edges": _edges(circuit.size),
        "circuit": circuit,
        "haar": haar,
        "kl": float(data.need(report, "expressibility", "kl")),
        "kl_corrected": float(data.need(report, "expressibility", "kl_corrected")),
        "interval": data.interval(report, "expressibility", "interval"),
        "bias": float(data.need(report, "expressibility", "bias")),
        "pairs": pairs,
        "bins": int(circuit.size),
        "qubits": int(data.need(report, "circuit", "qubits")),
        "second_moment": expr.get("second_moment"),
        "haar_second_moment": expr.get("haar_second_moment"),
        "log_panel": decades > LOG_PANEL_DECADES,
        "floor": 0.5 / pairs,
    }


def fidelity_histogram_png(report: Report) -> bytes:
    """The circuit's fidelity bin masses against the exact Haar bin masses, as PNG bytes.

    A linear panel shows the bulk. When the Haar masses span more than three decades (as
    they do from about 3 qubits on), a logarithmic panel under it shows the tail, down to
    half the mass of a single pair. The KL divergence with its 95% interval, the plug-in
    bias and the pair count are written above the axes, E[F²] under them.

    Parameters
    ----------
    report : mapping
        A report with ``expressibility``.

    Returns
    -------
    bytes
        A PNG, 900 px wide.

    Raises
    ------
    ValueError
        As :func:`fidelity_series`.
    """
    s = fidelity_series(report)
    subtitle = (
        f"KL from Haar {style.fmt(s['kl_corrected'])} nats, bias-corrected (95% interval "
        f"{style.span_text(s['interval'])}); plug-in KL {style.fmt(s['kl'])}, where an exactly "
        f"Haar-random circuit would show {style.fmt(s['bias'], 2)} · {s['pairs']} parameter "
        f"pairs, {s['bins']} bins, {style.plural(s['qubits'], 'qubit')}"
    )
    footer = []
    if s["second_moment"] is not None and s["haar_second_moment"] is not None:
        footer.append(
            f"Second moment E[F²] = {style.fmt(s['second_moment'])}; Haar-random states "
            f"(and any state 2-design) give {style.fmt(s['haar_second_moment'])}."
        )
    panels = 2 if s["log_panel"] else 1
    title = f"{s['name']}: fidelities of random parameter pairs"
    with style.house_style():
        fig, rect = style.figure(4.05 if panels == 2 else 2.85, title, subtitle, footer)
        axes = style.panels(
            fig, rect, panels, 1, sharex=True, heights=[3, 2][:panels], titled=False
        )
        top = axes[0, 0]
        _fidelity_panel(top, s, log=False)
        top.set_ylabel("mass per bin")
        top.legend(loc="upper right")
        if panels == 2:
            low = axes[1, 0]
            _fidelity_panel(low, s, log=True)
            low.set_ylabel("mass per bin (log)")
            low.set_title("the same on a log scale", fontweight="normal", color=style.INK_SOFT)
        axes[-1, 0].set_xlabel("fidelity F = |⟨ψ(θ)|ψ(φ)⟩|²")
        axes[-1, 0].set_xlim(0.0, 1.0)
        return style.render(fig)


def _fidelity_panel(ax: Axes, s: Mapping[str, Any], *, log: bool) -> None:
    edges, circuit, haar = s["edges"], s["circuit"], s["haar"]
    peak = max(float(circuit.max()), float(haar.max()))
    if log:
        base = s["floor"] * 1e-3  # below the axis: empty bins and the far Haar tail
        ax.set_yscale("log")
        ax.stairs(
            np.maximum(circuit, base), edges, baseline=base, fill=True, color=style.FILLS["blue"]
        )
        ax.stairs(np.maximum(circuit, base), edges, baseline=base, color=BLUE, linewidth=0.8)
        ax.stairs(np.maximum(haar, base), edges, baseline=None, color=HAAR, linewidth=1.3)
        ax.set_ylim(s["floor"], peak * 2.0)
        return
    ax.stairs(
        circuit, edges, fill=True, color=style.FILLS["blue"], label=f"circuit ({s['pairs']} pairs)"
    )
    ax.stairs(circuit, edges, color=BLUE, linewidth=0.8)
    ax.stairs(
        haar, edges, baseline=None, color=HAAR, linewidth=1.3, label="Haar-random states (exact)"
    )
    ax.set_ylim(0.0, peak * 1.12)


def meyer_wallach_series(report: Report) -> dict[str, Any]:
    """The numbers drawn by :func:`meyer_wallach_png`.

    Parameters
    ----------
    report : mapping
        A report with ``entanglement``.

    Returns
    -------
    dict
        ``name``; ``edges``, equal bin edges on [0, 1]; ``fractions``, the report's
        ``distribution``; ``mean``, ``interval``, ``std``, ``samples``, ``haar`` (the
        Haar-random mean) and ``qubits``.

    Raises
    ------
    ValueError
        If ``entanglement`` or one of its keys is missing.
    """
    fractions = data.floats(report, "entanglement", "distribution")
    return {
        "name": str(data.need(report, "circuit", "name")),
        "edges": _edges(fractions.size),
        "fractions": fractions,
        "mean": float(data.need(report, "entanglement", "meyer_wallach")),
        "interval": data.interval(report, "entanglement", "interval"),
        "std": float(data.need(report, "entanglement", "std")),
        "samples": int(data.need(report, "entanglement", "samples")),
        "haar": float(data.need(report, "entanglement", "haar_meyer_wallach")),
        "qubits": int(data.need(report, "circuit", "qubits")),
    }


def meyer_wallach_png(report: Report) -> bytes:
    """The distribution of the Meyer-Wallach measure over random parameters, as PNG bytes.

    The mean is a solid line inside a band for its 95% interval; the Haar-random mean
    ``(2^n - 2)/(2^n + 1)`` is dashed.

    Parameters
    ----------
    report : mapping
        A report with ``entanglement``.

    Returns
    -------
    bytes
        A PNG, 900 px wide.

    Raises
    ------
    ValueError
        As :func:`meyer_wallach_series`.
    """
    s = meyer_wallach_series(report)
    lo, hi = s["interval"]
    subtitle = (
        f"mean {style.unit_text(s['mean'])} (95% interval {style.unit_text(lo)}–"
        f"{style.unit_text(hi)}), std {style.unit_text(s['std'])}; Haar-random states "
        f"{style.unit_text(s['haar'])} · "
        f"{s['samples']} parameter samples, {style.plural(s['qubits'], 'qubit')}"
    )
    with style.house_style():
        footer = ["A single qubit cannot be entangled: Q = 0 for every state."] * (s["qubits"] == 1)
        fig, rect = style.figure(
            2.85, f"{s['name']}: entanglement of random states", subtitle, footer
        )
        ax = style.panels(fig, rect, titled=False)[0, 0]
        ax.stairs(
            s["fractions"],
            s["edges"],
            fill=True,
            color=style.FILLS["blue"],
            label=f"circuit ({s['samples']} samples)",
        )
        ax.stairs(s["fractions"], s["edges"], color=BLUE, linewidth=0.8)
        ax.axvspan(lo, hi, color=BLUE, alpha=0.25, linewidth=0, label="95% interval of the mean")
        ax.axvline(s["mean"], color=BLUE, linewidth=1.6, label=f"mean {style.unit_text(s['mean'])}")
        ax.axvline(
            s["haar"],
            color=HAAR,
            linewidth=1.4,
            linestyle=(0, (4, 2)),
            label=f"Haar-random mean {style.unit_text(s['haar'])}",
        )
        ax.set_xlim(0.0, 1.0)
        ax.set_ylim(0.0, float(s["fractions"].max()) * 1.15 + 1e-12)
        ax.set_xlabel("Meyer-Wallach measure Q (0 for product states, 1 at most)")
        ax.set_ylabel("fraction of samples")
        ax.legend(loc="best")
        return style.render(fig)


def _algebra_png(report: Report) -> bytes:
    from haarline.plots.algebra import algebra_dimension_png

    return algebra_dimension_png(report)


def _kernel(report: Report) -> Mapping[str, Any]:
    return report.get("kernel") or {}


DRAWERS: dict[str, tuple[Callable[[Report], bool], Callable[[Report], bytes]]] = {
    "fidelity.png": (lambda r: bool(r.get("expressibility")), fidelity_histogram_png),
    "entanglement.png": (lambda r: bool(r.get("entanglement")), meyer_wallach_png),
    "trainability.png": (
        lambda r: bool((r.get("trainability") or {}).get("points")),
        variance_scan_png,
    ),
    "algebra.png": (
        lambda r: any(p.get("dimension") for p in (r.get("lie") or {}).get("points", [])),
        _algebra_png,
    ),
    "kernel.png": (lambda r: len(_kernel(r).get("points") or []) > 1, kernel_scan_png),
    "kernel_matrix.png": (lambda r: bool(_kernel(r).get("matrix")), kernel_matrix_png),
    "spectrum.png": (
        lambda r: any(
            f.get("weights") is not None for f in (r.get("spectrum") or {}).get("features", [])
        ),
        spectrum_png,
    ),
}
"""For each plot a registry row names: whether a report has its data, and its drawer."""


def plot_files(report: Report, program: Program | None = None) -> dict[str, bytes]:
    """Every PNG the report supports, by file name.

    Parameters
    ----------
    report : mapping
        A report of :func:`haarline.analyze`.
    program : Program, optional
        The analyzed program (:func:`haarline.expand`); adds ``circuit.png``.

    Returns
    -------
    dict of str to bytes
        The plots of the registry's rows whose data is present (``fidelity.png``,
        ``entanglement.png``, ``trainability.png``, ``algebra.png``), then ``sweep.png``
        and ``circuit.png``.

    Examples
    --------
    >>> import haarline
    >>> circuit = haarline.load_reference("ry-cz-ring")
    >>> report = haarline.analyze(circuit, haarline.AnalysisOptions(metrics=["capacity"]))
    >>> plot_files(report)  # capacity has no plot
    {}
    >>> list(plot_files(report, haarline.expand(circuit)))
    ['circuit.png']
    """
    out: dict[str, bytes] = {}
    for name in REGISTRY:
        for plot in REGISTRY[name].plots:
            present, draw = DRAWERS[plot]
            if present(report):
                out[plot] = draw(report)
    rows = report.get("sweep") or []
    if any(r.get("kl") is not None or r.get("meyer_wallach") is not None for r in rows):
        out["sweep.png"] = sweep_png(report)
    if program is not None:
        out["circuit.png"] = circuit_diagram_png(program)
    return out
