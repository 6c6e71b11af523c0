"""`sheettool evaluate`: evaluate a workbook and write the evaluated copy."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from sheettool.api import evaluate_file
from sheettool.errors import UsageError
from sheettool.options import convert
from sheettool.report import report_json
from sheettool.settings import Setting, setting_name
from sheettool.workbook.limits_block import read_limits_block
from sheettool.workbook.reader import describe

# option -> setting name; each overrides the workbook's settings sheet and labelled cells.
SETTING_OPTIONS = {"lsl": "lsl", "usl": "usl", "target": "target", "chart": "chart", "rules": "rules",
                   "interval": "interval_hours", "hours_per_month": "hours_per_month", "limits_base": "limits_from"}


def add_parser(subs: argparse._SubParsersAction) -> None:
    """Register the sub-command."""
    p = subs.add_parser("evaluate", help="evaluate a measurement workbook into a new workbook")
    p.add_argument("input", type=Path, help="the measurement workbook (.xlsx, .xlsm or .csv)")
    p.add_argument("-o", "--output", type=Path, help="output workbook (default: IN-evaluated.xlsx beside IN)")
    p.add_argument("--rules", help="pattern rules or preset (default: limits)")
    p.add_argument("--limits-from", type=Path, metavar="PREVIOUS.xlsx", dest="limits_file",
                   help="apply the limits an earlier evaluated workbook carries (matched by sheet name)")
    p.add_argument("--lsl", help="lower specification limit")
    p.add_argument("--usl", help="upper specification limit")
    p.add_argument("--target", help="target (nominal) value")
    p.add_argument("--chart", help="chart kind (default: chosen from the data)")
    p.add_argument("--interval", help="hours between subgroups, e.g. 1 or '30 min'")
    p.add_argument("--hours-per-month", help="production hours per month")
    p.add_argument("--limits-base", help="base period that sets the limits (default: all)")
    p.add_argument("--set", action="append", default=[], metavar="NAME=VALUE",
                   help="any setting by name, e.g. --set unit=mm (repeatable)")
    p.add_argument("--json", action="store_true", help="print the results as one JSON object on stdout")
    p.add_argument("--verbose", action="store_true", help="say on stderr what was read from each sheet")
    p.set_defaults(run=run)


def cli_settings(args: argparse.Namespace) -> dict[str, Setting]:
    """The settings given on the command line, checked; UsageError for a bad one."""
    found: list[Setting] = []
    for pair in args.set:
        name, sep, value = pair.partition("=")
        canonical = setting_name(name)
        if not sep or canonical is None:
            raise UsageError(f"--set {pair}: give NAME=VALUE with a known setting name (e.g. usl=12.05)")
        found.append(Setting(canonical, value, f"option --set {name.strip()}"))
    for option, name in SETTING_OPTIONS.items():
        value = getattr(args, option)
        if value is not None:
            found.append(Setting(name, value, f"option --{option.replace('_', '-')}"))
    settings: dict[str, Setting] = {}
    for setting in found:
        try:
            checked = convert(setting)
        except ValueError as exc:
            raise UsageError(str(exc)) from None
        settings[checked.name] = checked
    return settings


def run(args: argparse.Namespace) -> int:
    """Evaluate and report; 0 whenever the evaluation was written, signals or not."""
    carried = read_limits_block(args.limits_file) if args.limits_file else None
    report = evaluate_file(args.input, args.output, cli_settings(args), carried=carried,
                           carried_from=args.limits_file.name if args.limits_file else "")
    if args.verbose:
        for read, result in zip(report.reads, report.characteristics, strict=True):
            given = [f"{s.name} {s.value} ({s.origin})" for s in result.settings.values() if s.origin != "default"]
            sys.stderr.write(describe(read) + (f"; settings: {', '.join(given)}" if given else "") + "\n")
    if args.json:
        json.dump(report_json(report), sys.stdout, indent=2)
        sys.stdout.write("\n")
    else:
        for result in report.characteristics:
            sys.stderr.write(f"{result.sheet}: {len(result.signals)} signal(s)\n")
        sys.stderr.write(f"written: {report.output}\n")
    return 0
