"""Tests of profiles.cross (coherence, admittance, load model) and of the spectral-core
coefficients it is built on (profiles.spectral.psd)."""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal

from profiles.cross import (
    CrossSpectrum,
    cross_spectrum,
    fit_uncompensated_load,
    uncompensated_admittance,
)
from profiles.errors import InputError, SpacingError
from profiles.spectral.psd import multitaper_coefficients, welch_coefficients, welch_dof

SPACING = 100.0


def related_pair(n, seed):
    rng = np.random.default_rng(seed)
    first = rng.standard_normal(n)
    second = np.convolve(first, [0.5, 1.0, 0.3], mode="same") + rng.standard_normal(n)
    return first, second


def red_profile(n, *, spacing, rng, std):
    """Random profile with a k^-2 power spectrum above a 40 km corner (a red bathymetry)."""
    k = np.fft.rfftfreq(n, d=spacing)
    amplitude = 1.0 / (1.0 + (k * 40e3) ** 2) ** 0.5
    coefficients = amplitude * (rng.standard_normal(k.size) + 1j * rng.standard_normal(k.size))
    coefficients[0] = 0.0
    values = np.fft.irfft(coefficients, n=n)
    return std * values / values.std()


class TestAgainstScipy:
    # scipy.signal.csd / coherence / welch on the same data and settings (segment of 256
    # samples, 50 % overlap, periodic Hann, same detrend: our "mean" is scipy's "constant");
    # DC and Nyquist are not in ours.
    @pytest.mark.parametrize("detrend, scipy_detrend", [("mean", "constant"), ("linear", "linear")])
    @pytest.mark.parametrize("taper", ["hann", "hamming", "boxcar"])
    def test_csd_coherence_welch(self, detrend, scipy_detrend, taper):
        first, second = related_pair(5000, seed=1)
        ours = cross_spectrum(
            first, second, spacing=SPACING, segment_length=256 * SPACING, overlap=0.5,
            taper=taper, detrend=detrend,
        )
        options = dict(fs=1 / SPACING, window=taper, nperseg=256, noverlap=128,
                       detrend=scipy_detrend)
        k, pxy = signal.csd(first, second, **options)
        _, coherence = signal.coherence(first, second, **options)
        _, pxx = signal.welch(first, **options)
        _, pyy = signal.welch(second, **options)
        np.testing.assert_allclose(ours.wavenumber, k[1:-1], rtol=1e-12)
        np.testing.assert_allclose(ours.cross_density, pxy[1:-1], rtol=1e-10)
        np.testing.assert_allclose(ours.coherence, coherence[1:-1], rtol=1e-10)
        np.testing.assert_allclose(ours.input_density, pxx[1:-1], rtol=1e-10)
        np.testing.assert_allclose(ours.output_density, pyy[1:-1], rtol=1e-10)
        np.testing.assert_allclose(ours.admittance, pxy[1:-1] / pxx[1:-1], rtol=1e-10)

    def test_phase_sign_matches_scipy_csd(self):
        # scipy.signal.csd(x, y) conjugates x: Pxy = conj(X) Y, our convention too.
        first, second = related_pair(4096, seed=2)
        second = np.roll(second, 3)
        ours = cross_spectrum(first, second, spacing=SPACING, segment_length=256 * SPACING)
        _, pxy = signal.csd(first, second, fs=1 / SPACING, nperseg=256, detrend="linear")
        np.testing.assert_allclose(ours.phase_deg, np.degrees(np.angle(pxy[1:-1])), atol=1e-8)

    def test_admittance_of_a_known_filter(self):
        # y = lfilter(b, 1, x): Z = S_xy / S_xx must equal the filter's frequency response,
        # computed independently by scipy.signal.freqz (gain within 5 %, phase within 3 deg).
        rng = np.random.default_rng(4)
        first = rng.standard_normal(2**14)
        b = [0.2, 0.5, 0.3]
        second = signal.lfilter(b, 1.0, first)
        ours = cross_spectrum(first, second, spacing=SPACING, segment_length=512 * SPACING)
        _, response = signal.freqz(b, 1.0, worN=2 * np.pi * ours.wavenumber * SPACING)
        strong = np.abs(response) > 0.2
        np.testing.assert_allclose(ours.gain[strong], np.abs(response[strong]), rtol=0.05)
        difference = np.angle(ours.admittance[strong] / response[strong], deg=True)
        assert np.max(np.abs(difference)) < 3.0


