"""Straight-line fits to a spectrum: power-law exponent and depth to source.

- Power law: P(k) ~ k^(-beta); beta from least squares of log10 P against log10 k.
- Depth to source (Spector and Grant 1970): the ensemble spectrum of sources at mean depth h
  below the observation level falls as exp(-2 h |k|) with k the angular wavenumber (rad/m),
  so ln P against k_angular has slope -2h and h = -slope/2.

Both fits use the bins of a band: given by the caller (wavenumber limits, cycles per metre)
or chosen automatically by one simple rule (see :func:`power_law_fit`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..errors import InputError
from .preprocess import as_values

__all__ = ["DepthFit", "SlopeFit", "power_law_fit", "source_depth"]

_MIN_BINS = 5
_LOWEST_DROPPED = 2
_FLOOR_SHARE = 0.2
_FLOOR_FACTOR = 10.0
_SMOOTHING_BINS = 5


@dataclass(frozen=True)
class SlopeFit:
    """Power-law exponent of a spectrum over a band, P(k) ~ k^(-beta).

    Attributes
    ----------
    beta : float
        Exponent (positive for a spectrum that falls with wavenumber).
    beta_err : float
        Standard error of beta from the least-squares residuals.
    intercept : float
        log10 P at k = 1 cycle per metre of the fitted line.
    band_min, band_max : float
        Wavenumbers of the first and last bin used, cycles per metre.
    n_bins : int
        Bins used.
    band_rule : str
        ``"given"`` or ``"automatic"``.
    """

    beta: float
    beta_err: float
    intercept: float
    band_min: float
    band_max: float
    n_bins: int
    band_rule: str

    def to_frame(self):
        """One row: ``beta``, ``beta_err``, ``band_min_per_km``, ``band_max_per_km``,
        ``n_bins``, ``band_rule``."""
        import pandas as pd

        return pd.DataFrame({"beta": [self.beta], "beta_err": [self.beta_err], **_band_columns(self)})

    def __str__(self) -> str:
        return (
            f"Power-law fit: beta = {self.beta:.3f} +/- {self.beta_err:.3f} over "
            f"{_band_text(self)}"
        )


@dataclass(frozen=True)
class DepthFit:
    """Depth to the top of an ensemble of sources from the spectral slope.

    Attributes
    ----------
    depth : float
        h = -slope/2, metres below the observation level.
    depth_err : float
        Standard error of h, metres.
    slope : float
        Slope of ln P against angular wavenumber k_angular = 2 pi k, metres.
    intercept : float
        ln P at k = 0 of the fitted line.
    band_min, band_max : float
        Wavenumbers of the first and last bin used, cycles per metre.
    n_bins : int
        Bins used.
    band_rule : str
        ``"given"`` or ``"automatic"``.
    """

    depth: float
    depth_err: float
    slope: float
    intercept: float
    band_min: float
    band_max: float
    n_bins: int
    band_rule: str

    def to_frame(self):
        """One row: ``depth_km``, ``depth_err_km``, ``band_min_per_km``,
        ``band_max_per_km``, ``n_bins``, ``band_rule``."""
        import pandas as pd

        return pd.DataFrame(
            {"depth_km": [self.depth / 1000.0], "depth_err_km": [self.depth_err / 1000.0],
             **_band_columns(self)}
        )

    def __str__(self) -> str:
        return (
            f"Depth to source: {self.depth / 1000.0:.4g} +/- {self.depth_err / 1000.0:.2g} km "
            f"from ln P over {_band_text(self)}"
        )


def _band_columns(fit: SlopeFit | DepthFit) -> dict[str, list]:
    """The band columns both fits share in ``to_frame`` (per km)."""
    return {
        "band_min_per_km": [fit.band_min * 1000.0],
        "band_max_per_km": [fit.band_max * 1000.0],
        "n_bins": [fit.n_bins],
        "band_rule": [fit.band_rule],
    }


def _band_text(fit: SlopeFit | DepthFit) -> str:
    return (
        f"{fit.band_min * 1000.0:.4g} to {fit.band_max * 1000.0:.4g} cycles/km "
        f"({fit.n_bins} bins, {fit.band_rule} band)"
    )


def _usable(wavenumber: object, psd: object) -> tuple[np.ndarray, np.ndarray]:
    k = as_values(wavenumber, min_length=_MIN_BINS, what="wavenumber")
    power = as_values(psd, min_length=_MIN_BINS, what="psd")
    if k.size != power.size:
        raise InputError(f"wavenumber and psd differ in length ({k.size} and {power.size})")
    if np.any(np.diff(k) <= 0):
        raise InputError("wavenumber: must increase strictly")
    keep = (k > 0) & (power > 0)
    return k[keep], power[keep]


def _running_median(values: np.ndarray, width: int) -> np.ndarray:
    from numpy.lib.stride_tricks import sliding_window_view

    half = width // 2
    padded = np.pad(values, half, mode="edge")
    return np.median(sliding_window_view(padded, width), axis=-1)


def _band_indices(k: np.ndarray, power: np.ndarray, band) -> tuple[np.ndarray, str]:
    """Indices of the bins to fit, and the rule that chose them."""
    if band is not None:
        try:
            low, high = (float(limit) for limit in band)
        except (TypeError, ValueError):
            raise InputError(
                "band: give two wavenumbers (k_min, k_max) in cycles per metre"
            ) from None
        if not 0 <= low < high:
            raise InputError(f"band: need 0 <= k_min < k_max, got {low:g} and {high:g}")
        chosen = np.flatnonzero((k >= low) & (k <= high))
        rule = "given"
    else:
        start = _LOWEST_DROPPED
        floor_start = int(np.floor(k.size * (1.0 - _FLOOR_SHARE)))
        floor = float(np.median(power[floor_start:]))
        smooth = _running_median(power, _SMOOTHING_BINS)
        near_floor = np.flatnonzero(smooth[start:floor_start] <= _FLOOR_FACTOR * floor)
        stop = start + int(near_floor[0]) if near_floor.size else floor_start
        chosen = np.arange(start, stop)
        rule = "automatic"
    if chosen.size < _MIN_BINS:
        raise InputError(
            f"band: only {chosen.size} usable bins (at least {_MIN_BINS} are needed); "
            f"give a wider band=(k_min, k_max) in cycles per metre"
        )
    return chosen, rule


def _band_line(wavenumber: object, psd: object, band, *, abscissa, ordinate):
    """Least-squares line of ``ordinate(P)`` against ``abscissa(k)`` over the band's bins:
    slope, its error, intercept and the band fields of the result."""
    k, power = _usable(wavenumber, psd)
    chosen, rule = _band_indices(k, power, band)
    slope, error, intercept = _line(abscissa(k[chosen]), ordinate(power[chosen]))
    fields = {
        "band_min": float(k[chosen[0]]),
        "band_max": float(k[chosen[-1]]),
        "n_bins": int(chosen.size),
        "band_rule": rule,
    }
    return slope, error, intercept, fields


def _line(x: np.ndarray, y: np.ndarray) -> tuple[float, float, float]:
    """Least-squares slope, its standard error and the intercept."""
    x_mean, y_mean = x.mean(), y.mean()
    sxx = float(np.sum((x - x_mean) ** 2))
    slope = float(np.sum((x - x_mean) * (y - y_mean)) / sxx)
    intercept = float(y_mean - slope * x_mean)
    residual = y - (intercept + slope * x)
    error = float(np.sqrt(np.sum(residual**2) / (x.size - 2) / sxx))
    return slope, error, intercept


def power_law_fit(
    wavenumber: object, psd: object, *, band: tuple[float, float] | None = None
) -> SlopeFit:
    """Power-law exponent beta of a spectrum, P(k) ~ k^(-beta), by log-log least squares.

    Parameters
    ----------
    wavenumber : array_like
        Strictly increasing wavenumbers, cycles per metre (k = 0 and bins with zero power
        are ignored).
    psd : array_like
        Density at those wavenumbers (any units).
    band : (k_min, k_max), optional
        Fit the bins with k_min <= k <= k_max, cycles per metre. Default: the automatic rule
        below.

    Returns
    -------
    SlopeFit

    Notes
    -----
    Automatic band (a simple rule of our own, not from a publication):

    1. drop the two lowest positive bins (poorly resolved, and the most affected by the
       detrending);
    2. estimate a flat noise floor as the median density of the top 20 % of the bins;
    3. end the band at the first bin whose running median (5 bins) is within a factor of 10
       of that floor, or where the top 20 % begins.

    The least-squares fit of log P is unbiased in slope when every bin has the same number
    of degrees of freedom (log chi2 only shifts the intercept); the standard error assumes
    independent bins, which holds for periodogram and Welch bins but not for neighbouring
    multitaper bins (within 2W), where it is too small.
    """
    slope, error, intercept, fields = _band_line(
        wavenumber, psd, band, abscissa=np.log10, ordinate=np.log10
    )
    return SlopeFit(beta=-slope, beta_err=error, intercept=intercept, **fields)


def source_depth(
    wavenumber: object, psd: object, *, band: tuple[float, float] | None = None
) -> DepthFit:
    """Depth to source from the slope of ln P against angular wavenumber.

    For an ensemble of sources at mean depth h the power spectrum carries the factor
    exp(-2 h k_angular), k_angular = 2 pi k in rad/m (Spector and Grant 1970), so a
    straight line through ln P against k_angular has slope -2h: h = -slope/2, with standard
    error half that of the slope. Against cyclic wavenumber the slope is -4 pi h.

    Parameters
    ----------
    wavenumber : array_like
        Strictly increasing wavenumbers, cycles per metre.
    psd : array_like
        Density (any units).
    band : (k_min, k_max), optional
        Cycles per metre; default the automatic rule of :func:`power_law_fit`.

    Returns
    -------
    DepthFit

    Notes
    -----
    The relation is exact for 2-D sources crossed at right angles to strike (or radially
    averaged 2-D spectra). A profile through a field whose 2-D spectrum is isotropic has the
    1-D spectrum 2|k| K1(2 h |k|) instead, and a straight-line fit then under-estimates the
    depth (about 12 % over k h = 0.2..4; see docs/methods-spectral.md). Source thickness and
    fractal source distributions bias the low-wavenumber slope as well.
    """
    slope, error, intercept, fields = _band_line(
        wavenumber, psd, band, abscissa=lambda k: 2.0 * np.pi * k, ordinate=np.log
    )
    return DepthFit(depth=-slope / 2.0, depth_err=error / 2.0, slope=slope, intercept=intercept,
                    **fields)
