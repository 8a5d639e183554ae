"""A drawing of an expanded program: one wire per qubit, gates in greedy time steps.

:func:`circuit_diagram_png` draws the layout of :func:`haarline.plots.diagram_layout.diagram_layout`
(where each gate goes, and why) with matplotlib's Agg canvas (palette and conventions in
:mod:`haarline.plots.figures`): wires, step numbers with every other step shaded, gate boxes,
controls and targets, separators and part brackets, and a footer that explains the
symbols drawn.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING, Any

from haarline.circuit.gates import lookup
from haarline.circuit.program import Program, facts
from haarline.plots import _style as style
from haarline.plots.diagram_layout import LEFT, MIN_PITCH, RIGHT, diagram_layout

if TYPE_CHECKING:
    from matplotlib.axes import Axes

__all__ = ["circuit_diagram_png"]

PITCH = 0.34
"""Widest column pitch, in inches."""
GAP = 0.1
"""Extra inches at a separator."""
STEP_ROW, BRACKET_ROW = 0.2, 0.2
"""Inches above the first wire for step numbers, and per row of part brackets."""


def _key(lay: dict[str, Any]) -> str:
    """The footer line explaining the symbols that appear in the drawing."""
    specs = {g["gate"]: lookup(g["gate"]) for g in lay["gates"]}
    angles = [g["angle"] for g in lay["gates"] if g["angle"]]
    words = []
    if any(sp.takes_angle for sp in specs.values()):
        inputs = [a for a in angles if "x" in a]
        fixed = [a for a in angles if a[0] != "θ" and "x" not in a]
        says = ["θk is trainable parameter k"] if any(a[0] == "θ" for a in angles) else []
        says += ["xk is input feature k (times its scale)"] if inputs else []
        says += ["a number a fixed angle in radians"] if fixed else []
        words.append("blue boxes are rotations" + (f" ({', '.join(says)})" if says else ""))
    if any(sp.qubits == 1 and not sp.takes_angle for sp in specs.values()) or "cy" in specs:
        words.append("orange boxes fixed gates")
    if any(sp.target is not None for sp in specs.values()) or {"cz", "cphase"} & set(specs):
        words.append("● marks a control" + (", ⊕ the target of cx" if "cx" in specs else ""))
    if "swap" in specs:
        words.append("× on both wires a swap")
    text = "; ".join(words)
    return (f"{text[:1].upper()}{text[1:]}. " if text else "") + (
        f"Columns follow the greedy time steps numbered on top (depth {lay['depth']}); "
        "brackets under the wires mark prepare, each layer and finish."
    )


def circuit_diagram_png(program: Program) -> bytes:
    """A diagram of ``program`` as PNG bytes, 900 px wide.

    Parameters
    ----------
    program : Program
        An expanded program (:func:`haarline.expand`).

    Returns
    -------
    bytes
        A PNG: wires labelled q0, q1, …; boxes with gate names and ``θk`` for trainable
        parameter ``k`` or the fixed angle in radians; ● for a control, ⊕ for the target
        of cx, × for swap; a box across both wires for rxx, ryy and rzz.

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
    wire = min(0.34, 7.2 / n)
    body = STEP_ROW + n * wire + 2 * BRACKET_ROW + 0.05
    footer = [_key(lay)] + ([lay["note"]] if lay["note"] else [])
    subtitle = (
        f"{style.plural(n, 'qubit')}, {style.plural(info['layers'], 'layer')}, "
        f"{style.plural(info['parameters'], 'parameter')}, {style.plural(info['gates'], 'gate')} "
        f"({info['two_qubit_gates']} two-qubit), depth {info['depth']}"
    )
    with style.house_style():
        fig, rect = style.figure(body, f"{program.name}: circuit", subtitle, footer)
        ax = fig.add_axes(rect)
        ax.set_axis_off()
        ax.set_xlim(0.0, style.WIDTH)
        ax.set_ylim(0.0, body)
        _draw(ax, lay, n, wire, body)
        return style.render(fig)


