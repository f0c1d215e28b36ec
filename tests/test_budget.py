"""Aliasing budget: closed forms against direct sums, fall-off fits and contamination on
synthetic profiles with known spectra, recommended spacing, and the spacing command's budget.

Outside references named beside each check: mpmath (Hurwitz zeta, direct sums, root finding),
scipy.special.zeta and scipy.integrate.quad, scipy.stats.chi2 (sampling distribution of an
averaged periodogram), references.md section 8 (aliasing, relative amplitude at Nyquist), and
tracks built with pyproj.Geod.fwd (conftest.walk).

Synthetic profiles: white Gaussian noise shaped in the Fourier domain on a fine periodic grid
(spacing DX0), with the density a point-sampled process of spectrum P(k) has at that spacing
(P folded by a direct sum over images, computed here with numpy). Taking every m-th sample of
a periodic series folds its spectrum exactly, so the dense (every 2nd) and coarse (every m-th)
samples are point samples of a process whose spectrum is P(k) at every wavenumber.
"""

from __future__ import annotations

import json

import mpmath
import numpy as np
import pandas as pd
import pytest
from conftest import walk, write_csv
from scipy import integrate, special, stats

from profiles.budget import aliased_variance_fraction, contamination, image_ratio, recommended_spacing
from profiles.cli import main
from profiles.falloff import FalloffModel, fit_falloff, model_for_kind

N0 = 4096  # fine grid
DX0 = 50.0  # metres
SEEDS = 50


# --------------------------------------------------------------------------------------------
# Synthetic profiles
# --------------------------------------------------------------------------------------------


def true_power(k, model, shape):
    return k ** -shape if model == "power-law" else np.exp(-4 * np.pi * shape * k)


def folded_reference(k, spacing, model, shape, images=400):
    """Direct sum P(k) + sum_n P(n/dx - k) + P(n/dx + k), power-law tail by its integral."""
    n = np.arange(1, images + 1)[:, None]
    total = true_power(k, model, shape) + np.sum(
        true_power(n / spacing - k, model, shape) + true_power(n / spacing + k, model, shape), axis=0
    )
    if model == "power-law":
        total = total + 2 * spacing**shape * (images + 0.5) ** (1 - shape) / (shape - 1)
    return total


def realise(rng, density):
    """A periodic Gaussian series of N0 samples whose one-sided density at rfftfreq is
    ``density`` (E|X_j|^2 = density N / (2 dx), split over real and imaginary parts)."""
    scale = np.sqrt(density * N0 / (4 * DX0))
    coefficients = (rng.standard_normal(density.size) + 1j * rng.standard_normal(density.size)) * scale
    coefficients[0] = 0.0
    coefficients[-1] = coefficients[-1].real * np.sqrt(2.0)
    return np.fft.irfft(coefficients, N0)


def periodogram(values, spacing):
    """One-sided periodogram density of a periodic series (no taper needed: no leakage)."""
    power = 2.0 * np.abs(np.fft.rfft(values)) ** 2 * spacing / values.size
    return np.fft.rfftfreq(values.size, spacing), power


class Case:
    """Fifty realisations of one spectrum, their dense samples fitted once."""

    def __init__(self, model, shape, seed):
        k = np.fft.rfftfreq(N0, DX0)
        density = np.zeros_like(k)
        density[1:] = folded_reference(k[1:], DX0, model, shape)
        rng = np.random.default_rng(seed)
        self.model, self.shape = model, shape
        self.series = [realise(rng, density) for _ in range(SEEDS)]
        self.fits = [fit_falloff(y[::2], spacing=2 * DX0, model=model) for y in self.series]

    def measured(self, series, m, lo, hi):
        """Coarse periodogram over the true spectrum minus 1 at the bins in [lo, hi] (1/m)."""
        k, power = periodogram(series[::m], m * DX0)
        chosen = (k >= lo) & (k <= hi)
        return k[chosen], power[chosen] / true_power(k[chosen], self.model, self.shape) - 1.0

    def paired(self, series, m, lo, hi):
        """Image power at the coarse spacing, measured against the fine series itself:
        E[I_coarse - I_fine] = P (A_coarse - A_fine), so the true spectrum's own draw cancels."""
        k, coarse = periodogram(series[::m], m * DX0)
        _, fine = periodogram(series, DX0)
        chosen = (k >= lo) & (k <= hi)
        k = k[chosen]
        p = true_power(k, self.model, self.shape)
        own = folded_reference(k, DX0, self.model, self.shape) / p - 1.0
        return (coarse[chosen] - fine[: coarse.size][chosen]) / p + own


