"""Where each gate of a circuit drawing goes: blocks, columns, rows and the cap.

:func:`diagram_layout` is the pure part of :mod:`haarline.plots.diagram`: it places every
operation of a :class:`~haarline.circuit.program.Program` in a column and a row, and says
what each tile and each block label reads, so that tests check the drawing's content
without looking at pixels.

Placement
---------
The program is drawn as a sequence of *blocks*: prepare, each repetition of the layer, and
finish, left to right. A block begins after the previous block has ended, so blocks never
share a column. Within a block each gate goes one column after the latest gate on any of
its qubits (the rule of :func:`haarline.circuit.program.time_steps`, restarted at every
block); a two-qubit gate between distant wires draws a link across the wires in between,
so such gates get extra columns within their step and nothing is drawn over anything
else. The circuit's depth counts the same steps without the restart at block edges, so it
can be smaller than the number of columns.

Rows
----
Columns are laid out in rows of at most :data:`ROW_WIDTH` column widths, with a gap of
:data:`BLOCK_GAP` between blocks. Blocks are kept whole: one that does not fit in what is
left of a row starts the next row, and only a block wider than a row is split (it starts
on the current row when at least :data:`MIN_PIECE` columns are left there). When
splitting every block at the row's end (where :data:`MIN_PIECE` columns are left) needs
fewer rows, the blocks are split that way instead.

At most :func:`row_cap` rows are drawn: :data:`MAX_WIRE_LINES` wire lines and
:data:`MAX_ROWS` rows at most (12 rows of 4 qubits, 6 of 12, 3 of 24). A longer program is
cut at the end of a block when that keeps at least half of what the rows could hold,
otherwise inside the block; the layout then says exactly which blocks and how many gates
are drawn.
"""

from __future__ import annotations

import math
from typing import Any, Literal

from haarline.circuit.gates import lookup
from haarline.circuit.program import Operation, Program, time_steps
from haarline.plots import _style as style
from haarline.plots._diagram_words import capped_note, gate_texts, part_names

__all__ = [
    "BLOCK_GAP",
    "FAMILIES",
    "LEFT",
    "MAX_ROWS",
    "MAX_WIRE_LINES",
    "MIN_PIECE",
    "PITCH",
    "RIGHT",
    "ROW_WIDTH",
    "diagram_layout",
]

Family = Literal["rotation", "input", "fixed", "controlled", "pair", "swap"]
"""The gate families the diagram tells apart, each drawn in its own colour."""
FAMILIES: tuple[Family, ...] = ("rotation", "input", "fixed", "controlled", "pair", "swap")
"""Every family, in the order of the legend."""

LEFT, RIGHT = 0.42, 0.2
"""Inches left of the first column (qubit indices) and right of the last (row marks)."""
PITCH = 0.26
"""Column width in inches when a drawing has more than one row."""
ROW_WIDTH = math.floor(10 * (style.WIDTH - LEFT - RIGHT) / PITCH) / 10
"""Column widths that fit one row of the 900 px figure (gaps included)."""
BLOCK_GAP = 0.3
"""Gap between two blocks, in column widths."""
MIN_PIECE = 4
"""Fewest columns of a block split across rows that start on a row already in use."""
MAX_WIRE_LINES = 80
"""Wire lines in all rows together (rows times qubits) at most: a cap on a drawing's height."""
MAX_ROWS = 12
"""Rows at most, whatever the qubit count."""
_LABEL_CHAR = 0.6 * 6.0 / 72 / PITCH
"""Width of one character of a 6 pt block label, in column widths (an upper estimate)."""


