"""Expansion of a description into an ordered gate program, and its static facts.

:func:`expand` resolves every placement pattern at the description's qubit count
(:mod:`haarline.circuit.placements`), checks each step's angle options, assigns trainable
parameter indices in order of first use, and checks the size of the result. The result,
a :class:`Program`, is what the engine runs. :func:`facts` gives its sizes, gate counts
and depth; :func:`time_steps` holds the depth rule, which the circuit diagram's layout
(:mod:`haarline.plots.diagram_layout`) follows too.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
from haarline.circuit.gates import GATES, lookup
from haarline.circuit.model import MAX_LAYERS, MAX_QUBITS, Circuit, Step, _describe
from haarline.circuit.placements import step_targets
from haarline.errors import CircuitError, Problem
from numpy.typing import NDArray

__all__ = [
    "MAX_OPERATIONS",
    "Encoding",
    "Operation",
    "Program",
    "expand",
    "expand_at",
    "facts",
    "inputs_at",
    "parameter_places",
    "place_text",
    "time_steps",
]

ANGLED = tuple(name for name, spec in GATES.items() if spec.takes_angle)
"""The gates with an angle, in table order (named in messages)."""

MAX_PROBLEMS = 20
"""Most problems one error lists (a description with more is told the first 20)."""

MAX_OPERATIONS = 200_000
"""Largest number of gate applications an expanded program may hold."""


@dataclass(frozen=True, kw_only=True)
class Operation:
    """One gate application.

    Attributes
    ----------
    gate : str
        Canonical gate name.
    qubits : tuple of int
        Qubits in the gate's own order (control first for controlled gates).
    param : int or None
        The column of the angle vector that gives the angle, if any: columns
        ``0 .. P-1`` are the trainable parameters, columns ``P ..`` the input encodings
        (``encoding`` says which).
    angle : float or None
        Fixed angle (radians) for a parameterized gate with ``angle`` set.
    step : str
        JSON path of the step that produced it, e.g. ``"layer[1]"``.
    layer : int or None
        Repetition index (0-based) for steps of ``layer``; ``None`` for prepare/finish.
    encoding : int or None
        For a gate whose angle is an input: its index in ``Program.encodings``.
    """

    gate: str
    qubits: tuple[int, ...]
    param: int | None = None
    angle: float | None = None
    step: str = ""
    layer: int | None = None
    encoding: int | None = None


@dataclass(frozen=True)
class Encoding:
    """How one gate's angle follows from the inputs ``x``.

    ``scale * x[f]`` for one feature ``f``; for ``product``, the second-order map
    ``scale * (π - x[a]) * (π - x[b])`` of Havlíček et al. (Nature 567, 209, 2019).
    """

    features: tuple[int, ...]
    scale: float = 1.0
    product: bool = False

    def angle(self, x: NDArray[np.float64]) -> NDArray[np.float64]:
        """The angle for every row of ``x`` (shape ``(B, D)``), shape ``(B,)``."""
        if self.product:
            a, b = self.features
            return self.scale * (np.pi - x[:, a]) * (np.pi - x[:, b])
        return self.scale * x[:, self.features[0]]


@dataclass(frozen=True, kw_only=True)
class Program:
    """An expanded, validated circuit: what the engine runs.

    ``parameters`` is the length ``P`` of the trainable parameter vector θ;
    ``parameter_steps[p]`` is the JSON path of the step that introduced parameter ``p`` and
    ``parameter_names[p]`` its ``param`` name (or ``None``). A description with inputs
    also has ``inputs`` features ``x`` and one :class:`Encoding` per gate whose angle is an
    input. The engine runs on angle vectors of ``columns = P + len(encodings)`` entries:
    ``θ`` followed by the encoded inputs (:meth:`angles`); operation ``k`` with
    ``param = c`` uses column ``c``.
    """

    name: str
    qubits: int
    layers: int
    operations: tuple[Operation, ...]
    parameters: int
    parameter_steps: tuple[str, ...] = field(default=())
    parameter_names: tuple[str | None, ...] = field(default=())
    inputs: int = 0
    encodings: tuple[Encoding, ...] = field(default=())

    @property
    def dimension(self) -> int:
        """Hilbert-space dimension ``2**qubits``."""
        return 1 << self.qubits

    @property
    def columns(self) -> int:
        """Entries of the angle vector the engine runs on: parameters, then encodings."""
        return self.parameters + len(self.encodings)

    def angles(
        self, thetas: NDArray[np.float64], x: NDArray[np.float64] | None = None
    ) -> NDArray[np.float64]:
        """The engine's angle vectors ``(B, columns)`` from ``θ`` ``(B, P)`` and ``x`` ``(B, D)``.

        Examples
        --------
        >>> from haarline.circuit.model import parse_circuit
        >>> c = parse_circuit({"qubits": 2, "inputs": 2,
        ...                    "layer": [{"gate": "ry"}, {"gate": "rx", "input": "qubit"}]})
        >>> expand(c).angles(np.array([[0.1, 0.2]]), np.array([[1.0, 2.0]])).tolist()
        [[0.1, 0.2, 1.0, 2.0]]
        """
        thetas = np.asarray(thetas, dtype=float)
        if thetas.ndim != 2 or thetas.shape[1] != self.parameters:
            raise ValueError(f"thetas must have shape (B, {self.parameters}), got {thetas.shape}")
        if not self.encodings:
            return thetas
        if x is None:
            raise ValueError(f"{self.name} encodes {self.inputs} inputs: give x")
        x = np.asarray(x, dtype=float)
        if x.shape != (len(thetas), self.inputs):
            raise ValueError(f"x must have shape ({len(thetas)}, {self.inputs}), got {x.shape}")
        encoded = np.stack([e.angle(x) for e in self.encodings], axis=1)
        return np.concatenate([thetas, encoded], axis=1)


def inputs_at(circuit: Circuit, qubits: int) -> int:
    """The number of input features of the description instantiated at ``qubits``.

    A description with as many inputs as qubits that places them by qubit (``"input":
    "qubit"`` or ``"product"``) has one input per qubit at any size, so scans can
    re-instantiate it; otherwise the count is the one written.

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> c = parse_circuit({"qubits": 2, "inputs": 2, "layer": [{"gate": "rx", "input": "qubit"}]})
    >>> inputs_at(c, 5), inputs_at(c.model_copy(update={"inputs": 3}), 5)
    (5, 3)
    """
    by_qubit = any(
        step.input in ("qubit", "product")
        for step in (*circuit.prepare, *circuit.layer, *circuit.finish)
    )
    if by_qubit and circuit.inputs == circuit.qubits:
        return qubits
    return circuit.inputs


def _check_input(step: Step, path: str, inputs: int) -> None:
    spec = lookup(step.gate)
    if step.input is None:
        if step.scale is not None:
            raise CircuitError(
                [Problem(f"{path}.scale", "'scale' multiplies an input angle; give 'input' too")]
            )
        return
    for key in ("angle", "share", "param"):
        if getattr(step, key) is not None:
            raise CircuitError(
                [
                    Problem(
                        f"{path}.input",
                        f"an input angle cannot be combined with '{key}': the angle comes "
                        "from the data; give 'input' or one of 'angle', 'share', 'param'",
                    )
                ]
            )
    if inputs == 0:
        raise CircuitError(
            [
                Problem(
                    f"{path}.input",
                    f"got {_describe(step.input)}, but the description declares no inputs; "
                    'add "inputs": D (the number of features) at the top level',
                )
            ]
        )
    if isinstance(step.input, int) and step.input >= inputs:
        raise CircuitError(
            [
                Problem(
                    f"{path}.input",
                    f"feature {step.input} is out of range for {inputs} inputs (0..{inputs - 1})",
                )
            ]
        )
    if step.input == "product" and spec.qubits != 2:
        raise CircuitError(
            [
                Problem(
                    f"{path}.input",
                    f"'product' encodes a pair of features on a two-qubit rotation; {step.gate!r} "
                    "acts on one qubit (use a feature index or 'qubit')",
                )
            ]
        )
    if step.input == "qubit" and spec.qubits != 1:
        raise CircuitError(
            [
                Problem(
                    f"{path}.input",
                    f"'qubit' gives each target qubit its own feature; {step.gate!r} acts on two "
                    "qubits (use 'product' or a feature index)",
                )
            ]
        )


def _check_input_qubits(step: Step, path: str, places: list[tuple[int, ...]], inputs: int) -> None:
    if step.input not in ("qubit", "product"):
        return
    for qs in places:
        for q in qs:
            if q >= inputs:
                raise CircuitError(
                    [
                        Problem(
                            f"{path}.input",
                            f"qubit {q} would encode feature x_{q}, but there are "
                            f"{inputs} inputs (0..{inputs - 1})",
                        )
                    ]
                )


def _check_step(step: Step, path: str, section: str, inputs: int = 0) -> None:
    spec = lookup(step.gate)
    if not spec.takes_angle:
        for key in ("angle", "share", "param", "input", "scale"):
            if getattr(step, key) is not None:
                raise CircuitError(
                    [
                        Problem(
                            f"{path}.{key}",
                            f"the gate {step.gate!r} has no angle; only "
                            f"{' '.join(ANGLED)} take '{key}'",
                        )
                    ]
                )
    if step.angle is not None and step.share is not None:
        raise CircuitError(
            [
                Problem(
                    f"{path}.share",
                    "a fixed 'angle' has no parameter to share; give either 'angle' or 'share'",
                )
            ]
        )
    if step.param is not None and (step.angle is not None or step.share is not None):
        other = "angle" if step.angle is not None else "share"
        raise CircuitError(
            [
                Problem(
                    f"{path}.param",
                    f"a named parameter cannot be combined with '{other}'; give one of "
                    "'angle', 'share' or 'param'",
                )
            ]
        )
    if step.share == "layers" and section != "layer":
        raise CircuitError(
            [
                Problem(
                    f"{path}.share",
                    f"'layers' shares a parameter across "
                    f"repetitions of 'layer'; {section!r} runs once (use "
                    "'step' or leave it out)",
                )
            ]
        )


def expand(circuit: Circuit, *, qubits: int | None = None, layers: int | None = None) -> Program:
    """Expand a description into a :class:`Program`.

    Parameters
    ----------
    circuit : Circuit
        A validated description (see :func:`haarline.circuit.model.parse_circuit`).
    qubits, layers : int, optional
        Instantiate at another qubit count or layer count (patterns re-resolved).

    Returns
    -------
    Program

    Raises
    ------
    CircuitError
        Naming the JSON path of the first step that cannot be placed.

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> c = parse_circuit({"qubits": 3, "layers": 2,
    ...                    "layer": [{"gate": "ry"}, {"gate": "cz", "on": "chain"}]})
    >>> p = expand(c)
    >>> p.parameters, len(p.operations)
    (6, 10)
    """
    n = circuit.qubits if qubits is None else qubits
    reps = circuit.layers if layers is None else layers
    if not (type(n) is int and 1 <= n <= MAX_QUBITS):
        raise CircuitError(
            [Problem("qubits", f"got {_describe(n)}; allowed range is 1..{MAX_QUBITS}")]
        )
    if not (type(reps) is int and 1 <= reps <= MAX_LAYERS):
        raise CircuitError(
            [Problem("layers", f"got {_describe(reps)}; allowed range is 1..{MAX_LAYERS}")]
        )
    sections = [("prepare", circuit.prepare), ("layer", circuit.layer), ("finish", circuit.finish)]
    d = inputs_at(circuit, n)
    targets: dict[str, list[tuple[int, ...]]] = {}
    problems: list[Problem] = []  # every step's problems, reported together
    for section, steps in sections:
        for i, step in enumerate(steps):
            path = f"{section}[{i}]"
            try:
                _check_step(step, path, section, d)
                _check_input(step, path, d)
                targets[path] = step_targets(step, path, n)
                _check_input_qubits(step, path, targets[path], d)
            except CircuitError as exc:
                problems += exc.problems
                targets[path] = []
    if problems:
        raise CircuitError(problems[:MAX_PROBLEMS])

    total = (
        sum(len(targets[f"prepare[{i}]"]) for i in range(len(circuit.prepare)))
        + reps * sum(len(targets[f"layer[{i}]"]) for i in range(len(circuit.layer)))
        + sum(len(targets[f"finish[{i}]"]) for i in range(len(circuit.finish)))
    )
    if total == 0:
        raise CircuitError(
            [
                Problem(
                    "layer",
                    "the circuit has no gates: give at least one step "
                    "in 'prepare', 'layer' or 'finish' that places a gate",
                )
            ]
        )
    if total > MAX_OPERATIONS:
        raise CircuitError(
            [
                Problem(
                    "layers",
                    f"the circuit expands to {total} gate applications;"
                    f" the limit is {MAX_OPERATIONS}",
                )
            ]
        )

    ops: list[Operation] = []
    owners: list[str] = []
    shared: dict[tuple[str, int], int] = {}

    names: list[str | None] = []
    named: dict[str, int] = {}
    encodings: list[Encoding] = []
    encoded: list[int] = []  # operation index of every input gate, in order

    def new_param(path: str, name: str | None = None) -> int:
        owners.append(path)
        names.append(name)
        return len(owners) - 1

    def emit(section: str, steps: list[Step], layer: int | None) -> None:
        for i, step in enumerate(steps):
            path = f"{section}[{i}]"
            spec = lookup(step.gate)
            step_param: int | None = None
            for k, qs in enumerate(targets[path]):
                param: int | None = None
                if step.input is not None:
                    features = (step.input,) if isinstance(step.input, int) else qs
                    scale = 1.0 if step.scale is None else step.scale
                    encodings.append(Encoding(features, scale, step.input == "product"))
                    encoded.append(len(ops))
                    ops.append(Operation(gate=spec.name, qubits=qs, step=path, layer=layer))
                    continue
                if spec.takes_angle and step.angle is None:
                    if step.param is not None:
                        if step.param not in named:
                            named[step.param] = new_param(path, step.param)
                        param = named[step.param]
                    elif step.share == "step":
                        if step_param is None:
                            step_param = new_param(path)
                        param = step_param
                    elif step.share == "layers":
                        key = (path, k)
                        if key not in shared:
                            shared[key] = new_param(path)
                        param = shared[key]
                    else:
                        param = new_param(path)
                ops.append(
                    Operation(
                        gate=spec.name,
                        qubits=qs,
                        param=param,
                        angle=step.angle,
                        step=path,
                        layer=layer,
                    )
                )

    emit("prepare", circuit.prepare, None)
    for rep in range(reps):
        emit("layer", circuit.layer, rep)
    emit("finish", circuit.finish, None)
    # input angles come after the trainable parameters in the engine's angle vector
    p = len(owners)
    for j, index in enumerate(encoded):
        ops[index] = replace(ops[index], param=p + j, encoding=j)
    return Program(
        name=circuit.name,
        qubits=n,
        layers=reps,
        operations=tuple(ops),
        parameters=p,
        parameter_steps=tuple(owners),
        parameter_names=tuple(names),
        inputs=d,
        encodings=tuple(encodings),
    )


def _listed_qubits(circuit: Circuit) -> dict[str, int]:
    """The steps that list qubits explicitly, each with the highest qubit it lists.

    Keys are JSON paths of steps (``"layer[2]"``); a description with none is written
    with placement patterns only and exists at any qubit count.

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> _listed_qubits(parse_circuit({"qubits": 4, "layer": [{"gate": "ry"},
    ...     {"gate": "rx", "on": [1, 2]}, {"gate": "cz", "on": [[3, 0]]}]}))
    {'layer[1]': 2, 'layer[2]': 3}
    """
    out: dict[str, int] = {}
    sections = [("prepare", circuit.prepare), ("layer", circuit.layer), ("finish", circuit.finish)]
    for section, steps in sections:
        for i, step in enumerate(steps):
            if isinstance(step.on, str) or not isinstance(step.on, list):
                continue
            flat = [q for item in step.on for q in (item if isinstance(item, list) else [item])]
            numbers = [q for q in flat if type(q) is int]
            if numbers:
                out[f"{section}[{i}]"] = max(numbers)
    return out


def expand_at(circuit: Circuit, qubits: int, layers: int, *, during: str = "") -> Program:
    """:func:`expand` at another size, with the size in every error message.

    Scans and deep versions instantiate a description at sizes the user did not write; a
    problem found there is reported as ``"at {qubits} qubits, {layers} layers{during}: ..."``
    (``during`` names the work, e.g. ``" (trainability scan)"``). A description whose
    steps list qubits that do not exist at the new size cannot be re-sized to it: that is
    one problem, at the first such step, saying so and what to do instead.

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> c = parse_circuit({"qubits": 3, "layer": [{"gate": "cz", "on": [[0, 2]]}]})
    >>> expand_at(c, 2, 1)  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    haarline.errors.CircuitError: layer[0].on: at 2 qubits: this step lists qubit 2, so ...
    """
    listed = _listed_qubits(circuit)
    too_high = [(path, q) for path, q in listed.items() if q >= qubits]
    if qubits != circuit.qubits and too_high:
        path, q = too_high[0]
        lowest = max(listed.values()) + 1
        own = circuit.qubits
        raise CircuitError(
            [
                Problem(
                    f"{path}.on",
                    f"at {qubits} qubits{during}: this step lists qubit {q}, so the "
                    f"description cannot be re-sized below {lowest} qubits (it is written for "
                    f"{own}); scan it at {own} qubits (--scan {own}), or give this step a "
                    "placement pattern instead of listed qubits",
                )
            ]
        )
    try:
        return expand(circuit, qubits=qubits, layers=layers)
    except CircuitError as exc:
        raise CircuitError(
            [
                Problem(p.path, f"at {qubits} qubits, {layers} layers{during}: {p.message}")
                for p in exc.problems
            ],
            source=exc.source,
        ) from exc


def parameter_places(program: Program) -> list[dict[str, Any]]:
    """Where each trainable parameter first appears: its step, layer, gate and qubits.

    ``layer`` counts repetitions of ``layer`` from 1 (``None`` for ``prepare`` and
    ``finish``), so a reader can tell "layer 2, step layer[0]" from "the first layer".

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> p = expand(parse_circuit({"qubits": 2, "layers": 2, "layer": [{"gate": "ry"}]}))
    >>> parameter_places(p)[3]
    {'parameter': 3, 'step': 'layer[0]', 'layer': 2, 'gate': 'ry', 'qubits': [1]}
    """
    places: dict[int, dict[str, Any]] = {}
    for op in program.operations:
        if op.param is not None and op.param < program.parameters and op.param not in places:
            places[op.param] = {
                "parameter": op.param,
                "step": op.step,
                "layer": None if op.layer is None else op.layer + 1,
                "gate": op.gate,
                "qubits": list(op.qubits),
            }
    return [places[k] for k in sorted(places)]


def place_text(place: dict[str, Any]) -> str:
    """``"θ3 (layer 2, layer[0]: ry on qubit 1)"`` for a :func:`parameter_places` entry."""
    where = f"layer {place['layer']}, " if place["layer"] is not None else ""
    on = ", ".join(map(str, place["qubits"]))
    word = "qubit" if len(place["qubits"]) == 1 else "qubits"
    return f"θ{place['parameter']} ({where}{place['step']}: {place['gate']} on {word} {on})"


def time_steps(program: Program) -> list[int]:
    """The time step of every operation, in program order: the one rule for depth.

    A greedy schedule: each gate, in program order, goes one step after the latest gate on
    any of its qubits (common practice). Steps count from 1; the largest is the depth.
    Gates of one step never share a qubit. Cost ``O(G)``.

    Parameters
    ----------
    program : Program
        An expanded program.

    Returns
    -------
    list of int
        ``steps[k]`` is the time step of ``program.operations[k]``; empty for no operations.

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> p = expand(parse_circuit({"qubits": 3, "layer": [{"gate": "h"},
    ...                                                  {"gate": "cx", "on": "chain"}]}))
    >>> time_steps(p)
    [1, 1, 1, 2, 3]
    """
    level = [0] * program.qubits
    steps: list[int] = []
    for op in program.operations:
        t = max(level[q] for q in op.qubits) + 1
        for q in op.qubits:
            level[q] = t
        steps.append(t)
    return steps


def facts(program: Program) -> dict[str, Any]:
    """Static facts of a program: sizes, gate counts and depth.

    Depth is the number of time steps of the greedy schedule of :func:`time_steps`.

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> p = expand(parse_circuit({"qubits": 3, "layer": [{"gate": "h"},
    ...                                                  {"gate": "cx", "on": "chain"}]}))
    >>> f = facts(p)
    >>> f["gates"], f["two_qubit_gates"], f["depth"]
    (5, 2, 3)
    """
    counts = Counter(op.gate for op in program.operations)
    return {
        "name": program.name,
        "qubits": program.qubits,
        "layers": program.layers,
        "parameters": program.parameters,
        "inputs": program.inputs,
        "input_gates": len(program.encodings),
        "gates": len(program.operations),
        "gate_counts": dict(sorted(counts.items())),
        "two_qubit_gates": sum(1 for op in program.operations if len(op.qubits) == 2),
        "fixed_angle_gates": sum(1 for op in program.operations if op.angle is not None),
        "depth": max(time_steps(program), default=0),
    }
