"""The report and the comparison as typed models: the JSON shape that analyze returns.

:func:`~haarline.report.assemble.analyze` builds the report (``report_format: 1``) as a
plain dict and :func:`~haarline.report.ranking.compare_reports` the comparison
(``compare_format: 1``); the models here describe those dicts key by key, so that the
service can publish them as the response schema of its report routes and a generated
client gets typed objects. Nothing here computes: the models only read.

Every key the report has today is a typed field. A key whose value may be ``null`` is
``X | None`` and still required (the report always writes it); a key written only in
some reports (``flat_places``, the metric columns of a sweep row) has a default.

Which parts may gain keys. Within format 1 the report only grows, never renames or
retypes: a new metric adds a top-level section (one registry row), a metric may add a
field to its section or to its scan points, a new option appears under ``options``, and
a new registry row with a ``sweep`` adds columns to the sweep rows. Those models
(:class:`Report`, :class:`Comparison`, the sections, their points, the options, the
circuit facts, the sweep and ranking rows) accept keys they do not list
(``additionalProperties``), so a client generated today keeps reading tomorrow's
reports. The small fixed records inside them (a fit, an interval's record, an ideal, a
policy rule's outcome, the input law) are closed. ``tests/test_report_schema.py``
validates every golden report and live comparisons and fails on any key no model lists,
so an added key must be typed here in the same change.

``Report`` and ``Comparison`` are exported from :mod:`haarline`; the models of their
parts are reached through them (or imported from here by name).

Examples
--------
>>> from haarline.circuit.model import parse_circuit
>>> from haarline.report.assemble import analyze
>>> from haarline.report.options import AnalysisOptions
>>> circuit = parse_circuit({"qubits": 2, "layer": [{"gate": "ry"}, {"gate": "cz", "on": "chain"}]})
>>> report = Report.model_validate(analyze(circuit, AnalysisOptions(pairs=40, samples=10)))
>>> report.expressibility.pairs, report.trainability is None
(40, True)
"""

from __future__ import annotations

from typing import Annotated, Any, Literal

from haarline.report.options import Metric
from pydantic import BaseModel, ConfigDict, Field

__all__ = ["Comparison", "Report"]


class _Open(BaseModel):
    """A part of the report that may gain keys within its format (see the module notes)."""

    model_config = ConfigDict(extra="allow")


class _Closed(BaseModel):
    """A fixed record of the report: exactly these keys."""

    model_config = ConfigDict(extra="forbid")


Interval = Annotated[
    list[float], Field(min_length=2, max_length=2, description="A 95% interval [low, high].")
]
PauliTerm = Annotated[list[float | str], Field(min_length=2, max_length=2)]
Cost = Annotated[
    str | list[PauliTerm],
    Field(
        description="The cost: a named cost (global, local, zz) or a Pauli sum "
        "[[coefficient, 'ZZI...'], ...]."
    ),
]
Verdict = Literal["pass", "warn", "fail"]


# --- what the report says of the circuit, the options and the data ---------------------------


class CircuitFacts(_Open):
    """Static facts of the circuit as analyzed (``haarline.facts``)."""

    name: str
    qubits: int
    layers: int
    parameters: int = Field(description="Trainable parameters.")
    inputs: int = Field(description="Data inputs (features) the circuit encodes.")
    input_gates: int = Field(description="Gates whose angle is an input.")
    gates: int
    gate_counts: dict[str, int] = Field(description="Gates by name.")
    two_qubit_gates: int
    fixed_angle_gates: int
    depth: int = Field(description="Time steps of the greedy schedule.")


