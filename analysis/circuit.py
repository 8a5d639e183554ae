"""Circuit description, format 1: the pydantic models and the loaders.

A description is JSON (or YAML with the same structure)::

    {"name": "ry-ring", "qubits": 4, "layers": 3,
     "prepare": [{"gate": "h", "on": "all"}],
     "layer":   [{"gate": "ry", "on": "all"}, {"gate": "cz", "on": "ring"}],
     "finish":  [{"gate": "ry", "on": "all"}]}

The models check structure and types (unknown keys, wrong types, counts out of range,
non-finite angles). Everything that depends on the qubit count (qubit indices, placement
patterns) is checked when the description is expanded into a gate program by
:func:`analysis.program.expand`, because scans re-instantiate a description at other
qubit counts. Both stages raise :class:`~analysis.errors.CircuitError` whose problems
name the JSON path, the value and what is allowed.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Annotated, Any, Literal

import yaml
from pydantic import BaseModel, ConfigDict, Field, StrictBool, StrictInt, ValidationError
from pydantic.json_schema import WithJsonSchema

from .errors import CircuitError, Problem, format_path
from .gates import ALIASES, GATES

__all__ = [
    "MAX_DESCRIPTION_BYTES",
    "MAX_LAYERS",
    "MAX_QUBITS",
    "MAX_STEPS",
    "ONE_QUBIT_PATTERNS",
    "TWO_QUBIT_PATTERNS",
    "Circuit",
    "Step",
    "circuit_schema",
    "load_circuit",
    "parse_circuit",
    "parse_circuit_text",
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

ONE_QUBIT_PATTERNS = ("all",)
TWO_QUBIT_PATTERNS = ("chain", "ring", "pairs", "brick-even", "brick-odd")

GateName = Literal[
    "i", "h", "x", "y", "z", "s", "sdg", "t", "tdg", "sx",
    "cx", "cnot", "cy", "cz", "swap",
    "rx", "ry", "rz", "crx", "cry", "crz", "rxx", "ryy", "rzz",
]  # fmt: skip

_ON_SCHEMA: dict[str, Any] = {
    "description": (
        "Where the gate goes. One-qubit gates: 'all' (default) or a list of qubit indices. "
        "Two-qubit gates: a placement pattern or a list of [first, second] pairs "
        "(for controlled gates [control, target])."
    ),
    "anyOf": [
        {"type": "string", "enum": [*ONE_QUBIT_PATTERNS, *TWO_QUBIT_PATTERNS]},
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


class Step(BaseModel):
    """One step: a gate and where it goes."""

    model_config = ConfigDict(extra="forbid", strict=True, frozen=True)

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


def _describe(value: Any) -> str:
    text = json.dumps(value) if _jsonable(value) else repr(value)
    if len(text) > 60:
        text = text[:57] + "..."
    return text


def _jsonable(value: Any) -> bool:
    try:
        json.dumps(value, allow_nan=False)
    except (TypeError, ValueError):
        return False
    return True


_TYPE_WORDS = {
    "int_type": "an integer",
    "bool_type": "true or false",
    "string_type": "a string",
    "float_type": "a number",
    "list_type": "a list",
    "model_type": "an object",
    "dict_type": "an object",
}


def _model_fields(loc: tuple[str | int, ...]) -> list[str]:
    """Allowed keys of the object at ``loc`` (for 'unknown key' messages)."""
    in_step = len(loc) >= 2 and loc[0] in ("prepare", "layer", "finish") and isinstance(loc[1], int)
    model = Step if in_step else Circuit
    return list(model.model_fields)


def validation_problems(exc: ValidationError) -> list[Problem]:
    """Translate a pydantic ``ValidationError`` into path-naming problems."""
    problems: list[Problem] = []
    for err in exc.errors(include_url=False):
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
            got = type(value).__name__ if value is not None else "null"
            msg = f"expected {_TYPE_WORDS[kind]}, got {_describe(value)} ({got})"
        elif kind == "finite_number":
            msg = f"expected a finite number, got {_describe(value)}"
        elif kind in ("greater_than_equal", "less_than_equal", "greater_than", "less_than"):
            lo, hi = _bounds(loc)
            msg = f"got {_describe(value)}; allowed range is {lo}..{hi}"
        elif kind in ("too_long", "too_short"):
            msg = f"length {ctx.get('actual_length')} is outside the allowed range " + (
                f"(at most {ctx.get('max_length')})"
                if kind == "too_long"
                else f"(at least {ctx.get('min_length')})"
            )
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
    analysis.errors.CircuitError: qubits: got 0; allowed range is 1..24
    """
    if isinstance(data, Circuit):
        return data
    if not isinstance(data, dict):
        got = type(data).__name__ if data is not None else "null"
        raise CircuitError([Problem("(root)", f"expected an object, got {got}")], source=source)
    try:
        return Circuit.model_validate(data)
    except ValidationError as exc:
        raise CircuitError(validation_problems(exc), source=source) from exc


