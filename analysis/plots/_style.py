"""Shared machinery of the figures: the house look, PNG rendering, layout helpers.

Used by :mod:`haarline.plots.figures`, :mod:`haarline.plots.scans`, :mod:`haarline.plots.comparison`
and :mod:`haarline.plots.diagram` (reports are read through :mod:`haarline.plots._data`); the
palette is documented in :mod:`haarline.plots.figures`. Every figure is a
:class:`matplotlib.figure.Figure` drawn on a
:class:`~matplotlib.backends.backend_agg.FigureCanvasAgg`; pyplot is never imported and
no window ever opens.

Figures are drawn under :func:`house_style`, which starts from matplotlib's built-in
defaults (so a user's ``matplotlibrc`` cannot change the output) and applies
:data:`RC`. rcParams are process-wide, so a lock keeps two threads from drawing at once.
Axes sit at fixed :data:`MARGINS` (no layout solver), so the same data give the same
picture and every figure lines up the same way.
"""

from __future__ import annotations

import io
import textwrap
import threading
from collections.abc import Iterator, Mapping, Sequence
from contextlib import contextmanager
from typing import TYPE_CHECKING, Any

import numpy as np
from numpy.typing import NDArray

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

__all__ = [
    "DPI",
    "FILLS",
    "HEADER",
    "INK",
    "INK_SOFT",
    "MARGINS",
    "MARKERS",
    "PALETTE",
    "RC",
    "RULE",
    "SERIES",
    "WIDTH",
    "figure",
    "fmt",
    "house_style",
    "integer_ticks",
    "legend_strip",
    "panels",
    "plural",
    "render",
    "span_text",
    "unit_text",
    "variance_errorbars",
    "widen_log_axis",
    "wrap",
]

Floats = NDArray[np.float64]

DPI = 150
"""Resolution of every PNG."""
WIDTH = 6.0
"""Figure width in inches: 900 px at :data:`DPI`."""

PALETTE: dict[str, str] = {
    "blue": "#0072B2",
    "orange": "#E69F00",
    "green": "#009E73",
    "purple": "#CC79A7",
    "sky": "#56B4E9",
    "vermillion": "#D55E00",
    "black": "#000000",
}
"""The eight colours of Okabe & Ito (2008) without their yellow, by plain name."""

SERIES: tuple[str, ...] = tuple(
    PALETTE[k] for k in ("blue", "orange", "green", "purple", "sky", "vermillion", "black")
)
"""Colours of successive series (circuits in a comparison), in this order."""
MARKERS: tuple[str, ...] = ("o", "s", "^", "D", "v", "P", "X")
"""Markers paired with :data:`SERIES`, so that series differ in shape as well as colour."""

INK = "#222222"
"""Text and strong lines."""
INK_SOFT = "#5F5F5F"
"""Axes, ticks, secondary text."""
RULE = "#E2E0D8"
"""Grid lines and light rules."""
FILLS: dict[str, str] = {"blue": "#CFE3F1"}
"""Pale tints for filled areas."""

RC: dict[str, Any] = {
    "font.family": "sans-serif",
    "font.sans-serif": ["DejaVu Sans"],
    "font.size": 8.0,
    "axes.titlesize": 8.5,
    "axes.titleweight": "bold",
    "axes.titlelocation": "left",
    "axes.titlepad": 4.0,
    "axes.labelsize": 8.0,
    "axes.labelcolor": INK,
    "axes.edgecolor": INK_SOFT,
    "axes.linewidth": 0.7,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.grid": True,
    "axes.axisbelow": True,
    "grid.color": RULE,
    "grid.linewidth": 0.6,
    "grid.linestyle": "-",
    "xtick.labelsize": 7.0,
    "ytick.labelsize": 7.0,
    "xtick.color": INK_SOFT,
    "ytick.color": INK_SOFT,
    "xtick.major.size": 2.5,
    "ytick.major.size": 2.5,
    "xtick.minor.size": 1.5,
    "ytick.minor.size": 1.5,
    "text.color": INK,
    "mathtext.default": "regular",
    "legend.fontsize": 7.0,
    "legend.frameon": True,
    "legend.framealpha": 0.92,
    "legend.edgecolor": RULE,
    "legend.fancybox": False,
    "legend.borderaxespad": 0.6,
    "legend.handlelength": 1.8,
    "lines.linewidth": 1.3,
    "lines.markersize": 4.5,
    "errorbar.capsize": 2.0,
    "figure.facecolor": "#FFFFFF",
    "axes.facecolor": "#FFFFFF",
    "savefig.facecolor": "#FFFFFF",
}
"""rcParams applied on top of matplotlib's defaults while a figure is drawn."""

