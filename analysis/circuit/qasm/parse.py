"""OpenQASM 3 import: the entry point :func:`parse_qasm` and the supported subset.

:func:`parse_qasm` reads an OpenQASM program with the reference parser (the ``openqasm3``
package) and converts it into a format-1 description: ``qubits`` is the register size,
``layers`` is 1, and ``layer`` holds one step per gate application with an explicit ``on``
(``[q]`` or ``[[a, b]]``), a numeric ``angle`` or a named ``param``.
:func:`haarline.circuit.qasm.export.to_qasm` writes an expanded
:class:`~haarline.circuit.program.Program` as an equivalent OpenQASM 3 program.

Supported subset
----------------
- ``OPENQASM 3``, ``3.x`` or ``2.0`` as the version line (optional). The reference parser
  reads OpenQASM 2.0 headers and ``qreg q[n];``; such programs are read with the same rules
  as OpenQASM 3, so only the features below are accepted from them.
- ``include "stdgates.inc";`` (or ``"qelib1.inc"``): makes the standard gate names below
  available (``rxx ryy rzz`` too); without it only ``U`` (built into OpenQASM 3), ``CX``
  (built into OpenQASM 2.0) and gates defined with ``gate`` are known. No other file is read.
- Exactly one qubit register: ``qubit[n] q;``, ``qreg q[n];`` or ``qubit q;`` (one qubit,
  used as ``q``). The size is an integer expression, 1..24. ``q[k]`` is haarline qubit
  ``k``, the leftmost character of a bitstring; negative indices count from the end.
  (OpenQASM does not fix how states are printed; tools that print ``q[0]`` as the rightmost
  bit show the same circuit with bitstrings reversed.)
- ``input angle[...] NAME;`` and ``input float[...] NAME;`` (any size, or none): each input
  a gate uses becomes a named parameter (step key ``param``), numbered in order of first
  use; an input no gate uses is not a parameter of the circuit. Names are ASCII letters,
  digits and ``_``, at most 64 characters.
- **Data inputs.** ``// haarline data: x0 x1 ...`` (a comment, which :func:`to_qasm`
  writes) or ``pragma haarline data x0 x1 ...`` (once per program) marks the named inputs
  as data features: feature ``k`` is the ``k``-th name, the description gets ``inputs`` =
  the number of names (an unused feature still counts). A gate angle made of data inputs
  is ``s*x`` (step keys ``input: k``, ``scale: s``) or, on a two-qubit rotation of qubits
  ``a`` and ``b``, ``s*(pi - x_a)*(pi - x_b)`` with ``x_a``, ``x_b`` the features of those
  qubits (``input: "product"``); any other polynomial (an offset, ``x*y`` alone, a third
  power, data and trainable inputs in one angle) is refused. The comment form exists
  because some widely used importers refuse every pragma; they read the features as
  ordinary parameters. Without a marker every input is trainable.
- Gate calls ``name(angles) operands;`` on ``q[i]``; a one-qubit gate may also be applied
  to the whole register ``q``, one application per qubit in index order. ``gphase(γ);``
  (a global phase, which changes no metric: it is read as nothing) and ``gphase(γ) q;``.
- Gate modifiers, on any gate the program can call (standard or defined): ``inv @``;
  ``pow(k) @`` with an integer ``k`` (``k`` copies; of the inverse when ``k < 0``);
  ``ctrl @``, ``ctrl(1) @`` and ``negctrl @`` where the result acts on at most two qubits
  (one control on a one-qubit gate, or two on ``gphase``), and stacks of them. The rules
  and what each gate becomes under control are in :mod:`haarline.circuit.qasm._modifiers`.
- Angles: integer and floating-point literals, ``pi``/``π``, ``tau``/``τ``,
  ``euler``/``ℇ``, inputs, loop variables and ``+ - * / **`` with unary minus, evaluated by
  our own small evaluator over the syntax tree (never ``eval``). A gate's angle must come
  out as a number or as one input exactly as declared: ``theta``, ``(theta)`` or
  ``theta + 0`` give ``param: theta``, but ``2*theta``, ``-theta``, ``theta + pi/2`` and
  ``theta + phi`` are rejected, because format 1 has no scaled or shifted parameters
  (declare another input for such an angle). The same holds for the angles a gate is
  decomposed into, and for ``inv @`` or ``pow(-k) @`` on a gate whose angle is an input
  (they negate it).
- ``for int i in [a:b]``, ``[a:step:b]`` (both ends included) or ``{a, b, ...}``, with
  integer types (``int``, ``uint``, any size), constant bounds and nesting; qubit indices
  take integer expressions of loop variables with ``+ - * %`` (e.g. ``q[i+1]``,
  ``q[(i+1) % 4]``).
- ``barrier`` (ignored: it does not change the state).
- ``gate name(params) qubits { ... }`` whose body holds only calls of known gates (on the
  gate's qubit arguments, with modifiers if any), ``gphase`` and barriers; every use is
  inlined (on any number of qubits: a three-qubit gate defined from one- and two-qubit
  gates is read). A definition whose name is one of the standard names below is compared
  with that gate (at three sets of angles); if they agree up to a global phase, its uses
  become that gate, otherwise the body is inlined. Under ``ctrl @`` the body is always
  used, since a global phase of the body becomes a relative phase there. :func:`to_qasm`
  writes ``rxx``, ``ryy``, ``rzz`` this way, so they read back as themselves.

Standard gate names and what they become
----------------------------------------
Each name is read as an exact product of haarline gates, ``P(λ) = diag(1, e^{iλ})`` and
global phases (:mod:`haarline.circuit.qasm._standard` gives each product and its source:
the OpenQASM 3 specification's built-in ``U`` and ``stdgates.inc``, and OpenQASM 2.0's
``qelib1.inc`` for ``u``, ``cu1`` and ``sxdg``); a ``P(λ)`` left uncontrolled is written
``rz(λ)``, equal up to the global phase ``e^{iλ/2}``, and global phases are dropped (no
haarline metric sees one: fidelities, purities, expectation values and the quantum Fisher
information all ignore it).

- one-qubit: ``id``→``i``; ``x y z h s sdg t tdg sx rx ry rz`` are haarline's gates
  exactly; ``p``, ``phase``, ``u1``→``rz``; ``sxdg``→``rx(-π/2)``;
  ``U(θ, φ, λ)`` and ``u``→``rz(λ) ry(θ) rz(φ)``; ``u3`` the same; ``u2(φ, λ)``→
  ``rz(λ) ry(π/2) rz(φ)``;
- two-qubit: ``cx``/``CX cy cz swap crx cry crz`` are haarline's gates; ``cp``,
  ``cphase``, ``cu1``→``cphase`` (haarline's controlled phase ``diag(1, 1, 1, e^{iλ})``:
  it is ``crz(λ)`` with ``rz(λ/2)`` on the control, which needs a scaled parameter, so
  haarline has it as a gate of its own); ``ch``→``ry(-π/4)`` on the target, ``cz``,
  ``ry(π/4)``; ``cu(θ, φ, λ, γ)``→``rz(γ)`` on the control, ``cphase(λ) cry(θ)
  cphase(φ)``; ``rxx ryy rzz`` (not in stdgates.inc) are haarline's ``exp(-iθ P⊗P/2)``.

**The parameter count follows the decomposition**: each input angle of a decomposed gate
becomes the trainable parameter of the factor that carries it, so ``U(a, b, c)`` is three
parameters and ``cu(a, b, c, d)`` four, numbered like all inputs in order of first use in
the program as read (``U``'s ``λ`` acts first); factors with the constant angle 0 are left
out (``U(a, 0, 0)`` is one ``ry``), and an input used twice is one shared parameter. An
input that only ``gphase`` uses is no parameter.

Everything else is rejected with :class:`~haarline.errors.CircuitError` naming the line,
the column and why: measurement, reset, classical bits and variables, ``if``, ``while``,
``switch``, subroutines, ``defcal``/``cal``, ``delay``, ``box``, durations, other pragmas,
annotations, more than one register, physical qubits ``$0``, slices, unknown gates and
inputs of other types; gates on three or more qubits (``ccx``, ``cswap``, ``ctrl @`` on a
two-qubit gate, ``ctrl(2) @ x``) unless defined from smaller gates; ``pow(k) @`` with a
non-integer ``k``; ``cu3`` without its definition (the published ``qelib1.inc`` versions
differ by a phase on the control); and scaled or shifted trainable inputs. Syntax errors from the
parser are reported the same way. At most 1000 gate applications are read (format 1
allows 1000 steps in ``layer``), and at most 256 KiB of text (the parser reads roughly
2000 lines a second).

Where the reading is done
-------------------------
:mod:`haarline.circuit.qasm._syntax` parses the text and evaluates angle and index expressions;
:mod:`haarline.circuit.qasm._walk` walks the statements and collects the steps;
:mod:`haarline.circuit.qasm._gates` resolves gate calls and ``gate`` definitions;
:mod:`haarline.circuit.qasm._standard` holds the standard gates as exact products;
:mod:`haarline.circuit.qasm._modifiers` applies the gate modifiers;
:mod:`haarline.circuit.qasm._unsupported` holds the message for each rejected feature.
"""

