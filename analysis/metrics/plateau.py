"""The barren-plateau verdict: fits of the gradient variance against qubit count, and the rule.

A barren plateau is a variance that decays exponentially with the qubit count (McClean
et al., Nat. Commun. 9, 4812, 2018; Cerezo et al., Nat. Commun. 12, 1791, 2021).
:func:`fit_decay` fits ``ln Var`` against ``n`` (exponential) and against ``ln n``
(power law) by weighted least squares and :func:`verdict` applies the rule documented
there to the scan points of :mod:`haarline.metrics.trainability`.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import asdict, dataclass
from typing import Any, Protocol

import numpy as np
from numpy.typing import NDArray

__all__ = [
    "DECISIVE_AIC",
    "FLAT_DECAY",
    "MIN_FIT_POINTS",
    "MIN_FIT_QUBITS",
    "Fit",
    "ScanPoint",
    "Wording",
    "fit_decay",
    "verdict",
]

MIN_FIT_POINTS = 4
"""Fewest qubit counts for a verdict."""
MIN_FIT_QUBITS = 6
"""Smallest largest-qubit-count for a verdict."""
DECISIVE_AIC = 2.0
"""AIC difference above which one model is called favoured (Burnham & Anderson, 2002)."""
FLAT_DECAY = 0.25
"""Decay per qubit (nats) below which a non-significant decay is called flat."""


class ScanPoint(Protocol):
    """A point of a scan over qubit counts: a variance estimate and its standard error."""

    @property
    def qubits(self) -> int:
        """The qubit count of the point."""
        ...

    @property
    def variance(self) -> float:
        """The variance estimate."""
        ...

    @property
    def standard_error(self) -> float:
        """Its standard error."""
        ...


@dataclass(frozen=True)
class Wording:
    """How a verdict names what it decides (the rule is the same for every scan)."""

    quantity: str = "gradient variance"
    positive: str = "barren plateau"
    negative: str = "not a barren plateau"
    more: str = "--grad-samples"


@dataclass(frozen=True, kw_only=True)
class Fit:
    """Weighted least squares of ``ln Var = intercept + slope · x``."""

    model: str
    slope: float
    slope_stderr: float
    intercept: float
    chi2: float
    aic: float

    def to_dict(self) -> dict[str, Any]:
        """Return the report object."""
        return asdict(self)


def _wls(
    x: NDArray[np.float64], y: NDArray[np.float64], sigma: NDArray[np.float64], model: str
) -> Fit:
    w = 1.0 / sigma**2
    a = np.stack([np.ones_like(x), x], axis=1)
    cov = np.linalg.inv(a.T @ (a * w[:, None]))
    beta = cov @ (a.T @ (w * y))
    resid = y - a @ beta
    chi2 = float(np.sum(w * resid**2))
    dof = len(x) - 2
    scale = max(1.0, chi2 / dof) if dof > 0 else 1.0  # inflate when the model misfits
    return Fit(
        model=model,
        slope=float(beta[1]),
        slope_stderr=float(math.sqrt(cov[1, 1] * scale)),
        intercept=float(beta[0]),
        chi2=chi2,
        aic=chi2 + 2 * 2,
    )


def fit_decay(points: Sequence[ScanPoint]) -> dict[str, Fit] | None:
    """Fit ``ln Var`` against ``n`` and against ``ln n``; ``None`` if fewer than 3 usable points.

    Each point is weighted by ``1/σ²`` with ``σ = se/Var``, the standard error of ``ln Var``.
    """
    use = [p for p in points if p.variance > 0 and p.standard_error > 0]
    if len(use) < 3:
        return None
    n = np.array([p.qubits for p in use], dtype=float)
    y = np.log([p.variance for p in use])
    sigma = np.array([p.standard_error / p.variance for p in use])
    return {
        "exponential": _wls(n, y, sigma, "exponential"),
        "power": _wls(np.log(n), y, sigma, "power"),
    }


def verdict(
    points: Sequence[ScanPoint], fits: dict[str, Fit] | None, wording: Wording | None = None
) -> tuple[bool | None, str]:
    """The barren-plateau verdict and the one-line reason for it.

    ``wording`` names the quantity and the verdict for other scans (the kernel's
    concentration uses the same rule).

    Rule (also in the README):

    1. Fewer than 4 qubit counts, or a largest qubit count below 6: ``None``.
    2. A zero variance anywhere: ``None`` (the cost ignores the parameters there).
    3. Decay per qubit ``d = -slope`` of the exponential fit, standard error ``se``. If
       ``d - 2 se ≤ 0`` (no significant decrease with n): ``False`` when ``d + 2 se`` is
       below 0.25 nats per qubit (the variance is flat), else ``None`` (too noisy to tell).
    4. If the exponential fit has the lower AIC by more than 2: ``True``.
    5. If the power-law fit has the lower AIC by more than 2: ``False`` (polynomial decay).
    6. Otherwise: ``None`` (the data do not tell the two apart).
    """
    w = wording or Wording()
    qs = sorted({p.qubits for p in points})
    if len(qs) < MIN_FIT_POINTS or qs[-1] < MIN_FIT_QUBITS:
        return None, (
            f"no verdict: the scan has {len(qs)} qubit count(s) up to n = {qs[-1] if qs else 0}; "
            f"a verdict needs at least {MIN_FIT_POINTS} counts and a largest n of at least "
            f"{MIN_FIT_QUBITS}"
        )
    zero = [p.qubits for p in points if p.variance <= 0]
    if zero or fits is None:
        return None, f"no verdict: the {w.quantity} is exactly zero at n = {zero}"
    e, pw = fits["exponential"], fits["power"]
    d, se = -e.slope, e.slope_stderr
    span = f"n = {qs[0]}..{qs[-1]}"
    rate = f"{d:.3g} ± {se:.2g} nats per qubit (x{math.exp(-d):.3g} per qubit)"
    if d - 2 * se <= 0:
        if d + 2 * se <= FLAT_DECAY:
            return False, (
                f"{w.negative}: the variance does not fall significantly with n over "
                f"{span} (exponential decay {rate})"
            )
        return None, (
            f"no verdict: the variances are too noisy to tell a decay from none over {span} "
            f"(exponential decay {rate}); draw more {w.more}"
        )
    delta = pw.aic - e.aic
    if delta > DECISIVE_AIC:
        return True, (
            f"{w.positive}: exponential decay favoured over a power law (AIC "
            f"{e.aic:.3g} vs {pw.aic:.3g}) over {span}; the variance falls by {rate}"
        )
    if delta < -DECISIVE_AIC:
        return False, (
            f"{w.negative}: power-law decay favoured (AIC {pw.aic:.3g} vs "
            f"{e.aic:.3g}), Var ~ n^{pw.slope:.3g} ± {pw.slope_stderr:.2g} over {span}"
        )
    return None, (
        f"no verdict: exponential (AIC {e.aic:.3g}) and power-law (AIC {pw.aic:.3g}) fits "
        f"are equally good over {span}; decay {rate}. Scan more qubit counts."
    )
