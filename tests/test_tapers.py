"""DPSS tapers (profiles.spectral.tapers) against scipy.signal.windows.dpss.

Reference: ``scipy.signal.windows.dpss(N, NW, K, sym=True, norm=2, return_ratios=True)``, the
tridiagonal eigenvectors of Slepian (1978) / Percival and Walden (1993, section 8.3) and their
concentration ratios. Up to DIRECT_LENGTH samples our tapers are scipy's own; above it they
come from interpolated reference tapers refined by one Rayleigh-quotient inverse iteration, and
must still be scipy's to rounding error (N 1e-15 here, the agreement of two eigensolvers on
vectors of N unit-energy entries, up to 50,000).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal.windows import dpss

from profiles.spectral.psd import multitaper_coefficients
from profiles.spectral.tapers import DIRECT_LENGTH, _refined_tapers, dpss_tapers


@pytest.mark.parametrize("count, nw, n_tapers", [(64, 2.5, 4), (999, 4.0, 7), (DIRECT_LENGTH, 4.0, 7)])
def test_short_tapers_are_scipys(count, nw, n_tapers):
    tapers, ratios = dpss(count, nw, n_tapers, sym=True, norm=2, return_ratios=True)
    cached, concentrations = dpss_tapers(count, nw, n_tapers)
    np.testing.assert_allclose(cached, tapers, rtol=0, atol=1e-14)
    np.testing.assert_allclose(concentrations, ratios, rtol=0, atol=1e-15)
    assert dpss_tapers(count, nw, n_tapers)[0] is cached  # computed once per (N, NW, K)


@pytest.mark.parametrize(
    "count, nw, n_tapers",
    [
        (DIRECT_LENGTH + 1, 4.0, 7),
        (1500, 2.5, 4),
        (2048, 4.0, 7),
        (3001, 3.0, 5),
        (5000, 1.5, 2),
        (5000, 10.0, 19),
        (9001, 4.0, 7),
        (20000, 4.0, 7),
        (50000, 4.0, 7),
    ],
)
def test_long_tapers_are_scipys(count, nw, n_tapers):
    tapers, ratios = dpss(count, nw, n_tapers, sym=True, norm=2, return_ratios=True)
    ours, concentrations = dpss_tapers(count, nw, n_tapers)
    assert ours.shape == (n_tapers, count)
    # two eigensolvers' rounding, which grows with N: 3e-14 at N = 1,025, 2.5e-11 at 50,000
    np.testing.assert_allclose(ours, tapers, rtol=0, atol=1e-15 * count)
    np.testing.assert_allclose(concentrations, ratios, rtol=0, atol=1e-14)
    # orthonormal, as eigenvectors of a symmetric matrix with distinct eigenvalues
    np.testing.assert_allclose(ours @ ours.T, np.eye(n_tapers), rtol=0, atol=1e-13)


def test_refinement_is_what_makes_them_exact():
    # the interpolated guess alone is only close; the inverse iteration takes it to scipy's
    from profiles.spectral.tapers import _guess

    count = 3001
    guess = _guess(count, 4.0, 7)
    guess /= np.linalg.norm(guess, axis=1, keepdims=True)
    exact = dpss(count, 4.0, 7, sym=True, norm=2)
    assert np.abs(guess - exact).max() > 1e-8
    assert np.abs(_refined_tapers(count, 4.0, 7) - exact).max() < 1e-11


def test_fast_length_is_scipys_next_fast_len():
    # scipy.fft.next_fast_len(n, real=True): the smallest 2^a 3^b 5^c >= n
    from scipy.fft import next_fast_len

    from profiles.spectral.preprocess import fast_length

    for n in [*range(1, 3000), 8191, 8999, 9973, 65537, 1_000_003]:
        assert fast_length(n) == next_fast_len(n, real=True), n


def test_cached_tapers_cannot_be_modified():
    for count in (128, 4000):
        tapers, concentrations = dpss_tapers(count, 4.0, 7)
        with pytest.raises(ValueError, match="read-only"):
            tapers[0, 0] = 1.0
        with pytest.raises(ValueError, match="read-only"):
            concentrations[0] = 0.0
    eigen = multitaper_coefficients(np.arange(128.0) ** 1.5, spacing=10.0, nw=4.0)
    with pytest.raises(ValueError, match="read-only"):
        eigen.tapers *= 2.0
    with pytest.raises(ValueError, match="read-only"):
        eigen.eigenvalues[:] = 1.0
    # and what the next caller gets is still scipy's
    reference = dpss(128, 4.0, 7, sym=True, norm=2)
    np.testing.assert_allclose(dpss_tapers(128, 4.0, 7)[0], reference, rtol=0, atol=1e-14)
