"""Entry point: one sub-command module per verb, each adding its parser and its run function."""

from __future__ import annotations

import argparse
import sys

from sheettool import TOOL_NAME, __version__
from sheettool.base.errors import SheettoolError
from sheettool.cli import design_cmd, evaluate_cmd, pack_cmd, runlength_cmd, template_cmd, watch_cmd

COMMANDS = (evaluate_cmd, pack_cmd, watch_cmd, runlength_cmd, design_cmd, template_cmd)


class _Parser(argparse.ArgumentParser):
    """argparse that exits with 2 and a one-line message on a bad command line."""

    def error(self, message: str) -> None:  # type: ignore[override]
        self.print_usage(sys.stderr)
        sys.stderr.write(f"{TOOL_NAME}: {message}\n")
        raise SystemExit(2)


def build_parser() -> argparse.ArgumentParser:
    """The full parser with every sub-command."""
    parser = _Parser(prog=TOOL_NAME, description="Control charts, signals and scheme performance "
                     "for measurement workbooks.")
    parser.add_argument("--version", action="version", version=f"{TOOL_NAME} {__version__}")
    subs = parser.add_subparsers(dest="command", required=True, parser_class=_Parser)
    for command in COMMANDS:
        command.add_parser(subs)
    return parser


def main(argv: list[str] | None = None) -> int:
    """Run the command line; return the exit code."""
    args = build_parser().parse_args(argv)
    try:
        return int(args.run(args))
    except SheettoolError as exc:
        sys.stderr.write(f"{TOOL_NAME}: {exc}\n")
        return exc.exit_code
    except KeyboardInterrupt:
        sys.stderr.write(f"{TOOL_NAME}: interrupted\n")
        return 130
