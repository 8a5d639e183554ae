"""haarline's numerical core: circuit descriptions, the batched engine and the metrics.

Pure functions over numpy arrays; no web, no database, no I/O beyond reading a
description file. The service and the CLI in :mod:`service` call only what is exported
here.

Examples
--------
>>> import haarline
>>> circuit = haarline.load_reference("ry-cz-ring")
>>> report = haarline.analyze(circuit, haarline.AnalysisOptions(pairs=200, samples=100))
>>> report["expressibility"]["pairs"], report["entanglement"]["samples"]
(200, 100)

Only the errors and ``__version__`` are imported with the package; every other name is
imported from its module on first use (module ``__getattr__``, PEP 562), so that a
command that needs the circuit loader does not pay for scipy, the Lie algebra or the
plots. ``from haarline import x`` and ``haarline.x`` behave as before.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING

from haarline._version import __version__
from haarline.errors import (
    CircuitError,
    ClusterError,
    DataError,
    HaarlineError,
    InputError,
    LimitError,
    OptionError,
    Problem,
)

if TYPE_CHECKING:
    from haarline.circuit.gates import GATES, GateSpec, gate_matrix, generator_matrix, lookup
    from haarline.circuit.loading import load_circuit, parse_circuit_text
    from haarline.circuit.model import MAX_QUBITS, Circuit, Step, circuit_schema, parse_circuit
    from haarline.circuit.placements import pattern_qubits, placement
    from haarline.circuit.program import Encoding, Operation, Program, expand, facts
    from haarline.circuit.qasm.export import to_qasm
    from haarline.circuit.qasm.parse import parse_qasm
    from haarline.circuit.references import load_reference, reference_names
    from haarline.engine.context import Context, Precision, Progress
    from haarline.engine.draws import Draws, InputLaw, Vary
    from haarline.engine.sampling import Stream, draw_angles
    from haarline.engine.statevector import (
        DEFAULT_MEMORY_BUDGET,
        compile_program,
        rows_per_chunk,
        run,
        zero_states,
    )
    from haarline.lie.algebra import Algebra, ClosureStop, generate_algebra, independent_count
    from haarline.lie.diagnosis import (
        AlgebraPoint,
        LieDiagnosis,
        growth_fit,
        lie_diagnosis,
        lie_scan,
    )
    from haarline.lie.generators import CircuitGenerators, circuit_generators, rotation_generator
    from haarline.lie.ideals import Ideal, simple_algebra_names
    from haarline.lie.pauli import (
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
    from haarline.lie.variance import VariancePrediction, observable_expansion, predict_variance
    from haarline.metrics.capacity import Capacity, capacity, quantum_fisher, state_jacobian
    from haarline.metrics.entanglement import (
        Entanglement,
        entangling_capability,
        meyer_wallach,
        qubit_purities,
    )
    from haarline.metrics.expressibility import (
        Expressibility,
        divergence_from_haar,
        expressibility,
        fidelities,
        plugin_bias,
    )
    from haarline.metrics.gradient_variance import VariancePoint
    from haarline.metrics.gradients import adjoint_gradients, cost_values, shift_gradients
    from haarline.metrics.haar import (
        haar_bin_log_masses,
        haar_bin_masses,
        haar_meyer_wallach,
        haar_second_moment,
    )
    from haarline.metrics.kernel import (
        KernelPoint,
        alignment,
        geometric_difference,
        kernel_matrix,
        kernel_values,
        projected_values,
        rbf_kernel,
        summarize_kernel,
    )
    from haarline.metrics.observables import NAMED_COSTS, Observable, make_observable
    from haarline.metrics.sampled_loss import (
        LossVariance,
        deep_layers,
        deep_loss_variance,
        loss_variance,
    )
    from haarline.metrics.spectrum import FeatureSpectrum, feature_frequencies, spectrum
    from haarline.metrics.trainability import Trainability, trainability
    from haarline.plots.algebra import algebra_dimension_png, algebra_dimension_series
    from haarline.plots.comparison import comparison_files, comparison_png, comparison_series
    from haarline.plots.diagram import circuit_diagram_png
    from haarline.plots.diagram_layout import diagram_layout
    from haarline.plots.figures import (
        fidelity_histogram_png,
        fidelity_series,
        meyer_wallach_png,
        meyer_wallach_series,
        plot_files,
    )
    from haarline.plots.models import (
        kernel_matrix_png,
        kernel_matrix_series,
        kernel_scan_png,
        kernel_scan_series,
        spectrum_png,
        spectrum_series,
    )
    from haarline.plots.scans import sweep_png, sweep_series, variance_scan_png, variance_series
    from haarline.report.assemble import REPORT_FORMAT, analyze
    from haarline.report.data import Dataset, dataset_from, load_data
    from haarline.report.metric_row import MetricRow, Request, TableRow, Work
    from haarline.report.options import METRICS, AnalysisOptions, parse_options
    from haarline.report.policy import (
        Policy,
        PolicyError,
        evaluate_policy,
        load_policy,
        parse_policy,
    )
    from haarline.report.ranking import compare_markdown, compare_reports
    from haarline.report.registry import REGISTRY, StageFraction, progress_stages, requested
    from haarline.report.schema import Comparison, Report
    from haarline.report.summary import headline_rows, to_markdown, to_text, verdicts
    from haarline.report.verdict import Banner, banner, joint_verdict
    from haarline.report.workload import Estimate, estimate

# where each lazily imported name lives (tests/test_startup.py checks it against the
# imports above, which type checkers read)
_LAZY: dict[str, tuple[str, ...]] = {
    "haarline.circuit.gates": (
        "GATES",
        "GateSpec",
        "gate_matrix",
        "generator_matrix",
        "lookup",
    ),
    "haarline.circuit.loading": (
        "load_circuit",
        "parse_circuit_text",
    ),
    "haarline.circuit.model": (
        "MAX_QUBITS",
        "Circuit",
        "Step",
        "circuit_schema",
        "parse_circuit",
    ),
    "haarline.circuit.placements": (
        "pattern_qubits",
        "placement",
    ),
    "haarline.circuit.program": (
        "Encoding",
        "Operation",
        "Program",
        "expand",
        "facts",
    ),
    "haarline.circuit.qasm.export": ("to_qasm",),
    "haarline.circuit.qasm.parse": ("parse_qasm",),
    "haarline.circuit.references": (
        "load_reference",
        "reference_names",
    ),
    "haarline.engine.context": (
        "Context",
        "Precision",
        "Progress",
    ),
    "haarline.engine.draws": (
        "Draws",
        "InputLaw",
        "Vary",
    ),
    "haarline.engine.sampling": (
        "Stream",
        "draw_angles",
    ),
    "haarline.engine.statevector": (
        "DEFAULT_MEMORY_BUDGET",
        "compile_program",
        "rows_per_chunk",
        "run",
        "zero_states",
    ),
    "haarline.lie.algebra": (
        "Algebra",
        "ClosureStop",
        "generate_algebra",
        "independent_count",
    ),
    "haarline.lie.diagnosis": (
        "AlgebraPoint",
        "LieDiagnosis",
        "growth_fit",
        "lie_diagnosis",
        "lie_scan",
    ),
    "haarline.lie.generators": (
        "CircuitGenerators",
        "circuit_generators",
        "rotation_generator",
    ),
    "haarline.lie.ideals": (
        "Ideal",
        "simple_algebra_names",
    ),
    "haarline.lie.pauli": (
        "PauliExpansion",
        "anticommutes",
        "bracket",
        "conjugate",
        "diagonal_expansion",
        "is_clifford",
        "parse_pauli",
        "pauli_label",
        "pauli_values",
        "product_phase",
    ),
    "haarline.lie.variance": (
        "VariancePrediction",
        "observable_expansion",
        "predict_variance",
    ),
    "haarline.metrics.capacity": (
        "Capacity",
        "capacity",
        "quantum_fisher",
        "state_jacobian",
    ),
    "haarline.metrics.entanglement": (
        "Entanglement",
        "entangling_capability",
        "meyer_wallach",
        "qubit_purities",
    ),
    "haarline.metrics.expressibility": (
        "Expressibility",
        "divergence_from_haar",
        "expressibility",
        "fidelities",
        "plugin_bias",
    ),
    "haarline.metrics.gradient_variance": ("VariancePoint",),
    "haarline.metrics.gradients": (
        "adjoint_gradients",
        "cost_values",
        "shift_gradients",
    ),
    "haarline.metrics.haar": (
        "haar_bin_log_masses",
        "haar_bin_masses",
        "haar_meyer_wallach",
        "haar_second_moment",
    ),
    "haarline.metrics.kernel": (
        "KernelPoint",
        "alignment",
        "geometric_difference",
        "kernel_matrix",
        "kernel_values",
        "projected_values",
        "rbf_kernel",
        "summarize_kernel",
    ),
    "haarline.metrics.observables": (
        "NAMED_COSTS",
        "Observable",
        "make_observable",
    ),
    "haarline.metrics.sampled_loss": (
        "LossVariance",
        "deep_layers",
        "deep_loss_variance",
        "loss_variance",
    ),
    "haarline.metrics.spectrum": (
        "FeatureSpectrum",
        "feature_frequencies",
        "spectrum",
    ),
    "haarline.metrics.trainability": (
        "Trainability",
        "trainability",
    ),
    "haarline.plots.algebra": (
        "algebra_dimension_png",
        "algebra_dimension_series",
    ),
    "haarline.plots.comparison": (
        "comparison_files",
        "comparison_png",
        "comparison_series",
    ),
    "haarline.plots.diagram": ("circuit_diagram_png",),
    "haarline.plots.diagram_layout": ("diagram_layout",),
    "haarline.plots.figures": (
        "fidelity_histogram_png",
        "fidelity_series",
        "meyer_wallach_png",
        "meyer_wallach_series",
        "plot_files",
    ),
    "haarline.plots.models": (
        "kernel_matrix_png",
        "kernel_matrix_series",
        "kernel_scan_png",
        "kernel_scan_series",
        "spectrum_png",
        "spectrum_series",
    ),
    "haarline.plots.scans": (
        "sweep_png",
        "sweep_series",
        "variance_scan_png",
        "variance_series",
    ),
    "haarline.report.assemble": (
        "REPORT_FORMAT",
        "analyze",
    ),
    "haarline.report.data": (
        "Dataset",
        "dataset_from",
        "load_data",
    ),
    "haarline.report.metric_row": (
        "MetricRow",
        "Request",
        "TableRow",
        "Work",
    ),
    "haarline.report.options": (
        "METRICS",
        "AnalysisOptions",
        "parse_options",
    ),
    "haarline.report.policy": (
        "Policy",
        "PolicyError",
        "evaluate_policy",
        "load_policy",
        "parse_policy",
    ),
    "haarline.report.ranking": (
        "compare_markdown",
        "compare_reports",
    ),
    "haarline.report.schema": (
        "Comparison",
        "Report",
    ),
    "haarline.report.registry": (
        "REGISTRY",
        "StageFraction",
        "progress_stages",
        "requested",
    ),
    "haarline.report.summary": (
        "headline_rows",
        "to_markdown",
        "to_text",
        "verdicts",
    ),
    "haarline.report.verdict": (
        "Banner",
        "banner",
        "joint_verdict",
    ),
    "haarline.report.workload": (
        "Estimate",
        "estimate",
    ),
}

_MODULE_OF = {name: module for module, names in _LAZY.items() for name in names}


_SUBPACKAGES = frozenset({"circuit", "engine", "metrics", "lie", "report", "plots"})


def __getattr__(name: str) -> object:
    """Import a public name from its module on first use and keep it here.

    The subpackages resolve too (``haarline.engine`` after a bare ``import haarline``).
    """
    if name in _SUBPACKAGES:
        return importlib.import_module(f"haarline.{name}")
    module = _MODULE_OF.get(name)
    if module is None:
        raise AttributeError(f"module 'haarline' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    """The module's attributes, the names not yet imported included."""
    return sorted(set(globals()) | set(__all__))


