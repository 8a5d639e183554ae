"""OpenQASM 3 export: write an expanded program as an equivalent OpenQASM 3 program.

The reader is :mod:`haarline.circuit.qasm.parse`; :func:`to_qasm` output always reads
back through it into the same operations, and other tools' OpenQASM 3 importers read it
into the same states (``tests/test_qasm_interchange.py`` checks one).
"""

from __future__ import annotations

from haarline.circuit.program import Encoding, Program
from haarline.circuit.qasm._walk import DATA_PRAGMA

__all__ = ["to_qasm"]


_DEFINITIONS = {
    # exp(-iθ Z⊗Z/2): the parity of the two qubits, computed onto b, picks the phase
    "rzz": "gate rzz(t) a, b { cx a, b; rz(t) b; cx a, b; }",
    # H⊗H maps X⊗X to Z⊗Z
    "rxx": "gate rxx(t) a, b { h a; h b; cx a, b; rz(t) b; cx a, b; h a; h b; }",
    # rx(-π/2) Z rx(π/2) = Y, so rx(π/2)⊗rx(π/2) maps Y⊗Y to Z⊗Z
    "ryy": "gate ryy(t) a, b { rx(pi/2) a; rx(pi/2) b; cx a, b; rz(t) b; cx a, b; "
    "rx(-pi/2) a; rx(-pi/2) b; }",
}

# stdgates.inc names: cp(λ) = ctrl @ p(λ) = diag(1, 1, 1, e^{iλ}) is cphase exactly
_EXPORT_NAMES = {"i": "id", "cphase": "cp"}

_RESERVED = frozenset(
    # OpenQASM 3 keywords and types
    "OPENQASM include defcalgrammar def cal defcal gate extern box let break continue if else "
    "end return for while in switch case default nop pragma input output const readonly "
    "mutable qreg qubit creg bool bit int uint float angle complex array void duration stretch "
    "gphase inv pow ctrl negctrl durationof delay reset measure barrier true false sizeof im "
    # built-in constants and functions
    "pi tau euler arccos arcsin arctan ceiling cos exp floor log mod popcount rotl rotr sin "
    "sqrt tan real imag "
    # gate names of stdgates.inc and qelib1.inc, and ours
    "U CX p x y z h s sdg t tdg sx rx ry rz cx cy cz cp crx cry crz ch swap ccx cswap cu "
    "phase cphase id u1 u2 u3 rxx ryy rzz sxdg cu1 cu3 "
    # the register
    "q".split()
)


def _input_names(program: Program) -> tuple[list[str], list[str]]:
    """OpenQASM identifiers of the parameters and of the data features.

    A parameter keeps its name if it is free, else gets a fresh one; feature ``k`` is
    ``x_k`` (or a fresh name if a parameter took that).
    """
    given = list(program.parameter_names) + [None] * program.parameters
    taken = set(_RESERVED)
    out: list[str | None] = [None] * program.parameters
    features: list[str] = []

    def claim(wanted: str) -> str:
        name, k = wanted, 1
        while name in taken:
            name = f"{wanted[:58]}_{k}"
            k += 1
        taken.add(name)
        return name

    for p in range(program.parameters):  # named parameters first, so they keep their names
        if given[p] is not None:
            out[p] = claim(str(given[p]))
    for p in range(program.parameters):
        if out[p] is None:
            out[p] = claim(f"theta_{p}")
    features = [claim(f"x_{k}") for k in range(program.inputs)]
    return [str(name) for name in out], features


def _encoded_angle(encoding: Encoding, features: list[str]) -> str:
    """``s*x`` or ``s*(pi - x_a)*(pi - x_b)``, the factor left out when ``s`` is 1."""
    if encoding.product:
        a, b = (features[f] for f in encoding.features)
        text = f"(pi - {a})*(pi - {b})"
    else:
        text = features[encoding.features[0]]
    return text if encoding.scale == 1.0 else f"{float(encoding.scale)!r}*{text}"


def to_qasm(program: Program) -> str:
    """Write an expanded program as an equivalent OpenQASM 3 program.

    Parameters
    ----------
    program : Program
        An expanded program (see :func:`haarline.circuit.program.expand`).

    Returns
    -------
    str
        A ``// circuit: NAME`` comment, ``OPENQASM 3.0;``, ``include "stdgates.inc";``,
        definitions of ``rxx``/``ryy``/``rzz`` if used (they are not in stdgates.inc),
        ``input angle[64] NAME;`` per parameter in index order, for a circuit with data
        inputs ``input float[64] x_k;`` per feature and the comment
        ``// haarline data: x_0 x_1 ...`` that marks them, ``qubit[n] q;`` and one line
        per operation. A data angle is written ``s*x_k`` or ``s*(pi - x_a)*(pi - x_b)``
        (the factor ``s`` left out when it is 1). Parameter ``p`` is named
        ``program.parameter_names[p]`` or ``theta_<p>``; a name that is an OpenQASM
        keyword, built-in or gate name, or already taken, gets a suffix ``_1``, ``_2``, ....
        Fixed angles are written with ``repr(float)``, so they read back exactly; gate
        ``i`` is written ``id`` and ``cphase`` is written ``cp`` (stdgates.inc's
        ``cp(λ) = ctrl @ p(λ)`` is ``diag(1, 1, 1, e^{iλ})``, the same matrix, global
        phase included, so it needs no definition of its own).

    Notes
    -----
    :func:`parse_qasm` reads the result back into the same operations (gate, qubits,
    parameter index, fixed angle), because :func:`~haarline.circuit.program.expand` numbers
    parameters in order of first use and the program is written in that order.

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> from haarline.circuit.program import expand
    >>> c = parse_circuit({"name": "demo", "qubits": 2,
    ...                    "layer": [{"gate": "ry"}, {"gate": "cz", "on": "chain"},
    ...                              {"gate": "rx", "on": [1], "angle": 0.5}]})
    >>> print(to_qasm(expand(c)))
    // circuit: demo
    OPENQASM 3.0;
    include "stdgates.inc";
    input angle[64] theta_0;
    input angle[64] theta_1;
    qubit[2] q;
    ry(theta_0) q[0];
    ry(theta_1) q[1];
    cz q[0], q[1];
    rx(0.5) q[1];
    <BLANKLINE>
    """
    names, features = _input_names(program)
    title = " ".join(str(program.name).split()) or "circuit"
    lines = [f"// circuit: {title}", "OPENQASM 3.0;", 'include "stdgates.inc";']
    used = {op.gate for op in program.operations}
    lines += [text for gate, text in _DEFINITIONS.items() if gate in used]
    lines += [f"input angle[64] {name};" for name in names]
    if features:
        lines += [f"input float[64] {name};" for name in features]
        lines.append(f"// {DATA_PRAGMA}: {' '.join(features)}")
    lines.append(f"qubit[{program.qubits}] q;")
    for op in program.operations:
        if op.encoding is not None:
            args = f"({_encoded_angle(program.encodings[op.encoding], features)})"
        elif op.param is not None:
            args = f"({names[op.param]})"
        elif op.angle is not None:
            args = f"({float(op.angle)!r})"
        else:
            args = ""
        operands = ", ".join(f"q[{i}]" for i in op.qubits)
        lines.append(f"{_EXPORT_NAMES.get(op.gate, op.gate)}{args} {operands};")
    return "\n".join(lines) + "\n"
