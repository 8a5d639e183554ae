"""Expressibility against distributions known in closed form.

Every expected value below is derived in the test from a published or textbook law,
never copied from our own output.
"""

import math

import numpy as np
import pytest
from haarline import (
    divergence_from_haar,
    expand,
    expressibility,
    fidelities,
    haar_bin_log_masses,
    parse_circuit,
    plugin_bias,
)
from haarline.metrics.expressibility import kl_from_counts
from scipy import stats

K = 75
EDGES = np.linspace(0.0, 1.0, K + 1)


def binned_kl(p: np.ndarray, qubits: int) -> float:
    """Exact KL of bin masses p against the Haar bin masses."""
    log_q = haar_bin_log_masses(qubits, len(p))
    safe = np.where(p > 0, p, 1.0)
    return float(np.sum(np.where(p > 0, p * (np.log(safe) - log_q), 0.0)))


def program(desc: dict):
    return expand(parse_circuit(desc))


# --- Haar bin masses --------------------------------------------------------------------


@pytest.mark.parametrize("n", [1, 2, 3, 4, 8, 16, 24])
def test_haar_masses_sum_to_one_and_stay_finite(n):
    # Haar fidelity CDF 1 - (1-F)^(N-1) (Sim et al., Adv. Quantum Technol. 2019, eq. for P_Haar)
    log_q = haar_bin_log_masses(n, K)
    assert np.isfinite(log_q).all()
    assert math.isclose(np.exp(log_q).sum(), 1.0, rel_tol=1e-12)


@pytest.mark.parametrize("n", [1, 2, 3])
def test_haar_masses_equal_plain_difference_where_it_does_not_underflow(n):
    big_n = 2**n
    plain = (1 - EDGES[:-1]) ** (big_n - 1) - (1 - EDGES[1:]) ** (big_n - 1)
    np.testing.assert_allclose(np.exp(haar_bin_log_masses(n, K)), plain, rtol=1e-10, atol=1e-300)


def test_log_masses_stay_finite_where_the_plain_difference_underflows():
    # last bin at 6 qubits: (1/75)^63 ~ 1e-118 survives, at 8 qubits (1/75)^255 underflows
    plain_last = (1 - EDGES[-2]) ** (2**8 - 1)
    assert plain_last == 0.0
    log_last = haar_bin_log_masses(8, K)[-1]
    assert math.isclose(log_last, (2**8 - 1) * math.log(1 / K), rel_tol=1e-12)


# --- closed-form checks of the estimator ------------------------------------------------


@pytest.mark.parametrize("n", [1, 2, 3, 4, 5])
def test_fixed_circuit_kl_is_n_minus_1_ln_k(n):
    # Only fixed gates: every F = 1, all mass in the last bin, whose Haar mass is
    # (1/K)^(N-1); so KL = (N-1) ln K exactly (Sim et al. 2019, Haar density).
    p = program({"qubits": n, "layer": [{"gate": "h"}, {"gate": "rz", "angle": 0.3}]})
    e = expressibility(p, pairs=300, bins=K)
    assert math.isclose(e.kl, (2**n - 1) * math.log(K), rel_tol=1e-9)
    assert e.histogram[-1] == 1.0


def _arcsine_masses() -> np.ndarray:
    # H then RZ(theta) on one qubit: F = cos^2((theta - phi)/2) with theta - phi uniform
    # mod 2 pi, i.e. the arcsine law with CDF (2/pi) asin(sqrt(F)) (textbook transformation
    # of a uniform angle).
    return np.diff(2 / np.pi * np.arcsin(np.sqrt(EDGES)))


ARCSINE = {"qubits": 1, "prepare": [{"gate": "h"}], "layer": [{"gate": "rz"}]}


def test_one_qubit_arcsine_law_inside_interval():
    p = _arcsine_masses()
    exact = float(np.sum(p * np.log(K * p)))  # Haar on one qubit is uniform: q_j = 1/K
    assert math.isclose(exact, binned_kl(p, 1), rel_tol=1e-12)
    e = expressibility(program(ARCSINE), pairs=5000, bins=K, seed=1)
    assert e.interval[0] <= exact <= e.interval[1]


def test_one_qubit_arcsine_fidelities_pass_kolmogorov_smirnov():
    f = fidelities(program(ARCSINE), pairs=5000, seed=2)
    result = stats.kstest(f, lambda x: 2 / np.pi * np.arcsin(np.sqrt(np.clip(x, 0, 1))))
    assert result.pvalue > 1e-3


def test_interval_coverage_over_many_seeds():
    # The 95% interval must cover the exact arcsine KL in about 95% of independent runs.
    # 40 runs: P(32 or fewer covered | coverage 0.95) = 7e-4 (binomial tail, checked below).
    p = _arcsine_masses()
    exact = float(np.sum(p * np.log(K * p)))
    prog = program(ARCSINE)
    covered = 0
    for seed in range(100, 140):
        e = expressibility(prog, pairs=2000, bins=K, seed=seed)
        covered += e.interval[0] <= exact <= e.interval[1]
    assert stats.binom.cdf(32, 40, 0.95) < 1e-3
    assert covered >= 33


