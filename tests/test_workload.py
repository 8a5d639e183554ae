"""Admission estimates: every metric the analysis can run is counted before it runs."""

import pytest
from haarline.circuit.model import parse_circuit
from haarline.circuit.program import expand
from haarline.circuit.references import load_reference
from haarline.errors import OptionError
from haarline.report.options import METRICS, AnalysisOptions
from haarline.report.sections.lie import _as_sums
from haarline.report.workload import PRODUCT_COST, estimate
from haarline.service.settings import Settings

BUDGET = 1 << 30


MODEL = parse_circuit(
    {
        "qubits": 4,
        "inputs": 4,
        "layers": 2,
        "layer": [{"gate": "rx", "input": "qubit"}, {"gate": "ry"}, {"gate": "cz", "on": "ring"}],
    }
)


@pytest.mark.parametrize("metric", METRICS)
def test_every_metric_alone_has_a_cost_and_a_memory(metric):
    # a metric missing from the estimate would be admitted at cost 0 by the service
    e = estimate(MODEL, AnalysisOptions(metrics=[metric]), memory_budget=BUDGET)
    assert e.work > 0 and e.memory > 0


def test_a_kernel_of_a_circuit_without_inputs_is_refused_before_any_work():
    with pytest.raises(OptionError, match="kernel needs a circuit with inputs"):
        estimate(
            load_reference("ry-cz-ring"), AnalysisOptions(metrics=["kernel"]), memory_budget=BUDGET
        )


@pytest.mark.parametrize(
    "layer,sums",
    [
        ([{"gate": "ry"}, {"gate": "cz", "on": "ring"}], False),
        ([{"gate": "rx"}, {"gate": "rzz", "on": "chain"}], False),
        ([{"gate": "rx", "angle": 1.5707963267948966}, {"gate": "ry"}], False),  # rx(π/2): Clifford
        ([{"gate": "ry"}, {"gate": "crz", "on": "chain"}], True),  # (Z_t - Z_c Z_t)/2
        ([{"gate": "ry"}, {"gate": "t"}], True),  # T conjugates later generators into sums
        ([{"gate": "ry", "share": "step"}], True),  # one generator, a sum over targets
    ],
)
def test_the_slow_pauli_sum_closure_is_recognised(layer, sums):
    program = expand(parse_circuit({"qubits": 3, "layers": 2, "layer": layer}))
    assert _as_sums(program) is sums


def test_lie_work_on_pauli_sums_is_sent_from_score_to_jobs():
    # ref:sim2019-03 (crz ladder) needs 19 s of Lie closure on the reference machine, the
    # string-only ry-cz-ring 1.6 s; the score route's cap sits between the two
    cap = Settings().max_score_work
    lie = AnalysisOptions(metrics=["lie"])
    assert estimate(load_reference("sim2019-03"), lie, memory_budget=BUDGET).work > cap
    assert estimate(load_reference("ry-cz-ring"), lie, memory_budget=BUDGET).work < cap


def test_lie_cost_grows_with_the_scan():
    circuit = load_reference("ry-cz-ring")
    small = estimate(circuit, AnalysisOptions(metrics=["lie"], scan=[2, 3]), memory_budget=BUDGET)
    large = estimate(
        circuit, AnalysisOptions(metrics=["lie"], scan=[2, 3, 6]), memory_budget=BUDGET
    )
    assert large.work > small.work + PRODUCT_COST


def test_the_parts_sum_to_the_cost_and_name_the_largest():
    options = AnalysisOptions(
        metrics=["expressibility", "entanglement", "capacity"], pairs=50_000, layers_sweep=[1, 2]
    )
    e = estimate(load_reference("ry-cz-ring"), options, memory_budget=BUDGET)
    assert set(e.parts) == {"expressibility", "entanglement", "capacity", "layers_sweep"}
    assert sum(e.parts.values()) == pytest.approx(e.work, rel=1e-12)
    # the sweep repeats expressibility at 1 and 2 layers (8 + 16 gates, as many as the
    # circuit's own 24) and adds entanglement on top, so it is the largest part
    assert e.largest() == "layers_sweep"
    alone = estimate(
        load_reference("ry-cz-ring"),
        options.model_copy(update={"layers_sweep": None}),
        memory_budget=BUDGET,
    )
    assert alone.largest() == "expressibility"  # 2 x 50,000 circuits against 2,000
