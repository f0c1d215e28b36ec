"""Property tests (hypothesis) for the foundation: distance, resampling, segments, row accounting.

Sources of the expected values:

* along-track distance: pyproj.Geod (WGS84), the reference geodesic library (Karney 2013,
  "Algorithms for geodesics", J. Geodesy 87, 43-55); points on one geodesic are placed with
  ``Geod.fwd``, so the distance between them is known without our code;
* resampling: an identity (sampling a uniformly sampled profile at its own spacing must give the
  samples back, for linear interpolation and for an interpolating spline alike);
* segments and row accounting: conservation (every input row ends in exactly one state).
"""

from __future__ import annotations

import tempfile
from collections import Counter
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from pyproj import Geod

from profiles.geometry import Segment, along_track_distance, build_segments
from profiles.read import read_survey
from profiles.resample import resample, resample_values
from profiles.survey import DROPPED, MERGED, USED, Survey

GEOD = Geod(ellps="WGS84")
PROPERTY = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])

# --- tracks -------------------------------------------------------------------------------------

longitudes = st.floats(-180.0, 180.0, exclude_max=True, allow_nan=False)
latitudes = st.floats(-80.0, 80.0, allow_nan=False)
legs = st.lists(
    st.tuples(st.floats(0.0, 360.0, exclude_max=True), st.floats(1.0, 50_000.0)), min_size=2, max_size=40
)


def _track(lon0: float, lat0: float, steps) -> tuple[np.ndarray, np.ndarray]:
    """Stations along steps of (azimuth_deg, length_m), placed with pyproj.Geod.fwd."""
    lon, lat = [lon0], [lat0]
    for azimuth, length in steps:
        x, y, _ = GEOD.fwd(lon[-1], lat[-1], azimuth, length)
        lon.append(x)
        lat.append(y)
    return np.array(lon), np.array(lat)


@PROPERTY
@given(lon0=longitudes, lat0=latitudes, steps=legs, data=st.data())
def test_along_track_distance_is_additive(lon0, lat0, steps, data):
    lon, lat = _track(lon0, lat0, steps)
    k = data.draw(st.integers(1, lon.size - 2), label="split")
    whole = along_track_distance(lon, lat)
    head = along_track_distance(lon[: k + 1], lat[: k + 1])
    tail = along_track_distance(lon[k:], lat[k:])
    # A -> C along the track = A -> B + B -> C, for B any station of the track.
    assert whole[-1] == pytest.approx(head[-1] + tail[-1], rel=1e-12, abs=1e-6)
    assert whole[k] == pytest.approx(head[-1], rel=1e-12, abs=1e-6)
    # Reference: pyproj.Geod.line_length of the same stations, and the steps of Geod.inv.
    assert whole[-1] == pytest.approx(GEOD.line_length(lon, lat), rel=1e-12, abs=1e-6)
    _, _, reference_steps = GEOD.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
    np.testing.assert_allclose(np.diff(whole), reference_steps, rtol=1e-12, atol=1e-6)
    assert np.all(np.diff(whole) >= 0)


@PROPERTY
@given(
    lon0=longitudes,
    lat0=latitudes,
    azimuth=st.floats(0.0, 360.0, exclude_max=True),
    first=st.floats(1.0, 2_000_000.0),
    second=st.floats(1.0, 2_000_000.0),
)
def test_distance_along_one_geodesic_adds_up(lon0, lat0, azimuth, first, second):
    # B and C lie on the geodesic from A (Geod.fwd), so A -> C = first + second exactly.
    lon_b, lat_b, back = GEOD.fwd(lon0, lat0, azimuth, first)
    lon_c, lat_c, _ = GEOD.fwd(lon_b, lat_b, back + 180.0, second)
    distance = along_track_distance(np.array([lon0, lon_b, lon_c]), np.array([lat0, lat_b, lat_c]))
    assert distance[1] == pytest.approx(first, rel=1e-9, abs=1e-6)
    assert distance[2] == pytest.approx(first + second, rel=1e-9, abs=1e-6)
    # ... and equals the direct geodesic A -> C (pyproj.Geod.inv), well short of antipodal.
    _, _, direct = GEOD.inv(lon0, lat0, lon_c, lat_c)
    assume(first + second < 15_000_000.0)
    assert distance[2] == pytest.approx(direct, rel=1e-9, abs=1e-6)


