"""``profiles map``: sliding windows along every segment, the wavelength map and GIS layers."""

from __future__ import annotations

import argparse

from .common import (
    add_alpha,
    add_budget_arguments,
    add_output_arguments,
    add_shortest_wavelength,
    add_survey_arguments,
    fraction,
    length,
    load,
    print_json,
    report_warnings,
)

NAME = "map"
HELP = "dominant wavelength in windows along each line, on a map, with aliasing warnings"
DESCRIPTION = """\
Resample the field on every segment, cut each segment into windows (--window long, starting
every --step; windows never cross a gap or a turn) and report per window the dominant
wavelength, its share of the variance, Fisher's p-value (white-noise null), whether it stands
above an AR(1) red-noise background, the local station spacing and the local Nyquist wavelength.

Windows are flagged at aliasing risk, with their reasons:
  spacing       a station step in the window is longer than half --shortest-wavelength
  rolloff       more than --rolloff-share of the variance lies in the top 20 % of
                wavenumbers below the local Nyquist wavenumber
  near-nyquist  the dominant wavelength is within --near-nyquist-factor of the local
                Nyquist wavelength

With --shortest-wavelength, the aliasing budget of the field is drawn up as by
'profiles spacing --field' (docs/aliasing-budget.md): every window also gets the aliased power
at the shortest wavelength and at its own dominant wavelength as a fraction of the true power
there (with a low-high range), the aliased share of its variance and its segment's recommended
spacing (the largest keeping the aliased power under --alias-tolerance); stretches spaced more
coarsely than recommended are infill stretches, drawn on the map on a grey halo.

With --out DIR: map.png and map.svg (tracks coloured by dominant wavelength), profiles.gpkg
(layers stations, segments, windows, warnings and, with --shortest-wavelength, infill;
EPSG:4326) and windows.csv.

This is an aliasing audit, not for navigation: a survey's fitness for charting is decided under
the applicable hydrographic survey standards by a qualified surveyor."""

OUTPUTS = ("map.png", "map.svg", "profiles.gpkg", "windows.csv")


def _factor(text: str) -> float:
    try:
        value = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"--near-nyquist-factor: {text!r} is not a number") from None
    if not value >= 1.0:
        raise argparse.ArgumentTypeError(f"--near-nyquist-factor: {text!r} must be 1 or more")
    return value


def add_arguments(parser: argparse.ArgumentParser) -> None:
    add_survey_arguments(parser, field="required")
    group = parser.add_argument_group("windows")
    group.add_argument(
        "--window",
        type=length("--window"),
        metavar="LENGTH",
        help="window length, e.g. 40km (default: max(64 station spacings, 10 x --shortest-wavelength), "
        "or 256 spacings without a target)",
    )
    group.add_argument(
        "--step",
        type=length("--step"),
        metavar="LENGTH",
        help="distance between window starts, e.g. 10km (default: a quarter of the window)",
    )
    add_shortest_wavelength(
        group, help="shortest wavelength you need to resolve, e.g. 4km (checks station spacing against it)"
    )
    add_alpha(group, help="significance level of the red-noise test (default 0.05)")
    group.add_argument(
        "--rolloff-share",
        type=fraction("--rolloff-share"),
        default=0.1,
        metavar="SHARE",
        help="flag 'rolloff' above this share of variance just below the local Nyquist (default 0.1)",
    )
    group.add_argument(
        "--near-nyquist-factor",
        type=_factor,
        default=1.25,
        metavar="FACTOR",
        help="flag 'near-nyquist' when the dominant wavelength is below FACTOR x the local Nyquist "
        "wavelength (default 1.25)",
    )
    add_budget_arguments(parser, title="aliasing budget (with --shortest-wavelength)", fit_band=False)
    drawing = parser.add_argument_group("map")
    drawing.add_argument(
        "--map-crs",
        metavar="CRS",
        help="projected CRS in metres to draw the map in, e.g. EPSG:32711 (default: a transverse "
        "Mercator centred on the survey); not the CRS of the input coordinates (--crs)",
    )
    drawing.add_argument("--title", help="map title (default: 'Dominant wavelength along track: FIELD')")
    add_output_arguments(parser)


def run(args: argparse.Namespace) -> int:
    from ..infill import infill_stretches, window_frame
    from ..outputs import OutputFolder
    from ..resample import resample
    from ..spacing import audit_spacing
    from ..tables import records, text_table
    from ..windows import along_track_windows
    from .spacing import _model_hint

    folder = (
        OutputFolder(args.out, OUTPUTS, inputs=args.survey, overwrite=args.overwrite) if args.out else None
    )
    if args.map_crs:
        from ..figures.map import check_map_crs

        check_map_crs(args.map_crs)  # refused before any work
    loaded = load(args, fields=(args.field,))
    tracks = [resample(segment, args.field) for segment in loaded.segments]
    windows = along_track_windows(
        tracks,
        window=args.window,
        step=args.step,
        shortest_wavelength=args.shortest_wavelength,
        alpha=args.alpha,
        rolloff_share=args.rolloff_share,
        near_nyquist_factor=args.near_nyquist_factor,
    )
    # The budget needs a target wavelength: without one the audit runs without the field.
    budgeted = args.shortest_wavelength is not None
    audit = audit_spacing(
        loaded.segments,
        shortest_wavelength=args.shortest_wavelength,
        field=args.field if budgeted else None,
        model="exponential" if args.potential_field else "power-law",
        tolerance=args.alias_tolerance,
    )
    budget = audit.budget
    frame = window_frame(windows, budget)
    infill = infill_stretches(budget, loaded.segments)
    warnings = loaded.warnings + windows.warnings
    if budget is not None:
        warnings += _model_hint(args) + budget.warnings
    document = {
        "field": args.field,
        "settings": windows.settings.to_json(),
        "budget": budget.settings_json() if budget is not None else None,
        "rows": loaded.survey.accounting.to_json(),
        "windows": records(frame),
        "infill": infill.records() if infill is not None else None,
        "warnings": list(dict.fromkeys(warnings)),
    }
    if folder is not None:
        _write(folder, args, loaded, windows, frame, audit, infill)
    if args.json:
        print_json(document)
    else:
        print(str(loaded.survey.accounting))
        print(str(windows))
        print()
        shown = frame[
            [
                "line",
                "segment",
                "center_km",
                "dominant_wavelength_km",
                "variance_fraction",
                "fisher_p_value",
                "red_noise_significant",
                "local_spacing_km",
                "local_nyquist_km",
                "reasons",
            ]
        ]
        shown = shown.assign(
            fisher_p_value=[f"{p:.2e}" for p in shown["fisher_p_value"]],
            reasons=[",".join(r) or "-" for r in shown["reasons"]],
        )
        print(text_table(shown))
        if infill is not None:
            print()
            print(str(infill))
    return report_warnings(args, warnings)


def _write(folder, args, loaded, windows, frame, audit, infill) -> None:
    from ..figures.map import draw_map, render
    from ..gis import write_geopackage

    figure = draw_map(windows, field=args.field, map_crs=args.map_crs, title=args.title, infill=infill)
    frame = frame.assign(reasons=[",".join(r) for r in frame["reasons"]])
    folder.csv("windows.csv", frame)
    folder.bytes("map.png", render(figure, "png"))
    folder.bytes("map.svg", render(figure, "svg"))
    folder.with_writer(
        "profiles.gpkg",
        lambda path: write_geopackage(
            path, survey=loaded.survey, segments=loaded.segments, audit=audit, windows=windows
        ),
    )