class TestPhaseConvention:
    def test_pure_delay(self):
        # Documented convention: y(d) = x(d - δ) (output lags by δ) gives phase -360 k δ deg.
        # The delay theorem of the DFT (common practice); δ = 4 samples = 400 m.
        rng = np.random.default_rng(6)
        first = rng.standard_normal(2**13)
        delay = 4
        second = np.roll(first, delay)
        ours = cross_spectrum(first, second, spacing=SPACING, segment_length=256 * SPACING)
        expected = -360.0 * ours.wavenumber * delay * SPACING
        wrapped = np.angle(np.exp(1j * np.radians(ours.phase_deg - expected)), deg=True)
        # Block edges (4 of 256 samples) decorrelate the pair a little: a few degrees of scatter.
        assert np.max(np.abs(wrapped)) < 3.0
        assert np.median(np.abs(wrapped)) < 0.5
        assert np.all(ours.phase_deg[ours.wavenumber * delay * SPACING < 0.4] < 0)
        assert np.median(ours.coherence) > 0.9


class TestSignificance:
    def test_threshold_table(self):
        # references.md section 4: c_0.05 = 1 - 0.05^(1/(n-1)) = 0.6316, 0.3482, 0.1810 for
        # n = 4, 8, 16 non-overlapping segments; 0.3930 for multitaper K = 7.
        rng = np.random.default_rng(7)
        for n_blocks, expected in ((4, 0.6316), (8, 0.3482), (16, 0.1810)):
            a, b = rng.standard_normal((2, 128 * n_blocks))
            ours = cross_spectrum(
                a, b, spacing=1.0, segment_length=128.0, overlap=0.0, taper="boxcar",
                min_estimates=2,
            )
            assert ours.n_estimates == n_blocks
            assert ours.coherence_threshold == pytest.approx(expected, abs=5e-5)
        a, b = rng.standard_normal((2, 512))
        ours = cross_spectrum(a, b, spacing=1.0, method="multitaper", nw=4.0, min_estimates=7)
        assert ours.n_estimates == 7
        assert ours.coherence_threshold == pytest.approx(0.3930, abs=5e-5)

    @pytest.mark.parametrize(
        "case",
        [
            dict(method="welch", taper="boxcar", overlap=0.0, n=8 * 128),
            dict(method="welch", taper="hann", overlap=0.5, n=10 * 64 + 64),
            dict(method="multitaper", nw=4.0, n=512),
        ],
        ids=["boxcar-8", "hann-50%-10", "multitaper-K7"],
    )
    def test_monte_carlo_exceedance_under_h0(self, case):
        # Two independent white noises: the fraction of wavenumbers above c_0.05 should be
        # alpha = 0.05 (references.md section 4 MC column: 0.0507 for n = 8, 0.0490 for K = 7;
        # the overlap-corrected n_eff of P&W 292b for Hann at 50 %). Tolerance ±0.008.
        case = dict(case)
        n = case.pop("n")
        rng = np.random.default_rng(8)
        options = dict(spacing=1.0, min_estimates=2, **case)
        if case["method"] == "welch":
            options["segment_length"] = 128.0
        exceed = []
        for _ in range(150):
            a, b = rng.standard_normal((2, n))
            ours = cross_spectrum(a, b, **options)
            exceed.append(np.mean(ours.coherent))
        assert np.mean(exceed) == pytest.approx(0.05, abs=0.008)

    def test_independent_noise_mostly_below_level(self):
        # About 95 % of wavenumbers below the 95 % level (task specification: 90 to 99 %).
        rng = np.random.default_rng(9)
        a, b = rng.standard_normal((2, 2**16))
        ours = cross_spectrum(a, b, spacing=SPACING, segment_length=1024 * SPACING)
        below = np.mean(ours.coherence <= ours.coherence_threshold)
        assert 0.90 <= below <= 0.99
        # Mean coherence of unrelated series is about 1/n (pitfalls.md C1; common practice).
        assert np.mean(ours.coherence) == pytest.approx(1 / ours.n_estimates, rel=0.2)