@PROPERTY
@given(lon0=longitudes, lat0=latitudes, steps=legs)
def test_longitudes_in_0_360_give_the_same_distances(lon0, lat0, steps):
    lon, lat = _track(lon0, lat0, steps)
    wrapped = np.mod(lon, 360.0)
    np.testing.assert_allclose(
        along_track_distance(wrapped, lat), along_track_distance(lon, lat), rtol=1e-12, atol=1e-6
    )
    # Through the survey model (which normalises longitudes) as well.
    survey = Survey.from_arrays(line=np.full(lon.size, "A"), lon=wrapped, lat=lat)
    fix = ~((wrapped == 0) & (lat == 0))  # an exact (0, 0) is a missing fix, dropped
    used = survey.used.sort_values("row")
    np.testing.assert_allclose(used["lon"], ((lon + 180.0) % 360.0 - 180.0)[fix], atol=1e-9)


# --- resampling ---------------------------------------------------------------------------------

profile_values = st.lists(st.floats(-1e4, 1e4, allow_nan=False), min_size=2, max_size=300)


@PROPERTY
@given(
    start=st.floats(0.0, 1e6),
    spacing=st.floats(1.0, 1e4),
    values=profile_values,
    interpolation=st.sampled_from(["linear", "cubic"]),
)
def test_resampling_at_the_station_spacing_returns_the_data(start, spacing, values, interpolation):
    values = np.array(values)
    distance = start + spacing * np.arange(values.size)
    grid, resampled, lowpassed = resample_values(
        distance, values, spacing=spacing, interpolation=interpolation
    )
    assert not lowpassed
    assert resampled.size == values.size
    scale = max(1.0, float(np.max(np.abs(values))))
    np.testing.assert_allclose(resampled, values, rtol=0, atol=1e-9 * scale)
    np.testing.assert_allclose(grid, distance - start, rtol=1e-12, atol=1e-9)


@PROPERTY
@given(spacing=st.floats(10.0, 5000.0), values=profile_values, lat=st.floats(-60, 60))
def test_resampling_a_segment_at_its_median_spacing_returns_the_data(spacing, values, lat):
    values = np.array(values)
    n = values.size
    distance = spacing * np.arange(n)
    lon = np.linspace(10.0, 10.0 + 0.001 * n, n)
    segment = Segment(
        line="A",
        number=1,
        distance=distance,
        lon=lon,
        lat=np.full(n, lat),
        values={"depth_m": values},
        rows=np.arange(2, n + 2),
        source="arrays",
        azimuth_deg=90.0,
        chord=float(distance[-1]),
    )
    uniform = resample(segment, "depth_m")  # spacing: the median station spacing
    scale = max(1.0, float(np.max(np.abs(values))))
    np.testing.assert_allclose(uniform.values, values, rtol=0, atol=1e-9 * scale)
    np.testing.assert_allclose(uniform.lon, lon, atol=1e-9)
    assert uniform.spacing == pytest.approx(spacing, rel=1e-12)


# --- segments -----------------------------------------------------------------------------------

station_plans = st.lists(
    st.tuples(
        st.sampled_from(["step", "step", "step", "repeat", "gap", "turn"]),
        st.floats(50.0, 2000.0),
    ),
    min_size=1,
    max_size=40,
)


def _survey_from_plans(plans, start_lat: float) -> Survey:
    """Lines of stations: steps east, repeated positions, gaps (a long step) and reversals."""
    lines, lons, lats = [], [], []
    for number, plan in enumerate(plans):
        lon, lat, azimuth = -30.0, start_lat + 0.5 * number, 90.0
        lines.append(f"L{number}")
        lons.append(lon)
        lats.append(lat)
        for kind, length in plan:
            if kind == "turn":
                azimuth = (azimuth + 180.0) % 360.0
            step = {"repeat": 0.0, "gap": 40.0 * length}.get(kind, length)
            if step:
                lon, lat, _ = GEOD.fwd(lon, lat, azimuth, step)
            lines.append(f"L{number}")
            lons.append(lon)
            lats.append(lat)
    values = {"depth_m": np.linspace(4000.0, 4100.0, len(lines))}
    return Survey.from_arrays(line=np.array(lines), lon=np.array(lons), lat=np.array(lats), values=values)


