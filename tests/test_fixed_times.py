"""Times written in one fixed ISO 8601 layout, read by array arithmetic, against pandas.

``profiles.stations._times`` reads a column whose cells are all ``YYYY-MM-DDTHH:MM:SS`` (T or a
space, optional Z, whole seconds) or missing by arithmetic on the bytes of the cells; any other
column goes to pandas' ISO 8601 parser. The reference here is pandas itself:
``pandas.to_datetime(cells, utc=True, errors="coerce", format="ISO8601")`` minus the epoch, in
seconds; the missing cells are those the reader calls missing (empty, or a word such as
``nan``). The calendar of the random times comes from Python's ``datetime`` (proleptic
Gregorian).
"""

from __future__ import annotations

import datetime

import numpy as np
import pandas as pd
import pytest

from profiles.stations import _MISSING_WORDS, _fixed_layout_times, _times

EPOCH = pd.Timestamp("1970-01-01", tz="UTC")


def _reference(cells: list) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Seconds, missing and unreadable masks by pandas' ISO 8601 parser (the reader's rules
    for missing cells)."""
    text = pd.Series(cells, dtype=object).astype(str).str.strip()
    missing = np.array(
        [c is None or t == "" or t.lower() in _MISSING_WORDS for c, t in zip(cells, text, strict=True)]
    )
    parsed = pd.to_datetime(text.where(~missing, None), utc=True, errors="coerce", format="ISO8601")
    seconds = (parsed - EPOCH).dt.total_seconds().to_numpy(dtype=float)
    return seconds, missing, np.isnan(seconds) & ~missing


def _random_times(rng, n: int, years=(1000, 9999)) -> list[datetime.datetime]:
    """Random whole-second times in the given years (proleptic Gregorian, Python's calendar)."""
    start = datetime.datetime(years[0], 1, 1)
    span = (datetime.datetime(years[1], 12, 31, 23, 59, 59) - start).total_seconds()
    return [start + datetime.timedelta(seconds=int(s)) for s in rng.integers(0, int(span) + 1, n)]


@pytest.mark.parametrize("layout", ["%Y-%m-%dT%H:%M:%SZ", "%Y-%m-%dT%H:%M:%S", "%Y-%m-%d %H:%M:%S",
                                    "%Y-%m-%d %H:%M:%SZ"])
@pytest.mark.parametrize("dtype", ["str", object])
def test_random_times_as_pandas_reads_them(layout, dtype):
    rng = np.random.default_rng(len(layout))
    times = _random_times(rng, 20_000) + _random_times(rng, 5_000, (1960, 2080))
    # Month ends, leap days (2000 and 2024 are leap years, 1900 and 2100 are not), the epoch.
    times += [datetime.datetime(y, m, d, 23, 59, 59) for y, m, d in
              [(2000, 2, 29), (2024, 2, 29), (1900, 2, 28), (2100, 2, 28), (2026, 12, 31), (2026, 1, 31),
               (2026, 4, 30), (1970, 1, 1), (1969, 12, 31)]]
    cells = [t.strftime(layout) for t in times]
    column = pd.Series(cells, dtype=dtype)
    assert _fixed_layout_times(column) is not None  # the arithmetic path reads it
    seconds, missing, unreadable = _times(column)
    ref_seconds, ref_missing, ref_unreadable = _reference(cells)
    assert not ref_missing.any()
    np.testing.assert_array_equal(seconds, ref_seconds)
    assert not missing.any() and not unreadable.any() and not ref_unreadable.any()
    # Python's datetime agrees (an outside calendar).
    expected = [(t - datetime.datetime(1970, 1, 1)).total_seconds() for t in times]
    np.testing.assert_array_equal(seconds, expected)


def test_missing_cells_beside_fixed_times():
    cells = ["2026-03-04T05:06:07Z", None, "", "  ", "nan", " N/A ", "-", "2026-03-04T05:06:57Z"]
    column = pd.Series(cells, dtype="str")
    assert _fixed_layout_times(column) is not None
    for got, want in zip(_times(column), _reference(cells), strict=True):
        np.testing.assert_array_equal(got, want)


@pytest.mark.parametrize(
    "odd",
    [
        "2026-02-29T00:00:00Z",  # not a leap year
        "1900-02-29T00:00:00Z",  # century, not a leap year
        "2026-04-31T00:00:00Z",  # April has 30 days
        "2026-13-01T00:00:00Z", "2026-00-10T00:00:00Z", "2026-01-00T00:00:00Z",
        "2026-01-01T24:00:00Z", "2026-01-01T23:60:00Z", "2016-12-31T23:59:60Z",  # a leap second
        "0000-01-01T00:00:00Z",  # year 0, which pandas reads
        "2026-03-04T05:06:07.250Z", "2026-03-04T05:06:07+01:00", "2026-03-04t05:06:07z",
        "2026-3-04T05:06:07Z ", "2026-03-04T05:06Z", "20260304T050607Z", "2026-03-04 05:06:07",
        " 2026-03-04T05:06:07Z", "2026/03/04T05:06:07Z", "2026-03-04T05:06:0xZ", "12.5",
    ],
)
def test_any_other_cell_gives_the_column_to_pandas(odd):
    # One cell outside the plain layout (or an impossible time) and the column is pandas' to
    # read: the result is then pandas' by construction, and the reference must agree.
    cells = ["2026-03-04T05:06:07Z", odd, "2026-03-04T05:06:57Z"]
    column = pd.Series(cells, dtype="str")
    assert _fixed_layout_times(column) is None
    for got, want in zip(_times(column), _reference(cells), strict=True):
        np.testing.assert_array_equal(got, want)


def test_numbers_and_empty_columns_are_not_times_of_this_layout():
    assert _fixed_layout_times(pd.Series([1.0, 2.0])) is None
    assert _fixed_layout_times(pd.Series(["12", "13"], dtype="str")) is None
    assert _fixed_layout_times(pd.Series([None, None], dtype="str")) is None
    assert _fixed_layout_times(pd.Series([], dtype="str")) is None


def test_an_impossible_time_far_down_the_column():
    # The cells are read in blocks; an impossible date in a later block still leaves the
    # column to pandas (reference), and so do cells beside others that are missing.
    rng = np.random.default_rng(9)
    cells = [t.strftime("%Y-%m-%dT%H:%M:%SZ") for t in _random_times(rng, 40_000, (2000, 2030))]
    cells[37_123] = "2026-02-30T00:00:00Z"
    cells[5] = None
    column = pd.Series(cells, dtype="str")
    assert _fixed_layout_times(column) is None
    for got, want in zip(_times(column), _reference(cells), strict=True):
        np.testing.assert_array_equal(got, want)
    cells[37_123] = "2026-02-28T00:00:00Z"
    column = pd.Series(cells, dtype="str")
    assert _fixed_layout_times(column) is not None
    for got, want in zip(_times(column), _reference(cells), strict=True):
        np.testing.assert_array_equal(got, want)
