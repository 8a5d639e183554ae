"""haarline's numerical core: circuit descriptions, the batched engine and the metrics.

Pure functions over numpy arrays; no web, no database, no I/O beyond reading a
description file. The service and the CLI in :mod:`service` call only what is exported
here.

Examples
--------
>>> import analysis
>>> circuit = analysis.load_reference("ry-cz-ring")
>>> report = analysis.analyze(circuit, analysis.AnalysisOptions(pairs=200, samples=100))
>>> sorted(report)[:4]
['capacity', 'cautions', 'circuit', 'entanglement']
"""

from ._version import __version__
from .capacity import Capacity, capacity, quantum_fisher, state_jacobian
from .circuit import MAX_QUBITS, Circuit, Step, circuit_schema, parse_circuit
from .compare import compare_markdown, compare_reports
from .comparison_plot import comparison_png, comparison_series
from .cost import Estimate, estimate
from .diagram import circuit_diagram_png, diagram_layout
from .engine import DEFAULT_MEMORY_BUDGET, compile_program, rows_per_chunk, run, zero_states
from .entanglement import Entanglement, entangling_capability, meyer_wallach, qubit_purities
from .errors import CircuitError, HaarlineError, InputError, LimitError, OptionError, Problem
from .expressibility import (
    Expressibility,
    divergence_from_haar,
    expressibility,
    fidelities,
    plugin_bias,
)
from .gates import GATES, GateSpec, gate_matrix, lookup
from .gradients import adjoint_gradients, cost_values, shift_gradients
from .haar import haar_bin_log_masses, haar_bin_masses, haar_meyer_wallach, haar_second_moment
from .loading import load_circuit, parse_circuit_text
from .observables import NAMED_COSTS, Observable, make_observable
from .options import METRICS, AnalysisOptions, parse_options
from .plots import (
    fidelity_histogram_png,
    fidelity_series,
    meyer_wallach_png,
    meyer_wallach_series,
    plot_files,
)
from .policy import Policy, PolicyError, evaluate_policy, load_policy, parse_policy
from .program import Operation, Program, expand, facts, placement
from .qasm import parse_qasm
from .qasm_export import to_qasm
from .references import load_reference, reference_names
from .report import REPORT_FORMAT, analyze
from .sampling import Stream, draw_angles
from .scan_plots import sweep_png, sweep_series, variance_scan_png, variance_series
from .summary import to_markdown, to_text
from .trainability import Trainability, VariancePoint, trainability

__all__ = [
    "DEFAULT_MEMORY_BUDGET",
    "GATES",
    "MAX_QUBITS",
    "METRICS",
    "NAMED_COSTS",
    "REPORT_FORMAT",
    "AnalysisOptions",
    "Capacity",
    "Circuit",
    "CircuitError",
    "Entanglement",
    "Estimate",
    "Expressibility",
    "GateSpec",
    "HaarlineError",
    "InputError",
    "LimitError",
    "Observable",
    "Operation",
    "OptionError",
    "Policy",
    "PolicyError",
    "Problem",
    "Program",
    "Step",
    "Stream",
    "Trainability",
    "VariancePoint",
    "__version__",
    "adjoint_gradients",
    "analyze",
    "capacity",
    "circuit_diagram_png",
    "circuit_schema",
    "compare_markdown",
    "compare_reports",
    "comparison_png",
    "comparison_series",
    "compile_program",
    "cost_values",
    "diagram_layout",
    "divergence_from_haar",
    "draw_angles",
    "entangling_capability",
    "estimate",
    "evaluate_policy",
    "expand",
    "expressibility",
    "facts",
    "fidelities",
    "fidelity_histogram_png",
    "fidelity_series",
    "gate_matrix",
    "haar_bin_log_masses",
    "haar_bin_masses",
    "haar_meyer_wallach",
    "haar_second_moment",
    "load_circuit",
    "load_policy",
    "load_reference",
    "lookup",
    "make_observable",
    "meyer_wallach",
    "meyer_wallach_png",
    "meyer_wallach_series",
    "parse_circuit",
    "parse_circuit_text",
    "parse_options",
    "parse_policy",
    "parse_qasm",
    "placement",
    "plot_files",
    "plugin_bias",
    "quantum_fisher",
    "qubit_purities",
    "reference_names",
    "rows_per_chunk",
    "run",
    "shift_gradients",
    "state_jacobian",
    "sweep_png",
    "sweep_series",
    "to_markdown",
    "to_qasm",
    "to_text",
    "trainability",
    "variance_scan_png",
    "variance_series",
    "zero_states",
]
