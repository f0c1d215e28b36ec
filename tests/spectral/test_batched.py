"""Tests of the batched pieces that along-track windows use: window slopes, detrended
harmonics with their sums, the lag-1 coefficient from harmonic variances and the red-noise
test at chosen harmonics.

Outside references, named again beside each check: numpy.polyfit (least-squares lines), the
O(N^2) harmonic sums of tests/spectral/reference.py, statsmodels' acf, mpmath (50-digit sums
of the AR(1) spectrum), and the full red-noise test of profiles.spectral.significance.
"""

from __future__ import annotations

import mpmath
import numpy as np
import pytest
from numpy.lib.stride_tricks import sliding_window_view

from profiles.errors import InputError
from profiles.spectral.harmonics import detrended_harmonics, harmonic_variances
from profiles.spectral.preprocess import window_slopes
from profiles.spectral.significance import (
    ar1_background,
    lag1_autocorrelation,
    lag1_from_harmonics,
    red_noise_at,
    red_noise_from_variances,
    red_noise_test,
)

from .reference import least_squares_residual, slow_harmonics


def _red_series(shape, rho, seed):
    from scipy.signal import lfilter

    rng = np.random.default_rng(seed)
    return 3000.0 + lfilter([1.0], [1.0, -rho], rng.standard_normal(shape), axis=-1) * 20.0


class TestWindowSlopes:
    @pytest.mark.parametrize(("length", "step"), [(160, 23), (161, 23), (64, 16), (100, 100), (96, 40)])
    def test_equal_to_polyfit_per_window(self, length, step):
        # Reference: numpy.polyfit of every window against its sample index.
        values = _red_series(3000, 0.9, seed=length) + 0.05 * np.arange(3000)
        slopes = window_slopes(values, length=length, step=step)
        windows = sliding_window_view(values, length)[::step]
        assert slopes.shape == (windows.shape[0],)
        index = np.arange(length)
        expected = [np.polyfit(index, window, 1)[0] for window in windows]
        np.testing.assert_allclose(slopes, expected, rtol=1e-10, atol=1e-13)

    def test_refusal(self):
        with pytest.raises(InputError, match="do not fit"):
            window_slopes(np.arange(10.0), length=20, step=5)


