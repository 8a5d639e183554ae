"""Circuit description, format 1: the pydantic models and their error messages.

A description is JSON (or YAML with the same structure)::

    {"name": "ry-ring", "qubits": 4, "layers": 3,
     "prepare": [{"gate": "h", "on": "all"}],
     "layer":   [{"gate": "ry", "on": "all"}, {"gate": "cz", "on": "ring"}],
     "finish":  [{"gate": "ry", "on": "all"}]}

The models check structure and types (unknown keys, wrong types, counts out of range,
non-finite angles). Everything that depends on the qubit count (qubit indices, placement
patterns) is checked when the description is expanded into a gate program by
:func:`haarline.circuit.program.expand`, because scans re-instantiate a description at other
qubit counts. Both stages raise :class:`~haarline.errors.CircuitError` whose problems
name the JSON path, the value and what is allowed. Reading files and text (JSON, YAML)
lives in :mod:`haarline.circuit.loading`.
"""

from __future__ import annotations

import json
from collections.abc import Mapping, Sequence
from typing import Annotated, Any, Literal

from haarline.circuit.gates import ALIASES, GATES
from haarline.errors import CircuitError, Problem, format_path
from pydantic import (
    BaseModel,
    ConfigDict,
    Field,
    StrictBool,
    StrictInt,
    ValidationError,
    field_validator,
)
from pydantic.json_schema import WithJsonSchema

__all__ = [
    "MAX_DESCRIPTION_BYTES",
    "MAX_INPUTS",
    "MAX_LAYERS",
    "MAX_QUBITS",
    "MAX_STEPS",
    "ONE_QUBIT_PATTERNS",
    "RENAMED_PATTERNS",
    "TWO_QUBIT_PATTERNS",
    "Circuit",
    "Step",
    "circuit_schema",
    "parse_circuit",
    "validation_problems",
]

MAX_QUBITS = 24
"""Largest qubit count a description may ask for (a state of 24 qubits is 256 MiB)."""
MAX_LAYERS = 10_000
"""Largest repetition count of ``layer``."""
MAX_STEPS = 1_000
"""Largest number of steps in each of ``prepare``, ``layer`` and ``finish``."""
MAX_DESCRIPTION_BYTES = 1_048_576
"""Largest description file or body accepted, in bytes (1 MiB)."""
MAX_INPUTS = 1_000
"""Largest number of input features a description may declare."""

ONE_QUBIT_PATTERNS = ("all", "brick-even", "brick-odd")
"""Placement patterns of one-qubit gates (:mod:`haarline.circuit.placements` lists their qubits)."""
TWO_QUBIT_PATTERNS = (
    "chain",
    "ring",
    "all-to-all",
    "brick-even",
    "brick-odd",
    "brick-even-up",
    "brick-odd-up",
    "ring-up",
    "ring-backward",
    "ring-to-previous",
    "all-to-all-both-ways",
)
"""Placement patterns of two-qubit gates (:mod:`haarline.circuit.placements` lists their pairs)."""
RENAMED_PATTERNS = {"pairs": "all-to-all"}
"""Former pattern names: each is an input error that names its successor, never an alias."""

GateName = Literal[
    "i", "h", "x", "y", "z", "s", "sdg", "t", "tdg", "sx",
    "cx", "cnot", "cy", "cz", "swap",
    "rx", "ry", "rz", "crx", "cry", "crz", "rxx", "ryy", "rzz", "cphase",
]  # fmt: skip

_ON_SCHEMA: dict[str, Any] = {
    "description": (
        "Where the gate goes. One-qubit gates: 'all' (default), 'brick-even', 'brick-odd' "
        "(the qubits of those pairs) or a list of qubit indices. "
        "Two-qubit gates: a placement pattern or a list of [first, second] pairs "
        "(for controlled gates [control, target])."
    ),
    "anyOf": [
        {"type": "string", "enum": list(dict.fromkeys([*ONE_QUBIT_PATTERNS, *TWO_QUBIT_PATTERNS]))},
        {"type": "array", "items": {"type": "integer", "minimum": 0}, "minItems": 1},
        {
            "type": "array",
            "minItems": 1,
            "items": {
                "type": "array",
                "items": {"type": "integer", "minimum": 0},
                "minItems": 2,
                "maxItems": 2,
            },
        },
    ],
    "default": "all",
}

