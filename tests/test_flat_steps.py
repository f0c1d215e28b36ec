"""The flat-step formula of along-track distance against outside references, and its fallback.

``profiles.geometry.geodesic_steps`` computes steps whose latitude and longitude differences are
both within ``FLAT_STEP_LIMIT`` (0.1 degree) with ``flat_steps`` (the local frame at the step's
mid-latitude, carried to fourth order; see docs/geometry-and-spacing.md) and every other step
with ``pyproj.Geod.inv``. References:

* on a sphere the geodesic is the great circle, computed here with mpmath at 40 digits
  (haversine formula and the spherical forward azimuth: standard spherical trigonometry,
  stated from memory): the formula's truncation error alone, which is below 1e-13 of the step;
* on ellipsoids, pyproj.Geod.inv (Karney 2013, "Algorithms for geodesics", J. Geodesy 87,
  43-55), accurate to about 15 nm. Its round-off on short steps is a few nanometres, larger than
  the formula's truncation, so the tolerance is 1e-8 m plus 1e-12 of the step for the length,
  and 1e-6 degree for the azimuth of steps of a metre or more (1e-8 m sideways for shorter
  ones, where Geod.inv's azimuth carries its round-off over the step's length);
* outside the domain the numbers are Geod.inv's own: checked for equality.
"""

from __future__ import annotations

import mpmath
import numpy as np
import pandas as pd
import pytest
from pyproj import Geod

import profiles.geometry as geometry
from profiles.geometry import FLAT_STEP_LIMIT, build_segments, flat_steps, geodesic_steps
from profiles.survey import Survey

LENGTH_ATOL, LENGTH_RTOL = 1e-8, 1e-12  # m, and a fraction of the step (see the module notes)
AZIMUTH_TOL = 1e-6  # degrees, steps of 1 m or more
SIDEWAYS_TOL = 1e-8  # m: the azimuth error times the step, for steps under 1 m


def _random_steps(rng, n: int, lat_low: float = 0.0, lat_high: float = 90.0, smallest: float = 1e-9):
    """Steps inside the formula's domain: mid-latitudes uniform in +-[lat_low, lat_high]
    degrees, differences of either sign log-uniform from ``smallest`` to the limit (one in
    twenty of each exactly zero), longitudes anywhere in -180..180."""
    mid = rng.uniform(lat_low, lat_high, n) * rng.choice([-1.0, 1.0], n)
    dlat = rng.choice([-1.0, 1.0], n) * FLAT_STEP_LIMIT * 10 ** rng.uniform(np.log10(smallest), 0, n)
    dlon = rng.choice([-1.0, 1.0], n) * FLAT_STEP_LIMIT * 10 ** rng.uniform(np.log10(smallest), 0, n)
    dlat[rng.random(n) < 0.05] = 0.0
    dlon[rng.random(n) < 0.05] = 0.0
    lat1 = np.clip(mid - dlat / 2, -90.0, 90.0)
    lat2 = np.clip(lat1 + dlat, -90.0, 90.0)
    lon1 = rng.uniform(-180.0, 180.0, n)
    lon2 = lon1 + dlon
    keep = (lat1 != lat2) | (lon1 != lon2)
    return lon1[keep], lat1[keep], lon2[keep], lat2[keep]


def _azimuth_difference(a, b):
    return np.abs((np.asarray(a) - np.asarray(b) + 180.0) % 360.0 - 180.0)


def test_sphere_against_mpmath_great_circle():
    # Source: great-circle distance and forward azimuth by mpmath at 40 digits (haversine and
    # the spherical azimuth formula, standard spherical trigonometry, from memory); the radius
    # is PROJ's "sphere" (6 370 997 m, f = 0), as pyproj reports it. The error measured when
    # this test was written: 7e-14 of the step, 3e-10 m, 2e-8 degree.
    geod = Geod(ellps="sphere")
    assert geod.f == 0.0
    radius = mpmath.mpf(geod.a)
    mpmath.mp.dps = 40
    lon1, lat1, lon2, lat2 = _random_steps(np.random.default_rng(11), 1500, smallest=1e-6)
    reference = []
    for a, b, c, d in zip(lon1, lat1, lon2, lat2, strict=True):
        p1, p2 = mpmath.radians(mpmath.mpf(b)), mpmath.radians(mpmath.mpf(d))
        dl = mpmath.radians(mpmath.mpf(c) - mpmath.mpf(a))
        h = mpmath.sin((p2 - p1) / 2) ** 2 + mpmath.cos(p1) * mpmath.cos(p2) * mpmath.sin(dl / 2) ** 2
        length = 2 * radius * mpmath.asin(mpmath.sqrt(h))
        azimuth = mpmath.atan2(
            mpmath.sin(dl) * mpmath.cos(p2),
            mpmath.cos(p1) * mpmath.sin(p2) - mpmath.sin(p1) * mpmath.cos(p2) * mpmath.cos(dl),
        )
        reference.append((float(length), float(mpmath.degrees(azimuth))))
    length_ref, azimuth_ref = np.array(reference).T
    length, azimuth = flat_steps(lon1, lat1, lon2, lat2, ellipsoid="sphere")
    np.testing.assert_allclose(length, length_ref, rtol=1e-12, atol=1e-12)
    assert _azimuth_difference(azimuth, azimuth_ref).max() < 1e-7


