"""``profiles spectrum``: harmonic table, significance and spectra of every segment."""

from __future__ import annotations

import argparse
import re

from .common import (
    add_alpha,
    add_confidence,
    add_interpolation,
    add_nw,
    add_output_arguments,
    add_segment_length,
    add_spacing,
    add_survey_arguments,
    load,
    print_json,
    report_warnings,
)

NAME = "spectrum"
HELP = "harmonic table, Fisher and red-noise tests, and spectra of each segment"
DESCRIPTION = """\
Resample the field on every segment (never across a gap) and compute its harmonic table
(cosine and sine coefficients, amplitude, phase, variance per harmonic), Fisher's g test of the
dominant harmonic against white noise, the test of every harmonic against an AR(1) red-noise
background, and, with --method, a density with confidence bounds: welch, multitaper, or
lomb-scargle on the original, unevenly spaced stations.

Survey profiles are red: the white-noise verdict overstates significance at long wavelengths.
Summaries use the red-noise verdict."""

METHODS = ("harmonic", "welch", "multitaper", "lomb-scargle")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    add_survey_arguments(parser, field="required")
    group = parser.add_argument_group("spectrum")
    group.add_argument(
        "--method",
        choices=METHODS,
        default="harmonic",
        help="density estimate besides the harmonic table (default harmonic)",
    )
    add_alpha(group)
    group.add_argument(
        "--detrend",
        choices=("linear", "mean"),
        default="linear",
        help="removed before analysis (the mean always is; default linear)",
    )
    group.add_argument(
        "--taper",
        help="taper of the harmonic table, a scipy.signal.windows name "
        "(default none, so the variance split is exact)",
    )
    add_spacing(group)
    add_interpolation(group)
    add_segment_length(group, help="Welch block length (default a quarter of the segment)")
    group.add_argument("--overlap", type=float, default=0.5, help="Welch block overlap (default 0.5)")
    add_nw(group)
    add_confidence(group)
    add_output_arguments(parser)


def _safe(name: str) -> str:
    return re.sub(r"[^A-Za-z0-9_.-]+", "_", name)


def run(args: argparse.Namespace) -> int:
    import pandas as pd

    from ..analysis import analyse_segment, resample_field
    from ..errors import InputError
    from ..outputs import OutputFolder
    from ..tables import text_table

    loaded = load(args, fields=(args.field,))
    pairs, warnings = resample_field(
        loaded.segments, args.field, spacing=args.spacing, interpolation=args.interpolation
    )
    if not pairs:
        raise InputError(f"{', '.join(args.survey)}: no segment long enough for a spectrum of {args.field}")
    results = [
        analyse_segment(
            segment,
            uniform,
            method=args.method,
            alpha=args.alpha,
            detrend=args.detrend,
            taper=args.taper,
            segment_length=args.segment_length,
            overlap=args.overlap,
            nw=args.nw,
            confidence=args.confidence,
        )
        for segment, uniform in pairs
    ]
    summary = pd.DataFrame([r.summary() for r in results])
    all_warnings = list(loaded.warnings) + warnings
    document = {
        "rows": loaded.survey.accounting.to_json(),
        "field": args.field,
        "method": args.method,
        "verdict": "summaries use the red-noise (AR(1)) verdict",
        "segments": [r.to_json() for r in results],
        "warnings": list(dict.fromkeys(all_warnings)),
    }
    if args.out:
        _write(args, results, summary, document, OutputFolder)
    if args.json:
        print_json(document)
    else:
        print(str(loaded.survey.accounting))
        print()
        print(
            f"{args.field}: {len(results)} segments; null hypotheses: white noise (Fisher's g) "
            f"and red noise (AR(1)); summaries use the red-noise verdict"
        )
        print(text_table(summary))
    return report_warnings(args, all_warnings)


def _write(args, results, summary, document, OutputFolder) -> None:
    import pandas as pd

    from ..figures.render import figure_bytes
    from ..units import field_units

    stems = [f"spectrum_{_safe(r.uniform.line)}_{r.uniform.number}" for r in results]
    names = ["spectra.csv", "harmonics.csv", "spectrum.json"]
    if args.method != "harmonic":
        names.append("psd.csv")
    names += [f"{stem}.png" for stem in stems]
    folder = OutputFolder(args.out, names, inputs=args.survey, overwrite=args.overwrite)
    harmonics, psd = [], []
    for r in results:
        frame = r.harmonics.to_frame()
        frame.insert(0, "segment", r.uniform.number)
        frame.insert(0, "line", r.uniform.line)
        harmonics.append(frame)
        if args.method != "harmonic":
            density = r.density.to_frame() if r.density is not None else r.uneven.to_frame()
            density.insert(0, "segment", r.uniform.number)
            density.insert(0, "line", r.uniform.line)
            psd.append(density)
    folder.csv("spectra.csv", summary)
    folder.csv("harmonics.csv", pd.concat(harmonics, ignore_index=True))
    if psd:
        folder.csv("psd.csv", pd.concat(psd, ignore_index=True))
    folder.json("spectrum.json", document)
    from ..figures.spectra import spectrum_figure

    for stem, r in zip(stems, results, strict=True):
        figure = spectrum_figure(**r.plot_data(units=field_units(args.field)))
        folder.bytes(f"{stem}.png", figure_bytes(figure, "png"))
