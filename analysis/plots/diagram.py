"""A drawing of an expanded program: blocks of gates on numbered wires, in rows.

:func:`circuit_diagram_png` draws the layout of
:func:`haarline.plots.diagram_layout.diagram_layout` (where each gate goes, and why) with
matplotlib's Agg canvas and the shared look of :mod:`haarline.plots._style`.

The look
--------
Each row starts with a column of qubit indices. Prepare, every layer and finish are
shaded blocks with their label above, in two alternating tints. A gate is a solid rounded
tile in the colour of its family (:data:`COLOURS`) reading the gate's name; the angle's
label sits under the tile (above it when a link leaves the tile downwards). A two-qubit
gate is a link in its family's colour between its wires: a controlled gate has a
diamond on the control and a tile on the target reading the target's gate, a two-qubit
rotation or a swap has a tile on each wire. A legend of the families drawn sits under
the rows; the footer says what the labels, blocks and marks mean, and what is drawn
when the drawing is capped.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING, Any

from haarline.circuit.gates import lookup
from haarline.circuit.program import Program, facts
from haarline.plots import _style as style
from haarline.plots.diagram_layout import LEFT, PITCH, RIGHT, Family, diagram_layout, row_cap

if TYPE_CHECKING:
    from matplotlib.axes import Axes

__all__ = ["COLOURS", "WORDS", "circuit_diagram_png"]

COLOURS: dict[Family, str] = {
    "rotation": style.PALETTE["blue"],
    "input": style.PALETTE["vermillion"],
    "fixed": style.PALETTE["orange"],
    "controlled": style.PALETTE["green"],
    "pair": style.PALETTE["purple"],
    "swap": style.INK_SOFT,
}
"""The colour of each gate family (from the house palette)."""
WORDS: dict[Family, str] = {
    "rotation": "rotation",
    "input": "angle from input data",
    "fixed": "fixed gate",
    "controlled": "controlled gate: ◆ control, tile on the target",
    "pair": "two-qubit rotation: a tile on each wire",
    "swap": "swap: a tile on each wire",
}
"""What the legend says of each family."""
_DARK_TEXT = ("fixed", "pair")
"""Families whose tiles are light enough for dark text."""
_TINTS = ("#EFEDE6", "#E4EAEE")
"""Alternating block shades (odd and even blocks)."""
_WIRE = "#A9A79F"
"""Wire colour: lighter than the text, darker than the block shades."""
BAND, ROW_GAP, LEGEND_LINE = 0.2, 0.16, 0.2
"""Inches above each row for block labels, between rows, and per legend line."""
SWATCH, ENTRY_GAP, LEGEND_PT = 0.21, 0.22, 6.5
"""Legend: inches from a swatch to its words and between entries, and the words' size."""
MAX_PITCH = 0.36
"""Widest column, in inches (a one-row drawing spreads out up to this)."""


def _wire_pitch(n: int) -> float:
    """Inches between two wires: 0.36 up to 9 qubits, narrowing to 0.24 from 14."""
    return min(0.36, max(0.24, 3.4 / n))


