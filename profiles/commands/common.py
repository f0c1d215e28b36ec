"""Options shared by the commands, defined once, and the steps every command takes.

Every command that reads a survey accepts the same survey options (files, column names, CRS,
lines, segmentation) and the same output options (``--json``, ``--out``, ``--overwrite``,
``--quiet``, ``--strict``).
"""

from __future__ import annotations

import argparse
import sys
from dataclasses import dataclass

from ..columns import ColumnNames
from ..errors import InputError
from ..units import parse_length, parse_length_or_multiple


def _argument_error(error: InputError, what: str) -> argparse.ArgumentTypeError:
    """The error's message without its leading option name: argparse puts that in front."""
    text = str(error)
    return argparse.ArgumentTypeError(text.removeprefix(f"{what}: "))


def length(what: str):
    """argparse type for a length with a unit, in metres."""

    def parse(text: str) -> float:
        try:
            return parse_length(text, what=what)
        except InputError as error:
            raise _argument_error(error, what) from None

    parse.__name__ = "length"
    return parse


def fraction(what: str):
    """argparse type for a fraction strictly between 0 and 1 (``0.05``, ``0.01``)."""

    def parse(text: str) -> float:
        try:
            value = float(text)
        except ValueError:
            raise argparse.ArgumentTypeError(
                f"{text!r} is not a number; write a fraction such as 0.01"
            ) from None
        if not 0.0 < value < 1.0:
            raise argparse.ArgumentTypeError(f"{text!r} must be a fraction strictly between 0 and 1")
        return value

    parse.__name__ = "fraction"
    return parse


def time_bandwidth(text: str) -> float:
    """argparse type for the multitaper time-bandwidth product NW, a number of at least 1."""
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a number; write e.g. 4") from None
    if not value >= 1.0:  # also refuses nan
        raise argparse.ArgumentTypeError(f"{text!r} must be at least 1 (2 NW - 1 tapers are used)")
    return value


def add_alpha(
    group, *, default: float | None = 0.05, help: str = "significance level (default 0.05)"
) -> None:
    """``--alpha``: the significance level, a fraction strictly between 0 and 1."""
    group.add_argument("--alpha", type=fraction("--alpha"), default=default, help=help)


def add_shortest_wavelength(
    group, *, help: str = "shortest wavelength you need to resolve, e.g. 4km"
) -> None:
    """``--shortest-wavelength``: the target the spacing and the aliasing checks use."""
    group.add_argument(
        "--shortest-wavelength", type=length("--shortest-wavelength"), metavar="LENGTH", help=help
    )


def add_longest_wavelength(group) -> None:
    """``--longest-wavelength``: flags segments shorter than two cycles of it."""
    group.add_argument(
        "--longest-wavelength",
        type=length("--longest-wavelength"),
        metavar="LENGTH",
        help="longest wavelength asked about; flags segments shorter than two cycles of it",
    )


def add_budget_arguments(parser: argparse.ArgumentParser, *, title: str, fit_band: bool = True) -> None:
    """The aliasing budget's options: ``--alias-tolerance``, ``--potential-field`` and, with
    ``fit_band``, ``--fit-band``."""
    budget = parser.add_argument_group(title)
    budget.add_argument(
        "--alias-tolerance",
        type=fraction("--alias-tolerance"),
        default=0.01,
        metavar="FRACTION",
        help="largest acceptable aliased power at the shortest wavelength, as a fraction of the "
        "true power there (default 0.01)",
    )
    budget.add_argument(
        "--potential-field",
        action="store_true",
        help="the field is a potential field (gravity, magnetics): fit an exponential fall-off "
        "exp(-4 pi h k) instead of a power law",
    )
    if fit_band:
        budget.add_argument(
            "--fit-band",
            nargs=2,
            type=length("--fit-band"),
            metavar=("LONGEST", "SHORTEST"),
            help="wavelengths bounding the fall-off fit, e.g. 20km 1km (default: chosen automatically)",
        )


def add_spacing(group, *, help: str = "resampling spacing (default: each segment's median spacing)") -> None:
    """``--spacing``: the spacing of the uniform grid the stations are resampled onto."""
    group.add_argument("--spacing", type=length("--spacing"), metavar="LENGTH", help=help)


def add_interpolation(group) -> None:
    """``--interpolation``: linear or cubic resampling (after the anti-alias filter)."""
    group.add_argument(
        "--interpolation", choices=("linear", "cubic"), default="linear", help="resampling (default linear)"
    )


def add_confidence(group) -> None:
    """``--confidence``: the level of a density's confidence bounds."""
    group.add_argument(
        "--confidence",
        type=fraction("--confidence"),
        default=0.95,
        help="level of the confidence bounds (default 0.95)",
    )


def add_nw(group, *, default: float = 4.0) -> None:
    """``--nw``: the multitaper time-bandwidth product (2 NW - 1 tapers)."""
    group.add_argument(
        "--nw",
        type=time_bandwidth,
        default=default,
        help=f"multitaper time-bandwidth NW (default {default:g})",
    )


def add_segment_length(group, *, help: str) -> None:
    """``--segment-length``: the Welch block length."""
    group.add_argument("--segment-length", type=length("--segment-length"), metavar="LENGTH", help=help)