_LOCK = threading.RLock()
_PROCESS_KEYS = (
    "backend",
    "interactive",
    "toolbar",
    "timezone",
    "webagg.",
    "figure.max_open_warning",
    "figure.raise_window",
    "figure.hooks",
    "savefig.directory",
    "tk.window_focus",
    "docstring.hardcopy",
    "date.epoch",
)


@contextmanager
def house_style() -> Iterator[None]:
    """Draw under matplotlib's defaults plus :data:`RC`, one thread at a time."""
    import matplotlib  # imported on first use: `import analysis` stays fast
    from cycler import cycler

    rc: dict[Any, Any] = {
        k: v for k, v in matplotlib.rcParamsDefault.items() if not k.startswith(_PROCESS_KEYS)
    }
    rc.update(RC)
    rc["axes.prop_cycle"] = cycler(color=list(SERIES))
    with _LOCK, matplotlib.rc_context(rc):
        yield


HEADER = 0.62
"""Inches above the body for the title and a one-line subtitle."""
_LINE = 0.15
"""Inches per line of subtitle or footer text."""
_WRAP = 100
"""Characters per wrapped line of 7.5 pt subtitle text on 6 in (footer text, at 7 pt: 107)."""


def wrap(text: str, width: int = _WRAP) -> list[str]:
    """Split ``text`` into lines of at most ``width`` characters, on word boundaries."""
    return textwrap.wrap(text, width, break_on_hyphens=False) or [""]


