"""The metric registry: one row per metric, in report order.

Everything that must know the metrics loops over :data:`REGISTRY`: the report
(:mod:`haarline.report.assemble`), the work estimate (:mod:`haarline.report.workload`),
the summaries, the policy checks, the plots, the CLI's ``--metrics`` and the service's
progress and admission. A row is a :class:`~haarline.report.metric_row.MetricRow`; the
rows live one per module in :mod:`haarline.report.sections`.

Examples
--------
>>> list(REGISTRY)
['expressibility', 'entanglement', 'trainability', 'capacity', 'lie', 'kernel', 'spectrum']
>>> REGISTRY["capacity"].options
('capacity_points',)
"""

from __future__ import annotations

from types import MappingProxyType
from typing import TYPE_CHECKING

from haarline.report.metric_row import MetricRow
from haarline.report.options import METRICS
from haarline.report.sections import (
    capacity,
    entanglement,
    expressibility,
    kernel,
    lie,
    spectrum,
    trainability,
)

if TYPE_CHECKING:
    from collections.abc import Mapping

    from haarline.circuit.model import Circuit
    from haarline.report.options import AnalysisOptions

__all__ = ["REGISTRY", "StageFraction", "progress_stages", "requested"]

_ROWS = (
    expressibility.ROW,
    entanglement.ROW,
    trainability.ROW,
    capacity.ROW,
    lie.ROW,
    kernel.ROW,
    spectrum.ROW,
)

REGISTRY: Mapping[str, MetricRow] = MappingProxyType({row.name: row for row in _ROWS})
"""Every metric's row, by name, in report order."""

if tuple(REGISTRY) != METRICS:  # the options' Metric literal and the rows must agree
    raise RuntimeError(f"registry rows {tuple(REGISTRY)} differ from the metrics {METRICS}")


def requested(options: AnalysisOptions) -> list[MetricRow]:
    """The rows of the metrics the options ask for, in report order."""
    return [REGISTRY[name] for name in options.metrics]


def progress_stages(circuit: Circuit, options: AnalysisOptions) -> int:
    """At most how many progress stages ``analyze(circuit, options)`` reports.

    The sum of the rows' stages, plus one stage per swept metric and layer count.
    """
    rows = requested(options)
    total = sum(row.stages(circuit, options) for row in rows)
    swept = sum(1 for row in rows if row.sweep is not None)
    return max(1, total + swept * len(options.layers_sweep or []))


class StageFraction:
    """The overall fraction of a job from the ``(stage, done, count)`` reports it makes.

    ``total`` is the registry's upper bound on the stages
    (:func:`progress_stages`); each change of stage name completes one, so the
    fraction only reaches 1 when the last possible stage is done (a stage that is skipped
    makes the fraction jump at the end, never run ahead of the work).
    """

    def __init__(self, total: int):
        self.total = max(1, total)
        self.seen: list[str] = []

    def __call__(self, stage: str, done: int, count: int) -> float:
        """Record a report; return the overall fraction done."""
        if not self.seen or self.seen[-1] != stage:
            self.seen.append(stage)
        part = done / count if count else 1.0
        return min(1.0, (len(self.seen) - 1 + part) / self.total)
