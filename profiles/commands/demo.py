"""``profiles demo``: write the demo survey and its configuration, and report on them."""

from __future__ import annotations

import argparse

NAME = "demo"
HELP = "write the demo survey and its configuration into DIR and run the report on them"
DESCRIPTION = """\
Write the invented demo survey (cruise MQ26-03: eight lines over a ridge flank with a
seamount, a gap, a dog-leg and a coarsely logged stretch; depth, free-air gravity and magnetic
anomaly) into DIR/survey/ with its configuration survey.toml and a README stating the true
values, then run `profiles report` on it into DIR/report/. Open DIR/report/report.html."""

#: Sub-folders of --out.
SURVEY_FOLDER = "survey"
REPORT_FOLDER = "report"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    group = parser.add_argument_group("output")
    group.add_argument(
        "--out",
        metavar="DIR",
        required=True,
        help="folder for the demo survey (DIR/survey) and its report (DIR/report)",
    )
    group.add_argument("--overwrite", action="store_true", help="replace an earlier demo in DIR")
    group.add_argument("--quiet", action="store_true", help="no progress or warnings on stderr")
    group.add_argument("--json", action="store_true", help="print the report's summary.json on stdout")


def run(args: argparse.Namespace) -> int:
    import tomllib
    from pathlib import Path

    from ..config import load_config, parse_config
    from ..demo_survey import CONFIG_NAME, CSV_NAME, README_NAME, config_text, write_demo
    from ..outputs import OutputFolder
    from ..report.build import report_outputs, write_report
    from ..report.job import run_survey
    from .common import print_json, report_warnings

    out = Path(args.out)
    survey_dir = out / SURVEY_FOLDER
    # Refuse before writing anything: the demo files and every output of the report.
    OutputFolder(survey_dir, (CSV_NAME, CONFIG_NAME, README_NAME), overwrite=args.overwrite)
    planned = parse_config(tomllib.loads(config_text()), base=survey_dir, source=CONFIG_NAME)
    folder = OutputFolder(out / REPORT_FOLDER, report_outputs(planned), overwrite=args.overwrite)
    paths = write_demo(survey_dir)
    config = load_config(paths["config"])
    results = run_survey(config, quiet=args.quiet)
    document = write_report(results, folder, quiet=args.quiet)
    if args.json:
        print_json(document)
    else:
        print(f"demo survey: {paths['survey']} (true values in {paths['readme']})")
        print(f"report: {folder.path('report.html')}")
    args.strict = False
    return report_warnings(args, [str(n) for n in results.notices])
