"""The survey configuration: one TOML file that says how a survey is to be analysed.

Read with the standard library's :mod:`tomllib`; every value is checked, and a bad one is
refused with one line naming the file, the table and the key (:class:`~profiles.errors.InputError`).
Paths are relative to the configuration file. Lengths take units (``"250m"``, ``"4km"``).
``docs/user-guide.md`` describes every key; ``demo_data/survey.toml`` is a complete example::

    [survey]
    name = "MQ26-03 demo survey"       # optional, shown in the report
    inputs = ["survey.csv"]            # survey files, relative to this file
    # crs = "EPSG:32735"               # projected coordinates (easting, northing)
    # layer = "stations"               # layer of a multi-layer GIS file
    # lines = ["L01", "L05"]           # analyse only these lines

    [columns]                          # optional; found by their usual names otherwise
    line = "line"
    time = "time"
    lon = "lon"
    lat = "lat"

    [segments]                         # optional; where lines are split
    gap = "5x"                         # a multiple of the median spacing, or a length
    turn_angle = 45.0                  # degrees
    turn_distance = "2km"

    [fields.depth_m]                   # one table per field (column) to analyse
    kind = "bathymetry"                # bathymetry or potential_field
    units = "m"                        # optional; read off the name otherwise
    positive_down = true               # bathymetry: depth (true) or elevation (false)
    shortest_wavelength = "4km"        # the spacing audit's target
    # longest_wavelength = "60km"      # flags segments shorter than two cycles of it
    # anomaly = "free_air"             # potential_field: free_air, bouguer, magnetic, other
    # source_depth = true              # potential_field: depth to source from the slope
    # fabric_band = ["5km", "40km"]    # look for the fabric's peak between these wavelengths
    # fabric_exclude = ["L07"]         # lines (or line/segment) left out of the fabric fit

    [windows]
    window = "40km"                    # length of the along-track windows
    step = "10km"                      # distance between window starts

    [significance]
    alpha = 0.05                       # false-alarm probability of every test

    [spectrum]
    method = "multitaper"              # multitaper or welch
    nw = 4.0                           # multitaper time-bandwidth product (at least 1)
    # block = "40km"                   # Welch block (default: a quarter of each segment)
    # confidence = 0.95                # level of the density's confidence bounds
    # spacing = "250m"                 # resampling spacing (default: each segment's median step)
    # interpolation = "linear"         # linear or cubic, after the anti-alias filter

    [coherence]                        # optional; bathymetry against free-air gravity by default
    input = "depth_m"
    output = "gravity_mgal"
    method = "welch"                   # welch or multitaper
    block = "40km"                     # Welch block (default: half the longest segment)
    # nw = 4.5                         # multitaper time-bandwidth product
    # load_depth = "4000m"             # mean depth of the load (default: mean of the input)
    # enabled = false                  # no cross-spectrum at all
"""

from __future__ import annotations

import math
import os
import tomllib
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Literal, get_args

from .errors import InputError
from .units import parse_length, parse_length_or_multiple

FieldKindName = Literal["bathymetry", "potential_field"]
Anomaly = Literal["free_air", "bouguer", "magnetic", "other"]
SpectrumMethod = Literal["multitaper", "welch"]
CoherenceMethod = Literal["welch", "multitaper"]
Interpolation = Literal["linear", "cubic"]

#: Keys each table accepts, in the order the written configuration lists them.
KEYS: dict[str, tuple[str, ...]] = {
    "survey": ("name", "inputs", "lines", "crs", "layer"),
    "columns": ("line", "lon", "lat", "time"),
    "segments": ("gap", "turn_angle", "turn_distance"),
    "field": (
        "kind",
        "units",
        "positive_down",
        "anomaly",
        "shortest_wavelength",
        "longest_wavelength",
        "source_depth",
        "fabric_band",
        "fabric_exclude",
    ),
    "windows": ("window", "step"),
    "significance": ("alpha",),
    "spectrum": ("method", "nw", "block", "confidence", "spacing", "interpolation"),
    "coherence": ("enabled", "input", "output", "method", "block", "nw", "load_depth"),
}
TABLES = ("survey", "columns", "segments", "fields", "windows", "significance", "spectrum", "coherence")


