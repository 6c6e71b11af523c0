"""`sheettool evaluate`: evaluate a workbook and write the evaluated copy."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from sheettool.api import evaluate_file
from sheettool.core.rules import parse_rules
from sheettool.errors import UsageError
from sheettool.evaluation import EvaluationOptions
from sheettool.report import report_json
from sheettool.workbook.limits_block import read_limits_block


def add_parser(subs: argparse._SubParsersAction) -> None:
    """Register the sub-command."""
    p = subs.add_parser("evaluate", help="evaluate a measurement workbook into a new workbook")
    p.add_argument("input", type=Path, help="the measurement workbook (.xlsx or .xlsm)")
    p.add_argument("-o", "--output", type=Path, help="output workbook (default: IN-evaluated.xlsx beside IN)")
    p.add_argument("--rules", default="limits", help="pattern rules or preset (default: limits)")
    p.add_argument("--limits-from", type=Path, metavar="PREVIOUS.xlsx", dest="limits_file",
                   help="apply the limits an earlier evaluated workbook carries (matched by sheet name)")
    p.add_argument("--json", action="store_true", help="print the results as one JSON object on stdout")
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    """Evaluate and report; 0 whenever the evaluation was written, signals or not."""
    try:
        parse_rules(args.rules)
    except ValueError as exc:
        raise UsageError(f"--rules: {exc}") from None
    carried = read_limits_block(args.limits_file) if args.limits_file else None
    report = evaluate_file(args.input, args.output, EvaluationOptions(rules=args.rules), carried=carried,
                           carried_from=args.limits_file.name if args.limits_file else "")
    if args.json:
        json.dump(report_json(report), sys.stdout, indent=2)
        sys.stdout.write("\n")
    else:
        for result in report.characteristics:
            sys.stderr.write(f"{result.sheet}: {len(result.signals)} signal(s)\n")
        sys.stderr.write(f"written: {report.output}\n")
    return 0