@pytest.fixture(scope="module")
def k2():
    return Case("power-law", 2.0, seed=2)


@pytest.fixture(scope="module")
def k3():
    return Case("power-law", 3.0, seed=3)


@pytest.fixture(scope="module")
def exponential():
    return Case("exponential", 191.0, seed=4)


# --------------------------------------------------------------------------------------------
# Closed forms
# --------------------------------------------------------------------------------------------


def direct_power_law_sum(a, beta):
    """sum_{n >= 1} (n a - 1)^-beta + (n a + 1)^-beta by mpmath.nsum (Euler-Maclaurin)."""
    return mpmath.nsum(
        lambda n: (n * a - 1) ** -beta + (n * a + 1) ** -beta, [1, mpmath.inf], method="euler-maclaurin"
    )


@pytest.mark.parametrize("beta", [1.5, 2.7, 4.5])
@pytest.mark.parametrize("a", [2.0, 2.5, 7.3, 20.0])
def test_power_law_image_sum_is_the_hurwitz_closed_form(a, beta):
    # mpmath.nsum of the image terms directly, sum_n (n a - 1)^-beta + (n a + 1)^-beta
    # (Euler-Maclaurin summation: the default extrapolation is off by 1 % for beta = 1.5)
    direct = direct_power_law_sum(a, beta)
    ours = image_ratio(1.0 / a, spacing=1.0, model="power-law", shape=beta)
    assert float(ours) == pytest.approx(float(direct), rel=1e-9)
    # the closed form a^-beta [zeta(beta, 1 - 1/a) + zeta(beta, 1 + 1/a)] with mpmath's zeta
    closed = a**-beta * (mpmath.zeta(beta, 1 - 1 / a) + mpmath.zeta(beta, 1 + 1 / a))
    assert float(ours) == pytest.approx(float(closed), rel=1e-9)
    # and scipy.special.zeta agrees with mpmath.zeta for the Hurwitz function itself
    assert special.zeta(beta, 1 - 1 / a) == pytest.approx(float(mpmath.zeta(beta, 1 - 1 / a)), rel=1e-12)


def test_image_sum_at_two_samples_per_wavelength():
    # zeta(2, 1/2) = (2^2 - 1) zeta(2) = pi^2/2 (from memory: zeta(s, 1/2) = (2^s - 1) zeta(s)),
    # so A = (1/4) [pi^2/2 + (pi^2/2 - 4)] = pi^2/4 - 1: the first image sits on the target.
    assert float(image_ratio(0.5, spacing=1.0, model="power-law", shape=2.0)) == pytest.approx(
        np.pi**2 / 4 - 1, rel=1e-12
    )


@pytest.mark.parametrize("depth", [10.0, 50.0, 200.0])
@pytest.mark.parametrize("a", [2.0, 3.0, 8.0])
def test_exponential_image_sum_is_the_geometric_series(a, depth):
    dx = 100.0
    kt = 1.0 / (a * dx)
    rate = 4 * mpmath.pi * depth
    # mpmath.nsum of exp(-4 pi h (n/dx -+ k)) over the value at k
    direct = mpmath.nsum(
        lambda n: mpmath.exp(-rate * (n / dx - kt)) + mpmath.exp(-rate * (n / dx + kt)), [1, mpmath.inf]
    ) / mpmath.exp(-rate * kt)
    ours = image_ratio(kt, spacing=dx, model="exponential", shape=depth)
    assert float(ours) == pytest.approx(float(direct), rel=1e-9)