@dataclass(frozen=True)
class FieldConfig:
    """How one field is analysed.

    Attributes
    ----------
    name : str
        Column name in the survey files.
    kind : str
        ``"bathymetry"`` or ``"potential_field"``.
    units : str
        Units of the values (for labels).
    positive_down : bool
        Bathymetry given as depth (True) or as elevation (False); False for potential fields.
    anomaly : str or None
        Potential fields: ``"free_air"``, ``"bouguer"``, ``"magnetic"`` or ``"other"``.
    shortest_wavelength, longest_wavelength : float or None
        Targets of the spacing audit, metres.
    source_depth : bool
        Estimate the depth to source from the spectral slope (potential fields only).
    fabric_band : tuple of float or None
        Shortest and longest wavelength (m) the fabric's peak is looked for between.
    fabric_exclude : tuple of str
        Lines or ``line/segment`` labels left out of the fabric fit.
    """

    name: str
    kind: str
    units: str
    positive_down: bool = False
    anomaly: str | None = None
    shortest_wavelength: float | None = None
    longest_wavelength: float | None = None
    source_depth: bool = False
    fabric_band: tuple[float, float] | None = None
    fabric_exclude: tuple[str, ...] = ()


@dataclass(frozen=True)
class CoherenceConfig:
    """Cross-spectrum of two fields (``input`` against ``output``) and the load-model fit.

    Attributes
    ----------
    input, output : str
        Field names: X (e.g. depth, metres) and Y (e.g. free-air gravity, mGal).
    method : str
        ``"welch"`` or ``"multitaper"``.
    block : float or None
        Welch block length, metres (None: half the longest segment).
    nw : float
        Multitaper time-bandwidth product.
    load_depth : float or None
        Mean depth of the load, metres (None: the mean of a bathymetry input).
    """

    input: str
    output: str
    method: str = "welch"
    block: float | None = None
    nw: float = 4.5
    load_depth: float | None = None


@dataclass(frozen=True)
class SurveyConfig:
    """A survey configuration, validated; lengths in metres, paths absolute.

    Attributes
    ----------
    name : str
        Survey name for the report.
    inputs : tuple of Path
        Survey files.
    lines : tuple of str
        Lines to analyse (empty: every line).
    crs, layer : str or None
        CRS of projected coordinates; layer of a GIS file.
    columns : dict of str to str
        Explicit column names (``line``, ``lon``, ``lat``, ``time``).
    gap : tuple
        ``("multiple", 5.0)`` or ``("length", metres)``.
    turn_angle : float
        Degrees.
    turn_distance : float
        Metres.
    fields : tuple of FieldConfig
        Fields to analyse, in the order given.
    window, step : float or None
        Along-track window length and step, metres.
    alpha : float
        False-alarm probability of every test.
    spectrum_method : str
        Density estimate of every segment: ``"multitaper"`` or ``"welch"``.
    nw : float
        Multitaper time-bandwidth product.
    welch_block : float or None
        Welch block length, metres (None: a quarter of each segment).
    confidence : float
        Level of the density's confidence bounds.
    spacing : float or None
        Resampling spacing, metres (None: each segment's median station step).
    interpolation : str
        ``"linear"`` or ``"cubic"`` (after the anti-alias filter).
    coherence : CoherenceConfig or None
        The cross-spectrum to compute, if any.
    coherence_enabled : bool
        False when the configuration turned the cross-spectrum off.
    source : str
        Where the configuration came from (file name, or ``"command line"``).
    """

    name: str
    inputs: tuple[Path, ...]
    lines: tuple[str, ...] = ()
    crs: str | None = None
    layer: str | None = None
    columns: dict[str, str] = field(default_factory=dict)
    gap: tuple[str, float] = ("multiple", 5.0)
    turn_angle: float = 45.0
    turn_distance: float = 2000.0
    fields: tuple[FieldConfig, ...] = ()
    window: float | None = None
    step: float | None = None
    alpha: float = 0.05
    spectrum_method: str = "multitaper"
    nw: float = 4.0
    welch_block: float | None = None
    confidence: float = 0.95
    spacing: float | None = None
    interpolation: str = "linear"
    coherence: CoherenceConfig | None = None
    coherence_enabled: bool = True
    source: str = "command line"

    def field_config(self, name: str) -> FieldConfig:
        """The configuration of one field."""
        for item in self.fields:
            if item.name == name:
                return item
        raise InputError(f"{self.source}: no field {name!r}; fields: {', '.join(self.field_names)}")

    @property
    def field_names(self) -> tuple[str, ...]:
        """Names of the fields, in order."""
        return tuple(item.name for item in self.fields)

    def with_changes(self, **changes) -> SurveyConfig:
        """A copy with some values replaced (command-line options over the file)."""
        return replace(self, **changes)

    def to_toml(self, *, relative_to: str | Path | None = None) -> str:
        """The configuration as TOML that :func:`load_config` reads back to the same values.

        Input paths are written relative to ``relative_to`` (the folder the text will be saved
        in) where possible, else absolute.
        """
        return _to_toml(self, relative_to)