from __future__ import annotations

import re
from pathlib import PurePath

from haarline.circuit.model import Circuit, parse_circuit
from haarline.circuit.qasm._standard import STANDARD_GATES
from haarline.circuit.qasm._syntax import _Fail, _problem, _syntax_tree, _where
from haarline.circuit.qasm._walk import DATA_COMMENT, Failures, Reader
from haarline.circuit.text import bounded_text
from haarline.errors import CircuitError, Problem

__all__ = ["MAX_QASM_BYTES", "STANDARD_GATES", "parse_qasm"]

MAX_QASM_BYTES = 262_144
"""Largest OpenQASM text accepted, in bytes (256 KiB)."""

_CIRCUIT_NAME = re.compile(r"[A-Za-z0-9][A-Za-z0-9 ._+#()-]{0,79}")
_NAME_COMMENT = re.compile(r"^[ \t]*//[ \t]*circuit:[ \t]*(.*?)[ \t]*$", re.M)


def _circuit_name(text: str, source: str | None) -> str:
    found = _NAME_COMMENT.search(text)
    if found and _CIRCUIT_NAME.fullmatch(found[1]):
        return found[1]
    if source:
        stem = PurePath(source).stem
        if _CIRCUIT_NAME.fullmatch(stem):
            return stem
    return "circuit"


