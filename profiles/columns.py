"""Finding the line, longitude, latitude and time columns of a survey table, and knowing what
the field columns hold.

Columns are matched case-insensitively against common names; an explicit name given by the user
always wins. When a required column cannot be found, the error lists the columns that exist and
the closest names, so the user can name the right one.

Field columns whose name says what they measure (depth, elevation, gravity, magnetic anomaly)
get physical bounds (:func:`field_kind`); the reader treats values beyond them as missing, with
a warning, rather than analysing them.
"""

from __future__ import annotations

import difflib
import itertools
import re
from dataclasses import dataclass

from .errors import InputError

ALIASES: dict[str, tuple[str, ...]] = {
    "line": (
        "line",
        "line_id",
        "lineid",
        "line_name",
        "linename",
        "line_no",
        "track",
        "track_id",
        "profile",
        "profile_id",
        "survey_line",
        "leg",
        "transect",
    ),
    "lon": ("lon", "long", "longitude", "lng", "lon_deg", "longitude_deg", "lon_dd", "x_lon"),
    "lat": ("lat", "latitude", "lat_deg", "latitude_deg", "lat_dd", "y_lat"),
    "time": (
        "time",
        "datetime",
        "date_time",
        "timestamp",
        "time_utc",
        "utc",
        "utc_time",
        "date",
        "time_s",
        "seconds",
    ),
    # Projected coordinates (only with a CRS given by the user).
    "x": ("x", "easting", "east", "e", "x_m", "easting_m"),
    "y": ("y", "northing", "north", "n", "y_m", "northing_m"),
}

#: How many column names an error message lists before it says "... and N more".
LISTED_COLUMNS = 25


@dataclass(frozen=True)
class ColumnNames:
    """Explicit column names given by the user; ``None`` means "find it".

    Attributes
    ----------
    line, lon, lat, time : str or None
        Column names. With a projected CRS, ``lon`` and ``lat`` name the easting and northing
        columns.
    """

    line: str | None = None
    lon: str | None = None
    lat: str | None = None
    time: str | None = None


def normalise(name: str) -> str:
    """A column name as it is compared: stripped, lower case, spaces and dashes as ``_``."""
    return str(name).strip().lower().replace(" ", "_").replace("-", "_")


_normalise = normalise  # the name used before it was public


def listing(columns) -> str:
    """Column names for a message, at most :data:`LISTED_COLUMNS` of them."""
    names = [str(c) for c in columns]
    if len(names) <= LISTED_COLUMNS:
        return ", ".join(names) or "none"
    shown = ", ".join(names[:LISTED_COLUMNS])
    return f"{shown} ... and {len(names) - LISTED_COLUMNS} more ({len(names)} columns)"


def find_column(
    columns: list[str], role: str, explicit: str | None, *, source: str, required: bool
) -> str | None:
    """Return the column of ``columns`` that plays ``role`` (line, lon, lat, time, x, y).

    Raises
    ------
    InputError
        When ``explicit`` is not a column, or when a required column is missing.
    """
    by_name = {}
    for column in columns:
        by_name.setdefault(normalise(column), column)
    if explicit is not None:
        key = normalise(explicit)
        if key in by_name:
            return by_name[key]
        close = difflib.get_close_matches(key, list(by_name), n=3, cutoff=0.5)
        hint = f"; closest: {', '.join(by_name[c] for c in close)}" if close else ""
        raise InputError(f"{source}: no column named {explicit!r}; columns found: {listing(columns)}{hint}")
    for alias in ALIASES[role]:
        if alias in by_name:
            return by_name[alias]
    if not required:
        return None
    close: list[str] = []
    for alias in (role, *ALIASES[role]):
        close += [
            c for c in difflib.get_close_matches(alias, list(by_name), n=2, cutoff=0.6) if c not in close
        ]
    hint = f"; closest names: {', '.join(by_name[c] for c in close[:3])}" if close else ""
    option = {"lon": "--lon-column", "lat": "--lat-column", "x": "--lon-column", "y": "--lat-column"}.get(
        role, f"--{role}-column"
    )
    what = {"lon": "longitude", "lat": "latitude", "x": "easting (x)", "y": "northing (y)"}.get(role, role)
    raise InputError(
        f"{source}: no {what} column; columns found: {listing(columns)}{hint}; name it with {option}"
    )


# --- what a field holds -------------------------------------------------------------------------


