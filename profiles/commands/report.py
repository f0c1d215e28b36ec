"""``profiles report``: the whole job, from raw survey files to one HTML report."""

from __future__ import annotations

import argparse

from .common import (
    add_alpha,
    add_output_arguments,
    add_shortest_wavelength,
    add_spacing,
    add_survey_arguments,
    length,
    print_json,
    report_warnings,
)

NAME = "report"
HELP = "run the whole analysis and write one self-contained HTML report"
DESCRIPTION = """\
Run the whole job on a survey and write report.html into --out DIR: the spacing audit, the
spectra of every segment, sliding windows, the line comparison and fabric fit, the coherence
and admittance of bathymetry and free-air gravity where both exist, and the depth to source
where the configuration asks for it. Beside the report: the tables as CSV, the figures as PNG,
summary.json, and config.toml, the configuration as run, which repeats the run exactly.

The survey configuration (--config, TOML) names the input files, columns, fields and
methods; options given here override it. Without a configuration, every numeric column whose
name tells its kind (depth, elevation, gravity, magnetic) is analysed.

The spacing audit is about spectral aliasing only; it does not judge a survey's fitness for
navigation or charting, which is decided under the applicable hydrographic survey standards
by a qualified surveyor."""


def add_arguments(parser: argparse.ArgumentParser) -> None:
    # Survey files may come from the configuration instead.
    add_survey_arguments(
        parser, paths_help="survey files (default: the inputs of --config)", paths_required=False
    )
    # None means "not given": the configuration's value (or the library default) applies.
    parser.set_defaults(gap=None, turn_angle=None, turn_distance=None)
    parser.add_argument("--config", metavar="FILE", help="survey configuration (TOML), e.g. survey.toml")
    group = parser.add_argument_group("analysis (override the configuration)")
    add_shortest_wavelength(group, help="shortest wavelength to resolve, for every field, e.g. 4km")
    group.add_argument(
        "--window",
        type=length("--window"),
        metavar="LENGTH",
        help="length of the along-track windows, e.g. 40km",
    )
    group.add_argument(
        "--step", type=length("--step"), metavar="LENGTH", help="distance between window starts, e.g. 10km"
    )
    group.add_argument(
        "--method",
        choices=("multitaper", "welch"),
        help="density estimate of every segment (default multitaper)",
    )
    add_alpha(group, default=None, help="false-alarm probability of the tests (default 0.05)")
    add_spacing(group, help="resampling spacing of every field (default: each segment's median step)")
    add_output_arguments(
        parser,
        out_help="write report.html, the tables, figures and summary.json into DIR",
        out_required=True,
        json_help="print summary.json on stdout",
    )


def configure(args: argparse.Namespace):
    """The configuration of a run: the file (if any), then the command-line options over it."""
    from pathlib import Path

    from ..config import config_for_fields, load_config, validate
    from ..errors import InputError

    notes: list[str] = []
    if args.config:
        config = load_config(args.config)
        if args.survey:
            config = config.with_changes(inputs=tuple(Path(p) for p in args.survey))
    else:
        if not args.survey:
            raise InputError("give SURVEY files or --config FILE (a survey configuration)")
        from ..read import read_surveys

        # Without a configuration, the fields are the numeric columns the files hold.
        probe = read_surveys(args.survey, crs=args.crs, layer=args.layer)
        config, notes = config_for_fields(
            args.survey, probe.fields, shortest_wavelength=args.shortest_wavelength
        )
        if not config.fields:
            raise InputError(
                f"{', '.join(args.survey)}: no field whose kind can be told from its "
                "name; write a configuration file naming the fields"
            )
    changes = {}
    columns = dict(config.columns)
    for key in ("line", "lon", "lat", "time"):
        value = getattr(args, f"{key}_column")
        if value:
            columns[key] = value
    changes["columns"] = columns
    for key in ("crs", "layer", "window", "step", "alpha", "spacing"):
        if getattr(args, key) is not None:
            changes[key] = getattr(args, key)
    if args.lines:
        changes["lines"] = tuple(args.lines)
    if args.gap is not None:
        changes["gap"] = args.gap
    if args.turn_angle is not None:
        changes["turn_angle"] = args.turn_angle
    if args.turn_distance is not None:
        changes["turn_distance"] = args.turn_distance
    if args.method is not None:
        changes["spectrum_method"] = args.method
    if args.shortest_wavelength is not None:
        from dataclasses import replace

        changes["fields"] = tuple(
            replace(f, shortest_wavelength=args.shortest_wavelength) for f in config.fields
        )
    if args.alpha is not None and not 0 < args.alpha < 1:
        raise InputError(f"--alpha must be between 0 and 1 (got {args.alpha})")
    return validate(config.with_changes(**changes)), notes


def run(args: argparse.Namespace) -> int:
    from ..outputs import OutputFolder
    from ..report.build import report_outputs, write_report
    from ..report.job import run_survey

    config, notes = configure(args)
    folder = OutputFolder(args.out, report_outputs(config), inputs=config.inputs, overwrite=args.overwrite)
    results = run_survey(config, quiet=args.quiet)
    document = write_report(results, folder, quiet=args.quiet)
    if args.json:
        print_json(document)
    else:
        print(
            f"{folder.path('report.html')}: {results.config.name}, {len(results.segments)} segments, "
            f"{len(results.fields)} fields, {len(results.notices)} warnings"
        )
        for sentence in document["attention"]:
            print(f"  attention: {sentence}")
    return report_warnings(args, notes + [str(n) for n in results.notices])