def test_haar_random_states_from_scipy():
    # scipy.stats.unitary_group draws Haar unitaries (Mezzadri, Notices AMS 54, 2007);
    # their first columns are Haar-random states.
    n, m = 3, 5000
    big_n = 2**n
    u = stats.unitary_group.rvs(big_n, size=2 * m, random_state=np.random.default_rng(11))
    psi = u[:, :, 0]
    f = np.abs(np.einsum("ij,ij->i", psi[:m].conj(), psi[m:])) ** 2
    e = divergence_from_haar(f, n, bins=K, seed=3)
    # E[F^2] = 2/(N(N+1)) for Haar (Holmes et al., PRX Quantum 3, 010313, 2022)
    lo, hi = e.second_moment_interval
    assert lo <= 2 / (big_n * (big_n + 1)) <= hi
    # KL of an exactly Haar sample is pure plug-in bias; its spread from multinomial
    # sampling of the exact Haar masses (numpy multinomial, independent of our code path)
    q = np.exp(haar_bin_log_masses(n, K))
    sims = np.random.default_rng(4).multinomial(m, q / q.sum(), size=4000)
    kls = kl_from_counts(sims, np.log(q))
    assert abs(kls.mean() - e.bias) < 4 * kls.std() / np.sqrt(len(kls))
    assert abs(e.kl - e.bias) < 4 * kls.std()
    assert e.interval[0] == 0.0  # consistent with Haar


@pytest.mark.parametrize("m", [200, 5000])
def test_plugin_bias_matches_monte_carlo(m):
    n = 4
    q = np.exp(haar_bin_log_masses(n, K))
    sims = np.random.default_rng(m).multinomial(m, q / q.sum(), size=6000)
    kls = kl_from_counts(sims, np.log(q))
    se = kls.std() / np.sqrt(len(kls))
    assert abs(plugin_bias(n, K, m) - kls.mean()) < 4 * se


def test_plugin_bias_approaches_miller_madow():
    # E[KL] ~ (K-1)/(2M) for well-filled bins (Miller 1955; common practice), one qubit
    assert math.isclose(plugin_bias(1, 20, 200_000), 19 / 400_000, rel_tol=1e-2)


def test_real_amplitude_circuit_reaches_real_haar_law():
    # ry layers with a fixed cx ring keep amplitudes real; deep enough, the state is
    # uniform on the real unit sphere, where F = cos^2 of the angle between two random
    # unit vectors in R^N ~ Beta(1/2, (N-1)/2) (textbook: Muirhead, Aspects of
    # Multivariate Statistical Theory, 1982, Thm 1.5.7).
    n, big_n = 4, 16
    prog = program(
        {"qubits": n, "layers": 8, "layer": [{"gate": "ry"}, {"gate": "cx", "on": "ring"}]}
    )
    p = np.diff(stats.beta.cdf(EDGES, 0.5, (big_n - 1) / 2))
    e = expressibility(prog, pairs=5000, bins=K, seed=5)
    assert e.interval[0] <= binned_kl(p, n) <= e.interval[1]
    f = fidelities(prog, pairs=5000, seed=6)
    assert stats.kstest(f, stats.beta(0.5, (big_n - 1) / 2).cdf).pvalue > 1e-3


def _product_uniform_cdf(x: np.ndarray, n: int) -> np.ndarray:
    # CDF of a product of n independent U(0,1): x * sum_{k<n} (-ln x)^k / k!
    # (textbook; e.g. Feller, An Introduction to Probability Theory, vol. 2)
    x = np.asarray(x, dtype=float)
    out = np.zeros_like(x)
    pos = x > 0
    lx = -np.log(x[pos])
    out[pos] = x[pos] * sum(lx**k / math.factorial(k) for k in range(n))
    return out


def test_one_qubit_rotations_reach_product_of_one_qubit_haar_states():
    # Alternating rx and rz on each qubit: each qubit becomes a one-qubit Haar state, whose
    # pair fidelity is U(0,1) (the Haar law for N = 2); the circuit's F is the product.
    n = 4
    prog = program({"qubits": n, "layers": 6, "layer": [{"gate": "rx"}, {"gate": "rz"}]})
    p = np.diff(_product_uniform_cdf(EDGES, n))
    e = expressibility(prog, pairs=5000, bins=K, seed=7)
    assert e.interval[0] <= binned_kl(p, n) <= e.interval[1]
    f = fidelities(prog, pairs=5000, seed=8)
    assert stats.kstest(f, lambda x: _product_uniform_cdf(x, n)).pvalue > 1e-3


def test_second_moment_of_fixed_circuit_is_one():
    e = expressibility(program({"qubits": 2, "layer": [{"gate": "h"}]}), pairs=50)
    assert math.isclose(e.second_moment, 1.0, rel_tol=1e-12)


def test_plugin_bias_when_one_bin_holds_all_the_haar_mass():
    # at 12 qubits and 2 bins the first bin's Haar mass rounds to exactly 1.0; such a bin
    # contributes no bias and must not warn (pytest runs with warnings as errors)
    assert plugin_bias(12, 2, 100) == pytest.approx(0.0, abs=1e-12)