class _Loader(yaml.SafeLoader):
    """YAML 1.2-style booleans: only true/false (so the key ``on`` stays a string)."""


_Loader.yaml_implicit_resolvers = {
    first: [(tag, rx) for tag, rx in resolvers if tag != "tag:yaml.org,2002:bool"]
    for first, resolvers in yaml.SafeLoader.yaml_implicit_resolvers.items()
}
_Loader.add_implicit_resolver(
    "tag:yaml.org,2002:bool",
    __import__("re").compile(r"^(?:true|True|TRUE|false|False|FALSE)$"),
    list("tTfF"),
)


def _construct_mapping(loader: _Loader, node: yaml.MappingNode, deep: bool = False) -> dict:
    seen: set[Any] = set()
    for key_node, _ in node.value:
        key = loader.construct_object(key_node, deep=deep)
        if key in seen:
            raise yaml.constructor.ConstructorError(
                None, None, f"duplicate key {key!r}", key_node.start_mark
            )
        seen.add(key)
    return yaml.SafeLoader.construct_mapping(loader, node, deep=deep)


_Loader.add_constructor(yaml.resolver.BaseResolver.DEFAULT_MAPPING_TAG, _construct_mapping)


def _reject_duplicates(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    out: dict[str, Any] = {}
    for key, value in pairs:
        if key in out:
            raise ValueError(f"duplicate key {key!r}")
        out[key] = value
    return out


def _decode(text: str, kind: str, source: str | None) -> Any:
    if kind == "yaml":
        try:
            return yaml.load(text, Loader=_Loader)  # noqa: S506 - a SafeLoader subclass
        except yaml.YAMLError as exc:
            mark = getattr(exc, "problem_mark", None) or getattr(exc, "context_mark", None)
            where = f"line {mark.line + 1}, column {mark.column + 1}: " if mark else ""
            what = getattr(exc, "problem", None) or str(exc)
            raise CircuitError([Problem("(root)", f"{where}invalid YAML: {what}")], source=source)
    try:
        return json.loads(text, object_pairs_hook=_reject_duplicates)
    except json.JSONDecodeError as exc:
        raise CircuitError(
            [Problem("(root)", f"line {exc.lineno}, column {exc.colno}: invalid JSON: {exc.msg}")],
            source=source,
        ) from None
    except ValueError as exc:  # duplicate keys
        raise CircuitError([Problem("(root)", f"invalid JSON: {exc}")], source=source) from None
    except RecursionError:
        raise CircuitError(
            [Problem("(root)", "invalid JSON: nested too deeply")], source=source
        ) from None


def parse_circuit_text(text: str | bytes, *, kind: str = "json", source: str | None = None) -> Circuit:
    """Decode JSON or YAML text and validate it as a description.

    Duplicate keys are rejected (JSON would silently keep the last one), and in YAML only
    ``true``/``false`` are booleans, so the key ``on`` is not read as ``True``.
    """
    if len(text) > MAX_DESCRIPTION_BYTES:
        raise CircuitError(
            [Problem("(root)", f"description is {len(text)} bytes; the limit is "
                     f"{MAX_DESCRIPTION_BYTES} bytes")],
            source=source,
        )
    if isinstance(text, bytes):
        try:
            text = text.decode("utf-8")
        except UnicodeDecodeError as exc:
            raise CircuitError(
                [Problem("(root)", f"not UTF-8 text (byte {exc.start})")], source=source
            ) from None
    if kind not in ("json", "yaml"):
        raise ValueError(f"kind must be 'json' or 'yaml', got {kind!r}")
    return parse_circuit(_decode(text, kind, source), source=source)


def load_circuit(path: str | Path) -> Circuit:
    """Read a description from a ``.json``, ``.yaml`` or ``.yml`` file.

    Raises
    ------
    CircuitError
        If the file is missing, too large, not valid JSON/YAML, or not a valid description.
    """
    path = Path(path)
    source = str(path)
    try:
        size = path.stat().st_size
        if size > MAX_DESCRIPTION_BYTES:
            raise CircuitError(
                [Problem("(root)", f"file is {size} bytes; the limit is "
                         f"{MAX_DESCRIPTION_BYTES} bytes")],
                source=source,
            )
        raw = path.read_bytes()
    except FileNotFoundError:
        raise CircuitError([Problem("(root)", "no such file")], source=source) from None
    except IsADirectoryError:
        raise CircuitError([Problem("(root)", "is a directory, not a file")], source=source) from None
    except PermissionError:
        raise CircuitError([Problem("(root)", "permission denied")], source=source) from None
    kind = "yaml" if path.suffix.lower() in (".yaml", ".yml") else "json"
    return parse_circuit_text(raw, kind=kind, source=source)
