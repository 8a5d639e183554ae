"""Gradient-variance scans against closed forms, and the barren-plateau verdict."""

import math

import haarline
import numpy as np
import pytest
from haarline import parse_circuit
from haarline.metrics.gradient_variance import VariancePoint, summarize_gradients
from haarline.metrics.plateau import fit_decay, verdict
from haarline.metrics.trainability import trainability

RX_PRODUCT = parse_circuit({"qubits": 2, "layer": [{"gate": "rx"}]})


def exact_product_variance(cost: str, n: int) -> float:
    # RX on every qubit from |0...0> (Cerezo et al., Nat. Commun. 12, 1791, 2021, the
    # worked example of their Fig. 2 / eqs. for the product ansatz):
    # global cost: Var = (1/8)(3/8)^(n-1); local cost: Var = 1/(8 n^2)
    return (1 / 8) * (3 / 8) ** (n - 1) if cost == "global" else 1 / (8 * n**2)


@pytest.mark.parametrize("cost,expected", [("global", True), ("local", False)])
def test_rx_product_matches_cerezo_and_verdict(cost, expected):
    tr = trainability(RX_PRODUCT, cost=cost, scan=list(range(2, 11)), samples=2000, seed=3)
    inside = 0
    for p in tr.points:
        exact = exact_product_variance(cost, p.qubits)
        # each estimate within 3.3 standard errors (99.9%, normal approximation)
        assert abs(p.variance - exact) <= 3.3 * p.standard_error, (p.qubits, p.variance, exact)
        inside += p.interval[0] <= exact <= p.interval[1]
    # 95% intervals: P(6 or fewer of 9 cover) = 8e-4 for independent points (binomial tail)
    assert inside >= 7
    assert tr.barren_plateau is expected, tr.reason
    if cost == "global":
        # the exact decay is ln(8/3) = 0.981 nats per qubit
        fit = tr.fit["exponential"]
        assert abs(-fit.slope - math.log(8 / 3)) <= 3 * fit.slope_stderr
    else:
        fit = tr.fit["power"]
        assert abs(fit.slope + 2) <= 3 * fit.slope_stderr


def test_deep_ring_with_global_cost_is_a_barren_plateau():
    # ry on all + cz ring with layers = n, global cost: exponential decay (Cerezo et al. 2021;
    # McClean et al., Nat. Commun. 9, 4812, 2018)
    ring = parse_circuit({"qubits": 2, "layer": [{"gate": "ry"}, {"gate": "cz", "on": "ring"}]})
    tr = trainability(ring, cost="global", scan=[2, 4, 6, 8], scan_layers="n", samples=200, seed=1)
    assert tr.barren_plateau is True, tr.reason
    assert tr.layers_rule == "layers = n"
    assert [p.layers for p in tr.points] == [2, 4, 6, 8]


def test_variance_settles_with_depth():
    # at fixed n the variance against layers approaches a plateau once the circuit is deep
    # (McClean et al. 2018, Fig. 3): the last two depths agree within their intervals
    ring = parse_circuit({"qubits": 4, "layer": [{"gate": "ry"}, {"gate": "cz", "on": "ring"}]})
    tr = trainability(ring, cost="zz", layer_scan=[1, 2, 4, 8, 16, 24], samples=400, seed=2)
    a, b = tr.layer_points[-2], tr.layer_points[-1]
    assert abs(a.variance - b.variance) <= 2 * math.hypot(a.standard_error, b.standard_error)


def test_no_verdict_on_too_few_qubit_counts():
    tr = trainability(RX_PRODUCT, cost="global", scan=[2, 3, 4], samples=100)
    assert tr.barren_plateau is None
    assert "at least 4 counts" in tr.reason
    tr = trainability(RX_PRODUCT, cost="global", scan=[2, 3, 4, 5], samples=100)
    assert tr.barren_plateau is None and "largest n of at least 6" in tr.reason


def _points(values, se_rel=0.05):
    return [
        VariancePoint(
            qubits=n,
            layers=1,
            parameters=n,
            samples=200,
            variance=v,
            interval=(v, v),
            standard_error=se_rel * v,
            largest=v,
            smallest=v,
            mean_cost=0.0,
            top_sample_share=0.01,
            flat_parameters=[],
        )
        for n, v in values
    ]


