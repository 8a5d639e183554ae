"""What is random in a sample: the trainable parameters, the inputs, or both.

A circuit without inputs draws only its parameters θ, uniformly on [0, 2π), exactly as
it always has (:func:`haarline.engine.sampling.draw_angles`). A circuit with inputs also
needs the features ``x``: from a uniform or a normal law, or from the rows of a data set
(:class:`InputLaw`). :class:`Draws` says which of the two varies from sample to sample;
the other is held at one random draw of its own stream (``Stream.FIXED``), so sample
``k`` is still a pure function of ``(program, seed, stream, k)``.

Examples
--------
>>> from haarline.circuit.model import parse_circuit
>>> from haarline.circuit.program import expand
>>> p = expand(parse_circuit({"qubits": 1, "inputs": 1,
...     "layer": [{"gate": "rx", "input": 0}, {"gate": "ry"}]}))
>>> a = Draws(vary="inputs").angles(p, 1, 0, 0, 3)
>>> a.shape, bool(np.all(a[:, 0] == a[0, 0])), len(set(a[:, 1])) == 3
((3, 2), True, True)
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

import numpy as np
from haarline.circuit.program import Program
from haarline.engine.sampling import Stream, draw_angles, draw_normal
from numpy.typing import NDArray

__all__ = ["Draws", "InputLaw", "Vary"]

Vary = Literal["parameters", "inputs", "both"]
"""What changes from sample to sample."""


def _key(stream: int | tuple[int, ...]) -> tuple[int, ...]:
    return tuple(int(s) for s in stream) if isinstance(stream, tuple) else (int(stream),)


@dataclass(frozen=True, kw_only=True)
class InputLaw:
    """Where input features come from.

    ``uniform`` on ``[low, high)`` (default ``[0, 2π)``), ``normal`` with ``mean`` and
    ``std``, or ``data``: rows of ``rows`` (shape ``(N, D)``), each sample taking a row
    uniformly at random. A circuit instantiated at another size can have another number of
    inputs than the data have columns (a scan): it draws from ``fallback`` instead.
    """

    kind: Literal["uniform", "normal", "data"] = "uniform"
    low: float = 0.0
    high: float = 2 * np.pi
    mean: float = 0.0
    std: float = 1.0
    rows: NDArray[np.float64] | None = field(default=None, compare=False, repr=False)
    fallback: InputLaw | None = None

    def draw(
        self, seed: int, stream: tuple[int, ...], start: int, count: int, copies: int, width: int
    ) -> NDArray[np.float64]:
        """Inputs of samples ``start .. start+count-1``, ``copies`` each: ``(count·copies, D)``."""
        if self.kind == "data":
            assert self.rows is not None
            if width != self.rows.shape[1]:
                if self.fallback is None:
                    raise ValueError(f"the data have {self.rows.shape[1]} columns, not {width}")
                return self.fallback.draw(seed, stream, start, count, copies, width)
            u = draw_angles(seed, stream, start, count, copies) / (2 * np.pi)
            index = np.minimum((u * len(self.rows)).astype(int), len(self.rows) - 1)
            return np.asarray(self.rows[index.reshape(-1), :width], dtype=float)
        if self.kind == "normal":
            z = draw_normal(seed, stream, start, count, copies * width)
            return (self.mean + self.std * z).reshape(count * copies, width)
        u = draw_angles(seed, stream, start, count, copies * width) / (2 * np.pi)
        return (self.low + (self.high - self.low) * u).reshape(count * copies, width)


@dataclass(frozen=True, kw_only=True)
class Draws:
    """How the engine's angle vectors of a stream's samples are drawn.

    ``vary``: ``parameters`` (θ random, inputs fixed), ``inputs`` (x random, θ fixed) or
    ``both``. The default suits circuits without inputs, whose numbers it leaves exactly as
    they were.
    """

    vary: Vary = "parameters"
    law: InputLaw = field(default_factory=InputLaw)

    def fixed_parameters(self, program: Program, seed: int) -> NDArray[np.float64]:
        """The θ held fixed while the inputs vary, shape ``(1, P)``."""
        return draw_angles(
            seed, (Stream.FIXED, program.qubits, program.layers), 0, 1, program.parameters
        )

    def fixed_inputs(self, program: Program, seed: int) -> NDArray[np.float64]:
        """The x held fixed while the parameters vary, shape ``(1, D)``."""
        return self.law.draw(seed, (Stream.FIXED, program.qubits, 0, 1), 0, 1, 1, program.inputs)

    def angles(
        self,
        program: Program,
        seed: int,
        stream: int | tuple[int, ...],
        start: int,
        count: int,
        copies: int = 1,
    ) -> NDArray[np.float64]:
        """Angle vectors of samples ``start .. start+count-1``: ``(count·copies, columns)``.

        Sample ``k``'s ``copies`` vectors are rows ``k·copies ..`` (two independent draws
        for a fidelity pair).
        """
        p, rows = program.parameters, count * copies
        if self.vary == "inputs":
            thetas = np.repeat(self.fixed_parameters(program, seed), rows, axis=0)
        else:
            thetas = draw_angles(seed, stream, start, count, copies * p).reshape(rows, p)
        if not program.encodings:
            return thetas
        if self.vary == "parameters":
            x = np.repeat(self.fixed_inputs(program, seed), rows, axis=0)
        else:
            x = self.law.draw(
                seed, (Stream.INPUTS, *_key(stream)), start, count, copies, program.inputs
            )
        return program.angles(thetas, x)
