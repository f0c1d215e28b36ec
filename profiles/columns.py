"""Finding the line, longitude, latitude and time columns of a survey table.

Columns are matched case-insensitively against common names; an explicit name given by the user
always wins. When a required column cannot be found, the error lists the columns that exist and
the closest names, so the user can name the right one.
"""

from __future__ import annotations

import difflib
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


def _normalise(name: str) -> str:
    return str(name).strip().lower().replace(" ", "_").replace("-", "_")


def find_column(
    columns: list[str], role: str, explicit: str | None, *, source: str, required: bool
) -> str | None:
    """Return the column of ``columns`` that plays ``role`` (line, lon, lat, time, x, y).

    Raises
    ------
    InputError
        When ``explicit`` is not a column, or when a required column is missing.
    """
    by_name = {_normalise(c): c for c in columns}
    if explicit is not None:
        key = _normalise(explicit)
        if key in by_name:
            return by_name[key]
        close = difflib.get_close_matches(key, list(by_name), n=3, cutoff=0.5)
        hint = f"; closest: {', '.join(by_name[c] for c in close)}" if close else ""
        raise InputError(
            f"{source}: no column named {explicit!r}; columns found: {', '.join(map(str, columns))}{hint}"
        )
    for alias in ALIASES[role]:
        if alias in by_name:
            return by_name[alias]
    if not required:
        return None
    close = difflib.get_close_matches(role, list(by_name), n=3, cutoff=0.4)
    for alias in ALIASES[role]:
        close += [
            c for c in difflib.get_close_matches(alias, list(by_name), n=2, cutoff=0.6) if c not in close
        ]
    hint = f"; closest names: {', '.join(by_name[c] for c in close[:3])}" if close else ""
    option = {"lon": "--lon-column", "lat": "--lat-column", "x": "--lon-column", "y": "--lat-column"}.get(
        role, f"--{role}-column"
    )
    what = {"lon": "longitude", "lat": "latitude", "x": "easting (x)", "y": "northing (y)"}.get(role, role)
    raise InputError(
        f"{source}: no {what} column; columns found: {', '.join(map(str, columns))}"
        f"{hint}; name it with {option}"
    )
