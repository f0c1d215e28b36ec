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
from profiles.falloff import _Problem, _select_bins, piece_spectrum


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
    # (numerical differentiation: truncation error about 1e-10 relative at this step)
    rng = np.random.default_rng(5)
    values = np.cumsum(np.cumsum(rng.standard_normal(2000)))
    bins = _select_bins([piece_spectrum(values, spacing=50.0)], None)
    z_scale = 1.0 if model == "power-law" else 4 * np.pi * float(bins.wavenumber[-1])
    problem = _Problem(model, bins, float(np.median(bins.wavenumber)), z_scale, 50.0)
    for z in shapes:
        step = 1e-5 * z
        central = (problem.log_shape(z + step, folded) - problem.log_shape(z - step, folded)) / (2 * step)
        analytic = problem.shape_slope(z, folded)
        np.testing.assert_allclose(analytic, central, rtol=1e-6, atol=1e-9 * np.abs(analytic).max())
        assert not problem.log_shape(z, folded).flags.writeable  # kept rows are read-only
