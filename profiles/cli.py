"""The command line: ``profiles COMMAND SURVEY... [options]``.

Thin by design: each command parses its options, calls the library and prints. Tables go to
stdout, progress and warnings to stderr; ``--json`` prints one JSON document on stdout and
nothing else there. Exit status: 0 done; 1 done with warnings, only with ``--strict``; 2 bad
input or usage, with one line ``profiles: error: ...``.
"""

from __future__ import annotations

import argparse
import importlib
import sys

from . import __version__
from .errors import ProfilesError

#: Command modules under ``profiles.commands``, in the order ``--help`` lists them.
COMMANDS = ("spacing", "spectrum", "map", "compare", "coherence", "report", "demo", "batch")


def _available():
    for name in COMMANDS:
        try:
            yield importlib.import_module(f"profiles.commands.{name}")
        except ModuleNotFoundError as error:
            if error.name != f"profiles.commands.{name}":
                raise


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # one line, status 2, as for every other bad input
        self.exit(2, f"profiles: error: {message}\n")


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every available command."""
    parser = _Parser(
        prog="profiles",
        description="Along-track spectral analysis and station-spacing audit of survey profiles.",
    )
    parser.add_argument("--version", action="version", version=f"profiles {__version__}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    commands.required = True
    for module in _available():
        sub = commands.add_parser(
            module.NAME,
            help=module.HELP,
            description=module.DESCRIPTION,
            formatter_class=argparse.RawDescriptionHelpFormatter,
        )
        module.add_arguments(sub)
        sub.set_defaults(run=module.run)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the command line; return the exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.run(args) or 0)
    except ProfilesError as error:
        print(f"profiles: error: {error}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("profiles: interrupted; no output was left half-written", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 0


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
