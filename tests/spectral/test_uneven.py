"""Tests of profiles.spectral.uneven: Lomb-Scargle of unevenly spaced stations."""

from __future__ import annotations

import numpy as np
import pytest

from profiles.errors import InputError
from profiles.spectral import lomb_scargle, periodogram, wavenumber_grid


def _stations(count: int, seed: int, wavelength: float = 7000.0, noise: float = 1.0):
    rng = np.random.default_rng(seed)
    distance = np.sort(rng.uniform(0.0, 100.0 * count, count))
    values = 3.0 + np.sin(2 * np.pi * distance / wavelength) + noise * rng.standard_normal(count)
    return distance, values


class TestAgainstReferences:
    def test_exact_matches_astropy_slow_reference(self):
        # astropy's pure-python "slow" method (its readable reference implementation) on the
        # same floating-mean model and grid.
        from astropy.timeseries import LombScargle

        distance, values = _stations(300, seed=1)
        ours = lomb_scargle(distance, values, method="exact")
        reference = LombScargle(distance, values, fit_mean=True, center_data=True).power(
            ours.wavenumber, method="slow"
        )
        np.testing.assert_allclose(ours.power, reference, rtol=1e-9, atol=1e-12)

    def test_exact_and_fast_match_scipy_lombscargle(self):
        # scipy.signal.lombscargle (angular frequencies!) with floating_mean=True and
        # normalize=True is the same standard normalisation: an independent implementation.
        from scipy.signal import lombscargle as scipy_lombscargle

        distance, values = _stations(600, seed=2)
        grid = wavenumber_grid(distance)
        expected = scipy_lombscargle(
            distance, values, 2 * np.pi * grid, floating_mean=True, normalize=True
        )
        exact = lomb_scargle(distance, values, wavenumber=grid, method="exact")
        fast = lomb_scargle(distance, values, wavenumber=grid, method="fast")
        peak = expected.max()
        assert np.max(np.abs(exact.power - expected)) <= 1e-9 * peak
        assert np.max(np.abs(fast.power - expected)) <= 1e-6 * peak
        assert fast.method.startswith("fast") and "checked" in fast.method
        assert fast.spot_check_error <= 1e-6

    @pytest.mark.parametrize("count", [400, 401])
    def test_even_data_equal_boxcar_periodogram(self, count):
        # references.md section 4 (Lomb 1976; Scargle 1982): for evenly spaced data at the
        # Fourier wavenumbers, Lomb-Scargle equals the classical periodogram.
        spacing = 50.0
        distance = np.arange(count) * spacing
        rng = np.random.default_rng(count)
        values = np.sin(2 * np.pi * distance / 2500.0) + rng.standard_normal(count) + 10.0
        m = (count - 1) // 2
        grid = np.arange(1, m + 1) / (count * spacing)
        ls = lomb_scargle(distance, values, wavenumber=grid, method="exact")
        boxcar = periodogram(values, spacing=spacing, detrend="mean")
        np.testing.assert_allclose(ls.psd, boxcar.psd[1 : m + 1], rtol=1e-10)
        assert ls.peak_wavenumber == pytest.approx(1 / 2500.0, rel=0.01)


