"""One task of a batch: analyse one survey file and write its two parts.

Everything here runs inside a Dask worker (or any process): the file is read there, the pyproj
objects are built there (:func:`profiles.geometry.wgs84` is cached per process, never
shipped), the output geometries are built only while the parts are written, and what goes back
to the client is one small JSON-ready dict. A worker running one task at a time therefore holds
one file at a time.

Per file
--------
1. :func:`profiles.read.read_survey` with the field requested (rows without a usable value are
   dropped and counted), then :func:`profiles.geometry.build_segments`;
2. the spacing audit with the field's aliasing budget (:func:`profiles.spacing.audit_spacing`,
   as ``profiles spacing --field``), one row per segment;
3. per segment, the field resampled and its harmonic table, Fisher's g test and the red-noise
   test (:func:`profiles.analysis.resample_field`, :func:`profiles.analysis.analyse_segment`);
4. sliding windows along the resampled segments (:func:`profiles.windows.along_track_windows`);
5. ``windows/part-<id>.parquet`` then ``segments/part-<id>.parquet`` written as GeoParquet
   (EPSG:4326) straight from the arrays (:func:`profiles.gis.geoparquet_table`: what
   geopandas' ``to_parquet`` writes for the layer, without building it), each to a temporary
   name in its folder and renamed into place. The segments
   part is written last: it marks the file finished, and it carries the file's record (row
   accounting, counts, warnings) in its metadata so a later run can skip the file and still
   report it.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import sys
import time
import tracemalloc
from dataclasses import asdict, dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from .errors import InputError, ProfilesError

SEGMENTS = "segments"
WINDOWS = "windows"
#: Key of the part's metadata (``DataFrame.attrs``, which geopandas keeps in the file).
ATTRS_KEY = "profiles"
#: Where geopandas stores ``attrs`` in the Parquet schema metadata.
PARQUET_ATTRS = b"PANDAS_ATTRS"

#: Columns of a segments part after ``file`` and the spacing audit's columns, with dtypes.
SPECTRUM_COLUMNS = {
    "field": "string",
    "resampled_n": "Int64",
    "resampled_spacing_km": "float64",
    "dominant_wavelength_km": "float64",
    "variance_fraction": "float64",
    "fisher_p_value": "float64",
    "white_noise_significant": "boolean",
    "red_noise_lag1": "float64",
    "red_noise_dominant_km": "float64",
    "red_noise_significant": "boolean",
    "n_red_significant": "Int64",
    "spectrum_note": "string",
}


#: Options whose JSON key carries a unit: field name -> key.
_UNIT_KEYS = {
    "gap_length": "gap_length_m",
    "turn_angle": "turn_angle_deg",
    "turn_distance": "turn_distance_m",
    "shortest_wavelength": "shortest_wavelength_m",
    "longest_wavelength": "longest_wavelength_m",
    "spacing": "spacing_m",
    "window": "window_m",
    "step": "step_m",
    "fit_band": "fit_band_m",
}


@dataclass(frozen=True)
class BatchOptions:
    """What every file of a batch is analysed with (lengths in metres, angles in degrees).

    Attributes
    ----------
    field : str
        Field (column) to analyse.
    line_column, lon_column, lat_column, time_column : str or None
        Column names; found by their usual names when None.
    crs : str or None
        CRS of projected coordinates.
    layer : str or None
        Layer of multi-layer GIS files.
    lines : tuple of str or None
        Only these lines (in whichever files hold them).
    gap_multiple : float
        A step longer than this multiple of the median step is a gap (unless ``gap_length``).
    gap_length : float or None
        A step longer than this is a gap.
    turn_angle, turn_distance : float
        Sharp-turn rule of :func:`profiles.geometry.build_segments`.
    shortest_wavelength, longest_wavelength : float or None
        Targets of the spacing audit (and of the windows' ``spacing`` reason).
    falloff_model : {"power-law", "exponential"}
        Fall-off fitted by the aliasing budget of the spacing audit (exponential for
        potential fields).
    alias_tolerance : float
        Largest acceptable aliased power at the shortest wavelength (aliasing budget).
    fit_band : (float, float) or None
        Longest and shortest wavelength bounding the fall-off fit; chosen automatically when
        None.
    spacing : float or None
        Resampling spacing; each segment's median station spacing when None.
    alpha : float
        Level of Fisher's test and of the red-noise test.
    window, step : float or None
        Window length and step of the along-track windows; the defaults of
        :func:`profiles.windows.along_track_windows` (from each file's spacing) when None.
    """

    field: str
    line_column: str | None = None
    lon_column: str | None = None
    lat_column: str | None = None
    time_column: str | None = None
    crs: str | None = None
    layer: str | None = None
    lines: tuple[str, ...] | None = None
    gap_multiple: float = 5.0
    gap_length: float | None = None
    turn_angle: float = 45.0
    turn_distance: float = 2000.0
    shortest_wavelength: float | None = None
    longest_wavelength: float | None = None
    falloff_model: str = "power-law"
    alias_tolerance: float = 0.01
    fit_band: tuple[float, float] | None = None
    spacing: float | None = None
    alpha: float = 0.05
    window: float | None = None
    step: float | None = None

    def __post_init__(self):
        if not str(self.field).strip():
            raise InputError("--field: give the field (column) to analyse, e.g. depth_m")
        if not (math.isfinite(self.alpha) and 0 < self.alpha < 1):
            raise InputError(f"--alpha must be between 0 and 1 (got {self.alpha})")
        if self.lines is not None:
            object.__setattr__(self, "lines", tuple(str(line) for line in self.lines))
        if self.fit_band is not None:
            object.__setattr__(self, "fit_band", tuple(float(v) for v in self.fit_band))

    def columns(self):
        """The column names as :class:`profiles.columns.ColumnNames`."""
        from .columns import ColumnNames

        return ColumnNames(line=self.line_column, lon=self.lon_column, lat=self.lat_column,
                           time=self.time_column)

    def segment_options(self) -> dict:
        """Keyword arguments of :func:`profiles.geometry.build_segments`."""
        return {"gap_multiple": self.gap_multiple, "gap_length": self.gap_length,
                "turn_angle": self.turn_angle, "turn_distance": self.turn_distance}

    def audit_options(self) -> dict:
        """Keyword arguments of :func:`profiles.spacing.audit_spacing`."""
        return {"shortest_wavelength": self.shortest_wavelength,
                "longest_wavelength": self.longest_wavelength, "field": self.field,
                "model": self.falloff_model, "tolerance": self.alias_tolerance, "band": self.fit_band}

    def to_json(self) -> dict:
        """The options with units in the key names (``window_m``, ``turn_angle_deg``, ...)."""
        document = asdict(self)
        for name in ("lines", "fit_band"):
            document[name] = None if document[name] is None else list(document[name])
        return {_UNIT_KEYS.get(name, name): value for name, value in document.items()}

    @classmethod
    def from_json(cls, document: dict) -> BatchOptions:
        """Inverse of :meth:`to_json`."""
        names = {key: name for name, key in _UNIT_KEYS.items()}
        return cls(**{names.get(key, key): value for key, value in document.items()})

    def key(self) -> str:
        """A short hash of the options: parts written with other options are not reused."""
        text = json.dumps(self.to_json(), sort_keys=True)
        return hashlib.blake2b(text.encode("utf-8"), digest_size=8).hexdigest()


def part_name(file_id: str) -> str:
    """File name of a part: ``part-<id>.parquet``."""
    return f"part-{file_id}.parquet"


def part_paths(out: str | Path, file_id: str) -> tuple[Path, Path]:
    """Final paths of the segments part and the windows part of a file."""
    out = Path(out)
    return out / SEGMENTS / part_name(file_id), out / WINDOWS / part_name(file_id)


def analyse_file(task: dict) -> dict:
    """Analyse one file and write its parts; never raises for a bad file.

    Parameters
    ----------
    task : dict
        ``path`` (absolute), ``file`` (relative to the archive root), ``id``, ``size``,
        ``mtime_ns``, ``out`` (output folder), ``options`` (:meth:`BatchOptions.to_json`) and
        ``options_key``.

    Returns
    -------
    dict
        The file's record: ``file``, ``id``, ``status`` (``done`` or ``failed``), ``reason``
        and ``error_type`` of a failure, ``rows`` (row accounting), ``lines``, ``segments``,
        ``spectra``, ``windows``, ``stations``, ``warnings``, ``seconds`` per stage,
        ``worker`` (process id and peak resident memory of the process so far, MB), and,
        while :mod:`tracemalloc` traces, ``traced_peak_mb`` per stage.
    """
    clock = _Clock()
    record = {"file": task["file"], "id": task["id"], "status": "done", "reason": None, "error_type": None}
    try:
        options = BatchOptions.from_json(task["options"])
        record.update(_analyse_and_write(task, options, clock, record))
    except ProfilesError as error:
        record.update(status="failed", reason=one_line(error), error_type=type(error).__name__)
    except Exception as error:  # an unexpected failure on one file must not stop the batch
        record.update(
            status="failed",
            reason=f"{type(error).__name__}: {one_line(error)}",
            error_type=type(error).__name__,
            unexpected=True,
        )
    record["seconds"] = clock.finish()
    if clock.memory:
        record["traced_peak_mb"] = clock.memory
    record["worker"] = {"pid": os.getpid(), "peak_rss_mb": peak_rss_mb()}
    return record


def _analyse_and_write(task: dict, options, clock: _Clock, record: dict) -> dict:
    from .analysis import analyse_segment, resample_field
    from .geometry import build_segments
    from .read import read_survey
    from .spacing import audit_spacing

    path = task["path"]
    survey = read_survey(path, columns=options.columns(), fields=(options.field,), crs=options.crs,
                         layer=options.layer)
    clock.lap("read")
    segments = build_segments(survey, **options.segment_options())
    selection = []
    if options.lines:  # a file that holds none of the lines is done, with empty parts
        segments = segments.select(options.lines, strict=False)
        if len(segments) == 0:
            selection = [f"{path}: no segment of the lines asked for ({', '.join(options.lines)})"]
    elif len(segments) == 0:
        raise InputError(f"{path}: no segment with two or more stations")
    clock.lap("segments")
    audit = audit_spacing(segments, **options.audit_options())
    clock.lap("spacing")
    pairs, notes = resample_field(segments, options.field, spacing=options.spacing)
    spectra = [analyse_segment(segment, uniform, method="harmonic", alpha=options.alpha)
               for segment, uniform in pairs]
    clock.lap("spectra")
    table = _windows(pairs, options)
    clock.lap("windows")

    accounting = segments.survey.accounting
    warnings = [*survey.warnings, *segments.warnings, *selection, *audit.warnings, *notes,
                *(table.warnings if table is not None else ())]
    result = {
        "rows": accounting.to_json(),
        "stations": accounting.used,
        "lines": len(set(segment.line for segment in segments)),
        "segments": len(audit.segments),
        "spectra": len(spectra),
        "windows": 0 if table is None else len(table),
        "warnings": list(dict.fromkeys(warnings)),
    }
    attrs = {
        "file": task["file"],
        "id": task["id"],
        "size": task["size"],
        "mtime_ns": task["mtime_ns"],
        "options_key": task["options_key"],
        "record": {**record, **result},
    }
    segments_path, windows_path = part_paths(task["out"], task["id"])
    # The output layers, geometries included, are built here, at write time, in this process.
    write_part(_window_part(task["file"], table), windows_path, attrs)
    part = _segment_part(task["file"], segments, audit, spectra, notes, options.field)
    write_part(part, segments_path, attrs)  # last: it marks the file finished
    clock.lap("write")
    return result


def _windows(pairs, options):
    """Window table of the resampled segments (None when no segment could be resampled)."""
    from .windows import along_track_windows

    if not pairs:
        return None
    return along_track_windows(
        [uniform for _, uniform in pairs],
        window=options.window,
        step=options.step,
        shortest_wavelength=options.shortest_wavelength,
        alpha=options.alpha,
    )


@dataclass(frozen=True)
class PartLayer:
    """What a part holds: its columns, their dtypes and its lines.

    Attributes
    ----------
    columns : dict
        Column name -> values, in order.
    kinds : dict
        Column name -> pandas dtype name (``string``, ``int64``, ``Int64``, ``float64``,
        ``boolean``); fixed per layer, so that every part of a folder, with rows or without,
        has the same schema.
    lines : profiles.gis.LineColumn
        One line per row, as WKB.
    """

    columns: dict
    kinds: dict
    lines: object


def _segment_part(file: str, segments, audit, spectra, notes, field: str) -> PartLayer:
    """The spacing audit's rows (with the aliasing budget's columns) and the spectral summary
    of each analysed segment, on the lines of :func:`profiles.gis.segment_layer`."""
    from .gis import segment_lines

    frame = audit.segments_table()
    by_label = {(r.uniform.line, r.uniform.number): r for r in spectra}
    skipped = [(s.line, s.number) for s in segments if (s.line, s.number) not in by_label]
    # resample_field gives one warning per segment it leaves out, in segment order.
    why = dict(zip(skipped, notes, strict=True)) if len(skipped) == len(notes) else {}
    rows = []
    for line, number in zip(frame["line"], frame["segment"], strict=True):
        result = by_label.get((line, number))
        rows.append(_spectrum_row(result, field, why.get((line, number), "not analysed")))
    spectral = pd.DataFrame(rows, columns=list(SPECTRUM_COLUMNS), index=frame.index)
    columns = {"file": [file] * len(frame), **{name: frame[name] for name in frame.columns},
               **{name: spectral[name] for name in SPECTRUM_COLUMNS}}
    # Text columns are named, so that an empty part (no segment of the lines asked for) types
    # them alike; the others follow from their values.
    text = {name: "string" for name in ("file", "line", "recommendation_basis", "falloff_model")}
    named = {**text, "segment": "int64", "n_stations": "int64", "aliasing_risk": "boolean",
             "too_short": "boolean", **SPECTRUM_COLUMNS}
    kinds = {name: named.get(name) or _kind(values) for name, values in columns.items()}
    return PartLayer(columns, kinds, segment_lines(segments))


def _spectrum_row(result, field: str, note: str) -> dict:
    """Dominant wavelength, Fisher's p-value and the red-noise verdict of one segment.

    The same quantities, under the same names, as the summary table of ``profiles spectrum``.
    """
    if result is None:
        return {"field": field, "spectrum_note": note}
    row = result.summary()
    return {
        "field": field,
        "resampled_n": row.pop("n"),
        "resampled_spacing_km": row.pop("spacing_km"),
        **{key: value for key, value in row.items() if key not in ("line", "segment")},
        "spectrum_note": "",
    }


def _window_kinds() -> dict[str, str]:
    """Columns of a windows part and their dtypes: ``file``, then :data:`profiles.windows.COLUMNS`."""
    from .windows import COLUMNS

    kinds = {"file": "string", **{name: "float64" for name in COLUMNS}}
    kinds.update(line="string", reasons="string", segment="int64", n_samples="int64",
                 dominant_harmonic="int64", red_noise_significant="boolean", aliasing_risk="boolean")
    return kinds


def _window_part(file: str, table) -> PartLayer:
    """The window table (``reasons`` as ``a,b`` text) on the lines of
    :func:`profiles.gis.window_layer`."""
    from .gis import paths_wkb, window_attributes, window_lines

    kinds = _window_kinds()
    if table is None or len(table) == 0:
        return PartLayer({name: [] for name in kinds}, kinds, paths_wkb([]))
    frame = window_attributes(table)
    columns = {"file": [file] * len(frame), **{name: frame[name] for name in list(kinds)[1:]}}
    return PartLayer(columns, kinds, window_lines(table))


def _kind(column: pd.Series) -> str:
    """The dtype of a column that :func:`_segment_part` does not name, from what it holds:
    ``boolean``, ``int64``, ``float64`` or ``string`` (all missing: ``float64``)."""
    if pd.api.types.is_bool_dtype(column):
        return "boolean"
    if pd.api.types.is_integer_dtype(column):
        return "int64"
    if pd.api.types.is_float_dtype(column):
        return "float64"
    present = [v for v in column if v is not None and v is not pd.NA and v == v]  # v != v: NaN
    if present and all(isinstance(v, bool | np.bool_) for v in present):
        return "boolean"
    if all(isinstance(v, int | float | np.number) and not isinstance(v, bool | np.bool_) for v in present):
        return "float64"
    return "string"


def write_part(layer: PartLayer, final: Path, attrs: dict) -> Path:
    """Write a part as GeoParquet (EPSG:4326) with ``attrs`` in its metadata, atomically.

    The file is what ``geopandas.GeoDataFrame.to_parquet`` writes for the layer as a
    GeoDataFrame with ``attrs`` under ``DataFrame.attrs[ATTRS_KEY]``
    (:func:`profiles.gis.geoparquet_table`), built straight from the arrays. The geometries are
    those of the project's GIS layers (:mod:`profiles.gis`): a line that crosses the
    antimeridian is cut there into a MultiLineString, every longitude within [-180, 180].
    """
    from .gis import geoparquet_table, write_geoparquet
    from .outputs import write_with

    table = geoparquet_table(layer.columns, layer.kinds, layer.lines, attrs={ATTRS_KEY: attrs})
    return write_with(final, lambda temporary: write_geoparquet(temporary, table))


def read_part_attrs(path: Path) -> dict | None:
    """The metadata a finished part carries, or None when it has none (not a finished part)."""
    import pyarrow.parquet as pq

    try:
        metadata = pq.read_schema(path).metadata or {}
        return json.loads(metadata[PARQUET_ATTRS])[ATTRS_KEY]
    except (OSError, KeyError, ValueError, TypeError):
        return None


def peak_rss_mb() -> float:
    """Peak resident memory of this process since it started, MB."""
    try:
        import resource
    except ImportError:  # Windows
        import psutil

        return psutil.Process().memory_info().peak_wset / 2**20
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return peak / 2**20 if sys.platform == "darwin" else peak / 2**10  # bytes on macOS, KiB on Linux


def one_line(error: BaseException) -> str:
    """The first line of an error's message (its type when it has none)."""
    text = str(error).strip()
    return text.splitlines()[0] if text else type(error).__name__


class _Clock:
    """Seconds spent in each stage of a task, and, while :mod:`tracemalloc` traces (as the
    benchmark makes it), the peak of traced memory during each stage (MB)."""

    def __init__(self):
        self.seconds: dict[str, float] = {}
        self.memory: dict[str, float] = {}
        if tracemalloc.is_tracing():
            tracemalloc.reset_peak()
        self._start = self._last = time.perf_counter()

    def lap(self, stage: str) -> None:
        now = time.perf_counter()
        self.seconds[stage] = now - self._last
        self._last = now
        if tracemalloc.is_tracing():
            self.memory[stage] = tracemalloc.get_traced_memory()[1] / 2**20
            tracemalloc.reset_peak()

    def finish(self) -> dict[str, float]:
        return {**self.seconds, "total": time.perf_counter() - self._start}