def figure(
    body: float, title: str, subtitle: str, footer: Sequence[str] = ()
) -> tuple[Figure, tuple[float, float, float, float]]:
    """A figure :data:`WIDTH` wide with a title and subtitle above and notes below.

    Parameters
    ----------
    body : float
        Height in inches of the region where the axes go.
    title : str
        Bold first line, naming the circuit.
    subtitle : str
        Grey line(s) under the title, wrapped; usually the sample sizes.
    footer : sequence of str
        Paragraphs written under the body, each wrapped.

    Returns
    -------
    fig : matplotlib.figure.Figure
        Attached to an Agg canvas.
    rect : tuple of float
        The body region ``(left, bottom, width, height)`` in figure fractions.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    sub = wrap(subtitle)
    notes = [line for paragraph in footer for line in wrap(paragraph, _WRAP * 15 // 14)]
    top = HEADER + _LINE * (len(sub) - 1)
    bottom = (_LINE * len(notes) + 0.12) if notes else 0.04
    height = top + body + bottom
    fig = Figure(figsize=(WIDTH, height), dpi=DPI)
    FigureCanvasAgg(fig)
    at: dict[str, Any] = {"x": 0.12 / WIDTH, "ha": "left", "va": "top", "linespacing": 1.35}
    fig.text(y=1 - 0.1 / height, s=title, fontsize=10.5, fontweight="bold", color=INK, **at)
    fig.text(y=1 - 0.36 / height, s="\n".join(sub), fontsize=7.5, color=INK_SOFT, **at)
    if notes:
        fig.text(y=(bottom - 0.06) / height, s="\n".join(notes), fontsize=7.0, color=INK, **at)
    return fig, (0.0, bottom / height, 1.0, body / height)


MARGINS: dict[str, float] = {
    "left": 0.74,
    "right": 0.14,
    "top": 0.26,
    "bottom": 0.44,
    "row_gap": 0.34,
    "column_gap": 0.58,
}
"""Inches around and between the axes of a body: room for tick labels, axis labels and
panel titles at the sizes in :data:`RC` (fixed, so that every figure lines up the same
way and no layout solver runs)."""


def panels(
    fig: Figure,
    rect: tuple[float, float, float, float],
    rows: int = 1,
    cols: int = 1,
    *,
    heights: Sequence[float] | None = None,
    widths: Sequence[float] | None = None,
    sharex: bool = False,
    row_gap: float | None = None,
    reserve: float = 0.0,
    titled: bool = True,
) -> Any:
    """A ``rows × cols`` array of axes filling the body ``rect`` within :data:`MARGINS`.

    ``row_gap`` overrides the gap between rows (inches; larger when the upper panels show
    their own x labels); ``reserve`` keeps that many inches free under the axes (for a
    legend strip, see :func:`legend_strip`); ``titled=False`` leaves no room for a title
    over the top row.
    """
    w, h = fig.get_size_inches()
    m = MARGINS
    vgap = m["row_gap"] if row_gap is None else row_gap
    bottom = rect[1] * h + reserve + m["bottom"]
    top = (rect[1] + rect[3]) * h - (m["top"] if titled else 0.1)
    axes_h = (top - bottom - vgap * (rows - 1)) / rows
    axes_w = (w - m["left"] - m["right"] - m["column_gap"] * (cols - 1)) / cols
    grid = fig.add_gridspec(
        rows,
        cols,
        left=m["left"] / w,
        right=1 - m["right"] / w,
        bottom=bottom / h,
        top=top / h,
        hspace=vgap / axes_h,
        wspace=m["column_gap"] / axes_w,
        height_ratios=heights,
        width_ratios=widths,
    )
    return grid.subplots(sharex=sharex, squeeze=False)


def legend_strip(
    fig: Figure,
    rect: tuple[float, float, float, float],
    height: float,
    sources: Sequence[Axes],
    ncols: int,
    first: Sequence[str] = (),
) -> None:
    """One legend of the ``sources`` entries, centred in the bottom ``height`` inches of ``rect``.

    Entries are listed once each, those labelled in ``first`` first, in that order.
    """
    entries: dict[str, Any] = {}
    for ax in sources:
        for handle, label in zip(*ax.get_legend_handles_labels(), strict=True):
            entries.setdefault(label, handle)
    labels = [k for k in first if k in entries] + [k for k in entries if k not in first]
    centre = rect[1] + 0.5 * height / fig.get_figheight()
    fig.legend(
        [entries[k] for k in labels],
        labels,
        loc="center",
        ncols=ncols,
        bbox_to_anchor=(0.5, centre),
        frameon=False,
    )


def render(fig: Figure) -> bytes:
    """PNG bytes of ``fig`` at :data:`DPI`, with no software or date metadata."""
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=DPI, metadata={"Software": None})
    return buf.getvalue()


# ----------------------------------------------------------------------------- words


def fmt(value: float, digits: int = 3) -> str:
    """``value`` with ``digits`` significant digits."""
    return f"{value:.{digits}g}"


def span_text(pair: Sequence[float], digits: int = 3) -> str:
    """An interval as ``lo–hi``."""
    return f"{fmt(float(pair[0]), digits)}–{fmt(float(pair[1]), digits)}"


def unit_text(value: float) -> str:
    """A value on [0, 1] (Meyer-Wallach) with three decimals: rounding noise reads 0.000."""
    return f"{value:.3f}"


def plural(count: int, word: str) -> str:
    """``"1 qubit"``, ``"4 qubits"``."""
    return f"{count} {word}{'' if count == 1 else 's'}"


# ------------------------------------------------------------------------- drawing


def variance_errorbars(ax: Axes, x: Floats, p: Mapping[str, Floats], **kw: Any) -> None:
    """Points of positive variance with their intervals as error bars, for a log axis."""
    ok = p["variance"] > 0
    v = p["variance"][ok]
    err = np.vstack([v - np.maximum(p["low"][ok], v * 1e-6), p["high"][ok] - v])
    ax.errorbar(x[ok], v, yerr=np.clip(err, 0.0, None), linestyle="none", **kw)


def integer_ticks(ax: Axes, values: Floats) -> None:
    """Ticks at the integer ``values`` on the x axis (a few, if there are many)."""
    ticks = np.unique(values)
    if ticks.size <= 12:
        ax.set_xticks(ticks, [str(int(t)) for t in ticks])
    else:
        from matplotlib.ticker import MaxNLocator

        ax.xaxis.set_major_locator(MaxNLocator(integer=True))
    if ticks.size == 1:
        ax.set_xlim(ticks[0] - 1, ticks[0] + 1)


def widen_log_axis(ax: Axes, values: Floats, factor: float = 10.0) -> None:
    """Make a log y axis span at least ``factor`` around the positive ``values``."""
    v = values[values > 0]
    if v.size == 0:
        return
    lo, hi = float(v.min()), float(v.max())
    if hi / lo < factor:
        mid = (lo * hi) ** 0.5
        ax.set_ylim(mid / factor**0.5, mid * factor**0.5)