def gap_value(text: str):
    """argparse type for ``--gap``: a multiple (``5x``) or a length (``3km``)."""
    try:
        return parse_length_or_multiple(text, what="--gap")
    except InputError as error:
        raise _argument_error(error, "--gap") from None


SURVEY_FILES = "survey files: CSV/TSV, GeoPackage, GeoJSON, Shapefile or GeoParquet"


def add_survey_arguments(
    parser: argparse.ArgumentParser,
    *,
    field: str | None = None,
    metavar: str = "SURVEY",
    paths_help: str = SURVEY_FILES,
    paths_required: bool = True,
) -> None:
    """Survey files, column names, CRS, line selection and segmentation options.

    ``field``: None (no field option), "optional" or "required"; ``metavar`` and
    ``paths_help`` name and explain the positional survey paths, which may be left out when
    ``paths_required`` is False (they come from elsewhere, e.g. a configuration).
    """
    parser.add_argument("survey", nargs="+" if paths_required else "*", metavar=metavar, help=paths_help)
    if field == "required":
        parser.add_argument("--field", required=True, help="field (column) to analyse, e.g. depth_m")
    elif field == "optional":
        parser.add_argument("--field", help="field (column) to analyse, e.g. depth_m")
    group = parser.add_argument_group("survey columns and coordinates")
    group.add_argument("--line-column", help="column holding the line id (default: found by name)")
    group.add_argument("--lon-column", help="longitude column, or easting with --crs")
    group.add_argument("--lat-column", help="latitude column, or northing with --crs")
    group.add_argument("--time-column", help="time column (ISO 8601 or seconds)")
    group.add_argument("--crs", help="CRS of projected coordinates, e.g. EPSG:32735")
    group.add_argument("--layer", help="layer of a multi-layer GIS file")
    group.add_argument(
        "--line",
        action="append",
        dest="lines",
        metavar="LINE",
        help="analyse only this line (repeat for several)",
    )
    split = parser.add_argument_group("segments")
    split.add_argument(
        "--gap",
        type=gap_value,
        default=("multiple", 5.0),
        help="split at steps longer than this: a multiple of the line's median "
        "spacing (5x, the default) or a length (3km)",
    )
    split.add_argument(
        "--turn-angle",
        type=float,
        default=45.0,
        metavar="DEGREES",
        help="split where the course changes by more than this (default 45)",
    )
    split.add_argument(
        "--turn-distance",
        type=length("--turn-distance"),
        default=2000.0,
        metavar="LENGTH",
        help="distance over which course is averaged (default 2km)",
    )


def add_output_arguments(
    parser: argparse.ArgumentParser,
    *,
    out_help: str = "write tables (CSV) and figures into DIR",
    out_required: bool = False,
    json_help: str = "print one JSON document on stdout",
) -> None:
    """``--json``, ``--out``, ``--overwrite``, ``--quiet``, ``--strict``."""
    group = parser.add_argument_group("output")
    group.add_argument("--json", action="store_true", help=json_help)
    group.add_argument("--out", metavar="DIR", required=out_required, help=out_help)
    group.add_argument("--overwrite", action="store_true", help="replace existing outputs in DIR")
    group.add_argument("--quiet", action="store_true", help="no progress or warnings on stderr")
    group.add_argument("--strict", action="store_true", help="exit with status 1 when there are warnings")


@dataclass(frozen=True)
class Loaded:
    """A survey read and segmented as the options ask."""

    survey: object
    segments: object
    warnings: tuple[str, ...]


def load(args: argparse.Namespace, *, fields: tuple[str, ...] | None = None) -> Loaded:
    """Read the survey files and build segments, as the shared options say."""
    from ..geometry import build_segments
    from ..read import read_surveys

    columns = ColumnNames(
        line=args.line_column, lon=args.lon_column, lat=args.lat_column, time=args.time_column
    )
    survey = read_surveys(args.survey, columns=columns, fields=fields, crs=args.crs, layer=args.layer)
    kind, value = args.gap
    segments = build_segments(
        survey,
        gap_multiple=value if kind == "multiple" else 5.0,
        gap_length=value if kind == "length" else None,
        turn_angle=args.turn_angle,
        turn_distance=args.turn_distance,
    )
    if args.lines:
        try:
            segments = segments.select(args.lines)
        except InputError as error:
            raise InputError(f"--line: {error}") from None
    if len(segments) == 0:
        raise InputError(f"{', '.join(args.survey)}: no segment with two or more stations")
    return Loaded(segments.survey, segments, survey.warnings + segments.warnings)


def report_warnings(args: argparse.Namespace, warnings) -> int:
    """Print warnings on stderr (unless quiet); return the exit status they imply."""
    warnings = list(dict.fromkeys(warnings))
    if not args.quiet:
        for message in warnings:
            print(f"profiles: warning: {message}", file=sys.stderr)
    return 1 if (warnings and args.strict) else 0


def print_json(document) -> None:
    """Print one JSON document on stdout."""
    from ..outputs import json_text

    sys.stdout.write(json_text(document))