def _caption(lay: dict[str, Any], qubits: int) -> list[str]:
    """The footer: what labels, blocks and marks mean, and what is drawn."""
    sources = {g["source"] for g in lay["gates"]}
    inputs = [g["angle"] for g in lay["gates"] if g["source"] == "input"]
    says = ["θk is trainable parameter k"] if "parameter" in sources else []
    if "named" in sources:
        cut = " (names over 6 letters keep 5 and …)" if lay["shortened"] else ""
        says.append(f"a name is the description's name for a parameter{cut}")
    if inputs:
        scaled = any(not a.startswith("x") for a in inputs)
        product = any(a.count("x") == 2 for a in inputs)
        more = ["3·xk: times its scale"] * scaled + ["xj·xk: a product encoding"] * product
        says.append("xk is input feature k" + (f" ({'; '.join(more)})" if more else ""))
    if "fixed" in sources:
        says.append("a number is a fixed angle in radians")
    over = any(g["angle"] and _label_over(g) for g in lay["gates"])
    where = "Under a tile (over it when its link leaves downwards)" if over else "Under a tile"
    lines = [f"{where}: {', '.join(says)}."] if says else []
    kinds = {b["kind"] for b in lay["blocks"]}
    names = [
        w
        for k, w in (("prepare", "prepare"), ("layer", "each layer"), ("finish", "finish"))
        if k in kinds
    ]
    what = names[0] if len(names) == 1 else ", ".join(names[:-1]) + " and " + names[-1]
    shorts = {b["label"][0] for b in lay["blocks"] if b["short"]}
    forms = [
        w
        for k, w in (("p", "prep is prepare"), ("L", "Lk is layer k"), ("f", "fin is finish"))
        if k in shorts
    ]
    blocks = f"Shaded blocks, labelled above: {what}, in order" + (
        f" (over a narrow block, {', '.join(forms)})." if forms else "."
    )
    if lay["total_columns"] == lay["depth"]:
        blocks += f" One column per time step (depth {lay['depth']})."
    else:
        why = []
        if lay["block_steps"] > lay["depth"]:
            why.append("a block starts when the one before it has ended")
        if lay["total_columns"] > lay["block_steps"]:
            why.append("a gate across distant wires gets a column of its own")
        blocks += (
            f" {lay['total_columns']} columns for depth {lay['depth']}: each gate is drawn "
            f"as early as its block allows, and {' and '.join(why)}."
        )
    lines.append(blocks)
    marks = []
    if lay["rows"] > 1:
        marks.append(f"The drawing wraps onto {lay['rows']} rows; ▷ marks wires that go on")
    if lay["note"]:
        marks.append(
            f"‖ marks where it stops (at most {row_cap(qubits)} rows for "
            f"{style.plural(qubits, 'qubit')}). " + lay["note"]
        )
    else:
        total = len(lay["gates"])
        marks.append(f"All {style.plural(total, 'gate')} are drawn.")
    lines.append(". ".join(m.rstrip(".") for m in marks) + ".")
    return lines


def _label_over(g: dict[str, Any]) -> bool:
    """Whether the angle label goes over the tile: a controlled gate whose control is below."""
    return lookup(g["gate"]).target is not None and g["qubits"][0] > g["qubits"][1]


def _legend_lines(families: list[Family]) -> list[list[tuple[Family, float]]]:
    """The legend entries with the width of their words (inches), in lines that fit."""
    from matplotlib.font_manager import FontProperties
    from matplotlib.textpath import TextToPath

    font = FontProperties(family=style.RC["font.sans-serif"], size=LEGEND_PT)
    lines: list[list[tuple[Family, float]]] = [[]]
    used = 0.0
    for f in families:
        words = TextToPath().get_text_width_height_descent(WORDS[f], font, ismath=False)[0] / 72
        if lines[-1] and used + SWATCH + words > style.WIDTH - 0.2:
            lines.append([])
            used = 0.0
        lines[-1].append((f, words))
        used += SWATCH + words + ENTRY_GAP
    return lines


