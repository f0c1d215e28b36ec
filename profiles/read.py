"""Reading survey files into a :class:`~profiles.survey.Survey`.

Formats: delimited text (CSV, TSV, semicolon or pipe separated; delimiter detected; a header
row is required), and point layers of GeoPackage, GeoJSON, Shapefile and GeoParquet. Every
input row becomes a station with a status (see :mod:`profiles.survey`); nothing is lost
silently.

Coordinates
-----------
Longitude and latitude are in degrees; longitudes in [0, 360) are accepted and brought to
[-180, 180). With ``crs=`` the coordinate columns hold projected easting and northing, which are
converted to geographic coordinates (EPSG:4326, ``always_xy=True``) before any distance is
computed. A table whose "degrees" are clearly not degrees is refused with a hint to give the CRS.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np
import pandas as pd

from .columns import ColumnNames, find_column
from .errors import InputError
from .survey import BASE_COLUMNS, DROPPED, USED, Survey

TEXT_SUFFIXES = {".csv", ".tsv", ".txt", ".dat", ".xyz"}
VECTOR_SUFFIXES = {".gpkg", ".geojson", ".json", ".shp", ".parquet", ".geoparquet"}
_DELIMITERS = (",", "\t", ";", "|")


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
        Fields to analyse. Rows missing a value in one of them are dropped ("missing value in
        F"). By default every numeric column other than the coordinates, line and time is a
        field, and empty cells are kept as missing values.
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
    suffix = path.suffix.lower()
    if suffix in VECTOR_SUFFIXES:
        table, rows, has_xy = _read_vector(path, layer=layer, crs=crs)
    else:
        table, rows = _read_text(path)
        has_xy = False
    columns = columns or ColumnNames()
    return _from_table(
        table,
        rows,
        source=source,
        columns=columns,
        fields=fields,
        crs=crs,
        from_geometry=has_xy,
        stem=path.stem,
    )


def read_surveys(paths, **options) -> Survey:
    """Read several survey files into one survey (see :func:`read_survey` for options).

    Line ids that occur in more than one file are kept apart by prefixing the file stem.
    """
    surveys = [read_survey(p, **options) for p in paths]
    if len(surveys) == 1:
        return surveys[0]
    owners: dict[str, str] = {}
    clash = set()
    for survey in surveys:
        for line in pd.unique(survey.stations["line"]):
            if line in owners and owners[line] != survey.sources[0]:
                clash.add(line)
            owners.setdefault(line, survey.sources[0])
    tables, warnings = [], []
    for survey in surveys:
        table = survey.stations.copy()
        if clash:
            stem = Path(survey.sources[0]).stem
            rename = table["line"].isin(clash)
            table.loc[rename, "line"] = stem + ":" + table.loc[rename, "line"]
        tables.append(table)
        warnings.extend(survey.warnings)
    if clash:
        warnings.append(
            f"line ids found in more than one file were prefixed with the file name: "
            f"{', '.join(sorted(clash))}"
        )
    fields = tuple(dict.fromkeys(f for s in surveys for f in s.fields))
    stations = pd.concat(tables, ignore_index=True)
    sources = tuple(s for survey in surveys for s in survey.sources)
    return Survey(stations, fields, sources, tuple(warnings))


# --- text files -------------------------------------------------------------------------------


def _read_text(path: Path) -> tuple[pd.DataFrame, np.ndarray]:
    """Read a delimited text file; return the table (all cells as text) and file line numbers."""
    source = str(path)
    try:
        raw = path.read_bytes()
    except OSError as error:
        raise InputError(f"{source}: cannot be read ({error.strerror or error})") from None
    if not raw.strip():
        raise InputError(f"{source}: file is empty; expected a header row and data rows")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        try:
            text = raw.decode("latin-1")
        except UnicodeDecodeError:  # pragma: no cover - latin-1 decodes every byte
            raise InputError(f"{source}: not a text file") from None
    if "\x00" in text[:4096]:
        raise InputError(f"{source}: binary content; expected a delimited text file with a header row")
    lines = text.splitlines()
    first = next((i for i, line in enumerate(lines) if line.strip()), None)
    header = lines[first]
    delimiter = _detect_delimiter(header, lines[first + 1 : first + 50])
    names = _split(header, delimiter)
    if all(_is_number(name) for name in names if name.strip()):
        raise InputError(
            f"{source}: line {first + 1} holds numbers, not column names; "
            f"expected a header row such as 'line,lon,lat,depth_m'"
        )
    if first + 1 >= len(lines) or not any(line.strip() for line in lines[first + 1 :]):
        raise InputError(f"{source}: has a header row but no data rows")
    try:
        table = pd.read_csv(
            io.StringIO("\n".join(lines[first:])),
            sep=r"\s+" if delimiter == " " else delimiter,
            dtype=str,
            keep_default_na=False,
            skip_blank_lines=False,
            engine="python" if delimiter == " " else "c",
        )
    except pd.errors.ParserError as error:
        raise InputError(
            f"{source}: rows do not match the header ({_parser_detail(error)}); "
            f"expected {len(names)} columns separated by {_name(delimiter)}"
        ) from None
    table.columns = [str(c).strip() for c in table.columns]
    rows = np.arange(len(table)) + first + 2  # file line numbers, header at first + 1
    return table, rows


def _detect_delimiter(header: str, sample: list[str]) -> str:
    """Pick the delimiter that splits the header and the sample rows consistently."""
    best, best_score = None, 0
    for delimiter in _DELIMITERS:
        count = len(_split(header, delimiter))
        if count < 2:
            continue
        data = [line for line in sample if line.strip()]
        consistent = sum(len(_split(line, delimiter)) == count for line in data)
        score = count * 1000 + consistent
        if consistent >= max(1, len(data) // 2) and score > best_score:
            best, best_score = delimiter, score
    if best is None:
        return " " if len(header.split()) >= 2 else ","
    return best


def _split(line: str, delimiter: str) -> list[str]:
    if delimiter == " ":
        return line.split()
    return next(csv.reader([line], delimiter=delimiter))


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _name(delimiter: str) -> str:
    return {",": "commas", "\t": "tabs", ";": "semicolons", "|": "pipes", " ": "spaces"}[delimiter]


def _parser_detail(error: Exception) -> str:
    message = str(error).strip().splitlines()[-1]
    return message.replace("Error tokenizing data. C error: ", "")


# --- GIS files --------------------------------------------------------------------------------


def _read_vector(path: Path, *, layer: str | None, crs: str | None):
    """Read a point layer; return (table with x/y columns, feature numbers, True)."""
    import pyogrio

    source = str(path)
    try:
        if path.suffix.lower() in {".parquet", ".geoparquet"}:
            import geopandas

            frame = geopandas.read_parquet(path)
        else:
            frame = pyogrio.read_dataframe(path, layer=layer)
    except Exception as error:  # GDAL and arrow raise many types; all mean "unreadable"
        detail = str(error).strip().splitlines()[0] if str(error).strip() else type(error).__name__
        raise InputError(f"{source}: cannot be read as a GIS layer ({detail})") from None
    if len(frame) == 0:
        raise InputError(f"{source}: the layer has no features")
    geometry = frame.geometry
    kinds = set(geometry.geom_type.dropna())
    if kinds - {"Point"}:
        raise InputError(
            f"{source}: the layer holds {', '.join(sorted(kinds))} geometries; "
            f"expected points (one per station)"
        )
    table = pd.DataFrame(frame.drop(columns=frame.geometry.name))
    empty = geometry.isna() | geometry.is_empty
    x = np.where(empty, np.nan, geometry.x.where(~empty))
    y = np.where(empty, np.nan, geometry.y.where(~empty))
    layer_crs = frame.crs
    if layer_crs is not None and not layer_crs.is_geographic:
        x, y = _to_geographic(x, y, layer_crs, source)
    elif layer_crs is None and crs is not None:
        x, y = _to_geographic(x, y, crs, source)
    table["__lon__"], table["__lat__"] = x, y
    return table, np.arange(1, len(table) + 1), True


def _to_geographic(x, y, crs, source: str):
    from pyproj import CRS, Transformer
    from pyproj.exceptions import CRSError

    try:
        crs_object = CRS.from_user_input(crs)
    except CRSError:
        raise InputError(f"{source}: unknown CRS {crs!r}; expected e.g. EPSG:32735") from None
    transformer = Transformer.from_crs(crs_object, "EPSG:4326", always_xy=True)
    lon, lat = transformer.transform(np.asarray(x, dtype=float), np.asarray(y, dtype=float))
    lon = np.where(np.isfinite(lon), lon, np.nan)
    lat = np.where(np.isfinite(lat), lat, np.nan)
    return lon, lat


# --- from a table to stations -----------------------------------------------------------------


def _from_table(
    table: pd.DataFrame,
    rows: np.ndarray,
    *,
    source: str,
    columns: ColumnNames,
    fields,
    crs,
    from_geometry: bool,
    stem: str,
) -> Survey:
    names = list(table.columns)
    visible = [n for n in names if n not in ("__lon__", "__lat__")]
    notes = []
    if from_geometry:
        lon_name, lat_name = "__lon__", "__lat__"
    elif crs is not None:
        lon_name = find_column(visible, "x", columns.lon, source=source, required=True)
        lat_name = find_column(visible, "y", columns.lat, source=source, required=True)
    else:
        lon_name = find_column(visible, "lon", columns.lon, source=source, required=True)
        lat_name = find_column(visible, "lat", columns.lat, source=source, required=True)
    line_name = find_column(visible, "line", columns.line, source=source, required=False)
    time_name = find_column(visible, "time", columns.time, source=source, required=False)
    if line_name is None:
        notes.append(f"{source}: no line column; all stations form one line named {stem!r}")
    taken = {lon_name, lat_name, line_name, time_name, "__lon__", "__lat__"}
    candidates = [n for n in visible if n not in taken]
    if fields is None:
        chosen = tuple(n for n in candidates if _mostly_numeric(table[n]))
        required = False
    else:
        chosen = tuple(_match_field(f, candidates, source) for f in fields)
        required = True

    frame = pd.DataFrame(index=table.index)
    frame["line"] = (
        table[line_name].astype(str).str.strip()
        if line_name is not None
        else pd.Series(stem, index=table.index)
    )
    frame["lon"] = table[lon_name]
    frame["lat"] = table[lat_name]
    if time_name is not None:
        frame["time"] = table[time_name]
    for name in chosen:
        frame[name] = table[name]
    blank = _blank_rows(table) if not from_geometry else np.zeros(len(table), bool)
    survey = assemble_stations(
        frame,
        source=source,
        rows=rows,
        fields=chosen,
        has_time=time_name is not None,
        required_fields=required,
        blank=blank,
        projected=(crs is not None and not from_geometry),
        crs=crs,
        coordinate_names=(lon_name, lat_name),
    )
    return survey.with_warnings(*notes)


def _match_field(name: str, candidates: list[str], source: str) -> str:
    lowered = {c.lower(): c for c in candidates}
    if name.lower() in lowered:
        return lowered[name.lower()]
    import difflib

    close = difflib.get_close_matches(name.lower(), list(lowered), n=3, cutoff=0.4)
    hint = f"; closest: {', '.join(lowered[c] for c in close)}" if close else ""
    raise InputError(
        f"{source}: no field column {name!r}; fields found: {', '.join(candidates) or 'none'}{hint}"
    )


def _mostly_numeric(column: pd.Series) -> bool:
    if pd.api.types.is_numeric_dtype(column):
        return True
    text = column.astype(str).str.strip()
    present = text[text != ""]
    if present.empty:
        return False
    parsed = pd.to_numeric(present, errors="coerce")
    return bool(parsed.notna().mean() >= 0.5)


def _blank_rows(table: pd.DataFrame) -> np.ndarray:
    if table.empty:
        return np.zeros(0, bool)
    text = table.astype(str).apply(lambda c: c.str.strip())
    return ((text == "") | (text.isin(["nan", "None"]) & table.isna())).all(axis=1).to_numpy()


def _numbers(column: pd.Series) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Parse a column: (values, missing mask, non-numeric mask)."""
    if pd.api.types.is_numeric_dtype(column):
        values = column.to_numpy(dtype=float)
        return values, np.isnan(values), np.zeros(len(values), bool)
    text = column.astype(str).str.strip()
    missing = (text == "").to_numpy() | column.isna().to_numpy()
    values = pd.to_numeric(text.where(~missing, None), errors="coerce").to_numpy(dtype=float)
    lowered = text.str.lower()
    nan_words = lowered.isin(["nan", "na", "n/a", "null", "none", "-"]).to_numpy()
    missing |= nan_words
    nonnumeric = np.isnan(values) & ~missing
    return values, missing, nonnumeric