class TestGridAndStatistics:
    def test_default_grid(self):
        # k_min = 1/L, step 1/(5 L), strictly below k_max = 1/(2 median spacing).
        distance, values = _stations(500, seed=3)
        length = np.ptp(distance)
        median = np.median(np.diff(distance))
        result = lomb_scargle(distance, values)
        grid = result.wavenumber
        assert grid[0] == pytest.approx(1 / length)
        np.testing.assert_allclose(np.diff(grid), 1 / (5 * length))
        assert grid[-1] < 1 / (2 * median) <= grid[-1] + 1 / (5 * length) + 1e-15
        assert result.median_spacing == pytest.approx(median)
        assert result.oversampling == 5.0

    def test_even_grid_stops_before_nyquist(self):
        distance = np.arange(64) * 10.0
        grid = wavenumber_grid(distance)
        assert grid[-1] < 0.05

    def test_gappy_profile_recovers_the_wavelength(self):
        # Pitfalls S11: with 20 % of the stations removed at random, the peak is still found.
        spacing = 25.0
        distance = np.arange(8000) * spacing
        rng = np.random.default_rng(4)
        values = np.sin(2 * np.pi * distance / 3300.0) + rng.standard_normal(distance.size)
        keep = rng.random(distance.size) > 0.2
        result = lomb_scargle(distance[keep], values[keep], k_max=2e-3)
        assert 1 / result.peak_wavenumber == pytest.approx(3300.0, rel=0.01)
        assert result.false_alarm_probability < 1e-10

    def test_false_alarm_rate_of_white_noise(self):
        # Baluev's FAP is an upper bound for white noise (VanderPlas 2018): at most about
        # 5 % of pure-noise records reach FAP < 0.05. Fixed seeds, 100 records.
        rng = np.random.default_rng(5)
        hits = 0
        for _ in range(100):
            distance = np.sort(rng.uniform(0, 10_000.0, 100))
            result = lomb_scargle(distance, rng.standard_normal(100), method="exact")
            hits += result.false_alarm_probability < 0.05
        assert hits / 100 <= 0.08

    @pytest.mark.parametrize("jitter", [0.0, 0.3])
    def test_density_integrates_to_about_the_variance(self, jitter):
        # For near-regular stations the density up to 1/(2 mean spacing) integrates to about
        # the variance (exactly, at the Fourier wavenumbers, for regular ones). Random stations
        # spread white noise beyond that wavenumber, so no such check applies to them.
        rng = np.random.default_rng(6)
        spacing = 100.0
        distance = np.arange(3000) * spacing + rng.uniform(-jitter, jitter, 3000) * spacing
        values = rng.standard_normal(3000)
        result = lomb_scargle(distance, values, k_max=1 / (2 * spacing), oversampling=1.0)
        step = result.wavenumber[1] - result.wavenumber[0]
        assert result.psd.sum() * step == pytest.approx(values.var(), rel=0.05)

    def test_bootstrap_method_is_named(self):
        distance, values = _stations(120, seed=7)
        result = lomb_scargle(distance, values, fap_method="bootstrap", n_bootstraps=50)
        assert result.fap_method == "bootstrap (50 draws)"
        assert 0.0 <= result.false_alarm_probability <= 1.0

    @pytest.mark.parametrize("fap_method", ["baluev", "davies", "naive"])
    def test_false_alarm_at_every_wavenumber_matches_astropy(self, fap_method):
        # Reference: astropy's LombScargle.false_alarm_probability called on one power at a
        # time over the same band; our array comes from one vectorised call.
        from astropy.timeseries import LombScargle

        distance, values = _stations(250, seed=9, noise=2.0)
        result = lomb_scargle(distance, values, fap_method=fap_method, method="exact")
        assert result.false_alarm.shape == result.power.shape
        reference = LombScargle(distance, values, fit_mean=True, center_data=True)
        chosen = np.unique(np.r_[np.linspace(0, result.power.size - 1, 7).astype(int),
                                 int(np.argmax(result.power))])
        for i in chosen:
            expected = reference.false_alarm_probability(
                result.power[i], method=fap_method,
                minimum_frequency=result.wavenumber.min(), maximum_frequency=result.wavenumber.max(),
            )
            assert result.false_alarm[i] == pytest.approx(min(float(expected), 1.0), rel=1e-12, abs=1e-300)
        assert result.false_alarm_probability == result.false_alarm[np.argmax(result.power)]
        # A higher peak is never more likely from noise alone: where the approximations are
        # meant (high peaks, small probabilities) the array falls as the power rises. Near 1,
        # Baluev's bound wobbles by about 1e-5 (astropy's own values, kept as they are).
        order = np.argsort(result.power)
        small = result.false_alarm[order] < 0.5
        assert small.sum() >= 3
        assert np.all(np.diff(result.false_alarm[order][small]) <= 1e-15)

    def test_bootstrap_false_alarm_shares_one_set_of_draws(self):
        # With 40 draws every probability is a multiple of 1/40 (the share of bootstrap maxima
        # at or above the power), it falls as the power rises, and the peak's value is the
        # scalar of the result (astropy's bootstrap: the sorted maxima of resampled records).
        distance, values = _stations(120, seed=7)
        result = lomb_scargle(distance, values, fap_method="bootstrap", n_bootstraps=40)
        np.testing.assert_allclose(result.false_alarm * 40, np.round(result.false_alarm * 40), atol=1e-9)
        order = np.argsort(result.power)
        assert np.all(np.diff(result.false_alarm[order]) <= 0)
        assert result.false_alarm_probability == result.false_alarm[np.argmax(result.power)]

    def test_records_are_json_ready(self):
        import json

        distance, values = _stations(300, seed=8)
        result = lomb_scargle(distance, values)
        records = result.records()
        assert len(records) == result.wavenumber.size
        assert set(records[0]) == {"wavenumber_per_km", "wavelength_km", "power", "psd", "false_alarm"}
        peak = int(np.argmax(result.power))
        assert records[peak]["wavelength_km"] == pytest.approx(1e-3 / result.peak_wavenumber)
        assert records[peak]["psd"] == pytest.approx(result.psd[peak] / 1000.0)  # per cycle/km
        assert records[peak]["false_alarm"] == result.false_alarm_probability
        assert json.loads(json.dumps(records)) == records

    def test_frame_and_text(self):
        distance, values = _stations(300, seed=8)
        result = lomb_scargle(distance, values)
        frame = result.to_frame()
        assert list(frame.columns) == ["wavenumber_per_km", "wavelength_km", "power",
                                       "psd_per_cycle_per_km", "false_alarm"]
        text = str(result)
        assert "probability that noise alone gives a peak this high anywhere in the searched band" in text


class TestBadInput:
    def test_refusals(self):
        with pytest.raises(InputError, match="differ in length"):
            lomb_scargle(np.arange(10.0), np.arange(9.0))
        with pytest.raises(InputError, match="NaN"):
            lomb_scargle(np.arange(10.0), np.r_[np.arange(9.0), np.nan])
        with pytest.raises(InputError, match="same distance"):
            lomb_scargle(np.ones(10), np.arange(10.0))
        with pytest.raises(InputError, match="method"):
            lomb_scargle(np.arange(10.0), np.arange(10.0), method="quick")
        with pytest.raises(InputError, match="k_min < k_max"):
            wavenumber_grid(np.arange(10.0), k_min=1.0, k_max=0.5)
        with pytest.raises(InputError, match="positive"):
            lomb_scargle(np.arange(10.0), np.arange(10.0) ** 2, wavenumber=[-0.1, 0.1])