@pytest.mark.parametrize(
    "ratio, expected", [(0.5, 0.0019), (1.0, 0.043), (1.5, 0.123), (2.0, 0.208), (3.0, 0.351)]
)
def test_exponential_convention_matches_the_nyquist_table(ratio, expected):
    # references.md section 8: a field at height h has amplitude spectrum exp(-|k| h) (k in
    # rad/m), relative amplitude exp(-pi h / dx) at Nyquist; our power exp(-4 pi h k), k in
    # cycles/m, is its square.
    h = 1000.0
    model = FalloffModel.exponential(h)
    nyquist = 1.0 / (2 * ratio * h)
    amplitude = np.sqrt(model.signal_power(nyquist) / model.signal_power(0.0))
    assert amplitude == pytest.approx(expected, abs=6e-4)


def test_folded_floor_counts_the_images_below_the_stations_nyquist():
    # A white floor N0 up to 1/(2 dx_ref) folds once per image inside that band; count them
    # directly (n/dx -+ k <= 1/(2 dx_ref), n >= 1) and compare.
    dx_ref, floor, signal_power = 100.0, 2.0, 5.0
    model = FalloffModel("power-law", 3.0, 0.0, reference_wavenumber=1e-3, reference_power=signal_power,
                         noise_floor=floor, reference_spacing=dx_ref)
    for m in (1, 2, 3, 5, 8):
        dx = m * dx_ref
        for kt in (0.11 / dx, 0.3 / dx, 0.49 / dx):
            n = np.arange(1, 200)
            top = 0.5 / dx_ref
            count = np.sum(n / dx - kt <= top) + np.sum(n / dx + kt <= top)
            s = model.signal_power(kt)
            images = image_ratio(kt, spacing=dx, model="power-law", shape=3.0)
            expected = (s * images + floor * count) / (s + floor)
            ours = float(contamination(1 / kt, spacing=dx, falloff=model).value)
            assert ours == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("model", [FalloffModel.power_law(2.5), FalloffModel.exponential(300.0)])
def test_aliased_variance_fraction_against_quadrature(model):
    dx, length = 200.0, 50_000.0
    nyquist = 1 / (2 * dx)
    # scipy.integrate.quad of the model beyond Nyquist over its integral in [1/length, Nyquist]
    # (the exponential integrated to 60 e-folds beyond Nyquist, where it is 1e-26 of its value)
    top = np.inf if model.model == "power-law" else nyquist + 60 / (4 * np.pi * model.shape)
    beyond = integrate.quad(lambda k: float(model.signal_power(k)), nyquist, top, limit=200)[0]
    within = integrate.quad(lambda k: float(model.signal_power(k)), 1 / length, nyquist, limit=200)[0]
    fraction = aliased_variance_fraction(spacing=dx, length=length, falloff=model)
    assert fraction == pytest.approx(beyond / within, rel=1e-6)


def test_vectorised_over_spacing_and_wavelength():
    model = FalloffModel.power_law(2.4, beta_err=0.1)
    spacing = np.linspace(50.0, 900.0, 1000)
    wavelength = np.full(1000, 2000.0)
    batch = contamination(wavelength, spacing=spacing, falloff=model)
    assert batch.value.shape == (1000,)
    for i in (0, 333, 999):
        one = contamination(2000.0, spacing=spacing[i], falloff=model)
        assert float(one.value) == batch.value[i]
        assert float(one.low) <= float(one.value) <= float(one.high)
    lengths, spacings = np.array([[1000.0], [3000.0]]), np.array([100.0, 200.0, 400.0])
    grid = contamination(lengths, spacing=spacings, falloff=model)
    assert grid.value.shape == (2, 3)
    assert np.all(np.diff(grid.value, axis=1) > 0)  # coarser spacing, more aliased power
    assert len(batch.to_frame()) == 1000