def _draw(ax: Axes, lay: dict[str, Any], n: int, wire: float, body: float) -> None:
    from matplotlib.patches import Rectangle

    room = style.WIDTH - LEFT - RIGHT
    seps = lay["separators"]
    pitch = min(PITCH, (room - GAP * len(seps)) / lay["columns"])
    if pitch < MIN_PITCH:  # no room for separator gaps: leave the separators out
        seps, pitch = [], min(PITCH, room / lay["columns"])
    box_w, box_h = pitch - 0.07, min(0.27, 0.78 * wire)
    top = body - STEP_ROW
    bottom = top - n * wire
    soft: dict[str, Any] = {"color": style.INK_SOFT, "linewidth": 0.8}
    small: dict[str, Any] = {"fontsize": 5.5, "color": style.INK_SOFT, "va": "bottom"}

    def left(c: int) -> float:  # left edge of column c
        return float(LEFT + c * pitch + GAP * sum(1 for b in seps if b <= c))

    def y(q: int) -> float:
        return top - (q + 0.5) * wire

    end = left(lay["columns"] - 1) + pitch
    cut = lay["hidden_gates"] > 0
    for q in range(n):  # wires, dotted on where the drawing is cut
        ax.plot([LEFT - 0.06, end + (0.0 if cut else 0.06)], [y(q)] * 2, zorder=1, **soft)
        if cut:
            ax.plot([end, end + 0.16], [y(q)] * 2, linestyle=(0, (1, 1.5)), zorder=1, **soft)
        size = 7.0 if wire >= 0.28 else 6.0
        ax.text(LEFT - 0.1, y(q), f"q{q}", ha="right", va="center", fontsize=size)
    ax.text(LEFT - 0.1, top + 0.06, "step", ha="right", **small)
    starts = sorted(lay["step_columns"].items())
    for i, (t, c) in enumerate(starts):  # step numbers on top, every other step shaded
        stop = starts[i + 1][1] if i + 1 < len(starts) else lay["columns"]
        x0, x1 = left(c), left(stop - 1) + pitch
        if t % 2 == 0:
            shade = Rectangle((x0, bottom), x1 - x0, n * wire, color=style.FILLS["shade"], lw=0)
            ax.add_patch(shade).set_zorder(0)
        ax.text((x0 + x1) / 2, top + 0.06, str(t), ha="center", **small)
    for b in seps:
        xb = left(b) - GAP / 2
        ax.plot([xb, xb], [bottom - 0.02, top + 0.02], linestyle=(0, (3, 2)), zorder=1.5, **soft)
    for g in lay["gates"]:
        _gate(ax, g, left(g["column"]) + pitch / 2, (box_w, box_h), wire, y)
    for i, p in enumerate(lay["parts"]):  # brackets, alternating between two rows
        row = bottom - 0.04 - (i % 2) * BRACKET_ROW
        x0, x1 = left(p["first"]) + 0.03, left(p["last"]) + pitch - 0.03
        ax.plot([x0, x0, x1, x1], [row - 0.02, row - 0.05, row - 0.05, row - 0.02], **soft)
        fits = len(p["label"]) * 0.6 * 6.0 / 72 <= x1 - x0 + pitch
        label = p["label"] if fits else p["short"]
        ax.text((x0 + x1) / 2, row - 0.07, label, ha="center", va="top", fontsize=6.0)


def _gate(
    ax: Axes,
    g: dict[str, Any],
    x: float,
    box: tuple[float, float],
    wire: float,
    y: Callable[[int], float],
) -> None:
    from matplotlib.patches import Circle

    spec = lookup(g["gate"])
    ink: dict[str, Any] = {"color": style.INK, "linewidth": 0.9}
    box_w, box_h = box
    ys = [y(q) for q in g["qubits"]]
    if len(ys) == 1:
        _box(ax, x, ys[0], box, g, spec.takes_angle)
        return
    a, b = ys
    if spec.generator is not None and spec.target is None:  # rxx, ryy, rzz: one tall box
        lo, hi = min(g["qubits"]), max(g["qubits"])
        y_top, y_bot = y(lo) + box_h / 2, y(hi) - box_h / 2
        mid = lo + (hi - lo - 1) // 2  # texts between two wires, clear of passing ones
        _box(ax, x, (y_top + y_bot) / 2, (box_w, y_top - y_bot), g, True, (y(mid) + y(mid + 1)) / 2)
        for q in range(lo + 1, hi):  # wires passing behind, not acted on
            ax.plot(
                [x - box_w / 2, x + box_w / 2],
                [y(q)] * 2,
                color=style.INK_SOFT,
                linewidth=0.6,
                linestyle=(0, (1, 1.5)),
                zorder=3.5,
            )
        return
    ax.plot([x, x], [a, b], zorder=2, **ink)
    if g["gate"] == "swap":
        h = min(0.06, 0.22 * wire)
        for yy in (a, b):
            ax.plot(
                [x - h, x + h, x, x - h, x + h],
                [yy - h, yy + h, yy, yy + h, yy - h],
                zorder=3,
                **ink,
            )
        return
    dot = min(0.04, 0.16 * wire)
    ax.add_patch(Circle((x, a), dot, color=style.INK, zorder=3))
    if g["gate"] == "cz":
        ax.add_patch(Circle((x, b), dot, color=style.INK, zorder=3))
    elif g["gate"] == "cx":
        r = min(0.1, 0.36 * wire)
        ax.add_patch(Circle((x, b), r, facecolor="#FFFFFF", edgecolor=style.INK, lw=0.9, zorder=3))
        ax.plot([x - r, x + r], [b, b], zorder=4, **ink)
        ax.plot([x, x], [b - r, b + r], zorder=4, **ink)
    else:  # cy and the controlled rotations: a box on the target
        _box(ax, x, b, box, g, spec.takes_angle)


def _box(
    ax: Axes,
    x: float,
    yy: float,
    box: tuple[float, float],
    g: dict[str, Any],
    rotation: bool,
    text_y: float | None = None,
) -> None:
    """A gate box centred at (x, yy); its texts centred at height ``text_y`` (default yy)."""
    from matplotlib.patches import Rectangle

    w, h = box
    tint = "blue" if rotation else "orange"
    ax.add_patch(
        Rectangle(
            (x - w / 2, yy - h / 2),
            w,
            h,
            facecolor=style.FILLS[tint],
            edgecolor=style.PALETTE[tint],
            linewidth=0.8,
            zorder=3,
        )
    )
    ty = yy if text_y is None else text_y
    big = 6.5 if min(w, h) >= 0.22 else 5.8
    text: dict[str, Any] = {"ha": "center", "va": "center", "zorder": 5}
    if not g["angle"]:
        ax.text(x, ty, g["name"], fontsize=big, **text)
        return
    size = min(h, 0.27)
    ax.text(x, ty + 0.2 * size, g["name"], fontsize=big, **text)
    small = big - (1.0 if len(g["angle"]) <= 4 else 1.8)
    ax.text(x, ty - 0.24 * size, g["angle"], fontsize=small, **text)
