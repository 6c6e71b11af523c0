"""`sheettool pack`: evaluate every workbook in files and folders into one monthly review pack."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import Any

from sheettool import tool_json
from sheettool.app.batch import Progress
from sheettool.app.json_form import characteristic_json, problem_json
from sheettool.app.outputs import check_output
from sheettool.app.pack import DEFAULT_TIME_LIMIT, Pack, Period, build_pack, write_pack
from sheettool.base.errors import InputError, UsageError
from sheettool.cli.common import (
    NOT_CARRIED,
    add_evaluation_options,
    cli_settings,
    jobs,
    number,
    print_json,
    writer_options,
)
from sheettool.cli.terminal import report_lines
from sheettool.workbook.action_log import read_action_log
from sheettool.workbook.earlier_packs import read_earlier_pack
from sheettool.workbook.limits_block import read_limits_block

SOME_FAILED = 5  # the pack was written, but some inputs or sheets could not be evaluated


def add_arguments(p: argparse.ArgumentParser) -> None:
    """The sub-command's options (its line in the list of commands is in cli/main.py)."""
    p.add_argument("paths", type=Path, nargs="+", help="workbooks and folders (searched for .xlsx and .xlsm)")
    p.add_argument("-o", "--output", type=Path, required=True, help="the pack workbook to write (.xlsx)")
    p.add_argument("--period", metavar="YYYY-MM", help="the month whose points the summary counts")
    p.add_argument("--from", dest="start", metavar="YYYY-MM-DD", help="first day of the period")
    p.add_argument("--to", dest="end", metavar="YYYY-MM-DD", help="last day of the period")
    p.add_argument("--time-limit", metavar="SECONDS", default=str(DEFAULT_TIME_LIMIT),
                   help="most seconds one input may take; past it the input is stopped and becomes an error row "
                        f"(default {DEFAULT_TIME_LIMIT:g})")
    p.add_argument("--earlier", type=Path, action="append", default=[], metavar="PACK.xlsx",
                   help="an earlier review pack, for the trend view across packs (repeatable)")
    add_evaluation_options(p)
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    """Write the pack; 0 when everything was evaluated, SOME_FAILED when some inputs were not, else NOT_CARRIED
    when carried limits were asked for and some characteristic found none."""
    period = _period(args)
    settings = cli_settings(args)
    time_limit = number("--time-limit", args.time_limit, positive=True)
    if args.limits_file:
        check_output(args.output, [(args.limits_file, "the limits file")])
    carried = read_limits_block(args.limits_file) if args.limits_file else None
    if args.earlier:
        check_output(args.output, [(p, "an earlier pack") for p in args.earlier])
    earlier = [read_earlier_pack(p) for p in args.earlier]
    log = read_action_log(args.limits_file) if args.limits_file else []
    pack = build_pack(args.paths, settings, period, carried, jobs(args), Progress(0, quiet=args.quiet),
                      output=args.output, limits_file=args.limits_file, time_limit=time_limit, log=log)
    if not pack.evaluated:
        raise InputError("nothing could be evaluated: " + "; ".join(r.reason for r in pack.rows))
    write_pack(pack, args.output, writer_options(args), earlier)
    failed = [r for r in pack.rows if "failed" in r.flags]
    if args.json:
        print_json(pack_json(pack, args.output))
    else:
        for source, report in pack.sources:
            sys.stderr.write("".join(f"{source}: {line}\n" if not line.startswith(" ") else f"{line}\n"
                                     for line in report_lines(report)))
        evaluated = sum(1 for r in pack.rows if r.tab is not None)
        sys.stderr.write(f"{evaluated} characteristic(s), {len(failed)} not evaluated; written: {args.output}\n")
        for row in failed:
            sys.stderr.write(f"  not evaluated: {row.reason}\n")
        for row in pack.skipped:
            sys.stderr.write(f"  skipped: {row.reason}\n")
    uncarried = any("uncarried" in r.flags for r in pack.rows)
    return SOME_FAILED if failed else NOT_CARRIED if uncarried else 0


def pack_json(pack: Pack, output: Path) -> dict[str, Any]:
    """The pack as JSON: as for evaluate, one entry per characteristic with its source and summary."""
    characteristics, problems = [], []
    rows = iter(r for r in pack.rows if r.tab is not None)
    for outcome in pack.evaluated:
        report = outcome.report
        for result in report.characteristics:
            row = next(rows)
            entry = characteristic_json(result)
            entry.update({"input": str(report.input), "input_sha256": report.input_sha256, "source": row.source,
                          "summary": {"points_in_period": row.points, "points_signalled": row.points_signalled,
                                      "events": row.events, "events_open": row.events_open,
                                      "latest_signal": row.latest_signal or None, "status": row.status}})
            characteristics.append(entry)
        problems += [problem_json(p, outcome.job.source)
                     for p in report.problems + [p for c in report.characteristics for p in c.problems]]
    return {
        "tool": tool_json(),
        "output": str(output),
        "period": pack.period.label if pack.period else None,
        "characteristics": characteristics,
        "failed": [{"source": r.source, "sheet": r.sheet or None, "message": r.reason}
                   for r in pack.rows if "failed" in r.flags],
        "skipped": [{"source": r.source, "message": r.reason} for r in pack.skipped],
        "problems": problems,
    }


def _period(args: argparse.Namespace) -> Period | None:
    try:
        if args.period and (args.start or args.end):
            raise UsageError("give either --period or --from/--to, not both")
        if args.period:
            return Period.month(args.period)
        if args.start or args.end:
            return Period.between(args.start, args.end)
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    return None
