"""A drawing of an expanded program: one wire per qubit, gates in greedy time steps.

:func:`diagram_layout` is the pure part: it places every operation of a
:class:`~analysis.program.Program` in a column and says what each box reads;
:func:`circuit_diagram_png` draws that layout with matplotlib's Agg canvas (palette and
conventions in :mod:`analysis.plots`).

Placement
---------
Time steps follow the rule of :func:`analysis.program.facts`: each gate, in program
order, goes one step after the latest gate on any of its qubits, so the number of steps
is the reported depth. Gates of one step never share a qubit, but a two-qubit gate
between distant wires draws a line (or a box) across the wires in between; such gates
get extra columns within their step, so nothing is drawn over anything else.

A dashed separator is drawn between prepare, the layers and finish wherever every gate
of the earlier parts lies left of every gate of the later ones; brackets under the wires
always show which columns each part uses (parts overlap in time when a layer's first
gates can start before the previous layer ends). A program wider than the figure is cut
after the first columns, at the end of a layer where that keeps most of the width, and
the figure says how many layers and gates are not drawn.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import TYPE_CHECKING, Any

from . import _plotstyle as style
from .gates import lookup
from .program import Operation, Program, facts

if TYPE_CHECKING:
    from matplotlib.axes import Axes

__all__ = ["MAX_COLUMNS", "circuit_diagram_png", "diagram_layout"]

LEFT, RIGHT = 0.48, 0.3
"""Inches left of the first column (wire labels) and right of the last."""
PITCH, MIN_PITCH = 0.34, 0.28
"""Widest and narrowest column pitch, in inches."""
GAP = 0.1
"""Extra inches at a separator."""
MAX_COLUMNS = int((style.WIDTH - LEFT - RIGHT) / MIN_PITCH)
"""Columns that fit the 900 px width."""
STEP_ROW, BRACKET_ROW = 0.2, 0.2
"""Inches above the first wire for step numbers, and per row of part brackets."""


def _part(op: Operation, layers: int) -> int:
    """0 for prepare, 1 + r for repetition r of layer, layers + 1 for finish."""
    if op.step.startswith("prepare"):
        return 0
    if op.step.startswith("finish"):
        return layers + 1
    return 1 + int(op.layer or 0)


def _part_name(part: int, layers: int) -> tuple[str, str]:
    if part == 0:
        return "prepare", "prep"
    if part == layers + 1:
        return "finish", "fin"
    return f"layer {part}", str(part)


def _texts(op: Operation) -> tuple[str, str]:
    """What the gate's box (or target box) reads: the gate name and its angle, if any."""
    spec = lookup(op.gate)
    name = spec.target if spec.target and op.gate != "cx" else op.gate
    if op.param is not None:
        return str(name), f"θ{op.param}"
    if op.angle is not None:
        return str(name), f"{op.angle:.2f}"
    return str(name), ""


def _columns(program: Program) -> tuple[list[int], list[int], dict[int, int], int]:
    """Time step and column of every operation, first column of each step, column count."""
    level = [0] * program.qubits
    steps: list[int] = []
    for op in program.operations:
        t = max(level[q] for q in op.qubits) + 1
        for q in op.qubits:
            level[q] = t
        steps.append(t)
    busy: dict[int, list[set[int]]] = {}  # per step: the wires each sub-column covers
    slot = []
    for t, op in zip(steps, program.operations, strict=True):
        span = set(range(min(op.qubits), max(op.qubits) + 1))
        used = busy.setdefault(t, [])
        j = next((i for i, u in enumerate(used) if not u & span), len(used))
        if j == len(used):
            used.append(set())
        used[j] |= span
        slot.append(j)
    first, total = {}, 0
    for t in range(1, max(steps, default=0) + 1):
        first[t] = total
        total += len(busy.get(t, ())) or 1
    return steps, [first[t] + j for t, j in zip(steps, slot, strict=True)], first, total


def _note(program: Program, hidden_parts: list[int], gates: int, steps: int) -> str:
    layers = [p for p in hidden_parts if 1 <= p <= program.layers]
    names = []
    if layers:
        span = f"layer {layers[0]}" if len(layers) == 1 else f"layers {layers[0]}–{layers[-1]}"
        names.append(span)
    names += [w for p, w in ((0, "prepare"), (program.layers + 1, "finish")) if p in hidden_parts]
    head = style.plural(len(layers), "more layer") if layers else " and ".join(names)
    return (
        f"… {head} not drawn in full ({' and '.join(names)}; {style.plural(gates, 'gate')} "
        f"in the last {style.plural(steps, 'time step')})."
    )


