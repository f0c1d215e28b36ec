"""Tests of profiles.spectral.psd: periodogram, Welch and multitaper densities."""

from __future__ import annotations

import numpy as np
import pytest

from profiles.errors import InputError, SpacingError
from profiles.spectral import (
    confidence_factors,
    multitaper_coefficients,
    multitaper_psd,
    periodogram,
    welch_coefficients,
    welch_dof,
    welch_psd,
)

# references.md section 3: DPSS concentrations, computed there by scipy and by an independent
# mpmath / scipy.linalg eigen-decomposition of the sinc matrix (no published table readable).
CONCENTRATIONS = {
    (64, 4.0): [0.999999999746, 0.999999975397, 0.999998895190, 0.999969657680,
                0.999436549707, 0.992710115932, 0.937468604926, 0.699685077369],
    (100, 4.0): [0.999999999723, 0.999999973614, 0.999998833880, 0.999968427377,
                 0.999420997018, 0.992588871270, 0.936985768062, 0.699181684420],
    (1024, 4.0): [0.999999999706, 0.999999972329, 0.999998790260, 0.999967562606,
                  0.999410180392, 0.992505305199, 0.936655408207, 0.698838901803],
    (64, 3.0): [0.999999873041, 0.999991151590, 0.999723369226, 0.995004912341,
                0.946584183646, 0.708339465281],
    (256, 3.0): [0.999999865690, 0.999990779757, 0.999715513267, 0.994920057391,
                 0.946165730625, 0.707846083498],
    (128, 2.5): [0.999997207529, 0.999843891402, 0.996228295629, 0.952199933476,
                 0.713982135211],
    (512, 2.5): [0.999997185402, 0.999843055047, 0.996216213152, 0.952129378536,
                 0.713891002694],
}  # fmt: skip

# references.md section 4: Hann, 50 % overlap, nu = 36 N_B^2 / (19 N_B - 1).
HANN_DOF = [(2, 3.8919), (5, 9.5745), (10, 19.0476), (20, 37.9947), (50, 94.8367)]

# references.md section 4: 95 % chi-square interval factors nu/chi2(0.975), nu/chi2(0.025).
CI_FACTORS = [
    (2.0, 0.2711, 39.498),
    (10.0, 0.4882, 3.0798),
    (14.0, 0.5360, 2.4872),
    (19.0476, 0.5787, 2.1309),
    (20.0, 0.5853, 2.0853),
    (50.0, 0.7001, 1.5452),
]


