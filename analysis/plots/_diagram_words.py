"""The words of the circuit diagram: block names, angle labels, what a capped drawing shows.

Used by :mod:`haarline.plots.diagram_layout`, which puts these texts in its layout so that
tests read them without looking at pixels.
"""

from __future__ import annotations

from typing import Literal

from haarline.circuit.gates import lookup
from haarline.circuit.program import Operation, Program
from haarline.plots import _style as style

__all__ = ["NAME_CHARS", "AngleKind", "capped_note", "gate_texts", "part_names"]

AngleKind = Literal["parameter", "named", "input", "fixed", "none"]
"""Where a gate's angle comes from (``none`` for a gate without one)."""
NAME_CHARS = 6
"""Longest parameter name shown in full; longer ones keep their first 5 characters and …."""


def part_names(part: int, layers: int) -> tuple[str, str]:
    """The block's label and its short form (for a narrow block)."""
    if part == 0:
        return "prepare", "prep"
    if part == layers + 1:
        return "finish", "fin"
    return f"layer {part}", f"L{part}"


def _param_text(program: Program, param: int) -> str:
    name = program.parameter_names[param] if param < len(program.parameter_names) else None
    if name is None:
        return f"θ{param}"
    return name if len(name) <= NAME_CHARS else name[: NAME_CHARS - 1] + "…"


def gate_texts(op: Operation, program: Program) -> tuple[str, str, AngleKind]:
    """The text of the gate's tile (the target's, for a controlled gate), its angle, its source.

    A trainable angle reads ``θk``, or the description's ``param`` name; an input angle
    names its features (``x2``, ``3·x0``, ``x0·x1`` for a product encoding); a fixed angle
    is in radians with two decimals.
    """
    spec = lookup(op.gate)
    name = str(spec.target if spec.target else op.gate)
    if op.encoding is not None:
        e = program.encodings[op.encoding]
        text = "·".join(f"x{f}" for f in e.features)
        return name, (text if e.scale == 1 else f"{e.scale:g}·{text}"), "input"
    if op.param is not None:
        named = op.param < len(program.parameter_names) and program.parameter_names[op.param]
        return name, _param_text(program, op.param), "named" if named else "parameter"
    if op.angle is not None:
        return name, f"{op.angle:.2f}", "fixed"
    return name, "", "none"


def _span(parts: list[int], layers: int) -> str:
    """``prepare, layers 1–12 and finish``: the blocks ``parts`` in words."""
    words = [part_names(p, layers)[0] for p in parts if p == 0]
    inner = [p for p in parts if 1 <= p <= layers]
    runs: list[list[int]] = []
    for p in inner:
        if runs and runs[-1][-1] == p - 1:
            runs[-1].append(p)
        else:
            runs.append([p])
    for run in runs:
        words.append(f"layer {run[0]}" if len(run) == 1 else f"layers {run[0]}–{run[-1]}")
    words += [part_names(p, layers)[0] for p in parts if p == layers + 1]
    return words[0] if len(words) == 1 else ", ".join(words[:-1]) + " and " + words[-1]


def capped_note(
    program: Program,
    drawn: int,
    whole: list[int],
    cut: tuple[int, int, int] | None,
    rest: list[int],
) -> str:
    """What a capped drawing shows and leaves out, in words.

    ``whole``: the blocks drawn in full; ``cut``: (block, columns drawn, its columns) for a
    block drawn in part; ``rest``: the blocks not drawn at all.
    """
    layers = program.layers
    shown = [_span(whole, layers)] if whole else []
    left = [_span(rest, layers)] if rest else []
    if cut is not None:
        name = part_names(cut[0], layers)[0]
        shown.append(f"the first {cut[1]} of the {cut[2]} columns of {name}")
        left.insert(0, f"the rest of {name}")
    total = len(program.operations)
    return (
        f"Drawn: {'; '.join(shown)} ({drawn} of {style.plural(total, 'gate')}). "
        f"Not drawn: {'; '.join(left)}."
    )