Angle = Annotated[float, Field(allow_inf_nan=False)]

_INPUT_SCHEMA: dict[str, Any] = {
    "anyOf": [
        {"type": "integer", "minimum": 0},
        {"type": "string", "enum": ["qubit", "product"]},
        {"type": "null"},
    ],
    "default": None,
}


class Step(BaseModel):
    """One step: a gate and where it goes."""

    model_config = ConfigDict(extra="forbid", strict=True, frozen=True)

    @field_validator("input")
    @classmethod
    def _input(cls, value: Any) -> int | str | None:
        if value is None or value in ("qubit", "product"):
            return value  # type: ignore[no-any-return]
        if isinstance(value, int) and not isinstance(value, bool) and value >= 0:
            return value
        raise ValueError(
            f"got {_describe(value)}{_kind_note(value)}; expected a feature index 0..D-1, "
            "'qubit' or 'product'"
        )

    gate: GateName = Field(description="Gate name from the gate table (aliases accepted).")
    on: Annotated[Any, WithJsonSchema(_ON_SCHEMA)] = "all"
    reverse: StrictBool = Field(
        default=False,
        description="Walk a two-qubit pattern from its last pair to its first and swap the "
        "two qubits of every pair.",
    )
    angle: Angle | None = Field(
        default=None,
        description="Fix the angle (radians) of a parameterized gate instead of training it.",
    )
    share: Literal["step", "layers"] | None = Field(
        default=None,
        description="'step': one parameter for every target of this step in a layer; "
        "'layers': one parameter per target, reused by every layer.",
    )
    param: Annotated[str, Field(pattern=r"^[A-Za-z_][A-Za-z0-9_]{0,63}$")] | None = Field(
        default=None,
        description="Name of one trainable parameter used by every target of this step and "
        "by every other step that gives the same name (in every layer).",
    )
    input: Annotated[Any, WithJsonSchema(_INPUT_SCHEMA)] = Field(
        default=None,
        description="Make the angle an input feature instead of a trainable parameter: k "
        "(feature x_k on every target), 'qubit' (one-qubit gates: feature x_q on target q) "
        "or 'product' (two-qubit rotations: angle (pi - x_a)(pi - x_b) on the pair (a, b), "
        "Havlicek et al., Nature 567, 209, 2019). Steps of 'layer' re-upload it every layer.",
    )
    scale: Angle | None = Field(
        default=None,
        description="Multiplies the input angle (default 1); only with 'input'.",
    )


Name = Annotated[
    str,
    Field(
        min_length=1,
        max_length=80,
        pattern=r"^[A-Za-z0-9][A-Za-z0-9 ._+#()-]*$",
        description="Short name: letters, digits, space and . _ + # ( ) -",
    ),
]


class Circuit(BaseModel):
    """A circuit description, format 1."""

    model_config = ConfigDict(
        extra="forbid",
        strict=True,
        frozen=True,
        title="haarline circuit description, format 1",
    )

    format: Literal[1] = Field(default=1, description="Description format version.")
    name: Name = "circuit"
    description: str | None = Field(default=None, max_length=2000)
    qubits: StrictInt = Field(ge=1, le=MAX_QUBITS, description="Number of qubits.")
    layers: StrictInt = Field(default=1, ge=1, le=MAX_LAYERS, description="Repetitions of 'layer'.")
    inputs: StrictInt = Field(
        default=0,
        ge=0,
        le=MAX_INPUTS,
        description="Number D of input features x_0..x_(D-1) that steps with 'input' encode.",
    )
    prepare: list[Step] = Field(default_factory=list, max_length=MAX_STEPS)
    layer: list[Step] = Field(max_length=MAX_STEPS)
    finish: list[Step] = Field(default_factory=list, max_length=MAX_STEPS)

    def with_size(self, *, qubits: int | None = None, layers: int | None = None) -> Circuit:
        """Return a copy at another qubit count or layer count (for scans and sweeps)."""
        update: dict[str, int] = {}
        if qubits is not None:
            update["qubits"] = qubits
        if layers is not None:
            update["layers"] = layers
        return parse_circuit({**self.model_dump(exclude_none=True), **update})


