"""The Lie closure of a set of Hermitian generators, and its centre.

The dynamical Lie algebra of generators ``{G_k}`` is the real span of ``{iG_k}`` and all
their repeated commutators. We work with Hermitian representatives: ``A`` stands for
``iA``, and the bracket is ``i[A, B]`` (:func:`haarline.lie.pauli.bracket`). The algebra lies
in su(2**n), whose dimension ``4**n - 1`` bounds it.

Closure (:func:`generate_algebra`) needs only brackets with the generators: the span of
the generators that is closed under every ``ad_{G_k}`` is already closed under all
brackets. (Let ``W`` be that span and ``A`` the set of ``a ∈ W`` with ``ad_a W ⊆ W``.
``A`` holds the generators, and for ``a, b ∈ A`` the identity
``ad_[a,b] = ad_a ad_b - ad_b ad_a`` puts ``[a, b]`` in ``A``; so ``A`` is a Lie algebra
containing the generators, hence everything they generate.) A queue of new elements is
bracketed with each generator until nothing linearly independent appears, so the work is
``dimension × generators`` brackets rather than ``dimension²``.

- When every generator is one Pauli string, every bracket is 0 or ``±2`` times a Pauli
  string, so the algebra is spanned by the strings found, kept in a hash set of
  symplectic keys (a bit table up to 12 qubits). Generators fall into classes joined by
  anticommutation; the strings generated from one class span an ideal, ideals of
  different classes commute, and a class of one string is central.
- Otherwise the elements are vectors in the Pauli basis (Euclidean inner product, which
  is ``Tr(AB)/2**n``) and an orthonormal basis grows by Gram-Schmidt with
  re-orthogonalization; an element counts as new when its residual exceeds
  :data:`RANK_TOLERANCE` of its norm. The derived algebra ``[g, g]`` is tracked too: it
  is spanned by all brackets ``[G_k, e]`` with ``e`` in a spanning set, and for a
  compact algebra the centre is its orthogonal complement.

The closure stops with "at least D" (``complete = False``) once ``cap`` elements are
found, or in the Pauli-sum case when the stored coefficients would pass ``budget`` or
the string products ``WORK_FACTOR × budget`` (about ten seconds). Why it stopped is a
:class:`ClosureStop` member; the report's ``stop_reason`` is that member's text
(:meth:`ClosureStop.text`). The semisimple part is then split into simple ideals by
:mod:`haarline.lie.ideals`.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from enum import Enum
from typing import Any

import numpy as np
from haarline.lie.ideals import SPLIT_LIMIT, Ideal, string_ideals, sum_ideals
from haarline.lie.pauli import PauliExpansion, anticommutes, bracket
from numpy.typing import NDArray

__all__ = [
    "DEFAULT_BUDGET",
    "DEFAULT_CAP",
    "RANK_TOLERANCE",
    "WORK_FACTOR",
    "Algebra",
    "ClosureStop",
    "generate_algebra",
    "independent_count",
]

Floats = NDArray[np.float64]
Ints = NDArray[np.int64]

DEFAULT_CAP = 16384
"""Elements after which the closure stops with a lower bound (4**7 - 1 = 16383 fits)."""
DEFAULT_BUDGET = 1 << 22
"""Pauli-sum case: most coefficients (basis size × strings used) the closure may store."""
WORK_FACTOR = 16
"""Pauli-sum case: the closure also stops after ``WORK_FACTOR × budget`` string products."""
RANK_TOLERANCE = 1e-7
"""Relative residual above which an element counts as linearly independent."""


class ClosureStop(Enum):
    """Why the closure stopped: it found everything, or it hit a limit (a lower bound)."""

    CLOSED = "closed"
    """Nothing new came from bracketing with the generators: the algebra is complete."""
    FULL = "full"
    """All of su(2**n) was reached: complete."""
    EMPTY = "empty"
    """No generator had a traceless part: the algebra is {0}, complete."""
    CAP = "cap"
    """``cap`` elements were found: a lower bound."""
    WORK = "work"
    """Pauli sums: ``WORK_FACTOR × budget`` string products were spent: a lower bound."""
    COEFFICIENTS = "coefficients"
    """Pauli sums: the basis would store more than ``budget`` coefficients: a lower bound."""

    @property
    def complete(self) -> bool:
        """Whether the closure found the whole algebra (not a lower bound)."""
        return self in (ClosureStop.CLOSED, ClosureStop.FULL, ClosureStop.EMPTY)

    def text(self, *, cap: int = DEFAULT_CAP, budget: int = DEFAULT_BUDGET) -> str:
        """The report's ``stop_reason``: one plain phrase, naming the limit that was hit.

        Examples
        --------
        >>> ClosureStop.FULL.text(), ClosureStop.CAP.text(cap=100)
        ('all of su(2^n)', 'cap of 100 elements reached')
        """
        if self is ClosureStop.CLOSED:
            return "closed"
        if self is ClosureStop.FULL:
            return "all of su(2^n)"
        if self is ClosureStop.EMPTY:
            return "no generators"
        if self is ClosureStop.CAP:
            return f"cap of {cap} elements reached"
        if self is ClosureStop.WORK:
            return f"work budget of {WORK_FACTOR * budget} string products reached"
        return f"coefficient budget of {budget} reached"


@dataclass(frozen=True, eq=False, kw_only=True)
class Algebra:
    """The closure of a generator set and what is known of its structure.

    ``x, z`` are the Pauli strings the basis uses; ``basis`` has orthonormal rows over
    them (``None`` in the Pauli-string case: the strings themselves). ``centre`` is an
    orthonormal basis of the centre over the same strings (``None`` if unknown).
    ``stop`` says why the closure stopped and ``stop_reason`` says it in words (the
    report's text).
    """

    qubits: int
    dimension: int
    pauli_strings: bool
    generators: int
    x: Ints
    z: Ints
    basis: Floats | None
    centre: Floats | None
    ideals: tuple[Ideal, ...]
    stop: ClosureStop
    stop_reason: str

    @property
    def complete(self) -> bool:
        """Whether the closure found the whole algebra (``False``: a lower bound)."""
        return self.stop.complete

    @property
    def maximum(self) -> int:
        """``4**n - 1``, the dimension of su(2**n)."""
        return int(4**self.qubits) - 1

    @property
    def full(self) -> bool:
        """Whether the algebra is all of su(2**n)."""
        return self.complete and self.dimension == self.maximum

    @property
    def centre_dimension(self) -> int | None:
        """Dimension of the centre, ``None`` when the closure stopped early."""
        return None if self.centre is None else int(self.centre.shape[0])

    @property
    def split(self) -> bool:
        """Whether the semisimple part is known as a sum of simple ideals."""
        return self.complete and all(i.simple for i in self.ideals)

    def to_dict(self) -> dict[str, Any]:
        """Return the report object (plain JSON types)."""
        ideals = sorted(self.ideals, key=lambda i: -i.dimension)
        return {
            "dimension": self.dimension,
            "complete": self.complete,
            "maximum": self.maximum,
            "full": self.full,
            "method": "pauli-strings" if self.pauli_strings else "pauli-sums",
            "independent_generators": self.generators,
            "centre_dimension": self.centre_dimension,
            "ideals": [i.to_dict() for i in ideals],
            "ideals_complete": self.split,
            "stop_reason": self.stop_reason,
        }


def generate_algebra(
    generators: Sequence[PauliExpansion],
    *,
    cap: int = DEFAULT_CAP,
    budget: int = DEFAULT_BUDGET,
    split_limit: int = SPLIT_LIMIT,
) -> Algebra:
    """The dynamical Lie algebra of Hermitian generators, with its centre and ideals.

    Parameters
    ----------
    generators : sequence of PauliExpansion
        Hermitian generators ``G_k`` on one qubit count (identity terms are ignored: they
        only add a global phase).
    cap : int
        Stop with ``complete = False`` (a lower bound) once this many elements are found.
    budget : int
        Pauli-sum case only: most coefficients (elements × strings) stored; the closure
        also stops after ``WORK_FACTOR × budget`` string products.
    split_limit : int
        Largest ideal split numerically into simple ideals.

    Returns
    -------
    Algebra

    Notes
    -----
    Cost: Pauli strings, ``D · K`` string products for ``D`` elements and ``K``
    generators; Pauli sums, ``D · K`` brackets of sparse sums plus ``O(D² C)`` for the
    Gram-Schmidt basis over ``C`` strings.

    Examples
    --------
    >>> gens = [PauliExpansion.from_labels([(1.0, p)], 2) for p in ("XI", "IX", "ZZ")]
    >>> a = generate_algebra(gens)
    >>> a.dimension, a.centre_dimension, [i.dimension for i in a.ideals]
    (6, 0, [3, 3])
    """
    if not generators:
        raise ValueError("no generators: the algebra of a circuit without parameters is empty")
    n = generators[0].qubits
    gens = [_traceless(g) for g in generators]
    gens = [g for g in gens if len(g)]
    if not gens:
        return _empty(n)
    if all(len(g) == 1 for g in gens):
        return _string_algebra(gens, n, cap, split_limit)
    return _sum_algebra(gens, n, cap, budget, split_limit)


def _traceless(g: PauliExpansion) -> PauliExpansion:
    keep = (g.x != 0) | (g.z != 0)
    return PauliExpansion(g.qubits, g.x[keep], g.z[keep], g.coef[keep])


def _empty(n: int) -> Algebra:
    e = np.zeros(0, dtype=np.int64)
    return Algebra(
        qubits=n,
        dimension=0,
        pauli_strings=True,
        generators=0,
        x=e,
        z=e,
        basis=None,
        centre=np.zeros((0, 0)),
        ideals=(),
        stop=ClosureStop.EMPTY,
        stop_reason=ClosureStop.EMPTY.text(),
    )


# ------------------------------------------------------------------ Pauli strings


def _string_algebra(gens: list[PauliExpansion], n: int, cap: int, split_limit: int) -> Algebra:
    keys = np.unique(np.concatenate([g.keys for g in gens]))
    mask = (1 << n) - 1
    gx, gz = keys >> n, keys & mask
    k = gx.size
    # classes of generators joined by anticommutation (union-find over K² pairs)
    parent = list(range(k))

    def root(i: int) -> int:
        while parent[i] != i:
            parent[i] = parent[parent[i]]
            i = parent[i]
        return i

    for i, j in zip(*np.nonzero(anticommutes(gx[:, None], gz[:, None], gx, gz)), strict=True):
        parent[root(int(i))] = root(int(j))
    gclass = np.array([root(i) for i in range(k)], dtype=np.int64)

    top = 4**n - 1
    xs, zs, cls = [gx], [gz], [gclass]
    table = np.zeros(4**n, dtype=bool) if n <= 12 else None
    seen: set[int] = set()
    if table is not None:
        table[keys] = True
    else:
        seen.update(int(v) for v in keys)
    count, done, stop = k, 0, ClosureStop.CLOSED
    X, Z = gx, gz
    block = max(1, (1 << 16) // k)
    while done < count:
        if done >= X.size:
            X, Z = np.concatenate(xs), np.concatenate(zs)
            xs, zs = [X], [Z]
        ex, ez = X[done : done + block], Z[done : done + block]
        r, c = np.nonzero(anticommutes(ex[:, None], ez[:, None], gx, gz))
        done += ex.size
        new_keys = ((ex[r] ^ gx[c]) << n) | (ez[r] ^ gz[c])
        new_keys, first = np.unique(new_keys, return_index=True)
        if table is not None:
            fresh = ~table[new_keys]
            table[new_keys[fresh]] = True
        else:
            fresh = np.array([int(v) not in seen for v in new_keys], dtype=bool)
            seen.update(int(v) for v in new_keys[fresh])
        new_keys = new_keys[fresh]
        xs.append(new_keys >> n)
        zs.append(new_keys & mask)
        cls.append(gclass[c[first[fresh]]])
        count += new_keys.size
        if count == top:
            stop = ClosureStop.FULL
            break
        if count >= cap:
            stop = ClosureStop.CAP
            break
    x, z, labels = np.concatenate(xs), np.concatenate(zs), np.concatenate(cls)

    def found(centre: Floats | None, ideals: tuple[Ideal, ...]) -> Algebra:
        return Algebra(
            qubits=n,
            dimension=count,
            pauli_strings=True,
            generators=k,
            x=x,
            z=z,
            basis=None,
            centre=centre,
            ideals=ideals,
            stop=stop,
            stop_reason=stop.text(cap=cap),
        )

    if not stop.complete:
        return found(None, ())
    centre_rows = []
    ideals = []
    for label in np.unique(labels):
        sel = np.nonzero(labels == label)[0]
        if sel.size == 1 and np.sum(gclass == label) == 1:
            centre_rows.append(int(sel[0]))
            continue
        ideals += string_ideals(x[sel], z[sel], n, split_limit)
    centre = np.zeros((len(centre_rows), count))
    centre[np.arange(len(centre_rows)), centre_rows] = 1.0
    return found(centre, tuple(ideals))


# -------------------------------------------------------------------- Pauli sums


_REORTHOGONALIZE = 1.0 / np.sqrt(2.0)
"""Norm left after one projection of a unit vector below which it is projected again."""


class _Columns:
    """Pauli strings met so far, each with a column index."""

    def __init__(self, n: int) -> None:
        self.n = n
        self.index: dict[int, int] = {}
        self.keys: list[int] = []

    def of(self, keys: Ints) -> Ints:
        out = np.empty(keys.size, dtype=np.int64)
        for i, key in enumerate(keys.tolist()):
            j = self.index.get(key)
            if j is None:
                j = self.index[key] = len(self.keys)
                self.keys.append(key)
            out[i] = j
        return out


class _Span:
    """An orthonormal basis over the columns, grown by Gram-Schmidt.

    Stored transposed, one basis vector per column of ``t`` (strings × vectors), so that
    the rows of an element's strings are gathered contiguously.
    """

    def __init__(self, columns: _Columns) -> None:
        self.columns = columns
        self.t = np.zeros((64, 8))
        self.size = 0

    def _room(self, width: int) -> None:
        c, r = self.t.shape
        if self.size < r and width <= c:
            return
        grown = np.zeros((max(c, 2 * width), max(r, 2 * self.size + 1)))
        grown[:c, : self.size] = self.t[:, : self.size]
        self.t = grown

    def add(self, e: PauliExpansion) -> bool:
        """Add ``e``'s direction if independent; return whether it was added."""
        known = len(self.columns.keys)
        cols = self.columns.of(e.keys)
        v = e.coef / np.sqrt(e.norm_squared())
        width = len(self.columns.keys)
        self._room(width)
        q = self.t[:width, : self.size]
        old = cols < known
        # the basis is zero on strings met for the first time, so the coefficients of the
        # first projection need only the rows of the element's known strings
        c = v[old] @ q[cols[old]]
        if old.all() and 1.0 - float(c @ c) < RANK_TOLERANCE**2:
            return False
        r = np.zeros(width)
        r[cols] = v
        r -= q @ c
        norm = float(np.linalg.norm(r))
        if norm < _REORTHOGONALIZE:
            # much of v cancelled: project once more, and that is enough (Kahan's rule,
            # Parlett, The Symmetric Eigenvalue Problem, 1998, section 6.9; Giraud et
            # al., Numer. Math. 101, 87, 2005)
            r -= q @ (r @ q)
            norm = float(np.linalg.norm(r))
        if norm < RANK_TOLERANCE:
            return False
        self.t[:width, self.size] = r / norm
        self.size += 1
        return True

    def matrix(self) -> Floats:
        """The basis as rows over all columns met so far."""
        width = len(self.columns.keys)
        out = np.zeros((self.size, width))
        have = min(width, self.t.shape[0])
        out[:, :have] = self.t[:have, : self.size].T
        return out


def independent_count(expansions: Sequence[PauliExpansion]) -> int:
    """Dimension of the real span of ``expansions`` (identity terms included).

    Examples
    --------
    >>> a, b = (PauliExpansion.from_labels([(1.0, p)], 1) for p in "XZ")
    >>> independent_count([a, b, a.plus(b), a.scaled(2.0)])
    2
    """
    if not expansions:
        return 0
    span = _Span(_Columns(expansions[0].qubits))
    return sum(1 for e in expansions if len(e) and span.add(e))


def _sum_algebra(
    gens: list[PauliExpansion], n: int, cap: int, budget: int, split_limit: int
) -> Algebra:
    columns = _Columns(n)
    main, derived = _Span(columns), _Span(columns)
    queue = [g for g in gens if main.add(g)]
    basis_gens = list(queue)
    top, stop, i, work = 4**n - 1, ClosureStop.CLOSED, 0, 0
    while i < len(queue) and stop is ClosureStop.CLOSED:
        e = queue[i]
        i += 1
        for g in basis_gens:
            work += len(g) * len(e)
            if work > WORK_FACTOR * budget:
                stop = ClosureStop.WORK
                break
            c = bracket(g, e)
            if not len(c):
                continue
            c = c.scaled(1.0 / np.sqrt(c.norm_squared()))
            derived.add(c)
            if main.add(c):
                queue.append(c)
                if main.size == top:
                    stop = ClosureStop.FULL
                    break
                if main.size >= cap:
                    stop = ClosureStop.CAP
                    break
                if main.size * len(columns.keys) > budget:
                    stop = ClosureStop.COEFFICIENTS
                    break
    keys = np.array(columns.keys, dtype=np.int64)
    x, z = keys >> n, keys & ((1 << n) - 1)
    basis = main.matrix()

    def found(centre: Floats | None, ideals: tuple[Ideal, ...]) -> Algebra:
        return Algebra(
            qubits=n,
            dimension=main.size,
            pauli_strings=False,
            generators=len(basis_gens),
            x=x,
            z=z,
            basis=basis,
            centre=centre,
            ideals=ideals,
            stop=stop,
            stop_reason=stop.text(cap=cap, budget=budget),
        )

    if not stop.complete:
        return found(None, ())
    if stop is ClosureStop.FULL:
        (ideal,) = sum_ideals(basis, basis_gens, x, z, n, split_limit)
        return found(basis[:0], (ideal,))
    semi = derived.matrix()
    rest = basis - (basis @ semi.T) @ semi
    u, sv, vt = np.linalg.svd(rest, full_matrices=False)
    centre = vt[sv > 1e-6]
    ideals = sum_ideals(semi, basis_gens, x, z, n, split_limit) if semi.shape[0] else []
    return found(centre, tuple(ideals))