def _red_profile(count: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return 0.1 * np.cumsum(rng.standard_normal(count)) + rng.standard_normal(count) + 300.0


class TestAgainstScipy:
    """Same data and settings as scipy.signal.periodogram / welch: densities to 1e-10."""

    @pytest.mark.parametrize("count", [1000, 1001])
    @pytest.mark.parametrize(("detrend", "scipy_detrend"), [("linear", "linear"), ("mean", "constant")])
    @pytest.mark.parametrize("taper", [None, "hann", ("tukey", 0.25)])
    def test_periodogram(self, count, detrend, scipy_detrend, taper):
        from scipy.signal import periodogram as scipy_periodogram

        values = _red_profile(count, seed=count)
        ours = periodogram(values, spacing=25.0, detrend=detrend, taper=taper)
        wavenumber, density = scipy_periodogram(
            values,
            fs=1.0 / 25.0,
            window=taper or "boxcar",
            detrend=scipy_detrend,
            scaling="density",
        )
        np.testing.assert_allclose(ours.wavenumber, wavenumber, rtol=1e-14)
        np.testing.assert_allclose(ours.psd[1:], density[1:], rtol=1e-10)
        # k = 0 is zero to rounding after mean removal (scipy gives ~1e-28 there).
        assert ours.psd[0] == pytest.approx(density[0], abs=1e-10 * density.max())

    @pytest.mark.parametrize(
        ("samples", "overlap", "taper"),
        [(128, 0.5, "hann"), (100, 0.3, "hann"), (64, 0.0, "boxcar"), (255, 0.75, "blackman")],
    )
    @pytest.mark.parametrize(("detrend", "scipy_detrend"), [("linear", "linear"), ("mean", "constant")])
    def test_welch(self, samples, overlap, taper, detrend, scipy_detrend):
        from scipy.signal import welch

        values = _red_profile(1537, seed=samples)
        ours = welch_psd(
            values,
            spacing=25.0,
            segment_length=samples * 25.0,
            overlap=overlap,
            taper=taper,
            detrend=detrend,
        )
        wavenumber, density = welch(
            values,
            fs=1.0 / 25.0,
            window=taper,
            nperseg=samples,
            noverlap=round(overlap * samples),
            detrend=scipy_detrend,
            scaling="density",
        )
        np.testing.assert_allclose(ours.wavenumber, wavenumber, rtol=1e-14)
        # Bins left at rounding level by the detrend (k = 0 of a boxcar) compare absolutely.
        np.testing.assert_allclose(ours.psd, density, rtol=1e-10, atol=1e-14 * density.max())
        assert ours.resolution == pytest.approx(1.0 / (samples * 25.0))


class TestDegreesOfFreedom:
    @pytest.mark.parametrize(("blocks", "expected"), HANN_DOF)
    def test_hann_half_overlap_closed_form(self, blocks, expected):
        # Percival and Walden (1993) eq. 292b from the actual periodic Hann taper and shift,
        # against the closed form 36 N_B^2/(19 N_B - 1) and its table (references.md s. 4).
        samples = 128
        values = np.random.default_rng(blocks).standard_normal(samples + (blocks - 1) * 64)
        spectrum = welch_psd(values, spacing=1.0, segment_length=samples, overlap=0.5)
        assert spectrum.n_segments == blocks
        closed = 36 * blocks**2 / (19 * blocks - 1)
        assert spectrum.dof[5] == pytest.approx(closed, rel=1e-12)
        assert spectrum.dof[5] == pytest.approx(expected, abs=5e-5)
        assert spectrum.dof[0] == pytest.approx(closed / 2)  # k = 0: half
        assert spectrum.dof[-1] == pytest.approx(closed / 2)  # Nyquist of even L: half

    def test_boxcar_half_overlap_and_no_overlap(self):
        # Derived from eq. 292b: boxcar at 50 % has rho(1) = 1/2, nu -> (4/3) N_B; without
        # overlap the blocks are independent and nu = 2 N_B exactly.
        weights = np.ones(100)
        large = 4000
        assert welch_dof(weights, shift=50, n_segments=large) / large == pytest.approx(4 / 3, rel=1e-3)
        assert welch_dof(weights, shift=100, n_segments=7) == pytest.approx(14.0)

    def test_welch_dof_matches_monte_carlo(self):
        # Statistical round trip: nu_hat = 2 E[S]^2 / var(S) over white-noise realisations
        # (references.md section 4 reports 19.06 for N_B = 10 with 20 000 runs).
        rng = np.random.default_rng(42)
        estimates = []
        for _ in range(200):
            values = rng.standard_normal(128 + 9 * 64)
            estimates.append(welch_psd(values, spacing=1.0, segment_length=128, detrend="mean").psd[5:60])
        estimates = np.asarray(estimates)
        nu_hat = 2 * estimates.mean() ** 2 / estimates.var(axis=0).mean()
        assert nu_hat == pytest.approx(36 * 100 / 189, rel=0.1)

    @pytest.mark.parametrize(("dof", "lower", "upper"), CI_FACTORS)
    def test_chi_square_factors(self, dof, lower, upper):
        # references.md section 4, chi-square interval table (4-5 significant digits).
        factors = confidence_factors(dof, confidence=0.95)
        assert factors.lower == pytest.approx(lower, abs=6e-5)
        assert factors.upper == pytest.approx(upper, rel=2e-4)

    def test_interval_coverage_white_noise(self):
        # Pitfalls T1: Monte-Carlo coverage of the 95 % interval between 92 % and 98 %.
        rng = np.random.default_rng(7)
        covered = []
        for _ in range(100):
            values = rng.standard_normal(1024)
            spectrum = welch_psd(values, spacing=2.0, segment_length=256, detrend="mean")
            truth = 2.0 * 2.0  # one-sided white density: 2 sigma^2 dx
            inside = (spectrum.lower[1:-1] <= truth) & (truth <= spectrum.upper[1:-1])
            covered.append(inside.mean())
        assert 0.92 <= np.mean(covered) <= 0.98


class TestMultitaper:
    @pytest.mark.parametrize(("count", "nw"), list(CONCENTRATIONS))
    def test_concentrations_table(self, count, nw):
        # references.md section 3 (scipy.signal.windows.dpss and mpmath agree to 1e-15).
        expected = CONCENTRATIONS[(count, nw)]
        eigen = multitaper_coefficients(
            np.random.default_rng(0).standard_normal(count), spacing=1.0, nw=nw, n_tapers=len(expected)
        )
        np.testing.assert_allclose(eigen.eigenvalues, expected, rtol=0, atol=2e-12)
        # ...and the tapers and ratios are scipy.signal.windows.dpss's, unit energy, symmetric.
        from scipy.signal.windows import dpss

        tapers, ratios = dpss(count, nw, len(expected), sym=True, norm=2, return_ratios=True)
        np.testing.assert_allclose(eigen.tapers, tapers, rtol=0, atol=1e-14)
        np.testing.assert_allclose(eigen.eigenvalues, ratios, rtol=0, atol=1e-15)

    def test_concentrations_against_sinc_matrix(self):
        # Slepian (1978): lambda_k are the eigenvalues of A_nm = sin(2 pi W (n-m))/(pi (n-m)),
        # A_nn = 2W, W = NW/N. Independent check with scipy.linalg.eigvalsh, and the trace
        # identity sum of all N eigenvalues = 2 NW (references.md section 3).
        from scipy.linalg import eigvalsh

        count, nw = 96, 3.5
        offset = np.subtract.outer(np.arange(count), np.arange(count)).astype(float)
        width = nw / count
        with np.errstate(invalid="ignore", divide="ignore"):
            matrix = np.where(offset == 0, 2 * width, np.sin(2 * np.pi * width * offset) / (np.pi * offset))
        eigenvalues = np.sort(eigvalsh(matrix))[::-1]
        assert eigenvalues.sum() == pytest.approx(2 * nw, rel=1e-10)
        eigen = multitaper_coefficients(np.ones(count) + np.arange(count), spacing=1.0, nw=nw, n_tapers=6)
        np.testing.assert_allclose(eigen.eigenvalues, eigenvalues[:6], atol=1e-10)
        assert eigen.n_tapers == 6
        assert eigen.half_bandwidth == pytest.approx(nw / count)

    def test_default_tapers_and_equal_weight_dof(self):
        values = np.random.default_rng(1).standard_normal(300)
        spectrum = multitaper_psd(values, spacing=10.0, adaptive=False)
        assert spectrum.n_tapers == 7  # 2 NW - 1 for NW = 4
        assert spectrum.dof[10] == pytest.approx(14.0)  # Thomson (1982): 2K
        assert spectrum.dof[0] == pytest.approx(7.0)  # k = 0: K
        assert spectrum.resolution == pytest.approx(2 * 4.0 / (300 * 10.0))

    def test_equal_weight_dof_matches_monte_carlo(self):
        # references.md section 4: nu_hat = 2 E[S]^2/var(S) ~ 14 for NW = 4, K = 7, N = 256.
        rng = np.random.default_rng(3)
        estimates = np.asarray(
            [
                multitaper_psd(rng.standard_normal(256), spacing=1.0, adaptive=False, detrend="mean").psd[
                    10:118
                ]
                for _ in range(150)
            ]
        )
        nu_hat = 2 * estimates.mean() ** 2 / estimates.var(axis=0).mean()
        assert nu_hat == pytest.approx(14.0, rel=0.1)

    def test_adaptive_white_noise_flat_with_parseval(self):
        # Pitfalls S10: white noise gives a flat spectrum within its interval, adaptive dof near
        # 2K, and sum(psd) dk equals the variance within 2 %.
        values = np.random.default_rng(8).standard_normal(4096)
        spectrum = multitaper_psd(values, spacing=5.0)
        truth = 2.0 * values.var() * 5.0
        assert np.median(spectrum.dof[1:-1]) > 13.0
        inside = (spectrum.lower <= truth) & (truth <= spectrum.upper)
        assert inside[1:-1].mean() > 0.92
        assert spectrum.total_variance == pytest.approx(values.var(), rel=0.02)

    def test_line_width_is_bandwidth(self):
        # A line spreads over about the full bandwidth 2W around its wavenumber.
        count, nw = 2048, 4.0
        j = np.arange(count)
        values = np.cos(2 * np.pi * 300 * j / count) + 1e-3 * np.random.default_rng(2).standard_normal(count)
        spectrum = multitaper_psd(values, spacing=1.0, nw=nw)
        strong = spectrum.wavenumber[spectrum.psd > 0.1 * spectrum.psd.max()]
        assert strong.max() - strong.min() == pytest.approx(2 * nw / count, rel=0.3)


class TestParsevalAndUnits:
    @pytest.mark.parametrize("count", [1000, 1001])
    def test_periodogram_integrates_to_variance(self, count):
        # Parseval: sum(psd) dk = mean square of the detrended series (denominator N), exactly.
        values = _red_profile(count, seed=1)
        spectrum = periodogram(values, spacing=30.0)
        index = np.arange(count)
        residual = values - np.polyval(np.polyfit(index, values, 1), index)
        assert spectrum.total_variance == pytest.approx(np.mean(residual**2), rel=1e-12)

    @pytest.mark.parametrize("taper", ["hann", "boxcar"])
    def test_welch_integrates_to_variance(self, taper):
        # Pitfalls S1(a): within 1 % for a white series.
        values = np.random.default_rng(4).standard_normal(200_000)
        spectrum = welch_psd(values, spacing=12.0, segment_length=12.0 * 512, taper=taper, detrend="mean")
        assert spectrum.total_variance == pytest.approx(values.var(), rel=0.01)

    def test_frame_is_per_cycle_per_km(self):
        values = np.random.default_rng(5).standard_normal(4000)
        spectrum = welch_psd(values, spacing=50.0, segment_length=20_000.0)
        frame = spectrum.to_frame()
        assert list(frame.columns) == [
            "wavenumber_per_km",
            "wavelength_km",
            "psd_per_cycle_per_km",
            "psd_lower_per_cycle_per_km",
            "psd_upper_per_cycle_per_km",
            "dof",
        ]
        step_km = frame["wavenumber_per_km"].iloc[1] - frame["wavenumber_per_km"].iloc[0]
        # The variance is the same whichever unit the density is in.
        assert (frame["psd_per_cycle_per_km"].sum() * step_km) == pytest.approx(spectrum.total_variance)
        assert frame["wavelength_km"].iloc[1] == pytest.approx(20.0)
        assert "welch" in str(spectrum)

    def test_same_sine_peaks_everywhere(self):
        # Pitfalls S3: a 2.5 km sine peaks at 0.4 cycles/km in every estimator.
        spacing = 50.0
        distance = np.arange(4000) * spacing
        values = np.sin(2 * np.pi * distance / 2500.0) + 0.3 * np.random.default_rng(6).standard_normal(4000)
        for spectrum in (
            periodogram(values, spacing=spacing),
            welch_psd(values, spacing=spacing, segment_length=25_000.0),
            multitaper_psd(values, spacing=spacing),
        ):
            peak = spectrum.wavenumber[np.argmax(spectrum.psd)] * 1000.0
            assert peak == pytest.approx(0.4, abs=0.5 * spectrum.resolution * 1000.0 + 1e-9)


class TestRefusals:
    def test_too_short_for_two_blocks_names_the_longest_wavelength(self):
        values = np.random.default_rng(0).standard_normal(100)
        with pytest.raises(SpacingError, match="longest wavelength") as error:
            welch_psd(values, spacing=25.0, segment_length=80 * 25.0)
        # The longest block that fits twice at 50 % overlap: 67 samples (1.675 km).
        assert "1.675 km" in str(error.value)
        welch_psd(values, spacing=25.0, segment_length=67 * 25.0)  # fits: no error
        with pytest.raises(SpacingError):
            welch_psd(values, spacing=25.0, segment_length=68 * 25.0)

    def test_bad_options(self):
        values = np.random.default_rng(0).standard_normal(100)
        with pytest.raises(InputError, match="overlap"):
            welch_psd(values, spacing=1.0, segment_length=20, overlap=1.0)
        with pytest.raises(SpacingError, match="4 samples"):
            welch_psd(values, spacing=1.0, segment_length=2)
        with pytest.raises(InputError, match="nw"):
            multitaper_psd(values, spacing=1.0, nw=60)
        with pytest.raises(InputError, match="n_tapers"):
            multitaper_psd(values, spacing=1.0, n_tapers=0)
        with pytest.raises(InputError, match="confidence"):
            periodogram(values, spacing=1.0, confidence=95)


def test_coefficients_reproduce_the_densities():
    # The low-level pieces: Welch density = onesided * mean |C|^2; multitaper with equal
    # weights = onesided * mean over tapers of |C_k|^2.
    values = _red_profile(2000, seed=3)
    blocks = welch_coefficients(values, spacing=20.0, segment_length=4000.0)
    density = blocks.onesided * np.mean(np.abs(blocks.coefficients) ** 2, axis=0)
    np.testing.assert_allclose(density, welch_psd(values, spacing=20.0, segment_length=4000.0).psd)
    assert blocks.segment_length == 4000.0 and blocks.overlap == 0.5
    np.testing.assert_allclose(np.diff(blocks.segment_starts), 2000.0)
    eigen = multitaper_coefficients(values, spacing=20.0, nw=3.0)
    density = eigen.onesided * np.mean(np.abs(eigen.coefficients) ** 2, axis=0)
    np.testing.assert_allclose(density, multitaper_psd(values, spacing=20.0, nw=3.0, adaptive=False).psd)
    np.testing.assert_allclose(np.sum(eigen.tapers**2, axis=1), 1.0)


class TestCoefficientOptions:
    def test_fewer_blocks_on_request(self):
        # One Hann block of a 100-sample record is scipy.signal.welch with a single segment
        # (nperseg = record length); none when the record is shorter than a block (the
        # stack is empty, dof 0).
        from scipy.signal import welch

        values = _red_profile(100, seed=4)
        one = welch_coefficients(values, spacing=10.0, segment_length=1000.0, min_blocks=1)
        assert one.n_segments == 1 and one.coefficients.shape == (1, 51)
        _, expected = welch(values, fs=0.1, window="hann", nperseg=100, detrend="linear")
        np.testing.assert_allclose(one.onesided * np.abs(one.coefficients[0]) ** 2, expected,
                                   rtol=1e-10)
        none = welch_coefficients(values[:60], spacing=10.0, segment_length=1000.0, min_blocks=0)
        assert none.coefficients.shape == (0, 51) and np.all(none.dof == 0)
        with pytest.raises(SpacingError, match="once"):
            welch_coefficients(values[:60], spacing=10.0, segment_length=1000.0, min_blocks=1)
        with pytest.raises(InputError, match="min_blocks"):
            welch_coefficients(values, spacing=10.0, segment_length=1000.0, min_blocks=-1)

    def test_zero_padded_eigencoefficients(self):
        # Zero padding only interpolates: at the common wavenumbers of the padded grid (every
        # second bin of twice the length), the coefficients equal the unpadded ones (DFT of a
        # zero-padded sequence, common practice).
        values = _red_profile(300, seed=5)
        plain = multitaper_coefficients(values, spacing=20.0, nw=3.0)
        padded = multitaper_coefficients(values, spacing=20.0, nw=3.0, n_fft=600)
        assert padded.n == 300 and padded.n_fft == 600 and padded.coefficients.shape == (5, 301)
        np.testing.assert_allclose(padded.coefficients[:, ::2], plain.coefficients, rtol=1e-10,
                                   atol=1e-10 * np.abs(plain.coefficients).max())
        np.testing.assert_allclose(padded.wavenumber[::2], plain.wavenumber)
        assert padded.half_bandwidth == plain.half_bandwidth
        with pytest.raises(InputError, match="n_fft"):
            multitaper_coefficients(values, spacing=20.0, n_fft=299)
