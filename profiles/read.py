"""Reading survey files into a :class:`~profiles.survey.Survey`.

Formats: delimited text (CSV, TSV, semicolon, pipe or whitespace separated; see
:mod:`profiles.textfile`) and point layers of GeoPackage, GeoJSON, Shapefile and GeoParquet.
Every input row becomes a station with a status (see :mod:`profiles.survey`); the checks are
in :mod:`profiles.stations`; nothing is lost silently. ``docs/input-handling.md`` states every
rule for users.

Coordinates
-----------
Longitude and latitude are in degrees; longitudes in [0, 360] are accepted and brought to
[-180, 180). With ``crs=`` the coordinate columns hold projected easting and northing, which are
converted to geographic coordinates (EPSG:4326, ``always_xy=True``) before any distance is
computed. A table whose "degrees" are clearly not degrees is refused with a hint to give the CRS.
A GIS layer that declares its CRS is converted from it.
"""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np
import pandas as pd

from .columns import ColumnNames
from .errors import InputError
from .stations import RawTable, assemble_stations, is_geographic, table_to_survey, to_geographic
from .survey import Survey
from .textfile import read_text

__all__ = ["TEXT_SUFFIXES", "VECTOR_SUFFIXES", "assemble_stations", "read_survey", "read_surveys"]

TEXT_SUFFIXES = {".csv", ".tsv", ".txt", ".dat", ".xyz"}
VECTOR_SUFFIXES = {".gpkg", ".geojson", ".json", ".shp", ".parquet", ".geoparquet"}


def read_survey(
    path: str | Path,
    *,
    columns: ColumnNames | None = None,
    fields: tuple[str, ...] | list[str] | None = None,
    crs: str | None = None,
    layer: str | None = None,
) -> Survey:
    """Read one survey file.

    Parameters
    ----------
    path : str or Path
        CSV/TSV, GeoPackage, GeoJSON, Shapefile or GeoParquet.
    columns : ColumnNames, optional
        Explicit names of the line, longitude, latitude and time columns; the rest are found
        through common aliases (case-insensitive).
    fields : sequence of str, optional
        Fields to analyse. Rows without a usable value in one of them (missing, not a number,
        not finite, a no-data marker or beyond physical bounds) are dropped with the reason.
        By default every numeric column other than the coordinates, line and time is a field,
        and unusable cells are kept as missing values (with a warning), the row staying in.
    crs : str, optional
        CRS of projected coordinates (e.g. ``"EPSG:32735"``); the coordinate columns are then
        easting and northing.
    layer : str, optional
        Layer of a multi-layer GIS file.

    Returns
    -------
    Survey
        Every input row with its status and reason.

    Raises
    ------
    InputError
        With one line naming the file, the row or column, and what was expected.
    """
    path = Path(path)
    source = str(path)
    if not path.exists():
        raise InputError(f"{source}: no such file")
    if path.is_dir():
        raise InputError(f"{source}: is a folder; expected a survey file")
    if not path.is_file():
        raise InputError(f"{source}: is not a regular file; expected a survey file")
    suffix = path.suffix.lower()
    if suffix in VECTOR_SUFFIXES:
        raw = _read_vector(path, layer=layer, crs=crs)
    else:
        if layer is not None:
            raise InputError(f"{source}: --layer applies to GIS files only; this is a text file")
        raw = read_text(path, line_column=(columns or ColumnNames()).line)
    return table_to_survey(raw, source=source, columns=columns or ColumnNames(), fields=fields, crs=crs)