__all__ = [
    "DEFAULT_MEMORY_BUDGET",
    "GATES",
    "MAX_QUBITS",
    "METRICS",
    "NAMED_COSTS",
    "REGISTRY",
    "REPORT_FORMAT",
    "Algebra",
    "AlgebraPoint",
    "AnalysisOptions",
    "Banner",
    "Capacity",
    "Circuit",
    "Comparison",
    "Report",
    "CircuitError",
    "ClusterError",
    "CircuitGenerators",
    "ClosureStop",
    "Context",
    "DataError",
    "Dataset",
    "Draws",
    "Encoding",
    "Entanglement",
    "Estimate",
    "Expressibility",
    "FeatureSpectrum",
    "GateSpec",
    "HaarlineError",
    "Ideal",
    "InputError",
    "InputLaw",
    "KernelPoint",
    "LieDiagnosis",
    "LimitError",
    "LossVariance",
    "MetricRow",
    "Observable",
    "Operation",
    "OptionError",
    "PauliExpansion",
    "Policy",
    "PolicyError",
    "Precision",
    "Problem",
    "Program",
    "Progress",
    "Request",
    "Step",
    "StageFraction",
    "Stream",
    "TableRow",
    "Trainability",
    "VariancePoint",
    "VariancePrediction",
    "Vary",
    "Work",
    "__version__",
    "adjoint_gradients",
    "algebra_dimension_png",
    "algebra_dimension_series",
    "alignment",
    "analyze",
    "anticommutes",
    "banner",
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
    "dataset_from",
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
    "feature_frequencies",
    "fidelities",
    "fidelity_histogram_png",
    "fidelity_series",
    "gate_matrix",
    "generate_algebra",
    "generator_matrix",
    "geometric_difference",
    "growth_fit",
    "haar_bin_log_masses",
    "haar_bin_masses",
    "haar_meyer_wallach",
    "haar_second_moment",
    "headline_rows",
    "independent_count",
    "is_clifford",
    "joint_verdict",
    "kernel_matrix",
    "kernel_matrix_png",
    "kernel_matrix_series",
    "kernel_scan_png",
    "kernel_scan_series",
    "kernel_values",
    "lie_diagnosis",
    "lie_scan",
    "load_circuit",
    "load_data",
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
    "pattern_qubits",
    "pauli_label",
    "pauli_values",
    "placement",
    "plot_files",
    "plugin_bias",
    "predict_variance",
    "product_phase",
    "progress_stages",
    "projected_values",
    "quantum_fisher",
    "qubit_purities",
    "rbf_kernel",
    "reference_names",
    "requested",
    "rotation_generator",
    "rows_per_chunk",
    "run",
    "shift_gradients",
    "simple_algebra_names",
    "spectrum",
    "spectrum_png",
    "spectrum_series",
    "state_jacobian",
    "summarize_kernel",
    "sweep_png",
    "sweep_series",
    "to_markdown",
    "to_qasm",
    "to_text",
    "trainability",
    "variance_scan_png",
    "variance_series",
    "verdicts",
    "zero_states",
]
