"""Tests of profiles.spectral.significance: Fisher's g test and the AR(1) red-noise test."""

from __future__ import annotations

import numpy as np
import pytest

from profiles.errors import InputError
from profiles.spectral import (
    ar1_background,
    fisher_critical_value,
    fisher_critical_value_approx,
    fisher_from_variances,
    fisher_m,
    fisher_p_value,
    fisher_test,
    harmonic_variances,
    lag1_autocorrelation,
    red_noise_test,
)

from .reference import fisher_tail_mpmath

# references.md section 1: exact critical values (mpmath bisection on Fisher's 1929 tail) and
# the approximation 1 - (alpha/m)^(1/(m-1)), for alpha = 0.05 and 0.01.
CRITICAL_VALUES = [
    # m, exact 0.05, approx 0.05, exact 0.01, approx 0.01
    (5, 0.6837722340, 0.6837722340, 0.7885257473, 0.7885257473),
    (10, 0.4449525603, 0.4449526922, 0.5358411166, 0.5358411166),
    (15, 0.3346119559, 0.3346306865, 0.4068884815, 0.4068885084),
    (20, 0.2704042208, 0.2704593864, 0.3297109243, 0.3297117920),
    (25, 0.2280456085, 0.2281322131, 0.2781931525, 0.2781961964),
    (30, 0.1978406246, 0.1979495607, 0.2412432637, 0.2412490164),
    (40, 0.1573827449, 0.1575157411, 0.1915648416, 0.1915754615),
    (50, 0.1313472721, 0.1314886262, 0.1595381271, 0.1595520615),
    (100, 0.07377818526, 0.07390345779, 0.08881949516, 0.08883724388),
    (200, 0.040736737, 0.040822029, 0.048534007, 0.048548218),
    (500, 0.018246141, 0.018288298, 0.021441807, 0.021449538),
    (1000, 0.0098415284, 0.0098644252, 0.011453958, 0.011458298),
]

# references.md section 1: exact p-value test points.
P_VALUES = [
    (10, 0.5, 0.01953125),  # = 10 * 2**-9, exact rational
    (10, 0.3, 0.39173971),
    (20, 0.25, 0.084203259612),
    (50, 0.2, 0.000892013305532),
    (50, 0.1, 0.264966586079),
    (100, 0.1, 0.00295000620177),
]


def _printed(value: float) -> float:
    """Half a unit in the last printed decimal of a table entry (plus rounding slack)."""
    decimals = len(repr(value).split(".")[1])
    return 0.51 * 10.0**-decimals


