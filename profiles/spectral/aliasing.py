"""Aliasing by the station spacing: Nyquist wavelength and apparent (folded) wavelengths.

Sampling at spacing dx cannot tell wavenumber k (cycles per metre) from k + n/dx for any
integer n (Shannon 1949). A sinusoid of wavenumber k therefore appears at

    k_a = |k - n / dx|,   n = round(k dx),

which folds every k into [0, k_N] with the Nyquist wavenumber k_N = 1/(2 dx); its wavelength
is 1/k_a, infinite when k_a = 0 (the sinusoid looks like a constant).
"""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from .preprocess import check_spacing

__all__ = [
    "apparent_wavelength",
    "apparent_wavenumber",
    "is_aliased",
    "nyquist_wavelength",
    "nyquist_wavenumber",
]

# Folded wavenumbers below this fraction of the sampling wavenumber 1/dx are taken as zero,
# so that rounding in 1/wavelength does not turn "appears as the mean" into a huge finite
# wavelength.
_ZERO_FRACTION = 1e-9


def nyquist_wavelength(spacing: float) -> float:
    """Shortest wavelength that spacing ``spacing`` (metres) resolves: 2 dx, metres."""
    return 2.0 * check_spacing(spacing)


def nyquist_wavenumber(spacing: float) -> float:
    """Nyquist wavenumber 1/(2 dx), cycles per metre."""
    return 0.5 / check_spacing(spacing)


def apparent_wavenumber(wavenumber: object, *, spacing: float) -> np.ndarray | float:
    """Wavenumber at which a sinusoid of ``wavenumber`` (cycles/m) appears at spacing dx.

    k_a = |k - n/dx| with n = round(k dx); values within 1e-9 / dx of zero are returned as 0.
    """
    dx = check_spacing(spacing)
    k = np.asarray(wavenumber, dtype=np.float64)
    if not np.all(np.isfinite(k)) or np.any(k < 0):
        raise InputError("wavenumber: must be finite and non-negative (cycles per metre)")
    folded = np.abs(k - np.round(k * dx) / dx)
    folded = np.where(folded < _ZERO_FRACTION / dx, 0.0, folded)
    return float(folded) if folded.ndim == 0 else folded


def apparent_wavelength(wavelength: object, *, spacing: float) -> np.ndarray | float:
    """Wavelength (metres) at which a sinusoid of ``wavelength`` appears at spacing dx.

    Wavelengths of at least 2 dx are returned unchanged; shorter ones fold about the Nyquist
    wavenumber (see the module notes). ``inf`` means the sinusoid appears as a constant
    (wavelength an exact submultiple of dx, or an infinite input wavelength).

    Examples
    --------
    >>> apparent_wavelength(150.0, spacing=100.0)
    300.0
    >>> apparent_wavelength(100.0, spacing=100.0)
    inf
    """
    lengths = np.asarray(wavelength, dtype=np.float64)
    if np.any(np.isnan(lengths)) or np.any(lengths <= 0):
        raise InputError("wavelength: must be positive (metres)")
    folded = np.asarray(apparent_wavenumber(1.0 / lengths, spacing=spacing))
    with np.errstate(divide="ignore"):
        apparent = np.where(folded > 0, 1.0 / np.where(folded > 0, folded, 1.0), np.inf)
    unchanged = lengths >= 2.0 * check_spacing(spacing)
    apparent = np.where(unchanged, lengths, apparent)
    return float(apparent) if apparent.ndim == 0 else apparent


def is_aliased(wavelength: object, *, spacing: float) -> np.ndarray | bool:
    """True where ``wavelength`` (metres) is shorter than the Nyquist wavelength 2 dx."""
    lengths = np.asarray(wavelength, dtype=np.float64)
    result = lengths < nyquist_wavelength(spacing)
    return bool(result) if result.ndim == 0 else result