class ReportOptions(_Open):
    """Every analysis option as the run used it (defaults filled in, seed included)."""

    metrics: list[Metric]
    pairs: int
    bins: int
    samples: int
    seed: int
    layers_sweep: list[int] | None
    cost: Cost
    scan: list[int] | None
    scan_layers: int | Literal["n"] | None
    depth_scan: list[int] | None
    grad_samples: int
    gradients: Literal["adjoint", "shift"]
    precision: Literal["double", "single"]
    capacity_points: int
    vary: Literal["parameters", "inputs", "both"] | None
    inputs_uniform: list[float] | None
    inputs_normal: list[float] | None
    kernel_pairs: int
    kernel_rows: int
    spectrum_samples: int


class DataFacts(_Open):
    """The data set the inputs were drawn from: sizes, classes and a digest."""

    source: str
    rows: int
    features: int
    labelled: bool
    classes: int | None = Field(description="Distinct labels; null without labels.")
    sha256: str = Field(description="SHA-256 of the values (and labels).")


# --- expressibility and entanglement ---------------------------------------------------------


class ExpressibilityResult(_Open):
    """KL divergence of the fidelity histogram from Haar (Sim et al. 2019)."""

    kl: float = Field(description="Plug-in KL, nats.")
    interval: Interval
    kl_corrected: float = Field(description="KL minus the plug-in bias, nats.")
    bias: float = Field(description="Plug-in KL an exactly Haar circuit shows here.")
    pairs: int
    bins: int
    second_moment: float = Field(description="E[F^2] of the fidelities.")
    second_moment_interval: Interval
    haar_second_moment: float
    mean_fidelity: float
    histogram: list[float] = Field(description="Fidelity density per bin.")
    haar: list[float] = Field(description="Haar density per bin.")


class EntanglementResult(_Open):
    """Mean Meyer-Wallach entanglement over random parameters."""

    meyer_wallach: float
    interval: Interval
    std: float
    samples: int
    haar_meyer_wallach: float
    distribution: list[float] = Field(description="Share of samples per bin of [0, 1].")


# --- trainability ------------------------------------------------------------------------------


class GradientPoint(_Open):
    """Gradient-variance statistics at one (qubits, layers) point of a scan."""

    qubits: int
    layers: int
    parameters: int
    samples: int
    variance: float
    interval: Interval
    standard_error: float
    largest: float
    smallest: float
    mean_cost: float
    top_sample_share: float = Field(description="Largest share one sample has of the estimate.")
    flat_parameters: list[int] = Field(description="Parameters with no gradient at all.")
    flat_places: list[str] | None = Field(
        default=None, description="Where each flat parameter is (only when there are some)."
    )


class DecayFit(_Closed):
    """Weighted least squares of ln Var = intercept + slope x."""

    model: Literal["exponential", "power"]
    slope: float
    slope_stderr: float
    intercept: float
    chi2: float
    aic: float


class DecayFits(_Closed):
    """Exponential (x = n) and power-law (x = ln n) fits of a scan."""

    exponential: DecayFit
    power: DecayFit


class TrainabilityResult(_Open):
    """The gradient-variance scan and the barren-plateau verdict."""

    cost: Cost
    samples: int
    layers_rule: str
    points: list[GradientPoint]
    fit: DecayFits | None
    decay_per_qubit: float | None
    decay_per_qubit_stderr: float | None
    barren_plateau: bool | None = Field(description="null: no verdict (reason says why).")
    reason: str
    layer_points: list[GradientPoint]
    scan_note: str | None


# --- capacity --------------------------------------------------------------------------------


class RedundantParameter(_Closed):
    """A parameter the QFI rank finds redundant, and where it is."""

    parameter: int
    step: str
    layer: int | None = Field(description="Repetition of the layer, from 1; null outside it.")
    gate: str | None
    qubits: list[int] | None
    kind: Literal["inactive", "dependent"]


class CapacityResult(_Open):
    """Rank of the quantum Fisher information (Haug, Bharti & Kim 2021)."""

    parameters: int
    qfi_rank: int
    redundant: int
    max_rank: int = Field(description="2^(n+1) - 2, the pure-state ceiling.")
    tolerance: float
    points: int
    ranks: list[int]
    redundant_parameters: list[RedundantParameter]
    eigenvalues: list[float]


