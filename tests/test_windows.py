"""Along-track windows: dominant wavelength, significance, local spacing, aliasing reasons.

Outside references, named again beside each check:
- Fourier resolution of a record of length W: 1/W in wavenumber (Rayleigh criterion; common
  practice); a harmonic found within one resolution step of the true wavenumber is right.
- Sampling theorem and folding rule k_a = |k - n/dx|, n = round(k dx) (Shannon 1949;
  ../shared/references.md section 8).
- pyproj.Geod (Karney 2013) for positions along a geodesic track.
- The slow reference: a loop over windows calling the spectral module's 1-D functions
  (harmonic_table, fisher_p_value, red_noise_test, lag1_autocorrelation) and numpy's median
  and max over the station steps of each window.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest
from conftest import GEOD, walk
from scipy.signal import lfilter

from profiles.errors import InputError, SpacingError
from profiles.geometry import build_segments
from profiles.resample import UniformSegment, resample
from profiles.spectral.harmonics import harmonic_table
from profiles.spectral.significance import (
    fisher_m,
    fisher_p_value,
    lag1_autocorrelation,
    red_noise_test,
)
from profiles.survey import Survey
from profiles.windows import (
    COLUMNS,
    _at,
    along_track_windows,
    default_window,
    round_up_length,
    track_path_vertices,
    track_paths,
)


def survey_line(distance_fn, legs, *, start=(-20.0, -40.0), name="W1", seed=0, noise=0.0):
    """A line walked with pyproj.Geod.fwd; values from the along-track distance."""
    lon, lat = walk(start[0], start[1], legs)
    steps = np.concatenate([[0.0], [step for _, count, step in legs for _ in range(count)]])
    distance = np.cumsum(steps)
    rng = np.random.default_rng(seed)
    values = distance_fn(distance) + noise * rng.standard_normal(distance.size)
    survey = Survey.from_arrays(line=np.full(lon.size, name), lon=lon, lat=lat, values={"f": values})
    return build_segments(survey)


def uniform_segments(segments, spacing=None):
    return [resample(segment, "f", spacing=spacing) for segment in segments]


def overlaps(table, low, high):
    return (table.end > low) & (table.start < high)


# --- defaults -----------------------------------------------------------------------------------


def test_default_window_rule():
    # max(64 dx, 10 L), rounded up to two significant figures (docs/windows-and-map.md).
    assert default_window(spacing=250.0, shortest_wavelength=4000.0) == pytest.approx(40_000.0)
    assert default_window(spacing=257.3, shortest_wavelength=1000.0) == pytest.approx(17_000.0)
    assert default_window(spacing=258.0) == pytest.approx(67_000.0)  # 256 x 258 m = 66.05 km
    assert round_up_length(16_470.0) == pytest.approx(17_000.0)
    assert round_up_length(40_000.0) == pytest.approx(40_000.0)


def test_default_step_is_a_quarter_window():
    segments = survey_line(lambda d: np.cos(2 * np.pi * d / 5000.0), [(90, 600, 250.0)])
    table = along_track_windows(uniform_segments(segments), shortest_wavelength=4000.0)
    assert table.settings.window == pytest.approx(40_000.0)
    assert table.settings.step == pytest.approx(10_000.0)
    assert table.settings.window_default
    np.testing.assert_allclose(np.diff(table.start), 10_000.0, rtol=0.02)


# --- wavelengths ----------------------------------------------------------------------------


def test_wavelength_change_is_followed_along_the_track():
    # 5 km wavelength over the first 100 km, 12 km over the next 100 km, at 250 m spacing.
    def model(distance):
        return np.where(distance < 100e3, np.cos(2 * np.pi * distance / 5e3),
                        np.cos(2 * np.pi * (distance - 100e3) / 12e3))

    segments = survey_line(model, [(60, 800, 250.0)], noise=0.2)
    table = along_track_windows(uniform_segments(segments), window=40e3, step=5e3,
                                shortest_wavelength=2e3)
    resolution = 1.0 / (table.n_samples * table.spacing)  # 1/W (Rayleigh criterion; common practice)
    found = 1.0 / table.dominant_wavelength
    first = table.end < 100e3
    second = table.start > 100e3
    assert first.sum() >= 8 and second.sum() >= 8
    assert np.all(np.abs(found[first] - 1 / 5e3) <= resolution[first])
    assert np.all(np.abs(found[second] - 1 / 12e3) <= resolution[second])
    # A sinusoid of amplitude 1 in noise of standard deviation 0.2 is far above either null.
    assert np.all(table.red_noise_significant[first | second])
    assert np.all(table.fisher_p_value[first | second] < 1e-6)
    assert not table.aliasing_risk.any()


def test_chirp_gives_a_rising_dominant_wavelength():
    # pitfalls.md S13: a profile whose wavelength rises from 2 to 10 km along 300 km gives a
    # monotonic series of dominant wavelengths. Local wavelength lambda(d) = 2 km + 8 km d / L,
    # phase 2 pi * integral of 1/lambda = 2 pi (L / 8 km) ln(lambda(d) / 2 km).
    length = 300e3

    def chirp(distance):
        return np.cos(2 * np.pi * (length / 8e3) * np.log((2e3 + 8e3 * distance / length) / 2e3))

    segments = survey_line(chirp, [(45, 1200, 250.0)], noise=0.1)
    table = along_track_windows(uniform_segments(segments), window=40e3, step=10e3)
    assert len(table) > 20
    assert np.all(np.diff(table.dominant_wavelength) >= 0)
    local = 2e3 + 8e3 * table.center / length  # the wavelength at each window's middle
    resolution = 1.0 / (table.n_samples * table.spacing)
    assert np.all(np.abs(1 / table.dominant_wavelength - 1 / local) <= resolution)


def test_centre_positions_lie_on_the_track():
    # Reference: pyproj.Geod (Karney 2013): from the station before each centre, forward along
    # the geodesic to the next station by the remaining distance.
    legs = [(35, 500, 250.0)]
    segments = survey_line(lambda d: np.sin(d / 900.0), legs)
    (segment,) = segments
    table = along_track_windows(uniform_segments(segments), window=30e3, step=10e3)
    before = np.searchsorted(segment.distance, table.center, side="right") - 1
    azimuth, _, _ = GEOD.inv(segment.lon[before], segment.lat[before],
                             segment.lon[before + 1], segment.lat[before + 1])
    lon, lat, _ = GEOD.fwd(segment.lon[before], segment.lat[before], azimuth,
                           table.center - segment.distance[before])
    _, _, miss = GEOD.inv(lon, lat, table.lon, table.lat)
    assert np.max(miss) < 0.01  # metres


# --- local spacing and the three reasons -----------------------------------------------------


def test_coarse_stretch_is_flagged_where_it_is_and_nowhere_else():
    # 250 m steps, then 15 steps of 2 km (60 to 90 km), then 250 m again; target 2 km.
    # Two samples per wavelength (Shannon 1949): steps above 1 km cannot carry 2 km.
    legs = [(120, 240, 250.0), (120, 15, 2000.0), (120, 280, 250.0)]
    segments = survey_line(lambda d: np.cos(2 * np.pi * d / 7e3), legs, noise=0.05)
    assert len(segments) == 1  # a coarse stretch is not a gap
    table = along_track_windows(uniform_segments(segments), window=20e3, step=2.5e3,
                                shortest_wavelength=2e3)
    touching = overlaps(table, 60e3, 90e3)
    assert touching.any() and (~touching).any()
    np.testing.assert_array_equal(table.spacing_risk, touching)
    np.testing.assert_allclose(table.local_spacing_max[touching], 2000.0, rtol=1e-9)
    assert np.all(table.local_spacing_max[~touching] < 251.0)
    inside = (table.start >= 60e3) & (table.end <= 90e3)
    np.testing.assert_allclose(table.local_spacing[inside], 2000.0, rtol=1e-9)
    np.testing.assert_allclose(table.local_nyquist, 2 * table.local_spacing)
    assert "spacing" in table.reasons()[int(np.flatnonzero(touching)[0])]


def test_tone_above_the_local_nyquist_is_caught():
    # Stations every 500 m (Nyquist wavelength 1 km) record a 900 m tone. It folds to
    # k_a = |1/900 - 1/500| -> 1125 m (Shannon 1949; references.md section 8), inside the
    # top 20 % of wavenumbers below the Nyquist and within 1.25 x the Nyquist wavelength.
    alias = 1.0 / abs(1 / 900.0 - 1 / 500.0)
    assert alias == pytest.approx(1125.0)
    segments = survey_line(lambda d: np.cos(2 * np.pi * d / 900.0), [(10, 400, 500.0)], noise=0.05)
    for spacing in (None, 250.0):  # at the stations, and interpolated onto a finer grid
        table = along_track_windows(uniform_segments(segments, spacing), window=32e3, step=8e3)
        assert len(table) >= 5
        assert np.all(table.rolloff_risk | table.near_nyquist_risk)
        np.testing.assert_allclose(table.local_nyquist, 1000.0, rtol=1e-9)
        resolution = 1.0 / (table.n_samples * table.spacing)
        assert np.all(np.abs(1 / table.dominant_wavelength - 1 / alias) <= resolution)
        assert all(set(r) & {"rolloff", "near-nyquist"} for r in table.reasons())


def test_tone_well_below_the_nyquist_raises_nothing():
    segments = survey_line(lambda d: np.cos(2 * np.pi * d / 6000.0), [(10, 400, 500.0)], noise=0.05)
    table = along_track_windows(uniform_segments(segments), window=32e3, step=8e3,
                                shortest_wavelength=3e3)
    assert len(table) >= 5
    assert not table.aliasing_risk.any()
    assert all(r == () for r in table.reasons())


# --- batched against a loop over windows --------------------------------------------------


def red_noise_track(n_stations=900, seed=3, spacing=255.0):
    """Irregular stations (200-320 m), AR(1) values (scipy.signal.lfilter) plus a tone."""
    rng = np.random.default_rng(seed)
    station = np.concatenate([[0.0], np.cumsum(rng.uniform(200.0, 320.0, n_stations - 1))])
    station[400:420] = station[400] + np.cumsum(np.r_[0.0, np.full(19, 1500.0)])  # a coarse stretch
    station[420:] = station[419] + np.cumsum(rng.uniform(200.0, 320.0, n_stations - 420)) + 250.0
    count = int(station[-1] // spacing) + 1
    values = lfilter([1.0], [1.0, -0.8], rng.standard_normal(count)) * 30.0
    values += 40.0 * np.cos(2 * np.pi * spacing * np.arange(count) / 6000.0) + 4000.0
    return UniformSegment(
        line="R", number=1, field="f", start=0.0, spacing=spacing, values=values,
        lon=(np.linspace(170.0, 190.0, count) + 180.0) % 360.0 - 180.0, lat=np.linspace(-10, -9, count),
        station_distance=station, interpolation="linear", lowpassed=False,
    )


def assert_windows_equal_a_loop(table, tracks, alpha=0.05):
    """Every window of ``table`` against the loop reference over its own samples."""
    steps_of = [np.diff(track.station_distance) for track in tracks]
    for i in range(len(table)):
        track = tracks[int(table.track[i])]
        steps = steps_of[int(table.track[i])]
        n_window = int(table.n_samples[i])
        m = fisher_m(n_window)
        first = int(table.first_sample[i])
        window = track.values[first : first + n_window]
        harmonics = harmonic_table(window, spacing=track.spacing, detrend="linear")
        variance = harmonics.variance
        k = int(np.argmax(variance[2 : m + 1])) + 2
        total = variance[1:].sum()
        assert table.dominant_harmonic[i] == k
        assert table.dominant_wavelength[i] == pytest.approx(harmonics.wavelength[k], rel=1e-12)
        assert table.variance_fraction[i] == pytest.approx(variance[k] / total, rel=1e-12)
        g = variance[k] / variance[1 : m + 1].sum()
        assert table.fisher_p_value[i] == pytest.approx(fisher_p_value(g, m=m), rel=1e-12, abs=1e-300)
        lag1 = lag1_autocorrelation(window, detrend="linear", estimator="corrected")
        assert table.lag1[i] == pytest.approx(lag1, rel=1e-12, abs=1e-14)
        red = red_noise_test(window, spacing=track.spacing, detrend="linear", alpha=alpha)
        assert table.red_noise_significant[i] == red.significant[k]
        # Local spacing: steps overlapping the window's extent, with numpy's median and max.
        low, high = track.start + first * track.spacing, track.start + (first + n_window - 1) * track.spacing
        mine = steps[(track.station_distance[1:] > low) & (track.station_distance[:-1] < high)]
        assert table.local_spacing[i] == pytest.approx(np.median(mine), rel=1e-12)
        assert table.local_spacing_max[i] == pytest.approx(np.max(mine), rel=1e-12)
        # Rolloff: variance in (0.8 k_top, k_top], k_top = min(local Nyquist, grid Nyquist).
        wavenumber = harmonics.wavenumber
        top = min(1.0 / (2 * np.median(mine)), wavenumber[-1])
        band = (wavenumber > 0.8 * top * (1 + 1e-12)) & (wavenumber <= top * (1 + 1e-12))
        assert table.rolloff_share[i] == pytest.approx(variance[band].sum() / total, rel=1e-12, abs=1e-15)


@pytest.mark.parametrize("n_window", [160, 161])  # even and odd window lengths
def test_batched_windows_equal_a_loop_over_windows(n_window):
    track = red_noise_track()
    table = along_track_windows(track, window=n_window * track.spacing, step=23 * track.spacing,
                                shortest_wavelength=1500.0, alpha=0.05, rolloff_share=0.02)
    assert len(table) > 20
    assert_windows_equal_a_loop(table, [track])
    assert table.spacing_risk.any() and (~table.spacing_risk).any()
    assert table.rolloff_risk.any()


def test_segments_batched_together_equal_a_loop_and_one_call_each():
    # Segments of one window length and step are transformed in one batch, laid end to end
    # (the windows straddling two of them dropped); segments of other lengths in batches of
    # their own; the tests then run on all windows at once. Every window must be what the
    # loop over its own samples gives, and what a call for its segment alone gives.
    layout = ((3, 900, 255.0), (4, 700, 255.0), (5, 800, 240.0), (6, 500, 255.0))  # seed, stations, spacing
    tracks = [replace(red_noise_track(n_stations=stations, seed=seed, spacing=spacing), line=f"R{seed}")
              for seed, stations, spacing in layout]
    table = along_track_windows(tracks, window=160 * 255.0, step=23 * 255.0, shortest_wavelength=1500.0,
                                rolloff_share=0.02)
    assert set(table.n_samples.tolist()) == {160, 170} and len(set(table.track.tolist())) == 4
    assert_windows_equal_a_loop(table, tracks)
    for index, track in enumerate(tracks):
        alone = along_track_windows(track, window=160 * 255.0, step=23 * 255.0, shortest_wavelength=1500.0,
                                    rolloff_share=0.02)
        mine = table.track == index
        for name in ("first_sample", "dominant_harmonic", "red_noise_significant", "spacing_risk",
                     "rolloff_risk", "near_nyquist_risk", "start", "end", "lon", "lat", "local_spacing",
                     "local_spacing_max"):  # the same numbers
            np.testing.assert_array_equal(getattr(table, name)[mine], getattr(alone, name), err_msg=name)
        for name in ("variance_fraction", "fisher_p_value", "lag1", "rolloff_share"):  # sums: to rounding
            np.testing.assert_allclose(getattr(table, name)[mine], getattr(alone, name), rtol=1e-13,
                                       err_msg=name)


# --- segments, gaps and bad input -------------------------------------------------------------


def test_windows_stay_inside_their_segments_and_short_segments_warn():
    # A gap of 10 km splits the line; the second piece (5 km) is shorter than the window.
    legs = [(200, 300, 250.0), (200, 1, 10_000.0), (200, 20, 250.0)]
    segments = survey_line(lambda d: np.cos(2 * np.pi * d / 3e3), legs)
    assert len(segments) == 2
    tracks = uniform_segments(segments)
    table = along_track_windows(tracks, window=20e3, step=5e3, shortest_wavelength=2e3)
    assert set(table.segment.tolist()) == {1}
    assert np.all(table.start >= tracks[0].start - 1e-9)
    assert np.all(table.end <= tracks[0].distance[-1] + 1e-9)
    assert any("W1/2" in w and "shorter than" in w for w in table.warnings)
    assert len(table.tracks) == 2


def test_windows_are_centred_in_the_segment():
    segments = survey_line(lambda d: np.cos(d / 700.0), [(0, 407, 250.0)])
    (track,) = uniform_segments(segments)
    table = along_track_windows(track, window=25e3, step=10e3)
    head = table.start[0] - track.start
    tail = track.distance[-1] - table.end[-1]
    assert abs(head - tail) <= track.spacing


def test_too_short_window_and_bad_thresholds_are_refused():
    segments = survey_line(lambda d: np.cos(d / 700.0), [(0, 200, 250.0)])
    tracks = uniform_segments(segments)
    with pytest.raises(SpacingError, match="at least 16 samples"):
        along_track_windows(tracks, window=2000.0)
    with pytest.raises(InputError, match="alpha"):
        along_track_windows(tracks, window=10e3, alpha=1.5)
    with pytest.raises(InputError, match="near-Nyquist"):
        along_track_windows(tracks, window=10e3, near_nyquist_factor=0.5)
    with pytest.raises(InputError, match="detrend"):
        along_track_windows(tracks, window=10e3, detrend="cubic")
    with pytest.raises(SpacingError):
        along_track_windows(tracks, window=-5.0)


def test_segment_too_coarse_for_the_window_is_skipped_with_a_warning():
    fine = survey_line(lambda d: np.cos(d / 700.0), [(0, 400, 250.0)], name="F1")
    coarse = survey_line(lambda d: np.cos(d / 7000.0), [(0, 40, 2500.0)], name="C1")
    tracks = uniform_segments(fine) + uniform_segments(coarse)
    table = along_track_windows(tracks, window=20e3)
    assert set(table.line.tolist()) == {"F1"}
    assert any("C1/1" in w and "at least 16 samples" in w for w in table.warnings)


def test_no_target_means_spacing_not_checked():
    segments = survey_line(lambda d: np.cos(d / 700.0), [(0, 400, 250.0)])
    table = along_track_windows(uniform_segments(segments), window=20e3)
    assert not table.spacing_risk.any()
    assert any("'spacing' reason was not checked" in w for w in table.warnings)


def test_frame_and_records():
    segments = survey_line(lambda d: np.cos(2 * np.pi * d / 900.0), [(10, 400, 500.0)])
    table = along_track_windows(uniform_segments(segments), window=32e3, step=8e3,
                                shortest_wavelength=3e3)
    frame = table.to_frame()
    assert tuple(frame.columns) == COLUMNS
    assert len(frame) == len(table)
    record = table.records()[0]
    assert isinstance(record["reasons"], list) and record["aliasing_risk"] is True
    assert record["local_nyquist_km"] == pytest.approx(1.0)
    # Half a harmonic either side of the dominant one (resolution 1/W).
    length = table.n_samples[0] * table.spacing[0]
    k = table.dominant_harmonic[0]
    assert record["dominant_wavelength_min_km"] == pytest.approx(length / (k + 0.5) / 1e3)
    assert "windows on 1 of 1 segments" in str(table)


def test_track_paths_follow_the_samples_across_the_antimeridian():
    # A track crossing 180 deg: the path keeps its longitudes continuous.
    segments = survey_line(lambda d: np.cos(d / 700.0), [(90, 400, 250.0)], start=(179.5, 10.0))
    (track,) = uniform_segments(segments)
    (path,) = track_paths([track], np.array([0]), np.array([1000.0]), np.array([90_000.0]))
    assert np.all(np.abs(np.diff(path[:, 0])) < 0.01)
    assert path[0, 0] < 180.0 < path[-1, 0]
    _, _, first = GEOD.inv(track.lon[0], track.lat[0], path[0, 0], path[0, 1])
    assert first == pytest.approx(1000.0, abs=0.5)  # pyproj.Geod distance from the start
    expected = np.interp(90_000.0, track.distance, np.unwrap(track.lon, period=360.0))
    assert math.isclose(path[-1, 0], float(expected), abs_tol=1e-9)


def one_path_at_a_time(tracks, which, start, stop, *, max_vertices=200):
    """The readable reference for track_paths: one window at a time, numpy.unwrap per path."""
    paths = []
    for index, lower, upper in zip(which.tolist(), start.tolist(), stop.tolist(), strict=True):
        track = tracks[index]
        first = max(0, math.floor((lower - track.start) / track.spacing) + 1)
        last = min(track.n - 1, math.ceil((upper - track.start) / track.spacing) - 1)
        inside = np.arange(first, last + 1)
        if inside.size > max_vertices - 2:
            inside = inside[np.linspace(0, inside.size - 1, max_vertices - 2).round().astype(int)]
        where = np.concatenate([[(lower - track.start) / track.spacing], inside,
                                [(upper - track.start) / track.spacing]])
        lon = np.unwrap(_at(track.lon, where, period=360.0), period=360.0)
        paths.append(np.column_stack([lon, _at(track.lat, where)]))
    return paths


@pytest.mark.parametrize("max_vertices", [200, 2, 3, 40, 10_000])
def test_track_paths_equal_one_path_at_a_time(max_vertices):
    # Reference: the per-window construction above (numpy.unwrap and linear interpolation of
    # the samples); the paths must be identical, bit for bit. Tracks that cross the
    # antimeridian eastwards and westwards, one in longitudes 0..360, and two that do not.
    east = uniform_segments(survey_line(np.cos, [(90, 400, 250.0)], start=(179.5, 10.0)))
    west = uniform_segments(survey_line(np.cos, [(270, 300, 250.0)], start=(-179.8, -30.0)))
    plain = uniform_segments(survey_line(np.cos, [(30, 500, 250.0), (120, 300, 250.0)]))
    wrapped = [replace(track, lon=track.lon % 360.0) for track in east]
    tracks = east + west + plain + wrapped
    table = along_track_windows(tracks, window=20e3, step=4e3)
    lower, upper = table.piece_bounds()
    for start, stop in ((table.start, table.end), (lower, upper)):
        paths = track_paths(tracks, table.track, start, stop, max_vertices=max_vertices)
        expected = one_path_at_a_time(tracks, table.track, start, stop, max_vertices=max_vertices)
        assert len(paths) == len(expected) == len(table)
        for path, reference in zip(paths, expected, strict=True):
            assert path.shape == reference.shape
            np.testing.assert_array_equal(path, reference)
            np.testing.assert_array_equal(np.signbit(path), np.signbit(reference))
    crossing = [p for p in paths if np.ptp(np.floor((p[:, 0] + 180.0) / 360.0)) > 0]
    assert crossing and len(crossing) < len(paths)  # both kinds are there
    vertices, offsets = track_path_vertices(tracks, table.track, table.start, table.end)
    assert offsets[0] == 0 and offsets[-1] == vertices.shape[0] and np.all(np.diff(offsets) >= 2)