class TestFisherDistribution:
    @pytest.mark.parametrize(("m", "exact05", "approx05", "exact01", "approx01"), CRITICAL_VALUES)
    def test_critical_values_table(self, m, exact05, approx05, exact01, approx01):
        # references.md section 1, critical-value table (exact and approximate columns).
        assert fisher_critical_value(m=m, alpha=0.05) == pytest.approx(exact05, abs=_printed(exact05))
        assert fisher_critical_value(m=m, alpha=0.01) == pytest.approx(exact01, abs=_printed(exact01))
        assert fisher_critical_value_approx(m=m, alpha=0.05) == pytest.approx(
            approx05, abs=_printed(approx05)
        )
        assert fisher_critical_value_approx(m=m, alpha=0.01) == pytest.approx(
            approx01, abs=_printed(approx01)
        )

    @pytest.mark.parametrize(("m", "g", "expected"), P_VALUES)
    def test_p_value_points(self, m, g, expected):
        # references.md section 1, p-value test points (given to 9-12 digits).
        assert fisher_p_value(g, m=m) == pytest.approx(expected, rel=1e-9)

    @pytest.mark.parametrize("m", [2, 5, 20, 154, 511, 2000])
    def test_against_mpmath_series(self, m):
        # The exact series summed independently in mpmath at 80 digits
        # (tests/spectral/reference.py), over the whole range of g including p close to 1,
        # where float64 would cancel and the decimal fallback takes over.
        g = np.unique(
            np.concatenate(
                [
                    np.linspace(1.0 / m, 1.0, 25)[1:-1],
                    (np.log(m) + np.array([-2.5, -1.5, 0.0, 2.0, 6.0])) / m,
                ]
            )
        )
        g = g[(g > 1.0 / m) & (g < 1.0)]
        ours = fisher_p_value(g, m=m)
        reference = np.array([fisher_tail_mpmath(x, m) for x in g])
        np.testing.assert_allclose(ours, reference, rtol=1e-10, atol=1e-300)

    def test_level_of_critical_value_is_alpha(self):
        # Identity: p(g_alpha) = alpha (the critical value inverts the tail).
        for m in (7, 63, 400):
            for alpha in (0.1, 0.05, 0.001):
                assert fisher_p_value(fisher_critical_value(m=m, alpha=alpha), m=m) == pytest.approx(
                    alpha, rel=1e-9
                )

    def test_approximation_exact_above_one_half(self):
        # references.md section 1: exact when g_alpha >= 1/2, i.e. m <= 8 at alpha = 0.05.
        for m in range(2, 9):
            exact = fisher_critical_value(m=m, alpha=0.05)
            assert exact >= 0.5
            assert fisher_critical_value_approx(m=m, alpha=0.05) == pytest.approx(exact, rel=1e-12)
        # ...and conservative (too high) beyond.
        assert fisher_critical_value_approx(m=100, alpha=0.05) > fisher_critical_value(m=100, alpha=0.05)

    def test_edges_and_shape(self):
        assert fisher_p_value(0.1, m=10) == 1.0  # g <= 1/m: always exceeded
        assert fisher_p_value(1.0, m=10) == 0.0
        out = fisher_p_value(np.full((3, 4), 0.3), m=10)
        assert out.shape == (3, 4)
        with pytest.raises(InputError):
            fisher_p_value(1.5, m=10)
        with pytest.raises(InputError):
            fisher_p_value(0.5, m=1)
        with pytest.raises(InputError):
            fisher_p_value([0.5, 0.5], m=np.array([10, 1]))
        with pytest.raises(InputError):
            fisher_p_value([0.5, 0.5], m=np.array([10.0, 12.0]))

    def test_one_m_per_statistic(self):
        # Windows of several lengths in one call: each p-value is the number a call with its
        # own m gives, which the mpmath series checks (reference.fisher_tail_mpmath); the
        # statistics cover p = 1 (g <= 1/m), the decimal range (p near 1) and tiny p.
        rng = np.random.default_rng(4)
        m = rng.choice([2, 3, 7, 50, 127, 128, 511], 300)
        near = np.minimum(1.0 / m[150:] * rng.uniform(0.9, 3.0, 150), 1.0)  # p near 1 and exactly 1
        g = np.concatenate([rng.uniform(0.0, 1.0, 150), near])
        got = fisher_p_value(g, m=m)
        expected = np.array([fisher_p_value(x, m=int(k)) for x, k in zip(g, m, strict=True)])
        np.testing.assert_array_equal(got, expected)
        for x, k, p in list(zip(g, m, got, strict=True))[::15]:
            assert p == pytest.approx(fisher_tail_mpmath(x, int(k)), rel=1e-10, abs=1e-300)
        shaped = fisher_p_value(g.reshape(3, 100), m=m.reshape(3, 100))
        np.testing.assert_array_equal(shaped, got.reshape(3, 100))

    def test_m_from_n(self):
        # references.md section 1: m = (N-1)/2 for odd N, N/2 - 1 for even N.
        assert fisher_m(309) == 154
        assert fisher_m(202) == 100
        assert fisher_m(11) == 5


class TestFisherTest:
    def test_sunspots(self, sunspots):
        # references.md section 5: statsmodels yearly sunspots, demeaned, boxcar: k = 28,
        # g = 0.2678747684, exact p = 2.945e-19.
        result = fisher_test(sunspots, spacing=1.0, detrend="mean")
        assert result.m == 154
        assert result.dominant_k == 28
        assert result.g == pytest.approx(0.2678747684, rel=1e-9)
        assert result.p_value < 1e-15
        assert result.p_value == pytest.approx(2.945e-19, rel=1e-3)
        assert 10.0 <= result.dominant_wavelength <= 12.0
        assert result.significant
        assert result.null == "white noise"
        assert "significant" in str(result)

    def test_white_noise_p_values_are_uniform(self):
        # Under the null the exact p-value is uniform: Kolmogorov-Smirnov against U(0, 1)
        # (scipy.stats.kstest), fixed seed, 2000 series of N = 101 (m = 50).
        from scipy.stats import kstest

        noise = np.random.default_rng(20240601).standard_normal((2000, 101))
        result = fisher_test(noise, spacing=1.0, detrend="mean")
        assert result.p_value.shape == (2000,)
        assert kstest(result.p_value, "uniform").pvalue > 0.01
        assert 0.03 <= np.mean(result.significant) <= 0.07

    def test_detects_weak_sine(self):
        # Pitfalls T2: a sine at amplitude 0.5 of the noise sd over 2000 samples, p < 1e-4.
        rng = np.random.default_rng(5)
        j = np.arange(2000)
        values = 0.5 * np.sin(2 * np.pi * j / 37.0) + rng.standard_normal(2000)
        result = fisher_test(values, spacing=10.0)
        assert result.p_value < 1e-4
        assert result.dominant_wavelength == pytest.approx(370.0, rel=0.02)

    def test_batched_equals_one_at_a_time(self):
        rng = np.random.default_rng(9)
        windows = rng.standard_normal((25, 64))
        batch = fisher_test(windows, spacing=5.0)
        for index, values in enumerate(windows):
            single = fisher_test(values, spacing=5.0)
            assert batch.g[index] == pytest.approx(single.g, rel=1e-12)
            assert batch.p_value[index] == pytest.approx(single.p_value, rel=1e-12)
            assert batch.dominant_k[index] == single.dominant_k
        frame = batch.to_frame()
        assert len(frame) == 25 and "dominant_wavelength_km" in frame.columns

    def test_nyquist_excluded_for_even_n(self):
        # A pure alternating series puts all variance at k = N/2, which is not tested.
        count = 40
        values = (-1.0) ** np.arange(count) + 1e-3 * np.random.default_rng(0).standard_normal(count)
        variances = harmonic_variances(values, detrend="mean")
        result = fisher_from_variances(variances, n=count, spacing=1.0)
        assert result.m == 19 and result.dominant_k <= 19

    def test_variances_must_match_n(self):
        with pytest.raises(InputError, match="entries"):
            fisher_from_variances(np.ones(10), n=30, spacing=1.0)

    def test_critical_values_found_when_asked_for(self):
        # The verdict needs only the p-value; the critical values are those of
        # fisher_critical_value (checked against the published table above), found on first
        # use and kept.
        result = fisher_from_variances(np.linspace(1.0, 2.0, 51), n=100, spacing=1.0, alpha=0.01)
        assert "g_critical" not in vars(result)
        assert result.g_critical == fisher_critical_value(m=49, alpha=0.01)
        assert result.g_critical_approx == fisher_critical_value_approx(m=49, alpha=0.01)
        assert "g_critical" in vars(result)