def circuit_schema() -> dict[str, Any]:
    """Return the JSON Schema of format 1 (generated from the models)."""
    schema = Circuit.model_json_schema()
    schema["$schema"] = "https://json-schema.org/draft/2020-12/schema"
    return schema


def _describe(value: Any, limit: int = 60) -> str:
    """Render ``value`` JSON-style for a message, cut at ``limit`` characters.

    The walk stops as soon as the text is long enough, so a value built from YAML aliases
    (which can stand for billions of nodes in a small file) costs no more than a short one.
    """
    out: list[str] = []
    size = [0]

    def emit(text: str) -> bool:
        out.append(text)
        size[0] += len(text)
        return size[0] <= limit

    def walk(v: Any) -> bool:
        if v is None:
            return emit("null")
        if isinstance(v, bool):
            return emit("true" if v else "false")
        if isinstance(v, int):
            return emit(str(v) if v.bit_length() <= 200 else f"<integer of {v.bit_length()} bits>")
        if isinstance(v, float):
            return emit(repr(v))
        if isinstance(v, str):
            return emit(json.dumps(v[: limit + 1]))
        if isinstance(v, dict):
            if not emit("{"):
                return False
            for i, (k, item) in enumerate(v.items()):
                if (i and not emit(", ")) or not walk(k) or not emit(": ") or not walk(item):
                    return False
            return emit("}")
        if isinstance(v, (list, tuple, set, frozenset)):
            if not emit("["):
                return False
            for i, item in enumerate(v):
                if (i and not emit(", ")) or not walk(item):
                    return False
            return emit("]")
        return emit(str(v)[: limit + 1])

    walk(value)
    text = "".join(out)
    return text if len(text) <= limit else text[: limit - 3] + "..."


def _kind(value: Any) -> str:
    """The JSON word for the type of a decoded value ('a string', 'an array', ...)."""
    if value is None:
        return "null"
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, int):
        return "an integer"
    if isinstance(value, float):
        return "a floating-point number"
    if isinstance(value, str):
        return "a string"
    if isinstance(value, (list, tuple)):
        return "an array"
    if isinstance(value, dict):
        return "an object"
    return type(value).__name__


def _kind_note(value: Any) -> str:
    return "" if value is None else f" ({_kind(value)})"


_TYPE_WORDS = {
    "int_type": "an integer",
    "bool_type": "true or false",
    "string_type": "a string",
    "float_type": "a number",
    "list_type": "an array",
    "model_type": "an object",
    "dict_type": "an object",
}


def _model_fields(loc: tuple[str | int, ...]) -> list[str]:
    """Allowed keys of the object at ``loc`` (for 'unknown key' messages)."""
    in_step = len(loc) >= 2 and loc[0] in ("prepare", "layer", "finish") and isinstance(loc[1], int)
    model = Step if in_step else Circuit
    return list(model.model_fields)


