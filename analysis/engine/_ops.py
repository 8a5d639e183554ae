"""Operation sequences of the kernel forms, bound to views of a tile.

Each form of :mod:`haarline.engine._coefficients` becomes a short list of in-place numpy calls
on the two halves (or quarters) of a tile that a kernel mixes; each call takes the tile's
coefficient table ``c`` (one row per slot) and reads its coefficients from it, or uses the
constants of fixed gates (multiplications by 0 and 1 are skipped). On a real tile (a
segment whose coefficients are all real, run on real states) the constants are taken as
real numbers: the same products, without the zero imaginary parts.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
from haarline.engine._records import Amplitudes, BlockKind, Coef

__all__ = ["Op", "ops_2x2"]

Op = Callable[[Amplitudes], object]
"""One bound operation: called with the tile's coefficient table (what it returns is
ignored)."""


def _is(value: object, target: complex) -> bool:
    return isinstance(value, complex) and value == target


def ops_2x2(
    kind: BlockKind,
    coefs: tuple[Coef, ...],
    a: Amplitudes,
    b: Amplitudes,
    u: Amplitudes,
    v: Amplitudes,
) -> list[Op]:
    """Operations for ``(a, b) <- M (a, b)`` in place.

    ``u``, ``v`` are temporaries of the same shape; ``coefs`` holds constants or indices
    into the tile's coefficient table. On a real tile the constants must be real.
    """
    real = a.dtype.kind == "f"

    def get(c: Amplitudes, x: Coef) -> complex | float | Amplitudes:
        if isinstance(x, complex):
            return _constant(x, real)
        row: Amplitudes = c[x]
        return row

    ops: list[Op] = []
    if kind == "diag1":
        (d1,) = coefs
        if not _is(d1, 1):
            ops.append(lambda c: np.multiply(b, get(c, d1), out=b))
        return ops
    if kind == "diag":  # a * diag(1, r): the factor a goes to the running scale
        (r,) = coefs
        if _is(r, -1):
            ops.append(lambda c: np.negative(b, out=b))
        elif not _is(r, 1):
            ops.append(lambda c: np.multiply(b, get(c, r), out=b))
        return ops
    if kind == "diag2":
        d0, d1 = coefs
        if not _is(d0, 1):
            ops.append(lambda c: np.multiply(a, get(c, d0), out=a))
        if not _is(d1, 1):
            ops.append(lambda c: np.multiply(b, get(c, d1), out=b))
        return ops
    if kind == "shear_diag":  # [[1, beta], [gamma, 1]], then diag(1, r)
        beta, gamma, r = coefs
        return ops_2x2("shear", (beta, gamma), a, b, u, v) + ops_2x2("diag", (r,), a, b, u, v)
    if kind == "shear":  # [[1, beta], [gamma, 1]]
        beta, gamma = coefs

        def shear(c: Amplitudes) -> None:
            np.multiply(b, get(c, beta), out=u)
            np.multiply(a, get(c, gamma), out=v)
            np.add(a, u, out=a)
            np.add(b, v, out=b)

        return [shear]
    if kind != "general":
        raise ValueError(f"unknown block kind {kind!r}")
    m00, m01, m10, m11 = coefs
    if (
        isinstance(m00, complex)
        and isinstance(m01, complex)
        and isinstance(m10, complex)
        and isinstance(m11, complex)
    ):
        return _ops_fixed(
            _constant(m00, real),
            _constant(m01, real),
            _constant(m10, real),
            _constant(m11, real),
            *(a, b, u, v),
        )

    def general(c: Amplitudes) -> None:
        np.multiply(a, get(c, m00), out=u)
        np.multiply(b, get(c, m01), out=v)
        np.add(u, v, out=u)
        np.multiply(a, get(c, m10), out=v)
        np.multiply(b, get(c, m11), out=b)
        np.add(b, v, out=b)
        np.copyto(a, u)

    return [general]


def _constant(x: complex, real: bool) -> complex | float:
    """A constant as a tile of this kind multiplies by it: its real part on a real tile."""
    if not real:
        return x
    if x.imag != 0:
        raise ValueError(f"a real tile cannot multiply by the complex constant {x}")
    return x.real


def _ops_fixed(
    m00: complex | float,
    m01: complex | float,
    m10: complex | float,
    m11: complex | float,
    a: Amplitudes,
    b: Amplitudes,
    u: Amplitudes,
    v: Amplitudes,
) -> list[Op]:
    """A fixed 2x2 in place, skipping multiplications by 0 and 1."""

    def scaled(x: Amplitudes, m: complex | float, out: Amplitudes) -> None:
        if m == 1:
            np.copyto(out, x)
        elif m == -1:
            np.negative(x, out=out)
        else:
            np.multiply(x, m, out=out)

    def fixed(c: Amplitudes) -> None:
        # new a into u
        if m00 != 0:
            scaled(a, m00, u)
            if m01 != 0:
                scaled(b, m01, v)
                np.add(u, v, out=u)
        else:
            scaled(b, m01, u)
        # new b in place
        if m11 == 0:
            scaled(a, m10, b)
        else:
            if m11 != 1:
                scaled(b, m11, b)
            if m10 != 0:
                scaled(a, m10, v)
                np.add(b, v, out=b)
        np.copyto(a, u)

    return [fixed]
