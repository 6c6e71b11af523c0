"""`sheettool evaluate`: evaluate a workbook and write the evaluated copy."""

from __future__ import annotations

import argparse
import datetime as dt
import json
import sys
from pathlib import Path

from sheettool.api import evaluate_file
from sheettool.core.rules import parse_rules
from sheettool.errors import UsageError
from sheettool.evaluation import EvaluationOptions
from sheettool.report import report_json
from sheettool.workbook.writer import WriterOptions


def add_parser(subs: argparse._SubParsersAction) -> None:
    """Register the sub-command."""
    p = subs.add_parser("evaluate", help="evaluate a measurement workbook into a new workbook")
    p.add_argument("input", type=Path, help="the measurement workbook (.xlsx or .xlsm)")
    p.add_argument("-o", "--output", type=Path, help="output workbook (default: IN-evaluated.xlsx beside IN)")
    p.add_argument("--rules", default="limits", help="pattern rules or preset (default: limits)")
    p.add_argument("--json", action="store_true", help="print the results as one JSON object on stdout")
    p.add_argument("--formulas", action="store_true",
                   help="write per-subgroup statistics and constant limits as live formulas over the copied data")
    p.add_argument("--timestamp", metavar="WHEN",
                   help="document date of the output, e.g. 2026-12-01T08:00 (default: the input's modification time)")
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    """Evaluate and report; 0 whenever the evaluation was written, signals or not."""
    try:
        parse_rules(args.rules)
    except ValueError as exc:
        raise UsageError(f"--rules: {exc}") from None
    report = evaluate_file(args.input, args.output, EvaluationOptions(rules=args.rules),
                           writer=WriterOptions(formulas=args.formulas, timestamp=_timestamp(args.timestamp)))
    if args.json:
        json.dump(report_json(report), sys.stdout, indent=2)
        sys.stdout.write("\n")
    else:
        for result in report.characteristics:
            sys.stderr.write(f"{result.sheet}: {len(result.signals)} signal(s)\n")
        sys.stderr.write(f"written: {report.output}\n")
    return 0


def _timestamp(text: str | None) -> dt.datetime | None:
    """--timestamp as a date and time (ISO 8601); a usage error when it is not one."""
    if text is None:
        return None
    try:
        return dt.datetime.fromisoformat(text)
    except ValueError:
        raise UsageError(f"--timestamp: '{text}' is not a date and time; write it like 2026-12-01T08:00") from None