class TestEffectiveNumber:
    def test_hann_half_overlap_table(self):
        # references.md section 4 (P&W 292b; 36 N_B² / (19 N_B - 1)), ν = 2 n_eff: through
        # welch_dof and through the n_estimates of a cross-spectrum of N_B blocks of 128
        # samples every 64 (N_B = 2 gives n_eff < 2, which a cross-spectrum refuses).
        taper = signal.get_window("hann", 128, fftbins=True)
        table = {2: 3.8919, 5: 9.5745, 10: 19.0476, 20: 37.9947, 50: 94.8367}
        rng = np.random.default_rng(11)
        for n_blocks, nu in table.items():
            assert welch_dof(taper, shift=64, n_segments=n_blocks) == pytest.approx(nu, abs=1e-4)
            if n_blocks == 2:
                continue
            a, b = rng.standard_normal((2, 64 * (n_blocks + 1)))
            ours = cross_spectrum(a, b, spacing=1.0, segment_length=128.0, overlap=0.5,
                                  min_estimates=2)
            assert 2 * ours.n_estimates == pytest.approx(nu, abs=1e-4)

    def test_no_overlap_counts_blocks(self):
        taper = signal.get_window("hann", 128, fftbins=True)
        assert welch_dof(taper, shift=128, n_segments=7) == 14

    def test_blocks_and_tapers_shapes(self):
        values = np.random.default_rng(0).standard_normal(1000)
        blocks = welch_coefficients(
            values, spacing=10.0, segment_length=1000.0, overlap=0.5, taper="hann"
        )
        # Blocks of 100 samples every 50: (1000 - 100) / 50 + 1 = 19 (as scipy.signal.csd).
        assert blocks.coefficients.shape == (19, 51)
        tapers = multitaper_coefficients(values, spacing=10.0, nw=4.0, n_tapers=7)
        assert tapers.coefficients.shape == (7, 501)
        assert tapers.n_tapers == 7
        # Percival & Walden / Thomson: the first 2NW - 1 concentrations are near 1 (common
        # practice; references.md section 3 gives the table).
        assert np.all(tapers.eigenvalues > 0.9)

    def test_short_segments_contribute_nothing(self):
        # A segment shorter than one block adds no estimate; one that holds a single block
        # adds one (the blocks of all segments are pooled).
        rng = np.random.default_rng(10)
        long_a, long_b = rng.standard_normal((2, 128 * 9))
        short_a, short_b = rng.standard_normal((2, 100))
        one_a, one_b = rng.standard_normal((2, 130))
        ours = cross_spectrum([long_a, short_a, one_a], [long_b, short_b, one_b], spacing=1.0,
                              segment_length=128.0, overlap=0.0, taper="boxcar")
        assert ours.n_segments == 2
        assert ours.n_estimates == 10

    def test_multitaper_density_is_flat_for_white_noise(self):
        # One-sided density of unit-variance white noise at spacing Δ is 2Δ (common practice,
        # Parseval); the mean over wavenumbers of 40 averaged series is within 3 %.
        rng = np.random.default_rng(12)
        inputs = [rng.standard_normal(600) for _ in range(40)]
        ours = cross_spectrum(
            inputs, inputs, spacing=SPACING, method="multitaper", detrend="mean"
        )
        assert np.mean(ours.input_density) == pytest.approx(2 * SPACING, rel=0.03)


class TestLoadModel:
    def test_model_against_reference_table(self):
        # references.md section 7: thin-sheet quadrature at d = 4000 m, Δρ = 1670 kg/m³.
        wavelength = np.array([5e3, 20e3, 100e3])
        got = uncompensated_admittance(
            1 / wavelength, density_contrast=1670.0, depth=4000.0, input_positive_down=False
        )
        np.testing.assert_allclose(got, [4.595152e-4, 1.993203e-2, 5.446932e-2], rtol=2e-6)
        # 2πG = 4.19359e-5 mGal/m per kg/m³ at k = 0 (references.md section 7, CODATA 2018).
        zero = uncompensated_admittance(0.0, density_contrast=1.0, depth=4000.0,
                                        input_positive_down=True)
        assert zero == pytest.approx(-4.19359e-5, rel=1e-5)

    @pytest.mark.parametrize("positive_down", [False, True])
    def test_density_contrast_round_trip(self, positive_down):
        # Gravity made from a red random seafloor through Z(k) in the Fourier domain plus
        # 1 mGal white noise; Δρ comes back within 10 % (task specification).
        rng = np.random.default_rng(13)
        spacing, depth, density = 200.0, 4000.0, 1670.0
        elevations, gravities = [], []
        for _ in range(6):
            elevation = red_profile(4096, spacing=spacing, rng=rng, std=300.0)
            k = np.fft.rfftfreq(elevation.size, d=spacing)
            response = uncompensated_admittance(
                k, density_contrast=density, depth=depth, input_positive_down=False
            )
            gravity = np.fft.irfft(response * np.fft.rfft(elevation), n=elevation.size)
            gravities.append(gravity + rng.standard_normal(elevation.size))
            # Depth positive down is the mean depth minus the seafloor's rise above its mean.
            elevations.append(depth - elevation if positive_down else elevation)
        ours = cross_spectrum(elevations, gravities, spacing=spacing, segment_length=100e3)
        fit = fit_uncompensated_load(ours, depth=depth, input_positive_down=positive_down)
        assert fit.density_contrast == pytest.approx(density, rel=0.10)
        assert 0 < fit.density_contrast_err < 0.1 * density
        assert fit.n_used >= 10
        assert set(fit.to_json()) == {"density_contrast_kg_m3", "density_contrast_err_kg_m3",
                                      "depth_km"}
        assert fit.to_json()["depth_km"] == 4.0

    def test_no_coherent_band(self):
        rng = np.random.default_rng(14)
        a, b = rng.standard_normal((2, 4096))
        ours = cross_spectrum(a, b, spacing=SPACING, segment_length=256 * SPACING)
        with pytest.raises(InputError, match="need at least 2"):
            fit_uncompensated_load(ours, depth=4000.0, input_positive_down=False,
                                   min_wavelength=25e3)


