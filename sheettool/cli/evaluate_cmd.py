"""`sheettool evaluate`: evaluate one or more workbooks, writing an evaluated copy of each."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from sheettool import TOOL_NAME, tool_json
from sheettool.base.errors import InputError, UsageError
from sheettool.cli.common import NOT_CARRIED, add_evaluation_options, cli_settings, jobs, print_json, writer_options


def add_arguments(p: argparse.ArgumentParser) -> None:
    """The sub-command's options (its line in the list of commands is in cli/main.py)."""
    p.add_argument("input", type=Path, nargs="+", help="measurement workbooks (.xlsx, .xlsm or .csv)")
    p.add_argument("-o", "--output", type=Path,
                   help="output workbook, with one input (default: IN-evaluated.xlsx beside each IN)")
    p.add_argument("--verbose", action="store_true", help="say on stderr what was read from each sheet")
    add_evaluation_options(p)
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    """Evaluate each input; 0 when every output was written (signals are results, not failures).

    With several inputs the others go on when one fails; the exit code is then the highest failure's
    (3 or 4: never the pack's 5). Sheettool's own outputs among the inputs are skipped with a note.
    With --limits-from, an input none of whose characteristics the limits file matches fails (3), and
    outputs written where some characteristic found no carried limits exit NOT_CARRIED.
    """
    from sheettool.app.batch import FileJob, Progress, evaluate_job, lost_job, run_parallel
    from sheettool.app.json_form import report_json
    from sheettool.app.outputs import check_output, plan_outputs
    from sheettool.cli.terminal import report_lines
    from sheettool.workbook.action_log import read_action_log
    from sheettool.workbook.limits_block import read_limits_block
    from sheettool.workbook.reader import describe

    if args.output is not None and len(args.input) > 1:
        raise UsageError("-o names one output; with several inputs each output goes beside its input")
    read = [(p, "an input") for p in args.input]
    if args.limits_file:
        read.append((args.limits_file, "the limits file"))
    if args.output is not None:
        check_output(args.output, read)
    settings = cli_settings(args)
    carried = read_limits_block(args.limits_file) if args.limits_file else None
    log = read_action_log(args.limits_file) if args.limits_file else []
    inputs, skipped = _inputs(args.input)
    lines = [f"{path}: skipped, {why}" for path, why in skipped]
    if not inputs:
        raise InputError("; ".join(lines) + "; give the measurement workbook it came from")
    outputs = [(args.output, "")] if args.output is not None else plan_outputs(inputs, read)
    lines += [f"{path}: written to {output}, as {why}" for path, (output, why) in zip(inputs, outputs, strict=True)
              if why]
    for line in lines:
        sys.stderr.write(f"{TOOL_NAME}: {line}\n")
    options = writer_options(args)
    todo = [FileJob(path, path.name, settings, carried, args.limits_file.name if args.limits_file else "",
                    output, options, log=log, require_match=True)
            for path, (output, _) in zip(inputs, outputs, strict=True)]
    if len(todo) == 1:
        outcomes = [evaluate_job(todo[0])]
    else:
        outcomes = run_parallel(evaluate_job, todo, jobs(args), Progress(len(todo), quiet=args.quiet), lost_job)
    for outcome in outcomes:
        if outcome.report is None:
            continue
        if args.verbose:
            for sheet in outcome.report.sheets:
                given = [f"{s.name} {s.value} ({s.origin})" for s in sheet.result.settings.values()
                         if s.origin != "default"]
                sys.stderr.write(describe(sheet.read) + (f"; settings: {', '.join(given)}" if given else "") + "\n")
        if not args.json:
            sys.stderr.write("".join(f"{line}\n" for line in report_lines(outcome.report)))
            sys.stderr.write(f"written: {outcome.report.output}\n")
    for outcome in outcomes:
        if outcome.error:
            sys.stderr.write(f"{TOOL_NAME}: {outcome.error}\n")
    if args.json:
        reports = [report_json(o.report) for o in outcomes if o.report is not None]
        if len(args.input) == 1:
            if reports:
                print_json(reports[0])
        else:
            print_json({"tool": tool_json(), "evaluations": reports,
                        "failed": [{"input": str(o.job.path), "message": o.error, "exit_code": o.code}
                                   for o in outcomes if o.report is None],
                        "skipped": [{"input": str(p), "message": why} for p, why in skipped]})
    code = max(o.code for o in outcomes)
    uncarried = any(c.carried == "none" for o in outcomes if o.report for c in o.report.characteristics)
    return code or (NOT_CARRIED if uncarried else 0)


def _inputs(paths: list[Path]) -> tuple[list[Path], list[tuple[Path, str]]]:
    """The inputs to evaluate (each file once, sheettool's own outputs left out), and (path, why) of those left out."""
    from sheettool.app.batch import OUTPUT_NOTE
    from sheettool.app.outputs import is_sheettool_output, same_file

    kept: list[Path] = []
    skipped: list[tuple[Path, str]] = []
    for path in paths:
        twin = next((k for k in kept if same_file(k, path)), None)
        if twin is not None:
            skipped.append((path, f"the same file as {twin}"))
        elif is_sheettool_output(path):
            skipped.append((path, OUTPUT_NOTE))
        else:
            kept.append(path)
    return kept, skipped