@dataclass(frozen=True)
class FieldKind:
    """What a field column measures, read from its name, and the values that are physical.

    Attributes
    ----------
    kind : str
        ``"depth"``, ``"elevation"``, ``"gravity"`` or ``"magnetic"``.
    unit : str
        Unit the bounds are in (from the column name, else the usual unit of the kind).
    ranges : tuple of (float, float)
        Closed intervals of physical values; a value is physical when it lies in one of them.
    """

    kind: str
    unit: str
    ranges: tuple[tuple[float, float], ...]

    def physical(self, values):
        """Boolean mask of the values inside the bounds (NaN is not physical)."""
        import numpy as np  # here, so that the command line starts without numpy

        values = np.asarray(values, dtype=float)
        inside = np.zeros(values.shape, bool)
        for low, high in self.ranges:
            inside |= (values >= low) & (values <= high)
        return inside

    def describe(self) -> str:
        """The bounds in words, e.g. ``"-12000 to 12000 m"``."""
        return " or ".join(f"{low:g} to {high:g} {self.unit}" for low, high in self.ranges)


# Bounds are generous physical limits, not survey specifications (values from memory):
# the deepest sounding of the oceans is about 10 900 m (Challenger Deep) and the highest
# summit about 8 850 m, so depths beyond 12 000 m and elevations outside -12 000 .. 9 000 m
# are not measurements. Free-air and Bouguer anomalies on Earth stay within a few hundred mGal;
# 1 000 mGal is a wide margin. Observed (absolute) gravity lies near 978 000 - 983 200 mGal
# (normal gravity at the equator and the poles), widened here to 975 000 - 985 000 mGal for
# height and anomaly. The geomagnetic total field is about 22 000 - 67 000 nT and crustal
# anomalies are far smaller, so 100 000 nT bounds both a total-field and an anomaly column.
_METRES = {"m": 1.0, "km": 1e-3, "ft": 1.0 / 0.3048}
_DEPTH_WORDS = {"depth", "bathymetry", "bathy", "sounding", "soundings", "water_depth"}
_ELEVATION_WORDS = {"elevation", "elev", "topography", "topo", "relief"}
_GRAVITY_WORDS = {"gravity", "grav", "faa", "free_air", "freeair", "bouguer", "mgal", "gal"}
_ANOMALY_WORDS = {"faa", "free_air", "freeair", "bouguer", "anomaly", "anom", "fa"}
_MAGNETIC_WORDS = {"magnetic", "magnetics", "mag", "tmi", "nt", "igrf"}


def _tokens(name: str) -> list[str]:
    text = normalise(name)
    words = [w for w in re.split(r"[^a-z0-9]+", text) if w]
    joined = [f"{a}_{b}" for a, b in itertools.pairwise(words)]
    return words + joined


def field_kind(name: str) -> FieldKind | None:
    """The kind of a field column from its name, with physical bounds; ``None`` if unknown.

    Examples
    --------
    >>> field_kind("depth_m").describe()
    '-12000 to 12000 m'
    >>> field_kind("free_air_mgal").kind
    'gravity'
    >>> field_kind("salinity") is None
    True
    """
    tokens = set(_tokens(name))
    unit = next((u for u in ("km", "ft", "m") if u in tokens), "m")
    scale = _METRES[unit]
    if tokens & _DEPTH_WORDS:
        return FieldKind("depth", unit, ((-12000.0 * scale, 12000.0 * scale),))
    if tokens & _ELEVATION_WORDS:
        return FieldKind("elevation", unit, ((-12000.0 * scale, 9000.0 * scale),))
    if tokens & _GRAVITY_WORDS:
        anomaly = ((-1000.0, 1000.0),)
        if tokens & _ANOMALY_WORDS:
            return FieldKind("gravity", "mGal", anomaly)
        return FieldKind("gravity", "mGal", (*anomaly, (975000.0, 985000.0)))
    if tokens & _MAGNETIC_WORDS:
        return FieldKind("magnetic", "nT", ((-100000.0, 100000.0),))
    return None


#: Values that survey software writes for "no measurement" (common practice). They are never
#: analysed as data in a field that is analysed or whose kind is known.
NO_DATA_VALUES = (-99999.0, -9999.0, 99999.0, -999999.0, 999999.0, -32768.0)
#: Magnitudes from which a value is a fill value, not a measurement (1e20, 1e30, 9.96921e36 and
#: similar float fill values; common practice).
FILL_MAGNITUDE = 1e20