def _times(column: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    """Parse times to seconds since 1970 UTC; return (seconds, unreadable mask)."""
    numeric, missing, nonnumeric = _numbers(column)
    if not nonnumeric.any():
        return numeric, missing
    text = column.astype(str).str.strip()
    parsed = pd.to_datetime(text.where(text != "", None), utc=True, errors="coerce", format="ISO8601")
    seconds = (parsed - pd.Timestamp("1970-01-01", tz="UTC")).dt.total_seconds().to_numpy(dtype=float)
    return seconds, np.isnan(seconds)


def assemble_stations(
    frame: pd.DataFrame,
    *,
    source: str,
    rows: np.ndarray,
    fields: tuple[str, ...],
    has_time: bool,
    required_fields: bool = False,
    blank: np.ndarray | None = None,
    projected: bool = False,
    crs: str | None = None,
    coordinate_names: tuple[str, str] = ("lon", "lat"),
) -> Survey:
    """Validate a table with columns line, lon, lat, [time], fields; assign statuses.

    The checks, in order (the first that fails names the reason): blank line; missing line
    id; missing or non-numeric coordinate; coordinate out of range; unreadable time; then,
    per field, non-numeric value, non-finite value, and (for fields asked for) missing value.
    """
    n = len(frame)
    reason = np.full(n, "", dtype=object)
    if blank is None:
        blank = np.zeros(n, bool)

    def mark(mask, text):
        fresh = mask & (reason == "")
        reason[fresh] = text

    mark(blank, "blank line")
    line = frame["line"].astype(str).str.strip().to_numpy(dtype=object)
    mark(np.isin(line, ["", "nan", "None"]), "missing line id")

    lon, lon_missing, lon_text = _numbers(frame["lon"])
    lat, lat_missing, lat_text = _numbers(frame["lat"])
    mark(lon_missing | lat_missing, "missing coordinate")
    mark(lon_text | lat_text, "non-numeric coordinate")
    mark(~np.isfinite(lon) | ~np.isfinite(lat), "non-finite coordinate")
    if projected:
        finite = np.isfinite(lon) & np.isfinite(lat) & (reason == "")
        lon, lat = _to_geographic(lon, lat, crs, source)
        mark(finite & ~(np.isfinite(lon) & np.isfinite(lat)), "coordinate outside the CRS area")
    else:
        _check_degrees(lon, lat, reason == "", source, coordinate_names, rows)
    out_of_range = (np.abs(lat) > 90) | (lon < -180) | (lon >= 360)
    mark(out_of_range, "coordinate out of range")
    lon = np.where(np.isfinite(lon), ((lon + 180.0) % 360.0) - 180.0, lon)

    if has_time:
        time, unreadable = _times(frame["time"])
        mark(unreadable, "unreadable time")
    else:
        time = np.full(n, np.nan)

    values = {}
    for name in fields:
        column, missing, text = _numbers(frame[name])
        mark(text, f"non-numeric value in {name}")
        mark(np.isinf(column), f"non-finite value in {name}")
        if required_fields:
            mark(missing, f"missing value in {name}")
        values[name] = np.where(np.isfinite(column), column, np.nan)

    status = np.where(reason == "", USED, DROPPED).astype(object)
    stations = pd.DataFrame(
        {
            "source": source,
            "row": np.asarray(rows, dtype=np.int64),
            "line": line.astype(str),
            "lon": np.where(reason == "", lon, np.where(np.isfinite(lon), lon, np.nan)),
            "lat": lat,
            "time": time,
            "status": status,
            "reason": reason,
        }
    )
    for name in fields:
        stations[name] = values[name]
    stations = _order(stations, has_time)
    assert tuple(stations.columns[: len(BASE_COLUMNS)]) == BASE_COLUMNS
    survey = Survey(stations.reset_index(drop=True), tuple(fields), (source,), ())
    if not (survey.stations["status"] == USED).any():
        accounting = survey.accounting
        reasons = ", ".join(f"{k}: {v}" for k, v in sorted(accounting.dropped.items()))
        raise InputError(f"{source}: no usable rows ({accounting.read} read; {reasons})")
    return survey


def _check_degrees(lon, lat, valid, source, names, rows) -> None:
    """Refuse coordinates that are clearly projected or swapped (most values out of range)."""
    if not valid.any():
        return
    lo, la = lon[valid], lat[valid]
    lat_bad = np.abs(la) > 90
    lon_bad = (lo < -180) | (lo >= 360)
    if lat_bad.mean() > 0.5 or lon_bad.mean() > 0.5:
        big = max(np.nanmax(np.abs(lo)), np.nanmax(np.abs(la)))
        if big > 360:
            raise InputError(
                f"{source}: columns {names[0]!r}/{names[1]!r} hold values up to "
                f"{big:.0f}, which are not degrees; these look like projected "
                f"coordinates: give their CRS with --crs (e.g. EPSG:32735)"
            )
        if lat_bad.mean() > 0.5 and not np.any(np.abs(lo) > 90):
            first = int(rows[np.flatnonzero(valid)[np.flatnonzero(lat_bad)[0]]])
            raise InputError(
                f"{source}: row {first}: latitude {names[1]!r} beyond 90 degrees while "
                f"every longitude is within 90: the columns look swapped; name them "
                f"with --lon-column and --lat-column"
            )


def _order(stations: pd.DataFrame, has_time: bool) -> pd.DataFrame:
    """Order stations by line (first appearance), then time (where present), then file row."""
    codes, _ = pd.factorize(stations["line"], sort=False)
    keys = [stations["row"].to_numpy()]
    if has_time:
        keys.insert(0, np.nan_to_num(stations["time"].to_numpy(), nan=np.inf))
    keys.insert(0, codes)
    order = np.lexsort(tuple(reversed(keys)))
    return stations.iloc[order]
