"""The Fourier spectrum of a model whose gates encode its inputs.

A circuit whose gate angles are ``s · x_f`` computes a model ``f(x) = ⟨ψ(x, θ)|O|ψ(x, θ)⟩``
that is a finite Fourier series in each feature ``x_f``: its frequencies are the sums,
over the gates that encode ``x_f``, of differences of eigenvalues of their generators
(Schuld, Sweke & Meyer, "Effect of data encoding on the expressive power of variational
quantum machine-learning models", Phys. Rev. A 103, 032430, 2021, Sec. III). For a gate
``exp(-i s x G/2)`` with a Pauli string ``G`` the eigenvalues of ``s G/2`` are ``±s/2``,
so each such gate adds ``{-s, 0, s}``; a controlled rotation (``|1⟩⟨1| ⊗ P``) has
``{0, ±s/2}`` and adds ``{0, ±s/2, ±s}``. One qubit re-uploaded ``L`` times has the
frequencies ``0..L``; scales ``3^q`` on qubit ``q`` give every integer up to
``(3^n - 1)/2``.

Which of those frequencies a model really uses depends on θ: :func:`spectrum` samples θ
(and the other features) and computes each Fourier coefficient ``c_ω`` exactly, by
evaluating ``f`` on ``2K + 1`` equally spaced points of one period and taking a discrete
Fourier transform (exact for a trigonometric polynomial of degree ``K``), and reports the
mean of ``|c_ω|²`` over the samples. The weight left at frequencies outside the spectrum
is reported too: it is zero up to rounding, a built-in check of the spectrum.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import numpy as np
from haarline.circuit.gates import lookup
from haarline.circuit.program import Program
from haarline.engine.context import Context
from haarline.engine.draws import Draws
from haarline.engine.sampling import Stream, draw_angles
from haarline.engine.statevector import compile_program, rows_per_chunk
from haarline.metrics.gradients import cost_values
from haarline.metrics.observables import make_observable
from numpy.typing import NDArray

__all__ = [
    "MAX_FREQUENCIES",
    "MAX_GRID",
    "FeatureSpectrum",
    "feature_frequencies",
    "spectrum",
]

MAX_FREQUENCIES = 10_000
"""Most distinct frequencies listed for one feature."""

MAX_GRID = 4_097
"""Most grid points per sample for the coefficients (a degree of up to 2048 units)."""

_DIGITS = 9  # frequencies are rounded to 1e-9 to merge equal sums of floats


@dataclass(frozen=True, kw_only=True)
class FeatureSpectrum:
    """The spectrum of one input feature and the sampled weight of each frequency."""

    input: int
    frequencies: list[float] | None
    max_frequency: float | None
    count: int | None
    gates: int
    weights: list[float] | None
    outside_weight: float | None
    samples: int
    note: str | None

    def to_dict(self) -> dict[str, Any]:
        """Return the report object (plain JSON types)."""
        return {
            "input": self.input,
            "frequencies": self.frequencies,
            "max_frequency": self.max_frequency,
            "count": self.count,
            "gates": self.gates,
            "weights": self.weights,
            "outside_weight": self.outside_weight,
            "samples": self.samples,
            "note": self.note,
        }


def _differences(gate: str, scale: float) -> set[float]:
    spec = lookup(gate)
    s = abs(scale)
    if spec.target is not None:  # controlled rotation: eigenvalues 0, 0, ±s/2
        return {0.0, s / 2, -s / 2, s, -s}
    return {0.0, s, -s}  # G/2 has two eigenvalues one apart (±1/2; 0 and -1 for cphase)


def feature_frequencies(
    program: Program, feature: int
) -> tuple[list[float] | None, int, str | None]:
    """The non-negative frequencies of feature ``feature``, the gates that encode it, a note.

    ``None`` with a note when a product encoding (not linear in the feature) uses it, or
    when the spectrum is too large to list.

    Examples
    --------
    >>> from haarline.circuit.model import parse_circuit
    >>> from haarline.circuit.program import expand
    >>> c = parse_circuit({"qubits": 1, "inputs": 1, "layers": 3,
    ...                    "layer": [{"gate": "rx", "input": 0}, {"gate": "ry"}]})
    >>> feature_frequencies(expand(c), 0)
    ([0.0, 1.0, 2.0, 3.0], 3, None)
    """
    sums = {0.0}
    gates = 0
    for op in program.operations:
        if op.encoding is None:
            continue
        encoding = program.encodings[op.encoding]
        if feature not in encoding.features:
            continue
        gates += 1
        if encoding.product:
            return (
                None,
                gates,
                (
                    f"x_{feature} enters a product encoding (pi - x_a)(pi - x_b), which is not "
                    "linear in the feature: its spectrum is not a set of eigenvalue differences"
                ),
            )
        steps = _differences(op.gate, encoding.scale)
        sums = {round(a + b, _DIGITS) for a in sums for b in steps}
        if len(sums) > 2 * MAX_FREQUENCIES:
            return None, gates, f"more than {MAX_FREQUENCIES} frequencies; not listed"
    return sorted(f for f in sums if f >= 0), gates, None


def _unit(frequencies: list[float]) -> float | None:
    """The largest ``u`` with every frequency an integer multiple of it, if one exists."""
    positive = [f for f in frequencies if f > 0]
    if not positive:
        return None
    fractions = [Fraction(f).limit_denominator(1000) for f in positive]
    if any(
        abs(float(q) - f) > 1e-9 * max(1.0, f) for q, f in zip(fractions, positive, strict=True)
    ):
        return None
    numerator = 0
    denominator = 1
    for q in fractions:
        denominator = denominator * q.denominator // math.gcd(denominator, q.denominator)
    for q in fractions:
        numerator = math.gcd(numerator, q.numerator * (denominator // q.denominator))
    return numerator / denominator


def spectrum(
    program: Program,
    cost: Any = "global",
    *,
    samples: int = 50,
    seed: int = 1,
    draws: Draws | None = None,
    context: Context | None = None,
) -> list[FeatureSpectrum]:
    """The spectrum of every input feature and the mean weight ``|c_ω|²`` of each frequency.

    Parameters
    ----------
    program : Program
        A circuit with inputs.
    cost : str or list
        The observable ``O`` of the model (:func:`~haarline.metrics.observables.make_observable`).
    samples : int
        θ draws (with the other features drawn by ``draws.law``) per feature.
    seed : int
        Seed; sample ``s`` of feature ``f`` uses row ``s`` of stream ``(SPECTRUM, n, L, f)``.
    draws : Draws, optional
        Where the other features come from (its ``law``); θ and the features vary.
    context : Context, optional
        Precision, memory budget and progress.

    Notes
    -----
    Cost per feature with degree ``K`` (in units of the frequencies' common step):
    ``samples · (2K + 1)`` circuit runs.
    """
    context = context or Context()
    law = (draws or Draws()).law
    sampler = Draws(vary="both", law=law)
    observable = make_observable(cost, program.qubits)
    plan = compile_program(program)
    out = []
    for feature in range(program.inputs):
        frequencies, gates, note = feature_frequencies(program, feature)
        weights = outside = None
        unit = _unit(frequencies) if frequencies else None
        if frequencies is not None and len(frequencies) > 1 and unit is None:
            note = "the frequencies share no common step: the coefficients are not sampled"
        if frequencies is not None and unit is not None:
            degree = int(round(frequencies[-1] / unit))
            grid = 2 * degree + 1
            if grid > MAX_GRID:
                note = (
                    f"degree {degree} needs {grid} points per sample; the coefficients are "
                    "not sampled"
                )
            else:
                power = _coefficient_power(
                    program, plan, observable, sampler, feature, unit, grid, samples, seed, context
                )
                on = [int(round(f / unit)) for f in frequencies]
                weights = [float(power[k]) for k in on]
                outside = float(np.delete(power, on).sum()) if len(power) > len(on) else 0.0
        out.append(
            FeatureSpectrum(
                input=feature,
                frequencies=frequencies,
                max_frequency=frequencies[-1] if frequencies else None,
                count=len(frequencies) if frequencies is not None else None,
                gates=gates,
                weights=weights,
                outside_weight=outside,
                samples=samples if weights is not None else 0,
                note=note,
            )
        )
    return out


def _coefficient_power(
    program: Program,
    plan: Any,
    observable: Any,
    sampler: Draws,
    feature: int,
    unit: float,
    grid: int,
    samples: int,
    seed: int,
    context: Context,
) -> NDArray[np.float64]:
    """Mean ``|c_k|²`` for ``k = 0..degree`` (one-sided: ``|c_k|² = |c_{-k}|²``)."""
    stream = (Stream.SPECTRUM, program.qubits, program.layers, feature)
    thetas = draw_angles(seed, stream, 0, samples, program.parameters)
    x = sampler.law.draw(seed, (Stream.INPUTS, *stream), 0, samples, 1, program.inputs)
    points = np.arange(grid) * (2 * np.pi / unit) / grid
    rows = max(1, rows_per_chunk(program.qubits, context.memory_budget, context.dtype))
    values = np.empty((samples, grid))
    for s in range(samples):
        xs = np.repeat(x[s : s + 1], grid, axis=0)
        xs[:, feature] = points
        angles = program.angles(np.repeat(thetas[s : s + 1], grid, axis=0), xs)
        for start in range(0, grid, rows):
            chunk = angles[start : start + rows]
            values[s, start : start + len(chunk)] = cost_values(
                plan, chunk, observable, dtype=context.dtype
            )
        context.report(f"spectrum x_{feature}", s + 1, samples)
    c = np.fft.fft(values, axis=1) / grid
    power = np.abs(c) ** 2
    degree = grid // 2
    return np.asarray(power[:, : degree + 1].mean(axis=0), dtype=float)
