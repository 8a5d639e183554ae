"""The compiled general-purpose simulator of the ``compiled`` figure, behind plain names.

A statevector simulator from PyPI with a compiled core (the ``bench`` extra of
pyproject.toml names the distribution), timed as a practitioner would use it: one state
at a time, its parametric circuit updated in place. This module is the only place that
imports it; the bench, the tests and the docs speak of "the compiled simulator".
"""

from __future__ import annotations

import importlib.metadata
import importlib.util
from typing import Any

import numpy as np

PACKAGE = "qulacs"
"""Import name of the compiled simulator (the package must never import it)."""

NAME = "compiled simulator"
"""How results and tables name it."""


def installed() -> bool:
    """Whether the ``bench`` extra put the compiled simulator in this environment."""
    return importlib.util.find_spec(PACKAGE) is not None


def version() -> str:
    """The installed version, for the record of a run."""
    return importlib.metadata.version(PACKAGE)


class Loop:
    """A ``ry``/``cz`` program as the simulator's parametric circuit, two states reused.

    ``state(theta)`` is the state at one angle vector in haarline's amplitude order;
    ``fidelity(a, b)`` the overlap of two prepared states, one state at a time.
    """

    def __init__(self, program: Any):
        sim = importlib.import_module(PACKAGE)
        self._inner = importlib.import_module(f"{PACKAGE}.state").inner_product
        n = program.qubits
        self.circuit = sim.ParametricQuantumCircuit(n)
        self.order: list[int] = []  # the haarline parameter of each parametric gate
        for op in program.operations:
            q = [n - 1 - x for x in op.qubits]  # haarline's qubit 0 is the most significant
            if op.gate == "ry":
                self.circuit.add_parametric_RY_gate(q[0], 0.0)
                self.order.append(op.param)
            elif op.gate == "cz":
                self.circuit.add_CZ_gate(q[0], q[1])
            else:
                raise SystemExit(f"no {NAME} translation for gate {op.gate!r}")
        self.a, self.b = sim.QuantumState(n), sim.QuantumState(n)

    def _prepare(self, state: Any, theta: np.ndarray) -> None:
        state.set_zero_state()
        for i, p in enumerate(self.order):
            # its RY(a) is exp(+i a Y / 2); haarline's ry(t) is exp(-i t Y / 2)
            self.circuit.set_parameter(i, -theta[p])
        self.circuit.update_quantum_state(state)

    def state(self, theta: np.ndarray) -> np.ndarray:
        """The state at ``theta``, in haarline's amplitude order."""
        self._prepare(self.a, theta)
        return np.asarray(self.a.get_vector())

    def fidelity(self, theta_a: np.ndarray, theta_b: np.ndarray) -> float:
        """``|<psi(a)|psi(b)>|^2``, both states prepared one at a time."""
        self._prepare(self.a, theta_a)
        self._prepare(self.b, theta_b)
        return float(abs(self._inner(self.a, self.b)) ** 2)