@pytest.mark.parametrize("ellipsoid", ["WGS84", "GRS80", "bessel", "intl"])
@pytest.mark.parametrize("band", [(0.0, 60.0), (60.0, 85.0), (85.0, 90.0), (89.99, 90.0)])
def test_geodesic_steps_against_geod_inv(ellipsoid, band):
    # Source: pyproj.Geod.inv (Karney 2013) on the same ellipsoid; tolerance in the module notes.
    # Measured when this test was written: at most 3.4e-9 m (Geod.inv's round-off), azimuths
    # within 1.2e-7 degree.
    rng = np.random.default_rng(abs(hash((ellipsoid, band))) % 2**32)
    lon1, lat1, lon2, lat2 = _random_steps(rng, 40_000, *band)
    reference_azimuth, _, reference = Geod(ellps=ellipsoid).inv(lon1, lat1, lon2, lat2)
    # One track through all the steps: the steps between them are long and fall back.
    lon = np.column_stack([lon1, lon2]).ravel()
    lat = np.column_stack([lat1, lat2]).ravel()
    length, azimuth = geodesic_steps(lon, lat, ellipsoid=ellipsoid)
    length, azimuth = length[0::2], azimuth[0::2]
    error = np.abs(length - reference)
    assert np.all(error <= LENGTH_ATOL + LENGTH_RTOL * reference), error.max()
    turn = _azimuth_difference(azimuth, reference_azimuth)
    long_enough = reference >= 1.0
    assert np.all(turn[long_enough] <= AZIMUTH_TOL), turn[long_enough].max()
    assert np.all(np.radians(turn) * reference <= SIDEWAYS_TOL + np.radians(AZIMUTH_TOL) * reference)


def test_steps_just_inside_and_outside_the_limit():
    # Source: pyproj.Geod.inv. Just inside the limit the formula holds to the tolerance; just
    # outside, the numbers are Geod.inv's exactly.
    geod = Geod(ellps="WGS84")
    inside = FLAT_STEP_LIMIT * (1 - 1e-9)
    outside = FLAT_STEP_LIMIT * (1 + 1e-9)
    for lat in (0.0, -45.0, 80.0, 89.85):
        for dlat, dlon in ((inside, inside), (-inside, inside), (inside, 0.0), (0.0, -inside)):
            length, azimuth = geodesic_steps([10.0, 10.0 + dlon], [lat, lat + dlat])
            ref_azimuth, _, ref = geod.inv(10.0, lat, 10.0 + dlon, lat + dlat)
            assert abs(length[0] - ref) <= LENGTH_ATOL + LENGTH_RTOL * ref
            assert _azimuth_difference(azimuth[0], ref_azimuth) <= AZIMUTH_TOL
        for dlat, dlon in ((outside, 0.0), (0.0, outside), (-outside, outside)):
            length, azimuth = geodesic_steps([10.0, 10.0 + dlon], [lat, lat + dlat])
            ref_azimuth, _, ref = geod.inv(10.0, lat, 10.0 + dlon, lat + dlat)
            assert (length[0], azimuth[0]) == (ref, ref_azimuth)


def test_fallback_gives_geod_inv_numbers_exactly():
    # Source: pyproj.Geod.inv. Steps outside the formula's domain: across the antimeridian in
    # both longitude conventions, between 0..360 and -180..180 forms of one place, east-west near
    # the pole, a gap, repeated positions (whose azimuth is Geod.inv's convention), non-finite
    # and out-of-range coordinates.
    lon = np.array([179.99, -179.99, 359.99, 360.01, 200.0, -160.0, 30.0, 31.0, 5.0, 5.0, 5.0,
                    5.0, np.nan, 7.0, np.inf, 8.0, 9.0, 9.0, 10.0, 10.0])
    lat = np.array([10.0, 10.0, -5.0, -5.0, 20.0, 20.0, 89.9, 89.9, 0.0, 2.0, 2.0,
                    -3.0, 1.0, 1.0, 1.0, 1.0, 91.0, 90.0, -40.0, -40.0])
    geod = Geod(ellps="WGS84")
    ref_azimuth, _, ref = geod.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
    length, azimuth = geodesic_steps(lon, lat)
    dlat, dlon = np.diff(lat), np.diff(lon)
    with np.errstate(invalid="ignore"):
        flat = ((np.abs(dlat) <= FLAT_STEP_LIMIT) & (np.abs(dlon) <= FLAT_STEP_LIMIT)
                & ((dlat != 0) | (dlon != 0)) & (np.abs(lat[:-1]) <= 90) & (np.abs(lat[1:]) <= 90))
    assert np.flatnonzero(flat).tolist() == [2]  # 359.99 -> 360.01: the one short step
    fallback = ~flat
    np.testing.assert_array_equal(length[fallback], ref[fallback])
    np.testing.assert_array_equal(azimuth[fallback], ref_azimuth[fallback])
    np.testing.assert_allclose(length[flat], ref[flat], rtol=LENGTH_RTOL, atol=LENGTH_ATOL)
    # Repeated positions, also as 200 and -160 degrees: zero steps, with Geod.inv's azimuths.
    assert length[4] == length[9] == length[18] == 0.0


