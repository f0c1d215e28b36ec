"""From a table as read to stations: choosing the columns, validating every row, and the
row statuses of :mod:`profiles.survey`.

The checks on a row, in order; the first that fails names the reason it is dropped:

1. a reason found while reading (``blank line``, ``repeated header``, ``wrong number of fields``);
2. ``blank line`` (every cell empty);
3. ``missing line id``;
4. ``missing coordinate``, ``non-numeric coordinate``, ``non-finite coordinate``;
5. ``coordinate outside the CRS area`` (projected coordinates that do not convert);
6. ``coordinate out of range`` (latitude beyond +-90, longitude outside -180 .. 360);
7. ``position (0, 0)`` (a fix at exactly 0, 0 is a missing fix, not a place);
8. ``missing time``, ``unreadable time`` (when there is a time column);
9. per requested field F: ``non-numeric value in F``, ``non-finite value in F``,
   ``no-data value in F`` (a marker such as -99999, see :data:`profiles.columns.NO_DATA_VALUES`),
   ``value beyond physical bounds in F`` (for fields whose kind the name tells, see
   :func:`profiles.columns.field_kind`), ``missing value in F``.

Fields that were not requested never drop a row: their unusable values become missing values,
with a warning. Whole-table checks refuse coordinates that are clearly not degrees (projected
values without ``--crs``), swapped latitude and longitude, and degrees given with a projected
``--crs``. Stations of each line are put in time order when there is a time column.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from .columns import (
    FILL_MAGNITUDE,
    NO_DATA_VALUES,
    ColumnNames,
    field_kind,
    find_column,
    listing,
    normalise,
)
from .errors import InputError
from .survey import BASE_COLUMNS, DROPPED, USED, Survey

_MISSING_WORDS = ["nan", "na", "n/a", "null", "none", "-"]
_MISSING_LENGTH = max(map(len, _MISSING_WORDS))


@dataclass
class RawTable:
    """A table as read from a file, before validation.

    Attributes
    ----------
    table : pandas.DataFrame
        Cells as text (text files) or as read (GIS layers, with ``__lon__``/``__lat__``).
    rows : ndarray of int
        File line (text) or feature number (GIS) of each row.
    reasons : ndarray of str, or None
        ``""`` or a reason decided while reading ("blank line", "repeated header", "wrong
        number of fields"); None when no row has one.
    notes : list of str
        Warnings from reading.
    duplicates : dict of str to list of int
        Repeated column names and the column numbers they occupy.
    geometry : bool
        Coordinates come from point geometries.
    converted : bool
        Those coordinates were already converted from the layer's CRS.
    cells : callable, optional
        ``cells(position, name)``: a cell as written in the file, stripped (for the examples
        of warnings and errors), when ``table`` does not hold every cell as text (the text
        reader's fast path reads numbers as float64). None: the cells of ``table`` are the text,
        or are values as read (GIS layers).
    """

    table: pd.DataFrame
    rows: np.ndarray
    reasons: np.ndarray | None
    notes: list[str] = field(default_factory=list)
    duplicates: dict[str, list[int]] = field(default_factory=dict)
    geometry: bool = False
    converted: bool = False
    cells: Callable[[int, str], str] | None = None


def table_to_survey(raw: RawTable, *, source: str, columns: ColumnNames, fields, crs) -> Survey:
    """Choose the columns of a raw table, validate every row and build the survey."""
    table = raw.table
    names = list(table.columns)
    visible = [n for n in names if n not in ("__lon__", "__lat__")]
    notes = list(raw.notes)
    projected = crs is not None and not raw.geometry and not is_geographic(crs, source)
    if raw.geometry:
        lon_name, lat_name = "__lon__", "__lat__"
    elif projected:
        lon_name = _coordinate(visible, "x", "lon", columns.lon, source)
        lat_name = _coordinate(visible, "y", "lat", columns.lat, source)
    else:
        lon_name, lat_name, note = _geographic_columns(table, visible, columns, source)
        notes += note
    line_name = find_column(visible, "line", columns.line, source=source, required=False)
    time_name = find_column(visible, "time", columns.time, source=source, required=False)
    stem = Path(source).stem
    if line_name is None:
        notes.append(f"{source}: no line column; all stations form one line named {stem!r}")
    taken = {lon_name, lat_name, line_name, time_name, "__lon__", "__lat__"}
    copies = {f"{name} (column {n})" for name, numbers in raw.duplicates.items() for n in numbers[1:]}
    candidates = [n for n in visible if n not in taken and n not in copies]
    if fields is None:
        chosen = tuple(n for n in candidates if _mostly_numeric(table[n]))
        required = False
    else:
        chosen = tuple(dict.fromkeys(_match_field(f, candidates, source) for f in fields))
        required = True
    needed = [lon_name, lat_name, line_name, time_name, *(chosen if required else ())]
    _check_duplicates(raw.duplicates, needed, source, notes)

    columns_of_frame = {
        "line": (
            table[line_name].astype(str)  # stripped by assemble_stations
            if line_name is not None
            else pd.Series(stem, index=table.index)
        ),
        "lon": table[lon_name],
        "lat": table[lat_name],
    }
    if time_name is not None:
        columns_of_frame["time"] = table[time_name]
    for name in chosen:
        columns_of_frame[name] = table[name]
    frame = pd.DataFrame(columns_of_frame, index=table.index, copy=False)
    blank = _blank_rows(table) if not raw.geometry else np.zeros(len(table), bool)
    cell_text = None
    if raw.cells is not None:
        in_table = {"lon": lon_name, "lat": lat_name, **{name: name for name in chosen}}

        def cell_text(key: str, position: int) -> str:
            return raw.cells(position, in_table[key])

    survey = assemble_stations(
        frame,
        source=source,
        rows=raw.rows,
        fields=chosen,
        has_time=time_name is not None,
        required_fields=required,
        blank=blank,
        projected=projected,
        crs=crs,
        coordinate_names=(lon_name, lat_name) if not raw.geometry else ("point x", "point y"),
        reasons=raw.reasons,
        degrees=not raw.converted,
        cell_text=cell_text,
    )
    return Survey(survey.stations, survey.fields, survey.sources, tuple(notes) + survey.warnings)


def _coordinate(visible, role: str, fallback: str, explicit, source: str) -> str:
    """A projected coordinate column: by the easting/northing names, else by lon/lat names."""
    if explicit is None:
        for name in (role, fallback):
            found = find_column(visible, name, None, source=source, required=False)
            if found is not None:
                return found
    return find_column(visible, role, explicit, source=source, required=True)


def _geographic_columns(table, visible, columns: ColumnNames, source: str):
    """Longitude and latitude columns; x/y or easting/northing only when they hold degrees."""
    lon = find_column(visible, "lon", columns.lon, source=source, required=False)
    lat = find_column(visible, "lat", columns.lat, source=source, required=False)
    if lon is not None and lat is not None:
        return lon, lat, []
    x = find_column(visible, "x", None, source=source, required=False)
    y = find_column(visible, "y", None, source=source, required=False)
    if x is None or y is None or columns.lon is not None or columns.lat is not None:
        find_column(visible, "lon", columns.lon, source=source, required=True)
        find_column(visible, "lat", columns.lat, source=source, required=True)
    xs, _, _ = _numbers(table[x])
    ys, _, _ = _numbers(table[y])
    finite = np.isfinite(xs) & np.isfinite(ys)
    degrees = bool(finite.any()) and bool(
        np.all(np.abs(ys[finite]) <= 90) and np.all((xs[finite] >= -180) & (xs[finite] <= 360))
    )
    if not degrees:
        values = np.abs(np.concatenate([xs[finite], ys[finite]]))
        biggest = f" (values up to {values.max():.0f})" if values.size else ""
        raise InputError(
            f"{source}: no longitude/latitude columns; {x!r}/{y!r} look like projected "
            f"coordinates{biggest}: give their CRS with --crs (e.g. EPSG:32735), or name "
            f"the degree columns with --lon-column/--lat-column"
        )
    note = f"{source}: no longitude/latitude columns; {x!r}/{y!r} hold degrees and are read as such"
    return x, y, [note]


def _check_duplicates(duplicates: dict[str, list[int]], used, source: str, notes: list[str]) -> None:
    """Refuse a repeated name the analysis needs; note the others (later copies unused)."""
    used_keys = {normalise(n) for n in used if n is not None}
    for name, numbers in duplicates.items():
        where = ", ".join(map(str, numbers))
        if normalise(name) in used_keys:
            raise InputError(
                f"{source}: column {name!r} appears {len(numbers)} times (columns {where}); "
                f"expected each column name once"
            )
        notes.append(
            f"{source}: column {name!r} appears {len(numbers)} times (columns {where}); "
            f"only the first is read"
        )


def _match_field(name: str, candidates: list[str], source: str) -> str:
    lowered = {normalise(c): c for c in reversed(candidates)}
    if normalise(name) in lowered:
        return lowered[normalise(name)]
    import difflib

    close = difflib.get_close_matches(normalise(name), list(lowered), n=3, cutoff=0.4)
    hint = f"; closest: {', '.join(lowered[c] for c in close)}" if close else ""
    raise InputError(f"{source}: no field column {name!r}; fields found: {listing(candidates)}{hint}")


def _mostly_numeric(column: pd.Series) -> bool:
    if pd.api.types.is_numeric_dtype(column) and not pd.api.types.is_bool_dtype(column):
        return bool(column.notna().any())  # as for text: a column of empty cells is no field
    if not (pd.api.types.is_string_dtype(column) or column.dtype == object):
        return False
    text = column.astype(str).str.strip()
    present = text[(text != "") & ~text.str.lower().isin(_MISSING_WORDS)]
    if present.empty:
        return False
    parsed = pd.to_numeric(present, errors="coerce")
    return bool(parsed.notna().mean() >= 0.5)


def _blank_rows(table: pd.DataFrame) -> np.ndarray:
    """Rows whose every cell is empty (NaN, or text of blanks).

    Columns of numbers are looked at first: they are quick to test, and once no row is blank
    in one column, the text columns need no stripping.
    """
    blank = np.ones(len(table), bool)
    numeric = [pd.api.types.is_numeric_dtype(table[name]) for name in table.columns]
    ordered = [name for name, number in zip(table.columns, numeric, strict=True) if number]
    ordered += [name for name, number in zip(table.columns, numeric, strict=True) if not number]
    for name in ordered:
        column = table[name]
        empty = column.isna().to_numpy()
        if not pd.api.types.is_numeric_dtype(column):
            empty = empty | (column.astype(str).str.strip() == "").to_numpy()
        blank &= empty
        if not blank.any():
            break
    return blank


def _normalised_longitude(lon: np.ndarray) -> np.ndarray:
    """``((lon + 180) % 360) - 180`` where finite (non-finite values kept), into [-180, 180).

    The remainder is taken only where ``lon + 180`` is outside [0, 360), elsewhere it is that
    sum itself (``fmod`` is exact), so the result is the same, bit for bit, and quicker.
    """
    shifted = lon + 180.0
    with np.errstate(invalid="ignore"):
        outside = ~((shifted >= 0.0) & (shifted < 360.0))
    if outside.any():
        finite = np.isfinite(lon)
        wrap = outside & finite
        shifted[wrap] = shifted[wrap] % 360.0
        result = shifted - 180.0
        result[~finite] = lon[~finite]
        return result
    return shifted - 180.0


def _arrow_text(text: pd.Series):
    """The offsets and bytes of a text column without missing cells held as arrow strings,
    else None."""
    dtype = text.dtype
    if not (isinstance(dtype, pd.StringDtype) and dtype.storage == "pyarrow") or text.hasnans:
        return None
    array = text.array.__arrow_array__()
    array = array.combine_chunks() if array.num_chunks != 1 else array.chunk(0)
    return _string_buffers(array)


def _stripped(text: pd.Series) -> pd.Series:
    """``text.str.strip()``; the text itself when no cell begins or ends with a byte that may
    be white space (the usual column of line ids), which is quicker to find out than to strip."""
    buffers = _arrow_text(text)
    if buffers is None or not len(text):
        return text.str.strip()
    offsets, data = buffers
    if not data.size:
        return text  # every cell empty
    # First and last byte of each cell (of a neighbour for an empty cell: at worst a strip).
    # White space as str.strip sees it is among the bytes up to 32 (ASCII) and from 128 (any
    # byte of a multibyte character: U+0085, U+00A0, U+3000 ...).
    for ends in (data[np.minimum(offsets[:-1], data.size - 1)], data[np.maximum(offsets[1:] - 1, 0)]):
        if np.any((ends <= 32) | (ends >= 128)):
            return text.str.strip()
    return text


def _is_one_of(text: pd.Series, words: list[str]) -> np.ndarray:
    """``text.isin(words).to_numpy()``, looking only at cells no longer (in UTF-8 bytes) than
    the longest word."""
    buffers = _arrow_text(text)
    if buffers is None:
        return text.isin(words).to_numpy(dtype=bool)
    longest = max(len(w.encode("utf-8")) for w in words)
    short = np.flatnonzero(np.diff(buffers[0]) <= longest)
    found = np.zeros(len(text), bool)
    if short.size:
        found[short] = text.iloc[short].isin(words).to_numpy(dtype=bool)
    return found


def _string_buffers(array) -> tuple[np.ndarray, np.ndarray] | None:
    """Offsets (one more than cells) and bytes of a pyarrow string array; None for another type."""
    import pyarrow as pa

    if pa.types.is_large_string(array.type):
        offset_type = np.int64
    elif pa.types.is_string(array.type):
        offset_type = np.int32
    else:
        return None
    _, offset_buffer, data_buffer = array.buffers()
    offsets = np.frombuffer(offset_buffer, dtype=offset_type)[array.offset : array.offset + len(array) + 1]
    data = np.frombuffer(data_buffer, dtype=np.uint8) if data_buffer is not None else np.zeros(0, np.uint8)
    return offsets, data


def _numbers(column: pd.Series) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Parse a column: (values, missing mask, non-numeric mask)."""
    if pd.api.types.is_numeric_dtype(column) and not pd.api.types.is_bool_dtype(column):
        values = column.to_numpy(dtype=float, na_value=np.nan)
        return values, np.isnan(values), np.zeros(len(values), bool)
    text, missing = _cells(column)
    values = pd.to_numeric(text.where(~missing, None), errors="coerce").to_numpy(dtype=float, na_value=np.nan)
    nonnumeric = np.isnan(values) & ~missing
    return values, missing, nonnumeric


def _cells(column: pd.Series) -> tuple[pd.Series, np.ndarray]:
    """A column of text cells, stripped, and its missing mask (empty, NaN or a missing word)."""
    text = column.astype(str).str.strip()
    missing = (text == "").to_numpy() | column.isna().to_numpy()
    # Only cells as short as a missing word can be one (lower case keeps the length).
    short = np.flatnonzero((text.str.len() <= _MISSING_LENGTH).to_numpy())
    missing[short] |= text.iloc[short].str.lower().isin(_MISSING_WORDS).to_numpy()
    return text, missing


#: Cells of a time column tried as numbers before the whole column is (see :func:`_times`).
_TIME_PROBE = 20


def _times(column: pd.Series) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Parse times to seconds since 1970 UTC: (seconds, missing mask, unreadable mask).

    A column whose every present cell is a number holds seconds; any other is read as ISO 8601
    text. One cell that is not a number settles it, so the first few present cells are tried
    first and a column of ISO 8601 times is never parsed as numbers in full (which is slow:
    every cell fails). The result is the same as parsing every cell as a number first.

    A column of times all written in one fixed layout (see :func:`_fixed_layout_times`) is read
    by array arithmetic on its bytes, with the same result as pandas' ISO 8601 parser.
    """
    if pd.api.types.is_datetime64_any_dtype(column):
        parsed = pd.to_datetime(column, utc=True)
        seconds = (parsed - pd.Timestamp("1970-01-01", tz="UTC")).dt.total_seconds().to_numpy(dtype=float)
        missing = np.isnan(seconds)
        return seconds, missing, np.zeros(len(seconds), bool)
    if pd.api.types.is_numeric_dtype(column) and not pd.api.types.is_bool_dtype(column):
        numeric, missing, _ = _numbers(column)
        return numeric, missing, ~missing & ~np.isfinite(numeric)
    fixed = _fixed_layout_times(column)
    if fixed is not None:
        seconds, missing = fixed
        return seconds, missing, np.zeros(len(seconds), bool)
    text, missing = _cells(column)
    probe = text.iloc[np.flatnonzero(~missing)[:_TIME_PROBE]]
    if not pd.to_numeric(probe, errors="coerce").isna().any():
        numeric, missing, nonnumeric = _numbers(column)
        if not nonnumeric.any():
            return numeric, missing, ~missing & ~np.isfinite(numeric)
    parsed = pd.to_datetime(text.where(~missing, None), utc=True, errors="coerce", format="ISO8601")
    seconds = (parsed - pd.Timestamp("1970-01-01", tz="UTC")).dt.total_seconds().to_numpy(dtype=float)
    return seconds, missing, np.isnan(seconds) & ~missing


#: Character positions of the digits of ``YYYY-MM-DDTHH:MM:SS``, and of its separators with the
#: bytes each may be (``T`` or a space between date and time).
_TIME_DIGITS = np.array([0, 1, 2, 3, 5, 6, 8, 9, 11, 12, 14, 15, 17, 18])
_TIME_SEPARATORS = {4: b"-", 7: b"-", 10: b"T ", 13: b":", 16: b":", 19: b"Z"}
#: Smallest and largest month, day, hour, minute and second (days checked against the month).
_TIME_LOW = np.array([1, 1, 0, 0, 0])
_TIME_HIGH = np.array([12, 31, 23, 59, 59])


def _fixed_layout_times(column: pd.Series) -> tuple[np.ndarray, np.ndarray] | None:
    """Seconds since 1970 UTC and the missing mask of a column whose present cells are all
    times written ``YYYY-MM-DDTHH:MM:SS`` (``T`` or a space between date and time, an optional
    ``Z``: one of these layouts throughout, whole seconds), read by array arithmetic on the
    bytes of the cells; None for any other column, which pandas' ISO 8601 parser then reads.

    Every time must be a real one (month 1-12, a day of that month in the proleptic Gregorian
    calendar, hour 0-23, minute and second 0-59, year 1 or later), else None: the result is
    always the one of ``pandas.to_datetime(..., format="ISO8601", utc=True)``, which the tests
    check. The calendar is numpy's ``datetime64`` (the days of a month run from its first day to
    the next month's).
    """
    import pyarrow as pa

    if not (pd.api.types.is_string_dtype(column) or column.dtype == object) or len(column) == 0:
        return None
    try:
        array = pa.array(column, from_pandas=True)
    except (pa.ArrowInvalid, pa.ArrowTypeError, pa.ArrowNotImplementedError):
        return None
    if isinstance(array, pa.ChunkedArray):
        array = array.combine_chunks()
    buffers = _string_buffers(array)
    if buffers is None:
        return None
    n = len(array)
    offsets, data = buffers
    lengths = np.diff(offsets)
    present = ~array.is_null().to_numpy(zero_copy_only=False) if array.null_count else np.ones(n, bool)
    some = np.flatnonzero(present)
    width = int(lengths[some[0]]) if some.size else 0
    if width not in (19, 20):
        return None
    fixed = present & (lengths == width)
    if fixed.all():
        cells = data[offsets[0] : offsets[-1]].reshape(n, width)
    else:
        cells = data[offsets[:-1][fixed][:, None] + np.arange(width)]
    separators = [position for position in _TIME_SEPARATORS if position < width]
    template = cells[0, separators]
    if any(int(byte) not in _TIME_SEPARATORS[p] for p, byte in zip(separators, template, strict=True)):
        return None
    missing = ~fixed
    others = np.flatnonzero(missing & present)
    if others.size and not _cells(column.iloc[others])[1].all():
        return None  # cells in another layout: pandas reads the column
    # Block by block: temporaries of a few tens of kilobytes, reused, rather than a dozen
    # arrays as long as the column in fresh memory.
    found = np.empty(len(cells))
    for begin in range(0, len(cells), _TIME_BLOCK):
        block = _block_seconds(cells[begin : begin + _TIME_BLOCK], separators, template)
        if block is None:
            return None
        found[begin : begin + _TIME_BLOCK] = block
    if fixed.all():
        return found, missing
    seconds = np.full(n, np.nan)
    seconds[fixed] = found
    return seconds, missing


#: Times per block of :func:`_fixed_layout_times`.
_TIME_BLOCK = 16384


def _block_seconds(cells: np.ndarray, separators: list[int], template: np.ndarray) -> np.ndarray | None:
    """Seconds since 1970 UTC of times, one per row of ``cells`` (their bytes), or None when a
    row is not a real time in the layout of ``template`` (the bytes at ``separators``)."""
    if np.any(cells[:, separators] != template):
        return None
    # One row per character position (each row then lies in one piece of memory); bytes
    # below "0" wrap round to large values.
    digits = np.subtract(cells.T, np.uint8(48), order="C")
    if digits.max(axis=1)[_TIME_DIGITS].max() > 9:
        return None
    # Month, day, hour, minute, second (rows 5, 8, 11, 14, 17 and the next), year (rows 0-3).
    fields = digits[5::3][:5].astype(np.int32) * 10 + digits[6::3][:5]
    year = (digits[0].astype(np.int32) * 10 + digits[1]) * 100 + digits[2] * 10 + digits[3]
    if np.any(fields < _TIME_LOW[:, None]) or np.any(fields > _TIME_HIGH[:, None]) or np.any(year < 1):
        return None
    month, day, hour, minute, second = fields
    # Days since 1970 of the first day of each month spanned (few: the calendar is asked once
    # per month, not once per cell), and of the month after it.
    months = (year - 1970) * 12 + (month - 1)
    earliest = months.min()
    calendar = np.arange(earliest, months.max() + 2).astype("datetime64[M]").astype("datetime64[D]")
    calendar = calendar.astype(np.int64)
    first_day = calendar[months - earliest]
    if np.any(day > calendar[months - earliest + 1] - first_day):
        return None
    return ((first_day + (day - 1)) * 86400 + (hour * 3600 + minute * 60 + second)).astype(float)


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
    reasons: np.ndarray | None = None,
    degrees: bool = True,
    cell_text: Callable[[str, int], str] | None = None,
) -> Survey:
    """Validate a table with columns line, lon, lat, [time], fields; assign statuses.

    The checks, in order (the first that fails names the reason): a reason given by the
    reader (``reasons``: blank line, wrong number of fields); blank line; missing line id;
    missing, non-numeric or non-finite coordinate; coordinate outside the CRS area (projected);
    coordinate out of range; position (0, 0); missing or unreadable time; then, per field, a
    value that is not a number, not finite, a no-data marker or beyond the physical bounds of
    the field's kind (see :func:`profiles.columns.field_kind`), and (for requested fields) a
    missing value. For fields not requested, unusable values become missing values with a
    warning and the row stays in.

    Parameters
    ----------
    degrees : bool
        Whether ``lon``/``lat`` are degrees as given by the user (and so may be projected or
        swapped by mistake); False for coordinates already converted from a declared CRS.
    cell_text : callable, optional
        ``cell_text(column, position)``: a cell of ``frame`` as the user wrote it, for the
        examples in warnings and errors; by default the cell of ``frame`` itself.
    """
    n = len(frame)
    # The reason of each row as a number: 0 for none, else its place in ``labels``.
    labels: dict[str, int] = {"": 0}
    reason = np.zeros(n, dtype=np.int32)
    if reasons is not None:  # None: no row has a reason yet
        reasons = np.asarray(reasons, dtype=object)
        given = np.flatnonzero(reasons != "")
        if given.size:
            codes, texts = pd.factorize(reasons[given])
            numbers = np.array([labels.setdefault(str(t), len(labels)) for t in texts], dtype=np.int32)
            reason[given] = numbers[codes]
    if blank is None:
        blank = np.zeros(n, bool)
    notes: list[str] = []
    rows = np.asarray(rows, dtype=np.int64)

    def mark(mask, text):
        fresh = mask & (reason == 0)
        if fresh.any():
            reason[fresh] = labels.setdefault(text, len(labels))

    mark(blank, "blank line")
    no_line = frame["line"].isna().to_numpy()
    line = _stripped(frame["line"].fillna("").astype(str))
    mark(no_line | _is_one_of(line, ["", "nan", "None", "<NA>"]), "missing line id")

    lon, lon_missing, lon_text = _numbers(frame["lon"])
    lat, lat_missing, lat_text = _numbers(frame["lat"])
    mark(lon_missing | lat_missing, "missing coordinate")
    mark(lon_text | lat_text, "non-numeric coordinate")
    mark(~np.isfinite(lon) | ~np.isfinite(lat), "non-finite coordinate")
    if projected:
        finite = np.isfinite(lon) & np.isfinite(lat) & (reason == 0)
        _check_not_degrees(lon, lat, finite, source, coordinate_names, crs)
        lon, lat = to_geographic(lon, lat, crs, source)
        mark(finite & ~(np.isfinite(lon) & np.isfinite(lat)), "coordinate outside the CRS area")
    elif degrees:
        _check_degrees(lon, lat, reason == 0, source, coordinate_names, rows)
    with np.errstate(invalid="ignore"):
        out_of_range = (np.abs(lat) > 90) | (lon < -180) | (lon > 360)
    mark(out_of_range, "coordinate out of range")
    mark((lon == 0) & (lat == 0), "position (0, 0)")
    lon = _normalised_longitude(lon)

    if has_time:
        time, time_missing, time_bad = _times(frame["time"])
        if time_missing.all() or not np.isfinite(time).any():
            notes.append(f"{source}: the time column holds no readable time; stations kept in file order")
            time, has_time = np.full(n, np.nan), False
        else:
            mark(time_missing, "missing time")
            mark(time_bad, "unreadable time")
    else:
        time = np.full(n, np.nan)

    values = {}
    for name in fields:
        values[name] = _field(
            name,
            frame[name],
            requested=required_fields,
            mark=mark,
            rows=rows,
            source=source,
            notes=notes,
            cell=(lambda position, name=name: cell_text(name, position)) if cell_text else None,
        )

    stations = pd.DataFrame(
        {
            "source": _repeated_text(source, n),
            "row": rows,
            "line": pd.array(line, dtype=str),
            "lon": np.where(np.isfinite(lon), lon, np.nan),
            "lat": np.where(np.isfinite(lat), lat, np.nan),
            "time": time,
            "status": pd.array([USED, DROPPED], dtype=str).take((reason != 0).astype(np.intp)),
            "reason": pd.array(list(labels), dtype=str).take(reason),
            **{name: values[name] for name in fields},
        },
        copy=False,
    )
    stations, moved = _order(stations, has_time, reason == 0)
    if moved:
        notes.append(
            f"{source}: {moved} stations are not in time order in the file; "
            f"stations of each line are taken in time order"
        )
    assert tuple(stations.columns[: len(BASE_COLUMNS)]) == BASE_COLUMNS
    survey = Survey(stations.reset_index(drop=True), tuple(fields), (source,), tuple(notes))
    if not (reason == 0).any():  # no row is used
        accounting = survey.accounting
        reasons_text = ", ".join(f"{k}: {v}" for k, v in sorted(accounting.dropped.items()))
        text_cells = np.flatnonzero(reason == labels.get("non-numeric coordinate", -1))
        example = ""
        if text_cells.size:
            i = int(text_cells[0])
            if cell_text is not None:
                cells = (cell_text("lon", i), cell_text("lat", i))
            else:
                cells = (str(frame["lon"].iloc[i]).strip(), str(frame["lat"].iloc[i]).strip())
            example = (
                f"; e.g. row {rows[i]}: {coordinate_names[0]} '{cells[0]}', {coordinate_names[1]} "
                f"'{cells[1]}': coordinates must be decimal numbers"
            )
        raise InputError(f"{source}: no usable rows ({accounting.read} read; {reasons_text}){example}")
    return survey


def _field(
    name, column, *, requested: bool, mark, rows, source: str, notes: list[str], cell=None
) -> np.ndarray:
    """Values of one field; unusable ones are dropped (requested) or kept as missing.

    ``cell(position)`` gives a cell as written, for the examples (by default the cell itself).
    """
    values, missing, text = _numbers(column)
    kind = field_kind(name)
    with np.errstate(invalid="ignore"):
        infinite = np.isinf(values)
        checked = requested or kind is not None
        no_data = checked & (np.isin(values, NO_DATA_VALUES) | (np.abs(values) >= FILL_MAGNITUDE)) & ~infinite
        beyond = (
            ~kind.physical(values) & np.isfinite(values) & ~no_data
            if kind is not None
            else np.zeros(values.size, bool)
        )
    bounds = f" ({kind.describe()} for a {kind.kind})" if kind is not None else ""
    problems = [
        (text, f"non-numeric value in {name}", ("is not a number", "are not numbers")),
        (infinite, f"non-finite value in {name}", ("is infinite", "are infinite")),
        (no_data, f"no-data value in {name}", ("is a no-data marker", "are no-data markers")),
        (beyond, f"value beyond physical bounds in {name}", ("is beyond physical bounds",) * 2),
    ]
    for mask, reason, (one, many) in problems:
        count = int(np.count_nonzero(mask))
        if not count:
            continue
        cells = [_example(column, values, text, int(i), cell) for i in np.flatnonzero(mask)[:3]]
        examples = ", ".join(f"{r} ({v})" for r, v in zip(rows[mask][:3], cells, strict=True))
        examples = ("row " if count == 1 else "rows ") + examples + (", ..." if count > 3 else "")
        what = f"1 value {one}" if count == 1 else f"{count} values {many.replace('is ', 'are ', 1)}"
        if reason.startswith("value beyond"):
            what += bounds
        fate = "dropped" if requested else "kept as missing values"
        hint = ""
        if reason.startswith("value beyond") and kind.kind in ("depth", "elevation"):
            hint = "; if the unit is not metres, say so in the column name (e.g. depth_ft)"
        notes.append(f"{source}: {name}: {what}: {examples}; {fate}{hint}")
        if requested:
            mark(mask, reason)
    if requested:
        mark(missing, f"missing value in {name}")
    bad = text | infinite | no_data | beyond
    return np.where(bad | ~np.isfinite(values), np.nan, values)


def _example(column: pd.Series, values: np.ndarray, text: np.ndarray, position: int, cell) -> str:
    """A cell shown in a warning: a number as read (``1e+12``, ``inf``), other text as written,
    whether the column was read as numbers or as text."""
    if not text[position]:
        return _cell_text(float(values[position]))
    return cell(position) if cell is not None else _cell_text(column.iloc[position])


def _cell_text(value) -> str:
    """A cell as the user wrote it, near enough: ``1e+12`` rather than ``1000000000000.0``."""
    if isinstance(value, float | np.floating):
        return f"{float(value):.10g}"
    return str(value).strip()


def _check_degrees(lon, lat, valid, source, names, rows) -> None:
    """Refuse coordinates that are clearly projected or swapped (most values out of range)."""
    if np.count_nonzero(valid) < 2:
        return  # one row is no evidence about the columns; it is dropped if out of range
    lo, la = (lon, lat) if valid.all() else (lon[valid], lat[valid])
    lat_bad = np.abs(la) > 90
    lon_bad = (lo < -180) | (lo > 360)
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


def _check_not_degrees(x, y, valid, source, names, crs) -> None:
    """Refuse degrees passed as projected coordinates (with a projected --crs)."""
    if not valid.any():
        return
    if np.all(np.abs(x[valid]) <= 360) and np.all(np.abs(y[valid]) <= 90):
        raise InputError(
            f"{source}: columns {names[0]!r}/{names[1]!r} hold values within +-360/+-90, which "
            f"look like degrees, not the metres of the projected CRS {crs}; leave out --crs"
        )


def _order(stations: pd.DataFrame, has_time: bool, used: np.ndarray) -> tuple[pd.DataFrame, int]:
    """Order stations by line (first appearance), then time (where present), then file row.

    Returns the ordered table and the number of used stations (``used``) whose place within
    their line differs from file order because of their time.
    """
    codes = _line_codes(stations["line"])
    row = stations["row"].to_numpy()
    by_row = _sort_order(codes, row)
    if not has_time:
        return (stations if by_row is None else stations.iloc[by_row]), 0
    time = np.nan_to_num(stations["time"].to_numpy(), nan=np.inf)
    by_time = _sort_order(codes, time, row)
    if by_time is None and by_row is None:
        return stations, 0
    in_order = np.arange(len(row))
    by_row = in_order if by_row is None else by_row
    ordered = stations if by_time is None else stations.iloc[by_time]
    by_time = in_order if by_time is None else by_time
    moved = int(np.count_nonzero(by_time[used[by_time]] != by_row[used[by_row]]))
    return ordered, moved


def _repeated_text(text: str, n: int):
    """A column of ``n`` copies of ``text`` as pandas builds it from the scalar (dtype
    ``str``), built by pyarrow directly where that dtype is arrow strings (quicker)."""
    import pyarrow as pa

    dtype = pd.array([text], dtype=str).dtype
    if isinstance(dtype, pd.StringDtype) and dtype.storage == "pyarrow":
        return pd.array(pa.repeat(pa.scalar(text, pa.large_string()), n), dtype=dtype)
    return pd.array(np.full(n, text, dtype=object), dtype=str)


def _line_codes(line: pd.Series) -> np.ndarray:
    """``pandas.factorize(line, sort=False)[0]``: 0, 1, 2, ... by first appearance.

    Where each line's stations are one run (the usual file), the codes are the run numbers,
    found by comparing neighbours, which is much quicker than hashing every id.
    """
    values = line.array
    if len(values) < 2 or line.hasnans:
        return pd.factorize(line, sort=False)[0]
    changes = np.asarray(values[1:] != values[:-1], dtype=bool)
    run = np.concatenate([[0], np.cumsum(changes)])
    firsts = values.take(np.concatenate([[0], np.flatnonzero(changes) + 1]))
    if len(pd.unique(firsts)) != len(firsts):
        return pd.factorize(line, sort=False)[0]
    return run


def _sort_order(*keys: np.ndarray) -> np.ndarray | None:
    """``numpy.lexsort`` of the keys, first key first; None when that order is the identity
    (the rows already in order: a stable sort leaves them in place)."""
    ordered = np.zeros(max(len(keys[0]) - 1, 0), dtype=bool)
    tied = np.ones_like(ordered)
    for key in keys:
        before, after = key[:-1], key[1:]
        ordered |= tied & (after > before)
        tied &= after == before
    if np.all(ordered | tied):
        return None
    return np.lexsort(keys[::-1])


def is_geographic(crs, source: str) -> bool:
    """Whether a CRS given by the user is geographic (degrees)."""
    return crs_object(crs, source).is_geographic


def crs_object(crs, source: str):
    """A :class:`pyproj.CRS` from user input, or an error naming the file."""
    from pyproj import CRS
    from pyproj.exceptions import CRSError

    try:
        return CRS.from_user_input(crs)
    except CRSError:
        raise InputError(f"{source}: unknown CRS {crs!r}; expected e.g. EPSG:32735") from None


def to_geographic(x, y, crs, source: str):
    """Projected coordinates to WGS84 longitude/latitude (``always_xy``); failures are NaN."""
    from pyproj import Transformer

    transformer = Transformer.from_crs(crs_object(crs, source), "EPSG:4326", always_xy=True)
    with np.errstate(invalid="ignore"):
        lon, lat = transformer.transform(np.asarray(x, dtype=float), np.asarray(y, dtype=float))
    lon = np.where(np.isfinite(lon), lon, np.nan)
    lat = np.where(np.isfinite(lat), lat, np.nan)
    return lon, lat