def test_unresolved_shallow_and_white():
    # L < 2 dx: the target itself is aliased; beta <= 1: the image sum diverges
    assert np.isinf(contamination(150.0, spacing=100.0, falloff=FalloffModel.power_law(3.0)).value)
    assert np.isinf(contamination(1000.0, spacing=100.0, falloff=FalloffModel.power_law(0.9)).value)
    shallow = recommended_spacing(1000.0, falloff=FalloffModel.power_law(1.0))
    assert np.isnan(shallow.spacing) and "too shallow" in shallow.message
    white = replace_falls_off(FalloffModel.power_law(0.05))
    assert np.isnan(contamination(1000.0, spacing=100.0, falloff=white).value)


def replace_falls_off(model):
    from dataclasses import replace

    return replace(model, falls_off=False)


# --------------------------------------------------------------------------------------------
# Recommended spacing
# --------------------------------------------------------------------------------------------


@pytest.mark.parametrize("model", [FalloffModel.power_law(2.0), FalloffModel.power_law(3.3),
                                   FalloffModel.exponential(150.0)])
@pytest.mark.parametrize("tolerance", [0.001, 0.01, 0.1])
def test_recommended_spacing_is_the_root(model, tolerance):
    r = recommended_spacing(2000.0, falloff=model, tolerance=tolerance)
    dx = float(r.spacing)
    assert 0 < dx < 1000.0 and r.basis.item() == "tolerance"
    at = float(contamination(2000.0, spacing=dx, falloff=model).value)
    assert at == pytest.approx(tolerance, rel=1e-6)
    assert float(contamination(2000.0, spacing=dx * 1.01, falloff=model).value) > tolerance


def test_four_to_five_samples_per_wavelength():
    # Common practice (references.md section 8, no source): 4-5 or more samples per shortest
    # wavelength. It keeps the aliased power at that wavelength to 1 % only for a spectrum
    # falling as k^-beta with beta of about 4.3 (4 samples) or 3.5 (5 samples); a k^-2
    # spectrum needs about 18. The roots are found here with scipy.optimize.brentq on the
    # image sums added term by term (numpy, 10^5 images and the integral of the rest),
    # independently of our closed form.
    from scipy.optimize import brentq

    def images(a, beta, count=100_000):
        n = np.arange(1, count + 1)
        tail = 2 * (count + 0.5) ** (1 - beta) / ((beta - 1) * a**beta)
        return np.sum((n * a - 1.0) ** -beta + (n * a + 1.0) ** -beta) + tail

    beta_4 = brentq(lambda b: images(4, b) - 0.01, 3.0, 6.0, xtol=1e-10)
    beta_5 = brentq(lambda b: images(5, b) - 0.01, 3.0, 6.0, xtol=1e-10)
    assert beta_4 == pytest.approx(4.321, abs=0.001)  # values in docs/aliasing-budget.md
    assert beta_5 == pytest.approx(3.542, abs=0.001)
    for beta, samples in ((beta_4, 4.0), (beta_5, 5.0)):
        r = recommended_spacing(1000.0, falloff=FalloffModel.power_law(beta), tolerance=0.01)
        assert 1000.0 / float(r.spacing) == pytest.approx(samples, rel=1e-6)
    k2_samples = 1000.0 / float(recommended_spacing(1000.0, falloff=FalloffModel.power_law(2.0)).spacing)
    assert k2_samples == pytest.approx(18.19, abs=0.01)


def test_noise_floor_limits_the_recommendation():
    # signal 1e4 (k/1e-3)^-3 meets a floor of 10 at k = 1e-2 cycles/m (100 m wavelength)
    model = FalloffModel("power-law", 3.0, 0.1, reference_wavenumber=1e-3, reference_power=1e4,
                         noise_floor=10.0, reference_spacing=25.0)
    assert model.floor_wavenumber == pytest.approx(1e-2, rel=1e-12)
    assert model.floor_spacing == pytest.approx(50.0, rel=1e-12)
    tight = recommended_spacing(300.0, falloff=model, tolerance=0.001)
    assert tight.basis.item() == "noise floor" and float(tight.spacing) == pytest.approx(50.0)
    assert "only sample noise" in tight.message
    loose = recommended_spacing(2000.0, falloff=model, tolerance=0.05)
    assert loose.basis.item() == "tolerance" and float(loose.spacing) > 50.0
    inside = recommended_spacing(80.0, falloff=model)  # the target lies in the noise
    assert "see noise whatever their spacing" in inside.message


