"""Shortcuts of the station checks against the plain pandas and numpy expressions they replace.

Each helper of ``profiles.stations`` skips work where it can tell it is not needed; the reference
is the expression it stands for, on inputs made to defeat the shortcut: white space of every
kind Python's ``str.strip`` removes (ASCII, the separators 0x1C-0x1F, NEL, NO-BREAK SPACE,
IDEOGRAPHIC SPACE), empty cells, missing cells, ids that are missing words.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from profiles.stations import (
    _is_one_of,
    _line_codes,
    _normalised_longitude,
    _repeated_text,
    _stripped,
)

SPACES = [" ", "\t", "\n", "\x0b", "\x0c", "\r", "\x1c", "\x1f", "\x85", "\xa0", "\u3000"]
IDS = ["A", "KR-03", "007", "línea 2", "nan", "None", "<NA>", "", "x"]


def _columns():
    rng = np.random.default_rng(3)
    yield pd.Series(rng.choice(IDS[:4], 500), dtype=str)  # nothing to strip, no missing word
    for space in SPACES:
        for where in ("before", "after"):
            cells = rng.choice(IDS, 300).astype(object)
            k = int(rng.integers(0, 300))
            cells[k] = space + cells[k] if where == "before" else cells[k] + space
            yield pd.Series(cells, dtype=str)
    yield pd.Series([""] * 5, dtype=str)
    yield pd.Series(["A", None, " B"], dtype=str)
    yield pd.Series([], dtype=str)
    yield pd.Series(["A", " B", "C"], dtype=object)


@pytest.mark.parametrize("column", list(_columns()), ids=lambda c: repr(c.tolist()[:3]))
def test_stripped_and_one_of_as_pandas(column):
    # Reference: Series.str.strip() and Series.isin(words).
    pd.testing.assert_series_equal(_stripped(column), column.str.strip())
    words = ["", "nan", "None", "<NA>"]
    np.testing.assert_array_equal(_is_one_of(column, words), column.isin(words).to_numpy(dtype=bool))


def test_normalised_longitude_as_the_formula_bit_for_bit():
    # Reference: numpy's where(isfinite(lon), ((lon + 180) % 360) - 180, lon), the rule it
    # replaces; compared bit for bit (signed zeros, NaN, infinities, the ends of the range).
    rng = np.random.default_rng(8)
    lon = np.concatenate([
        rng.uniform(-180.0, 360.0, 100_000), rng.uniform(-1e6, 1e6, 1000),
        [-180.0, -179.99999999999997, 179.99999999999997, 180.0, 359.99999999999994, 360.0, 540.0,
         -540.0, 0.0, -0.0, 1e-300, -1e-300, 5e-324, np.nan, np.inf, -np.inf, -1e300, 1e300],
    ])
    with np.errstate(invalid="ignore"):
        expected = np.where(np.isfinite(lon), ((lon + 180.0) % 360.0) - 180.0, lon)
    got = _normalised_longitude(lon)
    assert got.tobytes() == expected.tobytes()


@pytest.mark.parametrize(
    "ids",
    [["A", "A", "B", "B", "C"], ["A", "B", "A"], ["B", "A", "A", "C", "B"], ["A"], [],
     ["A", "A", "A"], ["x", "y", "y", "z", "x", "x"]],
)
def test_line_codes_as_factorize(ids):
    # Reference: pandas.factorize(sort=False), codes by first appearance.
    column = pd.Series(ids, dtype=str)
    np.testing.assert_array_equal(_line_codes(column), pd.factorize(column, sort=False)[0])


def test_repeated_text_as_the_broadcast_scalar():
    # Reference: the column pandas builds from a scalar in a DataFrame.
    for n in (0, 1, 1000):
        expected = pd.DataFrame({"source": "survey/line 7.csv", "x": np.zeros(n)})["source"]
        got = pd.Series(_repeated_text("survey/line 7.csv", n), name="source")
        pd.testing.assert_series_equal(got, expected)
