"""Student-t confidence intervals: the one place the metrics take their t quantiles from.

Two shapes of interval are used in the reports:

* :func:`mean_interval`, the textbook interval ``x̄ ± t · s/√n`` for the mean of a sample
  (Meyer-Wallach mean, the second moment of the fidelities);
* :func:`log_symmetric_interval`, ``v · exp(±t · se/v)`` for a positive estimate ``v`` with
  standard error ``se`` (the gradient and loss variances), symmetric in ``ln v`` so it stays
  positive on a log axis; :func:`variance_standard_error` gives that ``se``.

The t quantiles come from :mod:`haarline.metrics._special` (Newton's method on the
t distribution function; it agrees with ``scipy.special.stdtrit`` to about 1e-14
relative): importing scipy would cost a small ``haarline analyze`` half its run time.
"""

from __future__ import annotations

import math

import numpy as np
from haarline.metrics._special import student_t_quantile
from numpy.typing import NDArray

__all__ = ["log_symmetric_interval", "mean_interval", "t_quantile", "variance_standard_error"]


def t_quantile(dof: int, confidence: float = 0.95) -> float:
    """Two-sided Student t quantile ``t`` with ``P(|T| ≤ t) = confidence``.

    Parameters
    ----------
    dof : int
        Degrees of freedom, at least 1.
    confidence : float
        Coverage in (0, 1).

    Returns
    -------
    float
        The ``(1 + confidence)/2`` quantile of Student's t with ``dof`` degrees of freedom.

    Examples
    --------
    >>> round(t_quantile(10), 4)
    2.2281
    """
    return student_t_quantile(int(dof), confidence)


def mean_interval(values: NDArray[np.float64], confidence: float = 0.95) -> tuple[float, float]:
    """Student t interval for the mean of a sample, ``x̄ ± t · s/√n``.

    Parameters
    ----------
    values : ndarray of float, shape (n,)
        The sample; ``s`` is its unbiased standard deviation.
    confidence : float
        Coverage in (0, 1).

    Returns
    -------
    (float, float)
        Lower and upper end; ``(x̄, x̄)`` when ``n < 2`` (no spread can be estimated).

    Examples
    --------
    >>> [round(end, 4) for end in mean_interval(np.array([1.0, 2.0, 3.0]))]
    [-0.4841, 4.4841]
    """
    values = np.asarray(values, dtype=float)
    n = len(values)
    mean = float(values.mean())
    if n < 2:
        return (mean, mean)
    half = float(t_quantile(n - 1, confidence) * values.std(ddof=1) / np.sqrt(n))
    return (mean - half, mean + half)


def log_symmetric_interval(
    value: float, standard_error: float, dof: int, confidence: float = 0.95
) -> tuple[float, float]:
    """Interval ``v · exp(±t · se/v)`` for a positive estimate ``v``, symmetric in ``ln v``.

    Parameters
    ----------
    value : float
        The estimate ``v``; ``(0, 0)`` is returned when it is not positive.
    standard_error : float
        Its standard error ``se``.
    dof : int
        Degrees of freedom of the t quantile (sample size minus one).
    confidence : float
        Coverage in (0, 1).

    Returns
    -------
    (float, float)
        Lower and upper end, both positive when ``v > 0``.

    Notes
    -----
    The delta method gives ``se(ln v) ≈ se / v``; the interval is ``exp`` of the t interval
    of ``ln v`` (common practice for variances drawn on a log axis).

    Examples
    --------
    >>> lo, hi = log_symmetric_interval(2.0, 0.1, 99)
    >>> round(lo * hi, 12)
    4.0
    """
    if value <= 0:
        return (0.0, 0.0)
    width = t_quantile(dof, confidence) * standard_error / value
    return (value * math.exp(-width), value * math.exp(width))


def variance_standard_error(squares: NDArray[np.float64]) -> float:
    """Standard error of a sample variance, from the squared deviations of its samples.

    Parameters
    ----------
    squares : ndarray of float, shape (S,)
        ``y_s``: sample ``s``'s squared deviation from the sample mean, ``(x_s - x̄)²``, or
        the mean of such squares over several coordinates (``(1/P) Σ_k (g_sk - ḡ_k)²`` for
        the ``P`` gradient components). At least two samples.

    Returns
    -------
    float
        ``se = S/(S-1) · sd(y)/√S``, ``sd`` with ``S - 1`` in the denominator: the standard
        error of the unbiased variance ``v = S/(S-1) · ȳ`` (the mean over coordinates of
        their unbiased sample variances).

    Notes
    -----
    For one coordinate, ``sd(y)² = S/(S-1) · (m4 - m2²)`` with ``m_k`` the sample central
    moments, so ``se² = (S/(S-1))³ (m4 - m2²)/S``: the plug-in estimate of the textbook
    variance of the sample variance, ``Var(s²) = (μ4 - σ⁴ (S-3)/(S-1))/S`` [1]_, to first
    order in ``1/S`` (it drops the ``2σ⁴/(S(S-1))`` term and uses ``m4``, ``m2`` for ``μ4``,
    ``σ²``). For a mean over coordinates, ``ȳ`` is a mean of ``S`` independent terms, so
    ``sd(y)/√S`` is its standard error whatever the correlation between coordinates (the
    centring on the sample mean, which couples the terms, is neglected at the same order;
    common practice). Cost ``O(S)``.

    References
    ----------
    .. [1] G. Casella, R. L. Berger, Statistical Inference, 2nd ed., Duxbury (2002),
       Exercise 5.8(b).

    Examples
    --------
    >>> x = np.array([1.0, 2.0, 4.0, 7.0])
    >>> round(variance_standard_error((x - x.mean()) ** 2), 6)
    3.527668
    """
    squares = np.asarray(squares, dtype=float)
    s = len(squares)
    return float(s / (s - 1) * squares.std(ddof=1) / math.sqrt(s))
