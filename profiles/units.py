"""Lengths with units on the command line: ``250m``, ``2km``, ``1.5nmi``.

Inside the package every length is in metres. These helpers convert at the boundary.
"""

from __future__ import annotations

import re

from .errors import InputError

#: Metres per unit. The international nautical mile is exactly 1852 m, the international
#: foot exactly 0.3048 m and the statute mile exactly 1609.344 m (common practice; these are
#: the defined values of the international yard and pound agreement of 1959 and of the
#: International Hydrographic Conference of 1929).
METRES_PER_UNIT: dict[str, float] = {
    "m": 1.0,
    "km": 1000.0,
    "nmi": 1852.0,
    "ft": 0.3048,
    "mi": 1609.344,
}

_LENGTH = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*([a-zA-Z]*)\s*$")


def parse_length(text: str | float, *, default_unit: str | None = None, what: str = "length") -> float:
    """Parse a length such as ``"250m"``, ``"2 km"`` or ``"1.5nmi"`` into metres.

    Parameters
    ----------
    text : str or float
        The length. A bare number needs ``default_unit``; without one it is refused, because
        a silent default unit is a trap.
    default_unit : str, optional
        Unit of a bare number.
    what : str
        Name of the quantity, used in the error message.

    Returns
    -------
    float
        The length in metres, finite and strictly positive.

    Examples
    --------
    >>> parse_length("250m")
    250.0
    >>> parse_length("1.5nmi")
    2778.0
    """
    if isinstance(text, int | float):
        if default_unit is None:
            raise InputError(f"{what}: {text!r} has no unit; write it as e.g. 250m, 2km or 1.5nmi")
        number, unit = float(text), default_unit
    else:
        match = _LENGTH.match(str(text))
        if not match:
            raise InputError(f"{what}: cannot read {text!r} as a length; write e.g. 250m, 2km or 1.5nmi")
        number = float(match.group(1))
        unit = match.group(2).lower() or default_unit
        if unit is None:
            raise InputError(f"{what}: {text!r} has no unit; write it as e.g. 250m, 2km or 1.5nmi")
    if unit not in METRES_PER_UNIT:
        known = ", ".join(METRES_PER_UNIT)
        raise InputError(f"{what}: unknown unit {unit!r} in {text!r}; known units: {known}")
    metres = number * METRES_PER_UNIT[unit]
    if not metres > 0 or metres == float("inf"):
        raise InputError(f"{what}: {text!r} must be a positive length")
    return metres


def parse_length_or_multiple(text: str, *, what: str) -> tuple[str, float]:
    """Parse ``"5x"`` (a multiple of the median spacing) or a length such as ``"2km"``.

    Returns
    -------
    (kind, value) : tuple
        ``("multiple", 5.0)`` or ``("length", 2000.0)`` (metres).
    """
    stripped = str(text).strip().lower()
    if stripped.endswith("x"):
        try:
            value = float(stripped[:-1])
        except ValueError:
            raise InputError(
                f"{what}: cannot read {text!r}; write a multiple such as 5x or a length such as 2km"
            ) from None
        if not value > 1:
            raise InputError(f"{what}: the multiple {text!r} must be greater than 1")
        return "multiple", value
    return "length", parse_length(text, what=what)


def format_km(metres: float, digits: int = 3) -> str:
    """Format a length in metres as kilometres, e.g. ``"1.250 km"``."""
    return f"{metres / 1000.0:.{digits}f} km"


#: Units read off the end of a field name (``depth_m``, ``gravity_mgal``, ``magnetic_nt``).
FIELD_SUFFIX_UNITS = {
    "m": "m",
    "km": "km",
    "ft": "ft",
    "mgal": "mGal",
    "ugal": "µGal",
    "nt": "nT",
    "gu": "g.u.",
    "eotvos": "Eötvös",
}


def field_units(field: str) -> str:
    """The units of a field, read off its name's last ``_`` part; ``"field units"`` otherwise.

    >>> field_units("gravity_mgal")
    'mGal'
    """
    suffix = str(field).rsplit("_", 1)[-1].lower() if "_" in str(field) else ""
    return FIELD_SUFFIX_UNITS.get(suffix, "field units")
