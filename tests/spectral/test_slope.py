"""Tests of profiles.spectral.slope: power-law exponent and depth to source."""

from __future__ import annotations

import numpy as np
import pytest

from profiles.errors import InputError
from profiles.spectral import periodogram, power_law_fit, source_depth, welch_psd


def _line_source_profile(depth: float, spacing: float = 50.0, count: int = 2**16) -> np.ndarray:
    # references.md section 6: a 2-D line source at depth h gives h/(x^2 + h^2) along a
    # profile at right angles to it, whose Fourier transform is pi exp(-|k| h).
    distance = (np.arange(count) - count // 2) * spacing
    return depth / (distance**2 + depth**2)


class TestSourceDepth:
    @pytest.mark.parametrize("depth", [500.0, 2000.0, 5000.0])
    def test_line_source_depth_within_five_percent(self, depth):
        # references.md section 6 (Spector and Grant 1970 relation; numerical check there gives
        # h = 2000.00 m for h = 2000 m): automatic band.
        spectrum = periodogram(_line_source_profile(depth), spacing=50.0, detrend="mean")
        fit = source_depth(spectrum.wavenumber, spectrum.psd)
        assert fit.depth == pytest.approx(depth, rel=0.05)
        assert fit.band_rule == "automatic"
        assert fit.depth_err < 0.05 * depth

    def test_given_band_and_slope_relation(self):
        # references.md section 6: fitting k_angular in [2e-4, 4e-3] rad/m gives slope -4000 m
        # for h = 2000 m, i.e. -2h; against cyclic wavenumber it would be -4 pi h.
        spectrum = periodogram(_line_source_profile(2000.0), spacing=50.0, detrend="mean")
        band = (2e-4 / (2 * np.pi), 4e-3 / (2 * np.pi))
        fit = source_depth(spectrum.wavenumber, spectrum.psd, band=band)
        assert fit.slope == pytest.approx(-4000.0, rel=1e-3)
        assert fit.depth == pytest.approx(2000.0, rel=1e-3)
        assert band[0] <= fit.band_min < fit.band_max <= band[1]
        assert fit.band_rule == "given"
        assert "Depth to source" in str(fit)
        assert fit.to_frame()["depth_km"].iloc[0] == pytest.approx(2.0, rel=1e-3)

    def test_exact_exponential(self):
        # Analytic: P = C exp(-2 h k_angular) gives h exactly with zero error.
        wavenumber = np.linspace(0, 1e-3, 200)
        psd = 7.0 * np.exp(-2 * 1500.0 * 2 * np.pi * wavenumber)
        fit = source_depth(wavenumber, psd, band=(1e-5, 1e-3))
        assert fit.depth == pytest.approx(1500.0, rel=1e-10)
        assert fit.depth_err == pytest.approx(0.0, abs=1e-6)
        assert np.exp(fit.intercept) == pytest.approx(7.0)


class TestPowerLaw:
    def test_exact_power_law(self):
        wavenumber = np.fft.rfftfreq(1000, d=10.0)
        psd = np.zeros_like(wavenumber)
        psd[1:] = 3.0 * wavenumber[1:] ** -2.5
        fit = power_law_fit(wavenumber, psd)
        assert fit.beta == pytest.approx(2.5, rel=1e-12)
        assert fit.beta_err < 1e-10
        assert fit.band_min == pytest.approx(wavenumber[3])  # two lowest positive bins dropped
        assert fit.n_bins >= 5

    @pytest.mark.parametrize("beta", [2.0, 3.0])
    def test_synthetic_profiles_recover_exponent(self, beta):
        # Pitfalls S12: synthetic k^-2 and k^-3 profiles recover the exponent within 0.1
        # (statistical round trip, fixed seeds; Gaussian Fourier coefficients with
        # variance ~ k^-beta).
        rng = np.random.default_rng(int(beta))
        count, spacing = 16384, 100.0
        wavenumber = np.fft.rfftfreq(count, d=spacing)
        amplitude = np.zeros_like(wavenumber)
        amplitude[1:] = wavenumber[1:] ** (-beta / 2)
        estimates = []
        for _ in range(5):
            noise = rng.standard_normal(wavenumber.size) + 1j * rng.standard_normal(wavenumber.size)
            profile = np.fft.irfft(amplitude * noise, count)
            spectrum = welch_psd(profile, spacing=spacing, segment_length=2048 * spacing)
            estimates.append(power_law_fit(spectrum.wavenumber, spectrum.psd).beta)
        assert np.mean(estimates) == pytest.approx(beta, abs=0.1)

    def test_band_stops_at_noise_floor(self):
        # Red spectrum plus a flat floor: the automatic band ends before the floor dominates.
        wavenumber = np.linspace(0, 0.01, 1001)
        psd = np.where(wavenumber > 0, 1e-6 * np.maximum(wavenumber, 1e-12) ** -2.0, 0.0) + 1.0
        fit = power_law_fit(wavenumber, psd)
        signal_at_end = 1e-6 * fit.band_max**-2.0
        assert signal_at_end >= 9.0  # still about 10 x the floor (1) where the band ends
        assert fit.beta == pytest.approx(2.0, abs=0.05)
        assert "beta" in str(fit) and "beta_err" in fit.to_frame().columns

    def test_refusals(self):
        wavenumber = np.linspace(0, 1, 50)
        psd = np.ones(50)
        with pytest.raises(InputError, match="usable bins"):
            power_law_fit(wavenumber, psd, band=(0.5, 0.55))
        with pytest.raises(InputError, match="k_min < k_max"):
            power_law_fit(wavenumber, psd, band=(0.5, 0.1))
        with pytest.raises(InputError, match="differ in length"):
            power_law_fit(wavenumber, psd[:-1])
        with pytest.raises(InputError, match="increase"):
            source_depth(wavenumber[::-1], psd)
