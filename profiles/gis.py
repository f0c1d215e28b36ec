"""GIS output: one GeoPackage (EPSG:4326) with the stations, segments, windows, warnings and
infill stretches.

Layers of ``profiles.gpkg``:

``stations``
    every input row, with its status (used, merged, dropped) and reason; a point at its
    position, or an empty point where the row has no usable coordinate.
``segments``
    one line per segment through its stations, with the spacing-audit attributes of
    :func:`profiles.spacing.audit_spacing`.
``windows``
    one line per window along its extent on the track, with every window attribute;
    ``reasons`` is comma-separated text. With an aliasing budget drawn up for a target
    wavelength, also the budget's columns (:data:`profiles.spacing.WINDOW_BUDGET_COLUMNS`).
``warnings``
    one point per aliasing reason of every window at risk, at the window's centre, with the
    reason, a message and the window's extent.
``infill``
    only with such a budget: one line per stretch spaced more coarsely than the budget
    recommends, through the segment's stations from the stretch's start to its end
    (:mod:`profiles.infill`), with :data:`profiles.infill.INFILL_COLUMNS`. Written (empty)
    even when no stretch is that coarse, so that the layer is always there to open.

Antimeridian: line geometries are cut where a track crosses +-180 degrees, the way RFC 7946
(GeoJSON, section 3.1.9) asks, so that every longitude stays within [-180, 180]: such a track
becomes a MultiLineString whose parts meet at the meridian (latitude interpolated linearly in
longitude, exact to well under a metre over steps of a few km). When any feature of a layer is
cut, the layer holds MultiLineStrings throughout.

The GeoPackage is written through pyogrio to a temporary name and renamed into place
(:meth:`profiles.outputs.OutputFolder.with_writer`). geopandas, shapely and pyogrio are
imported here only, so that the numerical core never loads them.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from .geometry import Segments
from .infill import InfillStretches, infill_stretches, window_frame
from .spacing import AliasBudget, SpacingAudit
from .survey import Survey
from .windows import WindowTable, track_path_vertices

#: Layers of the GeoPackage, in the order written (``infill`` only with a budget for a target).
LAYERS = ("stations", "segments", "windows", "warnings", "infill")
#: CRS of every layer.
CRS = "EPSG:4326"


def split_at_antimeridian(path: np.ndarray) -> list[np.ndarray]:
    """Cut a path with continuous longitudes where it crosses +-180 degrees.

    Parameters
    ----------
    path : ndarray, shape (k, 2)
        (lon, lat) vertices in degrees; longitudes continuous along the path (unwrapped,
        so they may leave [-180, 180)).

    Returns
    -------
    list of ndarray
        The parts, longitudes brought into [-180, 180]; consecutive parts share the crossing
        point (at +180 on one side, -180 on the other).
    """
    path = np.asarray(path, dtype=float)
    lon, lat = path[:, 0], path[:, 1]
    sheet = np.floor((lon + 180.0) / 360.0).astype(np.int64)
    parts, begin, head = [], 0, []
    for i in np.flatnonzero(np.diff(sheet) != 0).tolist():
        boundary = -180.0 + 360.0 * max(sheet[i], sheet[i + 1])
        fraction = (boundary - lon[i]) / (lon[i + 1] - lon[i])
        point = np.array([[boundary, lat[i] + fraction * (lat[i + 1] - lat[i])]])
        parts.append(_shifted(np.vstack([*head, path[begin : i + 1], point]), sheet[i]))
        head, begin = [point], i + 1
    parts.append(_shifted(np.vstack([*head, path[begin:]]), sheet[begin]))
    return [part for part in parts if part.shape[0] >= 2]


def _shifted(part: np.ndarray, sheet: int) -> np.ndarray:
    """A part moved by whole turns into [-180, 180], repeated vertices dropped."""
    part = part - np.array([360.0 * sheet, 0.0])
    keep = np.concatenate([[True], np.any(np.diff(part, axis=0) != 0, axis=1)])
    return part[keep]


def _lines(paths: list[np.ndarray]):
    """Shapely geometries of paths: LineStrings, or MultiLineStrings where a path is cut."""
    lengths = np.array([len(path) for path in paths], dtype=np.intp)
    offsets = np.zeros(lengths.size + 1, dtype=np.intp)
    np.cumsum(lengths, out=offsets[1:])
    vertices = np.concatenate(paths).reshape(-1, 2) if paths else np.zeros((0, 2))
    return _lines_from(np.asarray(vertices, dtype=float), offsets)


def _lines_from(vertices: np.ndarray, offsets: np.ndarray):
    """:func:`_lines` of the paths ``vertices[offsets[i] : offsets[i + 1]]``, built at once.

    A path that stays on one sheet (its longitudes within one turn [-180 + 360 s, 180 + 360 s))
    is what :func:`split_at_antimeridian` makes of it: moved by s turns, repeated vertices
    dropped. All those paths go into one ``shapely.linestrings(..., indices=...)`` call;
    only paths that change sheet (or would keep fewer than two vertices) are cut one by one.
    """
    import shapely

    count = offsets.size - 1
    path = np.repeat(np.arange(count), np.diff(offsets))
    lon, lat = vertices[:, 0], vertices[:, 1]
    sheet = np.floor((lon + 180.0) / 360.0).astype(np.int64)
    same = path[1:] == path[:-1]  # consecutive vertices of one path
    moved = np.column_stack([lon - 360.0 * sheet, lat - 0.0])
    keep = np.ones(path.size, dtype=bool)
    keep[1:] = np.any(np.diff(moved, axis=0) != 0, axis=1) | ~same
    slow = np.bincount(path[keep], minlength=count) < 2
    slow[path[1:][(np.diff(sheet) != 0) & same]] = True
    geometries = np.empty(count, dtype=object)
    for i in np.flatnonzero(slow).tolist():
        parts = split_at_antimeridian(vertices[offsets[i] : offsets[i + 1]])
        if len(parts) == 1:
            geometries[i] = shapely.linestrings(parts[0])
        else:
            geometries[i] = shapely.multilinestrings([shapely.linestrings(p) for p in parts])
    fast = keep & ~slow[path]
    if fast.any():
        shapely.linestrings(moved[fast], indices=path[fast], out=geometries)
    return list(geometries)


def _unwrapped(lon: np.ndarray, lat: np.ndarray) -> np.ndarray:
    return np.column_stack([np.unwrap(np.asarray(lon, dtype=float), period=360.0), lat])


def _frame(table: pd.DataFrame, geometry, *, geometry_type: str | None = None):
    """A GeoDataFrame in :data:`CRS`; ``geometry_type`` is kept (in ``attrs``) for writing the
    layer when it has no feature to tell the type from."""
    import geopandas

    table = table.copy()
    for column in table.columns:
        values = table[column]
        if (
            len(values)
            and values.dtype == object
            and values.map(lambda v: v is None or isinstance(v, bool | np.bool_)).all()
        ):
            table[column] = values.astype("boolean")  # written as integers, empty where unknown
    frame = geopandas.GeoDataFrame(table, geometry=geometry, crs=CRS)
    if geometry_type is not None:
        frame.attrs["geometry_type"] = geometry_type
    return frame


def station_layer(survey: Survey):
    """Every input row as a point (empty where the row has no usable coordinate)."""
    import shapely

    stations = survey.stations.reset_index(drop=True)
    lon = stations["lon"].to_numpy(dtype=float)
    lat = stations["lat"].to_numpy(dtype=float)
    usable = np.isfinite(lon) & np.isfinite(lat) & (np.abs(lat) <= 90.0) & (np.abs(lon) <= 180.0)
    points = shapely.points(np.where(usable, lon, np.nan), np.where(usable, lat, np.nan))
    points[~usable] = shapely.Point()
    return _frame(stations, points)


def segment_layer(segments: Segments, audit: SpacingAudit):
    """One line per segment through its stations, with the spacing-audit attributes."""
    paths = [_unwrapped(s.lon, s.lat) for s in segments]
    return _frame(audit.segments.reset_index(drop=True), _lines(paths))


def window_layer(windows: WindowTable, budget: AliasBudget | None = None):
    """One line per window along its extent, with every window attribute, and the budget's
    columns when ``budget`` was drawn up for a target wavelength
    (:func:`profiles.infill.window_frame`)."""
    frame = window_frame(windows, budget)
    frame["reasons"] = [",".join(r) for r in frame["reasons"]]
    vertices, offsets = track_path_vertices(windows.tracks, windows.track, windows.start, windows.end)
    return _frame(frame, _lines_from(vertices, offsets))


def warning_layer(windows: WindowTable):
    """One point per aliasing reason of every window at risk, at the window's centre."""
    import shapely

    table = windows.aliasing_table()
    index = table["window"].to_numpy()
    extra = {
        "local_spacing_km": windows.local_spacing[index] / 1e3,
        "local_spacing_max_km": windows.local_spacing_max[index] / 1e3,
        "local_nyquist_km": windows.local_nyquist[index] / 1e3,
        "dominant_wavelength_km": windows.dominant_wavelength[index] / 1e3,
        "rolloff_share": windows.rolloff_share[index],
    }
    table = table.assign(**extra)
    points = shapely.points(table["lon"].to_numpy(dtype=float), table["lat"].to_numpy(dtype=float))
    return _frame(table, points)


