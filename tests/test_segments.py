"""Segmentation and spacing statistics on constructed tracks with known gaps and turns.

Tracks are built with pyproj.Geod.fwd (WGS84), so the true step lengths and courses are known
exactly; the expected values below follow from the construction.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import walk

from profiles.geometry import build_segments
from profiles.spacing import audit_spacing
from profiles.survey import Survey


def survey_of(lon, lat, line="L1", **values):
    n = len(lon)
    return Survey.from_arrays(line=np.array([line] * n), lon=lon, lat=lat,
                              values={k: np.asarray(v, float) for k, v in values.items()} or None)


def test_gap_splits_and_keeps_distance_axis():
    # 100 steps of 250 m east, one step of 6 km (24x the median: a gap at the default 5x),
    # then 60 steps of 250 m.
    lon, lat = walk(-20.0, -35.0, [(90, 100, 250.0), (90, 1, 6000.0), (90, 60, 250.0)])
    segments = build_segments(survey_of(lon, lat))
    assert [s.n_stations for s in segments] == [101, 61]
    first, second = segments.segments
    assert first.end == pytest.approx(25_000.0, abs=1e-3)
    assert second.start == pytest.approx(31_000.0, abs=1e-3)
    assert list(segments.breaks["kind"]) == ["gap"]
    assert segments.breaks["size"].iloc[0] == pytest.approx(6.0, abs=1e-6)


def test_gap_as_length():
    lon, lat = walk(-20.0, -35.0, [(90, 50, 250.0), (90, 1, 900.0), (90, 50, 250.0)])
    assert len(build_segments(survey_of(lon, lat))) == 1  # 900 m is under 5 x 250 m
    assert len(build_segments(survey_of(lon, lat), gap_length=800.0)) == 2


def test_sharp_turn_splits_at_the_vertex():
    # 80 steps east then 80 steps north: a 90 degree turn after 20 km.
    lon, lat = walk(10.0, 40.0, [(90, 80, 250.0), (0, 80, 250.0)])
    segments = build_segments(survey_of(lon, lat))
    assert len(segments) == 2
    assert segments.segments[0].end == pytest.approx(20_000.0, abs=1e-3)
    assert segments.breaks["size"].iloc[0] == pytest.approx(90.0, abs=1.0)
    assert segments.segments[0].azimuth_deg == pytest.approx(90.0, abs=0.2)
    assert segments.segments[1].azimuth_deg == pytest.approx(0.0, abs=1e-6)


def test_gentle_course_change_does_not_split():
    # 30 degrees spread over 15 km (2 degrees per km) is a curve, not a sharp turn at 45/2 km.
    legs = [(90 - i * 2.0, 4, 250.0) for i in range(16)]
    lon, lat = walk(1.0, 1.0, legs)
    assert len(build_segments(survey_of(lon, lat))) == 1


def test_heading_jitter_does_not_split():
    # Courses jitter by +-20 degrees from step to step around 045; the mean course is steady.
    rng = np.random.default_rng(4)
    legs = [(45 + rng.uniform(-20, 20), 1, 200.0) for _ in range(300)]
    lon, lat = walk(5.0, -10.0, legs)
    assert len(build_segments(survey_of(lon, lat))) == 1


def test_doubling_back_splits_with_a_warning():
    lon, lat = walk(1.0, 1.0, [(0, 60, 250.0), (180, 60, 250.0)])
    segments = build_segments(survey_of(lon, lat))
    assert len(segments) == 2
    assert any("doubles back" in w for w in segments.warnings)
    assert segments.segments[0].end == pytest.approx(15_000.0, abs=1e-3)


def test_duplicates_are_merged_and_counted():
    lon, lat = walk(1.0, 1.0, [(90, 10, 300.0)])
    lon = np.insert(lon, 5, lon[5])
    lat = np.insert(lat, 5, lat[5])
    depth = np.arange(lon.size, dtype=float)
    segments = build_segments(survey_of(lon, lat, depth_m=depth))
    accounting = segments.survey.accounting
    assert (accounting.read, accounting.used, accounting.merged) == (12, 11, 1)
    # the merged station's value is averaged into the kept one: (5 + 6) / 2
    assert segments.segments[0].values["depth_m"][5] == pytest.approx(5.5)
    assert np.all(np.diff(segments.segments[0].distance) > 0)


def test_single_station_line_is_dropped_with_reason():
    lon, lat = walk(1.0, 1.0, [(90, 10, 300.0)])
    line = np.array(["A"] * lon.size + ["B"])
    survey = Survey.from_arrays(line=line, lon=np.append(lon, 3.0), lat=np.append(lat, 3.0))
    segments = build_segments(survey)
    assert segments.survey.accounting.dropped == {"single-station line": 1}
    assert [s.line for s in segments] == ["A"]


def test_spacing_statistics_and_nyquist():
    # Steps: 100 x 200 m then 20 x 900 m (4.5x the median: under the 5x gap rule).
    lon, lat = walk(1.0, 1.0, [(90, 100, 200.0), (90, 20, 900.0)])
    segments = build_segments(survey_of(lon, lat))
    audit = audit_spacing(segments, shortest_wavelength=1500.0)
    row = audit.segments.iloc[0]
    steps = np.array([200.0] * 100 + [900.0] * 20)
    # Reference: numpy's median and percentile of the constructed steps.
    assert row["spacing_median_km"] == pytest.approx(np.median(steps) / 1e3, abs=1e-9)
    assert row["spacing_p95_km"] == pytest.approx(np.percentile(steps, 95) / 1e3, abs=1e-9)
    assert row["spacing_max_km"] == pytest.approx(0.9, abs=1e-9)
    assert row["nyquist_wavelength_km"] == pytest.approx(0.4, abs=1e-9)
    assert row["nyquist_wavelength_worst_km"] == pytest.approx(1.8, abs=1e-9)
    assert row["straightness"] == pytest.approx(1.0, abs=1e-9)
    assert bool(row["aliasing_risk"]) is True
    # One risky stretch exactly where the 900 m steps are (above 1500 / 2), nowhere else.
    stretch = audit.risky_stretches
    assert len(stretch) == 1
    assert stretch["start_km"].iloc[0] == pytest.approx(20.0, abs=1e-6)
    assert stretch["end_km"].iloc[0] == pytest.approx(38.0, abs=1e-6)
    assert stretch["spacing_km"].iloc[0] == pytest.approx(0.9, abs=1e-9)


def test_no_risk_when_spacing_is_fine_enough_and_too_short_flag():
    lon, lat = walk(1.0, 1.0, [(90, 100, 200.0)])
    audit = audit_spacing(build_segments(survey_of(lon, lat)), shortest_wavelength=1000.0,
                          longest_wavelength=15_000.0)
    assert audit.risky_stretches.empty
    assert bool(audit.segments["aliasing_risk"].iloc[0]) is False
    assert bool(audit.segments["too_short"].iloc[0]) is True  # 20 km < 2 x 15 km
    assert any("shorter than two cycles" in w for w in audit.warnings)


def test_straightness_of_a_dog_leg():
    # Two 10 km legs at right angles inside one segment (turn threshold raised to keep it):
    # chord / length = sqrt(2) * 10 / 20.
    lon, lat = walk(1.0, 1.0, [(90, 40, 250.0), (0, 40, 250.0)])
    segments = build_segments(survey_of(lon, lat), turn_angle=120.0)
    assert len(segments) == 1
    assert segments.segments[0].straightness == pytest.approx(np.sqrt(2) / 2, rel=2e-3)


def test_coarse_stretch_stays_one_stretch_and_is_flagged():
    # 7 steps of 5 km inside a line logged every 250 m: a stretch logged coarsely, not 7 gaps
    # (each 5 km step has 5 km neighbours on one side); the audit flags exactly that stretch.
    lon, lat = walk(-40.0, 20.0, [(135, 100, 250.0), (135, 7, 5000.0), (135, 100, 250.0)])
    segments = build_segments(survey_of(lon, lat))
    assert len(segments) == 1
    audit = audit_spacing(segments, shortest_wavelength=4000.0)
    (stretch,) = audit.risky_stretches.itertuples()
    assert stretch.start_km == pytest.approx(25.0, abs=1e-6)
    assert stretch.end_km == pytest.approx(60.0, abs=1e-6)
    assert stretch.n_steps == 7