def _ar1(rho: float, shape: tuple[int, int], seed: int) -> np.ndarray:
    from scipy.signal import lfilter

    rng = np.random.default_rng(seed)
    burn = 300
    noise = rng.standard_normal((shape[0], shape[1] + burn))
    return lfilter([1.0], [1.0, -rho], noise, axis=-1)[:, burn:]


class TestRedNoise:
    @pytest.mark.parametrize(("rho", "count"), [(0.0, 256), (0.5, 256), (0.8, 512), (0.9, 512)])
    def test_false_detections_near_alpha(self, rho, count):
        # Statistical round trip: AR(1) noise without a sine is flagged at about alpha = 5 %
        # of the harmonics (Gilman, Fuglister and Mitchell 1963 null); fixed seeds.
        series = _ar1(rho, (300, count), seed=int(rho * 100) + count)
        result = red_noise_test(series, spacing=1.0)
        rate = result.significant[:, 1:].mean()
        assert 0.03 <= rate <= 0.07

    def test_strong_sine_is_detected(self):
        series = _ar1(0.7, (1, 1024), seed=11)[0]
        j = np.arange(1024)
        series = series + 1.5 * np.cos(2 * np.pi * 100 * j / 1024)
        result = red_noise_test(series, spacing=25.0)
        assert 100 in result.significant_k
        assert result.lag1 == pytest.approx(0.7, abs=0.1)
        assert "red noise" in str(result)
        frame = result.to_frame()
        assert bool(frame.loc[100, "significant"])

    def test_lag1_matches_statsmodels_acf(self):
        # The "sample" estimator is the usual lag-1 autocorrelation of the residual:
        # statsmodels.tsa.stattools.acf on the detrended series gives the same number.
        from statsmodels.tsa.stattools import acf

        series = _ar1(0.6, (1, 3000), seed=2)[0]
        index = np.arange(series.size)
        residual = series - np.polyval(np.polyfit(index, series, 1), index)
        expected = acf(residual, nlags=1, fft=False)[1]
        assert lag1_autocorrelation(series) == pytest.approx(expected, rel=1e-12)
        corrected = lag1_autocorrelation(series, estimator="corrected")
        assert corrected == pytest.approx((3000 * expected + 1) / 2997, rel=1e-12)

    def test_background_white_limit_and_total(self):
        # r = 0: the background is flat, 2V/(N-1) per harmonic (half at the Nyquist of even N),
        # and it always adds up to V.
        for count in (63, 64):
            background = ar1_background(0.0, n=count, variance=5.0)
            assert background[0] == 0.0
            assert background[1:].sum() == pytest.approx(5.0)
            assert background[5] == pytest.approx(2 * 5.0 / (count - 1))
        red = ar1_background(np.array([0.3, 0.9]), n=100, variance=np.array([1.0, 2.0]))
        assert red.shape == (2, 51)
        np.testing.assert_allclose(red.sum(axis=-1), [1.0, 2.0])
        assert red[1, 1] > red[1, 50]

    def test_threshold_is_chi_square_quantile(self):
        # chi2_2 quantile at 0.95 is -2 ln 0.05 (closed form), so threshold/background = 2.9957.
        result = red_noise_test(np.random.default_rng(0).standard_normal(101), spacing=1.0)
        ratio = result.threshold[1:] / result.background[1:]
        np.testing.assert_allclose(ratio, -np.log(0.05), rtol=1e-12)
        even = red_noise_test(np.random.default_rng(0).standard_normal(100), spacing=1.0)
        # chi2_1 quantile at 0.95 = 3.841458820694124 (scipy.stats.chi2.ppf).
        assert even.threshold[-1] / even.background[-1] == pytest.approx(3.841458820694124)
        with pytest.raises(InputError):
            _ = red_noise_test(np.ones((2, 50)) + np.arange(50), spacing=1.0).significant_k
