"""Bundled reference circuits, addressable as ``ref:NAME`` wherever a file is accepted.

``sim2019-01`` … ``sim2019-19`` are the nineteen circuits of Sim, Johnson & Aspuru-Guzik
(Adv. Quantum Technol. 2, 1900070, 2019, Fig. 2), drawn there for 4 qubits and transcribed
from memory (``NOTES.md`` beside this file says what is not confirmed); the others are
common layered designs under plain names of our own. Every file is written with placement
patterns, so every reference also exists at other qubit counts.
"""

from __future__ import annotations

from importlib import resources

from haarline.circuit.loading import parse_circuit_text
from haarline.circuit.model import Circuit
from haarline.errors import CircuitError, Problem

__all__ = ["REFERENCE_PREFIX", "load_reference", "reference_names"]

REFERENCE_PREFIX = "ref:"


def reference_names() -> list[str]:
    """Names of every bundled reference circuit, sorted.

    Examples
    --------
    >>> names = reference_names()
    >>> names[0], len([n for n in names if n.startswith("sim2019-")])
    ('rx-product', 19)
    """
    root = resources.files(__name__)
    return sorted(p.name[:-5] for p in root.iterdir() if p.name.endswith(".json"))


def load_reference(name: str) -> Circuit:
    """Load a bundled circuit by name (with or without the ``ref:`` prefix).

    Raises
    ------
    CircuitError
        For an unknown name, listing the valid ones.
    """
    if name.startswith(REFERENCE_PREFIX):
        name = name[len(REFERENCE_PREFIX) :]
    names = reference_names()
    if name not in names:
        raise CircuitError(
            [
                Problem(
                    "(root)",
                    f"unknown reference circuit {name!r}; expected one of: {', '.join(names)}",
                )
            ],
            source=f"{REFERENCE_PREFIX}{name}",
        )
    text = resources.files(__name__).joinpath(f"{name}.json").read_text(encoding="utf-8")
    return parse_circuit_text(text, source=f"{REFERENCE_PREFIX}{name}")