def test_tolerance_is_checked():
    from profiles.errors import InputError

    with pytest.raises(InputError, match="tolerance"):
        recommended_spacing(1000.0, falloff=FalloffModel.power_law(3.0), tolerance=1.5)


def test_model_for_kind():
    # the kinds of a survey configuration (profiles.config) and of profiles.columns.field_kind
    assert model_for_kind("potential_field") == "exponential"
    assert model_for_kind("magnetic") == "exponential"
    assert model_for_kind("bathymetry") == model_for_kind(None) == "power-law"


# --------------------------------------------------------------------------------------------
# Fits and contamination on synthetic profiles
# --------------------------------------------------------------------------------------------


@pytest.mark.parametrize("case, truth", [("k2", 2.0), ("k3", 3.0), ("exponential", 191.0)])
def test_fit_recovers_the_shape(request, case, truth):
    fits = request.getfixturevalue(case).fits
    shapes = np.array([f.shape for f in fits])
    errors = np.array([f.shape_err for f in fits])
    assert all(f.falls_off for f in fits)
    if case == "exponential":
        assert np.mean(np.abs(shapes - truth) < 0.05 * truth) >= 0.95
    else:  # pitfalls.md S12: synthetic k^-2 and k^-3 profiles recover the exponent within 0.1
        assert np.mean(np.abs(shapes - truth) < 0.1) >= 0.95
    # the standard errors are honest: about 95 % of the fits lie within two of them
    assert np.mean(np.abs(shapes - truth) < 2 * errors) >= 0.86
    # no noise was added: a floor is (falsely) seen in few fits
    assert sum(f.floor_seen for f in fits) <= 6


@pytest.mark.parametrize(
    "case, m, wavelength", [("k2", 8, 1600.0), ("k3", 6, 900.0), ("exponential", 10, 1500.0)]
)
def test_measured_contamination_agrees_with_the_prediction(request, case, m, wavelength):
    data = request.getfixturevalue(case)
    lo, hi = 0.8 / wavelength, 1.2 / wavelength
    inside = 0
    for series, fit in zip(data.series, data.fits, strict=True):
        k, measured = data.measured(series, m, lo, hi)
        predicted = contamination(1.0 / k, spacing=m * DX0, falloff=fit)
        # The measurement is a mean of M periodogram bins, each (1 + A) chi2_2 / 2 (scipy.stats
        # chi2): its 95 % range around the predicted interval is the honest per-seed check.
        q_low, q_high = stats.chi2.ppf([0.025, 0.975], 2 * k.size) / (2 * k.size)
        low = (1 + predicted.low.mean()) * q_low - 1
        high = (1 + predicted.high.mean()) * q_high - 1
        inside += low <= measured.mean() <= high
    assert inside / SEEDS >= 0.9
    # Pooled over seeds, image power measured against each fine series (far less scatter)
    # matches the prediction from the true shape to within 3.5 standard errors.
    pooled = np.concatenate([data.paired(series, m, lo, hi) for series in data.series])
    k, _ = data.measured(data.series[0], m, lo, hi)
    truth = FalloffModel(data.model, data.shape, 0.0)
    expected = contamination(1.0 / k, spacing=m * DX0, falloff=truth).value.mean()
    assert expected > 0.1  # a test with power in it
    error = pooled.std() / np.sqrt(pooled.size)
    assert abs(pooled.mean() - expected) < 3.5 * error