class TestRefusals:
    def test_single_block_is_refused(self):
        # pitfalls.md C1: one segment gives coherence 1 everywhere.
        first, second = related_pair(1024, seed=3)
        with pytest.raises(InputError, match=r"at least 8 independent estimates.* 1\.00"):
            cross_spectrum(first, second, spacing=SPACING, segment_length=1024 * SPACING)

    def test_single_periodogram_would_be_one(self):
        # The reason for the refusal, checked with scipy.signal.coherence itself.
        first, second = related_pair(1024, seed=3)
        _, coherence = signal.coherence(first, second, nperseg=1024)
        np.testing.assert_allclose(coherence[1:-1], 1.0, rtol=1e-9)

    def test_few_tapers_refused(self):
        first, second = related_pair(1024, seed=3)
        with pytest.raises(InputError, match=r"3\.00"):
            cross_spectrum(first, second, spacing=SPACING, method="multitaper", n_tapers=3)

    def test_bad_inputs(self):
        first, second = related_pair(1024, seed=3)
        with pytest.raises(InputError, match="segment_length"):
            cross_spectrum(first, second, spacing=SPACING)
        with pytest.raises(InputError, match="samples"):
            cross_spectrum(first, second[:-1], spacing=SPACING, segment_length=6400.0)
        with pytest.raises(InputError, match="method"):
            cross_spectrum(first, second, spacing=SPACING, method="bartlett")
        with pytest.raises(InputError, match="NaN"):
            cross_spectrum(np.r_[first[:-1], np.nan], second, spacing=SPACING,
                           segment_length=6400.0)
        with pytest.raises(SpacingError, match="different spacings"):
            cross_spectrum([first, first], [second, second], spacing=[100.0, 110.0],
                           segment_length=6400.0)
        with pytest.raises(InputError, match="n_tapers"):
            cross_spectrum(first, second, spacing=SPACING, method="multitaper", n_tapers=12)


def test_outputs():
    first, second = related_pair(4096, seed=5)
    ours = cross_spectrum(first, second, spacing=SPACING, segment_length=256 * SPACING)
    assert isinstance(ours, CrossSpectrum)
    bands = ours.to_json_bands()
    assert len(bands) == ours.wavenumber.size == 127
    assert set(bands[0]) == {
        "wavenumber_per_km", "wavelength_km", "coherence", "coherence_threshold", "admittance",
        "admittance_err", "phase_deg",
    }
    assert bands[0]["wavelength_km"] == pytest.approx(25.6)
    frame = ours.to_frame()
    np.testing.assert_allclose(frame["wavenumber_per_km"] * frame["wavelength_km"], 1.0)
    # Bendat & Piersol gain error (from memory): sqrt(1 - γ²) / (|γ| sqrt(2 n)) |Z|.
    gamma2 = ours.coherence
    expected = np.sqrt(1 - gamma2) / np.sqrt(gamma2 * 2 * ours.n_estimates) * ours.gain
    np.testing.assert_allclose(ours.admittance_err, expected, rtol=1e-12)
    assert "independent estimates" in str(ours)
