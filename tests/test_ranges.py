"""Statistics of many ranges of one array (profiles.ranges), against numpy range by range.

Reference: numpy.median, numpy.max, numpy.sum, numpy.count_nonzero and numpy.sort over each
slice values[lo:hi] in a Python loop (the slow, readable reference). The medians must be the
same numbers as numpy's, not merely close: the windows' local spacing is documented as
numpy.median of the steps.
"""

from __future__ import annotations

import numpy as np
import pytest

import profiles.ranges
from profiles.ranges import (
    range_count,
    range_median,
    range_median_and_maximum,
    range_pieces,
    range_reduce,
    range_select,
)


def kinds(rng, size):
    """Values that stress the selection: many ties (steps rounded to 0.1 m, all steps equal),
    many orders of magnitude, negative values, a few huge steps among regular ones, and two
    clusters far apart (stretches of two station spacings)."""
    return {
        "uniform": rng.uniform(100.0, 300.0, size),
        "rounded": np.round(rng.exponential(5.0, size), 1) + 0.1,
        "constant": np.full(size, 250.0),
        "spread": np.exp(rng.normal(0.0, 5.0, size)),
        "signed": rng.normal(0.0, 50.0, size),
        "gappy": np.where(rng.random(size) < 0.01, 20_000.0, rng.uniform(240.0, 260.0, size)),
        "two clusters": np.where(np.arange(size) < size // 2, rng.uniform(40.0, 60.0, size),
                                 rng.uniform(900.0, 1100.0, size)),
        "subnormal": rng.integers(1, 1000, size) * 5e-324,  # a band too narrow to divide by
    }


def random_ranges(rng, size, count, longest):
    lo = np.sort(rng.integers(0, size - 10, count))
    hi = np.minimum(lo + rng.integers(1, longest, count), size)
    hi[-5:] = size  # ranges that run to the end
    lo[-1] = size - 1
    return lo, hi


def window_ranges(size, length, step):
    """Ranges as along-track windows give them: equal lengths, overlapping several times."""
    lo = np.arange(0, size - length + 1, step)
    return lo, lo + length + (lo % 3 == 0)  # lengths alternate odd and even


def medians(values, lo, hi):
    return np.array([np.median(values[a:b]) for a, b in zip(lo, hi, strict=True)])


@pytest.mark.parametrize("cells", [1 << 23, 500])  # one matrix, and rows split into blocks
@pytest.mark.parametrize(
    "kind", ["uniform", "rounded", "constant", "spread", "signed", "gappy", "two clusters", "subnormal"]
)
def test_range_statistics_equal_numpy(monkeypatch, cells, kind):
    monkeypatch.setattr(profiles.ranges, "_SELECT_CELLS", cells)
    rng = np.random.default_rng(7)
    values = kinds(rng, 3000)[kind]
    lo, hi = random_ranges(rng, values.size, 400, 700)
    np.testing.assert_array_equal(range_median(values, lo, hi), medians(values, lo, hi))
    np.testing.assert_array_equal(range_reduce(np.maximum, values, lo, hi),
                                  [np.max(values[a:b]) for a, b in zip(lo, hi, strict=True)])
    np.testing.assert_allclose(range_reduce(np.add, values, lo, hi),
                               [np.sum(values[a:b]) for a, b in zip(lo, hi, strict=True)], rtol=1e-13)
    flags = values > np.median(values)
    np.testing.assert_array_equal(range_count(flags, lo, hi),
                                  [np.count_nonzero(flags[a:b]) for a, b in zip(lo, hi, strict=True)])
    rank = rng.integers(0, hi - lo)
    np.testing.assert_array_equal(range_select(values, lo, hi, rank),
                                  [np.sort(values[a:b])[r] for a, b, r in zip(lo, hi, rank, strict=True)])
    picked, following = range_select(values, lo, hi, rank, following=True)
    np.testing.assert_array_equal(picked, range_select(values, lo, hi, rank))
    np.testing.assert_array_equal(following, [np.sort(values[a:b])[r + 1] if r + 1 < b - a else np.inf
                                              for a, b, r in zip(lo, hi, rank, strict=True)])


def test_no_ranges():
    empty = np.zeros(0, dtype=np.int64)
    assert range_median(np.arange(5.0), empty, empty).size == 0
    assert range_select(np.arange(5.0), empty, empty, empty).size == 0


@pytest.mark.parametrize(
    "kind", ["uniform", "rounded", "constant", "spread", "signed", "gappy", "two clusters", "subnormal"]
)
@pytest.mark.parametrize(("length", "step"), [(300, 75), (301, 40), (120, 120)])
@pytest.mark.parametrize("chunk", [1 << 16, 1000, 16])  # values classified in one or many chunks
def test_medians_of_overlapping_windows_equal_numpy(monkeypatch, kind, length, step, chunk):
    # Many long ranges overlapping several times over, as along-track windows: the median goes
    # through the band and its bins (steps 1-5 of the module notes), and must still be
    # numpy's number exactly; a chunk of 16 values is shorter than every piece.
    monkeypatch.setattr(profiles.ranges, "_CLASSIFY_CHUNK", chunk)
    rng = np.random.default_rng(length + step)
    values = kinds(rng, 20_000)[kind]
    lo, hi = window_ranges(values.size, length, step)
    pieces = range_pieces(lo, hi, values.size)
    median, maximum = range_median_and_maximum(values, lo, hi, pieces=pieces)
    np.testing.assert_array_equal(median, medians(values, lo, hi))
    np.testing.assert_array_equal(maximum, [np.max(values[a:b]) for a, b in zip(lo, hi, strict=True)])
    np.testing.assert_array_equal(range_median(values, lo, hi), median)


def test_medians_when_the_band_misses_many_ranges():
    # A drift along the array: the sampled middles do not cover every range, whose medians are
    # then found whole (step 5); and a few ranges of one or two values.
    rng = np.random.default_rng(3)
    values = np.linspace(100.0, 900.0, 30_000) + rng.normal(0.0, 5.0, 30_000)
    lo, hi = window_ranges(values.size, 400, 37)
    lo = np.concatenate([lo, [5, 17, 29_998]])
    hi = np.concatenate([hi, [6, 19, 30_000]])
    np.testing.assert_array_equal(range_median(values, lo, hi), medians(values, lo, hi))


def test_medians_with_a_long_run_of_equal_values():
    # Regular stations over one stretch (one value, many times) among irregular ones: the
    # ranges there hold a long stretch in one bin, and are sorted apart from the others.
    rng = np.random.default_rng(5)
    values = rng.uniform(240.0, 260.0, 100_000)
    values[40_000:50_000] = 250.0
    lo, hi = window_ranges(values.size, 300, 30)
    np.testing.assert_array_equal(range_median(values, lo, hi), medians(values, lo, hi))


def test_pieces():
    # Hand-worked: ranges [2, 5), [3, 9) and [5, 10) of 10 values cut them at 2, 3, 5 and 9.
    starts, first, stop = range_pieces(np.array([2, 3, 5]), np.array([5, 9, 10]), 10)
    np.testing.assert_array_equal(starts, [2, 3, 5, 9])
    np.testing.assert_array_equal(first, [0, 1, 2])
    np.testing.assert_array_equal(stop, [2, 3, 4])
