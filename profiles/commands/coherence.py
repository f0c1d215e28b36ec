"""``profiles coherence``: coherence, admittance and phase between two fields; load model."""

from __future__ import annotations

import argparse

from .common import (
    add_alpha,
    add_nw,
    add_output_arguments,
    add_segment_length,
    add_spacing,
    add_survey_arguments,
    length,
    load,
    print_json,
    report_warnings,
)

NAME = "coherence"
HELP = "coherence and admittance of one field against another (e.g. gravity against depth)"
DESCRIPTION = """\
Cross-spectra of two fields measured on the same segments, averaged over Welch blocks or DPSS
tapers of every segment (a single raw periodogram gives coherence 1 everywhere, so it is never
offered): squared coherence with its zero-coherence significance level, admittance (gain)
with its error, and phase. Convention: S_xy = E[conj(X) Y] with X the input and Y the output;
the admittance is S_xy / S_xx; a negative phase means the output lags.

The uncompensated-load model Z(k) = 2 pi G drho exp(-k d) (k angular wavenumber, d the mean
water depth) is fitted over the coherent band to estimate the density contrast drho. The model
assumes a load supported without compensation and a profile that crosses two-dimensional
structure at right angles; on oblique lines and over three-dimensional features the along-track
wavenumber is smaller than the true one and drho comes out low."""

OUTPUTS = ("coherence.csv", "coherence.json", "coherence.png", "coherence.svg")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    add_survey_arguments(parser)
    group = parser.add_argument_group("cross-spectra")
    group.add_argument("--input", required=True, help="input field, e.g. depth_m")
    group.add_argument("--output", required=True, help="output field, e.g. gravity_mgal")
    group.add_argument(
        "--method", choices=("welch", "multitaper"), default="welch", help="averaging (default welch)"
    )
    add_segment_length(group, help="Welch block length (default half the longest segment)")
    add_nw(group, default=4.5)
    add_alpha(group)
    add_spacing(group, help="common resampling spacing (default the median station spacing)")
    sign = group.add_mutually_exclusive_group()
    sign.add_argument(
        "--input-positive-down",
        dest="positive_down",
        action="store_true",
        default=None,
        help="the input is depth, positive down (default when its name starts with depth)",
    )
    sign.add_argument(
        "--input-positive-up",
        dest="positive_down",
        action="store_false",
        help="the input is seafloor elevation, positive up",
    )
    group.add_argument(
        "--depth",
        type=length("--depth"),
        metavar="LENGTH",
        help="mean water depth of the load model (default the mean depth input)",
    )
    group.add_argument(
        "--model-band",
        metavar="SHORT-LONG",
        help="limit the load-model fit to wavelengths between two lengths, e.g. 5km-60km",
    )
    add_output_arguments(parser)


def run(args: argparse.Namespace) -> int:
    from ..analysis import survey_coherence
    from ..errors import InputError
    from ..outputs import OutputFolder
    from ..tables import text_table
    from .compare import band_value

    if args.input == args.output:
        raise InputError("--input and --output name the same field; a field is coherent with itself")
    band = (None, None)
    if args.model_band:
        try:
            band = band_value(args.model_band)
        except argparse.ArgumentTypeError as error:
            raise InputError(str(error)) from None
    folder = (
        OutputFolder(args.out, OUTPUTS, inputs=args.survey, overwrite=args.overwrite) if args.out else None
    )
    loaded = load(args, fields=(args.input, args.output))
    result = survey_coherence(
        loaded.segments,
        input_field=args.input,
        output_field=args.output,
        spacing=args.spacing,
        method=args.method,
        segment_length=args.segment_length,
        nw=args.nw,
        alpha=args.alpha,
        input_positive_down=args.positive_down,
        depth=args.depth,
        min_wavelength=band[0],
        max_wavelength=band[1],
    )
    warnings = list(loaded.warnings)
    if result.model is None:
        warnings.append(f"load model not fitted: {result.model_note}")
    document = {
        "rows": loaded.survey.accounting.to_json(),
        **result.to_json(),
        "warnings": list(dict.fromkeys(warnings)),
    }
    frame = result.spectrum.to_frame()
    if folder is not None:
        from ..figures.compare import coherence_figure
        from ..figures.render import figure_bytes
        from ..units import field_units

        folder.csv("coherence.csv", frame)
        folder.json("coherence.json", document)
        figure = coherence_figure(
            result.spectrum,
            model=result.model,
            model_admittance=result.model_admittance(),
            title=f"{args.output} against {args.input}",
            units=f"{field_units(args.output)} per {field_units(args.input)}",
        )
        folder.bytes("coherence.png", figure_bytes(figure, "png"))
        folder.bytes("coherence.svg", figure_bytes(figure, "svg"))
    if args.json:
        print_json(document)
    else:
        print(str(loaded.survey.accounting))
        print()
        spectrum = result.spectrum
        print(
            f"{args.output} against {args.input}: {spectrum.method}, {spectrum.n_estimates:.1f} "
            f"independent estimates, zero-coherence level {spectrum.coherence_threshold:.3f} "
            f"at alpha {spectrum.alpha:g}"
        )
        coherent = frame[frame["coherence"] > spectrum.coherence_threshold]
        print(text_table(coherent.head(40), digits=4))
        print()
        print(str(result.model) if result.model is not None else f"load model: {result.model_note}")
    return report_warnings(args, warnings)
