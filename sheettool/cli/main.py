"""Entry point: one sub-command module per verb, each adding its options and its run function.

A command's module (and all it imports) is loaded only when that command is given: `--version`, `--help` and each
command pay at start-up for what they use and no more.
"""

from __future__ import annotations

import argparse
import sys
import warnings
from importlib import import_module

from sheettool import TOOL_NAME, __version__
from sheettool.base.errors import SheettoolError

# command -> its line in the list of commands; its options and run function are in sheettool.cli.<command>_cmd
COMMANDS = {
    "evaluate": "evaluate measurement workbooks, each into a new workbook",
    "pack": "evaluate workbooks and folders into one review pack with a summary tab",
    "watch": "evaluate every workbook saved into a folder, each new version once",
    "runlength": "ARL, SDRL and percentiles of a chart and its rules, without a workbook",
    "design": "search and rank monitoring schemes against in-control and detection targets",
    "template": "write a data-entry workbook (subgroups, individuals, proportions, counts)",
}


class _Parser(argparse.ArgumentParser):
    """argparse that exits with 2 and a one-line message on a bad command line."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        sys.stderr.write(f"{TOOL_NAME}: {message}\n")
        raise SystemExit(2)


class _Commands(argparse._SubParsersAction):
    """The sub-commands; the one given gets its options from its module, imported then."""

    def __call__(self, parser: argparse.ArgumentParser, namespace: argparse.Namespace, values: object,
                 option_string: str | None = None) -> None:
        name = values[0]  # type: ignore[index]
        if name in COMMANDS:
            import_module(f"sheettool.cli.{name}_cmd").add_arguments(self.choices[name])
        super().__call__(parser, namespace, values, option_string)


def build_parser() -> argparse.ArgumentParser:
    """The parser: every sub-command by name, each one's options added when it is given."""
    parser = _Parser(prog=TOOL_NAME, description="Control charts, signals and scheme performance "
                     "for measurement workbooks.")
    parser.add_argument("--version", action="version", version=f"{TOOL_NAME} {__version__}")
    subs = parser.add_subparsers(dest="command", required=True, parser_class=_Parser, action=_Commands)
    for name, line in COMMANDS.items():
        subs.add_parser(name, help=line)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the command line; return the exit code."""
    args = build_parser().parse_args(argv)
    try:
        with warnings.catch_warnings(record=True) as caught:  # numpy's RuntimeWarnings: in our words, once each
            warnings.simplefilter("always", RuntimeWarning)
            code = int(args.run(args))
        for text in dict.fromkeys(str(w.message) for w in caught if issubclass(w.category, RuntimeWarning)):
            sys.stderr.write(f"{TOOL_NAME}: note: a computation met '{text}'; check the results it concerns, "
                             "and please report the input that caused it\n")
        return code
    except SheettoolError as exc:
        sys.stderr.write(f"{TOOL_NAME}: {exc}\n")
        return exc.exit_code
    except KeyboardInterrupt:
        sys.stderr.write(f"{TOOL_NAME}: interrupted\n")
        return 130
