"""The independent OpenQASM 3 reference of the interchange tests, behind plain names.

A general-purpose SDK from PyPI (a test-only dependency of the ``test`` extra, named there
and in :data:`PACKAGES`) serves as a black box: its exporter writes programs haarline
reads, its importer reads programs haarline writes, and its statevector gives the states
to compare with. This module is the only place that calls it; the tests speak of circuits,
symbols, programs and states in our own words.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import qiskit
import qiskit.qasm3
from qiskit.circuit import Parameter
from qiskit.circuit.library import get_standard_gate_name_mapping
from qiskit.quantum_info import Operator, Statevector

PACKAGES = ("qiskit", "qiskit_qasm3_import")
"""Import names of the reference SDK (the package must never import them)."""


def gate_table() -> dict[str, Any]:
    """The SDK's standard gates by their OpenQASM names."""
    return dict(get_standard_gate_name_mapping())


def new_circuit(qubits: int) -> Any:
    """An empty circuit of the SDK on ``qubits`` qubits."""
    return qiskit.QuantumCircuit(qubits)


def symbol(name: str) -> Any:
    """A free angle of the SDK (an OpenQASM input once exported)."""
    return Parameter(name)


def write_qasm(circuit: Any) -> str:
    """The SDK's OpenQASM 3 export of a circuit."""
    return str(qiskit.qasm3.dumps(circuit))


def read_qasm(text: str) -> Any:
    """The SDK's reading of an OpenQASM 3 program, as its circuit."""
    return qiskit.qasm3.loads(text)


def bind(circuit: Any, values: dict[str, float] | list[float]) -> Any:
    """The circuit with its free angles set, by name or in the SDK's order."""
    if isinstance(values, list):
        return circuit.assign_parameters(values)
    return circuit.assign_parameters({p: values[p.name] for p in circuit.parameters})


def state(circuit: Any, values: dict[str, float]) -> np.ndarray:
    """The state of a circuit in haarline's order (qubit 0 the most significant bit).

    The SDK orders amplitudes with qubit 0 as the least significant bit, so the bits are
    reversed.
    """
    n = circuit.num_qubits
    amplitudes = Statevector(bind(circuit, values)).data
    return np.asarray(amplitudes).reshape([2] * n).transpose(range(n - 1, -1, -1)).ravel()


def matrix(circuit: Any) -> np.ndarray:
    """The unitary of a circuit without free angles, in the SDK's own order."""
    return np.asarray(Operator(circuit).data)
