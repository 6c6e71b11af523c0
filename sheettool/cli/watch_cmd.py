"""`sheettool watch`: a drop folder; every workbook saved into it is evaluated into an output folder."""

from __future__ import annotations

import argparse
import datetime as dt
import json
import shutil
import signal
import sys
import threading
from pathlib import Path

from sheettool import TOOL_NAME
from sheettool.app.watch import TaskResult, WatchConfig, Watcher, WatchEvents, WatchTask
from sheettool.base.errors import UsageError
from sheettool.cli.common import add_evaluation_options, cli_settings, jobs, number, write_stdout, writer_options
from sheettool.workbook.limits_block import read_limits_block

OUTPUT_FOLDER = "evaluated"  # the default output folder, inside the watched one


def add_arguments(p: argparse.ArgumentParser) -> None:
    """The sub-command's options (its line in the list of commands is in cli/main.py)."""
    p.description = (
        "Evaluate every measurement workbook (.xlsx, .xlsm, .csv) saved into FOLDER or its subfolders, "
        "once per version, into an output folder, with a log (watch-log.csv) and, for a file that could not be "
        "evaluated, a note saying why. Each sheet's limits are carried from the latest earlier output with the "
        "same sheet name, unless its settings say 'New limits: yes'. Stop it with Ctrl-C; it finishes the file "
        "being evaluated first.")
    p.add_argument("folder", type=Path, metavar="FOLDER", help="the folder workbooks are saved into")
    p.add_argument("-o", "--output", type=Path, metavar="OUTPUT",
                   help=f"where the evaluated workbooks, the log and the notes go (default: FOLDER/{OUTPUT_FOLDER})")
    p.add_argument("--once", action="store_true",
                   help="evaluate what is new, then exit (for a scheduled task); the exit code is the highest of "
                   "the files that could not be evaluated")
    p.add_argument("--settle", default="5", metavar="SECONDS",
                   help="how long a file must stay unchanged before it is read (default: 5)")
    p.add_argument("--poll", default="2", metavar="SECONDS", help="how often the folder is looked at (default: 2)")
    add_evaluation_options(p)
    p.set_defaults(run=run)


def run(args: argparse.Namespace) -> int:
    """Watch until stopped (exit 0), or with --once until nothing new is left (the highest failure's code)."""
    settle = number("--settle", args.settle)
    if settle is None or settle < 0:
        raise UsageError(f"--settle: must be 0 or more seconds, got '{args.settle}'")
    poll = number("--poll", args.poll, positive=True)
    carried = read_limits_block(args.limits_file) if args.limits_file else None
    config = WatchConfig(args.folder, args.output or args.folder / OUTPUT_FOLDER, cli_settings(args),
                         writer_options(args), carried, args.limits_file.name if args.limits_file else "",
                         jobs(args), settle, args.json)
    screen = Screen(args.folder, config.output, quiet=args.quiet, json_lines=args.json)
    watcher = Watcher(config, screen)
    stop = threading.Event()

    def on_signal(signum: int, frame: object) -> None:
        if stop.is_set():  # asked twice: abandon the file being evaluated
            raise KeyboardInterrupt
        stop.set()
        screen.status("stopping after the file being evaluated (press Ctrl-C again to stop at once)")

    previous = {sig: signal.signal(sig, on_signal) for sig in (signal.SIGINT, signal.SIGTERM)}
    try:
        code = watcher.run(stop, poll, once=args.once)
    except KeyboardInterrupt:
        screen.say("stopped at once; the file being evaluated is evaluated again next time")
        return 130
    finally:
        for sig, handler in previous.items():
            signal.signal(sig, handler)
        watcher.close()
    for rel in watcher.left:
        screen.say(f"{TOOL_NAME}: {rel}: still being written; left for the next run", always=True)
    if watcher.unlogged:
        screen.say(f"{TOOL_NAME}: {config.output / 'watch-log.csv'}: {len(watcher.unlogged)} line(s) could not be "
                   "written (is it open in another program?)", always=True)
    screen.say("stopped" if stop.is_set() else "done")
    return code if args.once else 0


class Screen(WatchEvents):
    """A status line on a terminal; otherwise only what went wrong, or nothing with --quiet; --json
    prints one JSON object per line on stdout for each evaluation."""

    def __init__(self, folder: Path, output: Path, quiet: bool, json_lines: bool) -> None:
        self.folder, self.output, self.quiet, self.json_lines = folder, output, quiet, json_lines
        self.tty = not quiet and sys.stderr.isatty()
        self.evaluated = self.failed = 0
        self.drawn = False

    def status(self, text: str) -> None:
        """Redraw the one status line (terminal only)."""
        if self.tty:
            width = shutil.get_terminal_size().columns - 1
            sys.stderr.write("\r\x1b[K" + text[:width])
            sys.stderr.flush()
            self.drawn = True

    def say(self, text: str, always: bool = False) -> None:
        """A line that stays: on a terminal, or with always (unless --quiet)."""
        if self.tty or (always and not self.quiet):
            sys.stderr.write(("\r\x1b[K" if self.drawn else "") + text + "\n")
            sys.stderr.flush()
            self.drawn = False

    def evaluating(self, tasks: list[WatchTask]) -> None:
        self.status("evaluating " + ", ".join(task.rel for task in tasks))

    def finished(self, result: TaskResult) -> None:
        task = result.task
        if self.json_lines:
            data = result.json or {"input": str(task.path), "message": result.error, "exit_code": result.code}
            write_stdout(json.dumps(data) + "\n")
        if result.error:
            self.failed += 1
            self.say(f"{TOOL_NAME}: {result.error}", always=True)
        else:
            self.evaluated += 1
            self.say(f"{task.rel}: {result.points} point(s) signalled, limits {result.limits}; written: {task.output}")

    def idle(self, waiting: int) -> None:
        settling = f", {waiting} settling" if waiting else ""
        self.status(f"{dt.datetime.now():%H:%M:%S} watching {self.folder}: {self.evaluated} evaluated, "
                    f"{self.failed} not evaluated{settling}; Ctrl-C stops")