def test_recommended_spacing_keeps_contamination_under_tolerance(k3):
    wavelength, tolerance = 1000.0, 0.01
    lo, hi = 0.8 / wavelength, 1.0 / wavelength
    under, over = [], []
    for series, fit in zip(k3.series, k3.fits, strict=True):
        spacing = float(recommended_spacing(wavelength, falloff=fit, tolerance=tolerance).spacing)
        m = int(np.floor(spacing / DX0))  # the coarsest grid spacing within the recommendation
        under.append(k3.paired(series, m, lo, hi))
        over.append(k3.paired(series, 2 * m, lo, hi))
    under, over = np.concatenate(under), np.concatenate(over)
    error = under.std() / np.sqrt(under.size)
    assert under.mean() < tolerance + 2.5 * error
    # twice the recommended spacing is well over the tolerance: the check can fail
    assert over.mean() > tolerance + 5 * over.std() / np.sqrt(over.size)


def test_white_noise_gets_no_recommendation():
    rng = np.random.default_rng(11)
    falls = 0
    for _ in range(20):
        values = rng.standard_normal(2048)
        for model in ("power-law", "exponential"):
            fit = fit_falloff(values, spacing=100.0, model=model)
            falls += fit.falls_off
    assert falls <= 2  # about 2 % of white spectra look significantly red
    white = fit_falloff(np.random.default_rng(12).standard_normal(2048), spacing=100.0)
    assert not white.falls_off and "white" in white.message
    r = recommended_spacing(1000.0, falloff=white)
    assert np.isnan(r.spacing) and r.basis.item() == "none" and "no fall-off" in r.message


def test_noise_floor_is_found_and_measured():
    # k^-2 signal plus station noise whose density 2 sigma^2 dx equals the signal at 0.3 Nyquist
    k = np.fft.rfftfreq(N0, DX0)
    density = np.zeros_like(k)
    density[1:] = folded_reference(k[1:], DX0, "power-law", 2.0)
    rng = np.random.default_rng(5)
    nyquist = 1 / (4 * DX0)
    level = (0.3 * nyquist) ** -2.0
    fits = []
    for _ in range(8):
        dense = realise(rng, density)[::2]
        dense = dense + rng.standard_normal(dense.size) * np.sqrt(level / (2 * 2 * DX0))
        fits.append(fit_falloff(dense, spacing=2 * DX0))
    assert all(fit.floor_seen for fit in fits)
    # the floor is measured to about 9 %, where it meets the signal to about 12 % (40 seeds)
    assert np.median([fit.noise_floor for fit in fits]) == pytest.approx(level, rel=0.1)
    assert np.median([fit.floor_wavenumber for fit in fits]) == pytest.approx(0.3 * nyquist, rel=0.1)
    assert all(abs(fit.shape - 2.0) < 3 * fit.shape_err for fit in fits)
    r = recommended_spacing(1.0 / (0.25 * nyquist), falloff=fits[0])
    assert r.basis.item() == "noise floor"


def test_band_can_be_given():
    y = realise(np.random.default_rng(9), _density("power-law", 3.0))
    fit = fit_falloff(y[::2], spacing=2 * DX0, band=(20_000.0, 1_000.0))
    assert fit.band_rule == "given"
    assert 1 / fit.band_min <= 20_000.0 and 1 / fit.band_max >= 1_000.0
    assert fit.shape == pytest.approx(3.0, abs=0.15)
    doc = fit.to_json()
    assert {"model", "beta", "beta_err", "noise_floor_per_cycle_per_km"} <= set(doc)