def validation_problems(exc: ValidationError | Sequence[Mapping[str, Any]]) -> list[Problem]:
    """Translate a pydantic ``ValidationError`` (or its error list) into path-naming problems.

    Locations are relative to the :class:`Circuit` model.
    """
    problems: list[Problem] = []
    errors = exc.errors(include_url=False) if isinstance(exc, ValidationError) else exc
    for err in errors:
        loc = tuple(err["loc"])
        kind = err["type"]
        value = err.get("input")
        ctx = err.get("ctx", {})
        if kind == "extra_forbidden":
            allowed = ", ".join(_model_fields(loc[:-1]))
            msg = f"unknown key {str(loc[-1])!r}; allowed keys: {allowed}"
        elif kind == "missing":
            msg = "required key is missing"
        elif kind == "literal_error" and loc[-1] == "gate":
            valid = ", ".join([*GATES, *ALIASES])
            msg = f"unknown gate {_describe(value)}; expected one of: {valid}"
        elif kind == "literal_error":
            msg = f"got {_describe(value)}; expected {ctx.get('expected')}"
        elif kind in _TYPE_WORDS:
            msg = f"expected {_TYPE_WORDS[kind]}, got {_describe(value)}{_kind_note(value)}"
        elif kind == "value_error":
            msg = str(ctx.get("error", err["msg"]))
        elif kind == "finite_number":
            msg = f"expected a finite number, got {_describe(value)}"
        elif kind in ("greater_than_equal", "less_than_equal", "greater_than", "less_than"):
            lo, hi = _bounds(loc)
            msg = f"got {_describe(value)}; allowed range is {lo}..{hi}"
        elif kind == "too_long":
            msg = (
                f"got a list of {ctx.get('actual_length')} items; at most "
                f"{ctx.get('max_length')} allowed"
            )
        elif kind == "too_short":
            msg = (
                f"got a list of {ctx.get('actual_length')} items; at least "
                f"{ctx.get('min_length')} required"
            )
        elif kind in ("string_too_short", "string_too_long"):
            word = "at least" if kind == "string_too_short" else "at most"
            bound = ctx.get("min_length") if kind == "string_too_short" else ctx.get("max_length")
            msg = (
                f"got {_describe(value)} ({len(str(value))} characters); expected {word} "
                f"{bound} character{'s' if bound != 1 else ''}"
            )
        elif kind == "string_unicode":
            msg = f"got {_describe(value)}; expected text without unpaired surrogate escapes"
        elif kind == "string_pattern_mismatch":
            msg = (
                f"got {_describe(value)}; expected 1 to 80 characters: letters, digits, space "
                "and . _ + # ( ) -, starting with a letter or digit"
            )
        else:
            msg = f"{err['msg']} (got {_describe(value)})"
        problems.append(Problem(format_path(loc), msg))
    return problems


def _bounds(loc: tuple[str | int, ...]) -> tuple[int, int]:
    if loc and loc[-1] == "qubits":
        return 1, MAX_QUBITS
    if loc and loc[-1] == "layers":
        return 1, MAX_LAYERS
    if loc and loc[-1] == "inputs":
        return 0, MAX_INPUTS
    return 0, 0


def parse_circuit(data: Any, *, source: str | None = None) -> Circuit:
    """Validate a decoded description (dict) and return the model.

    Parameters
    ----------
    data : object
        The decoded JSON or YAML value; must be an object.
    source : str, optional
        Where it came from (a file name), prefixed to error messages.

    Raises
    ------
    CircuitError
        Listing every structural problem with its JSON path.

    Examples
    --------
    >>> c = parse_circuit({"qubits": 2, "layer": [{"gate": "ry"}]})
    >>> c.qubits, c.layers, c.layer[0].on
    (2, 1, 'all')
    >>> parse_circuit({"qubits": 0, "layer": []})
    Traceback (most recent call last):
    ...
    haarline.errors.CircuitError: qubits: got 0; allowed range is 1..24
    """
    if isinstance(data, Circuit):
        return data
    if not isinstance(data, dict):
        raise CircuitError(
            [Problem("(root)", f"expected an object, got {_describe(data)}{_kind_note(data)}")],
            source=source,
        )
    try:
        return Circuit.model_validate(data)
    except ValidationError as exc:
        raise CircuitError(validation_problems(exc), source=source) from exc
