"""``profiles batch``: an archive of survey files on a Dask cluster, one task per file."""

from __future__ import annotations

import argparse

from .common import (
    add_alpha,
    add_budget_arguments,
    add_longest_wavelength,
    add_output_arguments,
    add_shortest_wavelength,
    add_spacing,
    add_survey_arguments,
    length,
    print_json,
    report_warnings,
)

NAME = "batch"
HELP = "spacing audit, spectra and windows of every file of an archive, on Dask"
DESCRIPTION = """\
Analyse every survey file found in PATHS (files, or folders searched for survey files) one
file per task on a Dask cluster: per segment the spacing audit, the dominant wavelength with
Fisher's p-value and the red-noise verdict, and the along-track windows with their aliasing
reasons. Results go into DIR as GeoParquet, one part per input file
(segments/part-<id>.parquet, windows/part-<id>.parquet; EPSG:4326 lines), and summary.json
(counts, each file's row accounting, the failures and the options).

A file that cannot be analysed is recorded with the reason and the rest go on. Running the
same command again skips the files already finished and retries the others; --overwrite redoes
everything. By default a local cluster of --workers single-threaded processes (one per CPU)
is started and closed; --scheduler uses a running cluster instead."""


def add_arguments(parser: argparse.ArgumentParser) -> None:
    add_survey_arguments(
        parser,
        field="required",
        metavar="PATH",
        paths_help="survey files, or folders to search for them (CSV/TSV, GeoPackage, ...)",
    )
    target = parser.add_argument_group("targets")
    add_shortest_wavelength(target, help="shortest wavelength you need to resolve, e.g. 4km")
    add_longest_wavelength(target)
    add_budget_arguments(parser, title="aliasing budget (as profiles spacing --field)", fit_band=True)
    analysis = parser.add_argument_group("spectra and windows")
    add_spacing(analysis)
    add_alpha(analysis)
    analysis.add_argument(
        "--window",
        type=length("--window"),
        metavar="LENGTH",
        help="window length (default from each file's spacing and the shortest wavelength)",
    )
    analysis.add_argument(
        "--step",
        type=length("--step"),
        metavar="LENGTH",
        help="distance between window starts (default a quarter of the window)",
    )
    cluster = parser.add_argument_group("cluster").add_mutually_exclusive_group()
    cluster.add_argument(
        "--workers",
        type=int,
        metavar="N",
        help="worker processes of the local cluster (default: one per CPU)",
    )
    cluster.add_argument(
        "--scheduler", metavar="ADDRESS", help="use a running Dask scheduler, e.g. tcp://10.0.0.5:8786"
    )
    add_output_arguments(parser)


def run(args: argparse.Namespace) -> int:
    from ..batch import run_batch
    from ..batch_task import BatchOptions
    from ..errors import InputError
    from ..progress import bars_wanted

    if not args.out:
        raise InputError("--out DIR is required: batch writes its results into a folder")
    kind, value = args.gap
    options = BatchOptions(
        field=args.field,
        line_column=args.line_column,
        lon_column=args.lon_column,
        lat_column=args.lat_column,
        time_column=args.time_column,
        crs=args.crs,
        layer=args.layer,
        lines=tuple(args.lines) if args.lines else None,
        gap_multiple=value if kind == "multiple" else 5.0,
        gap_length=value if kind == "length" else None,
        turn_angle=args.turn_angle,
        turn_distance=args.turn_distance,
        shortest_wavelength=args.shortest_wavelength,
        longest_wavelength=args.longest_wavelength,
        falloff_model="exponential" if args.potential_field else "power-law",
        alias_tolerance=args.alias_tolerance,
        fit_band=tuple(args.fit_band) if args.fit_band else None,
        spacing=args.spacing,
        alpha=args.alpha,
        window=args.window,
        step=args.step,
    )
    summary = run_batch(
        args.survey,
        out=args.out,
        options=options,
        workers=args.workers,
        scheduler=args.scheduler,
        overwrite=args.overwrite,
        progress=bars_wanted(quiet=args.quiet),
    )
    if args.json:
        print_json(summary.to_json())
    else:
        print(str(summary))
    counts = summary.counts
    if counts["failed"] and not (counts["done"] or counts["skipped"]):
        first = summary.failures[0]
        reason = first["reason"]
        if first["file"] not in reason:
            reason = f"{first['file']}: {reason}"
        if counts["failed"] > 1:
            reason = f"every one of the {counts['failed']} files failed; the first: {reason}"
        raise InputError(reason)
    warnings = list(summary.warnings)
    with_warnings = sum(1 for f in summary.files if f.get("warnings"))
    if with_warnings:
        warnings.append(f"{with_warnings} files have warnings; see {args.out}/summary.json")
    warnings += [f"{f['file']}: failed: {f['reason']}" for f in summary.failures]
    return report_warnings(args, warnings)
