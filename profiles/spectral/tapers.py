"""Discrete prolate spheroidal sequences (DPSS, Slepian tapers) for any length, fast.

The first K DPSS of length N and half-bandwidth W = NW/N are the eigenvectors of the largest
eigenvalues of the symmetric tridiagonal matrix T with

    T[n, n] = ((N - 1 - 2n) / 2)^2 cos(2 pi W),   T[n, n+1] = (n + 1)(N - n - 1) / 2

(Slepian 1978, "Prolate spheroidal wave functions, Fourier analysis, and uncertainty V",
Bell Syst. Tech. J. 57, 1371-1430; Percival and Walden 1993, "Spectral Analysis for Physical
Applications", section 8.3, from memory). ``scipy.signal.windows.dpss`` finds them with a
tridiagonal eigensolver (bisection and inverse iteration over the whole matrix), which for
N of several thousand costs 20-200 ms: far more than the tapered transforms, and a survey's
segments rarely share a length.

Up to :data:`DIRECT_LENGTH` samples the tapers are computed as scipy computes them (the same
``scipy.linalg.eigh_tridiagonal`` call, signs and concentrations; scipy.signal itself is not
imported, which saves half a second in every fresh process). Above it the same eigenvectors
are found from a good first guess instead:

1. the tapers of a reference length (computed once per NW and K) are interpolated
   by local cubics at the sample positions (n + 1/2)/N of the new length: at fixed NW the
   DPSS converge, as N grows, to the samples of a continuous prolate spheroidal function,
   so this guess is already close (about 1e-5 relative at N = 1,000);
2. each guess v is refined by one step of inverse iteration with its Rayleigh quotient as
   the shift, theta = v'Tv / v'v, solving (T - theta I) x = v with LAPACK's tridiagonal
   solver ``dgtsv`` (Golub and Van Loan, "Matrix Computations", inverse iteration and the
   Rayleigh quotient, from memory). The shift is within about the square of the guess's
   error of the eigenvalue, so one step reaches the eigenvector to rounding error; what
   rounding leaves of the tapers before it is removed by Gram-Schmidt orthogonalisation.

The result is scipy's to about N 1e-15 (tests/test_tapers.py checks N from 1,025 to 50,000
against ``scipy.signal.windows.dpss``), in O(N K) operations: 3 ms instead of 21 ms for
7 tapers of 9,000 samples. Signs follow scipy's convention (Percival and Walden 1993,
p. 379, as scipy cites it): even tapers have a positive sum, odd tapers begin with a
positive lobe. The concentrations lambda_k (the share of each taper's energy within |f| <= W)
are computed as scipy computes them, from the tapers' autocorrelation (Percival and Walden
1993, p. 390).
"""

from __future__ import annotations

import functools

import numpy as np

#: Up to this length the tapers are scipy's own (the eigensolver is cheap there).
DIRECT_LENGTH = 1024
#: Length of the reference tapers that longer ones are interpolated from.
REFERENCE_LENGTH = 1024
#: Taper sets kept by :func:`dpss_tapers` (each K x N floats: 0.56 MB for 7 tapers of 10,000).
DPSS_CACHE_SIZE = 16


@functools.lru_cache(maxsize=DPSS_CACHE_SIZE)
def dpss_tapers(count: int, nw: float, n_tapers: int) -> tuple[np.ndarray, np.ndarray]:
    """The first ``n_tapers`` DPSS tapers of ``count`` samples and their concentrations, cached.

    The same arrays as ``scipy.signal.windows.dpss(count, nw, n_tapers, sym=True, norm=2,
    return_ratios=True)`` (unit energy), to about 1e-12: computed as scipy computes them up to
    :data:`DIRECT_LENGTH` samples, found from interpolated reference tapers by one step of
    Rayleigh-quotient inverse iteration above (module notes). Computed once per (N, NW, K);
    the arrays are read-only, so that no caller can alter what the next one gets.

    Returns
    -------
    tapers : ndarray, shape (K, N), read-only
    concentrations : ndarray, shape (K,), read-only
        lambda_k, the share of each taper's energy in |f| <= W.
    """
    count, nw, n_tapers = int(count), float(nw), int(n_tapers)
    if count <= DIRECT_LENGTH or nw >= REFERENCE_LENGTH / 4.0 or n_tapers > REFERENCE_LENGTH // 4:
        tapers, concentrations = _scipy_dpss(count, nw, n_tapers)
    else:
        tapers = _refined_tapers(count, nw, n_tapers)
        concentrations = _concentrations(tapers, nw / count)
    tapers = np.ascontiguousarray(tapers, dtype=np.float64)
    concentrations = np.array(concentrations, dtype=np.float64)
    tapers.flags.writeable = False
    concentrations.flags.writeable = False
    return tapers, concentrations


