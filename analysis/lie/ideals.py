"""Simple ideals of a compact Lie algebra, found from its adjoint representation.

A compact Lie algebra is the sum of its centre and its simple ideals, and its adjoint
representation splits the same way: each simple ideal is an absolutely irreducible
summand, and no two are isomorphic as modules (each is moved only by itself). So for
``ad`` matrices written in an orthonormal basis (the ideals are orthogonal for the
invariant trace form), every ``ad_x`` is block diagonal over the ideals. With a few
random elements ``x_r`` the symmetric matrix ``S = Σ_r ad_{x_r} ad_{x_r}^T`` is block
diagonal with spectra that differ between ideals, so its eigenvectors lie in single
ideals; eigenvectors that some ``ad`` of a generating set connects belong to one ideal,
because a span of eigenvectors kept by every ``ad`` of a generating set is an ideal. An
ideal's rank is the nullity of ``ad_x`` on it for a generic ``x`` (the dimension of a
Cartan subalgebra), and ``(dimension, rank)`` names its type in Cartan's list, up to
so(2k+1) against sp(k). An ideal whose ``(dimension, rank)`` matches no simple algebra
is reported with ``simple = None``: it may hold several simple ideals.

For an algebra spanned by Pauli strings, ``ad`` of ``Σ_a w_a P_a`` comes straight from
string products; for Pauli sums, ``ad`` of each generator costs one sparse bracket per
basis element, and random elements of growing depth follow from matrix commutators,
``ad_[a,b] = [ad_a, ad_b]``, so no dense element is ever bracketed.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np
from haarline.engine.sampling import Stream, block_rng
from haarline.lie.pauli import PauliExpansion, anticommutes, bracket, product_phase
from numpy.typing import NDArray

__all__ = ["IDEAL_STREAM", "SPLIT_LIMIT", "Ideal", "simple_algebra_names"]

Floats = NDArray[np.float64]
Ints = NDArray[np.int64]

SPLIT_LIMIT = 1024
"""Largest ideal that is split numerically into simple ideals."""
IDEAL_STREAM = int(Stream.IDEALS)
"""Random stream (of :func:`haarline.engine.sampling.block_rng`) for the splitting elements."""


def simple_algebra_names(dimension: int, rank: int) -> tuple[str, ...]:
    """Compact simple Lie algebras with this dimension and rank (Cartan's list).

    Isomorphic names are joined by ``=``; different entries are different algebras that
    dimension and rank cannot tell apart (so(2k+1) and sp(k) from k = 3 on).

    Examples
    --------
    >>> simple_algebra_names(15, 3), simple_algebra_names(28, 4), simple_algebra_names(21, 3)
    (('su(4) = so(6)',), ('so(8)',), ('so(7)', 'sp(3)'))
    """
    k, d = rank, dimension
    out = []
    if k >= 1 and d == k * (k + 2):
        out.append({1: "su(2) = so(3) = sp(1)", 3: "su(4) = so(6)"}.get(k, f"su({k + 1})"))
    if k >= 2 and d == k * (2 * k + 1):
        out.append("so(5) = sp(2)" if k == 2 else f"so({2 * k + 1})")
        if k >= 3:
            out.append(f"sp({k})")
    if k >= 4 and d == k * (2 * k - 1):
        out.append(f"so({2 * k})")
    out += [name for name, (dd, kk) in _EXCEPTIONAL.items() if (dd, kk) == (d, k)]
    return tuple(out)


_EXCEPTIONAL = {"g2": (14, 2), "f4": (52, 4), "e6": (78, 6), "e7": (133, 7), "e8": (248, 8)}


@dataclass(frozen=True, eq=False, kw_only=True)
class Ideal:
    """One ideal of the semisimple part, with an orthonormal basis.

    ``basis`` rows are coefficient vectors over the strings ``x, z`` (``None``: the
    strings themselves are the basis). ``simple`` is ``None`` when the ideal was too large
    to split (:data:`SPLIT_LIMIT`) and so may hold several simple ideals.
    """

    dimension: int
    rank: int | None
    simple: bool | None
    names: tuple[str, ...]
    x: Ints
    z: Ints
    basis: Floats | None

    def to_dict(self) -> dict[str, Any]:
        """Return the report object (plain JSON types)."""
        return {
            "dimension": self.dimension,
            "rank": self.rank,
            "simple": self.simple,
            "names": list(self.names),
        }


def _whole(x: Ints, z: Ints, n: int, basis: Floats | None) -> Ideal:
    """All of su(2**n), simple of rank ``2**n - 1``."""
    d, rank = 4**n - 1, (1 << n) - 1
    names = simple_algebra_names(d, rank)
    return Ideal(dimension=d, rank=rank, simple=True, names=names, x=x, z=z, basis=basis)


def _string_ad(x: Ints, z: Ints, n: int, w: Floats) -> Floats:
    """Matrix of ``ad_u`` (``u = Σ w_a P_a``) on the span of the strings ``P_a``."""
    order = np.argsort((x << n) | z)
    keys = ((x << n) | z)[order]
    q, p = np.nonzero(anticommutes(x[:, None], z[:, None], x, z))
    k = product_phase(x[q], z[q], x[p], z[p])
    rows = order[np.searchsorted(keys, ((x[q] ^ x[p]) << n) | (z[q] ^ z[p]))]
    ad = np.zeros((x.size, x.size))
    np.add.at(ad, (rows, p), np.where(k == 3, 2.0, -2.0) * w[q])
    return ad


def string_ideals(x: Ints, z: Ints, n: int, limit: int) -> list[Ideal]:
    """Simple ideals of the span of the Pauli strings ``(x, z)`` (closed, centre-free).

    All of su(2**n) is simple; a span larger than ``limit`` is returned whole with
    ``simple = None``.
    """
    d = x.size
    if d == 4**n - 1:
        return [_whole(x, z, n, None)]
    if d > limit:
        return [Ideal(dimension=d, rank=None, simple=None, names=(), x=x, z=z, basis=None)]
    rng = block_rng(0, (IDEAL_STREAM,), 0)
    ads = [_string_ad(x, z, n, rng.normal(size=d)) for _ in range(3)]
    out = []
    for dim, rank, rows in _split(ads):
        names = simple_algebra_names(dim, rank)
        simple = True if names else None
        out.append(
            Ideal(dimension=dim, rank=rank, simple=simple, names=names, x=x, z=z, basis=rows)
        )
    return out


def _split(ads: list[Floats], ranked: list[Floats] | None = None) -> list[tuple[int, int, Floats]]:
    """Simple ideals from ``ad`` matrices in an orthonormal basis.

    ``ads`` are ``ad`` matrices of elements that generate the algebra (random elements,
    or the generators and a few random brackets); ``ranked`` are random elements whose
    nullity on each ideal gives its rank (default ``ads[:1]``; the smallest nullity is
    kept). Returns ``(dimension, rank, basis rows)`` per ideal; the rows are orthonormal
    coordinates in the basis the matrices are written in.
    """
    s = np.zeros((ads[0].shape[0],) * 2)
    for a in ads:
        s += a @ a.T
    _, vecs = np.linalg.eigh(s)
    scale = max(float(np.abs(a).max(initial=0.0)) for a in ads) or 1.0
    d = s.shape[0]
    linked = np.zeros((d, d), dtype=bool)
    for a in ads:
        m = vecs.T @ a @ vecs
        linked |= np.abs(m) > 1e-8 * scale
    linked |= linked.T
    moved = [vecs.T @ a @ vecs for a in (ranked or ads[:1])]
    label = np.full(d, -1)
    out = []
    for start in range(d):
        if label[start] >= 0:
            continue
        stack, members = [start], []
        label[start] = start
        while stack:
            i = stack.pop()
            members.append(i)
            for j in np.nonzero(linked[i])[0]:
                if label[j] < 0:
                    label[j] = start
                    stack.append(int(j))
        sel = np.sort(np.array(members))
        rank = sel.size
        for m in moved:
            sv = np.linalg.svd(m[np.ix_(sel, sel)], compute_uv=False)
            top = max(float(sv.max(initial=0.0)), 1e-300)
            rank = min(rank, int(np.sum(sv <= 1e-8 * top)))
        out.append((sel.size, rank, vecs[:, sel].T))
    return out


def sum_ideals(
    semi: Floats, gens: list[PauliExpansion], x: Ints, z: Ints, n: int, limit: int
) -> list[Ideal]:
    """Split the semisimple part (orthonormal rows ``semi``) into simple ideals.

    ``ad`` of each generator in the basis ``semi`` costs one sparse bracket per basis row;
    random elements of growing depth come from matrix commutators,
    ``ad_[a,b] = [ad_a, ad_b]``, so no dense element is ever bracketed.
    """
    d = semi.shape[0]
    if d == 4**n - 1:
        return [_whole(x, z, n, semi)]
    if d > limit or len(gens) * d * d > 1 << 23:
        return [Ideal(dimension=d, rank=None, simple=None, names=(), x=x, z=z, basis=semi)]
    order = np.argsort((x << n) | z)
    sorted_keys = ((x << n) | z)[order]
    rows = [PauliExpansion(n, x, z, r).merged() for r in semi]
    ads = []
    for g in gens:
        ad = np.zeros((d, d))
        for b, e in enumerate(rows):
            c = bracket(g, e)
            full = np.zeros(x.size)
            full[order[np.searchsorted(sorted_keys, c.keys)]] = c.coef
            ad[:, b] = semi @ full
        ads.append(ad)
    rng = block_rng(0, (IDEAL_STREAM,), 1)
    stack = np.stack(ads)
    walk = np.tensordot(rng.normal(size=len(ads)), stack, axes=1)
    deep = [walk]
    for _ in range(3):
        step = np.tensordot(rng.normal(size=len(ads)), stack, axes=1)
        walk = step @ walk - walk @ step
        walk /= max(float(np.abs(walk).max(initial=0.0)), 1e-300)
        deep.append(walk)
    mixed = np.sum(deep, axis=0)
    parts = _split(ads + deep, [deep[0], mixed])
    out = []
    for dim, rank, coords in parts:
        names = simple_algebra_names(dim, rank)
        simple = True if names else None
        basis = coords @ semi
        out.append(
            Ideal(dimension=dim, rank=rank, simple=simple, names=names, x=x, z=z, basis=basis)
        )
    return out
