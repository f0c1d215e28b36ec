"""Checks and preprocessing shared by every spectral estimator.

One job: turn what the caller passed (values, spacing, option names) into clean float arrays,
remove the mean or the linear trend along the last axis, and build tapers. Every estimator in
:mod:`profiles.spectral` goes through these functions, so the rules (what is refused, how the
trend is fitted, which taper convention is used) live in one place.

Conventions
-----------
- Arrays are analysed along their **last axis**; leading axes are independent series (for
  example many along-track windows of the same length).
- The linear trend is the ordinary least-squares line through the samples against their
  index, fitted separately for every series. The fitted line passes through the mean, so the
  mean reported with a linear detrend is the plain mean of the values.
- Tapers are built with :func:`scipy.signal.get_window` in its periodic ("DFT-even") form,
  the form ``scipy.signal.welch`` and ``scipy.signal.periodogram`` use, so results compare
  bin for bin (common practice; see Harris 1978 for the distinction).
"""

from __future__ import annotations

from functools import lru_cache
from typing import Literal, get_args

import numpy as np

from ..errors import InputError, SpacingError

#: How the series is levelled before the transform: ``"mean"`` removes the mean only,
#: ``"linear"`` removes the least-squares straight line (a regional gradient).
Detrend = Literal["linear", "mean"]

#: A taper: a window name known to :func:`scipy.signal.get_window` (``"hann"``,
#: ``"hamming"``, ``"blackman"``, ...) or a name with its parameter (``("kaiser", 8.0)``,
#: ``("tukey", 0.25)``). ``None`` or ``"boxcar"`` means no taper.
Taper = str | tuple[str, float] | None


def check_option(value: object, options: object, *, what: str) -> str:
    """Return ``value`` if it is one of the strings of the ``Literal`` alias ``options``.

    Raises
    ------
    InputError
        Naming the option, the value given and the values allowed.
    """
    allowed = get_args(options)
    if value not in allowed:
        listed = ", ".join(repr(item) for item in allowed)
        raise InputError(f"{what}: {value!r} is not one of {listed}")
    return str(value)


def check_spacing(spacing: float) -> float:
    """Return the sample spacing in metres as a float after checking it is usable.

    Raises
    ------
    SpacingError
        If the spacing is not a finite positive number.
    """
    try:
        metres = float(spacing)
    except (TypeError, ValueError):
        raise SpacingError(f"spacing: {spacing!r} is not a number of metres") from None
    if not (np.isfinite(metres) and metres > 0):
        raise SpacingError(f"spacing: {spacing!r} must be a finite positive number of metres")
    return metres


def check_probability(value: float, *, what: str) -> float:
    """Return ``value`` as a float strictly between 0 and 1, or raise :class:`InputError`."""
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{what}: {value!r} is not a number") from None
    if not 0.0 < number < 1.0:
        raise InputError(f"{what}: {value!r} must lie strictly between 0 and 1")
    return number


def as_values(
    values: object,
    *,
    min_length: int,
    batched: bool = False,
    finite: bool = True,
    what: str = "values",
) -> np.ndarray:
    """Return ``values`` as a float64 array, checked for shape, length and finiteness.

    Parameters
    ----------
    values : array_like
        One series (1-D) or, with ``batched=True``, any number of series of equal length
        along the last axis.
    min_length : int
        Fewest samples per series the caller's method needs.
    batched : bool
        Accept arrays of any dimension >= 1; otherwise exactly 1-D.
    finite : bool
        Check for NaN and infinity here (default). A caller that computes a sum of every
        series anyway may pass ``False`` and call :func:`check_finite` only when that sum
        is not finite.
    what : str
        Name used in error messages.

    Raises
    ------
    InputError
        Non-numeric, wrong dimension, too short, or containing NaN or infinity. Gaps must be
        split off before spectral analysis; nothing here fills or bridges them.
    """
    try:
        array = np.asarray(values, dtype=np.float64)
    except (TypeError, ValueError):
        raise InputError(f"{what}: cannot read the values as numbers") from None
    if batched:
        if array.ndim < 1:
            raise InputError(f"{what}: expected an array of samples, got a single number")
    elif array.ndim != 1:
        raise InputError(f"{what}: expected a 1-D array of samples, got shape {array.shape}")
    count = array.shape[-1]
    if count < min_length:
        raise InputError(f"{what}: {count} samples given; this method needs at least {min_length}")
    # A sum is NaN or infinite whenever any sample is; it costs a fraction of a full check.
    if finite and not np.isfinite(array.sum()):
        check_finite(array, what=what)
    return array


def check_finite(array: np.ndarray, *, what: str = "values") -> None:
    """Raise :class:`InputError` naming the first NaN or infinite sample, if there is one."""
    bad = ~np.isfinite(array)
    if bad.any():
        first = np.unravel_index(int(np.argmax(bad)), array.shape)
        where = first if array.ndim > 1 else first[0]
        raise InputError(
            f"{what}: {int(bad.sum())} sample(s) are NaN or infinite (first at index "
            f"{where}); split the profile at gaps first"
        )


