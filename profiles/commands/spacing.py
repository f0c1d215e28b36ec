"""``profiles spacing``: station-spacing audit of every segment."""

from __future__ import annotations

import argparse

from .common import add_output_arguments, add_survey_arguments, length, load, print_json, report_warnings

NAME = "spacing"
HELP = "audit station spacing per segment against the wavelengths you need"
DESCRIPTION = """\
Split every line into segments at gaps and sharp turns and report, per segment, the station
spacing (minimum, median, 95th percentile, maximum), the Nyquist wavelength (2 x median spacing,
and 2 x maximum as the worst case) and, with --shortest-wavelength, every stretch whose spacing
is above half of it (aliasing risk).

This audit is about spectral aliasing only; it does not judge a survey's fitness for navigation
or charting, which is decided under the applicable hydrographic survey standards by a qualified
surveyor."""

OUTPUTS = ("segments.csv", "risky_stretches.csv", "breaks.csv", "stations.csv", "spacing.json")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    add_survey_arguments(parser, field="optional")
    target = parser.add_argument_group("targets")
    target.add_argument(
        "--shortest-wavelength",
        type=length("--shortest-wavelength"),
        metavar="LENGTH",
        help="shortest wavelength you need to resolve, e.g. 4km",
    )
    target.add_argument(
        "--longest-wavelength",
        type=length("--longest-wavelength"),
        metavar="LENGTH",
        help="longest wavelength asked about; flags segments shorter than two cycles of it",
    )
    add_output_arguments(parser)


def run(args: argparse.Namespace) -> int:
    from ..outputs import OutputFolder
    from ..spacing import audit_spacing
    from ..tables import text_table

    folder = (
        OutputFolder(args.out, OUTPUTS, inputs=args.survey, overwrite=args.overwrite) if args.out else None
    )
    loaded = load(args, fields=(args.field,) if args.field else None)
    audit = audit_spacing(
        loaded.segments,
        shortest_wavelength=args.shortest_wavelength,
        longest_wavelength=args.longest_wavelength,
    )
    accounting = loaded.survey.accounting
    warnings = loaded.warnings + audit.warnings
    document = {
        "rows": accounting.to_json(),
        **audit.to_json(),
        "breaks": loaded.segments.breaks.to_dict(orient="records"),
        "warnings": list(dict.fromkeys(warnings)),
    }
    if folder is not None:
        folder.csv("segments.csv", audit.segments)
        folder.csv("risky_stretches.csv", audit.risky_stretches)
        folder.csv("breaks.csv", loaded.segments.breaks)
        folder.csv("stations.csv", loaded.survey.stations)
        folder.json("spacing.json", document)
    if args.json:
        print_json(document)
    else:
        print(str(accounting))
        print()
        print(text_table(audit.segments))
        if args.shortest_wavelength:
            print()
            print(
                f"stretches with spacing above {args.shortest_wavelength / 2e3:.3f} km "
                f"(half of the shortest wavelength):"
            )
            print(text_table(audit.risky_stretches))
    return report_warnings(args, warnings)