def circuit_diagram_png(program: Program) -> bytes:
    """A diagram of ``program`` as PNG bytes, 900 px wide.

    Parameters
    ----------
    program : Program
        An expanded program (:func:`haarline.expand`).

    Returns
    -------
    bytes
        A PNG: one wire per qubit, numbered 0, 1, … on the left; prepare, each layer and
        finish as labelled shaded blocks; gates as tiles coloured by family with the
        angle's label (``θk``, the parameter's name, the input features or the fixed
        angle) under them; rows that wrap when the circuit is long (see
        :mod:`haarline.plots.diagram_layout` for the placement and the cap).

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> from haarline.circuit.program import expand
    >>> png = circuit_diagram_png(expand(parse_circuit({"qubits": 2, "layer": [
    ...     {"gate": "ry"}, {"gate": "cx", "on": "chain"}]})))
    >>> png[1:4]
    b'PNG'
    """
    lay = diagram_layout(program)
    info = facts(program)
    n = program.qubits
    wire = _wire_pitch(n)
    legend = _legend_lines(lay["families"])
    row_h = BAND + n * wire
    body = lay["rows"] * row_h + (lay["rows"] - 1) * ROW_GAP + LEGEND_LINE * len(legend) + 0.08
    subtitle = (
        f"{style.plural(n, 'qubit')}, {style.plural(info['layers'], 'layer')}, "
        f"{style.plural(info['parameters'], 'parameter')}, {style.plural(info['gates'], 'gate')} "
        f"({info['two_qubit_gates']} two-qubit), depth {info['depth']}"
    )
    with style.house_style():
        fig, rect = style.figure(body, f"{program.name}: circuit", subtitle, _caption(lay, n))
        ax = fig.add_axes(rect)
        ax.set_axis_off()
        ax.set_xlim(0.0, style.WIDTH)
        ax.set_ylim(0.0, body)
        widest = max(b["x1"] for b in lay["blocks"])
        room = style.WIDTH - LEFT - RIGHT
        pitch = PITCH if lay["rows"] > 1 else min(MAX_PITCH, room / widest)
        for r in range(lay["rows"]):
            top = body - r * (row_h + ROW_GAP) - BAND
            _row(ax, lay, r, top, pitch, wire, n)
        _legend(ax, legend, LEGEND_LINE * len(legend))
        return style.render(fig)


def _row(
    ax: Axes, lay: dict[str, Any], r: int, top: float, pitch: float, wire: float, n: int
) -> None:
    """Row ``r`` of the drawing, its first wire ``top - wire / 2`` inches up."""
    from matplotlib.patches import FancyBboxPatch

    blocks = [b for b in lay["blocks"] if b["row"] == r]
    last = r == lay["rows"] - 1
    goes_on = not last
    cut = last and bool(lay["note"])

    def x(u: float) -> float:
        return LEFT + u * pitch

    def y(q: int) -> float:
        return top - (q + 0.5) * wire

    bottom = top - n * wire
    for b in blocks:  # shaded blocks with their labels above
        x0, x1 = x(b["x0"]) + 0.012, x(b["x1"]) - 0.012
        shade = FancyBboxPatch(
            (x0, bottom),
            x1 - x0,
            n * wire,
            boxstyle="round,pad=0,rounding_size=0.035",
            facecolor=_TINTS[b["part"] % 2],
            edgecolor="#D3D0C6",
            linewidth=0.6,
            zorder=0,
        )
        ax.add_patch(shade)
        ax.text(x0 + 0.02, top + 0.035, b["label"], fontsize=6.0, color=style.INK_SOFT, va="bottom")
    end = x(blocks[-1]["x1"])
    right = style.WIDTH - RIGHT / 2 if goes_on else end + 0.05
    for q in range(n):  # wires, qubit indices, and the marks of a wrapped or cut row
        ax.plot([LEFT - 0.06, right], [y(q)] * 2, color=_WIRE, linewidth=0.8, zorder=1)
        ax.text(LEFT - 0.14, y(q), str(q), ha="right", va="center", fontsize=6.5, color=style.INK)
        if goes_on:
            ax.add_patch(_onward(right, y(q), wire))
        if r > 0:
            ax.add_patch(_onward(LEFT - 0.05, y(q), wire))
    ax.text(
        LEFT - 0.06,
        top + 0.035,
        "qubit",
        ha="right",
        va="bottom",
        fontsize=5.5,
        color=style.INK_SOFT,
    )
    if cut:
        for dx in (0.05, 0.085):
            ax.plot([end + dx] * 2, [bottom - 0.02, top + 0.02], color=style.INK, linewidth=0.9)
    small = 5.5 if wire >= 0.3 else 4.8
    for g in lay["gates"]:
        if g["row"] == r:
            _gate(ax, g, x(g["x"] + 0.5), pitch, wire, y, small)