def read_surveys(paths, **options) -> Survey:
    """Read several survey files into one survey (see :func:`read_survey` for options).

    Line ids that occur in more than one file are kept apart by prefixing the file stem.
    """
    paths = list(paths)
    if not paths:
        raise InputError("no survey file given")
    surveys = [read_survey(p, **options) for p in paths]
    if len(surveys) == 1:
        return surveys[0]
    resolved = [Path(p).resolve() for p in paths]
    repeated = sorted({str(p) for p, r in zip(paths, resolved, strict=True) if resolved.count(r) > 1})
    if repeated:
        raise InputError(f"{repeated[0]}: given more than once; every station would be counted twice")
    owners: dict[str, str] = {}
    clash = set()
    for survey in surveys:
        for line in pd.unique(survey.stations["line"]):
            if line in owners and owners[line] != survey.sources[0]:
                clash.add(line)
            owners.setdefault(line, survey.sources[0])
    tables, notes = [], []
    for survey in surveys:
        table = survey.stations.copy()
        if clash:
            stem = Path(survey.sources[0]).stem
            rename = table["line"].isin(clash)
            table.loc[rename, "line"] = stem + ":" + table.loc[rename, "line"]
        tables.append(table)
        notes.extend(survey.warnings)
    if clash:
        notes.append(
            f"line ids found in more than one file were prefixed with the file name: "
            f"{', '.join(sorted(clash))}"
        )
    fields = tuple(dict.fromkeys(f for s in surveys for f in s.fields))
    stations = pd.concat(tables, ignore_index=True)
    sources = tuple(s for survey in surveys for s in survey.sources)
    return Survey(stations, fields, sources, tuple(notes))


def _read_vector(path: Path, *, layer: str | None, crs: str | None) -> RawTable:
    """Read a point layer; coordinates go to the ``__lon__``/``__lat__`` columns."""
    import pyogrio

    source = str(path)
    notes: list[str] = []
    parquet = path.suffix.lower() in {".parquet", ".geoparquet"}
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            if parquet:
                import geopandas

                frame = geopandas.read_parquet(path)
            else:
                layer = _choose_layer(path, layer, source)
                frame = pyogrio.read_dataframe(path, layer=layer)
    except InputError:
        raise
    except Exception as error:  # GDAL and arrow raise many types; all mean "unreadable"
        raise InputError(f"{source}: cannot be read as a GIS layer ({_gis_detail(error)})") from None
    notes += [f"{source}: {str(w.message).splitlines()[0]}" for w in caught]
    if len(frame) == 0:
        raise InputError(f"{source}: the layer has no features; expected one point per station")
    if getattr(frame, "geometry", None) is None or frame.geometry.name not in frame:
        raise InputError(f"{source}: the layer has no geometry; expected one point per station")
    geometry = frame.geometry
    kinds = set(geometry.geom_type.dropna())
    if kinds - {"Point"}:
        raise InputError(
            f"{source}: the layer holds {', '.join(sorted(kinds))} geometries; "
            f"expected points (one per station)"
        )
    table = pd.DataFrame(frame.drop(columns=frame.geometry.name))
    empty = (geometry.isna() | geometry.is_empty).to_numpy()
    x = np.full(len(frame), np.nan)
    y = np.full(len(frame), np.nan)
    present = ~empty
    x[present] = geometry[present].x.to_numpy(dtype=float)
    y[present] = geometry[present].y.to_numpy(dtype=float)
    converted = False
    layer_crs = frame.crs
    if layer_crs is not None:
        if crs is not None:
            notes.append(f"{source}: the layer declares its CRS; --crs {crs} is not used for it")
        if not layer_crs.is_geographic:
            x, y = to_geographic(x, y, layer_crs, source)
            converted = True
    elif crs is not None and not is_geographic(crs, source):
        x, y = to_geographic(x, y, crs, source)
        converted = True
    table["__lon__"], table["__lat__"] = x, y
    reasons = np.full(len(table), "", dtype=object)
    return RawTable(table, np.arange(1, len(table) + 1), reasons, notes, {}, True, converted)


def _gis_detail(error: Exception) -> str:
    """The cause of a GIS reading error in a few words."""
    text = " ".join(str(error).split()) or type(error).__name__
    if "malformed" in text or "truncated" in text.lower():
        return "the file is damaged or truncated"
    if "not recognized as being in a supported file format" in text:
        return "not a format GDAL recognises"
    return text if len(text) <= 160 else text[:157] + "..."


def _choose_layer(path: Path, layer: str | None, source: str) -> str | None:
    """The layer to read: the one given, or the only one; refuse to guess among several."""
    import pyogrio

    layers = pyogrio.list_layers(path)
    names = [str(row[0]) for row in layers]
    described = ", ".join(f"{row[0]} ({row[1] or 'no geometry'})" for row in layers)
    if layer is not None:
        if layer not in names:
            raise InputError(f"{source}: no layer {layer!r}; layers: {described or 'none'}")
        return layer
    if len(names) > 1:
        raise InputError(f"{source}: has {len(names)} layers ({described}); choose one with --layer")
    return names[0] if names else None
