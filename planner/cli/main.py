"""Command line: ``periplan <command> ...``. The only module that knows about argv.

Each command lives in :mod:`planner.commands` and registers its own sub-parser. Every error the
user can fix is a :class:`~planner.errors.PeriplanError`: it is printed as one line per problem
on stderr, prefixed ``periplan: error:``, and the exit status is 2; nothing is written.
"""

from __future__ import annotations

import argparse
import importlib
import logging
import sys
import warnings

from .. import __version__
from ..timescales import earth_orientation
from ..errors import PeriplanError

#: Command modules in the order they appear in ``periplan --help``.
COMMAND_MODULES = ("events", "nights", "plan", "coverage", "demo")

EXIT_USAGE = 2


def _one_line_warnings():
    """A ``warnings.showwarning`` that prints each distinct warning once, on one line."""
    seen = set()

    def show(message, category, filename, lineno, file=None, line=None):
        text = str(message)
        if earth_orientation.is_time_table_warning(text):
            text = earth_orientation.FAR_FUTURE_MESSAGE
        if text not in seen:
            seen.add(text)
            print(f"periplan: warning: {text}", file=sys.stderr)

    return show


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # one line, exit 2, like our own input errors
        self.print_usage(sys.stderr)
        self.exit(EXIT_USAGE, f"periplan: error: {message}\n")


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="periplan",
        description="Plan observing nights around periastron passages, conjunctions (transits, "
                    "eclipses) and radial-velocity extremes of targets with published elements.",
        epilog="Run 'periplan COMMAND --help' for the options and examples of each command.",
    )
    parser.add_argument("--version", action="version", version=f"periplan {__version__}")
    parser.add_argument("-v", "--verbose", action="store_true", help="log what each stage does")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    for name in COMMAND_MODULES:
        importlib.import_module(f"planner.cli.commands.{name}").register(sub)
    return parser


def main(argv=None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "run", None):
        parser.print_help(sys.stderr)
        return EXIT_USAGE
    logging.basicConfig(level=logging.INFO if args.verbose else logging.WARNING,
                        format="periplan: %(message)s")
    try:
        with warnings.catch_warnings():
            warnings.showwarning = _one_line_warnings()
            warnings.simplefilter("default")
            earth_orientation.configure()
            return int(args.run(args) or 0)
    except PeriplanError as exc:
        for line in str(exc).splitlines():
            print(f"periplan: error: {line}", file=sys.stderr)
        return EXIT_USAGE
    except KeyboardInterrupt:
        print("periplan: interrupted; nothing was written", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 0