def diagram_layout(program: Program, *, max_columns: int = MAX_COLUMNS) -> dict[str, Any]:
    """Place the operations of ``program`` in drawing columns.

    Parameters
    ----------
    program : Program
        An expanded program (:func:`analysis.expand`).
    max_columns : int
        Widest drawing, in columns; later columns are left out.

    Returns
    -------
    dict
        ``gates``: one dict per drawn operation in program order, with ``index`` (in
        ``program.operations``), ``gate``, ``qubits``, ``step`` (1-based time step),
        ``column``, ``part`` (0 prepare, 1..L layers, L+1 finish), ``name`` and
        ``angle`` (the box texts); ``columns`` (drawn) and ``total_columns``;
        ``depth``; ``step_columns`` (first column of each drawn step, by step);
        ``parts``: ``[{"part", "label", "short", "first", "last"}]`` for the drawn
        parts; ``separators``: column boundaries with a clean separator;
        ``hidden_gates``, ``hidden_steps``, ``hidden_layers`` and ``note`` (empty when
        everything is drawn).

    Raises
    ------
    ValueError
        If ``max_columns`` is below 1.

    Examples
    --------
    >>> from analysis.circuit import parse_circuit
    >>> from analysis.program import expand
    >>> p = expand(parse_circuit({"qubits": 3, "layers": 2, "layer": [
    ...     {"gate": "ry"}, {"gate": "cz", "on": "chain"}]}))
    >>> lay = diagram_layout(p)
    >>> lay["depth"], lay["columns"], [g["column"] for g in lay["gates"][:5]]
    (6, 6, [0, 0, 0, 1, 2])
    """
    if max_columns < 1:
        raise ValueError(f"max_columns must be at least 1, got {max_columns}")
    steps, column, first, total = _columns(program)
    parts = [_part(op, program.layers) for op in program.operations]
    cut = total
    if total > max_columns:  # cut at the end of a part if that keeps 3/4 of the width
        ends: dict[int, int] = {}
        for p, c in zip(parts, column, strict=True):
            ends[p] = max(ends.get(p, -1), c)
        aligned = [1 + max(e for q, e in ends.items() if q <= p) for p in sorted(ends)]
        fits = [c for c in aligned if c <= max_columns]
        cut = fits[-1] if fits and 4 * fits[-1] >= 3 * max_columns else max_columns
    drawn = [k for k, c in enumerate(column) if c < cut]
    hidden = [k for k, c in enumerate(column) if c >= cut]
    gates = []
    for k in drawn:
        op = program.operations[k]
        name, angle = _texts(op)
        place = dict(index=k, gate=op.gate, qubits=tuple(op.qubits), step=steps[k])
        gates.append({**place, "column": column[k], "part": parts[k], "name": name, "angle": angle})
    spans: dict[int, list[int]] = {}
    for k in drawn:
        spans.setdefault(parts[k], []).append(column[k])
    rows = []
    for p, cols in sorted(spans.items()):
        label, short = _part_name(p, program.layers)
        rows.append(dict(part=p, label=label, short=short, first=min(cols), last=max(cols)))
    separators = []
    for p in sorted(set(parts))[1:]:
        before = max(c for q, c in zip(parts, column, strict=True) if q < p)
        after = min(c for q, c in zip(parts, column, strict=True) if q >= p)
        if before < after < cut:
            separators.append(after)
    hidden_parts = sorted({parts[k] for k in hidden})
    hidden_steps = len({steps[k] for k in hidden})
    return {
        "gates": gates,
        "columns": cut,
        "total_columns": total,
        "depth": max(steps, default=0),
        "step_columns": {t: c for t, c in first.items() if c < cut},
        "parts": rows,
        "separators": separators,
        "hidden_gates": len(hidden),
        "hidden_steps": hidden_steps,
        "hidden_layers": sum(1 for p in hidden_parts if 1 <= p <= program.layers),
        "note": _note(program, hidden_parts, len(hidden), hidden_steps) if hidden else "",
    }


def _key(lay: dict[str, Any]) -> str:
    """The footer line explaining the symbols that appear in the drawing."""
    specs = {g["gate"]: lookup(g["gate"]) for g in lay["gates"]}
    angles = [g["angle"] for g in lay["gates"] if g["angle"]]
    words = []
    if any(sp.takes_angle for sp in specs.values()):
        says = ["θk is trainable parameter k"] if any(a[0] == "θ" for a in angles) else []
        says += ["a number a fixed angle in radians"] if any(a[0] != "θ" for a in angles) else []
        words.append("blue boxes are rotations" + (f" ({', '.join(says)})" if says else ""))
    if any(sp.qubits == 1 and not sp.takes_angle for sp in specs.values()) or "cy" in specs:
        words.append("orange boxes fixed gates")
    if any(sp.target is not None for sp in specs.values()) or "cz" in specs:
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
        An expanded program (:func:`analysis.expand`).

    Returns
    -------
    bytes
        A PNG: wires labelled q0, q1, …; boxes with gate names and ``θk`` for trainable
        parameter ``k`` or the fixed angle in radians; ● for a control, ⊕ for the target
        of cx, × for swap; a box across both wires for rxx, ryy and rzz.

    Examples
    --------
    >>> from analysis.circuit import parse_circuit
    >>> from analysis.program import expand
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
        return LEFT + c * pitch + GAP * sum(1 for b in seps if b <= c)

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
