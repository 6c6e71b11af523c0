"""`sheettool template`: write a data-entry workbook for one kind of data."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from sheettool.base.errors import UsageError
from sheettool.workbook.templates import TEMPLATE_KINDS, template_spec, write_template
from sheettool.workbook.writer import write_atomically


def add_arguments(p: argparse.ArgumentParser) -> None:
    """The sub-command's options (its line in the list of commands is in cli/main.py)."""
    p.add_argument("kind", choices=TEMPLATE_KINDS, help="the kind of data the sheet will hold")
    p.add_argument("-o", "--output", type=Path, required=True, help="the workbook to write (.xlsx)")
    p.add_argument("--n", type=int, default=5, help="readings per subgroup, for the subgroups kind (default 5)")
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    """Write the template atomically; refuse to overwrite an existing file."""
    try:
        spec = template_spec(args.kind, args.n)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    if args.output.suffix.lower() != ".xlsx":
        raise UsageError(f"{args.output}: a template is written as an .xlsx workbook; give a name ending in .xlsx "
                         f"(e.g. {args.output.with_suffix('.xlsx').name})")
    if args.output.exists():
        raise UsageError(f"{args.output}: already exists; choose another name or remove it first")
    write_atomically(args.output, lambda tmp: write_template(spec, Path(tmp)))
    sys.stderr.write(f"written: {args.output}\n")
    return 0
