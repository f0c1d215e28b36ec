"""Harmonic analysis of a uniformly spaced segment: the table of Fourier harmonics.

A segment of N values y_j at spacing dx (metres), j = 0..N-1, is written as a finite Fourier
series. For harmonic k = 0..floor(N/2) the wavenumber is k / (N dx) cycles per metre and the
coefficients are

    a_k = (2/N) sum_j y_j cos(2 pi k j / N),    b_k = (2/N) sum_j y_j sin(2 pi k j / N),

except at k = 0 and, for even N, at the Nyquist harmonic k = N/2, where the factor is 1/N (so
a_0 is the mean and a_{N/2} the amplitude of the alternating term). With that convention the
series reconstructs the data exactly,

    y_j = a_0 + sum_{k>=1} [a_k cos(2 pi k j/N) + b_k sin(2 pi k j/N)],

and the variance carried by each harmonic (sample variance, N - 1 denominator) is

    s_k^2 = N / (2 (N - 1)) (a_k^2 + b_k^2)      for 0 < k < N/2,
    s_k^2 = N / (N - 1) a_{N/2}^2                 for k = N/2 (N even),

which is N/(4(N-1)) a_{N/2}^2 if a_{N/2} were written with the 2/N factor. The s_k^2 for
k >= 1 add up to the sample variance of the (detrended, untapered) series exactly: Parseval's
theorem (see docs/methods-spectral.md; Bloomfield 2000, ch. 2, from memory).

All sums are evaluated with one real FFT (``numpy.fft.rfft``) along the last axis; the
readable O(N^2) sums live in the tests as the reference.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property, lru_cache

import numpy as np

from ..errors import InputError
from .preprocess import (
    Detrend,
    Taper,
    as_values,
    check_finite,
    check_option,
    check_spacing,
    line_slope,
    remove_trend,
    taper_label,
    taper_weights,
)

__all__ = [
    "DetrendedHarmonics",
    "HarmonicTable",
    "detrended_harmonics",
    "harmonic_table",
    "harmonic_variances",
]

_MIN_SAMPLES = 3


@lru_cache(maxsize=64)
def _centred_transform(count: int) -> np.ndarray:
    """rfft of the centred index c_j = j - (N-1)/2, in closed form (cached, read-only).

    With w = exp(-2 pi i k/N) and w^N = 1, the geometric series gives
    sum_j j w^j = N / (w - 1) for k != 0, and the constant (N-1)/2 adds nothing there, so

        rfft(c)_k = -N/2 + i (N/2) cot(pi k/N),   k = 1..N//2,

    and 0 at k = 0 (sum c_j = 0, exactly, so removing the line never touches k = 0); the
    Nyquist entry of even N is -N/2, real. No transform is needed, which matters in a batch
    whose segments all differ in length (checked against numpy.fft.rfft in the tests).
    """
    transform = np.zeros(count // 2 + 1, dtype=np.complex128)
    k = np.arange(1, count // 2 + 1)
    transform.real[1:] = -0.5 * count
    transform.imag[1:] = 0.5 * count / np.tan(np.pi * k / count)
    if count % 2 == 0:
        transform.imag[-1] = 0.0
    transform.setflags(write=False)
    return transform


@lru_cache(maxsize=64)
def _slope_weights(count: int) -> np.ndarray:
    """Weights w on the real view (Re, Im, Re, Im, ...) of rfft(y) with w . rfft(y) equal to
    the least-squares slope per sample of y (cached, read-only).

    Parseval's relation for real series, sum_j c_j y_j = (1/N) sum_k C_k conj(Y_k) over all N
    harmonics, folded onto k = 0..N//2 (conjugate pairs counted twice, k = 0 and the Nyquist
    harmonic of even N once), with C = rfft(c) of :func:`_centred_transform` (C_0 = 0, so the
    mean does not enter), divided by sum_j c_j^2 = N (N^2 - 1) / 12: the slope of
    :func:`profiles.spectral.preprocess.line_slope`, from the transform instead of a second
    pass over the samples (as accurate: tested against numpy.polyfit).
    """
    transform = _centred_transform(count)
    fold = np.full(transform.size, 2.0)
    if count % 2 == 0:
        fold[-1] = 1.0
    weights = np.empty(2 * transform.size)
    weights[0::2] = fold * transform.real
    weights[1::2] = fold * transform.imag
    weights /= count * (count * count - 1) / 12.0 * count
    weights.setflags(write=False)
    return weights


#: Most columns outside the common core of the bands that _band_sums adds one by one.
_BAND_EDGE_COLUMNS = 48
# Elements handled per block in the finishing pass: about 2 MB of complex numbers, so that
# each block stays in cache while it is corrected, squared and scaled; as large as a chunk
# below, so that a chunk is finished in one block (fewer calls, each on more numbers).
_BLOCK = 131072
# Coefficients per transform when only the variances are wanted: many short series are
# transformed a chunk of rows at a time into one buffer of about 2 MB, and finished while
# that chunk is still in cache, instead of writing the whole transform out to memory first.
_CHUNK = 131072
# numpy >= 2 lets rfft write into a buffer given.
_RFFT_OUT = np.lib.NumpyVersion(np.__version__) >= "2.0.0"


def _spectrum(
    values: np.ndarray, detrend: Detrend, taper: Taper, *, as_coefficients: bool = False
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Detrend, taper and transform along the last axis; harmonic variances.

    Returns the rfft Z of the preprocessed series (with ``as_coefficients``, scaled in place
    to Z * 2 / (N sqrt(w2)) = a_k - i b_k, before the edge rows are fixed; None without it
    and without a taper, where :func:`_untapered_variances` does the work), the harmonic
    variances, the means and the slopes per sample; w2 is the taper's mean square.

    With a taper, the series is detrended, tapered and transformed. Without one, the values
    are transformed as they are and the mean and line are removed from the transform, which
    is linear: rfft(y - m - s c) = rfft(y) - m N delta_k0 - s rfft(c), with rfft(c) cached
    per N. That is the same arithmetic as detrending first, without a pass over the data and
    a new array; the mean is Z_0 / N, and a NaN or infinity in a series shows in its Z_0, so
    the finiteness check costs nothing here.
    """
    check_option(detrend, Detrend, what="detrend")
    count = values.shape[-1]
    weights = taper_weights(taper, count)
    correction = None
    if weights is not None:
        check_finite(values)
        residual, mean, slope = remove_trend(values, detrend)
        residual *= weights
        coefficients = np.fft.rfft(residual, axis=-1)
        power_norm = float(np.mean(weights**2))
    elif not as_coefficients:
        variances, mean, slope = _untapered_variances(values, detrend)
        return None, variances, mean, slope
    else:
        coefficients = np.fft.rfft(values, axis=-1)
        if not np.all(np.isfinite(coefficients[..., 0])):
            check_finite(values)
        mean = coefficients[..., 0].real / count
        coefficients[..., 0] = 0.0
        slope = np.zeros_like(mean)
        if detrend == "linear":
            slope = correction = line_slope(values)
        power_norm = 1.0
    scale = 2.0 / (count * np.sqrt(power_norm)) if as_coefficients else None
    variances = _finish(coefficients, count, power_norm, correction, scale)
    return coefficients, variances, mean, slope


