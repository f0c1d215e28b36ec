"""Tests of profiles.spectral.harmonics: the harmonic table and the batched variances."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from profiles.errors import InputError, SpacingError
from profiles.spectral import harmonic_table, harmonic_variances

from .reference import least_squares_residual, slow_harmonics


class TestAgainstSlowSums:
    """The FFT table against the O(N^2) sums written out (tests/spectral/reference.py)."""

    @pytest.mark.parametrize("count", [11, 12, 101, 256])
    @pytest.mark.parametrize("detrend", ["linear", "mean"])
    def test_coefficients_and_variances(self, count, detrend):
        rng = np.random.default_rng(count)
        values = 40.0 + 0.02 * np.arange(count) + rng.standard_normal(count)
        table = harmonic_table(values, spacing=50.0, detrend=detrend)
        a, b, variance = slow_harmonics(values, detrend)
        a[0] = values.mean()  # the table reports the mean at k = 0
        np.testing.assert_allclose(table.cosine, a, rtol=0, atol=1e-12)
        np.testing.assert_allclose(table.sine, b, rtol=0, atol=1e-12)
        np.testing.assert_allclose(table.variance, variance, rtol=1e-10, atol=1e-25)

    @pytest.mark.parametrize("count", [64, 75])
    def test_tapered_against_slow_sums(self, count):
        from scipy.signal import get_window

        rng = np.random.default_rng(7)
        values = rng.standard_normal(count)
        weights = get_window("hann", count, fftbins=True)
        table = harmonic_table(values, spacing=10.0, taper="hann")
        a, b, variance = slow_harmonics(values, "linear", weights)
        np.testing.assert_allclose(table.cosine[1:], a[1:], atol=1e-12)
        np.testing.assert_allclose(table.sine[1:], b[1:], atol=1e-12)
        np.testing.assert_allclose(table.variance, variance, rtol=1e-10, atol=1e-25)
        assert table.taper == "hann"

    def test_batched_equals_one_at_a_time(self):
        rng = np.random.default_rng(3)
        windows = rng.standard_normal((40, 128)).cumsum(axis=1)
        batched = harmonic_variances(windows)
        for row, values in zip(batched, windows, strict=True):
            np.testing.assert_allclose(row, harmonic_table(values, spacing=1.0).variance, rtol=1e-12)
        assert harmonic_variances(windows.reshape(4, 10, 128)).shape == (4, 10, 65)


class TestIdentities:
    """Analytic identities: Parseval (references.md section 10), sinusoids, reconstruction."""

    @pytest.mark.parametrize("count", [11, 12, 1000, 1001])
    def test_parseval_odd_and_even(self, count):
        # references.md section 10: sum_{k>=1} s_k^2 equals the N-1 sample variance.
        values = np.random.default_rng(count).standard_normal(count) + 3.0
        table = harmonic_table(values, spacing=25.0, detrend="mean")
        assert table.variance[1:].sum() == pytest.approx(values.var(ddof=1), rel=1e-12)
        assert table.total_variance == pytest.approx(values.var(ddof=1), rel=1e-12)

    def test_nyquist_term_even_n(self):
        # references.md section 10: the Nyquist term is N/(N-1) A^2 with A = (1/N) sum y (-1)^j,
        # i.e. N/(4(N-1)) a^2 in the 2/N convention.
        count = 64
        values = 2.5 * (-1.0) ** np.arange(count)
        table = harmonic_table(values, spacing=1.0, detrend="mean")
        assert table.cosine[-1] == pytest.approx(2.5)
        two_over_n = 2.0 / count * np.sum(values * (-1.0) ** np.arange(count))
        assert table.variance[-1] == pytest.approx(count / (4 * (count - 1)) * two_over_n**2)
        assert table.variance[-1] == pytest.approx(values.var(ddof=1))

    def test_sinusoid_amplitude_phase_variance(self):
        # Analytic: A cos(2 pi k j/N - phi) has a_k = A cos phi, b_k = A sin phi and
        # s_k^2 = N/(2(N-1)) A^2 (A^2/2 with the N-1 denominator's correction).
        count, k, amplitude, phase = 200, 7, 4.0, np.radians(-60.0)
        j = np.arange(count)
        table = harmonic_table(
            amplitude * np.cos(2 * np.pi * k * j / count - phase), spacing=100.0, detrend="mean"
        )
        assert table.dominant_k == k
        assert table.amplitude[k] == pytest.approx(amplitude)
        assert table.phase_deg[k] == pytest.approx(-60.0)
        assert table.variance[k] == pytest.approx(count / (2 * (count - 1)) * amplitude**2)
        assert table.wavelength[k] == pytest.approx(count * 100.0 / k)
        assert table.wavenumber[k] == pytest.approx(k / (count * 100.0))
        assert table.variance_fraction[k] == pytest.approx(1.0)

    def test_phase_range(self):
        # atan2 convention: phases in (-180, 180]; a negative mean and a negative alternating
        # term have phase 180, never -180.
        values = -5.0 - 2.0 * (-1.0) ** np.arange(8)
        table = harmonic_table(values, spacing=1.0, detrend="mean")
        assert table.phase_deg[0] == 180.0 and table.phase_deg[-1] == 180.0
        noise = harmonic_table(np.random.default_rng(0).standard_normal(101), spacing=1.0)
        assert np.all((noise.phase_deg > -180.0) & (noise.phase_deg <= 180.0))

    @pytest.mark.parametrize("count", [30, 31])
    def test_series_reconstructs_the_data(self, count):
        # The Fourier series with the stated coefficients reproduces the input exactly.
        values = np.random.default_rng(1).standard_normal(count)
        table = harmonic_table(values, spacing=1.0, detrend="mean")
        j = np.arange(count)
        k = table.harmonic[1:, np.newaxis]
        series = table.cosine[0] + np.sum(
            table.cosine[1:, np.newaxis] * np.cos(2 * np.pi * k * j / count)
            + table.sine[1:, np.newaxis] * np.sin(2 * np.pi * k * j / count),
            axis=0,
        )
        np.testing.assert_allclose(series, values, atol=1e-12)

    def test_trend_and_mean_reported(self):
        distance = np.arange(500) * 20.0
        values = 1200.0 + 0.004 * distance + np.sin(2 * np.pi * distance / 1000.0)
        table = harmonic_table(values, spacing=20.0)
        assert table.mean == pytest.approx(values.mean())
        assert table.cosine[0] == pytest.approx(values.mean())
        # The removed line is the least-squares line of numpy.polyfit against distance.
        assert table.trend == pytest.approx(np.polyfit(distance, values, 1)[0], rel=1e-12)
        assert table.wavelength[0] == np.inf

    def test_wavenumbers_match_numpy(self):
        # Common practice: the rfft grid is numpy.fft.rfftfreq(N, d=dx).
        table = harmonic_table(np.arange(33.0) ** 2, spacing=12.5)
        np.testing.assert_allclose(table.wavenumber, np.fft.rfftfreq(33, d=12.5))


class TestSunspots:
    """statsmodels' yearly sunspot numbers, 1700-2008 (references.md section 5)."""

    def test_dominant_harmonic_and_share(self, sunspots):
        values = sunspots
        assert values.size == 309
        table = harmonic_table(values, spacing=1.0, detrend="mean")
        assert table.mean == pytest.approx(49.75210356, rel=1e-9)
        assert table.total_variance == pytest.approx(1636.41244, rel=1e-8)
        assert table.dominant_k == 28
        period = table.wavelength[28]  # "metres" here stand for years
        assert period == pytest.approx(309 / 28)
        assert 10.0 <= period <= 12.0
        assert table.variance[28] == pytest.approx(438.354, rel=1e-5)
        assert 100 * table.variance_fraction[28] == pytest.approx(26.79, abs=0.005)
        # Next harmonics, references.md section 5: k = 31 (14.25 %), 29 (9.05 %), 3 (8.70 %).
        order = np.argsort(table.variance[1:])[::-1][:4] + 1
        assert list(order) == [28, 31, 29, 3]
        assert 100 * table.variance_fraction[31] == pytest.approx(14.25, abs=0.005)