class TestDetrendedHarmonics:
    @pytest.mark.parametrize("count", [64, 65])
    @pytest.mark.parametrize("detrend", ["linear", "mean"])
    def test_against_slow_sums_and_polyfit(self, count, detrend):
        # References: the O(N^2) sums (tests/spectral/reference.py) for the variances, and
        # numpy.polyfit for the removed line and the residual's ends.
        series = _red_series((6, count), 0.7, seed=count)
        result = detrended_harmonics(series, detrend=detrend, peak_from=2)
        for row in range(series.shape[0]):
            _, _, variance = slow_harmonics(series[row], detrend)
            np.testing.assert_allclose(result.variance[row], variance, rtol=1e-9, atol=1e-12)
            residual = least_squares_residual(series[row], detrend)
            assert result.first[row] == pytest.approx(residual[0], rel=1e-9, abs=1e-9)
            assert result.last[row] == pytest.approx(residual[-1], rel=1e-9, abs=1e-9)
            assert result.total_variance[row] == pytest.approx(np.var(residual, ddof=1), rel=1e-11)
            # Circular lag-1 sum written out on the residual (np.roll wraps the end round).
            circular = np.dot(residual, np.roll(residual, -1)) / (count - 1)
            assert result.circular_lag1[row] == pytest.approx(circular, rel=1e-9, abs=1e-9)
            top = (count - 1) // 2
            assert result.peak_harmonic[row] == int(np.argmax(variance[2 : top + 1])) + 2
        np.testing.assert_allclose(result.mean, series.mean(axis=1), rtol=1e-13)
        np.testing.assert_array_equal(result.variance, harmonic_variances(series, detrend=detrend))
        assert len(result.to_frame()) == 6 and "6 series of" in str(result)

    def test_given_slopes_and_strided_windows(self):
        # The slopes of window_slopes give the same variances as slopes fitted here, and a
        # strided view is read in place.
        values = _red_series(5000, 0.95, seed=3)
        windows = sliding_window_view(values, 256)[::64]
        fitted = detrended_harmonics(windows)
        given = detrended_harmonics(windows, slope=window_slopes(values, length=256, step=64))
        np.testing.assert_allclose(given.variance, fitted.variance, rtol=1e-9, atol=1e-12)
        # Rounding of either sum: about 1e-16 of sum |c_j y_j| / sum c_j^2, here ~1e-15.
        np.testing.assert_allclose(given.slope, fitted.slope, rtol=1e-12, atol=1e-13)

    @pytest.mark.parametrize("count", [64, 65])
    @pytest.mark.parametrize("near", [False, True])
    def test_band_peak_and_fisher_sums_without_the_power(self, count, near):
        # Reference: the O(N^2) sums (tests/spectral/reference.py), band by band, and the same
        # call keeping the power. Bands of one, several and no harmonic; far-apart bands, and
        # near-equal bands close to the Nyquist harmonic (the neighbouring windows' case,
        # whose few columns are kept chunk by chunk and summed at the end).
        series = _red_series((9, count), 0.6, seed=count + 1)
        first = np.array([1, 2, 5, 30, 29, 28, 10, 0, count // 2])
        last = np.array([1, 8, 4, 32, count // 2, 31, 30, count // 2, count // 2])
        if near:
            first = np.array([26, 27, 25, 26, 30, 27, 25, 26, 27])
            last = np.array([30, 32, 31, 31, 29, count // 2, 31, 32, 30])
        kept = detrended_harmonics(series, peak_from=2, band=(first, last))
        lean = detrended_harmonics(series, peak_from=2, band=(first, last), keep_power=False)
        assert lean.power is None and kept.power is not None
        top = (count - 1) // 2
        for row in range(series.shape[0]):
            _, _, variance = slow_harmonics(series[row], "linear")
            band = variance[first[row] : last[row] + 1].sum() if last[row] >= first[row] else 0.0
            assert lean.band_variance[row] == pytest.approx(band, rel=1e-11, abs=1e-12)
            k = int(np.argmax(variance[2 : top + 1])) + 2
            assert lean.peak_harmonic[row] == k
            assert lean.peak_variance[row] == pytest.approx(variance[k], rel=1e-11)
            assert lean.tested_variance[row] == pytest.approx(variance[1 : top + 1].sum(), rel=1e-11)
        for name in ("band_variance", "peak_harmonic", "peak_variance", "tested_variance", "total_variance",
                     "circular_lag1", "mean", "slope"):
            np.testing.assert_array_equal(getattr(lean, name), getattr(kept, name))
        np.testing.assert_array_equal(kept.variance, kept.power * kept.variance_factor)
        with pytest.raises(InputError, match="not kept"):
            _ = lean.variance
        empty = detrended_harmonics(series, band=(np.full(9, 5), np.full(9, 4)), keep_power=False)
        np.testing.assert_array_equal(empty.band_variance, np.zeros(9))
        with pytest.raises(InputError, match="band"):
            detrended_harmonics(series, band=(first, last + count))

    @pytest.mark.parametrize("count", [3, 4, 16, 17, 1000, 1023, 4097])
    def test_line_transform_in_closed_form(self, count):
        # rfft of c_j = j - (N-1)/2 is -N/2 + i (N/2) cot(pi k/N) for k >= 1 (a geometric
        # series), against numpy.fft.rfft of the centred index itself.
        from profiles.spectral.harmonics import _centred_transform
        from profiles.spectral.preprocess import centred_index

        expected = np.fft.rfft(centred_index(count))
        expected[0] = 0.0
        got = _centred_transform(count)
        np.testing.assert_allclose(got, expected, rtol=0, atol=1e-13 * np.abs(expected).max())

    def test_one_series_and_refusals(self):
        one = detrended_harmonics(np.cos(np.arange(40) * 2 * np.pi * 5 / 40) + 2.0)
        assert int(one.peak_harmonic) == 5 and one.variance.shape == (21,)
        with pytest.raises(InputError, match="slope"):
            detrended_harmonics(np.ones((3, 40)) + np.arange(40), slope=np.zeros(2))
        with pytest.raises(InputError, match="slope"):
            detrended_harmonics(np.ones((3, 40)) + np.arange(40), detrend="mean", slope=np.zeros(3))
        with pytest.raises(InputError, match="peak_from"):
            detrended_harmonics(np.arange(40.0) ** 2, peak_from=20)


class TestLag1FromHarmonics:
    @pytest.mark.parametrize("count", [16, 17, 160, 1024])
    @pytest.mark.parametrize("detrend", ["linear", "mean"])
    @pytest.mark.parametrize("estimator", ["sample", "corrected"])
    def test_equals_the_sample_domain_definition(self, count, detrend, estimator):
        # Reference: lag1_autocorrelation, the lag-1 sum over the detrended samples (itself
        # checked against statsmodels' acf in test_significance.py).
        series = _red_series((20, count), 0.85, seed=count)
        got = lag1_from_harmonics(detrended_harmonics(series, detrend=detrend), estimator=estimator)
        expected = lag1_autocorrelation(series, detrend=detrend, estimator=estimator)
        np.testing.assert_allclose(got, expected, rtol=1e-12, atol=1e-14)

    def test_statsmodels_acf(self):
        # statsmodels.tsa.stattools.acf of the polyfit residual (an independent library).
        from statsmodels.tsa.stattools import acf

        series = _red_series(2000, 0.6, seed=9)
        residual = least_squares_residual(series, "linear")
        expected = acf(residual, nlags=1, fft=False)[1]
        assert lag1_from_harmonics(detrended_harmonics(series)) == pytest.approx(expected, rel=1e-12)


class TestRedNoiseAt:
    @pytest.mark.parametrize("n", [64, 65, 1024])
    def test_chosen_harmonics_equal_the_full_test(self, n):
        # Reference: red_noise_from_variances over every harmonic.
        rng = np.random.default_rng(n)
        lag1 = np.array([-0.999, -0.5, 0.0, 0.3, 0.9, 0.999, 0.9995])
        variances = rng.exponential(1.0, (lag1.size, n // 2 + 1)) / (1 + np.arange(n // 2 + 1)) ** 0.5
        full = red_noise_from_variances(variances, n=n, lag1=lag1, spacing=100.0, alpha=0.05)
        total = variances[:, 1:].sum(axis=1)
        for k in (0, 1, 2, n // 5, (n - 1) // 2, n // 2):
            harmonic = np.full(lag1.size, k)
            got = red_noise_at(variances[:, k], harmonic=harmonic, total=total, lag1=lag1, n=n)
            np.testing.assert_array_equal(got, full.significant[:, k])
            np.testing.assert_allclose(
                ar1_background(lag1, n=n, variance=total, harmonic=harmonic), full.background[:, k],
                rtol=1e-13, atol=0.0,
            )
            if k == 0:
                continue
            # The thresholds agree: scale the variance to sit just either side.
            for factor, expected in ((1 - 1e-12, False), (1 + 1e-12, True)):
                edge = red_noise_at(full.threshold[:, k] * factor, harmonic=harmonic, total=total,
                                    lag1=lag1, n=n)
                assert np.all(edge == expected)

    def test_one_length_per_series_equals_one_call_per_length(self):
        # Windows of several lengths in one call: each series gets what a call for its N alone
        # gives (the same arithmetic, number for number), short lengths (summed normaliser)
        # and long ones (closed form) mixed.
        rng = np.random.default_rng(5)
        n = np.array([16, 17, 64, 200, 257, 1024, 16, 1024, 129, 128])
        lag1 = rng.uniform(-0.99, 0.99, n.size)
        total = rng.uniform(1.0, 5.0, n.size)
        harmonic = rng.integers(1, n // 2 + 1)
        variance = total * rng.uniform(0.0, 0.2, n.size)
        background = ar1_background(lag1, n=n, variance=total, harmonic=harmonic)
        flagged = red_noise_at(variance, harmonic=harmonic, total=total, lag1=lag1, n=n)
        for i in range(n.size):
            alone = ar1_background(lag1[i], n=int(n[i]), variance=total[i], harmonic=harmonic[i])
            assert background[i] == alone
            assert flagged[i] == red_noise_at(variance[i], harmonic=harmonic[i], total=total[i], lag1=lag1[i],
                                              n=int(n[i]))
        with pytest.raises(InputError, match="one number of samples"):
            ar1_background(lag1, n=n, variance=total)

    def test_refusals(self):
        with pytest.raises(InputError, match="harmonic"):
            red_noise_at(1.0, harmonic=40, total=10.0, lag1=0.5, n=64)
        with pytest.raises(InputError, match="harmonic"):
            red_noise_at(np.ones(2), harmonic=np.array([3, 40]), total=10.0, lag1=0.5, n=np.array([64, 64]))
        with pytest.raises(InputError, match="whole numbers"):
            red_noise_at(np.ones(2), harmonic=3, total=10.0, lag1=0.5, n=np.array([64.0, 64.0]))
        with pytest.raises(InputError, match="harmonic"):
            red_noise_at(1.0, harmonic=2.5, total=10.0, lag1=0.5, n=64)
        with pytest.raises(InputError, match="alpha"):
            red_noise_at(1.0, harmonic=3, total=10.0, lag1=0.5, n=64, alpha=2.0)


@pytest.mark.parametrize("n", [5, 6, 7, 64, 65, 128, 129, 1024, 4097])
@pytest.mark.parametrize("lag1", [-0.999, -0.5, 0.0, 0.5, 0.9, 0.999])
def test_background_normaliser_against_mpmath(n, lag1):
    # The background adds up to the variance given, so its normaliser is the sum of d_k P_k;
    # that sum written out in mpmath at 50 digits (Gilman, Fuglister and Mitchell 1963 form of
    # the AR(1) spectrum). Checked through ar1_background: B_1 V^-1 = d_1 P_1 / sum.
    with mpmath.workdps(50):
        r = mpmath.mpf(lag1)

        def shape(k):
            return (1 - r**2) / (1 + r**2 - 2 * r * mpmath.cos(2 * mpmath.pi * k / n))

        total = mpmath.fsum(shape(k) * (mpmath.mpf(1) / 2 if 2 * k == n else 1) for k in range(1, n // 2 + 1))
        expected = float(shape(1) / total)
    got = ar1_background(lag1, n=n, variance=1.0, harmonic=1)
    assert float(got) == pytest.approx(expected, rel=1e-12)


def test_red_noise_test_uses_the_same_lag1():
    # red_noise_test estimates r from the same transform; the number is lag1_autocorrelation's.
    series = _red_series((4, 300), 0.8, seed=1)
    result = red_noise_test(series, spacing=50.0)
    np.testing.assert_allclose(result.lag1, lag1_autocorrelation(series, estimator="corrected"),
                               rtol=1e-12)


def test_centred_index_is_kept_and_read_only():
    # c_j = j - (N - 1)/2, built once per N (the windows and harmonics ask for it per call)
    from profiles.spectral.preprocess import centred_index

    first = centred_index(9)
    np.testing.assert_array_equal(first, np.arange(9) - 4.0)
    assert centred_index(9) is first and not first.flags.writeable