def _untapered_variances(
    values: np.ndarray,
    detrend: Detrend,
    known: np.ndarray | None = None,
    *,
    sums: _Sums | None = None,
    scaled: bool = True,
    keep: bool = True,
):
    """Variances, means and slopes of untapered series, transformed a chunk of rows at a time.

    The arithmetic of :func:`_spectrum` without a taper (the mean and line removed in the
    transform); only the order of the work differs: each chunk of about ``_CHUNK``
    coefficients is transformed into one reused buffer and finished at once. ``known``:
    slopes given by the caller (linear detrend), else computed per chunk. ``sums``: the
    per-series sums of :class:`DetrendedHarmonics`, formed per chunk while it is in cache.
    Without ``scaled``, the first item is the power of :func:`_finish` (the variances are it
    times 2 / (N (N - 1))); without ``keep``, it is None: each chunk is finished in one
    reused buffer, and nothing as large as the transform is written to memory.
    """
    count = values.shape[-1]
    width = count // 2 + 1
    flat = values.reshape(-1, count)
    rows = flat.shape[0]
    chunk = max(1, _CHUNK // width)
    variances = np.empty((rows, width)) if keep else np.empty((min(chunk, rows), width))
    mean = np.empty(rows)
    slope = np.zeros(rows) if known is None else known.reshape(rows)
    buffer = np.empty((min(chunk, rows), width), dtype=np.complex128)
    # One buffer for the finishing pass of every chunk, of the block that pass works on.
    scratch = np.empty((min(chunk, rows, max(1, _BLOCK // width)), min(width, _BLOCK)), dtype=np.complex128)
    for start in range(0, rows, chunk):
        part = flat[start : start + chunk]
        if _RFFT_OUT:
            transform = np.fft.rfft(part, axis=-1, out=buffer[: part.shape[0]])
        else:
            transform = np.fft.rfft(part, axis=-1)
        here = slice(start, start + part.shape[0])
        np.divide(transform[:, 0].real, count, out=mean[here])
        if not np.isfinite(mean[here]).all():
            check_finite(values)
        transform[:, 0] = 0.0
        correction = None
        if detrend == "linear" and known is None:  # from the transform: no pass over the samples
            slope[here] = correction = transform.view(np.float64) @ _slope_weights(count)
        elif detrend == "linear":
            correction = slope[here]
        target = variances[here] if keep else variances[: part.shape[0]]
        done = _finish(transform, count, 1.0, correction, None, out=target, scaled=scaled, scratch=scratch,
                       consumed=True)
        if sums is not None:
            sums.add(done, here, keep=keep)
    shape = values.shape[:-1]
    return (variances.reshape(*shape, width) if keep else None), mean.reshape(shape), slope.reshape(shape)


class _Sums:
    """The per-series sums of :class:`DetrendedHarmonics`, formed chunk by chunk (private).

    In the units of the chunks (power or variances); :meth:`result` scales them. The totals
    and the circular lag-1 sums are matrix-vector products (BLAS); the band sums are those of
    :func:`_band_sums`; the peak is an ``argmax`` over whole rows (:func:`_argmax_between`).
    """

    def __init__(self, rows: int, count: int, *, peak_from: int, band):
        width = count // 2 + 1
        self.count, self.peak_from, self.top = count, peak_from, (count - 1) // 2
        self.cosine = np.cos(2.0 * np.pi * np.arange(1, width) / count)
        self.ones = np.ones(width - 1)
        self.total, self.circular, self.tested, self.peak_value = (np.empty(rows) for _ in range(4))
        self.peak = np.empty(rows, dtype=np.int64)
        self.band = None if band is None else tuple(np.reshape(edge, rows) for edge in band)
        self.band_sum = None if band is None else np.zeros(rows)
        self.columns = self.kept = None
        if band is not None and np.any(self.band[1] >= self.band[0]):
            # Where the bands of all series span few columns, those columns are kept chunk by
            # chunk and summed once at the end (fewer, larger array operations).
            reach = self.band[1] >= self.band[0]
            low, high = int(self.band[0][reach].min()), int(self.band[1][reach].max()) + 1
            if (high - low) * 4 <= width:
                self.columns = slice(low, high)
                self.kept = np.empty((rows, high - low))

    def add(self, done: np.ndarray, here: slice, *, keep: bool) -> None:
        above = done[:, 1:]
        np.matmul(above, self.ones, out=self.total[here])
        np.matmul(above, self.cosine, out=self.circular[here])
        if self.count % 2 == 0:  # Fisher's m leaves out the Nyquist harmonic of even N
            np.subtract(self.total[here], done[:, -1], out=self.tested[here])
        else:
            self.tested[here] = self.total[here]
        if self.kept is not None:
            self.kept[here] = done[:, self.columns]
        elif self.band is not None:
            self.band_sum[here] = _band_sums(done, self.band[0][here], self.band[1][here])
        _argmax_between(done, self.peak_from, self.top, out=self.peak[here], restore=keep)
        self.peak_value[here] = done[np.arange(done.shape[0]), self.peak[here]]

    def result(self, shape: tuple, factor: float) -> dict:
        """The sums as variances (``factor``: what turns the chunks' units into variances)."""
        if self.kept is not None:
            offset = self.columns.start
            self.band_sum = _band_sums(self.kept, self.band[0] - offset, self.band[1] - offset)
        sums = {"total_variance": self.total, "circular_lag1": self.circular,
                "tested_variance": self.tested, "peak_variance": self.peak_value,
                "band_variance": self.band_sum}
        scaled = {name: None if value is None else (value * factor).reshape(shape)
                  for name, value in sums.items()}
        return {**scaled, "peak_harmonic": self.peak.reshape(shape)}


def _band_sums(variances: np.ndarray, first: np.ndarray, last: np.ndarray) -> np.ndarray:
    """Sum of ``variances[i, first_i : last_i + 1]`` for every row i (0 where last_i < first_i).

    Neighbouring series have nearly the same band, so the sum is taken as the columns every
    band holds (one slice, summed along the rows) plus, column by column, the few that only
    some bands reach; bands with no column in common, or many columns not, are summed as
    their union, masked.
    """
    rows = slice(None) if np.all(last >= first) else np.flatnonzero(last >= first)
    sums = np.zeros(variances.shape[0])
    if isinstance(rows, np.ndarray) and rows.size == 0:
        return sums
    part = variances[rows]
    first, last = first[rows, np.newaxis], last[rows, np.newaxis]
    low, high = int(first.min()), int(last.max()) + 1
    core_first, core_last = int(first.max()), int(last.min()) + 1
    if core_first < core_last and (core_first - low) + (high - core_last) <= _BAND_EDGE_COLUMNS:
        total = part[:, core_first:core_last].sum(axis=1)
        first, last = first[:, 0], last[:, 0]
        for k in range(low, core_first):  # left of the core: in the bands that start early enough
            total += np.where(first <= k, part[:, k], 0.0)
        for k in range(core_last, high):  # right of it: in the bands that end late enough
            total += np.where(last >= k, part[:, k], 0.0)
    else:
        columns = np.arange(low, high)
        total = np.add.reduce(part[:, low:high], axis=1, where=(columns >= first) & (columns <= last))
    sums[rows] = total
    return sums


def _argmax_between(variances: np.ndarray, first: int, last: int, *, out: np.ndarray,
                    restore: bool = True) -> None:
    """Column of the largest entry among columns first..last of each row (the first such).

    The columns outside are set to -1 (below any variance) while ``argmax`` runs over whole
    rows, and then put back if ``restore``: ``argmax`` of a column slice would first copy
    the slice.
    """
    outside = (slice(0, first), slice(last + 1, None))
    saved = [variances[:, columns].copy() for columns in outside] if restore else ()
    for columns in outside:
        variances[:, columns] = -1.0
    np.argmax(variances, axis=1, out=out)
    for columns, values in zip(outside, saved, strict=False):
        variances[:, columns] = values


def _finish(
    coefficients: np.ndarray,
    count: int,
    power_norm: float,
    slope: np.ndarray | None,
    scale: float | None,
    *,
    out: np.ndarray | None = None,
    scaled: bool = True,
    scratch: np.ndarray | None = None,
    consumed: bool = False,
) -> np.ndarray:
    """One blocked pass over the transform: remove the line, form the variances, scale.

    Z_k -= slope * rfft(c)_k (if ``slope`` is given), then
    s_k^2 = 2 |Z_k|^2 / (N (N - 1) w2) for 0 < k < N/2 and half that at k = 0 and at
    k = N/2 (N even), w2 the taper's mean square, then Z_k *= scale (if given). Without
    ``scaled``, the power |Z_k|^2 (halved at the same two harmonics) instead of s_k^2: the
    variances are that times 2 / (N (N - 1) w2), the same numbers (halving is exact). Done in
    blocks of about 2 MB so that every block is read from memory once, with the
    intermediate products in one buffer (``scratch`` if large enough, else made once);
    |Z|^2 is Re^2 + Im^2, squared on the real view and summed in pairs. The line is removed
    in place, Z_k of every row of a block less that row's slope times rfft(c)_k: one rank-1
    update of the block's real view (BLAS ``dger``, which reads and writes the block once; a
    real slope times a complex number is two real products), so the transform given holds
    the corrected coefficients afterwards, unless ``consumed`` (no ``scale``): then it is
    overwritten by the squares.
    """
    width = coefficients.shape[-1]
    flat = coefficients.reshape(-1, width)
    variances = np.empty(coefficients.shape) if out is None else out
    out = variances.reshape(-1, width)
    factor = 2.0 / (count * (count - 1) * power_norm)
    line = _centred_transform(count).view(np.float64) if slope is not None else None
    slopes = np.ascontiguousarray(np.reshape(slope, -1), dtype=np.float64) if slope is not None else None
    rows_per_block = max(1, _BLOCK // width)
    columns_per_block = min(width, _BLOCK)
    shape = (min(rows_per_block, flat.shape[0]), columns_per_block)
    if scratch is None or scratch.shape[0] < shape[0] or scratch.shape[1] < shape[1]:
        scratch = np.empty(shape, dtype=np.complex128)
    buffer = scratch
    for row in range(0, flat.shape[0], rows_per_block):
        rows = slice(row, row + rows_per_block)
        for column in range(0, width, _BLOCK):
            columns = slice(column, column + _BLOCK)
            part = flat[rows, columns]
            scratch = buffer[: part.shape[0], : part.shape[1]]
            pairs = part.view(np.float64)  # (Re, Im) of each coefficient, side by side
            if line is not None:
                reach = line[2 * column : 2 * columns.stop]
                _remove_line(pairs, slopes[rows], reach, scratch.view(np.float64))
            target = out[rows, columns]
            # Squared in place where the coefficients are not wanted afterwards (a smaller
            # working set), else in the buffer.
            squares = pairs if consumed and scale is None else scratch.view(np.float64)
            np.square(pairs, out=squares)
            np.add(squares[:, 0::2], squares[:, 1::2], out=target)
            if scaled:
                target *= factor
            if scale is not None:
                part *= scale
    variances[..., 0] *= 0.5
    if count % 2 == 0:
        variances[..., -1] *= 0.5
    return variances


def _remove_line(pairs: np.ndarray, slopes: np.ndarray, line: np.ndarray, scratch: np.ndarray) -> None:
    """pairs[i, :] -= slopes[i] * line, in place (real views of complex rows).

    A C-contiguous block goes to BLAS ``dger`` as its transpose (Fortran order, so updated
    in place); any other block is done with numpy in ``scratch``, of the block's shape.
    """
    if pairs.flags.c_contiguous:
        from scipy.linalg.blas import dger

        updated = dger(-1.0, line, slopes, a=pairs.T, overwrite_a=1)
        if not np.may_share_memory(updated, pairs):  # not updated in place: copy back
            pairs[...] = updated.T
        return
    np.multiply(slopes[:, np.newaxis], line, out=scratch)
    pairs -= scratch


def harmonic_variances(
    values: object, *, detrend: Detrend = "linear", taper: Taper = None
) -> np.ndarray:
    """Variance carried by each Fourier harmonic, for one or many series at once.

    The array-level core of :func:`harmonic_table`: one batched real FFT along the last
    axis, no per-series loop, for example for thousands of along-track windows.

    Parameters
    ----------
    values : array_like, shape (..., N)
        Uniformly spaced samples, series along the last axis, N >= 3, all finite.
    detrend : {"linear", "mean"}
        Removed from every series before the transform; the mean is always removed.
    taper : str or tuple, optional
        A window of :func:`scipy.signal.get_window` (periodic form), applied after
        detrending. The variances are divided by the taper's mean square, mean(w^2), so
        that they still add up to about the variance of the series; a line component's
        variance is then spread over the taper's main lobe.

    Returns
    -------
    ndarray, shape (..., N//2 + 1)
        s_k^2 in field units squared, k = 0..N//2:
        s_k^2 = N/(2(N-1)) (a_k^2 + b_k^2), and N/(N-1) a_k^2 at k = 0 and at the Nyquist
        harmonic of even N (coefficients in the 1/N convention there). Entry 0 is the
        variance left at k = 0 after preprocessing: zero to rounding without a taper, the
        taper's leakage of the residual's mean with one. Without a taper the entries k >= 1
        add up to the sample variance (N - 1 denominator) of the detrended series exactly;
        with one, all entries add up to sum((w y)^2) / ((N - 1) mean(w^2)).

    Examples
    --------
    >>> import numpy as np
    >>> y = np.cos(2 * np.pi * 3 * np.arange(16) / 16)
    >>> v = harmonic_variances(y, detrend="mean")
    >>> int(np.argmax(v)), round(float(v.sum()), 12) == round(float(y.var(ddof=1)), 12)
    (3, True)
    """
    array = as_values(values, min_length=_MIN_SAMPLES, batched=True, finite=False)
    return _spectrum(array, detrend, taper)[1]


@dataclass(frozen=True)
class DetrendedHarmonics:
    """Untapered harmonic variances of many series, with what the detrending removed.

    For one series of shape (N,) the per-series attributes are scalars (0-d arrays); for a
    batch (..., N) they have shape (...). The sums below are formed while each chunk of
    variances is still in cache, which for thousands of along-track windows is several
    times cheaper than passes over the finished array.

    Attributes
    ----------
    power : ndarray, shape (..., N//2 + 1), or None
        |Z_k|^2 of the DFT Z of each detrended series, halved at k = 0 and at the Nyquist
        harmonic of even N, field units squared: the variances before their common factor.
        None when not kept (``keep_power=False``).
    variance : ndarray, shape (..., N//2 + 1)
        s_k^2 = power * ``variance_factor``, field units squared, as
        :func:`harmonic_variances` without a taper (formed on first use, from ``power``).
    variance_factor : float
        2 / (N (N - 1)).
    mean : ndarray, shape (...)
        Mean of every series, field units.
    slope : ndarray, shape (...)
        Slope of the removed least-squares line, field units per sample (0 for ``"mean"``).
    first, last : ndarray, shape (...)
        The detrended series' first and last values, r_0 = y_0 - mean + slope (N - 1)/2 and
        r_{N-1} = y_{N-1} - mean - slope (N - 1)/2.
    total_variance : ndarray, shape (...)
        sum_{k>=1} s_k^2: the sample variance of each detrended series (Parseval).
    circular_lag1 : ndarray, shape (...)
        sum_{k>=1} s_k^2 cos(2 pi k / N), which equals the circular lag-1 sum
        sum_j r_j r_{(j+1) mod N} / (N - 1) of the detrended series r (Wiener-Khinchin
        relation of the DFT; common practice).
    peak_harmonic : ndarray of int, shape (...)
        The harmonic with the largest variance among k = ``peak_from``..floor((N - 1)/2)
        (the Nyquist harmonic of even N left out, as in Fisher's test).
    peak_variance : ndarray, shape (...)
        Its variance.
    tested_variance : ndarray, shape (...)
        sum_{k=1}^{m} s_k^2, m = floor((N - 1)/2): the denominator of Fisher's g (the
        Nyquist harmonic of even N left out).
    band_variance : ndarray, shape (...), or None
        sum of s_k^2 over the band of harmonics asked for each series (``band``), else None.
    peak_from : int
        Lowest harmonic of that search.
    n : int
        Samples per series N.
    detrend : str
        ``"linear"`` or ``"mean"``.
    """

    power: np.ndarray | None = field(repr=False)
    mean: np.ndarray = field(repr=False)
    slope: np.ndarray = field(repr=False)
    first: np.ndarray = field(repr=False)
    last: np.ndarray = field(repr=False)
    total_variance: np.ndarray = field(repr=False)
    circular_lag1: np.ndarray = field(repr=False)
    peak_harmonic: np.ndarray = field(repr=False)
    peak_variance: np.ndarray = field(repr=False)
    tested_variance: np.ndarray = field(repr=False)
    band_variance: np.ndarray | None = field(repr=False)
    peak_from: int
    n: int
    detrend: str

    @property
    def variance_factor(self) -> float:
        """2 / (N (N - 1)): s_k^2 = power_k times this."""
        return 2.0 / (self.n * (self.n - 1))

    @cached_property
    def variance(self) -> np.ndarray:
        """s_k^2, field units squared (power times ``variance_factor``)."""
        if self.power is None:
            raise InputError("the harmonics' power was not kept (keep_power=False): no variances")
        return self.power * self.variance_factor

    def to_frame(self):
        """One row per series: ``mean``, ``slope_per_sample``, ``first``, ``last``,
        ``total_variance``, ``circular_lag1`` (field units, per sample, squared) and
        ``peak_harmonic``."""
        import pandas as pd

        return pd.DataFrame(
            {
                "mean": np.ravel(self.mean),
                "slope_per_sample": np.ravel(self.slope),
                "first": np.ravel(self.first),
                "last": np.ravel(self.last),
                "total_variance": np.ravel(self.total_variance),
                "circular_lag1": np.ravel(self.circular_lag1),
                "peak_harmonic": np.ravel(self.peak_harmonic),
            }
        )

    def __str__(self) -> str:
        count = int(np.size(self.total_variance))
        return (
            f"Harmonic variances of {count} series of {self.n} samples (detrend {self.detrend}), "
            f"{self.n // 2 + 1} harmonics each; median total variance "
            f"{float(np.median(self.total_variance)):.6g}"
        )


def detrended_harmonics(
    values: object,
    *,
    detrend: Detrend = "linear",
    slope: object = None,
    peak_from: int = 1,
    band: tuple[object, object] | None = None,
    keep_power: bool = True,
) -> DetrendedHarmonics:
    """Untapered harmonic variances of one or many series, with the removed mean and line.

    The same single batched FFT as :func:`harmonic_variances` (the mean and line removed in
    the transform), plus the means, slopes, the detrended series' end values and the sums of
    :class:`DetrendedHarmonics`, formed chunk by chunk while the variances are in cache.

    Parameters
    ----------
    values : array_like, shape (..., N)
        Uniformly spaced samples, series along the last axis, N >= 3, all finite. A strided
        view (e.g. :func:`numpy.lib.stride_tricks.sliding_window_view`) is read in place.
    detrend : {"linear", "mean"}
        Removed from every series.
    slope : array_like, shape (...), optional
        The least-squares slopes of the series (field units per sample), when already known,
        e.g. from :func:`profiles.spectral.preprocess.window_slopes` for overlapping
        windows; used for ``detrend="linear"`` instead of computing them here.
    peak_from : int
        Lowest harmonic searched for ``peak_harmonic`` (1 by default; along-track windows
        leave out k = 1, which a detrend and any regional field confuse).
    band : (array_like of int, array_like of int), optional
        First and last harmonic of a band per series, shape (...) each: ``band_variance`` is
        the sum of s_k^2 over k = first..last (0 where last < first).
    keep_power : bool
        Keep the power of every harmonic (default). Without it ``power`` is None and only
        the per-series results are formed: for many series, nothing as large as the
        transform is written to memory.

    Returns
    -------
    DetrendedHarmonics
    """
    check_option(detrend, Detrend, what="detrend")
    array = as_values(values, min_length=_MIN_SAMPLES, batched=True, finite=False)
    count = array.shape[-1]
    if isinstance(peak_from, bool) or not isinstance(peak_from, int | np.integer) \
            or not 1 <= peak_from <= (count - 1) // 2:
        raise InputError(f"peak_from: {peak_from!r} must be a harmonic 1..{(count - 1) // 2}")
    if slope is not None:
        slope = np.asarray(slope, dtype=np.float64)
        if detrend != "linear" or slope.shape != array.shape[:-1]:
            raise InputError(
                f"slope: {slope.shape} slopes given for series of shape {array.shape[:-1]} "
                f"(detrend {detrend!r}); give one per series, for detrend='linear' only"
            )
    shape = array.shape[:-1]
    if band is not None:
        band = tuple(np.broadcast_to(np.asarray(edge), shape) for edge in band)
        if len(band) != 2 or any(not np.issubdtype(edge.dtype, np.integer) for edge in band) \
                or np.any((band[0] < 0) & (band[1] >= band[0])) \
                or np.any((band[1] > count // 2) & (band[1] >= band[0])):
            raise InputError(f"band: give (first, last) harmonics 0..{count // 2} per series")
    sums = _Sums(int(np.prod(shape)), count, peak_from=int(peak_from), band=band)
    power, mean, slope = _untapered_variances(array, detrend, slope, sums=sums, scaled=False, keep=keep_power)
    half = 0.5 * (count - 1) * slope
    return DetrendedHarmonics(
        power=power,
        mean=np.asarray(mean),
        slope=np.asarray(slope),
        first=np.asarray(array[..., 0] - mean + half),
        last=np.asarray(array[..., -1] - mean - half),
        **sums.result(shape, 2.0 / (count * (count - 1))),
        peak_from=int(peak_from),
        n=int(count),
        detrend=str(detrend),
    )


@dataclass(frozen=True)
class HarmonicTable:
    """Fourier harmonics of one uniformly spaced segment.

    Row k (k = 0..N//2) describes the harmonic with k cycles over the record length N dx.
    The coefficients are those of the detrended (and, if asked, tapered) series except the
    one at k = 0, which holds the mean of the input values.

    Attributes
    ----------
    coefficients : ndarray of complex
        a_k - i b_k, field units: the DFT Z_k of the preprocessed series times 2/N (times
        1/N at k = 0 and at the Nyquist harmonic), and the mean at k = 0.
    variance : ndarray
        s_k^2, field units squared (see :func:`harmonic_variances`).
    n : int
        Number of samples N.
    spacing : float
        Sample spacing dx, metres.
    mean : float
        Mean of the input values, field units (removed before the transform).
    trend : float
        Slope of the removed least-squares line, field units per metre (0 for
        ``detrend="mean"``).
    detrend : str
        ``"linear"`` or ``"mean"``.
    taper : str
        Taper name, ``"none"`` if untapered.
    harmonic : ndarray of int
        Harmonic number k = 0..N//2.
    wavenumber : ndarray
        k / (N dx), cycles per metre.
    wavelength : ndarray
        1 / wavenumber, metres; ``inf`` for k = 0.
    cosine : ndarray
        a_k, field units (the real part of ``coefficients``).
    sine : ndarray
        b_k, field units (zero at k = 0 and at the Nyquist harmonic).
    amplitude : ndarray
        sqrt(a_k^2 + b_k^2), field units.
    phase_deg : ndarray
        atan2(b_k, a_k) in degrees, in (-180, 180]: harmonic k is
        A_k cos(2 pi k j / N - phase), with j = 0 at the first sample.
    variance_fraction : ndarray
        s_k^2 divided by the total variance (sum of all entries): the share of the variance,
        0..1.
    total_variance : float
        Sum of the variances, field units squared; for an untapered series, the sample
        variance of the detrended values.
    dominant_k : int
        Harmonic (k >= 1) with the largest variance.
    length : float
        Record length N dx, metres.

    Notes
    -----
    Everything after ``taper`` is derived from the stored fields on first access and then
    kept (the arctangent alone costs about two thirds of an FFT of the same length).
    """

    coefficients: np.ndarray = field(repr=False)
    variance: np.ndarray = field(repr=False)
    n: int
    spacing: float
    mean: float
    trend: float
    detrend: str
    taper: str

    @property
    def cosine(self) -> np.ndarray:
        """a_k, field units."""
        return self.coefficients.real

    @cached_property
    def sine(self) -> np.ndarray:
        """b_k, field units."""
        # 0.0 - x rather than -x: no negative zeros, so the phase stays in (-180, 180].
        return 0.0 - self.coefficients.imag

    @cached_property
    def harmonic(self) -> np.ndarray:
        """Harmonic numbers k = 0..N//2."""
        return np.arange(self.coefficients.shape[-1])

    @cached_property
    def wavenumber(self) -> np.ndarray:
        """k / (N dx), cycles per metre."""
        return self.harmonic / (self.n * self.spacing)

    @cached_property
    def wavelength(self) -> np.ndarray:
        """1 / wavenumber in metres; ``inf`` at k = 0."""
        with np.errstate(divide="ignore"):
            return 1.0 / self.wavenumber

    @cached_property
    def amplitude(self) -> np.ndarray:
        """sqrt(a_k^2 + b_k^2), field units."""
        return np.abs(self.coefficients)

    @cached_property
    def phase_deg(self) -> np.ndarray:
        """atan2(b_k, a_k) in degrees."""
        return np.degrees(np.arctan2(self.sine, self.cosine))

    @cached_property
    def total_variance(self) -> float:
        """Sum of the harmonic variances, field units squared."""
        return float(self.variance.sum())

    @cached_property
    def variance_fraction(self) -> np.ndarray:
        """Share of the total variance carried by each harmonic."""
        total = self.total_variance
        if total == 0.0:
            return np.zeros_like(self.variance)
        return self.variance / total

    @property
    def dominant_k(self) -> int:
        """Harmonic number (k >= 1) with the largest variance."""
        return int(np.argmax(self.variance[1:])) + 1

    @property
    def length(self) -> float:
        """Record length N dx, metres (the wavelength of harmonic 1)."""
        return self.n * self.spacing

    def to_frame(self):
        """One row per harmonic, units in the column names.

        Columns: ``harmonic``, ``wavenumber_per_km``, ``wavelength_km``, ``cosine``,
        ``sine``, ``amplitude``, ``phase_deg`` (field units for the coefficients),
        ``variance`` (field units squared), ``variance_fraction``.
        """
        import pandas as pd

        return pd.DataFrame(
            {
                "harmonic": self.harmonic,
                "wavenumber_per_km": self.wavenumber * 1000.0,
                "wavelength_km": self.wavelength / 1000.0,
                "cosine": self.cosine,
                "sine": self.sine,
                "amplitude": self.amplitude,
                "phase_deg": self.phase_deg,
                "variance": self.variance,
                "variance_fraction": self.variance_fraction,
            }
        )

    def __str__(self) -> str:
        lines = [
            f"Harmonic table: {self.n} samples at {self.spacing:g} m "
            f"(record {self.length / 1000.0:g} km), detrend={self.detrend}, "
            f"taper={self.taper}",
            f"  mean {self.mean:.6g}, trend {self.trend * 1000.0:.6g} per km, "
            f"total variance {self.total_variance:.6g}",
            "  largest harmonics:",
            f"  {'k':>6} {'wavelength_km':>14} {'amplitude':>12} {'phase_deg':>10} "
            f"{'variance':>12} {'share':>7}",
        ]
        order = np.argsort(self.variance[1:])[::-1][:10] + 1
        for k in order:
            lines.append(
                f"  {int(k):>6} {self.wavelength[k] / 1000.0:>14.6g} "
                f"{self.amplitude[k]:>12.6g} {self.phase_deg[k]:>10.2f} "
                f"{self.variance[k]:>12.6g} {100.0 * self.variance_fraction[k]:>6.2f}%"
            )
        return "\n".join(lines)


def harmonic_table(
    values: object, *, spacing: float, detrend: Detrend = "linear", taper: Taper = None
) -> HarmonicTable:
    """Table of the Fourier harmonics of one uniformly spaced segment.

    Parameters
    ----------
    values : array_like, shape (N,)
        Samples at uniform spacing, N >= 3, all finite, in field units.
    spacing : float
        Sample spacing dx in metres.
    detrend : {"linear", "mean"}
        ``"linear"`` (default) removes the least-squares line (a regional gradient, which
        would otherwise leak into the longest wavelengths); ``"mean"`` removes the mean
        only. The mean is always removed and reported; the slope is reported as ``trend``.
    taper : str or tuple, optional
        No taper by default (the harmonic analysis of Fourier series). A name from
        :mod:`scipy.signal.windows` (periodic form) tapers the residual; coefficients are
        then divided by sqrt(mean(w^2)) and variances by mean(w^2) so that the variances
        still add up to about the variance of the series.

    Returns
    -------
    HarmonicTable
        Rows k = 0..N//2; see :func:`harmonic_variances` for the variance convention.

    Notes
    -----
    a_k = (2/N) Re Z_k and b_k = -(2/N) Im Z_k with Z = rfft(y); the 1/N factor at k = 0
    and k = N/2 keeps the Fourier series an exact reconstruction. Formulas and sources:
    docs/methods-spectral.md, "Harmonic table".

    Examples
    --------
    >>> import numpy as np
    >>> j = np.arange(100)
    >>> y = 3.0 * np.cos(2 * np.pi * 5 * j / 100 - 0.5)
    >>> table = harmonic_table(y, spacing=250.0, detrend="mean")
    >>> k = table.dominant_k
    >>> k, round(float(table.amplitude[k]), 9), round(float(table.phase_deg[k]), 6)
    (5, 3.0, 28.64789)
    >>> float(table.wavelength[k])
    5000.0
    """
    dx = check_spacing(spacing)
    array = as_values(values, min_length=_MIN_SAMPLES, finite=False)
    count = array.shape[-1]
    # The coefficients come back as a_k - i b_k in the 2/N convention; then the edge rows.
    coefficients, variance, mean, slope = _spectrum(array, detrend, taper, as_coefficients=True)
    coefficients[0] = float(mean)
    if count % 2 == 0:
        coefficients[-1] = 0.5 * coefficients[-1].real
    return HarmonicTable(
        coefficients=coefficients,
        variance=variance,
        n=count,
        spacing=dx,
        mean=float(mean),
        trend=float(slope) / dx,
        detrend=str(detrend),
        taper=taper_label(taper),
    )