def _onward(xx: float, yy: float, wire: float) -> Any:
    """▷ on a wire: it goes on in the next row (or comes from the previous one)."""
    from matplotlib.patches import Polygon

    h = min(0.045, 0.18 * wire)
    return Polygon(
        [(xx - h, yy - h), (xx - h, yy + h), (xx + h * 0.8, yy)],
        closed=True,
        facecolor="#FFFFFF",
        edgecolor=style.INK_SOFT,
        linewidth=0.7,
        zorder=2,
    )


def _gate(
    ax: Axes,
    g: dict[str, Any],
    xx: float,
    pitch: float,
    wire: float,
    y: Callable[[int], float],
    small: float,
) -> None:
    """Gate ``g`` centred at ``xx``: its tiles, link and control mark, and its angle label."""
    colour = COLOURS[g["family"]]
    tile = (pitch - 0.06, min(0.16, 0.55 * wire))
    ys = [y(q) for q in g["qubits"]]
    if len(ys) == 1:
        _tile(ax, xx, ys[0], tile, g, colour)
        _label(ax, xx, ys[0], tile, g["angle"], small, below=True)
        return
    a, b = ys  # a: the control (or first qubit), b: the target (or second)
    ax.plot([xx, xx], [a, b], color=colour, linewidth=1.5, zorder=2, solid_capstyle="butt")
    if lookup(g["gate"]).target is not None:  # controlled, whatever gives its angle
        ax.plot(
            [xx],
            [a],
            marker="D",
            markersize=3.6,
            color=colour,
            markeredgecolor="#FFFFFF",
            markeredgewidth=0.5,
            zorder=3,
        )
        _tile(ax, xx, b, tile, g, colour)
        _label(ax, xx, b, tile, g["angle"], small, below=not _label_over(g))
        return
    for yy in ys:
        _tile(ax, xx, yy, tile, g, colour)
    low = min(ys)  # the label goes under the lower tile, away from the link
    _label(ax, xx, low, tile, g["angle"], small, below=True)


def _tile(
    ax: Axes, xx: float, yy: float, size: tuple[float, float], g: dict[str, Any], colour: str
) -> None:
    """A rounded tile in the family ``colour`` reading the gate's name."""
    from matplotlib.patches import FancyBboxPatch

    w, h = size
    ax.add_patch(
        FancyBboxPatch(
            (xx - w / 2, yy - h / 2),
            w,
            h,
            boxstyle=f"round,pad=0,rounding_size={h / 3:.3f}",
            facecolor=colour,
            edgecolor="none",
            zorder=3,
        )
    )
    text = style.INK if g["family"] in _DARK_TEXT else "#FFFFFF"
    size_pt = 6.0 if len(g["name"]) <= 3 else 5.0
    ax.text(
        xx,
        yy,
        g["name"],
        ha="center",
        va="center",
        fontsize=size_pt,
        color=text,
        fontweight="bold",
        zorder=4,
    )


def _label(
    ax: Axes, xx: float, yy: float, size: tuple[float, float], text: str, pt: float, *, below: bool
) -> None:
    """The angle label under (or over) the tile at ``(xx, yy)``."""
    if not text:
        return
    h = size[1]
    at = yy - h / 2 - 0.012 if below else yy + h / 2 + 0.012
    ax.text(
        xx,
        at,
        text,
        ha="center",
        va="top" if below else "bottom",
        fontsize=pt,
        color=style.INK,
        zorder=4,
    )


def _legend(ax: Axes, lines: list[list[tuple[Family, float]]], height: float) -> None:
    """One swatch and its words per family drawn, in lines under the rows."""
    from matplotlib.patches import FancyBboxPatch

    for i, line in enumerate(lines):
        yy = height - (i + 0.5) * LEGEND_LINE
        xx = LEFT - 0.3
        for f, width in line:
            ax.add_patch(
                FancyBboxPatch(
                    (xx, yy - 0.05),
                    0.16,
                    0.1,
                    boxstyle="round,pad=0,rounding_size=0.03",
                    facecolor=COLOURS[f],
                    edgecolor="none",
                )
            )
            ax.text(xx + SWATCH, yy, WORDS[f], va="center", fontsize=LEGEND_PT, color=style.INK)
            xx += SWATCH + width + ENTRY_GAP