def _scipy_dpss(count: int, nw: float, n_tapers: int):
    """The tapers and concentrations as ``scipy.signal.windows.dpss`` computes them (the
    tridiagonal eigensolver over the whole matrix, its signs and its concentrations), without
    importing scipy.signal, whose import costs half a second in every fresh worker."""
    from scipy.linalg import eigh_tridiagonal

    diagonal, off = _tridiagonal(count, nw)
    _, vectors = eigh_tridiagonal(diagonal, off, select="i", select_range=(count - n_tapers, count - 1))
    tapers = _signed(np.ascontiguousarray(vectors[:, ::-1].T), count)
    return tapers, _concentrations(tapers, nw / count)


def _tridiagonal(count: int, nw: float) -> tuple[np.ndarray, np.ndarray]:
    """Diagonal and off-diagonal of the matrix whose eigenvectors are the DPSS (module notes)."""
    index = np.arange(count, dtype=np.float64)
    diagonal = ((count - 1 - 2.0 * index) / 2.0) ** 2 * np.cos(2.0 * np.pi * nw / count)
    return diagonal, index[1:] * (count - index[1:]) / 2.0


@functools.lru_cache(maxsize=8)
def _reference(nw: float, n_tapers: int) -> np.ndarray:
    """The tapers of :data:`REFERENCE_LENGTH` samples (read-only)."""
    tapers, _ = _scipy_dpss(REFERENCE_LENGTH, nw, n_tapers)
    tapers.flags.writeable = False
    return tapers


def _guess(count: int, nw: float, n_tapers: int) -> np.ndarray:
    """The reference tapers interpolated at the positions (n + 1/2)/N of ``count`` samples, by
    the cubic through the four nearest reference samples (Lagrange; Abramowitz and Stegun
    1964, 25.2.13, from memory). The guess's error, about 1e-5 relative at N = 1,000, is the
    difference between the tapers of the two lengths, not the interpolation's."""
    reference = _reference(nw, n_tapers)
    position = (np.arange(count) + 0.5) * (REFERENCE_LENGTH / count) - 0.5  # in reference samples
    left = np.clip(np.floor(position).astype(np.intp) - 1, 0, REFERENCE_LENGTH - 4)
    t = position - left
    weights = (-(t - 1.0) * (t - 2.0) * (t - 3.0) / 6.0, t * (t - 2.0) * (t - 3.0) / 2.0,
               -t * (t - 1.0) * (t - 3.0) / 2.0, t * (t - 1.0) * (t - 2.0) / 6.0)
    guess = reference[:, left] * weights[0]
    for k in range(1, 4):
        guess += reference[:, left + k] * weights[k]
    return guess


def _refined_tapers(count: int, nw: float, n_tapers: int) -> np.ndarray:
    """The DPSS of ``count`` samples: interpolated guesses, one Rayleigh-quotient inverse
    iteration each, unit energy and scipy's signs."""
    from scipy.linalg import lapack

    guess = _guess(count, nw, n_tapers)
    diagonal, off = _tridiagonal(count, nw)
    tapers = np.empty((n_tapers, count))
    for k, start in enumerate(guess):
        product = diagonal * start
        product[:-1] += off * start[1:]
        product[1:] += off * start[:-1]
        shift = float(start @ product) / float(start @ start)
        *_, solution, info = lapack.dgtsv(off, diagonal - shift, off, start)
        if info != 0 or not np.all(np.isfinite(solution)):  # the guess was the eigenvector
            solution = start
        # Rounding in the nearly singular solve leaves traces of the tapers before this one
        # (about 1e-9 at N = 50,000): removed by Gram-Schmidt, in order of concentration.
        solution = solution - tapers[:k].T @ (tapers[:k] @ solution)
        solution = solution / np.linalg.norm(solution)
        tapers[k] = solution if solution @ start >= 0 else -solution
    return _signed(tapers, count)


def _signed(tapers: np.ndarray, count: int) -> np.ndarray:
    """scipy's sign convention: even tapers with a positive sum; odd tapers whose first value
    above the numerical noise (square above max(1e-7, 1/N)) is positive."""
    threshold = max(1e-7, 1.0 / count)
    for k, taper in enumerate(tapers):
        lobe = taper.sum() if k % 2 == 0 else taper[taper * taper > threshold][0]
        if lobe < 0:
            tapers[k] = -taper
    return tapers


def _concentrations(tapers: np.ndarray, half_bandwidth: float) -> np.ndarray:
    """lambda_k = sum over lags of the taper's autocorrelation times the band's sinc kernel
    (Percival and Walden 1993, p. 390; the computation of scipy.signal.windows.dpss, with the
    autocorrelation by a transform of at least 2N - 1 samples)."""
    from .preprocess import fast_length

    count = tapers.shape[-1]
    length = fast_length(2 * count - 1)
    spectrum = np.fft.rfft(tapers, length, axis=-1)
    autocorrelation = np.fft.irfft(spectrum.real**2 + spectrum.imag**2, n=length)[:, :count]
    kernel = 4.0 * half_bandwidth * np.sinc(2.0 * half_bandwidth * np.arange(count))
    kernel[0] = 2.0 * half_bandwidth
    return autocorrelation @ kernel
