"""The fast paths of the fall-off fit: the image sum built for many beta, and the analytic slopes
of the fit's model, each against an outside reference (the tapers: tests/test_tapers.py).

References named beside each check: scipy.special.zeta and mpmath.zeta / mpmath.diff (the
Hurwitz zeta closed form of the power-law image sum and its derivative in beta).
"""

from __future__ import annotations

import mpmath
import numpy as np
import pytest
from scipy import special

from profiles.budget import PowerLawImageSum
from profiles.errors import InputError
from profiles.falloff import _select_bins, fit_falloff_many, fit_falloff_spectra, piece_spectrum
from profiles.whittle import Problems


def test_image_sum_matches_the_zeta_closed_form():
    # scipy.special.zeta: A = c^beta [zeta(beta, 1 - c) + zeta(beta, 1 + c)], c in (0, 1/2]
    c = np.concatenate([np.geomspace(1e-4, 0.5, 50), [0.4999999]])
    betas = np.concatenate([1.0 + np.geomspace(1e-6, 1.0, 15), np.linspace(2.0, 40.0, 40)])
    ours = PowerLawImageSum(c)(betas)
    closed = c ** betas[:, None] * (special.zeta(betas[:, None], 1 - c) + special.zeta(betas[:, None], 1 + c))
    np.testing.assert_allclose(ours, closed, rtol=1e-13, atol=0)
    # one beta at a time gives the same numbers as a batch
    one = np.array([PowerLawImageSum(c)([b])[0] for b in betas[::7]])
    np.testing.assert_allclose(one, ours[::7], rtol=1e-15, atol=0)
    # like scipy.special.zeta: a pole at beta = 1, undefined below
    edge = PowerLawImageSum(c)([0.9, 1.0])
    assert np.all(np.isnan(edge[0])) and np.all(np.isinf(edge[1]))


@pytest.mark.parametrize("beta", [1.001, 1.3, 2.5, 7.0, 19.0])
@pytest.mark.parametrize("c", [0.003, 0.21, 0.5])
def test_image_sum_and_slope_against_mpmath(beta, c):
    # mpmath.zeta for the value, mpmath.diff of the same closed form for dA/dbeta
    def closed(b):
        return mpmath.mpf(c) ** b * (mpmath.zeta(b, 1 - mpmath.mpf(c)) + mpmath.zeta(b, 1 + mpmath.mpf(c)))

    with mpmath.workdps(30):
        value, slope = float(closed(beta)), float(mpmath.diff(closed, beta))
    ours, ours_slope = PowerLawImageSum([c])([beta], slope=True)
    assert ours[0, 0] == pytest.approx(value, rel=1e-13)
    assert ours_slope[0, 0] == pytest.approx(slope, rel=1e-12)


@pytest.mark.parametrize(
    "model, shapes", [("power-law", (1.4, 3.0, 12.0)), ("exponential", (0.4, 3.0, 40.0))]
)
@pytest.mark.parametrize("folded", [False, True])
def test_shape_slope_is_the_derivative_of_the_log_shape(model, shapes, folded):
    # the fit's analytic d ln F / dz against a central difference of its own log shape
    # (numerical differentiation: truncation error about 1e-10 relative at this step), for
    # two problems of different bins at once
    rng = np.random.default_rng(5)
    sets = [_select_bins([piece_spectrum(np.cumsum(np.cumsum(rng.standard_normal(n))), spacing=dx)], None)
            for n, dx in ((2000, 50.0), (1500, 80.0))]
    problems = Problems(model, *([getattr(b, name) for b in sets]
                                 for name in ("wavenumber", "psd", "spacing", "weight", "inflation")))
    rows = np.arange(2)
    for z in shapes:
        step = 1e-5 * z
        zs = np.array([[z - step, z, z + step]] * 2)
        log_f, slope = problems.shapes(rows, zs, folded)
        central = (log_f[:, 2] - log_f[:, 0]) / (2 * step)
        for row, bins in enumerate(sets):
            size = bins.wavenumber.size
            np.testing.assert_allclose(slope[row, 1, :size], central[row, :size], rtol=1e-6,
                                       atol=1e-9 * np.abs(slope[row, 1, :size]).max())
        # one problem alone gives the same numbers as the pair
        alone = problems.shapes(rows[1:], zs[1:], folded)[0]
        np.testing.assert_array_equal(alone[0], log_f[1])


def test_many_sets_fitted_together_give_each_set_alone():
    # fit_falloff_many runs every step of the fits for all sets at once, with the bins of
    # each padded to the longest: the models must be those of the sets fitted one by one
    # (the per-set fit is checked against outside references in tests/test_budget.py)
    rng = np.random.default_rng(21)
    sets = []
    for n, dx, floor in ((4000, 50.0, 0.0), (2500, 80.0, 0.3), (6001, 40.0, 0.05), (300, 100.0, 0.0)):
        walk = np.cumsum(rng.standard_normal(n)) + floor * rng.standard_normal(n) * np.sqrt(n)
        sets.append([piece_spectrum(walk, spacing=dx)])
    sets.append([piece_spectrum(rng.standard_normal(3000), spacing=50.0)])  # white: no fall-off
    sets.append([piece_spectrum(rng.standard_normal(70), spacing=50.0)])  # too few bins
    for model in ("power-law", "exponential"):
        together = fit_falloff_many(sets, model=model)
        for spectra, found in zip(sets, together, strict=True):
            try:
                alone = fit_falloff_spectra(spectra, model=model)
            except InputError as error:
                assert isinstance(found, InputError) and str(found) == str(error)
                continue
            assert found.message == alone.message and found.falls_off == alone.falls_off
            for name in ("shape", "shape_err", "reference_power", "noise_floor", "reference_wavenumber"):
                assert getattr(found, name) == pytest.approx(getattr(alone, name), rel=1e-9, abs=1e-300), name
