"""Analysis options: one validated model shared by the library, the CLI and the service."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Annotated, Any, Literal

from haarline.circuit.model import MAX_LAYERS, MAX_QUBITS, _describe
from haarline.engine.sampling import MAX_SEED
from haarline.errors import OptionError, Problem, format_path
from haarline.metrics.observables import NAMED_COSTS, validate_cost
from haarline.metrics.trainability import DEFAULT_SCAN
from pydantic import (
    BaseModel,
    ConfigDict,
    Field,
    StrictInt,
    ValidationError,
    field_validator,
    model_validator,
)
from pydantic.json_schema import WithJsonSchema

__all__ = [
    "DEFAULT_METRICS",
    "DEFAULT_SCAN",
    "DEFAULT_SEED",
    "METRICS",
    "AnalysisOptions",
    "option_problems",
    "parse_options",
]

Metric = Literal[
    "expressibility", "entanglement", "trainability", "capacity", "lie", "kernel", "spectrum"
]

METRICS = (
    "expressibility",
    "entanglement",
    "trainability",
    "capacity",
    "lie",
    "kernel",
    "spectrum",
)
"""Metrics available in this version, in report order."""

DEFAULT_METRICS: tuple[Metric, ...] = ("expressibility", "entanglement")
"""Metrics computed when none are named (the sampled scans cost more; ask for them)."""

DEFAULT_SEED = 1
"""Seed used when none is given, so that a plain run is reproducible."""


FiniteFloat = Annotated[float, Field(allow_inf_nan=False, strict=False)]

_COST_SCHEMA: dict[str, Any] = {
    "description": "Cost for the trainability scan: a named cost or a Pauli sum "
    "[[coefficient, 'ZZI...'], ...] with one letter per qubit (qubit 0 first).",
    "anyOf": [
        {"type": "string", "enum": list(NAMED_COSTS)},
        {
            "type": "array",
            "minItems": 1,
            "items": {
                "type": "array",
                "prefixItems": [{"type": "number"}, {"type": "string", "pattern": "^[IXYZ]+$"}],
                "minItems": 2,
                "maxItems": 2,
            },
        },
    ],
    "default": "global",
}


class AnalysisOptions(BaseModel):
    """What to compute and how many samples to draw."""

    model_config = ConfigDict(extra="forbid", strict=True, frozen=True)

    metrics: list[Metric] = Field(default_factory=lambda: list(DEFAULT_METRICS), min_length=1)
    pairs: StrictInt = Field(default=5000, ge=2, le=10_000_000, description="Fidelity pairs.")
    bins: StrictInt = Field(default=75, ge=2, le=100_000, description="Fidelity histogram bins.")
    samples: StrictInt = Field(
        default=2000, ge=2, le=10_000_000, description="Meyer-Wallach samples."
    )
    seed: StrictInt = Field(default=DEFAULT_SEED, ge=0, le=MAX_SEED)
    layers_sweep: list[StrictInt] | None = Field(
        default=None,
        max_length=100,
        description="Layer counts at which to repeat the metrics (the 'sweep' rows).",
    )
    cost: Annotated[Any, WithJsonSchema(_COST_SCHEMA)] = "global"
    scan: list[StrictInt] | None = Field(
        default=None,
        min_length=1,
        max_length=30,
        description="Qubit counts of the gradient-variance scan (default 2,4,6,8 for circuits "
        "written with placement patterns, else the circuit's own count).",
    )
    scan_layers: StrictInt | Literal["n"] | None = Field(
        default=None,
        description="Layers at each scan point: as described (null), a count, or 'n'.",
    )
    depth_scan: list[StrictInt] | None = Field(
        default=None,
        min_length=1,
        max_length=50,
        description="Layer counts of a variance-against-depth scan at the circuit's qubit count.",
    )
    grad_samples: StrictInt = Field(
        default=200, ge=2, le=1_000_000, description="Parameter vectors per scan point."
    )
    gradients: Literal["adjoint", "shift"] = Field(
        default="adjoint",
        description="Gradient method: adjoint differentiation, or the parameter-shift rules "
        "(slower; a cross-check).",
    )
    precision: Literal["double", "single"] = Field(
        default="double",
        description="Engine precision: complex128 ('double') or complex64 ('single', faster; "
        "its accuracy against double is measured in bench/precision.json).",
    )
    capacity_points: StrictInt = Field(
        default=4, ge=1, le=1000, description="Random points behind the QFI rank."
    )
    vary: Literal["parameters", "inputs", "both"] | None = Field(
        default=None,
        description="For a circuit with inputs: what is random from sample to sample in the "
        "expressibility and entanglement samples (the other is held at one random draw). "
        "Default: parameters when the circuit has any, else inputs.",
    )
    inputs_uniform: list[FiniteFloat] | None = Field(
        default=None,
        min_length=2,
        max_length=2,
        description="Inputs drawn uniformly on [low, high) (the default law, on [0, 2pi)).",
    )
    inputs_normal: list[FiniteFloat] | None = Field(
        default=None,
        min_length=2,
        max_length=2,
        description="Inputs drawn from a normal law [mean, std] instead.",
    )
    kernel_pairs: StrictInt = Field(
        default=5000, ge=2, le=10_000_000, description="Random input pairs per kernel point."
    )
    kernel_rows: StrictInt = Field(
        default=60,
        ge=2,
        le=500,
        description="Labelled data rows in the kernel matrix, its alignment and the "
        "geometric difference (the first rows of the data set).",
    )
    spectrum_samples: StrictInt = Field(
        default=50, ge=1, le=100_000, description="Parameter draws behind the Fourier weights."
    )

    @field_validator("metrics")
    @classmethod
    def _ordered_unique(cls, value: list[str]) -> list[str]:
        return [m for m in METRICS if m in value]

    @field_validator("cost")
    @classmethod
    def _cost(cls, value: Any) -> Any:
        spec = validate_cost(value)
        return spec if isinstance(spec, str) else [list(t) for t in spec]

    @field_validator("inputs_uniform")
    @classmethod
    def _uniform(cls, value: list[float] | None) -> list[float] | None:
        if value is not None and not value[0] < value[1]:
            raise ValueError(f"got {value}; expected [low, high] with low < high")
        return value

    @field_validator("inputs_normal")
    @classmethod
    def _normal(cls, value: list[float] | None) -> list[float] | None:
        if value is not None and not value[1] > 0:
            raise ValueError(f"got {value}; expected [mean, std] with std > 0")
        return value

    @model_validator(mode="after")
    def _one_law(self) -> AnalysisOptions:
        if self.inputs_uniform is not None and self.inputs_normal is not None:
            raise ValueError("give one input law: inputs_uniform or inputs_normal, not both")
        return self

    @field_validator("scan")
    @classmethod
    def _qubit_counts(cls, value: list[int] | None) -> list[int] | None:
        if value is None:
            return None
        for v in value:
            if not 1 <= v <= MAX_QUBITS:
                raise ValueError(f"qubit count {v} is out of range 1..{MAX_QUBITS}")
        return sorted(set(value))

    @field_validator("scan_layers")
    @classmethod
    def _scan_layers(cls, value: int | str | None) -> int | str | None:
        if isinstance(value, int) and not 1 <= value <= MAX_LAYERS:
            raise ValueError(f"got {value}; expected 'n' or a layer count in 1..{MAX_LAYERS}")
        return value

    @field_validator("depth_scan")
    @classmethod
    def _depths(cls, value: list[int] | None) -> list[int] | None:
        return cls._layer_counts(value)

    @field_validator("layers_sweep")
    @classmethod
    def _layer_counts(cls, value: list[int] | None) -> list[int] | None:
        if value is None:
            return None
        for v in value:
            if not 1 <= v <= MAX_LAYERS:
                raise ValueError(f"layer count {v} is out of range 1..{MAX_LAYERS}")
        return sorted(set(value))


_RANGES = {
    "pairs": "2..10000000",
    "bins": "2..100000",
    "samples": "2..10000000",
    "seed": f"0..{MAX_SEED}",
    "grad_samples": "2..1000000",
    "capacity_points": "1..1000",
    "kernel_pairs": "2..10000000",
    "kernel_rows": "2..500",
    "spectrum_samples": "1..100000",
}


def parse_options(data: dict[str, Any], *, names: dict[str, str] | None = None) -> AnalysisOptions:
    """Validate options; ``names`` maps field names to what the caller calls them (flags).

    Raises
    ------
    OptionError
        Naming the option, the value and the allowed range.

    Examples
    --------
    >>> parse_options({"pairs": 10}).pairs
    10
    >>> parse_options({"bins": 1}, names={"bins": "--bins"})
    Traceback (most recent call last):
    ...
    haarline.errors.OptionError: --bins: got 1; allowed range is 2..100000
    """
    names = names or {}
    if isinstance(data, dict) and "cost" in data:
        validate_cost(data["cost"], path=names.get("cost", "cost"))
    try:
        return AnalysisOptions.model_validate(data)
    except ValidationError as exc:
        raise OptionError(option_problems(exc.errors(include_url=False), names)) from exc


def option_problems(
    errors: Sequence[Mapping[str, Any]], names: dict[str, str] | None = None
) -> list[Problem]:
    """Translate pydantic errors of :class:`AnalysisOptions` (locations relative to it)."""
    names = names or {}
    problems: list[Problem] = []
    for err in errors:
        loc = tuple(err["loc"])
        field = str(loc[0]) if loc else ""
        path = names.get(field) or format_path(loc)
        value = err.get("input")
        kind = err["type"]
        if kind in ("greater_than_equal", "less_than_equal") and field in _RANGES:
            msg = f"got {_describe(value)}; allowed range is {_RANGES[field]}"
        elif kind == "literal_error" and field == "metrics":
            msg = f"got {_describe(value)}; expected one of: {', '.join(METRICS)}"
        elif field == "precision" and kind == "literal_error":
            msg = f"got {_describe(value)}; expected double or single"
        elif field == "gradients" and kind == "literal_error":
            msg = f"got {_describe(value)}; expected adjoint or shift"
        elif field == "scan_layers" and kind in ("literal_error", "int_type"):
            msg = f"got {_describe(value)}; expected 'n' or a layer count"
        elif kind == "too_long":
            msg = (
                f"got {err['ctx'].get('actual_length')} values; at most "
                f"{err['ctx'].get('max_length')} allowed"
            )
        elif kind == "too_short":
            msg = f"got an empty list; at least {err['ctx'].get('min_length')} needed"
        elif kind == "extra_forbidden":
            msg = f"unknown option; allowed: {', '.join(AnalysisOptions.model_fields)}"
        elif kind == "int_type":
            msg = f"expected an integer, got {_describe(value)}"
        elif kind == "value_error":
            msg = str(err["ctx"]["error"])
        else:
            msg = f"{err['msg']} (got {_describe(value)})"
        problem = Problem(path, msg)
        if problem not in problems:  # a union reports once per member
            problems.append(problem)
    return problems
