"""Stretches of homogeneous spacing: the change-point rule on constructed lines.

Tracks are built with pyproj.Geod.fwd (conftest.walk), so the true step lengths are known; the
expected boundaries follow from the construction.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import walk

from profiles.errors import InputError
from profiles.geometry import build_segments
from profiles.stretches import homogeneous_stretches
from profiles.survey import Survey


def distance_of(steps) -> np.ndarray:
    return np.concatenate([[0.0], np.cumsum(steps)])


def test_250m_then_1km_line_has_two_stretches_and_no_gap():
    # 200 steps of 250 m then 100 steps of 1 km on a geodesic (pyproj.Geod.fwd): the 1 km
    # steps are 4x the previous ones, under the 5x gap rule of the segment split.
    lon, lat = walk(-20.0, -40.0, [(80, 200, 250.0), (80, 100, 1000.0)])
    survey = Survey.from_arrays(line=np.array(["A"] * lon.size), lon=lon, lat=lat)
    (segment,) = build_segments(survey).segments  # no gap separates them
    split = homogeneous_stretches(segment.distance)
    assert len(split) == 2
    assert split.first.tolist() == [0, 200] and split.last.tolist() == [200, 300]
    assert split.start[1] == pytest.approx(50_000.0, abs=1e-3)
    assert split.spacing == pytest.approx([250.0, 1000.0], abs=1e-6)
    assert split.n_steps.tolist() == [200, 100]
    frame = split.to_frame()
    assert list(frame["spacing_km"]) == pytest.approx([0.25, 1.0], abs=1e-9)
    assert "2 stretches" in str(split)


@pytest.mark.parametrize("seed", range(5))
def test_jittered_uniform_line_is_one_stretch(seed):
    # steps 250 m +- 30 % (uniform): medians of ten steps stay within a few per cent
    rng = np.random.default_rng(seed)
    steps = 250.0 * (1.0 + 0.3 * rng.uniform(-1, 1, 800))
    split = homogeneous_stretches(distance_of(steps))
    assert len(split) == 1
    assert split.spacing[0] == pytest.approx(np.median(steps))


def test_three_stretches_and_a_smooth_change():
    steps = np.concatenate([np.full(120, 250.0), np.full(80, 1000.0), np.full(150, 250.0)])
    split = homogeneous_stretches(distance_of(steps))
    assert split.first.tolist() == [0, 120, 200] and split.last.tolist() == [120, 200, 350]
    # a gradual change by 1 % per step from 250 m to about 680 m: a change point is found
    # somewhere in the ramp, and each stretch is homogeneous to within the factor
    ramp = 250.0 * 1.01 ** np.arange(100)
    steps = np.concatenate([np.full(100, 250.0), ramp, np.full(100, ramp[-1])])
    split = homogeneous_stretches(distance_of(steps))
    assert 2 <= len(split) <= 3
    for a, b in zip(split.first, split.last, strict=True):
        assert np.median(steps[a:b]) <= 2.0 * np.min(steps[a:b]) + 1e-9


def test_isolated_odd_steps_do_not_split():
    # a missed fix (one 500 m step) and a doubled one (two 125 m steps) in a 250 m line
    steps = np.full(300, 250.0)
    steps[100] = 500.0
    steps[200:202] = 125.0
    assert len(homogeneous_stretches(distance_of(steps))) == 1


def test_short_burst_is_merged():
    # four coarse steps are fewer than min_steps (5): merged into the neighbours
    steps = np.concatenate([np.full(100, 250.0), np.full(4, 1000.0), np.full(100, 250.0)])
    assert len(homogeneous_stretches(distance_of(steps))) == 1
    # seven coarse steps (the demo survey's L08 stretch) stand on their own
    seven = np.concatenate([np.full(100, 250.0), np.full(7, 5700.0), np.full(100, 250.0)])
    assert len(homogeneous_stretches(distance_of(seven))) == 3
    # with min_steps 3 and a window of 3 steps they stand on their own
    split = homogeneous_stretches(distance_of(steps), min_steps=3, window_steps=3)
    assert len(split) == 3 and split.spacing[1] == pytest.approx(1000.0)


def test_factor_sets_what_counts_as_a_change():
    steps = np.concatenate([np.full(100, 250.0), np.full(100, 325.0)])  # 1.3x
    assert len(homogeneous_stretches(distance_of(steps))) == 1  # default factor 1.5
    assert len(homogeneous_stretches(distance_of(steps), factor=1.2)) == 2


def test_short_and_bad_input():
    assert len(homogeneous_stretches(np.array([0.0, 250.0]))) == 1
    with pytest.raises(InputError, match="increase strictly"):
        homogeneous_stretches(np.array([0.0, 10.0, 10.0, 20.0]))
    with pytest.raises(InputError, match="must exceed 1"):
        homogeneous_stretches(distance_of(np.full(20, 1.0)), factor=1.0)
    with pytest.raises(InputError, match="at least two stations"):
        homogeneous_stretches(np.array([0.0]))
