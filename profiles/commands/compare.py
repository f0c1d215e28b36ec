"""``profiles compare``: one row per segment, overlaid spectra, and the fabric fit."""

from __future__ import annotations

import argparse

from .common import (
    add_alpha,
    add_confidence,
    add_interpolation,
    add_nw,
    add_output_arguments,
    add_segment_length,
    add_shortest_wavelength,
    add_spacing,
    add_survey_arguments,
    length,
    load,
    print_json,
    report_warnings,
)

NAME = "compare"
HELP = "compare segments: line table, overlaid spectra, fabric wavelength and strike"
DESCRIPTION = """\
One row per segment: azimuth, length, spacing, Nyquist wavelength, dominant wavelength with
Fisher's p-value (white-noise null) and the red-noise verdict, the second strongest significant
wavelength, the spectral slope beta and the share of the segment's windows at aliasing risk.

A lineated fabric of true wavelength L whose crests strike at s appears on a line of azimuth t
with wavelength L / |sin(t - s)|. From the segments' significant peaks (inside --band when
given) the true wavelength and strike are fitted by least squares; segments that misfit by more
than three harmonic half-widths are left out one at a time and named."""

OUTPUTS = (
    "compare.csv",
    "compare.json",
    "spectra.png",
    "spectra.svg",
    "fabric.png",
    "fabric.svg",
    "fabric_segments.csv",
)


def band_value(text: str) -> tuple[float, float]:
    """argparse type for ``--band 5km-40km`` (wavelengths)."""
    from ..errors import InputError
    from ..units import parse_length

    parts = text.replace("..", "-").split("-")
    if len(parts) != 2:
        raise argparse.ArgumentTypeError(f"--band: write two wavelengths such as 5km-40km (got {text!r})")
    try:
        low, high = (parse_length(p, what="--band") for p in parts)
    except InputError as error:
        raise argparse.ArgumentTypeError(str(error)) from None
    if not low < high:
        raise argparse.ArgumentTypeError(f"--band: the first wavelength must be the shorter ({text!r})")
    return low, high


def add_arguments(parser: argparse.ArgumentParser) -> None:
    add_survey_arguments(parser, field="required")
    group = parser.add_argument_group("comparison")
    group.add_argument(
        "--method",
        choices=("multitaper", "welch"),
        default="multitaper",
        help="density of the overlaid spectra and the slope (default multitaper)",
    )
    add_nw(group)
    add_alpha(group)
    add_spacing(group)
    add_interpolation(group)
    add_segment_length(group, help="Welch block length (default a quarter of the segment)")
    add_confidence(group)
    group.add_argument(
        "--band",
        type=band_value,
        metavar="SHORT-LONG",
        help="fit the fabric to the strongest significant peak between two "
        "wavelengths, e.g. 5km-40km (default: each segment's dominant peak)",
    )
    group.add_argument(
        "--exclude",
        action="append",
        default=[],
        metavar="LINE",
        help="leave a line or line/segment out of the fabric fit (repeatable)",
    )
    add_shortest_wavelength(group, help="target shortest wavelength for the windows' aliasing share")
    group.add_argument("--window", type=length("--window"), metavar="LENGTH", help="window length")
    group.add_argument("--step", type=length("--step"), metavar="LENGTH", help="window step")
    add_output_arguments(parser)


def run(args: argparse.Namespace) -> int:
    from ..compare import compare_survey
    from ..outputs import OutputFolder
    from ..tables import text_table

    folder = (
        OutputFolder(args.out, OUTPUTS, inputs=args.survey, overwrite=args.overwrite) if args.out else None
    )
    loaded = load(args, fields=(args.field,))
    result = compare_survey(
        loaded.segments,
        field=args.field,
        method=args.method,
        nw=args.nw,
        alpha=args.alpha,
        band=args.band,
        exclude=args.exclude,
        shortest_wavelength=args.shortest_wavelength,
        window=args.window,
        step=args.step,
        spacing=args.spacing,
        interpolation=args.interpolation,
        segment_length=args.segment_length,
        confidence=args.confidence,
    )
    warnings = list(loaded.warnings) + list(result.warnings)
    document = {
        "rows": loaded.survey.accounting.to_json(),
        **result.to_json(),
        "warnings": list(dict.fromkeys(warnings)),
    }
    if folder is not None:
        from ..figures.compare import fabric_figure
        from ..figures.render import figure_bytes
        from ..figures.spectra import overlaid_spectra_figure
        from ..units import field_units

        folder.csv("compare.csv", result.table.to_frame())
        folder.json("compare.json", document)
        spectra = overlaid_spectra_figure(
            result.overlay(),
            units=field_units(args.field),
            title=f"{args.field}: {args.method} spectra of every segment",
        )
        folder.bytes("spectra.png", figure_bytes(spectra, "png"))
        folder.bytes("spectra.svg", figure_bytes(spectra, "svg"))
        if result.fabric is not None:
            figure = fabric_figure(result.fabric, title=f"{args.field}: apparent wavelength against azimuth")
            folder.bytes("fabric.png", figure_bytes(figure, "png"))
            folder.bytes("fabric.svg", figure_bytes(figure, "svg"))
            folder.csv("fabric_segments.csv", result.fabric.lines_frame())
    if args.json:
        print_json(document)
    else:
        print(str(loaded.survey.accounting))
        print()
        print(text_table(result.table.to_frame()))
        print()
        print(
            str(result.fabric) if result.fabric is not None else f"fabric: not fitted ({result.fabric_note})"
        )
        for note in result.fabric_left_out:
            print(f"  left out {note}")
    return report_warnings(args, warnings)