def parse_qasm(text: str | bytes, *, source: str | None = None) -> Circuit:
    """Read an OpenQASM program into a format-1 description.

    Parameters
    ----------
    text : str or bytes
        The program (bytes are read as UTF-8; a leading byte order mark is ignored). The
        supported subset is listed in the module docstring.
    source : str, optional
        Where it came from (a file name), prefixed to error messages; its stem names the
        circuit unless a ``// circuit: NAME`` comment (as :func:`to_qasm` writes) does.

    Returns
    -------
    Circuit
        ``qubits`` = register size, ``layers`` = 1, ``layer`` = one step per gate
        application in program order, with ``on`` explicit and ``angle`` or ``param`` set
        for rotations.

    Raises
    ------
    CircuitError
        For syntax errors and unsupported features, naming the line and column (1-based)
        and what is unsupported.

    Examples
    --------
    >>> c = parse_qasm('''OPENQASM 3.0;
    ... include "stdgates.inc";
    ... input angle[32] theta;
    ... qubit[2] q;
    ... h q[0];
    ... for uint i in [0:0] { cx q[i], q[i+1]; }
    ... rz(theta) q[1];
    ... rx(pi/4) q[0];''')
    >>> c.qubits, c.layers
    (2, 1)
    >>> for step in c.layer:
    ...     print(step.model_dump(exclude_none=True, exclude={"reverse"}))
    {'gate': 'h', 'on': [0]}
    {'gate': 'cx', 'on': [[0, 1]]}
    {'gate': 'rz', 'on': [1], 'param': 'theta'}
    {'gate': 'rx', 'on': [0], 'angle': 0.7853981633974483}
    >>> parse_qasm("qubit[1] q; bit c;")  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    haarline.errors.CircuitError: (root): line 1, column 13: classical bits are not supported (...)
    """
    text = bounded_text(text, limit=MAX_QASM_BYTES, what="the program", source=source)
    text = text.removeprefix("\ufeff")
    tree = _syntax_tree(text, source)
    reader = Reader(tree.version)
    marks = list(DATA_COMMENT.finditer(text))
    if len(marks) > 1:
        line = text.count("\n", 0, marks[1].start()) + 1
        raise _problem(f"line {line}: a second '// haarline data:' comment", source)
    comment = None
    if marks:
        comment = (text.count("\n", 0, marks[0].start()) + 1, marks[0][1].split())
    try:
        steps = reader.read(tree, comment)
    except Failures as many:
        problems = []
        for exc in many.failures:
            where = _where(exc.node)
            problems.append(Problem("(root)", f"{where}: {exc.message}" if where else exc.message))
        raise CircuitError(problems, source=source) from None
    except _Fail as exc:
        where = _where(exc.node)
        raise _problem(f"{where}: {exc.message}" if where else exc.message, source) from None
    except RecursionError:
        raise _problem("the program is nested too deeply", source) from None
    data = {
        "name": _circuit_name(text, source),
        "qubits": reader.register[1] if reader.register else 1,
        "layers": 1,
        "layer": steps,
    }
    if reader.data:
        data["inputs"] = len(reader.data)
    return parse_circuit(data, source=source)
