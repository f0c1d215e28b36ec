"""Significance of spectral peaks: Fisher's g test (white noise) and an AR(1) red-noise test.

Both tests work on the harmonic variances of :func:`profiles.spectral.harmonic_variances`
(untapered, Fourier wavenumbers) and both run on one series or on many series of the same
length at once (series along the last axis), for along-track windows.

Fisher's g (Fisher 1929). With s_k^2 the variance of harmonic k, the statistic is
g = max_k s_k^2 / sum_k s_k^2 over k = 1..m, m = floor((N - 1)/2): the mean (k = 0) is
removed, and the Nyquist harmonic of even N is left out because it carries one degree of
freedom, not two. Under Gaussian white noise the exact tail probability is

    P(g > x) = sum_{j=1}^{min(m, floor(1/x))} (-1)^(j-1) C(m, j) (1 - j x)^(m-1).

Red noise (Gilman, Fuglister and Mitchell 1963; Torrence and Compo 1998). An AR(1) process
with lag-1 coefficient r has, at harmonic k of N samples, the spectrum relative to white
noise of the same variance

    P_k = (1 - r^2) / (1 + r^2 - 2 r cos(2 pi k / N)),

and a harmonic variance is distributed as its expectation times chi2_nu / nu with nu = 2
(nu = 1 at the Nyquist harmonic of even N). Details: docs/methods-spectral.md.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field
from typing import Literal

import numpy as np

from ..errors import InputError
from .harmonics import DetrendedHarmonics, detrended_harmonics, harmonic_variances
from .preprocess import (
    Detrend,
    as_values,
    check_option,
    check_probability,
    check_spacing,
    remove_trend,
)

__all__ = [
    "FisherTest",
    "Lag1Estimator",
    "RedNoiseTest",
    "ar1_background",
    "fisher_critical_value",
    "fisher_critical_value_approx",
    "fisher_from_variances",
    "fisher_m",
    "fisher_p_value",
    "fisher_test",
    "lag1_autocorrelation",
    "lag1_from_harmonics",
    "red_noise_at",
    "red_noise_from_variances",
    "red_noise_test",
]

#: Estimator of the AR(1) coefficient: ``"sample"`` is the lag-1 autocorrelation of the
#: detrended series; ``"corrected"`` adds the first-order bias correction (N r + 1)/(N - 3)
#: for a series whose mean was estimated (Marriott and Pope 1954, from memory).
Lag1Estimator = Literal["sample", "corrected"]

#: Largest |r| used for the AR(1) background; closer to 1 the background is singular.
_LAG1_LIMIT = 0.999

# Above this size of the largest term of Fisher's alternating series, float64 loses more
# than about 1e-13 of the result to cancellation; such p-values (all above about 0.998) are
# summed again in decimal arithmetic.
_LARGEST_FLOAT_TERM = 1.0e2


# --------------------------------------------------------------------------------------------
# Fisher's g: exact distribution
# --------------------------------------------------------------------------------------------


def fisher_m(n: int) -> int:
    """Number of harmonics in Fisher's test for N samples: m = floor((N - 1)/2).

    That is (N - 1)/2 for odd N and N/2 - 1 for even N: k = 0 (the mean) and the Nyquist
    harmonic of even N are excluded (Fisher 1929; the convention of Percival and Walden
    1993 section 10.9 and Brockwell and Davis 1991 section 10.2, from memory).
    """
    return (int(n) - 1) // 2


def _check_m(m: object) -> int:
    if isinstance(m, bool) or not isinstance(m, int | np.integer) or m < 2:
        raise InputError(f"m: {m!r} must be an integer >= 2 (N >= 5 samples)")
    return int(m)


def _check_m_array(m: object) -> np.ndarray:
    """``m`` as an array of integers >= 2 (one number, or one per statistic)."""
    if np.ndim(m) == 0:
        return np.asarray(_check_m(m))
    counts = np.asarray(m)
    if counts.dtype == bool or not np.issubdtype(counts.dtype, np.integer) or np.any(counts < 2):
        raise InputError("m: numbers of harmonics must be integers >= 2 (N >= 5 samples)")
    return counts


def _decimal_tail(x: float, m: int, digits: int) -> float:
    """Fisher's series for one x, in decimal arithmetic of ``digits`` significant digits.

    The terms are unimodal in j (log C(m, j) and (m - 1) log(1 - j x) are both concave), so
    once past the largest term the sum stops when a term falls below 10^-digits of it.
    """
    from decimal import Decimal, localcontext

    with localcontext() as context:
        context.prec = digits
        exact_x = Decimal(x)
        total = Decimal(0)
        largest = Decimal(0)
        previous = Decimal(0)
        cutoff = Decimal(10) ** -digits
        for j in range(1, m + 1):
            base = 1 - j * exact_x
            if base <= 0:
                break
            term = math.comb(m, j) * base ** (m - 1)
            total += term if j % 2 else -term
            largest = max(largest, term)
            if term < previous and term < largest * cutoff:
                break
            previous = term
        return float(total)


def fisher_p_value(g: object, *, m: object) -> np.ndarray | float:
    """Exact probability that Fisher's g exceeds ``g`` under Gaussian white noise.

    P(g > x) = sum_{j=1}^{min(m, floor(1/x))} (-1)^(j-1) C(m, j) (1 - j x)^(m-1)
    (Fisher 1929; also Fuller 1996, p. 363).

    Parameters
    ----------
    g : float or array_like
        Observed statistic(s), 0 <= g <= 1.
    m : int or array_like of int
        Number of harmonics in the test, m >= 2 (see :func:`fisher_m`): one for all ``g``, or
        one per statistic (broadcast against ``g``), e.g. for windows of several lengths.

    Returns
    -------
    float or ndarray
        p-values, shaped like ``g`` (broadcast against ``m``).

    Notes
    -----
    Computed stably, vectorised over ``g``:

    - the terms are formed in log space, log C(m, j) + (m - 1) log1p(-j x), with
      log C(m, j) accumulated as a sum of logarithms (no large factorials);
    - the terms rise then fall with j, so the sum stops once past the largest term and
      below e^-45 of it (an alternating tail is smaller than its first term);
    - g <= 1/m gives 1, g >= 1 gives 0; where the upper bound
      (1 - (1 - x)^(m-1))^m on 1 - p (the spacings of uniform points are negatively
      associated; Joag-Dev and Proschan 1983, from memory) is below 1e-17, p is 1 to double
      precision;
    - where the largest term exceeds 100 (p above about 0.998, where float64 cancellation
      would cost more than about 1e-13), the series is summed again in decimal arithmetic
      with enough digits.

    Examples
    --------
    >>> round(fisher_p_value(0.5, m=10), 10)  # 10 * 2**-9, exact
    0.01953125
    """
    harmonics = _check_m_array(m)
    values = np.asarray(g, dtype=np.float64)
    if not np.all(np.isfinite(values)) or np.any((values < 0) | (values > 1)):
        raise InputError("g: Fisher's statistic must lie between 0 and 1")
    if harmonics.ndim:
        values, harmonics = np.broadcast_arrays(values, harmonics)
    flat = values.ravel()
    result = np.ones(flat.shape)
    result[flat >= 1.0] = 0.0
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        if harmonics.ndim:
            live = np.flatnonzero((flat > 1.0 / harmonics.ravel()) & (flat < 1.0))
            m = harmonics.ravel()[live]
        else:
            live = np.flatnonzero((flat > 1.0 / int(harmonics)) & (flat < 1.0))
            m = np.full(live.size, int(harmonics))
        x = flat[live]
        log_bound = m * np.log1p(-np.exp((m - 1) * np.log1p(-x)))
        uncertain = log_bound >= math.log(1e-17)
        live, x, m = live[uncertain], x[uncertain], m[uncertain]
        # log C(m, j) for each distinct m, accumulated term by term as for one m alone.
        if harmonics.ndim and m.size > 1:
            distinct = np.sort(m)
            distinct = distinct[np.concatenate([[True], distinct[1:] != distinct[:-1]])]
        else:
            distinct = m[:1]
        which = np.searchsorted(distinct, m)
        counts = distinct.tolist()
        log_binomial = [0.0] * len(counts)

        total = np.zeros(x.shape)
        largest = np.full(x.shape, -np.inf)
        previous = np.full(x.shape, -np.inf)
        active = np.arange(x.size)
        for j in range(1, max(counts, default=0) + 1):
            if active.size == 0:
                break
            log_binomial = [b + (math.log(c - j + 1) - math.log(j)) if j <= c else -np.inf
                            for b, c in zip(log_binomial, counts, strict=True)]
            base = -j * x[active]
            open_ = base > -1.0
            if len(counts) == 1:
                log_term = np.where(open_, log_binomial[0] + (counts[0] - 1) * np.log1p(base), -np.inf)
            else:
                open_ &= j <= m[active]
                log_term = np.where(open_, np.take(log_binomial, which[active])
                                    + (m[active] - 1) * np.log1p(base), -np.inf)
            term = np.exp(log_term)
            total[active] += term if j % 2 else -term
            past_peak = (log_term < previous[active]) & (log_term < largest[active] - 45.0)
            largest[active] = np.maximum(largest[active], log_term)
            previous[active] = log_term
            active = active[open_ & ~past_peak]
    result[live] = total

    cancelled = np.flatnonzero(largest > math.log(_LARGEST_FLOAT_TERM))
    for index in cancelled:
        digits = 25 + int(largest[index] / math.log(10.0))
        result[live[index]] = _decimal_tail(float(x[index]), int(m[index]), digits)
    result = np.clip(result, 0.0, 1.0).reshape(values.shape)
    return float(result) if result.ndim == 0 else result


def fisher_critical_value(*, m: int, alpha: float = 0.05) -> float:
    """Exact critical value g_alpha of Fisher's test: P(g > g_alpha) = alpha.

    Found by Brent's root finding on the exact tail of :func:`fisher_p_value`, which falls
    monotonically from 1 at g = 1/m to 0 at g = 1 (the method used for the published tables,
    e.g. Nowroozi 1967, from memory).

    Notes
    -----
    The search is bracketed tightly. The series' first term m (1 - x)^(m-1) is an upper
    bound on the tail (Bonferroni's inequality), so the approximation
    x_a = 1 - (alpha/m)^(1/(m-1)) of :func:`fisher_critical_value_approx`, where that term
    equals alpha, is at or above g_alpha. The second term, about alpha^2/2 at x_a, puts
    g_alpha near x_a - alpha / (2 (m - 1)); the bracket's lower end is four times that far
    below x_a, and 1/m (where the tail is 1) whenever the tail there is not above alpha.
    """
    return _critical_value(_check_m(m), check_probability(alpha, what="alpha"))


@functools.lru_cache(maxsize=256)
def _critical_value(m: int, alpha: float) -> float:
    """:func:`fisher_critical_value` of checked arguments (kept: a batch meets the same N often)."""
    from scipy.optimize import brentq

    upper = fisher_critical_value_approx(m=m, alpha=alpha)
    excess_upper = fisher_p_value(upper, m=m) - alpha
    if excess_upper >= 0.0:  # the first term alone: exact where g_alpha >= 1/2
        return float(upper)
    lower = max(1.0 / m, upper - 2.0 * alpha / (m - 1))
    if lower > 1.0 / m and fisher_p_value(lower, m=m) <= alpha:
        lower = 1.0 / m
    return float(
        brentq(
            lambda g: fisher_p_value(g, m=m) - alpha,
            lower,
            upper,
            xtol=1e-15,
            rtol=4.0 * np.finfo(float).eps,
            maxiter=200,
        )
    )


def fisher_critical_value_approx(*, m: int, alpha: float = 0.05) -> float:
    """The common approximation g_alpha ~ 1 - (alpha/m)^(1/(m-1)).

    It keeps the first term of Fisher's series only; it is exact when g_alpha >= 1/2 and
    slightly too high (conservative) otherwise.
    """
    m = _check_m(m)
    alpha = check_probability(alpha, what="alpha")
    return float(1.0 - (alpha / m) ** (1.0 / (m - 1)))


@dataclass(frozen=True)
class FisherTest:
    """Result of Fisher's g test for a periodic component in white noise.

    For one series every array attribute is a scalar; for a batch of series of shape
    (..., N) the per-series attributes have shape (...).

    Attributes
    ----------
    g : float or ndarray
        max s_k^2 / sum s_k^2 over harmonics k = 1..m.
    m : int
        Harmonics in the test, floor((N - 1)/2): the mean and the Nyquist harmonic of even
        N are excluded.
    p_value : float or ndarray
        Exact P(g_null > g) under Gaussian white noise.
    g_critical : float
        Exact critical value at ``alpha`` (:func:`fisher_critical_value`; found on first use,
        a root search of the exact series that takes milliseconds for thousands of
        harmonics, and a batch whose segments all differ in length would pay it for each).
    g_critical_approx : float
        1 - (alpha/m)^(1/(m-1)) (on first use).
    alpha : float
        Significance level.
    dominant_k : int or ndarray
        Harmonic with the largest variance among k = 1..m.
    dominant_wavelength : float or ndarray
        N dx / dominant_k, metres.
    significant : bool or ndarray
        ``p_value < alpha`` (equivalently g > g_critical).
    n : int
        Samples per series.
    spacing : float
        Sample spacing, metres.
    null : str
        The null hypothesis, ``"white noise"``.
    """

    g: np.ndarray | float
    m: int
    p_value: np.ndarray | float
    alpha: float
    dominant_k: np.ndarray | int
    dominant_wavelength: np.ndarray | float
    significant: np.ndarray | bool
    n: int
    spacing: float
    null: str = "white noise"

    @functools.cached_property
    def g_critical(self) -> float:
        """Exact critical value at ``alpha``."""
        return fisher_critical_value(m=self.m, alpha=self.alpha)

    @functools.cached_property
    def g_critical_approx(self) -> float:
        """1 - (alpha/m)^(1/(m-1))."""
        return fisher_critical_value_approx(m=self.m, alpha=self.alpha)

    def to_frame(self):
        """One row per series; columns ``g``, ``m``, ``p_value``, ``g_critical``,
        ``g_critical_approx``, ``alpha``, ``dominant_k``, ``dominant_wavelength_km``,
        ``significant``, ``null``."""
        import pandas as pd

        return pd.DataFrame(
            {
                "g": np.ravel(self.g),
                "m": self.m,
                "p_value": np.ravel(self.p_value),
                "g_critical": self.g_critical,
                "g_critical_approx": self.g_critical_approx,
                "alpha": self.alpha,
                "dominant_k": np.ravel(self.dominant_k),
                "dominant_wavelength_km": np.ravel(self.dominant_wavelength) / 1000.0,
                "significant": np.ravel(self.significant),
                "null": self.null,
            }
        )

    def __str__(self) -> str:
        head = (
            f"Fisher's g test (null: {self.null}), m = {self.m} harmonics k = 1..{self.m} "
            f"of N = {self.n}, alpha = {self.alpha:g}"
        )
        crit = (
            f"  critical g: {self.g_critical:.6g} exact, {self.g_critical_approx:.6g} "
            f"approximate"
        )
        if np.ndim(self.g) == 0:
            verdict = "significant" if self.significant else "not significant"
            return "\n".join(
                [
                    head,
                    f"  g = {float(self.g):.6g} at k = {int(self.dominant_k)} "
                    f"(wavelength {float(self.dominant_wavelength) / 1000.0:.6g} km), "
                    f"p = {float(self.p_value):.3g}: {verdict}",
                    crit,
                ]
            )
        count = int(np.sum(self.significant))
        return "\n".join(
            [head, f"  {np.size(self.g)} series, {count} significant", crit]
        )


def _checked_variances(variances: object, *, n: int, spacing: float, alpha: float):
    """Harmonic variances as floats with their N, spacing and level, checked together."""
    dx = check_spacing(spacing)
    alpha = check_probability(alpha, what="alpha")
    array = np.asarray(variances, dtype=np.float64)
    n = int(n)
    if array.shape[-1] != n // 2 + 1:
        raise InputError(
            f"variances: last axis has {array.shape[-1]} entries; {n} samples give {n // 2 + 1}"
        )
    return array, n, dx, alpha


def _scalar_or_array(array: np.ndarray):
    return array.item() if array.ndim == 0 else array


def fisher_from_variances(
    variances: object, *, n: int, spacing: float, alpha: float = 0.05
) -> FisherTest:
    """Fisher's g test from harmonic variances already computed.

    Parameters
    ----------
    variances : array_like, shape (..., N//2 + 1)
        Output of :func:`harmonic_variances` (untapered) for series of N samples.
    n : int
        Samples per series N (it fixes m and whether a Nyquist entry is present).
    spacing : float
        Sample spacing, metres (for the dominant wavelength).
    alpha : float
        Significance level.

    Returns
    -------
    FisherTest
    """
    array, n, dx, alpha = _checked_variances(variances, n=n, spacing=spacing, alpha=alpha)
    m = _check_m(fisher_m(n))
    tested = array[..., 1 : m + 1]
    total = tested.sum(axis=-1)
    peak = tested.max(axis=-1)
    with np.errstate(invalid="ignore", divide="ignore"):
        g = np.where(total > 0, peak / np.where(total > 0, total, 1.0), 1.0 / m)
    dominant = np.argmax(tested, axis=-1) + 1
    p_value = np.asarray(fisher_p_value(g, m=m))
    return FisherTest(
        g=_scalar_or_array(np.asarray(g)),
        m=m,
        p_value=_scalar_or_array(p_value),
        alpha=alpha,
        dominant_k=_scalar_or_array(dominant),
        dominant_wavelength=_scalar_or_array(n * dx / dominant),
        significant=_scalar_or_array(p_value < alpha),
        n=n,
        spacing=dx,
    )


def fisher_test(
    values: object, *, spacing: float, detrend: Detrend = "linear", alpha: float = 0.05
) -> FisherTest:
    """Fisher's g test for one hidden periodicity in Gaussian white noise.

    The series is detrended and analysed without a taper at the Fourier wavenumbers (the
    test's assumptions: independent chi2_2 ordinates under the null).

    Parameters
    ----------
    values : array_like, shape (N,) or (..., N)
        One series, or many of the same length along the last axis; N >= 5.
    spacing : float
        Sample spacing, metres.
    detrend : {"linear", "mean"}
        Removed before the transform.
    alpha : float
        Significance level (default 0.05).

    Returns
    -------
    FisherTest

    Notes
    -----
    The null hypothesis is white noise. Survey profiles are usually red (power rising
    towards long wavelengths), where this test flags long-wavelength harmonics that are
    only the background; use :func:`red_noise_test` for them.
    """
    variances = harmonic_variances(values, detrend=detrend)
    count = np.shape(values)[-1]
    return fisher_from_variances(variances, n=count, spacing=spacing, alpha=alpha)


# --------------------------------------------------------------------------------------------
# Red noise: AR(1) background
# --------------------------------------------------------------------------------------------


def _lag1_ratio(
    numerator: np.ndarray, denominator: np.ndarray, *, n: int, estimator: str
) -> np.ndarray | float:
    """r = numerator / denominator (0 for a flat series), bias-corrected if asked, clipped."""
    with np.errstate(invalid="ignore", divide="ignore"):
        r = np.where(denominator > 0, numerator / np.where(denominator > 0, denominator, 1), 0.0)
    if estimator == "corrected":
        r = (n * r + 1.0) / (n - 3.0)
    return _scalar_or_array(np.clip(r, -_LAG1_LIMIT, _LAG1_LIMIT))


def lag1_autocorrelation(
    values: object, *, detrend: Detrend = "linear", estimator: Lag1Estimator = "sample"
) -> np.ndarray | float:
    """Lag-1 autocorrelation of the detrended series, the AR(1) coefficient estimate.

    r = sum_{j=0}^{N-2} y_j y_{j+1} / sum_{j=0}^{N-1} y_j^2 on the residual y after
    removing the mean or line (the usual sample autocorrelation; Box and Jenkins 1976,
    from memory). ``estimator="corrected"`` returns (N r + 1)/(N - 3), removing the
    first-order bias E[r] ~ rho - (1 + 3 rho)/N of the sample estimate (Marriott and Pope
    1954, from memory). Vectorised along the last axis. This is the definition, summed in
    the sample domain; :func:`lag1_from_harmonics` gives the same number from harmonic
    variances already computed.
    """
    check_option(estimator, Lag1Estimator, what="lag1 estimator")
    array = as_values(values, min_length=5, batched=True)
    residual, _, _ = remove_trend(array, detrend)
    numerator = np.einsum("...j,...j->...", residual[..., :-1], residual[..., 1:])
    denominator = np.einsum("...j,...j->...", residual, residual)
    return _lag1_ratio(numerator, denominator, n=array.shape[-1], estimator=estimator)


def lag1_from_harmonics(
    harmonics: DetrendedHarmonics, *, estimator: Lag1Estimator = "sample"
) -> np.ndarray | float:
    """Lag-1 autocorrelation of detrended series from their harmonic decomposition.

    The number of :func:`lag1_autocorrelation`, without going back to the samples. For the
    DFT R of a residual r of N samples, the circular lag-1 sum is
    sum_j r_j r_{(j+1) mod N} = (1/N) sum_{k=0}^{N-1} |R_k|^2 cos(2 pi k/N) (the
    Wiener-Khinchin relation of the DFT; common practice), which in the harmonic variances
    s_k^2 of :func:`profiles.spectral.harmonic_variances` (conjugate pairs folded in) is
    (N - 1) sum_{k>=1} s_k^2 cos(2 pi k/N); Parseval gives sum_j r_j^2 = (N - 1) sum_{k>=1}
    s_k^2. The ordinary lag-1 sum lacks the wrap-around product r_{N-1} r_0, so

        r = (sum_{k>=1} s_k^2 cos(2 pi k/N) - r_0 r_{N-1} / (N - 1)) / sum_{k>=1} s_k^2,

    then bias-corrected as in :func:`lag1_autocorrelation` if asked. The two sums and the
    end values come with :func:`profiles.spectral.harmonics.detrended_harmonics`, so for many
    series (along-track windows) this costs a few operations per series.

    Parameters
    ----------
    harmonics : DetrendedHarmonics
        Of series of N >= 5 samples.
    estimator : {"sample", "corrected"}
        As in :func:`lag1_autocorrelation`.
    """
    check_option(estimator, Lag1Estimator, what="lag1 estimator")
    n = int(harmonics.n)
    ends = np.asarray(harmonics.first) * np.asarray(harmonics.last)
    numerator = np.asarray(harmonics.circular_lag1) - ends / (n - 1)
    return _lag1_ratio(numerator, np.asarray(harmonics.total_variance), n=n, estimator=estimator)


def _ar1_shape(r: np.ndarray, harmonic: np.ndarray, n: int) -> np.ndarray:
    """P_k = (1 - r^2) / (1 + r^2 - 2 r cos(2 pi k / N)).

    The denominator is written as (1 - r)^2 + 4 r sin^2(pi k/N) for r >= 0 and as
    (1 + r)^2 + 4 |r| cos^2(pi k/N) for r < 0: sums of positive terms, which keep their
    digits where 1 + r^2 and 2 r cos(2 pi k/N) nearly cancel (|r| -> 1 near k = 0 or N/2).
    """
    half = np.pi * harmonic / n
    if np.ndim(r) == 0:  # one coefficient: only its form
        below = ((1.0 - r) ** 2 + 4.0 * r * np.sin(half) ** 2 if r >= 0
                 else (1.0 + r) ** 2 - 4.0 * r * np.cos(half) ** 2)
    else:
        below = np.where(r >= 0, (1.0 - r) ** 2 + 4.0 * r * np.sin(half) ** 2,
                         (1.0 + r) ** 2 - 4.0 * r * np.cos(half) ** 2)
    return (1.0 - r) * (1.0 + r) / below


#: Up to this N the AR(1) normaliser is summed harmonic by harmonic (see ``_ar1_sum``).
_AR1_SUMMED_UP_TO = 128


def _ar1_sum(r: np.ndarray, n: object) -> np.ndarray:
    """sum_{k>=1} d_k P_k over k = 1..N//2 (d = 1/2 at the Nyquist harmonic of even N).

    By the symmetry P_k = P_{N-k} this is half the sum over k = 1..N-1, and the sum of the
    AR(1) spectrum over a whole period of the DFT (a Poisson kernel) is
    N (1 + r^N) / (1 - r^N) (common practice), so the sum is
    (N (1 + r^N) / (1 - r^N) - (1 + r) / (1 - r)) / 2: no harmonic-by-harmonic sum. 1 - r^N
    is formed as -expm1(N log|r|) (or 1 + |r|^N for negative r and odd N) to keep its
    digits as |r| -> 1. The subtraction cancels where the k = 0 term (1 + r)/(1 - r) dwarfs
    the sum, i.e. r near 1 and N(1 - r) small; for N <= ``_AR1_SUMMED_UP_TO`` the sum is
    therefore taken term by term (cheap there), and above it, for |r| <= 0.999, the closed
    form keeps about 1e-12 (checked against mpmath in the tests). ``n``: one N, or one per
    coefficient (broadcast against ``r``).
    """
    r = np.asarray(r, dtype=np.float64)
    if np.ndim(n) == 0:
        n = int(n)
        if n <= _AR1_SUMMED_UP_TO:
            k = np.arange(1, n // 2 + 1)
            weight = np.where(2 * k == n, 0.5, 1.0)
            return (weight * _ar1_shape(r[..., np.newaxis], k, n)).sum(axis=-1)
    else:
        r, n = np.broadcast_arrays(r, np.asarray(n))
        summed = n <= _AR1_SUMMED_UP_TO
        if summed.any():  # each short length on its own, as one N alone is
            result = _ar1_sum(r, np.where(summed, _AR1_SUMMED_UP_TO + 1, n))
            for count in np.unique(n[summed]).tolist():
                result[n == count] = _ar1_sum(r[n == count], count)
            return result
    size = np.abs(r)
    with np.errstate(divide="ignore"):
        power = np.expm1(n * np.log(size))  # |r|^N - 1
    complement = np.where((r < 0) & (n % 2 == 1), 2.0 + power, -power)  # 1 - r^N
    complement = np.where(size == 0, 1.0, complement)
    return 0.5 * (n * (2.0 - complement) / complement - (1.0 + r) / (1.0 - r))


def _harmonics_checked(harmonic: object, n: object) -> np.ndarray:
    k = np.asarray(harmonic)
    if not np.issubdtype(k.dtype, np.integer) or np.any((k < 0) | (k > np.asarray(n) // 2)):
        top = f"{n // 2} for N = {n}" if np.ndim(n) == 0 else "N//2 for their N"
        raise InputError(f"harmonic: harmonic numbers must be whole numbers 0..{top}")
    return k


def ar1_background(
    lag1: object, *, n: object, variance: object, harmonic: object = None
) -> np.ndarray:
    """Expected variance of each harmonic for AR(1) noise with the observed total variance.

    B_k = V d_k P_k / sum_{j>=1} d_j P_j for k = 1..N//2, with
    P_k = (1 - r^2)/(1 + r^2 - 2 r cos(2 pi k/N)) (Gilman, Fuglister and Mitchell 1963;
    Torrence and Compo 1998, eq. 16, from memory), d_k = 1, and d = 1/2 at the Nyquist
    harmonic of even N (one degree of freedom there). The background therefore adds up to V,
    the total variance of the harmonics k >= 1; for r = 0 it is V * 2/(N - 1) per harmonic.
    Entry k = 0 is 0. The normaliser has a closed form (see ``_ar1_sum``), so the background
    at a few chosen harmonics costs no more than at one.

    Parameters
    ----------
    lag1 : float or array_like, shape (...)
        AR(1) coefficient(s), |r| < 1.
    n : int or array_like of int
        Samples per series: one N, or (with ``harmonic``) one per series, broadcast like it.
    variance : float or array_like, shape (...)
        Total variance V of the harmonics k >= 1 (field units squared).
    harmonic : int or array_like of int, optional
        Harmonic numbers 0..N//2 at which to evaluate B_k, broadcast against ``lag1`` and
        ``variance`` (e.g. one per series). Default: every harmonic, on a new last axis (one
        N only).

    Returns
    -------
    ndarray
        Shape (..., N//2 + 1) for every harmonic, else the broadcast shape.
    """
    n = _counts_checked(n)
    r = np.clip(np.asarray(lag1, dtype=np.float64), -_LAG1_LIMIT, _LAG1_LIMIT)
    total = np.asarray(variance, dtype=np.float64)
    if harmonic is None:
        if np.ndim(n):
            raise InputError("n: give one number of samples to evaluate every harmonic")
        k = np.arange(n // 2 + 1)
        weight = np.ones(k.size)
        weight[0] = 0.0
        if n % 2 == 0:
            weight[-1] = 0.5
        if r.ndim:
            r, total = r[..., np.newaxis], total[..., np.newaxis]
    else:
        k = _harmonics_checked(harmonic, n)
        weight = np.where(k == 0, 0.0, np.where(2 * k == n, 0.5, 1.0))
    return total * weight * _ar1_shape(r, k, n) / _ar1_sum(r, n)


def _counts_checked(n: object) -> int | np.ndarray:
    """Samples per series: one whole number, or an array of them."""
    if np.ndim(n) == 0:
        return int(n)
    counts = np.asarray(n)
    if counts.dtype == bool or not np.issubdtype(counts.dtype, np.integer):
        raise InputError("n: numbers of samples must be whole numbers")
    return counts


@functools.lru_cache(maxsize=64)
def _chi2_factors(alpha: float) -> tuple[float, float]:
    """chi2_nu(1 - alpha) / nu for nu = 2 and nu = 1 (kept: scipy's quantile is slow to call).

    The quantile is 2 P^-1(nu/2, 1 - alpha), P the regularised lower incomplete gamma
    function: ``scipy.stats.chi2.ppf`` computes it so, and ``scipy.special.gammaincinv`` gives
    the same numbers without importing scipy.stats (half a second in a fresh process)."""
    from scipy.special import gammaincinv

    interior, nyquist = 2.0 * gammaincinv(np.array([1.0, 0.5]), 1.0 - alpha) / [2.0, 1.0]
    return float(interior), float(nyquist)


def _threshold(background: np.ndarray, harmonic: np.ndarray | None, *, n: object, alpha: float) -> np.ndarray:
    """background * chi2_nu(1 - alpha) / nu, nu = 2 (1 at the Nyquist harmonic of even N);
    ``inf`` at k = 0, which is never tested. ``harmonic`` None: every harmonic k = 0..N//2
    along the last axis (one N)."""
    interior, nyquist = _chi2_factors(alpha)
    if harmonic is None:
        threshold = background * interior
        threshold[..., 0] = np.inf
        if n % 2 == 0:
            threshold[..., -1] = background[..., -1] * nyquist
        return threshold
    factor = np.where(2 * harmonic == n, nyquist, interior)
    return np.where(harmonic == 0, np.inf, background * factor)


def red_noise_at(
    variance: object,
    *,
    harmonic: object,
    total: object,
    lag1: object,
    n: object,
    alpha: float = 0.05,
) -> np.ndarray:
    """The red-noise test of :func:`red_noise_from_variances` at chosen harmonics only.

    variance > B_k chi2_nu(1 - alpha) / nu with the AR(1) background B_k of
    :func:`ar1_background` (nu = 2, 1 at the Nyquist harmonic of even N), for the harmonic
    ``harmonic`` of each series: e.g. the dominant harmonic of every along-track window,
    without building the background of every harmonic of every window.

    Parameters
    ----------
    variance : array_like, shape (...)
        Observed variance of the harmonic tested, field units squared.
    harmonic : int or array_like of int, shape (...)
        Its harmonic number, 0..N//2 (k = 0 is never significant).
    total : array_like, shape (...)
        Total variance of the harmonics k >= 1 of each series.
    lag1 : array_like, shape (...)
        AR(1) coefficient of each series.
    n : int or array_like of int, shape (...)
        Samples per series: one N, or one per series (windows of several lengths).
    alpha : float
        Level of the test (default 0.05).

    Returns
    -------
    ndarray of bool
    """
    alpha = check_probability(alpha, what="alpha")
    n = _counts_checked(n)
    k = _harmonics_checked(harmonic, n)
    background = ar1_background(lag1, n=n, variance=total, harmonic=k)
    return np.asarray(variance, dtype=np.float64) > _threshold(background, k, n=n, alpha=alpha)


@dataclass(frozen=True)
class RedNoiseTest:
    """Result of the test of each harmonic against an AR(1) (red-noise) background.

    For one series the per-harmonic arrays have shape (N//2 + 1,); for a batch of shape
    (..., N) they have shape (..., N//2 + 1) and ``lag1`` has shape (...).

    Attributes
    ----------
    lag1 : float or ndarray
        AR(1) coefficient of the background.
    variance : ndarray
        Observed variance of each harmonic, field units squared.
    background : ndarray
        Expected variance of each harmonic under the AR(1) null, scaled to the observed total
        (see :func:`ar1_background`).
    threshold : ndarray
        background * chi2_nu(1 - alpha) / nu, nu = 2 (1 at the Nyquist harmonic of even N);
        ``inf`` at k = 0.
    significant : ndarray of bool
        variance > threshold (never at k = 0).
    wavenumber : ndarray
        k / (N dx), cycles per metre.
    alpha : float
        Level of each per-harmonic test (not corrected for the number of harmonics tested:
        about alpha of the harmonics of pure red noise are flagged).
    n : int
        Samples per series.
    spacing : float
        Sample spacing, metres.
    lag1_estimator : str
        ``"sample"``, ``"corrected"`` or ``"given"``.
    null : str
        ``"red noise (AR(1))"``.
    significant_k : ndarray of int
        Harmonic numbers flagged (one series only).
    """

    lag1: np.ndarray | float
    variance: np.ndarray = field(repr=False)
    background: np.ndarray = field(repr=False)
    threshold: np.ndarray = field(repr=False)
    significant: np.ndarray = field(repr=False)
    wavenumber: np.ndarray = field(repr=False)
    alpha: float
    n: int
    spacing: float
    lag1_estimator: str
    null: str = "red noise (AR(1))"

    @property
    def significant_k(self) -> np.ndarray:
        """Harmonic numbers above the threshold (one series only)."""
        if self.significant.ndim != 1:
            raise InputError("significant_k is defined for one series; use .significant")
        return np.flatnonzero(self.significant)

    def to_frame(self):
        """One row per harmonic (and per series for a batch, in column ``series``).

        Columns: ``harmonic``, ``wavenumber_per_km``, ``wavelength_km``, ``variance``,
        ``background``, ``threshold`` (field units squared), ``significant``, ``lag1``.
        """
        import pandas as pd

        rows = int(np.prod(self.variance.shape[:-1]))
        count = self.variance.shape[-1]
        with np.errstate(divide="ignore"):
            wavelength = 1.0 / self.wavenumber
        frame = pd.DataFrame(
            {
                "harmonic": np.tile(np.arange(count), rows),
                "wavenumber_per_km": np.tile(self.wavenumber * 1000.0, rows),
                "wavelength_km": np.tile(wavelength / 1000.0, rows),
                "variance": self.variance.ravel(),
                "background": self.background.ravel(),
                "threshold": self.threshold.ravel(),
                "significant": self.significant.ravel(),
                "lag1": np.repeat(np.ravel(self.lag1), count),
            }
        )
        if self.variance.ndim > 1:
            frame.insert(0, "series", np.repeat(np.arange(rows), count))
        return frame

    def __str__(self) -> str:
        head = (
            f"Red-noise test (null: {self.null}), N = {self.n}, alpha = {self.alpha:g} per "
            f"harmonic"
        )
        if self.significant.ndim != 1:
            flagged = int(self.significant.sum())
            return f"{head}\n  {np.size(self.lag1)} series, {flagged} harmonics flagged in all"
        lines = [head, f"  lag-1 coefficient {float(self.lag1):.4f} ({self.lag1_estimator})"]
        flagged = self.significant_k
        if flagged.size == 0:
            lines.append("  no harmonic above the red-noise threshold")
        else:
            lines.append(f"  {'k':>6} {'wavelength_km':>14} {'variance':>12} {'threshold':>12}")
            for k in flagged[np.argsort(self.variance[flagged])[::-1]][:10]:
                lines.append(
                    f"  {int(k):>6} {1.0 / self.wavenumber[k] / 1000.0:>14.6g} "
                    f"{self.variance[k]:>12.6g} {self.threshold[k]:>12.6g}"
                )
        return "\n".join(lines)


def red_noise_from_variances(
    variances: object,
    *,
    n: int,
    lag1: object,
    spacing: float,
    alpha: float = 0.05,
    lag1_estimator: str = "given",
) -> RedNoiseTest:
    """Red-noise test from harmonic variances and lag-1 coefficients already computed.

    Parameters
    ----------
    variances : array_like, shape (..., N//2 + 1)
        Output of :func:`harmonic_variances` (untapered).
    n : int
        Samples per series.
    lag1 : float or array_like, shape (...)
        AR(1) coefficient of each series (e.g. from :func:`lag1_autocorrelation`).
    spacing : float
        Sample spacing, metres.
    alpha : float
        Level of the test at each harmonic.
    lag1_estimator : str
        Label recorded in the result.

    Returns
    -------
    RedNoiseTest
    """
    array, n, dx, alpha = _checked_variances(variances, n=n, spacing=spacing, alpha=alpha)
    total = array[..., 1:].sum(axis=-1)
    background = ar1_background(lag1, n=n, variance=total)
    threshold = _threshold(background, None, n=n, alpha=alpha)
    significant = array > threshold
    return RedNoiseTest(
        lag1=_scalar_or_array(np.clip(np.asarray(lag1, dtype=np.float64), -1.0, 1.0)),
        variance=array,
        background=background,
        threshold=threshold,
        significant=significant,
        wavenumber=np.arange(n // 2 + 1) / (n * dx),
        alpha=alpha,
        n=n,
        spacing=dx,
        lag1_estimator=lag1_estimator,
    )


def red_noise_test(
    values: object,
    *,
    spacing: float,
    detrend: Detrend = "linear",
    alpha: float = 0.05,
    lag1_estimator: Lag1Estimator = "corrected",
) -> RedNoiseTest:
    """Test every harmonic against an AR(1) red-noise background.

    The lag-1 coefficient is estimated from the detrended series (the number of
    :func:`lag1_autocorrelation`, computed by :func:`lag1_from_harmonics` from the same
    transform as the harmonic variances), the background spectrum of AR(1) noise with that
    coefficient is scaled to the observed total variance (:func:`ar1_background`), and
    harmonic k is flagged where its variance exceeds background_k * chi2_2(1 - alpha)/2
    (chi2_1(1 - alpha) at the Nyquist harmonic of even N): the test of Gilman, Fuglister
    and Mitchell (1963) in the form of Torrence and Compo (1998), eqs. 16-18 (equation
    numbers from memory).

    Parameters
    ----------
    values : array_like, shape (N,) or (..., N)
        One series or many of the same length along the last axis; N >= 5.
    spacing : float
        Sample spacing, metres.
    detrend : {"linear", "mean"}
        Removed before estimating r and the harmonic variances.
    alpha : float
        Level of the test at each harmonic (default 0.05).
    lag1_estimator : {"corrected", "sample"}
        ``"corrected"`` (default) reduces the downward bias of the sample autocorrelation,
        which would otherwise under-estimate the background at long wavelengths.

    Returns
    -------
    RedNoiseTest
    """
    array = as_values(values, min_length=5, batched=True)
    harmonics = detrended_harmonics(array, detrend=detrend)
    lag1 = lag1_from_harmonics(harmonics, estimator=lag1_estimator)
    return red_noise_from_variances(
        harmonics.variance,
        n=array.shape[-1],
        lag1=lag1,
        spacing=spacing,
        alpha=alpha,
        lag1_estimator=lag1_estimator,
    )
