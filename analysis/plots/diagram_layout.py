"""Where each gate of a circuit drawing goes: time steps, columns, parts and the cut.

:func:`diagram_layout` is the pure part of :mod:`haarline.plots.diagram`: it places every
operation of a :class:`~haarline.circuit.program.Program` in a column and says what each box
reads, so that tests check the drawing's content without looking at pixels.

Placement
---------
Time steps come from :func:`haarline.circuit.program.time_steps`, the rule behind the reported
depth: each gate, in program order, goes one step after the latest gate on any of its
qubits, so the number of steps is the depth. Gates of one step never share a qubit, but
a two-qubit gate between distant wires draws a line (or a box) across the wires in
between; such gates get extra columns within their step, so nothing is drawn over
anything else.

A dashed separator is drawn between prepare, the layers and finish wherever every gate
of the earlier parts lies left of every gate of the later ones; brackets under the wires
always show which columns each part uses (parts overlap in time when a layer's first
gates can start before the previous layer ends). A program wider than the figure is cut
after the first columns, at the end of a layer where that keeps most of the width, and
the figure says how many layers and gates are not drawn.
"""

from __future__ import annotations

from typing import Any

from haarline.circuit.gates import lookup
from haarline.circuit.program import Operation, Program, time_steps
from haarline.plots import _style as style

__all__ = ["LEFT", "MAX_COLUMNS", "MIN_PITCH", "RIGHT", "diagram_layout"]

LEFT, RIGHT = 0.48, 0.3
"""Inches left of the first column (wire labels) and right of the last."""
MIN_PITCH = 0.28
"""Narrowest column pitch, in inches."""
MAX_COLUMNS = int((style.WIDTH - LEFT - RIGHT) / MIN_PITCH)
"""Columns that fit the 900 px width."""


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


def _texts(op: Operation, program: Program) -> tuple[str, str]:
    """What the gate's box (or target box) reads: the gate name and its angle, if any.

    A trainable angle reads ``θk``; an input angle names its features (``x2``, ``3·x0``,
    ``x0·x1`` for a product encoding).
    """
    spec = lookup(op.gate)
    name = spec.target if spec.target and op.gate != "cx" else op.gate
    if op.encoding is not None:
        e = program.encodings[op.encoding]
        text = "·".join(f"x{f}" for f in e.features)
        return str(name), (text if e.scale == 1 else f"{e.scale:g}·{text}")
    if op.param is not None:
        return str(name), f"θ{op.param}"
    if op.angle is not None:
        return str(name), f"{op.angle:.2f}"
    return str(name), ""


def _columns(program: Program) -> tuple[list[int], list[int], dict[int, int], int]:
    """Time step and column of every operation, first column of each step, column count."""
    steps = time_steps(program)
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
        An expanded program (:func:`haarline.expand`).
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
    >>> from haarline.circuit.model import parse_circuit
    >>> from haarline.circuit.program import expand
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
        name, angle = _texts(op, program)
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