def test_band_starts_above_a_peak_of_the_signal():
    # A random walk (integrated white noise: density proportional to 1 / sin^2(pi k dx), k^-2
    # over most of the band; common practice) with a strong 25 km sinusoid, as a fabric peak
    # sits on red relief. Fitted from its spectral maximum, the band took the peak in and beta
    # came out near 2.6; the peak screen starts the band above it (8 seeds, from memory of
    # the run: 1.98 to 2.01) and says so.
    rng = np.random.default_rng(21)
    x = np.arange(10_000) * 250.0
    fits = [fit_falloff(np.cumsum(rng.normal(0.0, 10.0, x.size)) + 100.0 * np.sin(2 * np.pi * x / 25_000.0),
                        spacing=250.0) for _ in range(8)]
    for fit in fits:
        # the peak's group of bins (5 % wide) is named by its mean wavelength
        named = float(fit.message.split("spectral peak at ")[1].split(" km")[0])
        assert named == pytest.approx(25.0, rel=0.06)
        assert 1.0 / fit.band_min < 25_000.0
        assert abs(fit.shape - 2.0) < 4 * fit.shape_err
    assert np.median([fit.shape for fit in fits]) == pytest.approx(2.0, abs=0.03)
    # Without the peak, the band is not moved (the screen's false alarms are rare: 0.1 %).
    plain = [fit_falloff(np.cumsum(rng.normal(0.0, 10.0, x.size)), spacing=250.0) for _ in range(8)]
    assert not any("spectral peak" in fit.message for fit in plain)


def _density(model, shape):
    k = np.fft.rfftfreq(N0, DX0)
    density = np.zeros_like(k)
    density[1:] = folded_reference(k[1:], DX0, model, shape)
    return density


# --------------------------------------------------------------------------------------------
# The spacing command
# --------------------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def two_spacings(tmp_path_factory):
    """One line: 600 steps of 250 m, then 150 steps of 1 km, no gap (pyproj.Geod.fwd), with a
    k^-2 depth (a random walk) and a white field."""
    lon, lat = walk(-20.0, -40.0, [(80, 600, 250.0), (80, 150, 1000.0)])
    n = lon.size
    rng = np.random.default_rng(3)
    depth = 4000.0 + np.cumsum(rng.standard_normal(n)) * 5.0
    return write_csv(tmp_path_factory.mktemp("budget") / "line.csv", {
        "line": ["B1"] * n, "lon": lon, "lat": lat, "depth_m": depth,
        "white_m": rng.standard_normal(n), "magnetic_nt": depth / 10.0,
    })


def run(capsys, *argv):
    status = main(list(argv))
    out, err = capsys.readouterr()
    return status, out, err


def test_cli_budget_json(capsys, two_spacings):
    status, out, _ = run(capsys, "spacing", two_spacings, "--field", "depth_m",
                         "--shortest-wavelength", "4km", "--json")
    assert status == 0
    doc = json.loads(out)
    (segment,) = doc["segments"]
    assert {"recommended_spacing_km", "falloff"} <= set(segment)
    assert {"model", "beta", "beta_err", "noise_floor_per_cycle_per_km"} <= set(segment["falloff"])
    assert segment["falloff"]["beta"] == pytest.approx(2.0, abs=0.3)
    first, second = doc["stretches"]  # no gap, yet two stretches of homogeneous spacing
    keys = {"line", "segment", "start_km", "end_km", "spacing_km", "alias_contamination",
            "alias_contamination_low", "alias_contamination_high", "aliased_variance_fraction",
            "recommended_spacing_km"}
    assert keys <= set(first)
    assert first["spacing_km"] == pytest.approx(0.25, rel=1e-6)
    assert second["spacing_km"] == pytest.approx(1.0, rel=1e-6)
    assert second["start_km"] == pytest.approx(150.0, abs=1e-3)
    assert first["alias_contamination"] < second["alias_contamination"]
    low, high = first["alias_contamination_low"], first["alias_contamination_high"]
    assert low <= first["alias_contamination"] <= high
    assert second["exceeds_recommendation"] is True
    assert doc["budget"]["alias_tolerance"] == 0.01


