"""``profiles spacing``: station-spacing audit of every segment."""

from __future__ import annotations

import argparse

from .common import (
    add_budget_arguments,
    add_longest_wavelength,
    add_output_arguments,
    add_shortest_wavelength,
    add_survey_arguments,
    load,
    print_json,
    report_warnings,
)

NAME = "spacing"
HELP = "audit station spacing per segment against the wavelengths you need"
DESCRIPTION = """\
Split every line into segments at gaps and sharp turns and report, per segment, the station
spacing (minimum, median, 95th percentile, maximum), the Nyquist wavelength (2 x median spacing,
and 2 x maximum as the worst case) and, with --shortest-wavelength, every stretch whose spacing
is above half of it (aliasing risk).

With --field, the audit also draws up an aliasing budget for that field: every segment is split
into stretches of homogeneous spacing; the spectrum's fall-off (a power law, or with
--potential-field an exponential, plus any white noise floor) is fitted on the segment's
best-sampled stretches; and every stretch gets the aliased power at the shortest wavelength as
a fraction of the true power there (with a low-high range from the fit's uncertainty), the
aliased share of its variance, and the largest spacing that keeps the aliased power under
--alias-tolerance. See docs/aliasing-budget.md.

This audit is about spectral aliasing only; it does not judge a survey's fitness for navigation
or charting, which is decided under the applicable hydrographic survey standards by a qualified
surveyor."""

OUTPUTS = (
    "segments.csv",
    "risky_stretches.csv",
    "stretches.csv",
    "breaks.csv",
    "stations.csv",
    "spacing.json",
)
#: Columns of the budget's stretches shown in the text output.
SHOWN_STRETCH_COLUMNS = (
    "line",
    "segment",
    "stretch",
    "start_km",
    "end_km",
    "spacing_km",
    "alias_contamination",
    "aliased_variance_fraction",
    "recommended_spacing_km",
    "exceeds_recommendation",
)


def add_arguments(parser: argparse.ArgumentParser) -> None:
    add_survey_arguments(parser, field="optional")
    target = parser.add_argument_group("targets")
    add_shortest_wavelength(target, help="shortest wavelength you need to resolve, e.g. 4km")
    add_longest_wavelength(target)
    add_budget_arguments(parser, title="aliasing budget (with --field)", fit_band=True)
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
        field=args.field,
        model="exponential" if args.potential_field else "power-law",
        tolerance=args.alias_tolerance,
        band=tuple(args.fit_band) if args.fit_band else None,
    )
    accounting = loaded.survey.accounting
    warnings = loaded.warnings + _model_hint(args) + audit.warnings
    document = {
        "rows": accounting.to_json(),
        **audit.to_json(),
        "breaks": loaded.segments.breaks.to_dict(orient="records"),
        "warnings": list(dict.fromkeys(warnings)),
    }
    if folder is not None:
        folder.csv("segments.csv", audit.segments_table())
        folder.csv("risky_stretches.csv", audit.risky_stretches)
        if audit.budget is not None:
            folder.csv("stretches.csv", audit.budget.stretches)
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
        if audit.budget is not None:
            _print_budget(audit.budget)
    return report_warnings(args, warnings)


def _model_hint(args: argparse.Namespace) -> tuple[str, ...]:
    """A warning when a field named like gravity or magnetics is budgeted as a power law."""
    from ..columns import field_kind

    kind = field_kind(args.field) if args.field else None
    if kind is not None and kind.kind in ("gravity", "magnetic") and not args.potential_field:
        return (
            f"field {args.field} looks like a {kind.kind} field; --potential-field fits the "
            "exponential fall-off of potential fields",
        )
    return ()


def _print_budget(budget) -> None:
    from ..tables import text_table

    print()
    print(str(budget))
    for (line, number), falloff in budget.falloffs.items():
        print(f"  {line}/{number}: {falloff if falloff is not None else 'no fall-off fitted'}")
    print()
    if budget.shortest_wavelength:
        print(
            f"stretches of homogeneous spacing; aliased power at {budget.shortest_wavelength / 1e3:.4g} km "
            f"as a fraction of the true power, spacing for at most {100 * budget.tolerance:g} %:"
        )
    else:
        print("stretches of homogeneous spacing (give --shortest-wavelength for the aliased power there):")
    print(text_table(budget.stretches[list(SHOWN_STRETCH_COLUMNS)], digits=4))
