"""Spectral core of ``profiles``: pure functions on uniformly spaced (or station) arrays.

Units: ``spacing`` and distances in metres (keyword-only, no default), wavenumbers in cycles
per metre, wavelengths in metres, field values in the user's units. Results are frozen
dataclasses with ``to_frame()`` (units in the column names, per km) and a readable
``str()``. Formulas and sources: docs/methods-spectral.md.

Modules
-------
harmonics
    Harmonic table (Fourier coefficients, variance per harmonic); batched variances, and the
    detrended harmonics of many windows with the sums their tests need.
significance
    Fisher's g test (white noise) and the AR(1) red-noise test.
psd
    Periodogram, Welch and multitaper densities with chi-square bounds, and the Fourier
    coefficients they are built from (for cross-spectra).
uneven
    Lomb-Scargle spectrum of unevenly spaced stations (astropy).
slope
    Power-law exponent and depth to source from a spectrum.
aliasing
    Nyquist wavelength and apparent (folded) wavelengths.
preprocess
    Input checks, detrending and tapers shared by all of the above.
"""

from .aliasing import (
    apparent_wavelength,
    apparent_wavenumber,
    is_aliased,
    nyquist_wavelength,
    nyquist_wavenumber,
)
from .harmonics import (
    DetrendedHarmonics,
    HarmonicTable,
    detrended_harmonics,
    harmonic_table,
    harmonic_variances,
)
from .preprocess import Detrend, Taper, window_slopes
from .psd import (
    ConfidenceFactors,
    MultitaperCoefficients,
    Spectrum,
    WelchCoefficients,
    adaptive_weights,
    confidence_factors,
    multitaper_coefficients,
    multitaper_psd,
    periodogram,
    welch_coefficients,
    welch_dof,
    welch_psd,
)
from .significance import (
    FisherTest,
    Lag1Estimator,
    RedNoiseTest,
    ar1_background,
    fisher_critical_value,
    fisher_critical_value_approx,
    fisher_from_variances,
    fisher_m,
    fisher_p_value,
    fisher_test,
    lag1_autocorrelation,
    lag1_from_harmonics,
    red_noise_at,
    red_noise_from_variances,
    red_noise_test,
)
from .slope import DepthFit, SlopeFit, power_law_fit, source_depth
from .uneven import (
    FalseAlarmMethod,
    LombScargleMethod,
    LombScargleSpectrum,
    lomb_scargle,
    wavenumber_grid,
)

__all__ = [
    "ConfidenceFactors",
    "DepthFit",
    "Detrend",
    "DetrendedHarmonics",
    "FalseAlarmMethod",
    "FisherTest",
    "HarmonicTable",
    "Lag1Estimator",
    "LombScargleMethod",
    "LombScargleSpectrum",
    "MultitaperCoefficients",
    "RedNoiseTest",
    "SlopeFit",
    "Spectrum",
    "Taper",
    "WelchCoefficients",
    "adaptive_weights",
    "apparent_wavelength",
    "apparent_wavenumber",
    "ar1_background",
    "confidence_factors",
    "detrended_harmonics",
    "fisher_critical_value",
    "fisher_critical_value_approx",
    "fisher_from_variances",
    "fisher_m",
    "fisher_p_value",
    "fisher_test",
    "harmonic_table",
    "harmonic_variances",
    "is_aliased",
    "lag1_autocorrelation",
    "lag1_from_harmonics",
    "lomb_scargle",
    "multitaper_coefficients",
    "multitaper_psd",
    "nyquist_wavelength",
    "nyquist_wavenumber",
    "periodogram",
    "power_law_fit",
    "red_noise_at",
    "red_noise_from_variances",
    "red_noise_test",
    "source_depth",
    "wavenumber_grid",
    "welch_coefficients",
    "welch_dof",
    "welch_psd",
    "window_slopes",
]
