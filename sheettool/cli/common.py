"""Options shared by the sub-commands: those of evaluate and pack, and option values for design and runlength (by
the settings' own converters where a setting of that name exists, else as plain numbers)."""

from __future__ import annotations

import argparse
import datetime as dt
import json
import math
import os
import sys
from pathlib import Path
from typing import TYPE_CHECKING, Any

from sheettool.base.errors import UsageError
from sheettool.core.presets import DEFAULT_RULES, presets_help
from sheettool.settings import KNOWN_SETTINGS, Setting, setting_name

if TYPE_CHECKING:
    from sheettool.workbook.writer import WriterOptions

NOT_CARRIED = 6  # written, but carried limits were asked for and some characteristic found none

# option -> setting name; each overrides the workbook's settings sheet and labelled cells.
SETTING_OPTIONS = {"lsl": "lsl", "usl": "usl", "target": "target", "chart": "chart", "rules": "rules",
                   "interval": "interval_hours", "hours_per_month": "hours_per_month", "base_period": "base_period"}


def add_evaluation_options(p: argparse.ArgumentParser) -> None:
    """The settings, limits, output and process options of evaluate and pack."""
    p.add_argument("--rules", help="a preset or rules like 1/1>3,2/3>2 (docs/command-line.md, Pattern rules). "
                   f"Presets (default {DEFAULT_RULES}): {presets_help()}")
    p.add_argument("--limits-from", type=Path, metavar="PREVIOUS.xlsx", dest="limits_file",
                   help="apply the limits an earlier sheettool output carries")
    p.add_argument("--lsl", help="lower specification limit")
    p.add_argument("--usl", help="upper specification limit")
    p.add_argument("--target", help="target (nominal) value")
    p.add_argument("--chart", help=f"{KNOWN_SETTINGS['chart']}; default: chosen from the data")
    p.add_argument("--interval", help="hours between subgroups, e.g. 1 or '30 min'")
    p.add_argument("--hours-per-month", help="production hours per month")
    p.add_argument("--base-period", help="the subgroups that set the limits: all (default), 'first N' or a date range "
                   "FROM..TO, e.g. 2026-11-01..2026-11-15")
    p.add_argument("--set", action="append", default=[], metavar="NAME=VALUE",
                   help="any setting by name, e.g. --set unit=mm (repeatable)")
    p.add_argument("--json", action="store_true", help="print the results as one JSON object on stdout")
    p.add_argument("--formulas", action="store_true",
                   help="write per-subgroup statistics and constant limits as live formulas over the copied data")
    p.add_argument("--timestamp", metavar="WHEN",
                   help="document date of the output, e.g. 2026-12-01T08:00 (default: the evaluation time)")
    p.add_argument("--protect", nargs="?", const="", default=None, metavar="PASSWORD",
                   help="lock every sheet of the output against editing (optionally with a password); "
                        "the action log's fill-in cells stay open")
    p.add_argument("--jobs", type=int, default=None, metavar="N",
                   help=f"processes to use when there are several inputs (default: all cores, here {default_jobs()})")
    p.add_argument("--quiet", action="store_true", help="no progress bar")


def cli_settings(args: argparse.Namespace) -> dict[str, Setting]:
    """The settings given on the command line, checked; UsageError for a bad one."""
    from sheettool.settings.convert import convert

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


def setting_value(name: str, option: str, text: str | None) -> Any:
    """An option's text converted as the setting `name` is (e.g. "30 min" for interval_hours); None when not given,
    UsageError naming the option when the value is bad."""
    from sheettool.settings.convert import convert

    if text is None:
        return None
    try:
        return convert(Setting(name, text, f"option {option}")).value
    except ValueError as exc:
        raise UsageError(str(exc)) from None


def setting_list(name: str, option: str, text: str) -> tuple[Any, ...]:
    """A comma-separated list of values of the setting `name`, e.g. --intervals 0.5,1,2 or 30 min,1 h."""
    parts = [part.strip() for part in text.split(",")]
    if not all(parts):
        raise UsageError(f"{option}: '{text}' has an empty entry; write values separated by commas")
    return tuple(setting_value(name, option, part) for part in parts)


def number(option: str, text: str | None, positive: bool = False) -> float | None:
    """An option's text as a finite number (None when not given); UsageError naming the option otherwise."""
    if text is None:
        return None
    try:
        value = float(text)
    except ValueError:
        raise UsageError(f"{option}: '{text}' is not a number") from None
    if not math.isfinite(value):
        raise UsageError(f"{option}: must be a finite number, got '{text}'")
    if positive and value <= 0:
        raise UsageError(f"{option}: must be a positive number, got '{text}'")
    return value


def number_list(option: str, text: str) -> tuple[float, ...]:
    """A comma-separated list of numbers, e.g. --shift 0,0.5,1; UsageError for an empty or bad entry."""
    parts = [part.strip() for part in text.split(",")]
    if not all(parts):
        raise UsageError(f"{option}: '{text}' has an empty entry; write numbers separated by commas")
    return tuple(number(option, part) for part in parts)


def writer_options(args: argparse.Namespace) -> WriterOptions:
    """--formulas, --timestamp and --protect as WriterOptions."""
    from sheettool.workbook.writer import WriterOptions

    return WriterOptions(formulas=args.formulas, timestamp=_timestamp(args.timestamp), protect=args.protect)


def default_jobs() -> int:
    """All cores this process may use."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


def jobs(args: argparse.Namespace) -> int:
    """--jobs, checked (default: all cores)."""
    if args.jobs is None:
        return default_jobs()
    if args.jobs < 1:
        raise UsageError("--jobs must be 1 or more")
    return args.jobs


def print_json(data: dict[str, Any]) -> None:
    """One JSON object on stdout."""
    write_stdout(json.dumps(data, indent=2) + "\n")


def write_stdout(text: str) -> None:
    """Text on stdout; when the reader went away (e.g. `| head`) the rest is dropped quietly."""
    try:
        sys.stdout.write(text)
        sys.stdout.flush()
    except BrokenPipeError:
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())


def _timestamp(text: str | None) -> dt.datetime | None:
    """--timestamp as a date and time (ISO 8601); a usage error when it is not one."""
    if text is None:
        return None
    try:
        return dt.datetime.fromisoformat(text)
    except ValueError:
        raise UsageError(f"--timestamp: '{text}' is not a date and time; write it like 2026-12-01T08:00") from None
