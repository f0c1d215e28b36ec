"""Tapered Fourier coefficients for averaged cross-spectra (private).

Two estimators produce the same thing: a stack of complex Fourier coefficients of one
uniformly spaced series, scaled so that the average over the stack of ``conj(X) * Y`` is the
one-sided cross-spectral density of two series treated alike.

- :func:`welch_blocks`: overlapping blocks, each detrended and tapered (Welch 1967).
- :func:`dpss_eigencoefficients`: the whole series under K discrete prolate spheroidal
  tapers (Thomson 1982).

Scaling. With the taper ``h`` of the block, ``Δ`` the spacing (m) and ``X_j`` the DFT of the
tapered block, the coefficient is ``X_j * sqrt(c Δ / Σ h²)`` with ``c = 2`` for wavenumbers
strictly between zero and Nyquist and ``c = 1`` at zero and at Nyquist (even block length). So
``mean(|X|²)`` is the one-sided density in (input units)² per cycle per metre, the
``scaling='density'`` convention of ``scipy.signal.welch`` and ``scipy.signal.csd``.

This module is meant to be merged with ``profiles.spectral.psd`` later; it holds only what
``profiles.cross`` needs.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal, get_args

import numpy as np

from .errors import InputError, SpacingError

#: Tapers for Welch blocks (periodic definitions, as ``scipy.signal.get_window`` gives them).
WelchTaper = Literal["hann", "hamming", "blackman", "boxcar"]
#: Trend removed from each block (Welch) or from the whole series (multitaper).
Detrend = Literal["linear", "constant", "none"]


@dataclass(frozen=True)
class TaperedCoefficients:
    """Scaled Fourier coefficients of one series.

    Attributes
    ----------
    coefficients : ndarray, complex, shape (n_estimates, n_wavenumbers)
        One row per Welch block or per DPSS taper, scaled as described in the module notes.
    wavenumber : ndarray, shape (n_wavenumbers,)
        Wavenumbers in cycles per metre, from zero to Nyquist.
    effective_n : float
        Number of independent estimates the rows are worth: the block count corrected for
        overlap (Welch), or K (multitaper).
    eigenvalues : ndarray or None
        DPSS concentration ratios (multitaper only).
    """

    coefficients: np.ndarray
    wavenumber: np.ndarray
    effective_n: float
    eigenvalues: np.ndarray | None = None


def _check(values: np.ndarray, spacing: float) -> None:
    if values.ndim != 1:
        raise InputError(f"values must be one-dimensional, got shape {values.shape}")
    if not np.all(np.isfinite(values)):
        raise InputError("values contain NaN or inf; split the line at gaps before a spectrum")
    if not (np.isfinite(spacing) and spacing > 0):
        raise SpacingError(f"spacing must be a positive number of metres, got {spacing!r}")


def _remove_trend(blocks: np.ndarray, detrend: Detrend) -> np.ndarray:
    if detrend not in get_args(Detrend):
        raise InputError(f"detrend must be one of {', '.join(get_args(Detrend))}; got {detrend!r}")
    if detrend == "none":
        return blocks
    from scipy.signal import detrend as scipy_detrend

    return scipy_detrend(blocks, axis=-1, type=detrend)


def _density_factor(n_fft: int, spacing: float, taper_energy: float) -> np.ndarray:
    """sqrt(c Δ / Σh²) per rfft bin, c = 1 at zero and Nyquist, 2 elsewhere."""
    factor = np.full(n_fft // 2 + 1, 2.0)
    factor[0] = 1.0
    if n_fft % 2 == 0:
        factor[-1] = 1.0
    return np.sqrt(factor * spacing / taper_energy)


def welch_effective_n(taper: np.ndarray, *, n_blocks: int, shift: int) -> float:
    """Number of independent estimates worth of ``n_blocks`` overlapping tapered blocks.

    Half the equivalent degrees of freedom of the WOSA estimate, Percival & Walden (1993)
    eq. (292b), for a taper ``h`` normalized to ``Σ h² = 1`` and a shift of ``shift`` samples::

        ν = 2 N_B / (1 + 2 Σ_{m=1}^{N_B-1} (1 - m/N_B) |Σ_t h_t h_{t+m shift}|²)

    Returns ``ν / 2``: ``N_B`` for blocks that do not overlap, about ``0.947 N_B`` for the
    Hann taper at 50 % overlap.
    """
    h = np.asarray(taper, dtype=float)
    h = h / np.sqrt(np.sum(h**2))
    total = 0.0
    for m in range(1, n_blocks):
        lag = m * shift
        if lag >= h.size:
            break
        total += (1.0 - m / n_blocks) * float(np.dot(h[: h.size - lag], h[lag:])) ** 2
    return n_blocks / (1.0 + 2.0 * total)


def welch_blocks(
    values: np.ndarray,
    *,
    spacing: float,
    segment_length: float,
    overlap: float,
    taper: WelchTaper,
    detrend: Detrend = "linear",
) -> TaperedCoefficients:
    """Scaled Fourier coefficients of overlapping, detrended, tapered blocks (Welch 1967).

    Blocks of ``n = round(segment_length / spacing)`` samples start at samples 0, s, 2s, ...
    with shift ``s = n - round(overlap n)`` while they fit; the tail that does not fill a block
    is not used (as in ``scipy.signal.csd`` with its defaults ``boundary=None, padded=False``).

    Parameters
    ----------
    values : array_like, shape (N,)
        Uniformly spaced samples, no NaN.
    spacing : float
        Sample spacing in metres.
    segment_length : float
        Block length in metres.
    overlap : float
        Fraction of a block shared with the next one, in [0, 1).
    taper : {"hann", "hamming", "blackman", "boxcar"}
        Periodic taper applied to each block.
    detrend : {"linear", "constant", "none"}
        Trend removed from each block before the taper.

    Returns
    -------
    TaperedCoefficients
        ``coefficients`` of shape (n_blocks, n // 2 + 1); ``effective_n`` from
        :func:`welch_effective_n`. With no complete block, ``n_blocks`` is zero.
    """
    values = np.asarray(values, dtype=float)
    _check(values, spacing)
    if taper not in get_args(WelchTaper):
        raise InputError(f"taper must be one of {', '.join(get_args(WelchTaper))}; got {taper!r}")
    if not 0.0 <= overlap < 1.0:
        raise InputError(f"overlap must be a fraction in [0, 1), got {overlap!r}")
    n_block = round(segment_length / spacing)
    if n_block < 4:
        raise SpacingError(
            f"segment_length {segment_length:g} m holds {n_block} samples at spacing "
            f"{spacing:g} m; use at least 4 samples per block"
        )
    shift = max(n_block - round(overlap * n_block), 1)
    from scipy.signal import get_window

    h = get_window(taper, n_block, fftbins=True)
    wavenumber = np.fft.rfftfreq(n_block, d=spacing)
    if values.size < n_block:
        empty = np.empty((0, wavenumber.size), dtype=complex)
        return TaperedCoefficients(empty, wavenumber, 0.0)
    blocks = np.lib.stride_tricks.sliding_window_view(values, n_block)[::shift]
    blocks = _remove_trend(blocks, detrend) * h
    coefficients = np.fft.rfft(blocks, axis=-1) * _density_factor(n_block, spacing, np.sum(h**2))
    n_eff = welch_effective_n(h, n_blocks=blocks.shape[0], shift=shift)
    return TaperedCoefficients(coefficients, wavenumber, n_eff)


def dpss_eigencoefficients(
    values: np.ndarray,
    *,
    spacing: float,
    nw: float,
    n_tapers: int,
    detrend: Detrend = "linear",
    n_fft: int | None = None,
) -> TaperedCoefficients:
    """Scaled DPSS eigencoefficients of a whole series (Thomson 1982).

    The series is detrended once, multiplied by each of the ``n_tapers`` discrete prolate
    spheroidal sequences of time-half-bandwidth ``nw`` (``scipy.signal.windows.dpss``,
    normalized to unit energy) and transformed, zero-padded to ``n_fft`` samples if given.
    The full bandwidth is ``2 nw / (N spacing)`` cycles per metre.

    Returns
    -------
    TaperedCoefficients
        ``coefficients`` of shape (n_tapers, n_fft // 2 + 1), ``effective_n = n_tapers``
        (each eigenspectrum has 2 degrees of freedom away from zero and Nyquist) and the
        concentration ratios in ``eigenvalues``.
    """
    values = np.asarray(values, dtype=float)
    _check(values, spacing)
    n = values.size
    if not (np.isfinite(nw) and 0.5 <= nw < n / 2):
        raise InputError(f"nw must be at least 0.5 and below N/2 = {n / 2:g}, got {nw!r}")
    if not (isinstance(n_tapers, int | np.integer) and n_tapers >= 1):
        raise InputError(f"n_tapers must be a positive integer, got {n_tapers!r}")
    n_fft = n if n_fft is None else int(n_fft)
    if n_fft < n:
        raise InputError(f"n_fft ({n_fft}) must not be shorter than the series ({n})")
    from scipy.signal.windows import dpss

    tapers, ratios = dpss(n, nw, Kmax=int(n_tapers), sym=True, norm=2, return_ratios=True)
    tapered = _remove_trend(values, detrend) * tapers
    scale = _density_factor(n_fft, spacing, 1.0)
    coefficients = np.fft.rfft(tapered, n=n_fft, axis=-1) * scale
    wavenumber = np.fft.rfftfreq(n_fft, d=spacing)
    return TaperedCoefficients(coefficients, wavenumber, float(n_tapers), np.asarray(ratios))
