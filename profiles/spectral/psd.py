"""Power spectral density of a uniformly spaced segment: periodogram, Welch and multitaper.

Density convention (one-sided, used everywhere in this module):

- ``Spectrum.psd`` is in field units squared per (cycle per metre); ``Spectrum.to_frame()``
  converts it to field units squared per (cycle per km), i.e. divides by 1000, in the column
  ``psd_per_cycle_per_km``.
- The k = 0 and (even segment length) Nyquist bins are not doubled; all others are.
- Parseval: sum(psd) * dk equals the variance of the preprocessed series with denominator N
  exactly for the periodogram, and approximately (in expectation) for Welch and multitaper.

Each estimator is built on a low-level function returning the tapered Fourier coefficients,
so that cross-spectra can reuse them:

- :func:`welch_coefficients` - one row of coefficients per Welch block;
- :func:`multitaper_coefficients` - one row per DPSS taper (the eigencoefficients), with the
  tapers' eigenvalues, and :func:`adaptive_weights` for Thomson's weights.

Both are scaled so that ``onesided * mean(|C|^2)`` (Welch) or the weighted mean over tapers
(multitaper) is the density, and a cross-spectrum of x and y is the same mean of
``conj(C_x) * C_y``. Formulas and sources: docs/methods-spectral.md.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..errors import InputError, SpacingError
from .harmonics import harmonic_variances
from .preprocess import (
    Detrend,
    Taper,
    as_values,
    check_option,
    check_probability,
    check_spacing,
    remove_trend,
    taper_label,
    taper_weights,
)
from .tapers import dpss_tapers

__all__ = [
    "ConfidenceFactors",
    "MultitaperCoefficients",
    "Spectrum",
    "WelchCoefficients",
    "adaptive_weights",
    "confidence_factors",
    "dpss_tapers",
    "multitaper_coefficients",
    "multitaper_psd",
    "periodogram",
    "welch_coefficients",
    "welch_dof",
    "welch_psd",
]

_METRES_PER_KM = 1000.0


# --------------------------------------------------------------------------------------------
# Confidence intervals
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class ConfidenceFactors:
    """Factors that turn a spectral estimate into its chi-square confidence interval.

    Attributes
    ----------
    lower, upper : ndarray
        nu / chi2_nu((1 + c)/2) and nu / chi2_nu((1 - c)/2): the interval is
        [lower * S, upper * S].
    dof : ndarray
        Equivalent degrees of freedom nu.
    confidence : float
        Confidence level c (e.g. 0.95).
    """

    lower: np.ndarray
    upper: np.ndarray
    dof: np.ndarray
    confidence: float


def confidence_factors(dof: object, *, confidence: float = 0.95) -> ConfidenceFactors:
    """Chi-square interval factors for spectral estimates with ``dof`` degrees of freedom.

    An estimate S with nu equivalent degrees of freedom satisfies nu S / S_true ~ chi2_nu
    (approximately), so the 100 c % interval is
    [nu S / chi2_nu((1 + c)/2), nu S / chi2_nu((1 - c)/2)] (Percival and Walden 1993,
    section 6.10; equation number from memory). ``dof`` may be non-integer.
    """
    from scipy.special import gammaincinv  # chi2_nu(q) = 2 P^-1(nu/2, q), as scipy.stats.chi2.ppf

    confidence = check_probability(confidence, what="confidence")
    nu = np.asarray(dof, dtype=np.float64)
    if np.any(~(nu > 0)):
        raise InputError("dof: degrees of freedom must be positive")
    return ConfidenceFactors(
        lower=nu / (2.0 * gammaincinv(nu / 2.0, 0.5 + confidence / 2.0)),
        upper=nu / (2.0 * gammaincinv(nu / 2.0, 0.5 - confidence / 2.0)),
        dof=nu,
        confidence=confidence,
    )


# --------------------------------------------------------------------------------------------
# The result
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Spectrum:
    """A one-sided power spectral density with its confidence interval.

    Attributes
    ----------
    wavenumber : ndarray
        Cycles per metre, from 0 to the Nyquist wavenumber 1/(2 dx) (or just below it).
    psd : ndarray
        Density, field units squared per (cycle/m); ``to_frame`` gives it per (cycle/km).
    lower, upper : ndarray
        Chi-square confidence bounds of ``psd`` at level ``confidence``, same units.
    dof : ndarray
        Equivalent degrees of freedom per bin (half at k = 0 and at the Nyquist bin).
    method : str
        ``"periodogram"``, ``"welch"`` or ``"multitaper"``.
    confidence : float
        Level of ``lower`` and ``upper``.
    spacing : float
        Sample spacing dx, metres.
    n : int
        Samples analysed.
    detrend : str
        What was removed (per Welch block for Welch).
    taper : str
        Taper name (``"dpss"`` for multitaper).
    resolution : float
        Bandwidth that separates two peaks, cycles per metre: 1/(N dx) for the periodogram,
        1/(segment length) for Welch, 2W = 2 NW/(N dx) for multitaper. Not the grid step.
    segment_length : float or None
        Welch block length, metres.
    overlap : float or None
        Welch overlap, fraction of a block.
    n_segments : int or None
        Welch blocks averaged.
    nw : float or None
        Multitaper time-bandwidth product NW.
    n_tapers : int or None
        DPSS tapers used.
    adaptive : bool or None
        Whether Thomson's adaptive weights were used.
    wavelength : ndarray
        1 / wavenumber, metres (``inf`` at k = 0).
    total_variance : float
        sum(psd) times the grid step: the variance the spectrum accounts for.
    """

    wavenumber: np.ndarray = field(repr=False)
    psd: np.ndarray = field(repr=False)
    lower: np.ndarray = field(repr=False)
    upper: np.ndarray = field(repr=False)
    dof: np.ndarray = field(repr=False)
    method: str
    confidence: float
    spacing: float
    n: int
    detrend: str
    taper: str
    resolution: float
    segment_length: float | None = None
    overlap: float | None = None
    n_segments: int | None = None
    nw: float | None = None
    n_tapers: int | None = None
    adaptive: bool | None = None

    @property
    def wavelength(self) -> np.ndarray:
        """1 / wavenumber, metres."""
        with np.errstate(divide="ignore"):
            return 1.0 / self.wavenumber

    @property
    def total_variance(self) -> float:
        """Integral of the density over wavenumber (rectangle rule on the grid)."""
        return float(self.psd.sum() * (self.wavenumber[1] - self.wavenumber[0]))

    def to_frame(self):
        """One row per wavenumber, units in the column names.

        Columns: ``wavenumber_per_km``, ``wavelength_km``, ``psd_per_cycle_per_km``,
        ``psd_lower_per_cycle_per_km``, ``psd_upper_per_cycle_per_km`` (field units squared
        per cycle/km) and ``dof``.
        """
        import pandas as pd

        return pd.DataFrame(
            {
                "wavenumber_per_km": self.wavenumber * _METRES_PER_KM,
                "wavelength_km": self.wavelength / _METRES_PER_KM,
                "psd_per_cycle_per_km": self.psd / _METRES_PER_KM,
                "psd_lower_per_cycle_per_km": self.lower / _METRES_PER_KM,
                "psd_upper_per_cycle_per_km": self.upper / _METRES_PER_KM,
                "dof": self.dof,
            }
        )

    def __str__(self) -> str:
        detail = ""
        if self.method == "welch":
            detail = (
                f", {self.n_segments} blocks of {self.segment_length / 1000.0:g} km, "
                f"overlap {self.overlap:.0%}"
            )
        elif self.method == "multitaper":
            weighting = "adaptive" if self.adaptive else "equal"
            detail = f", NW = {self.nw:g}, {self.n_tapers} tapers, {weighting} weights"
        peak = int(np.argmax(self.psd[1:])) + 1
        return "\n".join(
            [
                f"Spectrum ({self.method}{detail}), taper {self.taper}, detrend {self.detrend}",
                f"  {self.n} samples at {self.spacing:g} m; resolution "
                f"{self.resolution * 1000.0:.4g} cycles/km; {self.wavenumber.size} bins to "
                f"{self.wavenumber[-1] * 1000.0:.4g} cycles/km",
                f"  median dof {float(np.median(self.dof)):.3g}, {self.confidence:.0%} "
                f"interval factors {float(np.median(self.lower / self.psd.clip(1e-300))):.3g}"
                f"..{float(np.median(self.upper / self.psd.clip(1e-300))):.3g}",
                f"  peak at {self.wavenumber[peak] * 1000.0:.4g} cycles/km "
                f"(wavelength {self.wavelength[peak] / 1000.0:.4g} km), "
                f"{self.psd[peak] / 1000.0:.4g} per cycle/km; total variance "
                f"{self.total_variance:.4g}",
            ]
        )


def _bin_dof(dof: np.ndarray, count: int) -> np.ndarray:
    """Halve the degrees of freedom at k = 0 and at the Nyquist bin of an even length."""
    dof = np.array(dof, dtype=np.float64)
    dof[..., 0] *= 0.5
    if count % 2 == 0:
        dof[..., -1] *= 0.5
    return dof


def _onesided(count: int) -> np.ndarray:
    """Factor 2 for every rfft bin except k = 0 and the Nyquist bin of an even length."""
    factor = np.full(count // 2 + 1, 2.0)
    factor[0] = 1.0
    if count % 2 == 0:
        factor[-1] = 1.0
    return factor


def _finish(psd, dof, confidence, **kwargs) -> Spectrum:
    factors = confidence_factors(dof, confidence=confidence)
    return Spectrum(
        psd=psd,
        lower=psd * factors.lower,
        upper=psd * factors.upper,
        dof=factors.dof,
        confidence=factors.confidence,
        **kwargs,
    )


# --------------------------------------------------------------------------------------------
# Periodogram
# --------------------------------------------------------------------------------------------


def periodogram(
    values: object,
    *,
    spacing: float,
    detrend: Detrend = "linear",
    taper: Taper = None,
    confidence: float = 0.95,
) -> Spectrum:
    """One-sided periodogram density of one segment (no averaging).

    P_k = s_k^2 (N - 1) dx, with s_k^2 the harmonic variances of
    :func:`profiles.spectral.harmonic_variances`; equivalently
    P_k = 2 dx |Z_k|^2 / sum(w^2) (not doubled at k = 0 and N/2), the density of
    ``scipy.signal.periodogram``. Two degrees of freedom per bin (one at k = 0 and at the
    Nyquist bin): a single periodogram is not a consistent estimate, hence the wide interval.

    Parameters
    ----------
    values : array_like, shape (N,)
        Uniformly spaced samples, field units.
    spacing : float
        Sample spacing dx, metres.
    detrend : {"linear", "mean"}
        Removed before the transform.
    taper : str or tuple, optional
        Window from :mod:`scipy.signal.windows` (periodic form); none by default.
    confidence : float
        Level of the chi-square interval.

    Returns
    -------
    Spectrum
        psd in field units squared per (cycle/m).
    """
    dx = check_spacing(spacing)
    array = as_values(values, min_length=4)
    count = array.size
    psd = harmonic_variances(array, detrend=detrend, taper=taper) * ((count - 1) * dx)
    return _finish(
        psd,
        _bin_dof(np.full(psd.shape, 2.0), count),
        confidence,
        wavenumber=np.fft.rfftfreq(count, d=dx),
        method="periodogram",
        spacing=dx,
        n=count,
        detrend=str(detrend),
        taper=taper_label(taper),
        resolution=1.0 / (count * dx),
    )


# --------------------------------------------------------------------------------------------
# Welch (weighted overlapped segment averaging)
# --------------------------------------------------------------------------------------------


def welch_dof(weights: np.ndarray, *, shift: int, n_segments: int) -> float:
    """Equivalent degrees of freedom of a Welch estimate (Percival and Walden 1993, eq. 292b).

    nu = 2 N_B / (1 + 2 sum_{m=1}^{N_B-1} (1 - m/N_B) |sum_t h_t h_{t+m N_s}|^2),

    with h the taper normalised to sum(h^2) = 1, N_B blocks and a shift of N_s samples.
    For the periodic Hann taper at 50 % overlap the lag-1 sum is exactly 1/6 and higher lags
    vanish, so nu = 36 N_B^2 / (19 N_B - 1).

    Parameters
    ----------
    weights : ndarray
        The taper actually used (any normalisation).
    shift : int
        Samples between the starts of successive blocks.
    n_segments : int
        Blocks averaged.
    """
    h = np.asarray(weights, dtype=np.float64)
    h = h / np.sqrt(np.sum(h**2))
    total = 0.0
    for lag in range(1, n_segments):
        offset = lag * shift
        if offset >= h.size:
            break
        overlap_sum = float(np.dot(h[:-offset], h[offset:]))
        total += (1.0 - lag / n_segments) * overlap_sum**2
    return 2.0 * n_segments / (1.0 + 2.0 * total)


@dataclass(frozen=True)
class WelchCoefficients:
    """Tapered Fourier coefficients of every Welch block, the input of Welch spectra.

    Attributes
    ----------
    coefficients : ndarray of complex, shape (n_segments, L//2 + 1)
        C_b(k) = sqrt(dx / sum(w^2)) * rfft(w * detrended block b): |C|^2 is a two-sided
        density, so ``onesided * mean(|C|^2, axis=0)`` is the Welch density and
        ``onesided * mean(conj(C_x) * C_y, axis=0)`` the cross-spectral density of two
        channels on the same grid.
    onesided : ndarray, shape (L//2 + 1,)
        2, except 1 at k = 0 and at the Nyquist bin of even L.
    wavenumber : ndarray
        Cycles per metre, ``rfftfreq(L, dx)``.
    spacing : float
        dx, metres.
    segment_samples : int
        Block length L, samples.
    shift_samples : int
        Samples between block starts.
    n_segments : int
        Blocks N_B (trailing samples that do not fill a block are not used).
    taper : str
        Taper name.
    weights : ndarray
        The taper w (periodic form).
    segment_starts : ndarray
        Distance of each block's first sample from the first sample of the series, metres.
    dof : ndarray
        Equivalent degrees of freedom per bin, Percival and Walden (1993) eq. 292b, halved at
        k = 0 and the Nyquist bin.
    detrend : str
        Removed from every block before tapering.
    segment_length : float
        L dx, metres.
    overlap : float
        1 - shift/L.
    """

    coefficients: np.ndarray = field(repr=False)
    onesided: np.ndarray = field(repr=False)
    wavenumber: np.ndarray = field(repr=False)
    spacing: float
    segment_samples: int
    shift_samples: int
    n_segments: int
    taper: str
    weights: np.ndarray = field(repr=False)
    segment_starts: np.ndarray = field(repr=False)
    dof: np.ndarray = field(repr=False)
    detrend: str

    @property
    def segment_length(self) -> float:
        """Block length in metres."""
        return self.segment_samples * self.spacing

    @property
    def overlap(self) -> float:
        """Fraction of a block shared with the next one."""
        return 1.0 - self.shift_samples / self.segment_samples


def _shift(length: int, overlap: float) -> int:
    """Samples between block starts: L - round(overlap L)."""
    return length - round(overlap * length)


def _blocks_fit(count: int, length: int, overlap: float) -> int:
    """Number of whole blocks of ``length`` samples in ``count`` samples."""
    shift = _shift(length, overlap)
    if shift < 1:
        return 0
    return 1 + (count - length) // shift if count >= length else 0


def _too_few_blocks(count: int, length: int, overlap: float, dx: float, wanted: int) -> str:
    """The refusal of :func:`welch_coefficients`, naming the longest block that fits."""
    times = {1: "once", 2: "twice"}.get(wanted, f"{wanted} times")
    longest = int(count / (1.0 + (wanted - 1) * (1.0 - overlap))) + 2
    while longest > 4 and _blocks_fit(count, longest, overlap) < wanted:
        longest -= 1
    return (
        f"segment_length: blocks of {length * dx / 1000.0:g} km do not fit {times} in the "
        f"{count * dx / 1000.0:g} km record at {overlap:.0%} overlap; the longest block that "
        f"does, and so the longest wavelength resolved here, is {longest * dx / 1000.0:.4g} km "
        f"(use segment_length <= {longest * dx:.0f} m, or the multitaper estimate)"
    )


def welch_coefficients(
    values: object,
    *,
    spacing: float,
    segment_length: float,
    overlap: float = 0.5,
    taper: Taper = "hann",
    detrend: Detrend = "linear",
    min_blocks: int = 2,
) -> WelchCoefficients:
    """Tapered Fourier coefficients of overlapping blocks (Welch 1967).

    Parameters
    ----------
    values : array_like, shape (N,)
        Uniformly spaced samples, field units.
    spacing : float
        Sample spacing dx, metres.
    segment_length : float
        Block length in metres, rounded to L = round(segment_length / dx) samples. It sets
        the resolution 1/(L dx) and the longest wavelength resolved; choose it from the
        wavelengths wanted (two or more cycles per block), not from a sample count.
    overlap : float
        Fraction of a block shared with the next, 0 <= overlap < 1; the shift is
        L - round(overlap L) samples.
    taper : str or tuple
        Window from :mod:`scipy.signal.windows` (periodic form); Hann by default.
    detrend : {"linear", "mean"}
        Removed from every block before tapering (as ``scipy.signal.welch`` does).
    min_blocks : int
        Fewest blocks accepted (default 2, the fewest that make an average). A cross-spectrum
        that pools the blocks of several segments passes 1, or 0 to get an empty stack
        (shape (0, L//2 + 1), dof 0) from a segment shorter than one block.

    Returns
    -------
    WelchCoefficients

    Raises
    ------
    SpacingError
        If fewer than ``min_blocks`` blocks fit; the message gives the longest block, and so
        the longest wavelength, that ``min_blocks`` blocks allow.
    """
    from numpy.lib.stride_tricks import sliding_window_view

    if isinstance(min_blocks, bool) or not isinstance(min_blocks, int | np.integer) or min_blocks < 0:
        raise InputError(f"min_blocks: {min_blocks!r} must be a whole number >= 0")
    dx = check_spacing(spacing)
    array = as_values(values, min_length=max(1, 4 * int(min_blocks)))
    count = array.size
    try:
        overlap = float(overlap)
    except (TypeError, ValueError):
        raise InputError(f"overlap: {overlap!r} is not a number") from None
    if not 0.0 <= overlap < 1.0:
        raise InputError(f"overlap: {overlap!r} must be a fraction, 0 <= overlap < 1")
    try:
        length = round(float(segment_length) / dx)
    except (TypeError, ValueError, OverflowError):
        raise InputError(f"segment_length: {segment_length!r} is not a length in metres") from None
    if length < 4:
        raise SpacingError(
            f"segment_length: {segment_length!r} m is {length} samples at {dx:g} m spacing; "
            f"a block needs at least 4 samples ({4 * dx:g} m)"
        )
    n_segments = _blocks_fit(count, length, overlap)
    if n_segments < min_blocks:
        raise SpacingError(_too_few_blocks(count, length, overlap, dx, int(min_blocks)))
    shift = _shift(length, overlap)
    weights = taper_weights(taper, length)
    if weights is None:
        weights = np.ones(length)
    if n_segments:
        blocks = sliding_window_view(array, length)[::shift][:n_segments]
        residual, _, _ = remove_trend(blocks, detrend)
        residual *= weights
        coefficients = np.fft.rfft(residual, axis=-1)
        coefficients *= np.sqrt(dx / np.sum(weights**2))
    else:
        check_option(detrend, Detrend, what="detrend")
        coefficients = np.empty((0, length // 2 + 1), dtype=np.complex128)
    nu = welch_dof(weights, shift=shift, n_segments=n_segments)
    return WelchCoefficients(
        coefficients=coefficients,
        onesided=_onesided(length),
        wavenumber=np.fft.rfftfreq(length, d=dx),
        spacing=dx,
        segment_samples=length,
        shift_samples=shift,
        n_segments=n_segments,
        taper=taper_label(taper),
        weights=weights,
        segment_starts=np.arange(n_segments) * shift * dx,
        dof=_bin_dof(np.full(length // 2 + 1, nu), length),
        detrend=str(detrend),
    )


def welch_psd(
    values: object,
    *,
    spacing: float,
    segment_length: float,
    overlap: float = 0.5,
    taper: Taper = "hann",
    detrend: Detrend = "linear",
    confidence: float = 0.95,
) -> Spectrum:
    """Welch's averaged, tapered periodogram (Welch 1967) with chi-square bounds.

    P(k) = onesided_k * (1/N_B) sum_b |C_b(k)|^2 with the coefficients of
    :func:`welch_coefficients`; the same numbers as ``scipy.signal.welch`` with
    ``scaling="density"`` and fs = 1/dx. Degrees of freedom from the actual taper and shift
    (Percival and Walden 1993, eq. 292b; :func:`welch_dof`).

    Parameters
    ----------
    values, spacing, segment_length, overlap, taper, detrend
        See :func:`welch_coefficients`.
    confidence : float
        Level of the chi-square interval (default 0.95).

    Returns
    -------
    Spectrum
        psd in field units squared per (cycle/m).
    """
    blocks = welch_coefficients(
        values,
        spacing=spacing,
        segment_length=segment_length,
        overlap=overlap,
        taper=taper,
        detrend=detrend,
    )
    power = blocks.coefficients.real**2 + blocks.coefficients.imag**2
    psd = blocks.onesided * power.mean(axis=0)
    return _finish(
        psd,
        blocks.dof,
        confidence,
        wavenumber=blocks.wavenumber,
        method="welch",
        spacing=blocks.spacing,
        n=blocks.shift_samples * (blocks.n_segments - 1) + blocks.segment_samples,
        detrend=blocks.detrend,
        taper=blocks.taper,
        resolution=1.0 / blocks.segment_length,
        segment_length=blocks.segment_length,
        overlap=blocks.overlap,
        n_segments=blocks.n_segments,
    )


# --------------------------------------------------------------------------------------------
# Multitaper (Thomson 1982)
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class MultitaperCoefficients:
    """Eigencoefficients of one segment for the DPSS tapers, the input of multitaper spectra.

    Attributes
    ----------
    coefficients : ndarray of complex, shape (K, M//2 + 1)
        C_k(f) = sqrt(dx) * rfft(h_k * y, M) with h_k the k-th DPSS taper of unit energy, y
        the detrended series and M = ``n_fft`` (N unless zero-padded): |C_k|^2 is the k-th
        two-sided eigenspectrum (density per cycle/m), and conj(C_k,x) C_k,y the k-th cross
        eigenspectrum.
    eigenvalues : ndarray, shape (K,)
        Concentration lambda_k of taper k in the band |f| <= W (Slepian 1978).
    tapers : ndarray, shape (K, N)
        The tapers h_k (scipy.signal.windows.dpss, symmetric, unit energy); read-only, like
        ``eigenvalues``, being shared through the cache of :func:`dpss_tapers`.
    onesided : ndarray
        2, except 1 at k = 0 and the Nyquist bin of even M.
    wavenumber : ndarray
        Cycles per metre, ``rfftfreq(M, dx)``.
    spacing : float
        dx, metres.
    n : int
        Samples N.
    n_fft : int
        Length M of the transform, M >= N (zero padding only interpolates the grid; it
        does not improve the resolution 2W).
    nw : float
        Time-bandwidth product NW.
    half_bandwidth : float
        W = NW / (N dx), cycles per metre; peaks closer than 2W are not resolved.
    variance : float
        Mean square of the detrended series (denominator N), the white-noise level that
        Thomson's adaptive weights need.
    detrend : str
        Removed from the series before tapering.
    """

    coefficients: np.ndarray = field(repr=False)
    eigenvalues: np.ndarray
    tapers: np.ndarray = field(repr=False)
    onesided: np.ndarray = field(repr=False)
    wavenumber: np.ndarray = field(repr=False)
    spacing: float
    n: int
    n_fft: int
    nw: float
    half_bandwidth: float
    variance: float
    detrend: str

    @property
    def n_tapers(self) -> int:
        """Number of tapers K."""
        return int(self.eigenvalues.size)


def multitaper_coefficients(
    values: object,
    *,
    spacing: float,
    nw: float = 4.0,
    n_tapers: int | None = None,
    detrend: Detrend = "linear",
    n_fft: int | None = None,
) -> MultitaperCoefficients:
    """DPSS eigencoefficients of one segment (Thomson 1982; tapers of Slepian 1978).

    Parameters
    ----------
    values : array_like, shape (N,)
        Uniformly spaced samples, field units.
    spacing : float
        Sample spacing dx, metres.
    nw : float
        Time-bandwidth product NW, 1 <= NW < N/2 (default 4): the half-bandwidth is
        W = NW/(N dx) cycles per metre.
    n_tapers : int, optional
        Number of tapers K; default floor(2 NW) - 1 (2NW - 1 for integer NW), the tapers
        whose concentration is close to 1.
    detrend : {"linear", "mean"}
        Removed before tapering.
    n_fft : int, optional
        Transform length M >= N: the tapered series is zero-padded to M samples, so that
        segments of different lengths share one wavenumber grid (cross-spectra of several
        segments). Default N.

    Returns
    -------
    MultitaperCoefficients
    """
    dx = check_spacing(spacing)
    array = as_values(values, min_length=8)
    count = array.size
    try:
        nw = float(nw)
    except (TypeError, ValueError):
        raise InputError(f"nw: {nw!r} is not a number") from None
    if not 1.0 <= nw < count / 2.0:
        raise InputError(f"nw: {nw!r} must satisfy 1 <= NW < N/2 = {count / 2.0:g}")
    if n_tapers is None:
        n_tapers = max(1, int(np.floor(2.0 * nw)) - 1)
    if isinstance(n_tapers, bool) or not isinstance(n_tapers, int | np.integer):
        raise InputError(f"n_tapers: {n_tapers!r} must be a whole number")
    if not 1 <= n_tapers <= count:
        raise InputError(f"n_tapers: {n_tapers} must lie between 1 and N = {count}")
    length = count if n_fft is None else n_fft
    if isinstance(length, bool) or not isinstance(length, int | np.integer) or length < count:
        raise InputError(f"n_fft: {n_fft!r} must be a whole number >= N = {count}")
    length = int(length)
    tapers, eigenvalues = dpss_tapers(count, nw, int(n_tapers))
    residual, _, _ = remove_trend(array, detrend)
    coefficients = np.fft.rfft(tapers * residual, n=length, axis=-1)
    coefficients *= np.sqrt(dx)
    return MultitaperCoefficients(
        coefficients=coefficients,
        eigenvalues=eigenvalues,
        tapers=tapers,
        onesided=_onesided(length),
        wavenumber=np.fft.rfftfreq(length, d=dx),
        spacing=dx,
        n=count,
        n_fft=length,
        nw=nw,
        half_bandwidth=nw / (count * dx),
        variance=float(np.mean(residual**2)),
        detrend=str(detrend),
    )


def adaptive_weights(
    eigen: MultitaperCoefficients, *, tolerance: float = 1e-10, max_iterations: int = 100
) -> np.ndarray:
    """Thomson's (1982) adaptive weights, iterated to convergence.

    With eigenspectra S_k(f) = |C_k(f)|^2, eigenvalues lambda_k and the broadband level
    sigma^2 dx (two-sided white-noise density of the series' variance), iterate

        b_k(f) = S(f) / (lambda_k S(f) + (1 - lambda_k) sigma^2 dx),
        S(f)   = sum_k lambda_k b_k^2 S_k / sum_k lambda_k b_k^2,

    from S = (S_0 + S_1)/2 (Percival and Walden 1993, eqs. 368a and 369a, equation numbers
    from memory). Returned are the weights w_k(f) = lambda_k b_k(f)^2, so that
    S = sum w_k S_k / sum w_k and the degrees of freedom are
    nu(f) = 2 (sum w_k)^2 / sum w_k^2 (P&W eq. 370b).

    Returns
    -------
    ndarray, shape (K, N//2 + 1)
    """
    spectra = eigen.coefficients.real**2 + eigen.coefficients.imag**2
    lam = eigen.eigenvalues[:, np.newaxis]
    noise = eigen.variance * eigen.spacing
    if spectra.shape[0] == 1 or noise == 0.0:
        return np.ones_like(spectra)
    estimate = spectra[:2].mean(axis=0)
    leak = (1.0 - lam) * noise
    weights, product = np.empty_like(spectra), np.empty_like(spectra)
    change = np.empty_like(estimate)
    for _ in range(int(max_iterations)):
        # the same operations as b = S / (lam S + (1 - lam) noise), w = lam b^2, in place
        np.multiply(lam, estimate, out=weights)
        weights += leak
        np.divide(estimate, weights, out=weights)
        np.square(weights, out=weights)
        np.multiply(lam, weights, out=weights)
        total = weights.sum(axis=0)
        # A bin with no power at all gets equal weights rather than 0/0.
        empty = total == 0.0
        if empty.any():
            weights[:, empty] = 1.0
            total = weights.sum(axis=0)
        np.multiply(weights, spectra, out=product)
        updated = product.sum(axis=0) / total
        np.subtract(updated, estimate, out=change)
        converged = np.all(np.abs(change, out=change) <= tolerance * updated)
        estimate = updated
        if converged:
            break
    return weights


def multitaper_psd(
    values: object,
    *,
    spacing: float,
    nw: float = 4.0,
    n_tapers: int | None = None,
    adaptive: bool = True,
    detrend: Detrend = "linear",
    confidence: float = 0.95,
) -> Spectrum:
    """Multitaper density (Thomson 1982) with per-wavenumber degrees of freedom.

    S(f) = onesided * sum_k w_k(f) S_k(f) / sum_k w_k(f), with Thomson's adaptive weights
    (:func:`adaptive_weights`; nu(f) = 2 (sum w)^2 / sum w^2, Percival and Walden 1993,
    eq. 370b) or, with ``adaptive=False``, equal weights and nu = 2K. Degrees of freedom are
    halved at k = 0 and at the Nyquist bin, where the eigencoefficients are real.

    Parameters
    ----------
    values, spacing, nw, n_tapers, detrend
        See :func:`multitaper_coefficients`.
    adaptive : bool
        Adaptive (default) or equal weights.
    confidence : float
        Level of the chi-square interval.

    Returns
    -------
    Spectrum
        psd in field units squared per (cycle/m); resolution 2W.
    """
    eigen = multitaper_coefficients(values, spacing=spacing, nw=nw, n_tapers=n_tapers, detrend=detrend)
    spectra = eigen.coefficients.real**2 + eigen.coefficients.imag**2
    weights = adaptive_weights(eigen) if adaptive else np.ones_like(spectra)
    total = weights.sum(axis=0)
    psd = eigen.onesided * (weights * spectra).sum(axis=0) / total
    dof = 2.0 * total**2 / (weights**2).sum(axis=0)
    return _finish(
        psd,
        _bin_dof(dof, eigen.n_fft),
        confidence,
        wavenumber=eigen.wavenumber,
        method="multitaper",
        spacing=eigen.spacing,
        n=eigen.n,
        detrend=eigen.detrend,
        taper="dpss",
        resolution=2.0 * eigen.half_bandwidth,
        nw=eigen.nw,
        n_tapers=eigen.n_tapers,
        adaptive=bool(adaptive),
    )
