"""From the options and a data set to the draws of a circuit with inputs.

One place decides what is random in each metric's samples (:class:`Draws`): the law of
the inputs (``inputs_uniform``, ``inputs_normal``, or the rows of a data set) and the
``vary`` rule (default: the parameters when the circuit has any, else the inputs). Its
checks run before any sampling, so a bad combination is one clear error.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
from haarline.engine.draws import Draws, InputLaw, Vary
from haarline.errors import OptionError, Problem

if TYPE_CHECKING:
    from haarline.circuit.program import Program
    from haarline.report.data import Dataset
    from haarline.report.metric_row import Request
    from haarline.report.options import AnalysisOptions

__all__ = ["check_inputs", "default_vary", "draws_for", "input_law"]


def input_law(options: AnalysisOptions, data: Dataset | None = None) -> InputLaw:
    """The law of the inputs: the data set's rows, or the options' uniform or normal law."""
    if data is not None:
        return InputLaw(kind="data", rows=data.x, fallback=input_law(options, None))
    if options.inputs_normal is not None:
        mean, std = options.inputs_normal
        return InputLaw(kind="normal", mean=mean, std=std)
    if options.inputs_uniform is not None:
        low, high = options.inputs_uniform
        return InputLaw(kind="uniform", low=low, high=high)
    return InputLaw()


def default_vary(program: Program, options: AnalysisOptions) -> Vary:
    """``options.vary``, or inputs for a pure feature map, else the parameters."""
    if options.vary is not None:
        return options.vary
    return "inputs" if program.encodings and not program.parameters else "parameters"


def check_inputs(program: Program, options: AnalysisOptions, data: Dataset | None) -> None:
    """Refuse combinations that cannot be sampled, before any work.

    Raises
    ------
    OptionError
        ``vary`` that asks for inputs the circuit lacks or parameters it lacks; input laws
        or data for a circuit without inputs; data of the wrong width.
    """
    problems = []
    if not program.encodings:
        for metric in ("kernel", "spectrum"):
            if metric in options.metrics:
                problems.append(
                    Problem(
                        "metrics",
                        f"{metric} needs a circuit with inputs: give the description "
                        '"inputs": D and steps with "input"',
                    )
                )
    vary = default_vary(program, options)
    if vary in ("inputs", "both") and not program.encodings:
        problems.append(Problem("vary", f"got {vary!r}, but the circuit has no inputs to vary"))
    if vary in ("parameters", "both") and not program.parameters and program.encodings:
        problems.append(
            Problem(
                "vary",
                f"got {vary!r}, but the circuit has no trainable parameters (a pure feature "
                "map): vary the inputs",
            )
        )
    if not program.encodings:
        for name in ("inputs_uniform", "inputs_normal"):
            if getattr(options, name) is not None:
                problems.append(Problem(name, "the circuit has no inputs; leave it out"))
    if data is not None and data.features != program.inputs:
        problems.append(
            Problem(
                "data",
                f"{data.features} feature columns; the circuit encodes {program.inputs} inputs",
            )
        )
    if problems:
        raise OptionError(problems)


def draws_for(request: Request, vary: Vary | None = None) -> Draws:
    """The draws of a metric: ``vary`` (default: :func:`default_vary`) and the input law."""
    law = input_law(request.options, request.data)
    chosen = vary or default_vary(request.program, request.options)
    if not request.program.encodings:
        chosen = "parameters"
    return Draws(vary=chosen, law=law)


def labelled_rows(data: Dataset | None, rows: int) -> tuple[np.ndarray, np.ndarray] | None:
    """The first ``rows`` rows of a labelled data set (for the kernel matrix), or ``None``."""
    if data is None or data.labels is None:
        return None
    return data.x[:rows], data.labels[:rows]