# --------------------------------------------------------------------------------------------
# Reading
# --------------------------------------------------------------------------------------------


def load_config(path: str | Path) -> SurveyConfig:
    """Read and validate a survey configuration file.

    Raises
    ------
    InputError
        The file is missing or not TOML, or a key is unknown or has a bad value (one line
        naming the file, table and key).
    """
    path = Path(path)
    if not path.is_file():
        raise InputError(f"{path}: no such configuration file")
    try:
        document = tomllib.loads(path.read_text(encoding="utf-8"))
    except UnicodeDecodeError:
        raise InputError(f"{path}: is not UTF-8 text; expected a TOML configuration") from None
    except tomllib.TOMLDecodeError as error:
        raise InputError(f"{path}: not valid TOML ({error})") from None
    return parse_config(document, base=path.resolve().parent, source=str(path))


def parse_config(document: dict, *, base: str | Path, source: str) -> SurveyConfig:
    """Validate a configuration already parsed from TOML; paths are relative to ``base``."""
    reader = _Reader(source)
    unknown = [key for key in document if key not in TABLES]
    if unknown:
        reader.fail(
            unknown[0], f"unknown table or key {unknown[0]!r}; known tables: {', '.join(TABLES)}", table=""
        )
    survey = reader.table(document, "survey")
    columns = reader.table(document, "columns")
    segments = reader.table(document, "segments")
    windows = reader.table(document, "windows")
    significance = reader.table(document, "significance")
    spectrum = reader.table(document, "spectrum")
    coherence = reader.table(document, "coherence", optional=True)

    base = Path(base)
    inputs = tuple(Path(os.path.normpath(base / item)) for item in reader.strings(survey, "survey", "inputs"))
    fields = _fields(reader, document.get("fields", {}))
    config = SurveyConfig(
        name=reader.string(survey, "survey", "name") or "survey",
        inputs=inputs,
        lines=reader.strings(survey, "survey", "lines"),
        crs=reader.string(survey, "survey", "crs"),
        layer=reader.string(survey, "survey", "layer"),
        columns={key: reader.string(columns, "columns", key) for key in columns},
        gap=reader.gap(segments, "segments", "gap") or ("multiple", 5.0),
        turn_angle=reader.number(segments, "segments", "turn_angle", low=0.0, high=180.0, default=45.0),
        turn_distance=reader.length(segments, "segments", "turn_distance") or 2000.0,
        fields=fields,
        window=reader.length(windows, "windows", "window"),
        step=reader.length(windows, "windows", "step"),
        alpha=reader.number(significance, "significance", "alpha", low=0.0, high=1.0, default=0.05,
                            open_high=True),
        spectrum_method=reader.choice(spectrum, "spectrum", "method", SpectrumMethod) or "multitaper",
        nw=reader.number(spectrum, "spectrum", "nw", low=1.0, high=50.0, default=4.0, open_low=False),
        welch_block=reader.length(spectrum, "spectrum", "block"),
        confidence=reader.number(spectrum, "spectrum", "confidence", low=0.0, high=1.0, default=0.95,
                                 open_high=True),
        spacing=reader.length(spectrum, "spectrum", "spacing"),
        interpolation=reader.choice(spectrum, "spectrum", "interpolation", Interpolation) or "linear",
        source=source,
    )
    enabled = True
    chosen = None
    if coherence is not None:
        enabled = reader.boolean(coherence, "coherence", "enabled", default=True)
        if enabled:
            chosen = _coherence(reader, coherence, config)
    return validate(config.with_changes(coherence=chosen, coherence_enabled=enabled))