def test_longitudes_0_360_and_antimeridian_match_geod_inv():
    # Common practice (pitfalls G2): a track over the antimeridian, in -180..180 and in 0..360
    # form, has the same steps; each agrees with pyproj.Geod.inv within the tolerance.
    lon360 = np.round(np.arange(179.9, 180.1 + 1e-9, 0.001), 10)
    lon180 = np.where(lon360 > 180.0, lon360 - 360.0, lon360)
    lat = np.linspace(-12.0, -11.9, lon360.size)
    _, _, ref = Geod(ellps="WGS84").inv(lon180[:-1], lat[:-1], lon180[1:], lat[1:])
    for lon in (lon180, lon360):
        length, _ = geodesic_steps(lon, lat)
        np.testing.assert_allclose(length, ref, rtol=LENGTH_RTOL, atol=LENGTH_ATOL)


def _with_geod_inv(monkeypatch):
    """Make geodesic_steps call Geod.inv for every step (the reference)."""

    def reference(lon, lat, *, ellipsoid=geometry.DEFAULT_ELLIPSOID):
        lon = np.asarray(lon, dtype=float)
        lat = np.asarray(lat, dtype=float)
        if lon.size < 2:
            return np.zeros(0), np.zeros(0)
        azimuth, _, length = geometry.ellipsoid_geod(ellipsoid).inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
        return np.asarray(length), np.asarray(azimuth)

    monkeypatch.setattr(geometry, "geodesic_steps", reference)


def _turning_survey() -> Survey:
    """Lines of 200-300 m steps with jitter, a gap, a right-angle turn, a doubling back, a
    repeated station and a line over the antimeridian."""
    rng = np.random.default_rng(5)
    geod = Geod(ellps="WGS84")
    lines, lons, lats = [], [], []
    plans = {
        "A": (-30.0, 40.0, [(45.0, 150), (135.0, 120)]),
        "B": (179.5, -20.0, [(90.0, 200), (270.0, 80)]),
        "C": (10.0, 75.0, [(10.0, 100), (10.0, 1), (100.0, 90)]),
    }
    for name, (lon0, lat0, legs) in plans.items():
        lon, lat = [lon0], [lat0]
        for course, count in legs:
            for _ in range(count):
                step = 20_000.0 if count == 1 else rng.uniform(200.0, 300.0)
                x, y, _ = geod.fwd(lon[-1], lat[-1], course + rng.normal(0.0, 3.0), step)
                lon.append(x)
                lat.append(y)
        lon.insert(10, lon[9])  # a repeated station
        lat.insert(10, lat[9])
        lines += [name] * len(lon)
        lons += lon
        lats += lat
    depth = np.linspace(2000.0, 3000.0, len(lines))
    return Survey.from_arrays(line=np.array(lines), lon=np.array(lons), lat=np.array(lats),
                              values={"depth_m": depth})


def test_segments_same_as_with_geod_inv_everywhere(monkeypatch):
    # Reference: the same segmentation with pyproj.Geod.inv for every step. Same segments,
    # stations, merges, breaks and warnings; distances within the length tolerance summed
    # over a line's steps.
    survey = _turning_survey()
    ours = build_segments(survey)
    _with_geod_inv(monkeypatch)
    reference = build_segments(survey)
    assert len(ours) == len(reference)
    for a, b in zip(ours, reference, strict=True):
        assert (a.line, a.number) == (b.line, b.number)
        np.testing.assert_array_equal(a.rows, b.rows)
        np.testing.assert_allclose(a.distance, b.distance, rtol=1e-12, atol=1e-6)
        assert a.chord == b.chord and a.azimuth_deg == b.azimuth_deg  # chords: Geod.inv in both
    pd.testing.assert_frame_equal(ours.breaks.drop(columns=["distance_km", "size"]),
                                  reference.breaks.drop(columns=["distance_km", "size"]))
    np.testing.assert_allclose(ours.breaks["distance_km"], reference.breaks["distance_km"], rtol=1e-12)
    # Gap lengths (km) and changes of course (degrees): the azimuths differ by under 1e-6 degree.
    np.testing.assert_allclose(ours.breaks["size"], reference.breaks["size"], rtol=0, atol=1e-6)
    assert ours.warnings == reference.warnings
    pd.testing.assert_frame_equal(ours.survey.stations, reference.survey.stations)
    assert set(ours.breaks["kind"]) == {"gap", "turn"}
