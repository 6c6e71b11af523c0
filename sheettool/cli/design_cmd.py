"""`sheettool design`: choose a monitoring scheme against requirements, without a workbook."""

from __future__ import annotations

import argparse
import math
import sys
from collections.abc import Callable
from pathlib import Path
from typing import Any

from sheettool import tool_json
from sheettool.app.api import design_schemes
from sheettool.app.batch import Progress
from sheettool.base.errors import UsageError
from sheettool.cli.common import number, number_list, print_json, setting_list, setting_value, write_stdout
from sheettool.core.design import REQUIREMENT_KEYS, Candidate, DesignResult, Requirements, Sampling, SearchGrid
from sheettool.core.presets import PRESETS, presets_help
from sheettool.workbook.design_book import HEAD, candidate_row, requirement_lines


def add_arguments(p: argparse.ArgumentParser) -> None:
    """The sub-command's options (its line in the list of commands is in cli/main.py)."""
    p.description = ("Search Shewhart, EWMA and CUSUM schemes at the sampling allowed, calibrate EWMA and CUSUM to the "
                     "in-control target and rank them by their ATS, the hours to signal the shift that matters.")
    p.add_argument("--arl-in-control", help="in-control ARL wanted at least, in points (default 370.4); with "
                   "--false-alarms-per-month too, the stricter of the two")
    p.add_argument("--false-alarms-per-month", help="false alarms per month allowed at most (needs --hours-per-month)")
    p.add_argument("--hours-per-month", help="production hours per month")
    p.add_argument("--shift", help="the shift that matters, in process standard deviations (default 1)")
    p.add_argument("--shift-in-units", help="the shift that matters in the characteristic's unit (needs --sigma)")
    p.add_argument("--sigma", help="the process standard deviation, in the characteristic's unit")
    p.add_argument("--arl-at-shift", help="ARL at the shift wanted at most, in points")
    p.add_argument("--ats-hours", help="ATS at the shift wanted at most: the average hours to signal it, e.g. 2 or "
                   "'90 min'")
    p.add_argument("--sizes", default="1-10", help="subgroup sizes allowed: a range 1-10 or a list 1,2,5")
    p.add_argument("--intervals", help="sampling intervals allowed, in hours: a list 0.5,1,2 (or 30 min,1 h)")
    p.add_argument("--budget", help="measurements per hour allowed at most")
    p.add_argument("--presets", default=",".join(PRESETS), help="Shewhart rule presets searched, comma-separated "
                   f"(default: all of them). {presets_help()}")
    p.add_argument("--weights", help="EWMA weights lambda searched (default 0.05,0.1,0.15,0.2,0.25,0.3,0.4,0.5,0.75)")
    p.add_argument("--references", help="CUSUM reference values k searched, in standard errors (default "
                   "0.25,0.5,0.75,1)")
    p.add_argument("--top", default="15", help="rows shown in the terminal table (default 15)")
    p.add_argument("--json", action="store_true", help="print the whole design as one JSON object on stdout")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.add_argument("-o", "--output", type=Path, metavar="DESIGN.xlsx", help="also write the design workbook")
    p.set_defaults(run=run)


def _sizes(text: str) -> tuple[int, ...]:
    if "-" in text and "," not in text:
        low, high = (number("--sizes", part.strip()) for part in text.split("-", 1))
        if not (low == int(low) and high == int(high) and 1 <= low <= high):
            raise UsageError(f"--sizes: '{text}' is not a range of whole numbers like 1-10")
        return tuple(range(int(low), int(high) + 1))
    values = number_list("--sizes", text)
    if not all(v == int(v) for v in values):
        raise UsageError(f"--sizes: '{text}' holds a size that is not a whole number")
    return tuple(int(v) for v in values)


def _inputs(args: argparse.Namespace) -> tuple[Requirements, Sampling, SearchGrid]:
    if args.false_alarms_per_month is not None and args.hours_per_month is None:
        raise UsageError("--false-alarms-per-month needs --hours-per-month (production hours per month)")
    if args.shift_in_units is not None and args.sigma is None:
        raise UsageError("--shift-in-units needs --sigma, the process standard deviation in the same unit")
    top = number("--top", args.top)
    if not (top is not None and top == int(top) and top >= 1):
        raise UsageError(f"--top: must be a whole number of at least 1, got '{args.top}'")
    # each requirement, the hours and sigma as the setting of that name, e.g. --ats-hours '90 min'
    values = {name: setting_value(name, f"--{name.replace('_', '-')}", getattr(args, name))
              for name in (*REQUIREMENT_KEYS, "hours_per_month", "sigma")}
    try:
        req = Requirements(**values)
        sampling = Sampling(sizes=_sizes(args.sizes),
                            intervals=setting_list("interval_hours", "--intervals", args.intervals)
                            if args.intervals else None,
                            budget=number("--budget", args.budget))
        presets = tuple(p.strip().lower() for p in args.presets.split(",") if p.strip())
        grid = SearchGrid(presets=presets, **{key: number_list(f"--{name}", text) for key, name, text in (
            ("lambdas", "weights", args.weights), ("ks", "references", args.references)) if text is not None})
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    return req, sampling, grid


