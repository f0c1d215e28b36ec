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
cut, the layer holds MultiLineStrings throughout (in the GeoPackage; a GeoParquet file keeps
each line's own type).

The GeoPackage is written through pyogrio to a temporary name and renamed into place
(:meth:`profiles.outputs.OutputFolder.with_writer`). geopandas, shapely and pyogrio are
imported here only, so that the numerical core never loads them.

GeoParquet (the parts of ``profiles batch``): :func:`segment_lines` and :func:`window_lines`
give the same lines as WKB, encoded from the vertex arrays without building shapely
geometries (:func:`lines_wkb`), and :func:`geoparquet_table` puts them with typed columns into
a pyarrow table that holds what ``geopandas.GeoDataFrame.to_parquet`` would write
(GeoParquet 1.1.0 metadata, pandas dtypes, ``DataFrame.attrs``); :func:`write_geoparquet`
writes it.
"""

from __future__ import annotations

import functools
import json
import warnings
from dataclasses import dataclass
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


def _ragged(paths: list[np.ndarray]) -> tuple[np.ndarray, np.ndarray]:
    """Paths laid end to end: ``(vertices, offsets)``, path i is ``vertices[offsets[i] : offsets[i + 1]]``."""
    lengths = np.array([len(path) for path in paths], dtype=np.intp)
    offsets = np.zeros(lengths.size + 1, dtype=np.intp)
    np.cumsum(lengths, out=offsets[1:])
    vertices = np.concatenate(paths).reshape(-1, 2) if paths else np.zeros((0, 2))
    return np.asarray(vertices, dtype=float), offsets


def _lines(paths: list[np.ndarray]):
    """Shapely geometries of paths: LineStrings, or MultiLineStrings where a path is cut."""
    return _lines_from(*_ragged(paths))


def _on_one_sheet(vertices: np.ndarray, offsets: np.ndarray):
    """What :func:`_lines_from` and :func:`lines_wkb` build at once, and what they cut one by one.

    A path that stays on one sheet (its longitudes within one turn [-180 + 360 s, 180 + 360 s))
    is what :func:`split_at_antimeridian` makes of it: moved by s turns, repeated vertices
    dropped. Returns ``(moved, fast, slow, kept)``: the vertices moved by their sheet's turns,
    the vertices kept of the paths built at once (``fast``), the paths that change sheet or
    would keep fewer than two vertices (``slow``), cut one by one, and the number of vertices
    kept of every path.
    """
    count = offsets.size - 1
    lon = vertices[:, 0]
    first = np.zeros(lon.size, dtype=bool)  # the first vertex of a path
    first[offsets[:-1][np.diff(offsets) > 0]] = True
    if lon.size and lon.min() >= -180.0 and lon.max() < 180.0:
        moved, crossing = vertices, None  # all on sheet 0: moving by no turn changes no bit
    else:
        sheet = np.floor((lon + 180.0) / 360.0).astype(np.int64)
        moved = np.column_stack([lon - 360.0 * sheet, vertices[:, 1] - 0.0])
        crossing = (np.diff(sheet) != 0) & ~first[1:]
    keep = first.copy()
    step = np.diff(moved, axis=0) != 0
    keep[1:] |= step[:, 0] | step[:, 1]  # a path's first vertex, and every vertex that moves
    running = np.zeros(lon.size + 1, dtype=np.intp)
    np.cumsum(keep, out=running[1:])
    kept = running[offsets[1:]] - running[offsets[:-1]]
    slow = kept < 2
    if crossing is not None and crossing.any():
        path = np.repeat(np.arange(count), np.diff(offsets))
        slow[path[1:][crossing]] = True
    fast = keep if not slow.any() else keep & ~np.repeat(slow, np.diff(offsets))
    return moved, fast, slow, kept


def _cut(path: np.ndarray):
    """The shapely line of one path: a LineString, or a MultiLineString cut at the antimeridian."""
    import shapely

    parts = split_at_antimeridian(path)
    if len(parts) == 1:
        return shapely.linestrings(parts[0])
    return shapely.multilinestrings([shapely.linestrings(p) for p in parts])


def _lines_from(vertices: np.ndarray, offsets: np.ndarray):
    """:func:`_lines` of the paths ``vertices[offsets[i] : offsets[i + 1]]``, built at once.

    The paths that stay on one sheet go into one ``shapely.linestrings(..., indices=...)``
    call; only paths that change sheet (or would keep fewer than two vertices) are cut one by
    one (:func:`_on_one_sheet`).
    """
    import shapely

    moved, fast, slow, _ = _on_one_sheet(vertices, offsets)
    geometries = np.empty(offsets.size - 1, dtype=object)
    for i in np.flatnonzero(slow).tolist():
        geometries[i] = _cut(vertices[offsets[i] : offsets[i + 1]])
    if fast.any():
        path = np.repeat(np.arange(offsets.size - 1), np.diff(offsets))
        shapely.linestrings(moved[fast], indices=path[fast], out=geometries)
    return list(geometries)


#: Names of the geometry types by shapely's type id (a LinearRing is written as a LineString),
#: as GeoParquet's ``geometry_types`` lists them.
_TYPE_NAMES = ("Point", "LineString", "LineString", "Polygon", "MultiPoint", "MultiLineString",
               "MultiPolygon", "GeometryCollection")
#: Header of a 2D LineString in WKB (ISO 13249-3 / OGC Simple Features 06-103r4, 8.2): byte
#: order 1 (little endian), type 2 (LineString), number of points; then x, y as doubles.
_WKB_HEADER = np.dtype([("order", "u1"), ("type", "<u4"), ("points", "<u4")])


@dataclass(frozen=True)
class LineColumn:
    """Lines as the WKB geometry column of a GeoParquet file.

    Attributes
    ----------
    wkb : pyarrow.BinaryArray
        One WKB geometry per path, as ``shapely.to_wkb`` writes the lines of :func:`_lines`
        (2D, little endian).
    geometry_types : tuple of str
        The types present (``LineString``, ``MultiLineString``), sorted.
    bbox : tuple of float or None
        (min lon, min lat, max lon, max lat) of every vertex; None without a vertex.
    """

    wkb: object
    geometry_types: tuple[str, ...]
    bbox: tuple[float, float, float, float] | None

    def __len__(self) -> int:
        return len(self.wkb)


def lines_wkb(vertices: np.ndarray, offsets: np.ndarray) -> LineColumn:
    """The lines of :func:`_lines_from` as WKB, encoded at once without building them.

    The paths that stay on one sheet are written as LineStrings straight from the vertex
    array: a 9-byte header per path joined to its run of coordinates; the paths cut at the
    antimeridian (few) are built with shapely and encoded with ``shapely.to_wkb``.
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    vertices = np.asarray(vertices, dtype=float)
    moved, fast, slow, kept = _on_one_sheet(vertices, offsets)
    rows = np.flatnonzero(~slow)
    coords = np.ascontiguousarray(moved if fast.all() else moved[fast], dtype="<f8")
    points = kept[rows]
    header = np.empty(rows.size, dtype=_WKB_HEADER)
    header["order"], header["type"], header["points"] = 1, 2, points
    head = _binary(header.view(np.uint8), np.arange(rows.size + 1, dtype=np.int64) * _WKB_HEADER.itemsize)
    ends = np.zeros(rows.size + 1, dtype=np.int64)
    np.cumsum(points * 16, out=ends[1:])
    body = _binary(coords.reshape(-1).view(np.uint8), ends)
    wkb = pc.binary_join_element_wise(head, body, pa.scalar(b"", pa.large_binary()))
    types = {"LineString"} if rows.size else set()
    extents = [_extent(coords)] if coords.size else []
    cut = np.flatnonzero(slow)
    if cut.size:
        import shapely

        lines = np.array([_cut(vertices[offsets[i] : offsets[i + 1]]) for i in cut.tolist()], dtype=object)
        types |= {_TYPE_NAMES[k] for k in shapely.get_type_id(lines).tolist()}
        extents.extend(shapely.bounds(lines))
        wkb = pa.concat_arrays([wkb, pa.array(shapely.to_wkb(lines, flavor="iso"), pa.large_binary())])
        wkb = wkb.take(np.argsort(np.concatenate([rows, cut]), kind="stable"))
    bbox = None
    if extents:  # as geopandas' total_bounds: NaN (an empty line's bounds) left out
        extents = np.array(extents)
        low, high = np.fmin.reduce(extents[:, :2], axis=0), np.fmax.reduce(extents[:, 2:], axis=0)
        if np.isfinite(low).all() and np.isfinite(high).all():
            bbox = (float(low[0]), float(low[1]), float(high[0]), float(high[1]))
    return LineColumn(wkb.cast(pa.binary()), tuple(sorted(types)), bbox)


def _extent(coords: np.ndarray) -> list[float]:
    """[min lon, min lat, max lon, max lat] of vertices (k, 2), NaN left out (one column at a
    time: a reduction along the long axis of a (k, 2) array is many times slower)."""
    columns = (coords[:, 0], coords[:, 1])
    extent = [*(c.min() for c in columns), *(c.max() for c in columns)]
    if np.isnan(extent).any():
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # a column of NaN only
            extent = [*(np.nanmin(c) for c in columns), *(np.nanmax(c) for c in columns)]
    return [float(v) for v in extent]


def paths_wkb(paths: list[np.ndarray]) -> LineColumn:
    """:func:`lines_wkb` of paths given one by one (each of shape (k, 2), lon and lat)."""
    return lines_wkb(*_ragged(paths))


def _binary(data: np.ndarray, offsets: np.ndarray):
    """A pyarrow large binary array over ``data`` (bytes) cut at ``offsets``, without copying."""
    import pyarrow as pa

    return pa.LargeBinaryArray.from_buffers(
        pa.large_binary(), offsets.size - 1, [None, pa.py_buffer(offsets), pa.py_buffer(data)]
    )


def _unwrapped(lon: np.ndarray, lat: np.ndarray) -> np.ndarray:
    """(lon, lat) with longitudes made continuous by ``numpy.unwrap(period=360)``, which leaves
    a path without a step of 180 degrees or more as ``p[0], p[1:] + 0.0``: so done there."""
    lon = np.asarray(lon, dtype=float)
    if lon.size > 1 and (np.abs(np.diff(lon)) < 180.0).all():
        continuous = lon + 0.0
        continuous[0] = lon[0]
    else:
        continuous = np.unwrap(lon, period=360.0)
    return np.column_stack([continuous, lat])


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


def _segment_paths(segments: Segments) -> list[np.ndarray]:
    return [_unwrapped(s.lon, s.lat) for s in segments]


def segment_layer(segments: Segments, audit: SpacingAudit):
    """One line per segment through its stations, with the spacing-audit attributes."""
    return _frame(audit.segments.reset_index(drop=True), _lines(_segment_paths(segments)))


def segment_lines(segments: Segments) -> LineColumn:
    """The lines of :func:`segment_layer` as a WKB column (:func:`lines_wkb`)."""
    return paths_wkb(_segment_paths(segments))


def _window_paths(windows: WindowTable) -> tuple[np.ndarray, np.ndarray]:
    return track_path_vertices(windows.tracks, windows.track, windows.start, windows.end)


def window_attributes(windows: WindowTable, budget: AliasBudget | None = None) -> pd.DataFrame:
    """The attributes of :func:`window_layer`: :func:`profiles.infill.window_frame` with
    ``reasons`` as comma-separated text (empty where there is none)."""
    frame = window_frame(windows, budget)
    frame["reasons"] = [",".join(r) for r in frame["reasons"]]
    return frame


def window_layer(windows: WindowTable, budget: AliasBudget | None = None):
    """One line per window along its extent, with every window attribute, and the budget's
    columns when ``budget`` was drawn up for a target wavelength
    (:func:`profiles.infill.window_frame`)."""
    return _frame(window_attributes(windows, budget), _lines_from(*_window_paths(windows)))


def window_lines(windows: WindowTable) -> LineColumn:
    """The lines of :func:`window_layer` as a WKB column (:func:`lines_wkb`)."""
    return lines_wkb(*_window_paths(windows))


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


# --- GeoParquet -----------------------------------------------------------------------------------

#: Version of the GeoParquet specification whose metadata the parts carry
#: (https://geoparquet.org/releases/v1.1.0/).
GEOPARQUET_VERSION = "1.1.0"
#: Name of the geometry column.
GEOMETRY = "geometry"


def geoparquet_table(columns: dict, kinds: dict[str, str], lines: LineColumn, *, attrs: dict | None = None):
    """A pyarrow table of typed columns and a WKB line column, with GeoParquet metadata.

    It holds what ``geopandas.GeoDataFrame.to_parquet`` writes for a frame of these columns cast
    to ``kinds`` with the lines as its geometry in :data:`CRS` (``attrs`` as its
    ``DataFrame.attrs``), so that ``geopandas.read_parquet`` gives that frame back, dtypes and
    ``attrs`` included, without the frame or the shapely geometries ever being built:

    - the columns as ``pyarrow.Table.from_pandas`` converts them (NaN and missing values
      null), with its ``pandas`` schema metadata, which restores the dtypes on reading;
    - ``geometry``: WKB, with the field metadata of the GeoArrow ``geoarrow.wkb`` extension type
      (the CRS as PROJJSON);
    - ``geo``: the GeoParquet metadata (``version``, ``primary_column``, and for the column
      ``encoding``, ``crs``, ``geometry_types`` and ``bbox``, the last left out when there is no
      line);
    - ``PANDAS_ATTRS``: ``attrs`` as JSON, where geopandas keeps ``DataFrame.attrs``.

    Parameters
    ----------
    columns : dict
        Column name -> values (a numpy array, a pandas Series or a list), in order.
    kinds : dict
        Column name -> pandas dtype name: ``float64``, ``int64``, ``Int64``, ``boolean`` or
        ``string``. The schema depends on the kinds only, so tables with and without rows
        have the same one.
    lines : LineColumn
        The geometry column, one line per row.
    attrs : dict, optional
        Metadata stored as ``DataFrame.attrs``.
    """
    import pyarrow as pa

    if list(columns) != list(kinds):
        raise ValueError(f"columns {list(columns)} and kinds {list(kinds)} differ")
    schema = _schema(tuple(kinds.items()))
    arrays = [_arrow_array(values, kinds[name], schema.field(name).type) for name, values in columns.items()]
    table = pa.Table.from_arrays([*arrays, lines.wkb], schema=schema)
    metadata = {**schema.metadata, b"geo": json.dumps(_geo_metadata(lines)).encode("utf-8")}
    if attrs:
        metadata[b"PANDAS_ATTRS"] = json.dumps(attrs).encode("utf-8")
    return table.replace_schema_metadata(metadata)


def write_geoparquet(path: str | Path, table) -> Path:
    """Write a table of :func:`geoparquet_table` to ``path`` (directly: callers that need an
    atomic write pass a temporary path, see :func:`profiles.outputs.write_with`).

    Snappy compression; dictionary encoding for the text columns only (numbers and WKB rarely
    repeat, and trying a dictionary for them costs time for nothing).
    """
    import pyarrow as pa
    import pyarrow.parquet as pq

    text = [field.name for field in table.schema if pa.types.is_large_string(field.type)]
    pq.write_table(table, path, compression="snappy", use_dictionary=text)
    return Path(path)


def _arrow_array(values, kind: str, arrow_type):
    """Values cast to a pandas dtype and converted as ``pyarrow.Table.from_pandas`` would."""
    import pyarrow as pa

    if isinstance(values, pd.Series) and values.dtype == kind and kind in ("float64", "int64"):
        values = values.to_numpy()
    if not (isinstance(values, np.ndarray) and values.dtype == kind):  # cast as DataFrame.astype
        values = pd.Series(values).astype(kind)
    return pa.array(values, type=arrow_type, from_pandas=True)


@functools.lru_cache(maxsize=16)
def _schema(kinds: tuple[tuple[str, str], ...]):
    """The Arrow schema (with its ``pandas`` metadata) of a frame of these dtypes with a WKB
    geometry column last, as geopandas converts it: the frame with the geometry column's
    values left empty, through ``pyarrow.Schema.from_pandas``, then the WKB field."""
    import pyarrow as pa

    frame = pd.DataFrame({name: pd.Series([], dtype=kind) for name, kind in kinds})
    frame[GEOMETRY] = None
    schema = pa.Schema.from_pandas(frame, preserve_index=False)
    extension = {"ARROW:extension:name": "geoarrow.wkb",
                 "ARROW:extension:metadata": json.dumps({"crs": _projjson()})}
    return schema.set(schema.get_field_index(GEOMETRY), pa.field(GEOMETRY, pa.binary(), metadata=extension))


def _geo_metadata(lines: LineColumn) -> dict:
    """The ``geo`` metadata of the GeoParquet specification (1.1.0, "File metadata")."""
    column = {"encoding": "WKB", "crs": _projjson(member_ids=False),
              "geometry_types": list(lines.geometry_types)}
    if lines.bbox is not None:
        column["bbox"] = list(lines.bbox)
    return {"primary_column": GEOMETRY, "columns": {GEOMETRY: column}, "version": GEOPARQUET_VERSION}


@functools.lru_cache(maxsize=1)
def _projjson_text() -> str:
    from pyproj import CRS as ProjCRS

    return ProjCRS.from_user_input(CRS).to_json()


def _projjson(*, member_ids: bool = True) -> dict:
    """:data:`CRS` as PROJJSON (a new dict each call). Without ``member_ids``, the members of
    the datum ensemble lose their ids, which older PROJ versions do not recognise (GeoParquet
    discussion 110; geopandas writes its ``geo`` metadata so)."""
    document = json.loads(_projjson_text())
    if not member_ids:
        _drop_member_ids(document)
    return document


def _drop_member_ids(document: dict) -> None:
    for key, value in document.items():
        if isinstance(value, dict):
            _drop_member_ids(value)
        elif key == "members" and isinstance(value, list):
            for member in value:
                member.pop("id", None)
