"""Write docs/cli-reference.md from the argument parser: ``python tools/make_cli_reference.py``.

The reference is every command's ``--help``, exactly as ``profiles COMMAND --help`` prints it,
formatted at a fixed width of 100 columns so that the text does not depend on the terminal.
tests/test_cli_reference.py fails when the committed file differs from what this script writes;
run it again after changing an option or a help text.
"""

from __future__ import annotations

import argparse
import functools
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
TARGET = ROOT / "docs" / "cli-reference.md"
#: Columns the help is formatted at.
WIDTH = 100


def _fixed_width(parser: argparse.ArgumentParser) -> None:
    """Format ``parser``'s help at :data:`WIDTH` columns, without colour."""
    parser.formatter_class = functools.partial(parser.formatter_class, width=WIDTH)
    if hasattr(parser, "color"):  # Python 3.14 colours help on a terminal
        parser.color = False


def _subparsers(parser: argparse.ArgumentParser) -> dict[str, argparse.ArgumentParser]:
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return dict(action.choices)
    return {}


def reference_text() -> str:
    """The Markdown text of the CLI reference."""
    sys.path.insert(0, str(ROOT))
    from profiles.cli import build_parser

    parser = build_parser()
    _fixed_width(parser)
    commands = _subparsers(parser)
    for sub in commands.values():
        _fixed_width(sub)
    parts = [
        "# Command-line reference",
        "",
        "Generated from the argument parser by `python tools/make_cli_reference.py`; do not edit by",
        "hand (tests/test_cli_reference.py checks that it is up to date). Every command's `--help`,",
        "as `profiles COMMAND --help` prints it. Lengths take units (`250m`, `4km`, `1.5nmi`).",
        "",
        "Commands: " + ", ".join(f"[`{name}`](#profiles-{name})" for name in commands) + ".",
        "",
        "## profiles",
        "",
        "```text",
        parser.format_help().rstrip(),
        "```",
    ]
    for name, sub in commands.items():
        parts += ["", f"## profiles {name}", "", "```text", sub.format_help().rstrip(), "```"]
    return "\n".join(parts) + "\n"


def main() -> int:
    TARGET.write_text(reference_text(), encoding="utf-8", newline="\n")
    print(TARGET)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