# --- the dynamical Lie algebra -----------------------------------------------------------------


class IdealFacts(_Closed):
    """One ideal of the algebra's semisimple part."""

    dimension: int
    rank: int | None
    simple: bool | None = Field(description="null: too large to split.")
    names: list[str]


class IdealShare(_Closed):
    """One simple ideal's term of the variance prediction."""

    dimension: int
    names: list[str]
    state_purity: float
    observable_purity: float
    variance: float


class VariancePredictionResult(_Open):
    """Deep-circuit loss variance from the g-purities (Ragone et al. 2024)."""

    variance: float | None
    applies: bool
    reason: str
    state_purity: float
    observable_purity: float
    state_share: float
    observable_share: float
    ideals: list[IdealShare]
    parameters: int
    deep_enough: bool


class InputState(_Closed):
    """The input state of the moved-frame circuit."""

    prefix_gates: int
    stabilizers: list[str] | None


class HalfDepthCheck(_Closed):
    """The same loss variance at half the depth."""

    layers: int
    variance: float
    interval: Interval


class DeepLossVariance(_Open):
    """Sampled loss variance of a deep version of the circuit, beside the prediction."""

    qubits: int
    layers: int
    parameters: int
    samples: int
    variance: float
    interval: Interval
    standard_error: float
    confidence: float
    mean_cost: float
    half_depth: HalfDepthCheck | None
    settled: bool | None


class AlgebraPointResult(_Open):
    """The algebra at one qubit count, its ideals and its prediction."""

    qubits: int
    layers: int
    layers_note: str
    parameters: int
    sharing: Literal["independent", "shared", "shared-interleaved"]
    shared_parameters: list[str]
    interleaved_parameters: list[str]
    moved_gates: int
    clifford_moves: bool
    input_state: InputState
    dimension: int
    complete: bool = Field(description="false: the closure stopped; dimension is a lower bound.")
    maximum: int = Field(description="4^n - 1, the dimension of su(2^n).")
    full: bool
    method: Literal["pauli-strings", "pauli-sums"]
    independent_generators: int
    centre_dimension: int | None
    ideals: list[IdealFacts]
    ideals_complete: bool
    stop_reason: str
    prediction: VariancePredictionResult | None
    prediction_note: str
    sampled: DeepLossVariance | None


class PolynomialGrowth(_Closed):
    """ln D = intercept + degree ln n."""

    degree: float
    intercept: float
    rss: float


class ExponentialGrowth(_Closed):
    """ln D = intercept + n ln base."""

    base: float
    intercept: float
    rss: float


class LieGrowth(_Closed):
    """Fits of the algebra's dimension against the qubit count."""

    points: int
    polynomial: PolynomialGrowth
    exponential: ExponentialGrowth
    better: Literal["polynomial", "exponential"] | None


class LieResult(_Open):
    """The dynamical Lie algebra over a scan of qubit counts."""

    cost: Cost
    cap: int
    layers_rule: str
    points: list[AlgebraPointResult]
    growth: LieGrowth | None
    summary: str


# --- the quantum kernel and the spectrum -------------------------------------------------------


class KernelPointResult(_Open):
    """Fidelity-kernel statistics over random input pairs at one (qubits, layers) point."""

    qubits: int
    layers: int
    inputs: int
    pairs: int
    mean: float
    mean_interval: Interval
    variance: float
    interval: Interval
    standard_error: float


class DataLaw(_Closed):
    """Inputs drawn from the rows of the data set."""

    kind: Literal["data"]
    rows: int


class NormalLaw(_Closed):
    """Inputs drawn from a normal law."""

    kind: Literal["normal"]
    mean: float
    std: float


class UniformLaw(_Closed):
    """Inputs drawn uniformly on [low, high)."""

    kind: Literal["uniform"]
    low: float
    high: float