def run(args: argparse.Namespace) -> int:
    """Design and report; 0 whenever the design was made, whether or not a scheme meets every requirement."""
    req, sampling, grid = _inputs(args)
    try:
        result = design_schemes(req, sampling, grid, args.output, _progress_bar(args.quiet))
    except ValueError as exc:
        raise UsageError(str(exc)) from None
    if args.json:
        print_json(design_json(result))
    else:
        write_stdout(_table(result, int(float(args.top))))
    if args.output is not None:
        sys.stderr.write(f"written: {args.output}\n")
    return 0


def _progress_bar(quiet: bool) -> Callable[[int, int], None]:
    """The terminal's progress bar for the search (silent with --quiet or when stderr is not a terminal)."""
    bar = Progress(0, quiet=quiet)

    def progress(done: int, total: int) -> None:
        if total != bar.total:
            bar.expect(total)
        while bar.done < done:
            bar.step()

    return progress


def _finite(value: float | None) -> float | None:
    return value if value is not None and math.isfinite(value) else None


def candidate_json(rank: int, c: Candidate) -> dict[str, Any]:
    """One candidate as JSON; parameters of the chart kind only."""
    scheme: dict[str, Any] = {"chart": c.family, "n": c.n}
    if c.family == "ewma":
        scheme.update(c.scheme.ewma.as_mapping())
    elif c.family == "cusum":
        scheme.update(c.scheme.cusum.as_mapping())
    else:
        scheme["rules"] = c.preset
    return {
        "rank": rank, "label": c.label, "scheme": scheme, "interval_hours": c.interval_hours,
        "measurements_per_hour": c.measurements_per_hour, "arl_in_control": _finite(c.arl_in_control),
        "false_alarms_per_month": _finite(c.false_alarms_per_month), "arl_at_shift": _finite(c.arl_at_shift),
        "arl_ci95": list(c.arl_ci95) if c.arl_ci95 else None, "ats_hours": _finite(c.ats_hours), "meets": c.meets,
        "checks": [{"name": i.name, "required": i.required, "achieved": _finite(i.achieved), "met": i.met,
                    "words": i.words} for i in c.check.items],
    }


def design_json(result: DesignResult) -> dict[str, Any]:
    """The whole design as one JSON-ready object (every candidate, ranked)."""
    req, sampling = result.requirements, result.sampling
    return {
        "tool": tool_json(),
        "requirements": {"arl_in_control": req.arl_in_control, "false_alarms_per_month": req.false_alarms_per_month,
                         "hours_per_month": req.hours_per_month, "shift": result.shift,
                         "shift_in_units": req.shift_in_units, "sigma": req.sigma, "arl_at_shift": req.arl_at_shift,
                         "ats_hours": req.ats_hours},
        "sampling": {"sizes": list(sampling.sizes), "intervals": list(sampling.intervals or []) or None,
                     "budget": sampling.budget},
        "feasible": result.feasible,
        "messages": result.messages,
        "trade_off": result.trade_off,
        "notes": result.notes,
        "method": result.method,
        "candidates": [candidate_json(rank, c) for rank, c in enumerate(result.candidates, start=1)],
    }


def _text(value: Any, col: int) -> str:
    if value is None:
        return "-"
    if isinstance(value, str):
        return value
    if not math.isfinite(value):
        return "never"
    return f"{value:g}" if col in (0, 2) else f"{value:.4g}"


def _table(result: DesignResult, top: int) -> str:
    lines = [f"{label}: {text}" for label, text in requirement_lines(result)]
    lines.append("")
    lines.append("Some scheme meets every requirement." if result.feasible else
                 "No scheme searched meets every requirement.")
    lines.extend(result.messages)
    lines.extend(f"Note: {n}" for n in result.notes)
    if result.candidates:
        head = list(HEAD[:-1])
        body = [[_text(v, i) for i, v in enumerate(candidate_row(rank, c)[:-1])]
                for rank, c in enumerate(result.candidates[:top], start=1)]
        widths = [max(len(h), *(len(r[i]) for r in body)) for i, h in enumerate(head)]
        lines.append("")
        lines.append("  ".join(h.rjust(w) for h, w in zip(head, widths, strict=True)))
        lines.extend("  ".join(c.rjust(w) for c, w in zip(r, widths, strict=True)) for r in body)
        shown = min(top, len(result.candidates))
        lines.append(f"({shown} of {len(result.candidates)} schemes shown; --top, --json or -o for more)")
    lines.append("")
    lines.extend(result.trade_off)
    lines.append("")
    lines.append(f"Method: {result.method}")
    return "\n".join(lines) + "\n"