def test_verdict_rules_on_constructed_points():
    flat = _points([(n, 0.01) for n in range(2, 10)])
    bp, reason = verdict(flat, fit_decay(flat))
    assert bp is False and "does not fall significantly" in reason
    expo = _points([(n, 0.5 * 0.4**n) for n in range(2, 10)])
    bp, reason = verdict(expo, fit_decay(expo))
    assert bp is True and "exponential decay favoured" in reason
    power = _points([(n, 0.5 * n**-2.0) for n in range(2, 12)])
    bp, reason = verdict(power, fit_decay(power))
    assert bp is False and "power-law decay favoured" in reason
    noisy = _points([(n, 0.5 * n**-2.0) for n in range(4, 8)], se_rel=0.5)
    bp, reason = verdict(noisy, fit_decay(noisy))
    assert bp is None and "too noisy" in reason
    close = _points([(n, 0.5 * n**-6.0) for n in range(4, 8)], se_rel=0.2)
    bp, reason = verdict(close, fit_decay(close))
    assert bp is None and "equally good" in reason


def test_summary_statistics():
    rng = np.random.default_rng(0)
    g = rng.normal(0.0, [1.0, 2.0, 3.0], size=(20000, 3))
    p = summarize_gradients(3, 1, np.zeros(20000), g)
    assert p.variance == pytest.approx((1 + 4 + 9) / 3, rel=0.03)
    assert p.largest == pytest.approx(9, rel=0.03) and p.smallest == pytest.approx(1, rel=0.03)
    assert p.interval[0] < p.variance < p.interval[1]


def test_pauli_sum_cost_cannot_scan():
    from haarline import OptionError

    with pytest.raises(OptionError, match="fixed to its qubit count"):
        trainability(RX_PRODUCT, cost=[[1.0, "ZZ"]], scan=[2, 3])


def test_scan_point_errors_name_the_size_and_the_scan():
    from haarline import CircuitError

    chain = parse_circuit({"qubits": 3, "layer": [{"gate": "ry"}, {"gate": "cz", "on": "chain"}]})
    with pytest.raises(CircuitError) as info:
        trainability(chain, scan=[1, 3], samples=4)
    (problem,) = info.value.problems
    assert problem.path == "layer[1].on"
    assert problem.message == (
        "at 1 qubits, 1 layers (trainability scan): pattern 'chain' needs at least 2 qubits; "
        "the circuit has 1"
    )


def test_a_scan_below_the_listed_qubits_says_the_description_cannot_be_resized():
    from haarline import CircuitError

    fixed = parse_circuit({"qubits": 3, "layer": [{"gate": "ry", "on": [2]}]})
    with pytest.raises(CircuitError) as info:
        trainability(fixed, scan=[2, 3], samples=4)
    (problem,) = info.value.problems
    assert problem.path == "layer[0].on"
    assert problem.message == (
        "at 2 qubits (trainability scan): this step lists qubit 2, so the description cannot "
        "be re-sized below 3 qubits (it is written for 3); scan it at 3 qubits (--scan 3), or "
        "give this step a placement pattern instead of listed qubits"
    )


def test_shift_method_gives_the_same_report_numbers():
    # the parameter-shift rules are exact for these gates (Anselmetti et al. 2021), so the
    # scan agrees with adjoint differentiation to rounding
    ring = parse_circuit({"qubits": 3, "layer": [{"gate": "ry"}, {"gate": "crz", "on": "ring"}]})
    a = trainability(ring, cost="local", scan=[2, 3], samples=30, seed=4)
    b = trainability(ring, cost="local", scan=[2, 3], samples=30, seed=4, method="shift")
    for pa, pb in zip(a.points, b.points, strict=True):
        assert pa.variance == pytest.approx(pb.variance, rel=1e-9)


def test_parameters_outside_the_light_cone_are_flat_and_named():
    # zz cost (Z on qubits 0 and 1) after rx, rz on every qubit and no entangler: rx on
    # qubits 2, 3 and every rz commute with or are far from the cost, so their gradients are
    # exactly 0 (the light-cone argument of Cerezo et al., Nat. Commun. 12, 1791, 2021)
    report = haarline.analyze(
        haarline.load_reference("sim2019-01"),
        haarline.AnalysisOptions(metrics=["trainability"], cost="zz", scan=[4], grad_samples=40),
    )
    (point,) = report["trainability"]["points"]
    assert point["flat_parameters"] == [2, 3, 4, 5, 6, 7] and point["smallest"] == 0.0
    assert point["largest"] > 0.01
    caution = next(c for c in report["cautions"] if "light cone" in c)
    assert "θ2 (layer 1, layer[0]: rx on qubit 2)" in caution