def row_cap(qubits: int) -> int:
    """The most rows a drawing of ``qubits`` wires gets.

    :data:`MAX_WIRE_LINES` wire lines in all, at most :data:`MAX_ROWS` rows, at least 2.

    Examples
    --------
    >>> row_cap(1), row_cap(4), row_cap(12), row_cap(24)
    (12, 12, 6, 3)
    """
    return max(2, min(MAX_ROWS, MAX_WIRE_LINES // qubits))


def family(op: Operation) -> Family:
    """The family of ``op``: its colour in the drawing.

    ``input`` for a gate whose angle is an input feature, else by the gate's row in the
    table: ``rotation`` (one qubit, an angle: rx ry rz), ``fixed`` (one qubit, no angle),
    ``controlled`` (a controlled one-qubit gate: cx cy cz crx cry crz), ``pair`` (two
    qubits, an angle: rxx ryy rzz) and ``swap`` (two qubits, neither).
    """
    spec = lookup(op.gate)
    if op.encoding is not None:
        return "input"
    if spec.qubits == 1:
        return "rotation" if spec.takes_angle else "fixed"
    if spec.target is not None:
        return "controlled"
    return "pair" if spec.takes_angle else "swap"


def _part(op: Operation, layers: int) -> int:
    """0 for prepare, 1 + r for repetition r of layer, layers + 1 for finish."""
    if op.step.startswith("prepare"):
        return 0
    if op.step.startswith("finish"):
        return layers + 1
    return 1 + int(op.layer or 0)


def _label(part: int, layers: int, continued: bool, width: float) -> tuple[str, bool]:
    """The longest label that fits over a block piece ``width`` columns wide, and if it is short.

    In this order: ``layer 3 (continued)``, ``layer 3 (cont.)``, ``L3 (cont.)``, ``L3``
    (``layer 3`` or ``L3`` for a first piece).
    """
    name, short = part_names(part, layers)
    tails = (" (continued)", " (cont.)") if continued else ("",)
    options = [(name + t, False) for t in tails] + [(short + t, True) for t in tails[1:]]
    for text, is_short in options:
        if len(text) * _LABEL_CHAR <= width + BLOCK_GAP:
            return text, is_short
    return short, True


def _block_columns(program: Program, parts: list[int]) -> tuple[list[int], dict[int, int], int]:
    """Column of every operation within its block, each block's column count, and the steps.

    The steps are the time steps of all blocks together (columns without the extra ones of
    crossing gates).
    """
    level = [0] * program.qubits
    busy: dict[tuple[int, int], list[set[int]]] = {}  # per (block, step): wires per sub-column
    where: list[tuple[int, int, int]] = []
    current = -1
    for op, p in zip(program.operations, parts, strict=True):
        if p != current:  # a new block: steps start again
            level, current = [0] * program.qubits, p
        t = 1 + max(level[q] for q in op.qubits)
        for q in op.qubits:
            level[q] = t
        span = set(range(min(op.qubits), max(op.qubits) + 1))
        used = busy.setdefault((p, t), [])
        j = next((i for i, u in enumerate(used) if not u & span), len(used))
        if j == len(used):
            used.append(set())
        used[j] |= span
        where.append((p, t, j))
    first: dict[tuple[int, int], int] = {}
    width: dict[int, int] = {}
    for p, t in sorted(busy):
        first[p, t] = width.get(p, 0)
        width[p] = width.get(p, 0) + len(busy[p, t])
    return [first[p, t] + j for p, t, j in where], width, len(busy)


def _pieces(widths: dict[int, int], row_width: float, *, fill: bool) -> list[dict[str, Any]]:
    """Cut the blocks into rows: one piece per (block, row), in drawing order.

    A block that does not fit in what is left of a row starts the next row when it fits
    in a row of its own (unless ``fill``) or when fewer than :data:`MIN_PIECE` columns are
    left; otherwise it is split there.
    """
    pieces: list[dict[str, Any]] = []
    row, x, start = 0, 0.0, 0
    fit = math.floor(row_width + 1e-9)
    for p, w in sorted(widths.items()):
        done = 0
        while done < w:
            left = w - done
            x0 = x + BLOCK_GAP if x > 0 else 0.0
            room = math.floor(row_width - x0 + 1e-9)
            if x > 0 and room < left and (room < MIN_PIECE or left <= fit and not fill):
                row, x = row + 1, 0.0  # the block (or its next piece) starts a new row
                continue
            take = min(left, room)
            pieces.append(
                dict(
                    part=p,
                    row=row,
                    x0=x0,
                    x1=x0 + take,
                    first=start + done,
                    last=start + done + take - 1,
                    continued=done > 0,
                    continues=done + take < w,
                )
            )
            done += take
            x = x0 + take
            if done < w:
                row, x = row + 1, 0.0
        start += w
    return pieces


def _cut(pieces: list[dict[str, Any]], rows: int) -> int:
    """Columns drawn within ``rows`` rows: at a block end if that keeps half, else all that fit."""
    inside = [pc for pc in pieces if pc["row"] < rows]
    if len(inside) == len(pieces):
        return int(pieces[-1]["last"]) + 1
    room = int(inside[-1]["last"]) + 1
    ends = [int(pc["last"]) + 1 for pc in inside if not pc["continues"]]
    return ends[-1] if ends and 2 * ends[-1] >= room else room


def diagram_layout(
    program: Program, *, row_width: float = ROW_WIDTH, max_rows: int | None = None
) -> dict[str, Any]:
    """Where every gate of ``program`` is drawn, and what the drawing says.

    Parameters
    ----------
    program : Program
        An expanded program.
    row_width : float, optional
        Width of a row, in column widths (default :data:`ROW_WIDTH`, what fits 900 px).
    max_rows : int, optional
        Rows drawn at most (default :func:`row_cap` of the qubit count).

    Returns
    -------
    dict
        ``gates``: one dict per drawn operation in program order, with ``index`` (in
        ``program.operations``), ``gate``, ``qubits``, ``step`` (its time step, as in the
        depth), ``part`` (0 prepare, 1..L layers, L+1 finish), ``column`` (counted over
        the whole drawing), ``row``, ``x`` (left edge in column widths from the row's
        start), ``family``, ``name`` (what its tile reads), ``angle`` (the label under
        it, or ``""``) and ``source`` (an ``AngleKind`` of :mod:`haarline.plots._diagram_words`).
        ``blocks``: one dict per piece of a block in a row, with ``part``, ``row``, ``x0``
        and ``x1`` (its extent in column widths), ``first`` and ``last`` (columns),
        ``continued`` (begun on an earlier row), ``continues`` (goes on in the next row,
        or is cut there), ``kind`` (``prepare``, ``layer`` or ``finish``), ``label`` (what
        is written above it: the block's name, ``(continued)`` or ``(cont.)`` on a later
        piece) and ``short`` (whether the label uses the short name, ``L3`` for ``layer 3``,
        ``prep``, ``fin``).
        ``rows``: the number of rows.
        ``columns`` (drawn) and ``total_columns``; ``depth``; ``block_steps``: the time
        steps of all blocks together (``depth`` or more); ``families``: those
        drawn, in legend order; ``shortened``: whether a parameter name was cut;
        ``hidden_gates``, ``hidden_layers``, ``cut_part`` (the block drawn only in part,
        or ``None``) and ``note`` (what is drawn, empty when everything is).

    Raises
    ------
    ValueError
        If ``row_width`` is below 1 or ``max_rows`` below 1.

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> from haarline.circuit.program import expand
    >>> p = expand(parse_circuit({"qubits": 3, "layers": 2, "layer": [
    ...     {"gate": "ry"}, {"gate": "cz", "on": "chain"}]}))
    >>> lay = diagram_layout(p)
    >>> lay["depth"], lay["columns"], [g["column"] for g in lay["gates"][:5]]
    (6, 6, [0, 0, 0, 1, 2])
    >>> [(b["label"], b["first"], b["last"]) for b in lay["blocks"]]
    [('layer 1', 0, 2), ('layer 2', 3, 5)]
    """
    if row_width < 1:
        raise ValueError(f"row_width must be at least 1 column, got {row_width}")
    rows_cap = row_cap(program.qubits) if max_rows is None else max_rows
    if rows_cap < 1:
        raise ValueError(f"max_rows must be at least 1, got {rows_cap}")
    layers = program.layers
    parts = [_part(op, layers) for op in program.operations]
    inner, widths, block_steps = _block_columns(program, parts)
    offset, at = {}, 0
    for p in sorted(widths):
        offset[p], at = at, at + widths[p]
    column = [offset[p] + c for p, c in zip(parts, inner, strict=True)]
    pieces = _pieces(widths, row_width, fill=False)
    filled = _pieces(widths, row_width, fill=True)
    if filled[-1]["row"] < pieces[-1]["row"]:  # splitting blocks saves rows
        pieces = filled
    cut = _cut(pieces, rows_cap)
    blocks = []
    for pc in pieces:
        if pc["first"] >= cut:
            break
        if pc["last"] >= cut:  # the piece the cap ends inside
            pc = {**pc, "last": cut - 1, "x1": pc["x0"] + cut - pc["first"], "continues": True}
        label, short = _label(pc["part"], layers, pc["continued"], pc["x1"] - pc["x0"])
        kind = "prepare" if pc["part"] == 0 else "finish" if pc["part"] > layers else "layer"
        blocks.append({**pc, "kind": kind, "label": label, "short": short})
    drawn = [k for k, c in enumerate(column) if c < cut]
    steps = time_steps(program)
    piece_of = {c: b for b in blocks for c in range(b["first"], b["last"] + 1)}
    gates = []
    for k in drawn:
        op, b = program.operations[k], piece_of[column[k]]
        name, angle, source = gate_texts(op, program)
        gates.append(
            dict(
                index=k,
                gate=op.gate,
                qubits=tuple(op.qubits),
                step=steps[k],
                part=parts[k],
                column=column[k],
                row=b["row"],
                x=b["x0"] + column[k] - b["first"],
                family=family(op),
                name=name,
                angle=angle,
                source=source,
            )
        )
    whole = [p for p in sorted(widths) if offset[p] + widths[p] <= cut]
    cut_part = next((p for p in sorted(widths) if offset[p] < cut < offset[p] + widths[p]), None)
    rest = [p for p in sorted(widths) if offset[p] >= cut]
    cut_info = None if cut_part is None else (cut_part, cut - offset[cut_part], widths[cut_part])
    present = {g["family"] for g in gates}
    return {
        "gates": gates,
        "blocks": blocks,
        "rows": 1 + int(blocks[-1]["row"]),
        "columns": cut,
        "total_columns": at,
        "depth": max(steps, default=0),
        "block_steps": block_steps,
        "families": [f for f in FAMILIES if f in present],
        "shortened": any(g["angle"].endswith("…") for g in gates),
        "hidden_gates": len(program.operations) - len(drawn),
        "hidden_layers": sum(1 for p in range(1, layers + 1) if p not in whole),
        "cut_part": cut_part,
        "note": capped_note(program, len(drawn), whole, cut_info, rest) if rest or cut_info else "",
    }