def validate(config: SurveyConfig) -> SurveyConfig:
    """Check the values that depend on each other, and fill in the coherence pair.

    Returns the configuration with ``coherence`` set to the default pair (the bathymetry field
    against the free-air gravity field) when the configuration names none and both exist.
    """
    where = config.source
    names = config.field_names
    if len(set(names)) != len(names):
        raise InputError(f"{where}: a field is configured twice")
    if config.step is not None and config.window is not None and config.step > config.window:
        raise InputError(
            f"{where}: [windows] step ({config.step / 1e3:g} km) is longer than the window "
            f"({config.window / 1e3:g} km); stretches of track would be left out"
        )
    if config.coherence is not None:
        pair = config.coherence
        for role, name in (("input", pair.input), ("output", pair.output)):
            if name not in names:
                raise InputError(
                    f"{where}: [coherence] {role}: {name!r} is not a configured field; "
                    f"fields: {', '.join(names) or 'none'}"
                )
        if pair.input == pair.output:
            raise InputError(f"{where}: [coherence] input and output are the same field {pair.input!r}")
    elif config.coherence_enabled:
        default = default_coherence(config.fields)
        if default is not None:
            config = config.with_changes(coherence=default)
    return config


def default_coherence(fields) -> CoherenceConfig | None:
    """The bathymetry field against the free-air gravity field, when there is one of each."""
    bathymetry = [f.name for f in fields if f.kind == "bathymetry"]
    gravity = [f.name for f in fields if f.kind == "potential_field" and f.anomaly == "free_air"]
    if len(bathymetry) == 1 and len(gravity) == 1:
        return CoherenceConfig(input=bathymetry[0], output=gravity[0])
    return None


def _fields(reader: _Reader, tables) -> tuple[FieldConfig, ...]:
    from .units import field_units

    if not isinstance(tables, dict):
        reader.fail("fields", "must be a table of tables, e.g. [fields.depth_m]", table="")
    out = []
    for name, table in tables.items():
        where = f"fields.{name}"
        if not isinstance(table, dict):
            reader.fail(name, "must be a table, e.g. [fields.depth_m] with kind = ...", table="fields")
        reader.known(table, where, KEYS["field"])
        kind = reader.choice(table, where, "kind", FieldKindName)
        if kind is None:
            reader.fail("kind", f"is required: one of {', '.join(get_args(FieldKindName))}", table=where)
        anomaly = reader.choice(table, where, "anomaly", Anomaly)
        positive_down = reader.boolean(table, where, "positive_down", default=kind == "bathymetry")
        source_depth = reader.boolean(table, where, "source_depth", default=False)
        if kind == "bathymetry":
            if anomaly is not None:
                reader.fail("anomaly", "applies to potential fields only", table=where)
            if source_depth:
                reader.fail("source_depth", "applies to potential fields only", table=where)
        elif "positive_down" in table:
            reader.fail("positive_down", "applies to bathymetry only", table=where)
        band = reader.lengths(table, where, "fabric_band")
        if band is not None and len(band) != 2:
            reader.fail("fabric_band", f'must be two lengths, e.g. ["5km", "40km"], got {len(band)}',
                        table=where)
        shortest = reader.length(table, where, "shortest_wavelength")
        longest = reader.length(table, where, "longest_wavelength")
        if shortest is not None and longest is not None and longest <= shortest:
            reader.fail("longest_wavelength", "must be longer than shortest_wavelength", table=where)
        out.append(
            FieldConfig(
                name=str(name),
                kind=kind,
                units=reader.string(table, where, "units") or field_units(str(name)),
                positive_down=bool(positive_down) if kind == "bathymetry" else False,
                anomaly=anomaly if kind == "potential_field" else None,
                shortest_wavelength=shortest,
                longest_wavelength=longest,
                source_depth=bool(source_depth),
                fabric_band=None if band is None else (min(band), max(band)),
                fabric_exclude=reader.strings(table, where, "fabric_exclude"),
            )
        )
    return tuple(out)


def _coherence(reader: _Reader, table: dict, config: SurveyConfig) -> CoherenceConfig | None:
    default = default_coherence(config.fields)
    given_input = reader.string(table, "coherence", "input")
    given_output = reader.string(table, "coherence", "output")
    pair_input = given_input or (default.input if default else None)
    pair_output = given_output or (default.output if default else None)
    if pair_input is None or pair_output is None:
        missing = "input" if pair_input is None else "output"
        reader.fail(missing, "is required: no bathymetry and free-air gravity pair to default to",
                    table="coherence")
    return CoherenceConfig(
        input=pair_input,
        output=pair_output,
        method=reader.choice(table, "coherence", "method", CoherenceMethod) or "welch",
        block=reader.length(table, "coherence", "block"),
        nw=reader.number(table, "coherence", "nw", low=1.0, high=50.0, default=4.5, open_low=False),
        load_depth=reader.length(table, "coherence", "load_depth"),
    )