def test_cli_budget_options_and_outputs(capsys, tmp_path, two_spacings):
    out = tmp_path / "audit"
    status, _, _ = run(capsys, "spacing", two_spacings, "--field", "magnetic_nt", "--potential-field",
                       "--shortest-wavelength", "4km", "--alias-tolerance", "0.05", "--out", str(out),
                       "--quiet")
    assert status == 0
    assert (out / "stretches.csv").is_file()
    doc = json.loads((out / "spacing.json").read_text())
    assert doc["segments"][0]["falloff"]["model"] == "exponential"
    assert "depth_km" in doc["segments"][0]["falloff"]
    assert doc["budget"]["alias_tolerance"] == 0.05
    header = (out / "segments.csv").read_text().splitlines()[0]
    assert "recommended_spacing_km" in header


def test_cli_white_field_and_plain_audit(capsys, two_spacings):
    status, out, _ = run(capsys, "spacing", two_spacings, "--field", "white_m",
                         "--shortest-wavelength", "4km", "--json")
    assert status == 0
    doc = json.loads(out)
    assert doc["segments"][0]["recommended_spacing_km"] is None
    assert any("white" in w and "no spacing can be recommended" in w for w in doc["warnings"])
    _, out, _ = run(capsys, "spacing", two_spacings, "--json")  # without --field: no budget
    assert "stretches" not in json.loads(out) and "falloff" not in json.loads(out)["segments"][0]
    _, _, err = run(capsys, "spacing", two_spacings, "--field", "magnetic_nt", "--json")
    assert "--potential-field" in err  # a magnetic field budgeted as a power law is pointed out


def test_cli_bad_tolerance_is_one_line(capsys, two_spacings):
    with pytest.raises(SystemExit) as stop:
        main(["spacing", two_spacings, "--field", "depth_m", "--alias-tolerance", "2"])
    assert stop.value.code == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("profiles: error:") and "fraction" in err[0]


def test_fitted_model_reproduces_the_sampled_density(k3):
    # The synthetic density of the dense samples is folded_reference at their spacing (C = 1):
    # the fitted model, folded the same way, must match it across the band.
    k = np.linspace(2e-4, 4.9e-3, 50)
    truth = folded_reference(k, 2 * DX0, "power-law", 3.0)
    ratios = np.array([fit.sampled_power(k, spacing=2 * DX0) / truth for fit in k3.fits[:10]])
    assert np.median(ratios) == pytest.approx(1.0, abs=0.05)
    assert np.all(np.abs(np.median(ratios, axis=0) - 1.0) < 0.15)


def test_windows_get_the_budget_columns(two_spacings):
    from profiles.columns import ColumnNames
    from profiles.geometry import build_segments
    from profiles.read import read_surveys
    from profiles.spacing import WINDOW_BUDGET_COLUMNS, alias_budget

    survey = read_surveys([two_spacings], columns=ColumnNames(), fields=("depth_m",))
    segments = build_segments(survey)
    budget = alias_budget(segments, "depth_m", shortest_wavelength=4000.0)
    windows = pd.DataFrame({
        "line": ["B1"] * 3 + ["nowhere"], "segment": [1, 1, 1, 1],
        "start_km": [0.0, 50.0, 200.0, 0.0], "end_km": [40.0, 90.0, 240.0, 40.0],
        "local_spacing_km": [0.25, 0.25, 1.0, 0.25], "dominant_wavelength_km": [10.0, 8.0, 12.0, 5.0],
    })
    out = budget.for_windows(windows)
    assert list(out.columns) == list(WINDOW_BUDGET_COLUMNS) and list(out.index) == list(windows.index)
    falloff = budget.falloff("B1", 1)
    # the same numbers as the scalar functions, window by window
    for i in range(3):
        dx = windows["local_spacing_km"][i] * 1e3
        expected = contamination(4000.0, spacing=dx, falloff=falloff)
        assert out["alias_contamination"][i] == pytest.approx(float(expected.value))
        dominant = contamination(windows["dominant_wavelength_km"][i] * 1e3, spacing=dx, falloff=falloff)
        assert out["dominant_alias_contamination_high"][i] == pytest.approx(float(dominant.high))
    assert out["exceeds_recommendation"][2] is True  # 1 km against a recommendation under 0.25 km
    assert np.isnan(out["alias_contamination"][3])  # no such segment: no budget
