"""Slow, readable reference implementations that the fast spectral code is checked against.

Nothing here is fast or clever on purpose: each function writes the published formula out as
directly as numpy allows, so that a test compares two independent computations.
"""

from __future__ import annotations

import mpmath
import numpy as np


def least_squares_residual(values: np.ndarray, detrend: str) -> np.ndarray:
    """Residual after removing the mean or the least-squares line (numpy.polyfit)."""
    values = np.asarray(values, dtype=float)
    if detrend == "mean":
        return values - values.mean()
    index = np.arange(values.size, dtype=float)
    slope, intercept = np.polyfit(index, values, 1)
    return values - (intercept + slope * index)


def slow_harmonics(values: np.ndarray, detrend: str = "linear", weights=None):
    """Fourier coefficients and harmonic variances by the O(N^2) sums.

    a_k = (2/N) sum_j y_j cos(2 pi k j/N), b_k = (2/N) sum_j y_j sin(2 pi k j/N), with the
    factor 1/N at k = 0 and at k = N/2 (N even); s_k^2 = N/(2(N-1)) (a_k^2 + b_k^2), and
    N/(N-1) a_k^2 at k = 0 and k = N/2. Tapered: y -> w y, a, b / sqrt(mean w^2).
    Returns (a, b, variance) for k = 0..N//2 of the preprocessed series.
    """
    residual = least_squares_residual(values, detrend)
    count = residual.size
    if weights is not None:
        residual = residual * weights
        norm = np.sqrt(np.mean(weights**2))
    else:
        norm = 1.0
    a = np.zeros(count // 2 + 1)
    b = np.zeros(count // 2 + 1)
    variance = np.zeros(count // 2 + 1)
    j = np.arange(count)
    for k in range(count // 2 + 1):
        edge = k == 0 or (count % 2 == 0 and k == count // 2)
        factor = (1.0 if edge else 2.0) / count
        a[k] = factor * np.sum(residual * np.cos(2 * np.pi * k * j / count)) / norm
        b[k] = factor * np.sum(residual * np.sin(2 * np.pi * k * j / count)) / norm
        if edge:
            variance[k] = count / (count - 1) * a[k] ** 2
        else:
            variance[k] = count / (2 * (count - 1)) * (a[k] ** 2 + b[k] ** 2)
    return a, b, variance


def fisher_tail_mpmath(g: float, m: int, digits: int = 80) -> float:
    """Fisher's (1929) exact tail P(g > x), summed term by term in mpmath at ``digits``."""
    with mpmath.workdps(digits):
        x = mpmath.mpf(float(g))
        total = mpmath.mpf(0)
        j = 1
        while j <= m and 1 - j * x > 0:
            total += (-1) ** (j - 1) * mpmath.binomial(m, j) * (1 - j * x) ** (m - 1)
            j += 1
        return float(total)