class _Reader:
    """Typed access to TOML tables with one-line errors naming file, table and key."""

    def __init__(self, source: str):
        self.source = source

    def fail(self, key: str, message: str, *, table: str):
        where = f"[{table}] {key}" if table else key
        raise InputError(f"{self.source}: {where}: {message}")

    def known(self, table: dict, name: str, keys: tuple[str, ...]) -> None:
        for key in table:
            if key not in keys:
                self.fail(key, f"unknown key; known keys: {', '.join(keys)}", table=name)

    def table(self, document: dict, name: str, *, optional: bool = False) -> dict | None:
        value = document.get(name)
        if value is None:
            return None if optional else {}
        if not isinstance(value, dict):
            self.fail(name, f"must be a table, written [{name}]", table="")
        self.known(value, name, KEYS[name])
        return value

    def string(self, table: dict, name: str, key: str) -> str | None:
        value = table.get(key)
        if value is None:
            return None
        if not isinstance(value, str) or not value.strip():
            self.fail(key, f"must be a non-empty string in quotes, got {value!r}", table=name)
        return value

    def strings(self, table: dict, name: str, key: str) -> tuple[str, ...]:
        value = table.get(key, [])
        if isinstance(value, str):
            value = [value]
        if not isinstance(value, list) or not all(isinstance(v, str) and v.strip() for v in value):
            self.fail(key, f'must be a list of strings, e.g. ["survey.csv"], got {value!r}', table=name)
        return tuple(value)

    def boolean(self, table: dict, name: str, key: str, *, default: bool) -> bool:
        value = table.get(key, default)
        if not isinstance(value, bool):
            self.fail(key, f"must be true or false, got {value!r}", table=name)
        return value

    def number(
        self,
        table: dict,
        name: str,
        key: str,
        *,
        low: float,
        high: float,
        default: float,
        open_low: bool = True,
        open_high: bool = False,
    ) -> float:
        value = table.get(key, default)
        if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
            self.fail(key, f"must be a number, got {value!r}", table=name)
        above = value > low if open_low else value >= low
        below = value < high if open_high else value <= high
        if not (above and below):
            lo, hi = ("(" if open_low else "["), (")" if open_high else "]")
            self.fail(key, f"must be in {lo}{low:g}, {high:g}{hi}, got {value!r}", table=name)
        return float(value)

    def length(self, table: dict, name: str, key: str) -> float | None:
        value = table.get(key)
        if value is None:
            return None
        if not isinstance(value, str):
            self.fail(key, f'must be a length with a unit in quotes, e.g. "4km", got {value!r}', table=name)
        return parse_length(value, what=f"{self.source}: [{name}] {key}")

    def lengths(self, table: dict, name: str, key: str) -> tuple[float, ...] | None:
        value = table.get(key)
        if value is None:
            return None
        if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
            self.fail(key, f'must be a list of lengths in quotes, e.g. ["5km", "40km"], got {value!r}',
                      table=name)
        return tuple(parse_length(v, what=f"{self.source}: [{name}] {key}") for v in value)

    def gap(self, table: dict, name: str, key: str) -> tuple[str, float] | None:
        value = table.get(key)
        if value is None:
            return None
        if not isinstance(value, str):
            self.fail(key, f'must be a multiple such as "5x" or a length such as "3km", got {value!r}',
                      table=name)
        return parse_length_or_multiple(value, what=f"{self.source}: [{name}] {key}")

    def choice(self, table: dict, name: str, key: str, options) -> str | None:
        value = table.get(key)
        if value is None:
            return None
        allowed = get_args(options)
        if value not in allowed:
            self.fail(key, f"must be one of {', '.join(allowed)}, got {value!r}", table=name)
        return value


# --------------------------------------------------------------------------------------------
# Configuration without a file
# --------------------------------------------------------------------------------------------


def config_for_fields(
    inputs,
    fields: tuple[str, ...],
    *,
    name: str = "survey",
    shortest_wavelength: float | None = None,
) -> tuple[SurveyConfig, list[str]]:
    """A configuration for survey files read without a configuration file.

    The kind of each field is read off its name (:func:`profiles.columns.field_kind`): depth
    or elevation is bathymetry, gravity and magnetic anomaly are potential fields. Fields
    whose kind cannot be told are left out, with a warning naming them.

    Returns
    -------
    config, warnings
    """
    from .columns import field_kind
    from .units import field_units

    chosen, warnings = [], []
    for column in fields:
        kind = field_kind(column)
        if kind is None:
            warnings.append(
                f"field {column}: its kind (bathymetry or potential field) cannot be told from the "
                "name; give it in a configuration file to analyse it"
            )
            continue
        if kind.kind in ("depth", "elevation"):
            item = FieldConfig(column, "bathymetry", field_units(column), positive_down=kind.kind == "depth",
                               shortest_wavelength=shortest_wavelength)
        else:
            anomaly = "magnetic" if kind.kind == "magnetic" else (
                "bouguer" if "bouguer" in column.lower() else "free_air"
            )
            item = FieldConfig(column, "potential_field", field_units(column), anomaly=anomaly,
                               shortest_wavelength=shortest_wavelength)
        chosen.append(item)
    config = SurveyConfig(name=name, inputs=tuple(Path(p) for p in inputs), fields=tuple(chosen))
    return validate(config), warnings


