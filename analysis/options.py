"""Analysis options: one validated model shared by the library, the CLI and the service."""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, StrictInt, ValidationError, field_validator

from .circuit import MAX_LAYERS, _describe
from .errors import OptionError, Problem, format_path
from .sampling import MAX_SEED

__all__ = ["DEFAULT_SEED", "METRICS", "AnalysisOptions", "parse_options"]

METRICS = ("expressibility", "entanglement")
"""Metrics available in this version, in report order."""

DEFAULT_SEED = 1
"""Seed used when none is given, so that a plain run is reproducible."""

Metric = Literal["expressibility", "entanglement"]


class AnalysisOptions(BaseModel):
    """What to compute and how many samples to draw."""

    model_config = ConfigDict(extra="forbid", strict=True, frozen=True)

    metrics: list[Metric] = Field(default_factory=lambda: list(METRICS), min_length=1)
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

    @field_validator("metrics")
    @classmethod
    def _ordered_unique(cls, value: list[str]) -> list[str]:
        return [m for m in METRICS if m in value]

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
}


def parse_options(data: dict, *, names: dict[str, str] | None = None) -> AnalysisOptions:
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
    analysis.errors.OptionError: --bins: got 1; allowed range is 2..100000
    """
    names = names or {}
    try:
        return AnalysisOptions.model_validate(data)
    except ValidationError as exc:
        problems = []
        for err in exc.errors(include_url=False):
            loc = tuple(err["loc"])
            field = str(loc[0]) if loc else ""
            path = names.get(field) or format_path(loc)
            value = err.get("input")
            kind = err["type"]
            if kind in ("greater_than_equal", "less_than_equal") and field in _RANGES:
                msg = f"got {_describe(value)}; allowed range is {_RANGES[field]}"
            elif kind == "literal_error":
                msg = f"got {_describe(value)}; expected one of: {', '.join(METRICS)}"
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
            problems.append(Problem(path, msg))
        raise OptionError(problems) from exc
