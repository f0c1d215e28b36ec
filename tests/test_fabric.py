"""Tests of profiles.fabric: fabric strike and true wavelength from apparent wavelengths."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import curve_fit, minimize_scalar

from profiles.errors import InputError
from profiles.fabric import FabricFit, fit_fabric, project_wavelength

TRUE_WAVELENGTH = 10_000.0
STRIKE = 35.0

# references.md section 9: λ_apparent = λ / |cos θ| for a profile at θ to the fabric normal,
# λ = 10 km (projection of the wavevector; checked there by a refined DTFT peak).
REFERENCE_TABLE = {30.0: 11_547.005, 45.0: 14_142.136, 60.0: 20_000.0, 80.0: 57_587.705}


def azimuth_at(theta_deg: float, strike_deg: float = STRIKE) -> float:
    """Azimuth of a line at ``theta_deg`` from the fabric normal (normal = strike + 90)."""
    return strike_deg + 90.0 - theta_deg


def fabric_profile(azimuth_deg, *, spacing, n, rng, noise):
    """Sample cos(2π (p·n)/L + φ) along a straight line of the given azimuth.

    Positions in a local east/north frame (m); n = (cos s, -sin s) is the unit normal to
    crests striking at s (azimuth clockwise from north).
    """
    distance = spacing * np.arange(n)
    start = rng.uniform(-5e4, 5e4, size=2)
    a = np.radians(azimuth_deg)
    east = start[0] + distance * np.sin(a)
    north = start[1] + distance * np.cos(a)
    s = np.radians(STRIKE)
    along_normal = east * np.cos(s) - north * np.sin(s)
    phase = rng.uniform(0, 2 * np.pi)
    values = np.cos(2 * np.pi * along_normal / TRUE_WAVELENGTH + phase)
    return values + noise * rng.standard_normal(n)


def dominant_wavelength(values, *, spacing):
    """Peak of the Hann-tapered periodogram: zero-padded FFT, then refined by optimizer."""
    n = values.size
    tapered = (values - values.mean()) * np.hanning(n)
    n_pad = 16 * n
    power = np.abs(np.fft.rfft(tapered, n=n_pad)) ** 2
    k_grid = np.fft.rfftfreq(n_pad, d=spacing)
    i = int(np.argmax(power[1:])) + 1
    positions = spacing * np.arange(n)

    def negative_power(k):
        return -np.abs(np.sum(tapered * np.exp(-2j * np.pi * k * positions))) ** 2

    dk = k_grid[1]
    best = minimize_scalar(
        negative_power, bounds=(k_grid[i] - dk, k_grid[i] + dk), method="bounded",
        options={"xatol": 1e-12},
    )
    return 1.0 / best.x


class TestProjectionFormula:
    def test_reference_table(self):
        # references.md section 9 table (λ = 10 km), to the 8 digits printed there.
        for theta, expected in REFERENCE_TABLE.items():
            got = project_wavelength(azimuth_at(theta), wavelength=TRUE_WAVELENGTH, strike_deg=STRIKE)
            assert got == pytest.approx(expected, rel=1e-7)

    def test_line_and_its_reverse_agree(self):
        a = project_wavelength(100.0, wavelength=TRUE_WAVELENGTH, strike_deg=STRIKE)
        b = project_wavelength(280.0, wavelength=TRUE_WAVELENGTH, strike_deg=STRIKE)
        assert a == pytest.approx(b, rel=1e-12)

    def test_along_strike_is_infinite(self):
        assert np.isinf(project_wavelength(STRIKE, wavelength=TRUE_WAVELENGTH, strike_deg=STRIKE))

    def test_synthetic_profile_peak_matches_table(self):
        # A noiseless synthetic profile's refined periodogram peak against the same table
        # (references.md section 9), to 0.5 % (a finite 200 km profile).
        rng = np.random.default_rng(3)
        for theta in (30.0, 45.0, 60.0):
            values = fabric_profile(azimuth_at(theta), spacing=50.0, n=4000, rng=rng, noise=0.0)
            got = dominant_wavelength(values, spacing=50.0)
            assert got == pytest.approx(REFERENCE_TABLE[theta], rel=5e-3)


class TestSyntheticFabric:
    def test_four_lines_recover_wavelength_and_strike(self):
        # Synthetic 2-D lineated fabric sampled on 4 lines at θ = 0, 30, -45, 60 degrees from
        # the normal; apparent wavelengths from the periodogram peak. Tolerances: L within
        # 3 %, s within 3 degrees (task specification; formula from references.md section 9).
        rng = np.random.default_rng(11)
        azimuths = [azimuth_at(theta) for theta in (0.0, 30.0, -45.0, 60.0)]
        apparent = []
        for azimuth in azimuths:
            values = fabric_profile(azimuth, spacing=50.0, n=3000, rng=rng, noise=0.5)
            apparent.append(dominant_wavelength(values, spacing=50.0))
        fit = fit_fabric(azimuths, apparent, lines=["A", "B", "C", "D"])
        assert fit.wavelength == pytest.approx(TRUE_WAVELENGTH, rel=0.03)
        assert abs(fit.strike_deg - STRIKE) < 3.0
        assert fit.n_segments == 4
        assert np.isfinite(fit.wavelength_err) and np.isfinite(fit.strike_err_deg)
        assert fit.rms_misfit == pytest.approx(np.sqrt(np.mean(fit.misfit**2)))


class TestExactRecovery:
    @pytest.mark.parametrize("strike", [0.0, 2.0, 35.0, 90.0, 151.0, 178.5])
    def test_noiseless_apparent_wavelengths(self, strike):
        # Apparent wavelengths from the projection formula itself (references.md section 9).
        azimuths = np.array([10.0, 50.0, 100.0, 140.0]) + strike
        apparent = project_wavelength(azimuths, wavelength=7_500.0, strike_deg=strike)
        fit = fit_fabric(azimuths, apparent)
        assert fit.wavelength == pytest.approx(7_500.0, rel=1e-9)
        assert 0.0 <= fit.strike_deg < 180.0
        assert min(abs(fit.strike_deg - strike), 180 - abs(fit.strike_deg - strike)) < 1e-7
        np.testing.assert_allclose(fit.predicted, apparent, rtol=1e-9)
        assert fit.rms_misfit < 1e-6

    def test_reversed_lines_and_weights_change_nothing(self):
        azimuths = np.array([125.0, 95.0, 170.0, 65.0])
        apparent = project_wavelength(azimuths, wavelength=TRUE_WAVELENGTH, strike_deg=STRIKE)
        reversed_azimuths = azimuths + np.array([180.0, 0.0, -180.0, 360.0])
        fit = fit_fabric(reversed_azimuths, apparent, wavelength_err=[100.0, 300.0, 50.0, 900.0])
        assert fit.wavelength == pytest.approx(TRUE_WAVELENGTH, rel=1e-9)
        assert fit.strike_deg == pytest.approx(STRIKE, abs=1e-7)

    def test_two_lines_exact_with_no_error_and_the_second_solution(self):
        # Two lines: |sin(t1 - s)| / |sin(t2 - s)| = λ2/λ1 has two roots in [0, 180).
        azimuths = np.array([125.0, 95.0])
        apparent = project_wavelength(azimuths, wavelength=TRUE_WAVELENGTH, strike_deg=STRIKE)
        fit = fit_fabric(azimuths, apparent)
        assert np.isnan(fit.wavelength_err) and np.isnan(fit.strike_err_deg)
        assert "exact fit" in fit.note
        assert fit.to_json()["wavelength_err_km"] is None
        solutions = [
            (fit.strike_deg, fit.wavelength),
            (fit.alternative_strike_deg, fit.alternative_wavelength),
        ]
        assert abs(fit.strike_deg - fit.alternative_strike_deg) > 1.0
        assert any(abs(s - STRIKE) < 1e-6 for s, _ in solutions)
        for strike, wavelength in solutions:
            again = project_wavelength(azimuths, wavelength=wavelength, strike_deg=strike)
            np.testing.assert_allclose(again, apparent, rtol=1e-8)

    def test_errors_match_scipy_curve_fit(self):
        # scipy.optimize.curve_fit on the same wavenumber model gives the reference
        # covariance (residual-scaled, absolute_sigma=False); σ_L = σ_(1/L) L².
        rng = np.random.default_rng(5)
        azimuths = np.array([0.0, 30.0, 60.0, 100.0, 130.0, 160.0])
        apparent = project_wavelength(azimuths, wavelength=TRUE_WAVELENGTH, strike_deg=STRIKE)
        apparent = apparent * (1 + 0.03 * rng.standard_normal(azimuths.size))
        fit = fit_fabric(azimuths, apparent)

        def model(azimuth, inverse_wavelength, strike):
            return inverse_wavelength * np.abs(np.sin(np.radians(azimuth - strike)))

        p, cov = curve_fit(model, azimuths, 1 / apparent, p0=[1 / fit.wavelength, fit.strike_deg])
        assert 1 / p[0] == pytest.approx(fit.wavelength, rel=1e-6)
        assert fit.wavelength_err == pytest.approx(np.sqrt(cov[0, 0]) / p[0] ** 2, rel=1e-4)
        assert fit.strike_err_deg == pytest.approx(np.sqrt(cov[1, 1]), rel=1e-4)


class TestRefusals:
    def test_one_line(self):
        with pytest.raises(InputError, match="at least 2 lines"):
            fit_fabric([30.0], [12_000.0])

    @pytest.mark.parametrize("azimuths", [[10.0, 25.0, 28.0], [5.0, 178.0, 355.0]])
    def test_narrow_azimuth_spread(self, azimuths):
        # 5, 178 and 355 degrees are within 7 degrees of each other modulo 180.
        with pytest.raises(InputError, match="span only"):
            fit_fabric(azimuths, [12_000.0, 13_000.0, 14_000.0])

    def test_infinite_wavelength_names_the_line(self):
        with pytest.raises(InputError, match=r"North-7.*along the strike"):
            fit_fabric([0.0, 60.0, 120.0], [1e4, np.inf, 2e4], lines=["North-5", "North-7", "X"])

    def test_line_along_fitted_strike_names_the_line(self):
        azimuths = [125.0, 95.0, 65.0, STRIKE + 2.0]
        apparent = project_wavelength(azimuths, wavelength=TRUE_WAVELENGTH, strike_deg=STRIKE)
        with pytest.raises(InputError, match=r"Tern-4.*within 2\.0 deg"):
            fit_fabric(azimuths, apparent, lines=["Tern-1", "Tern-2", "Tern-3", "Tern-4"])

    def test_bad_values(self):
        with pytest.raises(InputError, match="positive length"):
            fit_fabric([0.0, 60.0], [1e4, -5.0])
        with pytest.raises(InputError, match="equal length"):
            fit_fabric([0.0, 60.0, 90.0], [1e4, 2e4])
        with pytest.raises(InputError, match="wavelength_err"):
            fit_fabric([0.0, 60.0, 90.0], [1e4, 2e4, 3e4], wavelength_err=[1.0, 0.0, 1.0])


def test_outputs():
    azimuths = [125.0, 95.0, 170.0, 65.0]
    apparent = project_wavelength(azimuths, wavelength=TRUE_WAVELENGTH, strike_deg=STRIKE) * [
        1.01, 0.99, 1.0, 1.02,
    ]
    fit = fit_fabric(azimuths, apparent)
    assert isinstance(fit, FabricFit)
    assert set(fit.to_json()) == {
        "wavelength_km", "strike_deg", "wavelength_err_km", "strike_err_deg", "n_segments",
        "rms_misfit_km",
    }
    frame = fit.to_frame()
    assert frame.loc[0, "wavelength_km"] == pytest.approx(fit.wavelength / 1e3)
    lines = fit.lines_frame()
    assert list(lines.columns) == [
        "line", "azimuth_deg", "observed_wavelength_km", "predicted_wavelength_km", "misfit_km",
    ]
    np.testing.assert_allclose(lines["misfit_km"], (apparent - fit.predicted) / 1e3)
    assert "strike" in str(fit)
    # The curve is shortest, and equal to L, across the strike (references.md section 9).
    assert fit.predicted_wavelength(fit.strike_deg + 90.0) == pytest.approx(fit.wavelength)
    curve = fit.predicted_wavelength(np.arange(0.0, 180.0, 1.0))
    assert curve.min() >= fit.wavelength