finite_values = st.floats(-1e3, 1e3, allow_nan=False, allow_infinity=False)


class TestProperties:
    """Hypothesis properties: Parseval, shift invariance, linearity."""

    @settings(max_examples=60, deadline=None)
    @given(arrays(np.float64, st.integers(3, 150), elements=finite_values))
    def test_variances_sum_to_sample_variance(self, values):
        for detrend in ("linear", "mean"):
            residual = least_squares_residual(values, detrend)
            variances = harmonic_variances(values, detrend=detrend)
            scale = 1e-9 * (np.max(np.abs(values)) ** 2 + 1.0)
            assert abs(variances[1:].sum() - residual.var(ddof=1)) <= scale

    @settings(max_examples=60, deadline=None)
    @given(
        arrays(np.float64, st.integers(3, 150), elements=finite_values),
        st.integers(0, 1000),
    )
    def test_amplitudes_unchanged_by_circular_shift(self, values, shift):
        shifted = np.roll(values, shift)
        original = harmonic_table(values, spacing=1.0, detrend="mean").amplitude
        moved = harmonic_table(shifted, spacing=1.0, detrend="mean").amplitude
        scale = 1e-9 * (np.max(np.abs(values)) + 1.0)
        np.testing.assert_allclose(moved, original, rtol=0, atol=scale)

    @settings(max_examples=60, deadline=None)
    @given(
        st.integers(3, 120).flatmap(
            lambda n: st.tuples(
                arrays(np.float64, n, elements=finite_values),
                arrays(np.float64, n, elements=finite_values),
            )
        ),
        st.floats(-10, 10),
        st.floats(-10, 10),
    )
    def test_coefficients_are_linear(self, pair, first, second):
        x, y = pair
        combined = harmonic_table(first * x + second * y, spacing=1.0).coefficients
        parts = (
            first * harmonic_table(x, spacing=1.0).coefficients
            + second * harmonic_table(y, spacing=1.0).coefficients
        )
        scale = 1e-9 * (np.max(np.abs(x)) + np.max(np.abs(y)) + 1.0) * 20.0
        np.testing.assert_allclose(combined, parts, rtol=0, atol=scale)


