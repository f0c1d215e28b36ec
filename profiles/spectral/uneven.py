"""Lomb-Scargle spectrum of unevenly spaced stations, through ``astropy.timeseries``.

For stations at distances x_i (metres) with values y_i, the floating-mean Lomb-Scargle
periodogram (Lomb 1976; Scargle 1982; the generalised form with a fitted mean, as in
astropy, VanderPlas 2018) is computed on an explicit, uniform grid of wavenumbers
(cycles per metre; astropy's "frequency" is our cyclic wavenumber, not an angular one).

Two normalisations are returned, computed once:

- ``power``: astropy's ``"standard"`` normalisation, the fraction of the variance
  sum (y - mean)^2 that a sinusoid at that wavenumber explains (0..1); false-alarm
  probabilities are always computed from it, whatever the caller shows.
- ``false_alarm``: at every wavenumber, the probability that noise alone gives a peak at
  least as high as the power there anywhere in the searched band (astropy's
  ``false_alarm_probability`` evaluated at every power of the grid in one call; for the
  bootstrap method the resampled maxima are drawn once and shared by the whole grid).
- ``psd``: a one-sided density in field units squared per (cycle/m),
  psd = power * sum((y - mean)^2) * dx_mean, with dx_mean = (x_max - x_min)/(N - 1). For
  evenly spaced data at the Fourier wavenumbers this equals the boxcar periodogram density
  2 dx |Z_k|^2 / N of :func:`profiles.spectral.periodogram` exactly; for uneven data it is
  the same scaling with the mean spacing. For near-regular stations its integral up to
  1/(2 dx_mean) approximates the variance; randomly placed stations have no strict Nyquist
  wavenumber and spread white noise beyond it, so there the integral keeps growing with k_max.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field
from typing import Literal

import numpy as np

from ..errors import InputError
from .preprocess import as_values, check_option

__all__ = [
    "FalseAlarmMethod",
    "LombScargleMethod",
    "LombScargleSpectrum",
    "lomb_scargle",
    "wavenumber_grid",
]

#: ``"exact"``: direct sums, O(N M) (astropy's ``"cython"`` method). ``"fast"``: astropy's
#: ``"fast"`` method, O(N log N) (Press and Rybicki 1989 extirpolation onto an FFT grid),
#: spot-checked against the exact sums. ``"auto"``: exact when N M <= 5e6, else fast.
LombScargleMethod = Literal["auto", "fast", "exact"]

#: False-alarm probability method of astropy: ``"baluev"`` (Baluev 2008, an upper bound,
#: the default), ``"davies"``, ``"naive"`` or ``"bootstrap"``.
FalseAlarmMethod = Literal["baluev", "davies", "naive", "bootstrap"]

_EXACT_WORK_LIMIT = 5_000_000
# Settings of astropy's Press-Rybicki extirpolation: 10 grid points per the highest
# frequency and 8 neighbours per point keep the power within about 1e-7 of the peak of the
# exact sums (measured against astropy's exact method for N = 300 to 100 000).
_FAST_SETTINGS = {"algorithm": "fasper", "trig_sum_kwds": {"oversampling": 10, "Mfft": 8}}
# When the spot check fails, astropy's low-rank NUFFT with this target error is used.
_ACCURATE_SETTINGS = {"algorithm": "lra", "trig_sum_kwds": {"eps": 1e-10}}
_SPOT_CHECK_POINTS = 8
_SPOT_CHECK_TOLERANCE = 1e-6


@dataclass(frozen=True)
class LombScargleSpectrum:
    """Lomb-Scargle spectrum of unevenly spaced stations.

    Attributes
    ----------
    wavenumber : ndarray
        The grid, cycles per metre (uniform, k_min + j dk).
    power : ndarray
        Standard normalisation: fraction of the variance explained by a sinusoid plus mean
        at each wavenumber, 0..1.
    psd : ndarray
        One-sided density, field units squared per (cycle/m) (see the module notes).
    false_alarm : ndarray
        Per wavenumber: the probability that noise alone gives a peak at least as high as
        ``power`` there anywhere in the searched band, by ``fap_method``. It falls as the
        power rises; its value at the peak is ``false_alarm_probability``.
    peak_wavenumber : float
        Wavenumber of the largest ``power``, cycles per metre.
    peak_power : float
        Largest ``power``.
    false_alarm_probability : float
        Probability that noise alone gives a peak this high anywhere in the searched band
        (``k_min`` to ``k_max`` of this grid), by ``fap_method``. Not the probability that the
        peak is false, and it grows with the band searched.
    fap_method : str
        astropy's method for it (``"baluev"`` is an upper bound for white Gaussian noise).
    method : str
        How the power was computed (exact sums, or the fast method and which algorithm).
    spot_check_error : float
        For the fast method, the largest difference from the exact sums at a few grid points
        (the peak among them), as a fraction of the peak power; 0 for the exact method.
    n : int
        Stations.
    length : float
        x_max - x_min, metres.
    mean_spacing, median_spacing : float
        Metres.
    oversampling : float
        Grid points per 1/length (NaN for a grid given by the caller).
    wavelength : ndarray
        1 / wavenumber, metres.
    """

    wavenumber: np.ndarray = field(repr=False)
    power: np.ndarray = field(repr=False)
    psd: np.ndarray = field(repr=False)
    false_alarm: np.ndarray = field(repr=False)
    peak_wavenumber: float
    peak_power: float
    false_alarm_probability: float
    fap_method: str
    method: str
    spot_check_error: float
    n: int
    length: float
    mean_spacing: float
    median_spacing: float
    oversampling: float

    @property
    def wavelength(self) -> np.ndarray:
        """1 / wavenumber, metres."""
        return 1.0 / self.wavenumber

    def to_frame(self):
        """One row per wavenumber: ``wavenumber_per_km``, ``wavelength_km``, ``power``
        (fraction of variance), ``psd_per_cycle_per_km`` (field units squared per cycle/km)
        and ``false_alarm``."""
        import pandas as pd

        return pd.DataFrame(
            {
                "wavenumber_per_km": self.wavenumber * 1000.0,
                "wavelength_km": self.wavelength / 1000.0,
                "power": self.power,
                "psd_per_cycle_per_km": self.psd / 1000.0,
                "false_alarm": self.false_alarm,
            }
        )

    def records(self) -> list[dict]:
        """One JSON-ready dict per wavenumber.

        Keys: ``wavenumber_per_km``, ``wavelength_km``, ``power`` (fraction of variance),
        ``psd`` (field units squared per cycle/km, as in the density methods' records) and
        ``false_alarm``; Python floats, a non-finite value as None.
        """
        columns = {
            "wavenumber_per_km": self.wavenumber * 1000.0,
            "wavelength_km": self.wavelength / 1000.0,
            "power": self.power,
            "psd": self.psd / 1000.0,
            "false_alarm": self.false_alarm,
        }
        keys = list(columns)
        rows = zip(*(column.tolist() for column in columns.values()), strict=True)
        return [
            {key: (value if math.isfinite(value) else None) for key, value in zip(keys, row, strict=True)}
            for row in rows
        ]

    def __str__(self) -> str:
        grid = (
            "explicit grid"
            if np.isnan(self.oversampling)
            else f"oversampling {self.oversampling:g}"
        )
        return "\n".join(
            [
                f"Lomb-Scargle spectrum ({self.method}), {self.n} stations over "
                f"{self.length / 1000.0:g} km (median spacing {self.median_spacing:g} m)",
                f"  {self.wavenumber.size} wavenumbers, {self.wavenumber[0] * 1000.0:.4g} to "
                f"{self.wavenumber[-1] * 1000.0:.4g} cycles/km ({grid})",
                f"  peak at {self.peak_wavenumber * 1000.0:.4g} cycles/km (wavelength "
                f"{1.0 / self.peak_wavenumber / 1000.0:.4g} km), "
                f"{100.0 * self.peak_power:.2f}% of the variance",
                f"  probability that noise alone gives a peak this high anywhere in the "
                f"searched band: {self.false_alarm_probability:.3g} ({self.fap_method})",
            ]
        )


def _check_stations(distance: object, values: object) -> tuple[np.ndarray, np.ndarray]:
    where = as_values(distance, min_length=3, what="distance")
    field_values = as_values(values, min_length=3)
    if where.size != field_values.size:
        raise InputError(
            f"distance and values differ in length ({where.size} and {field_values.size})"
        )
    if np.ptp(where) <= 0:
        raise InputError("distance: all stations are at the same distance")
    return where, field_values


def wavenumber_grid(
    distance: object,
    *,
    k_min: float | None = None,
    k_max: float | None = None,
    oversampling: float = 5.0,
) -> np.ndarray:
    """The uniform wavenumber grid used by :func:`lomb_scargle`, cycles per metre.

    k_j = k_min + j dk for k_min <= k_j < k_max, with dk = 1/(oversampling L) and
    L = x_max - x_min.

    Parameters
    ----------
    distance : array_like
        Station distances, metres.
    k_min : float, optional
        Default 1/L: one cycle over the record.
    k_max : float, optional
        Default 1/(2 median spacing). Uneven stations have no strict Nyquist wavenumber; this
        is a heuristic (choose k_max from the wavelengths wanted). The grid stops short of
        k_max, so evenly spaced data never hit their Nyquist wavenumber, where the
        Lomb-Scargle sums are degenerate.
    oversampling : float
        Grid points per resolution element 1/L (default 5).
    """
    where = as_values(distance, min_length=3, what="distance")
    length = float(np.ptp(where))
    if length <= 0:
        raise InputError("distance: all stations are at the same distance")
    try:
        oversampling = float(oversampling)
    except (TypeError, ValueError):
        raise InputError(f"oversampling: {oversampling!r} is not a number") from None
    if not oversampling >= 1.0:
        raise InputError(f"oversampling: {oversampling!r} must be at least 1")
    if k_min is None:
        k_min = 1.0 / length
    if k_max is None:
        steps = np.diff(np.sort(where))
        median = float(np.median(steps[steps > 0]))
        k_max = 1.0 / (2.0 * median)
    k_min, k_max = float(k_min), float(k_max)
    if not (np.isfinite(k_min) and np.isfinite(k_max) and 0.0 < k_min < k_max):
        raise InputError(
            f"wavenumber band: need 0 < k_min < k_max, got {k_min:g} and {k_max:g} cycles/m"
        )
    step = 1.0 / (oversampling * length)
    count = int(np.ceil((k_max - k_min) / step - 1e-9))
    return k_min + step * np.arange(max(count, 1))


def _uniform_step(wavenumber: np.ndarray) -> float | None:
    if wavenumber.size < 2:
        return None
    steps = np.diff(wavenumber)
    step = float(np.mean(steps))
    if step > 0 and np.allclose(steps, step, rtol=1e-8, atol=0.0):
        return step
    return None


def lomb_scargle(
    distance: object,
    values: object,
    *,
    wavenumber: object = None,
    k_min: float | None = None,
    k_max: float | None = None,
    oversampling: float = 5.0,
    method: LombScargleMethod = "auto",
    fap_method: FalseAlarmMethod = "baluev",
    n_bootstraps: int = 1000,
    random_seed: int = 0,
) -> LombScargleSpectrum:
    """Floating-mean Lomb-Scargle spectrum of unevenly spaced stations.

    Parameters
    ----------
    distance : array_like, shape (N,)
        Along-track distance of each station, metres (any order; repeated distances allowed).
    values : array_like, shape (N,)
        Field values, finite.
    wavenumber : array_like, optional
        Explicit grid, cycles per metre. Default: :func:`wavenumber_grid` with ``k_min``,
        ``k_max`` and ``oversampling``. The fast method needs a uniform grid; a non-uniform
        one is computed exactly.
    k_min, k_max, oversampling
        See :func:`wavenumber_grid`.
    method : {"auto", "fast", "exact"}
        ``"auto"`` uses the exact sums when N times the number of wavenumbers is at most
        5e6, the fast method otherwise. The fast result is compared with the exact sums at
        8 grid points including the peak; if it is off by more than 1e-6 of the peak power,
        it is recomputed with astropy's more accurate low-rank NUFFT (eps = 1e-10), and a
        warning is given if that fails too.
    fap_method : {"baluev", "davies", "naive", "bootstrap"}
        Method of the false-alarm probabilities, of the highest peak and at every
        wavenumber. The analytic methods are evaluated at every power of the grid at once;
        ``"bootstrap"`` draws ``n_bootstraps`` resampled records once (astropy searches each
        on its own automatic grid up to this grid's highest wavenumber) and reads every
        wavenumber's probability off the same sorted maxima.
    n_bootstraps, random_seed : int
        Used by ``fap_method="bootstrap"`` only.

    Returns
    -------
    LombScargleSpectrum

    Notes
    -----
    astropy ``LombScargle(distance, values, fit_mean=True, center_data=True,
    normalization="standard")``; see VanderPlas (2018) for the method and its statistics.
    For gap-free, evenly spaced segments the FFT estimators of :mod:`profiles.spectral.psd`
    are preferable.
    """
    from astropy.timeseries import LombScargle

    check_option(method, LombScargleMethod, what="method")
    check_option(fap_method, FalseAlarmMethod, what="fap_method")
    where, field_values = _check_stations(distance, values)
    if wavenumber is None:
        grid = wavenumber_grid(where, k_min=k_min, k_max=k_max, oversampling=oversampling)
    else:
        grid = as_values(wavenumber, min_length=1, what="wavenumber")
        if np.any(grid <= 0):
            raise InputError("wavenumber: every wavenumber must be positive (cycles per metre)")
    step = _uniform_step(grid)
    periodogram = LombScargle(
        where, field_values, fit_mean=True, center_data=True, normalization="standard"
    )
    use_fast = method == "fast" or (
        method == "auto" and where.size * grid.size > _EXACT_WORK_LIMIT
    )
    if use_fast and step is None:
        use_fast = False
    spot_error = 0.0
    if use_fast:
        power, used, spot_error = _fast_power(periodogram, grid)
    else:
        power = periodogram.power(grid, method="cython")
        used = "exact (direct sums)"
    power = np.asarray(power, dtype=np.float64)

    peak = int(np.argmax(power))
    fap_options = {}
    if fap_method == "bootstrap":
        fap_options = {"n_bootstraps": int(n_bootstraps), "random_seed": int(random_seed)}
    # One call for the whole grid: the analytic methods are vectorised over the power, and
    # the bootstrap draws its maxima once per call.
    false_alarm = np.asarray(
        periodogram.false_alarm_probability(
            power,
            method=fap_method,
            minimum_frequency=float(grid.min()),
            maximum_frequency=float(grid.max()),
            method_kwds=fap_options or None,
        ),
        dtype=np.float64,
    )
    false_alarm = np.clip(np.broadcast_to(false_alarm, power.shape), 0.0, 1.0)
    residual_sum = float(np.sum((field_values - field_values.mean()) ** 2))
    length = float(np.ptp(where))
    steps = np.diff(np.sort(where))
    mean_spacing = length / (where.size - 1)
    return LombScargleSpectrum(
        wavenumber=grid,
        power=power,
        psd=power * residual_sum * mean_spacing,
        false_alarm=false_alarm,
        peak_wavenumber=float(grid[peak]),
        peak_power=float(power[peak]),
        false_alarm_probability=float(false_alarm[peak]),
        fap_method=fap_method + (f" ({int(n_bootstraps)} draws)" if fap_options else ""),
        method=used,
        spot_check_error=spot_error,
        n=int(where.size),
        length=length,
        mean_spacing=mean_spacing,
        median_spacing=float(np.median(steps)),
        oversampling=float(oversampling) if wavenumber is None else float("nan"),
    )


def _fast_power(periodogram, grid: np.ndarray) -> tuple[np.ndarray, str, float]:
    """Fast power on a uniform grid, spot-checked against the exact sums."""
    attempts = [
        (_FAST_SETTINGS, "fast (Press-Rybicki extirpolation, checked)"),
        (_ACCURATE_SETTINGS, "fast (low-rank NUFFT, checked)"),
    ]
    for settings, label in attempts:
        power = periodogram.power(
            grid, method="fast", assume_regular_frequency=True, method_kwds=settings
        )
        error = _spot_check(periodogram, grid, power)
        if error <= _SPOT_CHECK_TOLERANCE:
            return power, label, error
    warnings.warn(
        f"Lomb-Scargle: the fast method differs from the exact sums by {error:.2g} of the "
        f"peak power; use method='exact' for a reliable spectrum",
        UserWarning,
        stacklevel=3,
    )
    return power, label.replace("checked", "check failed"), error


def _spot_check(periodogram, grid: np.ndarray, power: np.ndarray) -> float:
    """Largest |fast - exact| over a few grid points (the peak among them) / peak power."""
    chosen = np.unique(
        np.concatenate(
            [
                [int(np.argmax(power))],
                np.linspace(0, grid.size - 1, _SPOT_CHECK_POINTS - 1).astype(int),
            ]
        )
    )
    exact = periodogram.power(grid[chosen], method="cython")
    scale = max(float(np.max(power)), float(np.max(exact)), np.finfo(float).tiny)
    return float(np.max(np.abs(power[chosen] - exact)) / scale)
