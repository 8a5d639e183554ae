"""Per-sample coefficients of fused kernels (the numbers a tile's operations multiply by).

A kernel's *form* says how it is applied (which operation sequence, see
:mod:`haarline.engine._tiles`) and lists its coefficients: Python constants for fixed gates, or
slots of a per-block coefficient table of shape ``(slots, samples)``. The forms of a
segment and the order of its slots depend only on the plan, never on the values, so the
operations bound to a tile once stay valid for every block of samples.

Forms of a one-qubit block ``M``:

* ``diag``: ``M = a · diag(1, d/a)``; one half-array multiply, ``a`` goes to the sample's
  running factor;
* ``shear``, ``shear_diag``: ``M = diag(M00, M11) · [[1, β], [γ, 1]]`` when the block is
  diagonal gates around rotations about one axis (x or y), so ``|M00| = |M11| =
  |cos(θ/2)| > 0``; four (five) half-array operations, ``M00`` to the running factor;
* ``general``: four per-sample entries, seven half-array operations.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any, Literal, TypeAlias

import numpy as np
from haarline.circuit.gates import lookup
from haarline.engine._records import Form, Kernel, Plan, PlanStep, Segment
from numpy.typing import NDArray

__all__ = ["Entry", "evaluate", "half_angle"]

# quoted: numpy's runtime `inexact` takes one type argument, its stubs two
Entry: TypeAlias = "complex | NDArray[np.inexact[Any, Any]]"
"""One entry of a block's matrix: a Python complex constant (fixed gates), or one value
per sample, shape ``(B,)``."""
Block = tuple[Entry, Entry, Entry, Entry]
"""The entries ``(M00, M01, M10, M11)`` of a one-qubit block."""

_STEP = 1.0 / 1024
_TABLE = np.arange(int(2 * np.pi / _STEP) + 3) * _STEP
_TABLE_COS, _TABLE_SIN = np.cos(_TABLE), np.sin(_TABLE)
_ROUND = 1.5 * 2.0**52  # adding it rounds a float below 2**51 to an integer
_FAR = 64.0


def half_angle(theta: NDArray[np.float64]) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
    """``cos(θ/2)`` and ``sin(θ/2)`` for an array of angles, to about 2 ulps.

    numpy's double-precision ``cos`` costs some 20 ns per element on the reference
    machine, more than a gate on a small state; this evaluates the sum formula from a
    table at multiples of 1/1024 and short Taylor terms (|δ| ≤ 1/2048, truncation below
    1e-18). Angles beyond ±64 fall back to numpy. Elementwise, so every sample gets the
    same values whatever the batch.
    """
    shape = np.shape(theta)
    theta = np.ravel(theta)
    h = theta * 0.5
    r = h * (1 / (2 * np.pi))
    np.floor(r, out=r)
    r *= -2 * np.pi
    r += h  # h reduced to [0, 2π)
    t = r * (1 / _STEP)
    t += _ROUND
    k = t.view(np.int64) & 0xFFFF
    t -= _ROUND
    t *= _STEP
    lo = np.subtract(r, t, out=r)
    c0, s0 = _TABLE_COS[k], _TABLE_SIN[k]
    l2 = lo * lo
    cl = l2 * (1 / 24)
    cl -= 0.5
    cl *= l2
    cl += 1.0
    sl = l2 * (-1 / 6)
    sl *= lo
    sl += lo
    c = c0 * cl
    c -= s0 * sl
    s0 *= cl
    c0 *= sl
    s0 += c0
    far = np.flatnonzero(np.abs(theta) > _FAR)
    if far.size:
        c[far], s0[far] = np.cos(h[far]), np.sin(h[far])
    return c.reshape(shape), s0.reshape(shape)


def _fixed_angle(step: PlanStep) -> float:
    """Angle of a fixed-angle one-axis rotation (rx, ry, rxx, ryy), read from its matrix."""
    m = step.fixed
    assert m is not None
    c = m[0, 0].real
    name = step.spec.name
    if name == "ry":
        s = -m[0, 1].real
    elif name == "ryy":
        s = m[0, 3].imag
    else:  # rx, rxx: the corner entry is -i sin
        s = -m[0, -1].imag
    return float(2.0 * np.arctan2(s, c))


class _Slots:
    """Collects per-sample coefficient arrays in slot order."""

    def __init__(self, width: int) -> None:
        self.width = width
        self.values: list[Entry] = []
        self.count = 0

    def add(self, values: Entry) -> int:
        self.values.append(values)
        self.count += 1
        return self.count - 1

    def add_rows(self, block: NDArray[np.complex128]) -> int:
        """Add a block of ``len(block)`` consecutive slots; return the first."""
        self.values.append(block)
        self.count += len(block)
        return self.count - len(block)


class _Angles:
    """The angles of a block of parameter vectors.

    ``cos`` and ``sin`` of every half angle are evaluated once, in one call for the whole
    block, not one per gate.
    """

    def __init__(self, steps: Sequence[PlanStep], thetas: NDArray[np.float64]) -> None:
        self.steps = steps
        self.raw = np.ascontiguousarray(np.asarray(thetas, dtype=float).T)  # (P, B)
        self.cos, self.sin = half_angle(self.raw)

    def __call__(self, g: int) -> NDArray[np.float64] | None:
        """Angles of step ``g`` for every sample, or None for a fixed step."""
        p = self.steps[g].param
        return self.raw[p] if p is not None else None

    def values(self, g: int) -> NDArray[np.float64]:
        """Angles of a parameterized step ``g`` for every sample."""
        p = self.steps[g].param
        if p is None:
            raise ValueError(f"step {g} is a fixed gate: it has no angles")
        row: NDArray[np.float64] = self.raw[p]
        return row

    def half(self, g: int) -> tuple[NDArray[np.float64], NDArray[np.float64]]:
        """``cos(θ/2)`` and ``sin(θ/2)`` of a parameterized step ``g``."""
        p = self.steps[g].param
        return self.cos[p], self.sin[p]


def _entries(step: PlanStep, angles: _Angles, g: int) -> Block:
    """The four entries of a one-qubit step's matrix (the target's for controlled gates).

    Python complex constants for fixed gates, arrays of shape (B,) otherwise.
    """
    if step.fixed is not None and step.fixed.shape == (2, 2):
        f00, f01, f10, f11 = (complex(x) for x in step.fixed.ravel())
        return (f00, f01, f10, f11)
    spec = lookup(step.spec.target) if step.spec.target is not None else step.spec
    if spec.generator not in ("X", "Y", "Z"):
        m = spec.matrix(angles.values(g))
        return (m[:, 0, 0], m[:, 0, 1], m[:, 1, 0], m[:, 1, 1])
    c, s = angles.half(g)
    if spec.generator == "X":
        return (c, -1j * s, -1j * s, c)
    if spec.generator == "Y":
        return (c, -s, s, c)
    return (c - 1j * s, 0j, 0j, c + 1j * s)


def _is(value: object, target: complex) -> bool:
    return isinstance(value, complex) and value == target


def _zero(x: object) -> bool:
    return isinstance(x, complex) and x == 0


def _times(x: Entry, y: Entry) -> Entry:
    if _zero(x) or _zero(y):
        return 0j
    return x * y


def _plus(x: Entry, y: Entry) -> Entry:
    if _zero(x):
        return y
    if _zero(y):
        return x
    return x + y


def _product(g: Block, h: Block) -> Block:
    """Entries of ``g @ h`` (2x2, entries constants or (B,) arrays), skipping zeros."""
    g00, g01, g10, g11 = g
    h00, h01, h10, h11 = h
    return (
        _plus(_times(g00, h00), _times(g01, h10)),
        _plus(_times(g00, h01), _times(g01, h11)),
        _plus(_times(g10, h00), _times(g11, h10)),
        _plus(_times(g10, h01), _times(g11, h11)),
    )


def _form(plan: Plan, k: Kernel, angles: _Angles, batch: int, co: _Slots) -> Form:
    steps = plan.steps
    if k.kind == "perm":
        return Form("perm", k)
    if k.kind == "one":
        matrices = [steps[g].fixed for g in k.steps]
        if all(f is not None for f in matrices):
            m = np.eye(2, dtype=complex)
            for f in matrices:
                assert f is not None
                m = f @ m
            return _fixed_2x2(k, m)
        split = _rotation_split(plan, k)
        if split is not None:
            return _shear_form(plan, k, split, angles, batch, co)
        block: Block = (1 + 0j, 0j, 0j, 1 + 0j)
        for g in k.steps:
            block = _product(_entries(steps[g], angles, g), block)
        m00, m01, m10, m11 = block
        if _zero(m01) and _zero(m10):
            return Form("diag", k, (co.add(m11 / m00),), co.add(m00))
        return Form("general", k, tuple(co.add(x) for x in block))
    g0 = k.steps[0]
    step = steps[g0]
    spec = step.spec
    a = angles(g0)
    if spec.target is not None:
        if step.fixed is not None:
            form = _fixed_2x2(k, step.fixed, factor=False)
            return Form(form.kind, k, form.coefs, None, controlled=True)
        m00, m01, m10, m11 = _entries(step, angles, g0)
        if spec.diagonal:
            return Form("diag2", k, (co.add(m00), co.add(m11)), controlled=True)
        coefs = tuple(co.add(x) for x in (m00, m01, m10, m11))
        return Form("general", k, coefs, controlled=True)
    if spec.diagonal:
        if step.fixed is not None:
            d = np.diag(step.fixed)
            return Form("diag4", k, tuple(complex(x / d[0]) for x in d[1:]), complex(d[0]))
        d = np.diagonal(spec.matrix(angles.values(g0)), axis1=1, axis2=2)
        return Form(
            "diag4", k, tuple(co.add(d[:, j] / d[:, 0]) for j in (1, 2, 3)), co.add(d[:, 0])
        )
    if spec.name in ("rxx", "ryy"):
        if a is not None:
            c, t = angles.half(g0)
        else:
            c, t = half_angle(np.full(batch, _fixed_angle(step)))
        tan = -1j * (t / c)
        outer = tan if spec.name == "rxx" else -tan  # the (00, 11) pair: ±i tan
        return Form("pairs", k, (co.add(outer), co.add(tan)), co.add(c))
    if spec.name == "swap":
        return Form("swap", k)
    if step.fixed is not None:
        return Form("general4", k, tuple(complex(x) for x in step.fixed.ravel()))
    m = spec.matrix(angles.values(g0))
    return Form("general4", k, tuple(co.add(m[:, i, j]) for i in range(4) for j in range(4)))


Axis = Literal["rx", "ry"]
"""The one-axis rotations a shear form absorbs."""


def _rotation_split(plan: Plan, kernel: Kernel) -> tuple[int, int, Axis] | None:
    """Where the one-axis rotations of a block are, if it has that shape.

    For a block (diagonal gates) · (rotations about one axis, x or y) · (diagonal gates)
    return ``(start, stop, axis)`` of the rotations, else None.
    """
    names = [plan.steps[g].spec.name for g in kernel.steps]
    diag = [plan.steps[g].spec.diagonal for g in kernel.steps]
    middle = [i for i, d in enumerate(diag) if not d]
    if not middle:
        return None
    start, stop = middle[0], middle[-1] + 1
    axes = set(names[start:stop])
    if stop - start != len(middle) or axes not in ({"rx"}, {"ry"}):
        return None
    return start, stop, "rx" if axes == {"rx"} else "ry"


def _shear_form(
    plan: Plan,
    k: Kernel,
    split: tuple[int, int, Axis],
    angles: _Angles,
    batch: int,
    co: _Slots,
) -> Form:
    """Shear form of ``S · R · P``, ``R`` one rotation and ``P``, ``S`` diagonal.

    ``M = diag(M00, M11) · [[1, β], [γ, 1]]`` with ``β = M01/M00``, ``γ = M10/M11``
    (``R``'s angle is the total of the middle gates); applied as the shear, then
    ``diag(1, M11/M00)``, with the factor ``M00`` left to the running scale.
    """
    steps = plan.steps
    start, stop, axis = split
    middle = k.steps[start:stop]
    if len(middle) == 1 and steps[middle[0]].param is not None:
        c, s = angles.half(middle[0])
    else:
        total = np.zeros(batch)
        for g in middle:
            a = angles(g)
            total = total + (a if a is not None else _fixed_angle(steps[g]))
        c, s = half_angle(total)
    t = s / c
    x, x2 = (-1j * t, -1j * t) if axis == "rx" else (-t, t)

    def diagonal(gates: tuple[int, ...]) -> tuple[Entry, Entry]:
        d0: Entry = 1 + 0j
        d1: Entry = 1 + 0j
        for g in gates:
            e = _entries(steps[g], angles, g)
            d0, d1 = _times(e[0], d0), _times(e[3], d1)
        return d0, d1

    p0, p1 = diagonal(k.steps[:start])
    s0, s1 = diagonal(k.steps[stop:])
    beta: Entry
    gamma: Entry
    if _is(p0, 1) and _is(p1, 1):
        beta, gamma = x, x2
    else:
        ratio = p1 / p0
        beta, gamma = x * ratio, x2 / ratio
    r = _times(s1, p1) / _times(s0, p0)
    factor = _times(_times(s0, c), p0)
    coefs = (co.add(beta), co.add(gamma))
    if _is(r, 1):
        return Form("shear", k, coefs, co.add(factor))
    return Form("shear_diag", k, (*coefs, co.add(r)), co.add(factor))


def _fixed_2x2(k: Kernel, m: NDArray[np.complex128], *, factor: bool = True) -> Form:
    """The cheapest form of a fixed one-qubit matrix.

    ``factor=False`` for the target of a controlled gate, where no factor may move to
    the sample's running scale.
    """
    m00, m01, m10, m11 = (complex(x) for x in m.ravel())
    if m01 == 0 and m10 == 0:
        if m00 == 1:
            return Form("diag1", k, (m11,))
        if not factor:
            return Form("diag2", k, (m00, m11))
        return Form("diag", k, (m11 / m00,), m00)
    if factor and m00 != 0 and abs(m00 - m11) < 1e-15:
        return Form("shear", k, (m01 / m00, m10 / m00), m00)
    return Form("general", k, (m00, m01, m10, m11))


def evaluate(
    plan: Plan, seg: Segment, thetas: NDArray[np.float64], dtype: np.dtype[Any]
) -> tuple[list[Form], NDArray[Any]]:
    """Forms of a segment's kernels and their coefficient table.

    The table has shape ``(slots, len(thetas))``: one column per parameter vector (row
    of ``thetas``) of the block.
    """
    width = thetas.shape[0]
    slots = _Slots(width)
    angles = _Angles(plan.steps, thetas)

    forms = [
        _phase_form(plan, k, seg.qubits, angles, width, slots)
        if k.kind == "phase"
        else _form(plan, k, angles, width, slots)
        for k in seg.kernels
    ]
    table = np.empty((slots.count, width), dtype=dtype)
    row = 0
    for v in slots.values:
        if isinstance(v, np.ndarray) and v.ndim == 2:
            table[row : row + len(v)] = v
            row += len(v)
        else:
            table[row] = v
            row += 1
    return forms, table


def _diagonal_entries(step: PlanStep, angles: _Angles, g: int) -> tuple[Entry, ...]:
    """Diagonal of a diagonal step's matrix (4 entries for two-qubit gates).

    Constants for fixed gates, arrays of shape (B,) otherwise.
    """
    if len(step.qubits) == 1:
        e = _entries(step, angles, g)
        return (e[0], e[3])
    if step.spec.target is not None:  # controlled: identity where the control is |0>
        e = _entries(step, angles, g)
        return (1 + 0j, 1 + 0j, e[0], e[3])
    if step.fixed is not None:
        return tuple(complex(x) for x in np.diag(step.fixed))
    d = np.diagonal(step.spec.matrix(angles.values(g)), axis1=1, axis2=2)
    return tuple(d[:, j] for j in range(4))


def _phase_form(
    plan: Plan, k: Kernel, local: tuple[int, ...], angles: _Angles, width: int, co: _Slots
) -> Form:
    """A run of diagonal kernels as one table of per-sample phases over the local index.

    The table, ``(2**len(local), width)``, is built by multiplying every gate's diagonal
    into it; the tile then needs one multiply for the whole run.
    """
    kq = len(local)
    pos = {q: i for i, q in enumerate(local)}
    table = np.ones((1 << kq, width), dtype=complex)
    for member in k.members:
        if member.kind == "perm":
            assert member.phase is not None
            table *= member.phase[:, None]
            continue
        for g in member.steps:
            step = plan.steps[g]
            d = _diagonal_entries(step, angles, g)
            factor = np.empty((len(d), width), dtype=complex)
            for i, x in enumerate(d):
                factor[i] = x
            if len(step.qubits) == 1:
                p = pos[step.qubits[0]]
                view = table.reshape(1 << p, 2, 1 << (kq - p - 1), width)
                view *= factor[None, :, None, :]
                continue
            p1, p2 = pos[step.qubits[0]], pos[step.qubits[1]]
            lo, hi = min(p1, p2), max(p1, p2)
            view = table.reshape(1 << lo, 2, 1 << (hi - lo - 1), 2, 1 << (kq - hi - 1), width)
            f = factor.reshape(2, 2, width)  # indexed (b_first, b_second)
            if p1 > p2:
                f = f.transpose(1, 0, 2)
            view *= f[None, :, None, :, None, :]
    return Form("phase", k, (co.add_rows(table), 1 << kq))
