"""What one row of the metric registry holds, and the small records it returns.

A metric is one module in :mod:`haarline.metrics` (or :mod:`haarline.lie`) that computes,
plus one :class:`MetricRow` in :mod:`haarline.report.sections` that wires it into
everything else: the report, the CLI's ``--metrics``, the work estimate behind admission
control, the service's progress, the cautions, the text, Markdown and HTML summaries,
the plots and the policy paths. :mod:`haarline.report.registry` lists the rows; every
caller loops over it instead of naming metrics.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from haarline.circuit.model import Circuit
    from haarline.circuit.program import Program
    from haarline.engine.context import Context
    from haarline.report.data import Dataset
    from haarline.report.options import AnalysisOptions, Metric

__all__ = ["MetricRow", "Request", "Section", "TableRow", "Work"]

Section = dict[str, Any]
"""A metric's object in the report (plain JSON types)."""


@dataclass(frozen=True, kw_only=True)
class Request:
    """What one metric is asked to compute: the circuit, its program, options, context, data."""

    circuit: Circuit
    program: Program
    options: AnalysisOptions
    context: Context
    data: Dataset | None = None


@dataclass(frozen=True)
class Work:
    """Estimated work (amplitude-gate updates) and peak working memory (bytes)."""

    updates: float
    memory: int


@dataclass(frozen=True, kw_only=True)
class TableRow:
    """One row of the headline table that the Markdown summary and the HTML page share.

    ``key`` and ``interval_key`` name the report values behind the value and interval
    cells (``metric.field``); the HTML page marks its cells with them.
    """

    label: str
    value: str
    interval: str = ""
    reference: str = ""
    key: str | None = None
    interval_key: str | None = None


def _no_cautions(section: Section, report: dict[str, Any]) -> list[str]:
    return []


def _no_rows(section: Section, report: dict[str, Any]) -> list[TableRow]:
    return []


@dataclass(frozen=True, kw_only=True)
class MetricRow:
    """Everything the rest of haarline needs to know about one metric.

    Parameters
    ----------
    name : str
        The name in ``--metrics`` and the report key.
    title : str
        Its heading in summaries.
    about : str
        One line for help texts and the API schema: what it measures, and the source.
    options : tuple of str
        The :class:`~haarline.report.options.AnalysisOptions` fields it reads (the others
        are ignored for it; ``seed`` and ``precision`` are read by every metric).
    compute : callable
        ``compute(request) -> Section`` for a :class:`Request`.
    work : callable
        ``work(circuit, program, options, memory_budget) -> Work``: an upper-bound-style
        count taken before any computation (admission control, the CLI's estimate).
    stages : callable
        ``stages(circuit, options) -> int``: at most how many progress stages ``compute``
        reports (stage names change between stages), so progress never reaches 100% early.
    cautions : callable
        ``cautions(section, report) -> list[str]``: plain warnings where a number could
        mislead.
    text : callable
        ``text(section, report) -> list[str]``: its block of the plain-text summary.
    table : callable
        ``table(section, report) -> list[TableRow]``: its rows of the headline table.
    verdict : callable, optional
        ``verdict(section) -> str``: a one-sentence verdict, when the metric gives one.
    plots : tuple of str
        PNG file names drawn from its section (:mod:`haarline.plots` has a drawer for each).
    policy_paths : tuple of str
        Report paths a policy rule typically names (each resolves in a report with it).
    sweep : callable, optional
        ``sweep(section) -> dict``: its columns in a layer-sweep row; metrics without it are
        not repeated by ``layers_sweep``.
    """

    name: Metric
    title: str
    about: str
    options: tuple[str, ...]
    compute: Callable[[Request], Section]
    work: Callable[[Circuit, Program, AnalysisOptions, int], Work]
    stages: Callable[[Circuit, AnalysisOptions], int]
    cautions: Callable[[Section, dict[str, Any]], list[str]] = _no_cautions
    text: Callable[[Section, dict[str, Any]], list[str]]
    table: Callable[[Section, dict[str, Any]], list[TableRow]] = _no_rows
    verdict: Callable[[Section], str] | None = None
    plots: tuple[str, ...] = ()
    policy_paths: tuple[str, ...] = field(default_factory=tuple)
    sweep: Callable[[Section], dict[str, Any]] | None = None
