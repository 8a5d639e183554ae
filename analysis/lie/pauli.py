"""Pauli-string algebra in the symplectic bit representation.

A Pauli string on ``n`` qubits is a pair of bit masks ``(x, z)``: qubit ``q`` carries the
letter I, X, Y or Z for bits ``(x_q, z_q) = (0,0), (1,0), (1,1), (0,1)``, and qubit ``q``
sits at bit ``n - 1 - q`` of each mask, the same bit as in the amplitude index
``Σ b_q 2**(n-1-q)`` (qubit 0 is the leftmost letter, as everywhere in haarline). The
string is the plain tensor product of its Hermitian letters, so ``Y`` on one qubit is
``i X Z`` and the string ``P(x, z) = i**|x & z| X^x Z^z``. Products follow from the
masks (the symplectic picture of Aaronson & Gottesman, Phys. Rev. A 70, 052328, 2004):
``P(x1, z1) P(x2, z2) = i**k P(x1 ^ x2, z1 ^ z2)`` with ``k`` from :func:`product_phase`,
and two strings anticommute exactly when ``|x1 & z2| + |z1 & x2|`` is odd.

A :class:`PauliExpansion` is a Hermitian operator ``Σ_j c_j P_j`` with real
coefficients, stored as three arrays. :func:`bracket` gives ``i[A, B]`` (Hermitian again;
the Lie bracket of ``iA`` and ``iB`` is ``i`` times it), :func:`conjugate` moves a fixed
gate across an operator (``V† A V``), and :func:`pauli_values` reads ``⟨ψ|P|ψ⟩`` off a
statevector. Everything works for up to 31 qubits (a string is one 62-bit key).
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
from haarline.circuit.gates import lookup
from numpy.typing import NDArray

__all__ = [
    "PauliExpansion",
    "anticommutes",
    "bracket",
    "conjugate",
    "diagonal_expansion",
    "is_clifford",
    "pauli_label",
    "pauli_values",
    "parse_pauli",
    "product_phase",
]

Ints = NDArray[np.int64]
Floats = NDArray[np.float64]

_LETTERS = {(0, 0): "I", (1, 0): "X", (1, 1): "Y", (0, 1): "Z"}
_BITS = {v: k for k, v in _LETTERS.items()}
ZERO_TOLERANCE = 1e-12
"""Merged coefficients below this fraction of the largest term are dropped."""


def parse_pauli(label: str) -> tuple[int, int]:
    """Masks ``(x, z)`` of a Pauli string written with one letter per qubit (qubit 0 first).

    Examples
    --------
    >>> parse_pauli("XIZ"), parse_pauli("Y")
    ((4, 1), (1, 1))
    """
    n = len(label)
    x = z = 0
    for q, letter in enumerate(label):
        try:
            bx, bz = _BITS[letter]
        except KeyError:
            raise ValueError(f"expected letters I, X, Y, Z; got {label!r}") from None
        x |= bx << (n - 1 - q)
        z |= bz << (n - 1 - q)
    return x, z


def pauli_label(x: int, z: int, qubits: int) -> str:
    """The letters of the string ``(x, z)`` on ``qubits`` qubits.

    Examples
    --------
    >>> pauli_label(4, 1, 3)
    'XIZ'
    """
    n = qubits
    return "".join(_LETTERS[((x >> (n - 1 - q)) & 1, (z >> (n - 1 - q)) & 1)] for q in range(n))


def _count(a: NDArray[np.int64] | int) -> Ints:
    return np.bitwise_count(np.asarray(a, dtype=np.int64)).astype(np.int64)


def product_phase(x1: Ints | int, z1: Ints | int, x2: Ints | int, z2: Ints | int) -> Ints:
    """Exponent ``k`` (mod 4) with ``P(x1, z1) P(x2, z2) = i**k P(x1 ^ x2, z1 ^ z2)``.

    Works elementwise on integer arrays (broadcasting). From ``P = i**|x&z| X^x Z^z`` and
    ``Z^z1 X^x2 = (-1)**|z1&x2| X^x2 Z^z1``:
    ``k = |x1&z1| + |x2&z2| - |x3&z3| + 2|z1&x2|`` with ``x3 = x1^x2``, ``z3 = z1^z2``.

    Examples
    --------
    >>> x, z = parse_pauli("X")
    >>> int(product_phase(x, z, *parse_pauli("Y")))  # X Y = i Z
    1
    """
    x1, z1, x2, z2 = (np.asarray(v, dtype=np.int64) for v in (x1, z1, x2, z2))
    k = _count(x1 & z1) + _count(x2 & z2) - _count((x1 ^ x2) & (z1 ^ z2)) + 2 * _count(z1 & x2)
    phase: Ints = np.mod(k, 4)
    return phase


def anticommutes(
    x1: Ints | int, z1: Ints | int, x2: Ints | int, z2: Ints | int
) -> NDArray[np.bool_]:
    """Whether the strings anticommute, elementwise (boolean array)."""
    x1, z1, x2, z2 = (np.asarray(v, dtype=np.int64) for v in (x1, z1, x2, z2))
    return (_count((x1 & z2) ^ (z1 & x2)) & 1).astype(bool)


@dataclass(frozen=True, eq=False)
class PauliExpansion:
    """A Hermitian operator ``Σ_j coef[j] P(x[j], z[j])`` on ``qubits`` qubits.

    Attributes
    ----------
    qubits : int
        Number of qubits ``n``.
    x, z : ndarray of int64, shape (T,)
        Masks of the strings (qubit ``q`` at bit ``n - 1 - q``).
    coef : ndarray of float, shape (T,)
        Real coefficients.
    """

    qubits: int
    x: Ints
    z: Ints
    coef: Floats

    @classmethod
    def from_labels(cls, terms: Iterable[tuple[float, str]], qubits: int) -> PauliExpansion:
        """Build from ``[(coefficient, "XZI…"), …]`` (duplicates are added up).

        Examples
        --------
        >>> PauliExpansion.from_labels([(0.5, "ZI"), (1.0, "XX"), (0.5, "ZI")], 2).labels()
        [(1.0, 'ZI'), (1.0, 'XX')]
        """
        xs, zs, cs = [], [], []
        for c, label in terms:
            if len(label) != qubits:
                raise ValueError(f"{label!r} has {len(label)} letters; expected {qubits}")
            x, z = parse_pauli(label)
            xs.append(x)
            zs.append(z)
            cs.append(float(c))
        return cls.build(qubits, xs, zs, cs)

    @classmethod
    def build(
        cls, qubits: int, x: Iterable[int] | Ints, z: Iterable[int] | Ints, coef: Iterable[float]
    ) -> PauliExpansion:
        """Build from masks and coefficients, merging repeated strings."""
        return cls(
            qubits,
            np.asarray(list(x) if not isinstance(x, np.ndarray) else x, dtype=np.int64),
            np.asarray(list(z) if not isinstance(z, np.ndarray) else z, dtype=np.int64),
            np.asarray(list(coef) if not isinstance(coef, np.ndarray) else coef, dtype=float),
        ).merged()

    @property
    def keys(self) -> Ints:
        """One integer per string: ``x << n | z``."""
        return (self.x << self.qubits) | self.z

    def __len__(self) -> int:
        return int(self.coef.size)

    def merged(self, tolerance: float = ZERO_TOLERANCE) -> PauliExpansion:
        """Add up repeated strings (sorted by key) and drop what cancels.

        A merged coefficient is dropped when it is below ``tolerance`` times the largest
        coefficient *before* merging, so exact cancellations vanish.
        """
        if self.coef.size == 0:
            return self
        scale = float(np.abs(self.coef).max())
        keys, inverse = np.unique(self.keys, return_inverse=True)
        coef = np.bincount(inverse, weights=self.coef, minlength=keys.size).astype(np.float64)
        keep = np.abs(coef) > tolerance * scale
        keys, coef = keys[keep], coef[keep]
        mask = (1 << self.qubits) - 1
        return PauliExpansion(self.qubits, keys >> self.qubits, keys & mask, coef)

    def norm_squared(self) -> float:
        """``Σ_j coef[j]²``, which is ``Tr(A²) / 2**n``."""
        return float(self.coef @ self.coef)

    def scaled(self, factor: float) -> PauliExpansion:
        """``factor · A``."""
        return PauliExpansion(self.qubits, self.x, self.z, self.coef * factor)

    def plus(self, other: PauliExpansion) -> PauliExpansion:
        """``A + B``."""
        return PauliExpansion(
            self.qubits,
            np.concatenate([self.x, other.x]),
            np.concatenate([self.z, other.z]),
            np.concatenate([self.coef, other.coef]),
        ).merged()

    def labels(self) -> list[tuple[float, str]]:
        """``[(coefficient, letters), …]`` in key order."""
        return [
            (float(c), pauli_label(int(x), int(z), self.qubits))
            for x, z, c in zip(self.x, self.z, self.coef, strict=True)
        ]

    def matrix(self) -> NDArray[np.complex128]:
        """The dense ``2**n × 2**n`` matrix (for small ``n``: tests and checks)."""
        d = 1 << self.qubits
        idx = np.arange(d)
        out = np.zeros((d, d), dtype=complex)
        for x, z, c in zip(self.x, self.z, self.coef, strict=True):
            # P|b> = i^{|x&z|} (-1)^{|z&b|} |b ^ x>
            phase = (1j) ** int(_count(x & z)) * (1 - 2 * (_count(z & idx) & 1))
            out[idx ^ x, idx] += c * phase
        return out


def bracket(a: PauliExpansion, b: PauliExpansion) -> PauliExpansion:
    """``i[A, B]``, the Hermitian form of the Lie bracket ``[iA, iB] = i · i[A, B]``.

    For anticommuting strings ``i[P, Q] = 2i PQ = 2 i**(k+1) R`` with ``PQ = i**k R`` and
    ``k`` odd, so the coefficient is ``-2`` for ``k = 1`` and ``+2`` for ``k = 3``;
    commuting strings contribute nothing. Cost: ``len(a) · len(b)`` string products.

    Examples
    --------
    >>> X = PauliExpansion.from_labels([(1.0, "X")], 1)
    >>> Y = PauliExpansion.from_labels([(1.0, "Y")], 1)
    >>> bracket(X, Y).labels()  # i[X, Y] = i (2i Z) = -2 Z
    [(-2.0, 'Z')]
    """
    x1, z1, x2, z2 = a.x[:, None], a.z[:, None], b.x[None, :], b.z[None, :]
    anti = anticommutes(x1, z1, x2, z2)
    i, j = np.nonzero(anti)
    k = product_phase(a.x[i], a.z[i], b.x[j], b.z[j])
    coef = np.where(k == 3, 2.0, -2.0) * a.coef[i] * b.coef[j]
    return PauliExpansion(a.qubits, a.x[i] ^ b.x[j], a.z[i] ^ b.z[j], coef).merged()


def _local_matrices(k: int) -> list[NDArray[np.complex128]]:
    """The ``4**k`` Pauli strings on ``k`` qubits, index ``(lx << k) | lz``."""
    single = {
        (0, 0): np.eye(2, dtype=complex),
        (1, 0): np.array([[0, 1], [1, 0]], dtype=complex),
        (1, 1): np.array([[0, -1j], [1j, 0]], dtype=complex),
        (0, 1): np.array([[1, 0], [0, -1]], dtype=complex),
    }
    out = []
    for index in range(4**k):
        lx, lz = index >> k, index & ((1 << k) - 1)
        m = np.eye(1, dtype=complex)
        for j in range(k):
            m = np.kron(m, single[((lx >> (k - 1 - j)) & 1, (lz >> (k - 1 - j)) & 1)])
        out.append(m)
    return out


def _conjugation_table(matrix: NDArray[np.complex128]) -> Floats:
    """Real table ``T`` with ``V† Q_old V = Σ_new T[new, old] Q_new`` for a k-qubit ``V``.

    Strings are indexed ``(lx << k) | lz`` with the first listed qubit at the highest
    local bit, matching the basis ``|b_first b_second⟩`` of the gate table. Entries below
    1e-12 are set to zero, so a Clifford gate gives exactly one ``±1`` per column.
    """
    v = np.asarray(matrix, dtype=complex)
    k = v.shape[0].bit_length() - 1
    paulis = _local_matrices(k)
    table = np.zeros((4**k, 4**k))
    for old, q in enumerate(paulis):
        moved = v.conj().T @ q @ v
        for new, p in enumerate(paulis):
            table[new, old] = np.trace(p @ moved).real / (1 << k)
    table[np.abs(table) < 1e-12] = 0.0
    return table


@lru_cache(maxsize=256)
def _gate_table(gate: str, angle: float | None, adjoint: bool) -> Floats:
    spec = lookup(gate)
    m = spec.matrix(np.array([0.0 if angle is None else angle]))[0]
    if adjoint:
        m = m.conj().T
    table = _conjugation_table(m)
    table.setflags(write=False)
    return table


def is_clifford(gate: str, angle: float | None = None) -> bool:
    """Whether the gate (at ``angle``) maps every Pauli string to one signed Pauli string.

    Read off the gate's conjugation table, so fixed-angle rotations count when their
    angle makes them Clifford gates.

    Examples
    --------
    >>> is_clifford("h"), is_clifford("t"), is_clifford("rx", np.pi / 2)
    (True, False, True)
    >>> is_clifford("crx", np.pi / 2), is_clifford("crx", np.pi)
    (False, True)
    """
    table = _gate_table(gate, angle, False)
    return bool(np.all(np.count_nonzero(table, axis=0) == 1))


def conjugate(
    a: PauliExpansion,
    gate: str,
    qubits: tuple[int, ...],
    angle: float | None = None,
    *,
    adjoint: bool = False,
) -> PauliExpansion:
    """``V† A V`` for the gate ``V`` (``V A V†`` with ``adjoint=True``) on ``qubits``.

    ``V`` is the gate-table matrix of ``gate`` (at ``angle`` for a rotation). Each string
    is split into its letters on ``qubits`` and the rest; the gate acts on the first part
    only, through a table of its action on the local strings. A Clifford gate maps each
    string to one string with a sign; other gates give sums.

    Examples
    --------
    >>> zx = PauliExpansion.from_labels([(1.0, "IZ")], 2)
    >>> conjugate(zx, "cx", (0, 1)).labels()  # CX† (I⊗Z) CX = Z⊗Z
    [(1.0, 'ZZ')]
    """
    table = _gate_table(gate, angle, adjoint)
    n, k = a.qubits, len(qubits)
    pos = [n - 1 - q for q in qubits]
    lx = np.zeros_like(a.x)
    lz = np.zeros_like(a.z)
    clear = 0
    for j, p in enumerate(pos):
        lx |= ((a.x >> p) & 1) << (k - 1 - j)
        lz |= ((a.z >> p) & 1) << (k - 1 - j)
        clear |= 1 << p
    old = (lx << k) | lz
    base_x, base_z = a.x & ~clear, a.z & ~clear
    xs, zs, cs = [], [], []
    for new in range(4**k):
        w = table[new, old]
        sel = w != 0.0
        if not sel.any():
            continue
        nlx, nlz = new >> k, new & ((1 << k) - 1)
        gx = sum(((nlx >> (k - 1 - j)) & 1) << p for j, p in enumerate(pos))
        gz = sum(((nlz >> (k - 1 - j)) & 1) << p for j, p in enumerate(pos))
        xs.append(base_x[sel] | gx)
        zs.append(base_z[sel] | gz)
        cs.append(a.coef[sel] * w[sel])
    if not xs:
        return PauliExpansion(n, a.x[:0], a.z[:0], a.coef[:0])
    return PauliExpansion(n, np.concatenate(xs), np.concatenate(zs), np.concatenate(cs)).merged()


def pauli_values(
    state: NDArray[np.complex128], x: Ints, z: Ints, *, chunk: int = 1 << 20
) -> Floats:
    """``⟨ψ|P(x_j, z_j)|ψ⟩`` for every string ``j``, shape ``(T,)``.

    Uses ``P|b⟩ = i**|x&z| (-1)**|z&b| |b ^ x⟩``. Cost ``T · 2**n``, in chunks of about
    ``chunk`` products.

    Examples
    --------
    >>> plus = np.full(2, 2**-0.5, dtype=complex)
    >>> pauli_values(plus, np.array([1, 0]), np.array([0, 1])).round(12).tolist()
    [1.0, 0.0]
    """
    psi = np.asarray(state, dtype=complex)
    d = psi.size
    idx = np.arange(d, dtype=np.int64)
    x = np.asarray(x, dtype=np.int64)
    z = np.asarray(z, dtype=np.int64)
    out = np.empty(x.size)
    step = max(1, chunk // d)
    for s in range(0, x.size, step):
        xs, zs = x[s : s + step, None], z[s : s + step, None]
        sign = 1 - 2 * (_count(zs & idx[None, :]) & 1)
        vals = (psi[idx[None, :] ^ xs].conj() * psi[None, :] * sign).sum(axis=1)
        vals = vals * (1j) ** (_count(xs[:, 0] & zs[:, 0]) % 4)
        out[s : s + step] = vals.real
    return out


def diagonal_expansion(diagonal: Floats) -> PauliExpansion:
    """Pauli expansion of a diagonal operator (Z strings only), by a Walsh-Hadamard transform.

    ``diag(d) = Σ_z c_z P(0, z)`` with ``c_z = 2**-n Σ_b d_b (-1)**|z & b|``; cost
    ``n · 2**n``. The identity term is kept.

    Examples
    --------
    >>> diagonal_expansion(np.array([1.0, -1.0, -1.0, 1.0])).labels()
    [(1.0, 'ZZ')]
    """
    a = np.asarray(diagonal, dtype=float).copy()
    d = a.size
    n = d.bit_length() - 1
    h = 1
    while h < d:
        a = a.reshape(-1, 2, h)
        a = np.stack([a[:, 0, :] + a[:, 1, :], a[:, 0, :] - a[:, 1, :]], axis=1)
        h *= 2
    coef = a.reshape(d) / d
    z = np.arange(d, dtype=np.int64)
    return PauliExpansion(n, np.zeros(d, dtype=np.int64), z, coef).merged()
