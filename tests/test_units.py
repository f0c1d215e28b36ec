"""Lengths with units. Conversion factors are the defined values: 1 nmi = 1852 m exactly
(International Hydrographic Conference 1929), 1 ft = 0.3048 m and 1 mi = 1609.344 m exactly
(international yard and pound agreement 1959)."""

import pytest

from profiles.errors import InputError
from profiles.units import parse_length, parse_length_or_multiple


@pytest.mark.parametrize("text, metres", [
    ("250m", 250.0), ("2km", 2000.0), ("1.5nmi", 2778.0), ("2 km", 2000.0), ("10ft", 3.048),
    ("1mi", 1609.344), ("1e3m", 1000.0), (".5km", 500.0), ("3KM", 3000.0),
])
def test_parse_length(text, metres):
    assert parse_length(text) == pytest.approx(metres)


@pytest.mark.parametrize("text", ["250", "km", "2 parsecs", "-3km", "0m", "abc", "infm"])
def test_parse_length_refuses(text):
    with pytest.raises(InputError):
        parse_length(text)


def test_multiple_or_length():
    assert parse_length_or_multiple("5x", what="--gap") == ("multiple", 5.0)
    assert parse_length_or_multiple("3km", what="--gap") == ("length", 3000.0)
    with pytest.raises(InputError):
        parse_length_or_multiple("0.5x", what="--gap")