class TestBadInput:
    def test_nan_is_refused_with_its_index(self):
        values = np.ones(20)
        values[7] = np.nan
        with pytest.raises(InputError, match="index 7"):
            harmonic_table(values, spacing=1.0)
        with pytest.raises(InputError, match="NaN"):
            harmonic_variances(np.vstack([np.ones(20), values]))
        with pytest.raises(InputError, match="NaN"):
            harmonic_table(values, spacing=1.0, taper="hann")

    def test_spacing_must_be_positive(self):
        with pytest.raises(SpacingError):
            harmonic_table(np.ones(10), spacing=0.0)
        with pytest.raises(SpacingError):
            harmonic_table(np.ones(10), spacing="ten")

    def test_options_are_checked(self):
        with pytest.raises(InputError, match="detrend"):
            harmonic_table(np.ones(10), spacing=1.0, detrend="quadratic")
        with pytest.raises(InputError, match="taper"):
            harmonic_table(np.ones(10), spacing=1.0, taper="no-such-window")
        with pytest.raises(InputError, match="at least 3"):
            harmonic_table(np.ones(2), spacing=1.0)
        with pytest.raises(InputError, match="1-D"):
            harmonic_table(np.ones((2, 10)), spacing=1.0)


def test_frame_and_text():
    table = harmonic_table(np.sin(np.arange(64) / 3.0), spacing=250.0)
    frame = table.to_frame()
    assert list(frame.columns) == [
        "harmonic",
        "wavenumber_per_km",
        "wavelength_km",
        "cosine",
        "sine",
        "amplitude",
        "phase_deg",
        "variance",
        "variance_fraction",
    ]
    assert len(frame) == 33
    assert frame["wavelength_km"].iloc[1] == pytest.approx(16.0)
    text = str(table)
    assert "64 samples at 250 m" in text and "largest harmonics" in text
