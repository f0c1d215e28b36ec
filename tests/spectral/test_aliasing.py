"""Tests of profiles.spectral.aliasing: Nyquist and apparent wavelengths."""

from __future__ import annotations

import numpy as np
import pytest

from profiles.errors import InputError, SpacingError
from profiles.spectral import (
    apparent_wavelength,
    apparent_wavenumber,
    harmonic_table,
    is_aliased,
    nyquist_wavelength,
    nyquist_wavenumber,
)

# references.md section 8, dx = 100 m: true wavelength -> apparent wavelength (Shannon 1949;
# each alias confirmed there by the periodogram peak of a sampled cosine).
ALIAS_TABLE = [
    (1000.0, 1000.0),
    (250.0, 250.0),
    (180.0, 225.0),
    (150.0, 300.0),
    (120.0, 600.0),
    (100.0, np.inf),
    (80.0, 400.0),
    (200.0 / 3.0, 200.0),  # 66.667 m in the table: folds onto the Nyquist wavelength
    (50.0, np.inf),
]


def test_nyquist():
    assert nyquist_wavelength(100.0) == 200.0
    assert nyquist_wavenumber(100.0) == 0.005
    with pytest.raises(SpacingError):
        nyquist_wavelength(-1.0)


@pytest.mark.parametrize(("true", "apparent"), ALIAS_TABLE)
def test_alias_table(true, apparent):
    assert apparent_wavelength(true, spacing=100.0) == pytest.approx(apparent, rel=1e-9)


def test_vectorised_and_flags():
    true = np.array([row[0] for row in ALIAS_TABLE])
    expected = np.array([row[1] for row in ALIAS_TABLE])
    np.testing.assert_allclose(apparent_wavelength(true, spacing=100.0), expected, rtol=1e-9)
    np.testing.assert_array_equal(is_aliased(true, spacing=100.0), true < 200.0)
    assert apparent_wavelength(np.inf, spacing=100.0) == np.inf
    assert apparent_wavenumber(0.0123, spacing=100.0) == pytest.approx(abs(0.0123 - 0.01))
    with pytest.raises(InputError):
        apparent_wavelength(0.0, spacing=100.0)


@pytest.mark.parametrize(("true", "apparent"), [(150.0, 300.0), (80.0, 400.0), (180.0, 225.0)])
def test_sampled_sine_peaks_at_the_alias(true, apparent):
    # A cosine above the Nyquist wavenumber, sampled at 100 m, has its periodogram peak at
    # the predicted alias (references.md section 8). N = 3600 puts every alias on a harmonic.
    spacing, count = 100.0, 3600
    distance = np.arange(count) * spacing
    table = harmonic_table(np.cos(2 * np.pi * distance / true), spacing=spacing, detrend="mean")
    assert table.wavelength[table.dominant_k] == pytest.approx(apparent, rel=1e-9)
    assert table.wavelength[table.dominant_k] == pytest.approx(apparent_wavelength(true, spacing=spacing))