def infill_layer(infill: InfillStretches):
    """One line per infill stretch through its stations, with :data:`profiles.infill.INFILL_COLUMNS`."""
    return _frame(infill.to_frame(), _lines(list(infill.paths)), geometry_type="LineString")


def write_layers(path: str | Path, layers: dict) -> Path:
    """Write GeoDataFrames into one GeoPackage at ``path``, one layer each, in order.

    A layer without features is written with the geometry type its builder recorded, so that
    it opens as a line (or point) layer rather than one of unknown type.
    """
    path = Path(path)
    for name, frame in layers.items():
        options = {}
        if frame.empty and "geometry_type" in frame.attrs:
            options["geometry_type"] = frame.attrs["geometry_type"]
        frame.to_file(path, layer=name, driver="GPKG", engine="pyogrio", **options)
    return path


def write_geopackage(
    path: str | Path,
    *,
    survey: Survey,
    segments: Segments,
    audit: SpacingAudit,
    windows: WindowTable,
) -> Path:
    """Write the layers of :data:`LAYERS` into one GeoPackage at ``path``.

    With an aliasing budget for a target wavelength (``audit.budget``, from
    :func:`profiles.spacing.audit_spacing` with a field and a shortest wavelength), the
    ``windows`` layer carries the budget's columns and the ``infill`` layer is written;
    otherwise there is no ``infill`` layer.

    ``path`` is written directly; callers that need an atomic write pass a temporary path
    (see :meth:`profiles.outputs.OutputFolder.with_writer`).
    """
    layers = {
        "stations": station_layer(survey),
        "segments": segment_layer(segments, audit),
        "windows": window_layer(windows, audit.budget),
        "warnings": warning_layer(windows),
    }
    infill = infill_stretches(audit.budget, segments)
    if infill is not None:
        layers["infill"] = infill_layer(infill)
    return write_layers(path, layers)
