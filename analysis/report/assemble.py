"""Assemble the report: one JSON-ready dict with stable keys (``report_format: 1``).

Keys: ``report_format``, ``haarline_version``, ``circuit`` (static facts), ``options``
(resolved, seed included), one key per metric of the registry (``expressibility``,
``entanglement``, ``trainability``, ``capacity``, ``lie``; ``null`` when not asked for),
``sweep``, ``policy``, ``cautions`` and ``timings``. Everything but ``timings`` is a pure
function of (circuit, options, version): never of the memory budget, the worker count,
the chunk size or the machine.
"""

from __future__ import annotations

import time
from dataclasses import replace
from typing import Any

import numpy as np
from haarline._version import __version__
from haarline.circuit.model import Circuit
from haarline.circuit.program import expand, facts
from haarline.engine.context import Context
from haarline.report.data import Dataset
from haarline.report.inputs import check_inputs
from haarline.report.metric_row import Request
from haarline.report.options import AnalysisOptions
from haarline.report.registry import REGISTRY, requested

__all__ = ["REPORT_FORMAT", "analyze", "cautions", "ignored_options"]

REPORT_FORMAT = 1


_GENERAL_OPTIONS = {"metrics", "seed", "precision", "layers_sweep"}


def ignored_options(options: AnalysisOptions) -> list[str]:
    """Options set to something other than their default that no requested metric reads."""
    defaults = AnalysisOptions()
    read = {o for row in requested(options) for o in row.options} | _GENERAL_OPTIONS
    out = []
    for field in AnalysisOptions.model_fields:
        if field in read or getattr(options, field) == getattr(defaults, field):
            continue
        readers = [name for name, row in REGISTRY.items() if field in row.options]
        flag = "--" + field.replace("_", "-")
        out.append(
            f"Option {field} ({flag}) was given, but none of the requested metrics reads it "
            f"(it belongs to {', '.join(readers)}): it changed nothing."
        )
    return out


def cautions(report: dict[str, Any], options: AnalysisOptions | None = None) -> list[str]:
    """Plain-language warnings where the numbers could mislead a reader (registry order)."""
    out: list[str] = []
    for name, row in REGISTRY.items():
        section = report.get(name)
        if section:
            out += row.cautions(section, report)
    if options is not None:
        out += ignored_options(options)
    return out


def analyze(
    circuit: Circuit,
    options: AnalysisOptions | None = None,
    *,
    data: Dataset | None = None,
    context: Context | None = None,
) -> dict[str, Any]:
    """Analyze a description and return the report dict.

    Parameters
    ----------
    circuit : Circuit
        Validated description.
    options : AnalysisOptions, optional
        Defaults: expressibility and entanglement, 5000 pairs, 75 bins, 2000 samples, seed 1.
    data : Dataset, optional
        For a circuit with inputs: rows of features (and labels) to draw the inputs from
        instead of the options' law (:mod:`haarline.report.data`).
    context : Context, optional
        Memory budget, worker processes and progress callback
        (:class:`~haarline.engine.context.Context`); none of them changes a number. Its
        precision is replaced by ``options.precision``, which the report states.

    Returns
    -------
    dict
        JSON-ready report (see module docstring for the keys).
    """
    options = options or AnalysisOptions()
    context = replace(context or Context(), precision=options.precision)
    start = time.perf_counter()
    timings: dict[str, float] = {}
    program = expand(circuit)
    check_inputs(program, options, data)
    request = Request(circuit=circuit, program=program, options=options, context=context, data=data)
    sections: dict[str, Any] = dict.fromkeys(REGISTRY)
    for row in requested(options):
        t = time.perf_counter()
        sections[row.name] = row.compute(request)
        timings[row.name] = time.perf_counter() - t
    sweep = None
    if options.layers_sweep:
        t = time.perf_counter()
        swept = [row for row in requested(options) if row.sweep is not None]
        sweep = []
        for layers in options.layers_sweep:
            p = expand(circuit, layers=layers)
            f = facts(p)
            entry: dict[str, Any] = {
                "layers": layers,
                "parameters": f["parameters"],
                "gates": f["gates"],
                "depth": f["depth"],
            }
            for row in swept:
                assert row.sweep is not None
                entry.update(row.sweep(row.compute(replace(request, program=p))))
            sweep.append(entry)
        timings["sweep"] = time.perf_counter() - t
    report: dict[str, Any] = {
        "report_format": REPORT_FORMAT,
        "haarline_version": __version__,
        "circuit": facts(program),
        "options": options.model_dump(),
        "data": data.facts() if data is not None else None,
        **sections,
        "sweep": sweep,
        "policy": None,
    }
    report["cautions"] = cautions(report, options)
    timings["total"] = time.perf_counter() - start
    report["timings"] = {k: round(v, 6) for k, v in timings.items()}
    _check_finite(report)
    return report


def _check_finite(value: Any, path: str = "report") -> None:
    """Guard: a report never carries NaN or infinity (JSON has no such numbers)."""
    if isinstance(value, float) and not np.isfinite(value):
        raise ArithmeticError(f"{path} is {value}; this is a bug in haarline, please report it")
    if isinstance(value, dict):
        for k, v in value.items():
            _check_finite(v, f"{path}.{k}")
    elif isinstance(value, list):
        for i, v in enumerate(value):
            _check_finite(v, f"{path}[{i}]")