# --------------------------------------------------------------------------------------------
# Writing
# --------------------------------------------------------------------------------------------


def _length_text(metres: float) -> str:
    """A length as a TOML string that parses back to the same float: km when whole."""
    if metres % 1000.0 == 0.0:
        return f'"{metres / 1000.0:g}km"'
    return f'"{metres!r}m"'


def _value(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int | float):
        return repr(float(value))
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, list | tuple):
        return "[" + ", ".join(_value(v) for v in value) + "]"
    raise TypeError(f"cannot write {value!r} as TOML")


def _path_text(path: Path, relative_to) -> str:
    absolute = Path(path).resolve()
    if relative_to is None:
        return absolute.as_posix()
    try:
        return Path(os.path.relpath(absolute, Path(relative_to).resolve())).as_posix()
    except ValueError:  # another drive on Windows
        return absolute.as_posix()


def _to_toml(config: SurveyConfig, relative_to) -> str:
    lines = [
        "# profiles survey configuration, as the run used it: window, step and load depth are",
        "# the values the run took; keys left out take their documented defaults.",
        "",
    ]

    def table(name: str, items: list[tuple[str, str | None]]) -> None:
        body = [f"{key} = {text}" for key, text in items if text is not None]
        lines.extend([f"[{name}]", *body, ""])

    def length(metres):
        return None if metres is None else _length_text(metres)

    def text(value):
        return None if value is None else _value(value)

    table("survey", [
        ("name", _value(config.name)),
        ("inputs", _value([_path_text(p, relative_to) for p in config.inputs])),
        ("lines", _value(list(config.lines)) if config.lines else None),
        ("crs", text(config.crs)),
        ("layer", text(config.layer)),
    ])
    if config.columns:
        table("columns", [(key, _value(value)) for key, value in config.columns.items()])
    gap_kind, gap_value = config.gap
    table("segments", [
        ("gap", f'"{gap_value:g}x"' if gap_kind == "multiple" else _length_text(gap_value)),
        ("turn_angle", _value(config.turn_angle)),
        ("turn_distance", _length_text(config.turn_distance)),
    ])
    for item in config.fields:
        potential = item.kind == "potential_field"
        table(f"fields.{item.name}", [
            ("kind", _value(item.kind)),
            ("units", _value(item.units)),
            ("positive_down", None if potential else _value(item.positive_down)),
            ("anomaly", text(item.anomaly) if potential else None),
            ("shortest_wavelength", length(item.shortest_wavelength)),
            ("longest_wavelength", length(item.longest_wavelength)),
            ("source_depth", _value(item.source_depth) if potential else None),
            ("fabric_band", None if item.fabric_band is None
             else "[" + ", ".join(_length_text(v) for v in item.fabric_band) + "]"),
            ("fabric_exclude", _value(list(item.fabric_exclude)) if item.fabric_exclude else None),
        ])
    table("windows", [("window", length(config.window)), ("step", length(config.step))])
    table("significance", [("alpha", _value(config.alpha))])
    table("spectrum", [
        ("method", _value(config.spectrum_method)),
        ("nw", _value(config.nw)),
        ("block", length(config.welch_block)),
        ("confidence", _value(config.confidence)),
        ("spacing", length(config.spacing)),
        ("interpolation", _value(config.interpolation)),
    ])
    if config.coherence is not None:
        pair = config.coherence
        table("coherence", [
            ("input", _value(pair.input)),
            ("output", _value(pair.output)),
            ("method", _value(pair.method)),
            ("block", length(pair.block)),
            ("nw", _value(pair.nw)),
            ("load_depth", length(pair.load_depth)),
        ])
    elif not config.coherence_enabled:
        table("coherence", [("enabled", "false")])
    return "\n".join(lines).rstrip("\n") + "\n"