def fast_length(count: int) -> int:
    """The smallest length >= ``count`` whose only prime factors are 2, 3 and 5.

    A real transform of such a length is fast; one of a prime length of a few thousand costs
    about fifteen times more (pocketfft falls back on Bluestein's algorithm). The same numbers
    as ``scipy.fft.next_fast_len(count, real=True)``, without importing scipy.fft.

    >>> fast_length(8999), fast_length(1024), fast_length(1)
    (9000, 1024, 1)
    """
    count = int(count)
    if count <= 6:
        return max(count, 1)
    best = 1 << (count - 1).bit_length()  # a power of two always qualifies
    five = 1
    while five < best:
        three = five
        while three < best:
            # the smallest power of two that takes three * 2^k to at least count
            two = three << max(0, (-(-count // three) - 1).bit_length())
            if two < best:
                best = two
            three *= 3
        five *= 5
    return best


@lru_cache(maxsize=16)
def _centred_index(count: int) -> np.ndarray:
    """Sample index minus its mean, ``j - (N - 1)/2``; cached and read-only."""
    index = np.arange(count, dtype=np.float64) - (count - 1) / 2.0
    index.setflags(write=False)
    return index


def centred_index(count: int) -> np.ndarray:
    """Sample index minus its mean, c_j = j - (N - 1)/2 (cached, read-only)."""
    return _centred_index(count)


def line_slope(values: np.ndarray) -> np.ndarray:
    """Slope per sample of the least-squares line along the last axis.

    With c_j = j - (N - 1)/2 the slope is ``sum(c_j y_j) / sum(c_j^2)`` and the line is
    ``mean + slope * c_j`` (ordinary least squares against the sample index).
    """
    centred = _centred_index(values.shape[-1])
    # A strided view (e.g. overlapping windows) is read in place by einsum; matmul would
    # first copy it, but is the faster of the two on contiguous arrays.
    contiguous = values.flags.c_contiguous
    weighted = values @ centred if contiguous else np.einsum("...j,j->...", values, centred)
    return weighted / float(centred @ centred)


def window_slopes(values: np.ndarray, *, length: int, step: int) -> np.ndarray:
    """:func:`line_slope` of every window ``values[i step : i step + length]``, in O(N).

    The windows are those of ``sliding_window_view(values, length)[::step]``. With
    g = gcd(length, step), every window is made of whole blocks of g samples, so the sums
    sum_j c_j y_j of all windows come from two sums per block, S0_b = sum_t y_bt and
    S1_b = sum_t (t - (g - 1)/2) y_bt:

        sum_j c_j y_j = sum_q [S1_(b+q) + (q g + (g - 1)/2 - (length - 1)/2) S0_(b+q)],

    q = 0..length/g - 1 (the block's centre measured from the window's centre). Each
    sample is read once, however much the windows overlap; the rounding is that of the
    direct sums (no running totals, whose differences would cancel).

    Parameters
    ----------
    values : ndarray, shape (N,)
        Checked float samples.
    length, step : int
        Window length and the step between window starts, samples (length >= 2).

    Returns
    -------
    ndarray, shape ((N - length) // step + 1,)
        Slopes in field units per sample.
    """
    from math import gcd

    from numpy.lib.stride_tricks import sliding_window_view

    length, step = int(length), int(step)
    if length < 2 or step < 1 or values.shape[-1] < length:
        raise InputError(f"windows of {length} samples every {step} do not fit {values.shape[-1]} samples")
    count = (values.shape[-1] - length) // step + 1
    block = gcd(length, step)
    span = (count - 1) * step + length
    blocks = values[:span].reshape(-1, block)
    within = np.arange(block) - (block - 1) / 2.0
    # Both block sums as matrix-vector products (BLAS, one read of the samples each).
    zeroth = blocks @ np.ones(block)
    first = blocks @ within
    per, hop = length // block, step // block
    offsets = np.arange(per) * block + (block - 1) / 2.0 - (length - 1) / 2.0
    weighted = sliding_window_view(first, per)[::hop].sum(axis=1)
    weighted += np.einsum("ij,j->i", sliding_window_view(zeroth, per)[::hop], offsets)
    centred = _centred_index(length)
    return weighted / float(centred @ centred)


def remove_trend(
    values: np.ndarray, detrend: Detrend
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Remove the mean or the least-squares line along the last axis.

    Parameters
    ----------
    values : ndarray
        Checked float array (see :func:`as_values`), series along the last axis.
    detrend : {"linear", "mean"}
        What to remove; the line is the one of :func:`line_slope`.

    Returns
    -------
    residual : ndarray
        A new array, same shape as ``values``: ``y_j - mean - slope * c_j``.
    mean : ndarray
        Mean of every series, shape ``values.shape[:-1]``.
    slope : ndarray
        Fitted slope in field units per sample (zeros for ``"mean"``).
    """
    check_option(detrend, Detrend, what="detrend")
    if detrend == "mean":
        mean = values.mean(axis=-1)
        return values - mean[..., np.newaxis], mean, np.zeros_like(mean)
    mean, slope = values.mean(axis=-1), line_slope(values)
    # Built in one buffer, -(slope c_j) - mean + y_j: one allocation, no temporaries.
    residual = _centred_index(values.shape[-1]) * -slope[..., np.newaxis]
    residual -= mean[..., np.newaxis]
    residual += values
    return residual, mean, slope


def taper_weights(taper: Taper, count: int) -> np.ndarray | None:
    """Return the periodic taper of ``count`` samples, or ``None`` for no taper.

    Raises
    ------
    InputError
        If scipy does not know the taper.
    """
    if taper is None or taper == "boxcar":
        return None
    from scipy.signal import get_window

    try:
        weights = get_window(taper, count, fftbins=True)
    except (ValueError, TypeError) as error:
        raise InputError(
            f"taper: {taper!r} is not a window scipy.signal.windows can build ({error})"
        ) from None
    return np.asarray(weights, dtype=np.float64)


def taper_label(taper: Taper) -> str:
    """Readable name of a taper for tables and reports."""
    if taper is None or taper == "boxcar":
        return "none"
    if isinstance(taper, tuple):
        return f"{taper[0]}({', '.join(str(item) for item in taper[1:])})"
    return str(taper)