class ProjectedKernel(_Closed):
    """The projected kernel's statistics (Huang et al. 2021)."""

    gamma: float
    mean: float
    mean_interval: Interval
    variance: float
    interval: Interval
    standard_error: float


class KernelMatrix(_Closed):
    """The fidelity kernel on the first labelled rows."""

    rows: int
    labels: list[int | str]
    values: list[list[float]]


class KernelResult(KernelPointResult):
    """The kernel at the circuit's own size, its concentration scan and its data scores."""

    law: DataLaw | NormalLaw | UniformLaw = Field(discriminator="kind")
    projected: ProjectedKernel
    points: list[KernelPointResult]
    fit: DecayFits | None
    decay_per_qubit: float | None
    decay_per_qubit_stderr: float | None
    concentrated: bool | None = Field(description="null: no verdict (reason says why).")
    reason: str
    alignment: float | None
    geometric_difference: float | None
    regularization: float
    rbf_gamma: float | None
    matrix: KernelMatrix | None
    scan_note: str | None


class FeatureSpectrumResult(_Open):
    """The Fourier frequencies of one input and the sampled weight of each."""

    input: int
    frequencies: list[float] | None
    max_frequency: float | None
    count: int | None
    gates: int
    weights: list[float] | None
    outside_weight: float | None
    samples: int
    note: str | None


class SpectrumResult(_Open):
    """The Fourier spectrum of a model with inputs (Schuld, Sweke & Meyer 2021)."""

    cost: str
    features: list[FeatureSpectrumResult]


# --- sweep, policy, the report ---------------------------------------------------------------


class SweepRow(_Open):
    """The metrics repeated at one layer count (columns of the metrics that sweep)."""

    layers: int
    parameters: int
    gates: int
    depth: int
    kl: float | None = None
    kl_corrected: float | None = None
    kl_interval: Interval | None = None
    bias: float | None = None
    second_moment: float | None = None
    meyer_wallach: float | None = None
    meyer_wallach_interval: Interval | None = None


class RuleOutcome(_Closed):
    """One policy rule applied to the report."""

    metric: str
    status: Verdict
    value: Any = Field(description="The value the rule read (any JSON value; null if none).")
    message: str
    note: str | None


class PolicyOutcome(_Closed):
    """The policy's rules applied to the report; status is the worst rule's."""

    name: str
    status: Verdict
    rules: list[RuleOutcome]


class Report(_Open):
    """An analysis report (``report_format: 1``): one section per metric, null if not asked."""

    report_format: Literal[1]
    haarline_version: str
    circuit: CircuitFacts
    options: ReportOptions
    data: DataFacts | None
    expressibility: ExpressibilityResult | None
    entanglement: EntanglementResult | None
    trainability: TrainabilityResult | None
    capacity: CapacityResult | None
    lie: LieResult | None
    kernel: KernelResult | None
    spectrum: SpectrumResult | None
    sweep: list[SweepRow] | None
    policy: PolicyOutcome | None
    cautions: list[str]
    timings: dict[str, float] = Field(description="Seconds per metric and in total.")


class RankingRow(_Open):
    """One circuit's place in a comparison, with the numbers the ranking reads."""

    name: str
    source: str
    qubits: int
    layers: int
    parameters: int
    kl: float | None = Field(description="Bias-corrected KL.")
    kl_plugin: float | None
    kl_interval: Interval | None
    meyer_wallach: float | None
    meyer_wallach_interval: Interval | None
    barren_plateau: bool | None
    decay_per_qubit: float | None
    qfi_rank: int | None
    redundant: int | None
    kernel_variance: float | None
    concentrated: bool | None
    policy: Verdict | None
    rank: int = Field(description="From 1.")
    tied_with_previous: bool


class Comparison(_Open):
    """A comparison (``compare_format: 1``): the ranking and every circuit's report."""

    compare_format: Literal[1]
    ranking_rule: str
    ranking: list[RankingRow]
    reports: list[Report]
    sources: list[str]