@PROPERTY
@given(plans=st.lists(station_plans, min_size=1, max_size=4), start_lat=st.floats(-60.0, 60.0))
def test_segmenting_never_drops_or_duplicates_a_station(plans, start_lat):
    survey = _survey_from_plans(plans, start_lat)
    result = build_segments(survey)
    stations = result.survey.stations
    in_segments = Counter(int(r) for segment in result for r in segment.rows)
    assert all(count == 1 for count in in_segments.values()), "a station is in two segments"
    status = dict(zip(stations["row"].astype(int), stations["status"], strict=True))
    reason = dict(zip(stations["row"].astype(int), stations["reason"], strict=True))
    for row in survey.used["row"].astype(int):
        if status[row] == USED:
            assert in_segments[row] == 1, f"used row {row} is in no segment"
        elif status[row] == MERGED:
            assert row not in in_segments
            target = int(reason[row].rsplit(" ", 1)[-1])
            assert reason[row] == f"duplicate position of row {target}"
            assert in_segments[target] == 1 or status[target] == DROPPED
        else:
            assert status[row] == DROPPED and row not in in_segments
            assert reason[row] in {"single-station line", "isolated station between gaps"}
    assert set(in_segments) <= {row for row, s in status.items() if s == USED}
    accounting = result.survey.accounting
    assert accounting.read == len(survey.stations)
    assert accounting.used == sum(segment.n_stations for segment in result)
    for segment in result:
        assert np.all(np.diff(segment.distance) > 0)


# --- row accounting from CSV files ----------------------------------------------------------------

#: Bad rows and the reason the reader must give (None: read as used).
BAD_ROWS = {
    "blank": ("", "blank line"),
    "ragged": ("A,{lon},-40.0,4000.0,extra", "wrong number of fields"),
    "missing line": (",{lon},-40.0,4000.0", "missing line id"),
    "missing lon": ("A,,-40.0,4000.0", "missing coordinate"),
    "nan lon": ("A,NaN,-40.0,4000.0", "missing coordinate"),
    "text lat": ("A,{lon},forty,4000.0", "non-numeric coordinate"),
    "inf lat": ("A,{lon},-inf,4000.0", "non-finite coordinate"),
    "lat 91": ("A,{lon},91.0,4000.0", "coordinate out of range"),
    "null island": ("A,0,0,4000.0", "position (0, 0)"),
    "text depth": ("A,{lon},-40.0,deep", "non-numeric value in depth_m"),
    "empty depth": ("A,{lon},-40.0,", "missing value in depth_m"),
    "no-data depth": ("A,{lon},-40.0,-99999", "no-data value in depth_m"),
    "absurd depth": ("A,{lon},-40.0,1e12", "value beyond physical bounds in depth_m"),
    "inf depth": ("A,{lon},-40.0,inf", "non-finite value in depth_m"),
}
row_kinds = st.lists(st.sampled_from(["good", "good", "repeat", *BAD_ROWS]), min_size=1, max_size=60)


@PROPERTY
@given(kinds=row_kinds, crlf=st.booleans())
def test_row_accounting_always_adds_up(kinds, crlf):
    kinds = ["good", "good", *kinds]  # at least two stations to analyse
    assume(kinds.count("lat 91") < kinds.count("good"))  # else the columns look swapped
    # a file whose rows mostly disagree with the header's delimiter is refused, not read
    assume(kinds.count("ragged") < kinds.count("good"))
    lines, expected, good, repeats, last_good = ["line,lon,lat,depth_m"], Counter(), 0, 0, 0
    lon = -30.0
    for kind in kinds:
        if kind == "repeat" and good:
            lines.append(lines[last_good])
            repeats += 1
            continue
        if kind in ("good", "repeat"):
            lon += 0.005
            lines.append(f"A,{lon!r},-40.0,{4000.0 + good}")
            last_good = len(lines) - 1
            good += 1
            continue
        template, reason = BAD_ROWS[kind]
        lines.append(template.format(lon=repr(lon + 0.0025)))
        expected[reason] += 1
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "survey.csv"
        path.write_bytes((("\r\n" if crlf else "\n").join(lines) + "\n").encode("utf-8"))
        survey = read_survey(path, fields=["depth_m"])
    accounting = survey.accounting
    assert accounting.read == len(kinds)
    assert accounting.used == good + repeats
    assert accounting.merged == 0
    assert accounting.dropped == dict(expected)
    assert accounting.read == accounting.used + accounting.merged + accounting.n_dropped
    segmented = build_segments(survey).survey.accounting
    assert segmented.read == accounting.read
    assert segmented.merged == repeats
    assert segmented.used == good
    assert segmented.read == segmented.used + segmented.merged + segmented.n_dropped
