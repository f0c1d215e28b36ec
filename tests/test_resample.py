"""Resampling: kept below the new Nyquist, removed above it by the anti-alias filter.

References: the sampling theorem and the folding rule k_a = |k - n/dx| (Shannon 1949;
../shared/references.md section 8); scipy.interpolate.CubicSpline as the cubic reference;
numpy.interp as the linear reference.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import walk
from scipy.interpolate import CubicSpline

from profiles.errors import InputError, SpacingError
from profiles.geometry import build_segments
from profiles.resample import resample, resample_values
from profiles.survey import Survey


def jittered(n: int, step: float, seed: int = 0) -> np.ndarray:
    rng = np.random.default_rng(seed)
    return np.concatenate([[0.0], np.cumsum(step * (1 + 0.2 * rng.uniform(-1, 1, n - 1)))])


def amplitude_at(values: np.ndarray, spacing: float, wavelength: float) -> float:
    """Amplitude of the Fourier component nearest 1/wavelength (Hann-free, via least squares)."""
    position = spacing * np.arange(values.size)
    design = np.column_stack([np.cos(2 * np.pi * position / wavelength),
                              np.sin(2 * np.pi * position / wavelength), np.ones(values.size)])
    coef, *_ = np.linalg.lstsq(design, values, rcond=None)
    return float(np.hypot(coef[0], coef[1]))


def test_sinusoid_below_new_nyquist_is_kept():
    distance = jittered(4000, 25.0)
    values = np.sin(2 * np.pi * distance / 5000.0)
    grid, out, lowpassed = resample_values(distance, values, spacing=200.0)
    assert lowpassed
    inner = slice(20, -20)  # away from the filter's edge padding
    np.testing.assert_allclose(out[inner], np.sin(2 * np.pi * grid[inner] / 5000.0), atol=0.01)


def test_lowpass_removes_wavelength_above_new_nyquist():
    # A 300 m wavelength sampled at 200 m would alias (Nyquist wavelength 400 m) to
    # k_a = |1/300 - 1/200| -> 600 m (references.md section 8 table: 120/100 m analogue).
    distance = jittered(4000, 25.0, seed=1)
    values = np.sin(2 * np.pi * distance / 300.0)
    _, filtered, lowpassed = resample_values(distance, values, spacing=200.0)
    assert lowpassed
    naive = np.interp(distance[0] + 200.0 * np.arange(filtered.size), distance, values)
    alias = 1.0 / abs(1.0 / 300.0 - 1.0 / 200.0)
    assert alias == pytest.approx(600.0)
    assert amplitude_at(naive, 200.0, alias) > 0.9  # without the filter the alias is there
    suppression = 20 * np.log10(amplitude_at(filtered[20:-20], 200.0, alias) / 1.0)
    assert suppression < -20.0  # at least 20 dB down (pitfalls S8)


def test_no_filter_when_not_coarser():
    distance = jittered(500, 100.0)
    values = np.cos(distance / 900.0)
    grid, out, lowpassed = resample_values(distance, values, spacing=100.0)
    assert not lowpassed
    np.testing.assert_allclose(out, np.interp(distance[0] + grid, distance, values))


def test_cubic_matches_scipy_cubic_spline():
    distance = jittered(300, 100.0, seed=3)
    values = np.sin(distance / 700.0)
    grid, out, _ = resample_values(distance, values, spacing=50.0, interpolation="cubic")
    reference = CubicSpline(distance, values, bc_type="not-a-knot")(distance[0] + grid)
    np.testing.assert_allclose(out, reference, rtol=0, atol=1e-12)


def test_resampling_stays_inside_each_segment():
    # A 6 km gap separates two stretches; each is resampled on its own grid and no sample
    # falls inside the gap.
    lon, lat = walk(0.0, -40.0, [(45, 80, 250.0), (45, 1, 6000.0), (45, 80, 250.0)])
    n = lon.size
    survey = Survey.from_arrays(line=np.array(["G"] * n), lon=lon, lat=lat,
                                values={"depth_m": np.linspace(4000, 4100, n)})
    first, second = build_segments(survey).segments
    a = resample(first, "depth_m")
    b = resample(second, "depth_m")
    assert a.distance[-1] <= 20_000.0 + 1e-6
    assert b.distance[0] >= 26_000.0 - 1e-6
    assert a.spacing == pytest.approx(250.0, abs=1e-6)
    # positions follow the track: the last sample is at the segment's last station
    assert a.lon[-1] == pytest.approx(first.lon[-1], abs=1e-7)


def test_bad_calls_are_refused():
    with pytest.raises(InputError):
        resample_values(np.array([0.0, 1.0, 1.0]), np.zeros(3), spacing=1.0)
    with pytest.raises(SpacingError):
        resample_values(np.array([0.0, 1.0]), np.zeros(2), spacing=5.0)
    with pytest.raises(InputError):
        resample_values(np.array([0.0, 1.0, 2.0]), np.array([0.0, np.nan, 1.0]), spacing=1.0)
    with pytest.raises(InputError):
        resample_values(np.array([0.0, 1.0, 2.0]), np.zeros(3), spacing=1.0, interpolation="spline")


@pytest.mark.parametrize(("start", "azimuth"), [((10.0, 5.0), 90), ((179.5, 10.0), 80),
                                               ((-179.9, -20.0), 270), ((0.2, 0.0), 270)])
def test_positions_as_numpy_unwrap_gives_them(start, azimuth):
    # Reference: numpy.interp of numpy.unwrap(lon, period=360) on the station distances, the
    # definition of the samples' positions; the same numbers, signs of zeros included, whether
    # or not the line crosses the antimeridian (or longitude 0).
    lon, lat = walk(start[0], start[1], [(azimuth, 300, 250.0)])
    survey = Survey.from_arrays(line=np.array(["A"] * lon.size), lon=lon, lat=lat,
                                values={"f": np.cos(np.arange(lon.size) / 9.0)})
    (segment,) = build_segments(survey)
    uniform = resample(segment, "f", spacing=180.0)
    where = segment.distance[0] + 180.0 * np.arange(uniform.n)
    expected = np.interp(where, segment.distance, np.unwrap(segment.lon, period=360.0))
    expected = (expected + 180.0) % 360.0 - 180.0
    np.testing.assert_array_equal(uniform.lon, expected)
    np.testing.assert_array_equal(np.signbit(uniform.lon), np.signbit(expected))


def test_wrap_longitude_is_the_remainder_formula():
    # Reference: (lon + 180) % 360 - 180 with numpy's floating remainder, number for number
    # and sign of zero, inside [-180, 180) and beyond it.
    from profiles.resample import wrap_longitude

    rng = np.random.default_rng(1)
    for low, high in ((-180.0, 180.0), (170.0, 190.0), (-500.0, 500.0)):
        lon = np.concatenate([[low, -0.0, 0.0, 180.0, -180.0], rng.uniform(low, high, 10_000)])
        expected = (lon + 180.0) % 360.0 - 180.0
        got = wrap_longitude(lon)
        np.testing.assert_array_equal(got, expected)
        np.testing.assert_array_equal(np.signbit(got), np.signbit(expected))
