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
from .algebra import Algebra, generate_algebra, independent_count
from .capacity import Capacity, capacity, quantum_fisher, state_jacobian
from .circuit import MAX_QUBITS, Circuit, Step, circuit_schema, parse_circuit
from .compare import compare_markdown, compare_reports
from .comparison_plot import comparison_files, comparison_png, comparison_series
from .cost import Estimate, estimate
from .diagram import circuit_diagram_png
from .diagram_columns import diagram_layout
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
from .generators import CircuitGenerators, circuit_generators, rotation_generator
from .gradient_variance import VariancePoint
from .gradients import adjoint_gradients, cost_values, shift_gradients
from .haar import haar_bin_log_masses, haar_bin_masses, haar_meyer_wallach, haar_second_moment
from .ideals import Ideal, simple_algebra_names
from .lie import AlgebraPoint, LieDiagnosis, growth_fit, lie_diagnosis, lie_scan
from .lie_plot import algebra_dimension_png, algebra_dimension_series
from .lie_variance import VariancePrediction, observable_expansion, predict_variance
from .loading import load_circuit, parse_circuit_text
from .observables import NAMED_COSTS, Observable, make_observable
from .options import METRICS, AnalysisOptions, parse_options
from .pauli import (
    PauliExpansion,
    anticommutes,
    bracket,
    conjugate,
    diagonal_expansion,
    is_clifford,
    parse_pauli,
    pauli_label,
    pauli_values,
    product_phase,
)
from .placements import placement
from .plots import (
    fidelity_histogram_png,
    fidelity_series,
    meyer_wallach_png,
    meyer_wallach_series,
    plot_files,
)
from .policy import Policy, PolicyError, evaluate_policy, load_policy, parse_policy
from .program import Operation, Program, expand, facts
from .qasm import parse_qasm
from .qasm_export import to_qasm
from .references import load_reference, reference_names
from .report import REPORT_FORMAT, analyze
from .sampled_loss import LossVariance, deep_layers, deep_loss_variance, loss_variance
from .sampling import Stream, draw_angles
from .scan_plots import sweep_png, sweep_series, variance_scan_png, variance_series
from .summary import to_markdown, to_text
from .trainability import Trainability, trainability

__all__ = [
    "DEFAULT_MEMORY_BUDGET",
    "GATES",
    "MAX_QUBITS",
    "METRICS",
    "NAMED_COSTS",
    "REPORT_FORMAT",
    "Algebra",
    "AlgebraPoint",
    "AnalysisOptions",
    "Capacity",
    "Circuit",
    "CircuitError",
    "CircuitGenerators",
    "Entanglement",
    "Estimate",
    "Expressibility",
    "GateSpec",
    "HaarlineError",
    "Ideal",
    "InputError",
    "LieDiagnosis",
    "LimitError",
    "LossVariance",
    "Observable",
    "Operation",
    "OptionError",
    "PauliExpansion",
    "Policy",
    "PolicyError",
    "Problem",
    "Program",
    "Step",
    "Stream",
    "Trainability",
    "VariancePoint",
    "VariancePrediction",
    "__version__",
    "adjoint_gradients",
    "algebra_dimension_png",
    "algebra_dimension_series",
    "analyze",
    "anticommutes",
    "bracket",
    "capacity",
    "circuit_diagram_png",
    "circuit_generators",
    "circuit_schema",
    "compare_markdown",
    "compare_reports",
    "comparison_files",
    "comparison_png",
    "comparison_series",
    "compile_program",
    "conjugate",
    "cost_values",
    "deep_layers",
    "deep_loss_variance",
    "diagonal_expansion",
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
    "generate_algebra",
    "growth_fit",
    "haar_bin_log_masses",
    "haar_bin_masses",
    "haar_meyer_wallach",
    "haar_second_moment",
    "independent_count",
    "is_clifford",
    "lie_diagnosis",
    "lie_scan",
    "load_circuit",
    "load_policy",
    "load_reference",
    "lookup",
    "loss_variance",
    "make_observable",
    "meyer_wallach",
    "meyer_wallach_png",
    "meyer_wallach_series",
    "observable_expansion",
    "parse_circuit",
    "parse_circuit_text",
    "parse_options",
    "parse_pauli",
    "parse_policy",
    "parse_qasm",
    "pauli_label",
    "pauli_values",
    "placement",
    "plot_files",
    "plugin_bias",
    "predict_variance",
    "product_phase",
    "quantum_fisher",
    "qubit_purities",
    "reference_names",
    "rotation_generator",
    "rows_per_chunk",
    "run",
    "shift_gradients",
    "simple_algebra_names",
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
