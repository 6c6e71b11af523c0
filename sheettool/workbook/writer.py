"""Write the evaluated workbook: per characteristic an evaluation tab and a data tab, a notes tab,
and the hidden limits block. Native xlsxwriter charts; every text from the input written as text.
"""

from __future__ import annotations

import datetime as dt
import os
import re
import tempfile
from pathlib import Path
from typing import Any

import numpy as np
import xlsxwriter
from xlsxwriter.utility import xl_rowcol_to_cell

from sheettool import TOOL_NAME, __version__
from sheettool.errors import OutputError
from sheettool.evaluation import CharacteristicResult
from sheettool.report import EvaluationReport
from sheettool.workbook import style
from sheettool.workbook.limits_block import LIMITS_SHEET, limits_entry, limits_rows
from sheettool.workbook.reader import SheetRead

CAUTION = (
    "These statistics support, and never replace, engineering judgement, the site's quality "
    "procedures, customer requirements and applicable regulations and codes. Characteristics that "
    "bear on safety need the review those procedures require before any decision is taken."
)
NOTES_TAB = "About this file"


def write_atomically(path: Path, build: Any, protect: Path | None = None) -> None:
    """Build a workbook into a temporary file beside `path`, then rename it into place."""
    path = Path(path)
    if protect is not None and path.resolve() == Path(protect).resolve():
        raise OutputError(f"{path}: refusing to write the output over the input; choose another name with -o")
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise OutputError(f"{path}: the folder {folder} does not exist")
    try:
        fd, tmp = tempfile.mkstemp(prefix=".sheettool-", suffix=".xlsx", dir=folder)
        os.close(fd)
    except OSError as exc:
        raise OutputError(f"{path}: cannot write in {folder} ({exc.strerror})") from None
    try:
        build(tmp)
        os.replace(tmp, path)
    except OSError as exc:
        raise OutputError(f"{path}: cannot write the output ({exc.strerror or exc})") from None
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)


def _tab_name(base: str, suffix: str, used: set[str]) -> str:
    clean = re.sub(r"[\[\]:*?/\\']", "_", base).strip() or "sheet"
    room = 31 - len(suffix) - 1
    name = f"{clean[:room]} {suffix}"
    i = 2
    while name.lower() in used:
        tag = f"~{i}"
        name = f"{clean[:room - len(tag)]}{tag} {suffix}"
        i += 1
    used.add(name.lower())
    return name


def write_evaluated_workbook(report: EvaluationReport, reads: list[SheetRead], path: Path) -> None:
    """Write the report's workbook to `path` atomically, never over the input."""
    stamp = dt.datetime.fromtimestamp(report.input.stat().st_mtime, tz=dt.UTC).replace(tzinfo=None)

    def build(tmp: str) -> None:
        book = xlsxwriter.Workbook(tmp, {"strings_to_formulas": False, "strings_to_urls": False,
                                         "nan_inf_to_errors": True})
        book.set_properties({"title": f"Evaluation of {report.input.name}",
                             "subject": "Control charts, signals and scheme performance",
                             "author": f"{TOOL_NAME} {__version__}", "created": stamp})
        fmt = style.formats(book)
        used: set[str] = {NOTES_TAB.lower(), LIMITS_SHEET.lower()}
        names = [(_tab_name(r.sheet, "chart", used), _tab_name(r.sheet, "data", used))
                 for r in report.characteristics]
        for result, read, (eval_tab, data_tab) in zip(report.characteristics, reads, names, strict=True):
            eval_ws = book.add_worksheet(eval_tab)
            data_ws = book.add_worksheet(data_tab)
            refs = _write_data_tab(data_ws, fmt, result, read)
            _write_evaluation_tab(book, eval_ws, fmt, result, data_tab, refs)
        _write_notes_tab(book.add_worksheet(NOTES_TAB), fmt, report, stamp)
        block = book.add_worksheet(LIMITS_SHEET)
        for r, row in enumerate(limits_rows([limits_entry(c) for c in report.characteristics])):
            for c, value in enumerate(row):
                block.write(r, c, value)
        block.hide()
        book.close()

    write_atomically(path, build, protect=report.input)


def _put(ws: Any, row: int, col: int, value: object, fmt: Any = None) -> None:
    """Write a copied input value: numbers as numbers, dates as dates, everything else as text."""
    if value is None:
        return
    if isinstance(value, bool):
        ws.write_string(row, col, str(value), fmt)
    elif isinstance(value, int | float):
        ws.write_number(row, col, float(value), fmt)
    elif isinstance(value, dt.datetime | dt.date):
        ws.write_datetime(row, col, value, fmt)
    else:
        ws.write_string(row, col, str(value), fmt)


def _write_data_tab(ws: Any, fmt: dict[str, Any], result: CharacteristicResult,
                    read: SheetRead) -> dict[str, tuple[int, int]]:
    """Copy the input's rows as values and add per-subgroup statistics; return column refs."""
    m = len(read.rows)
    ws.write_string(0, 0, "Point", fmt["head"])
    for c, name in enumerate(read.header):
        ws.write_string(0, c + 1, name, fmt["head"])
    for r, row in enumerate(read.rows):
        ws.write_number(r + 1, 0, r + 1)
        for c, value in enumerate(row):
            _put(ws, r + 1, c + 1, value)
    col = len(read.header) + 1
    refs: dict[str, tuple[int, int]] = {}
    for stat in result.fit.statistics:
        signalled = {s.subgroup - 1 for s in result.signals if s.statistic == stat.name}
        series = {
            "values": stat.values,
            "center": stat.center,
            "lcl": stat.lcl,
            "ucl": stat.ucl,
            "signal": np.array([v if i in signalled else np.nan for i, v in enumerate(stat.values)]),
        }
        heads = {"values": stat.label, "center": "center line", "lcl": "LCL", "ucl": "UCL", "signal": "signal"}
        for key, values in series.items():
            label = heads[key] if key == "values" else f"{stat.label}: {heads[key]}"
            ws.write_string(0, col, label, fmt["head"])
            for r, v in enumerate(values):
                if not np.isnan(v):
                    ws.write_number(r + 1, col, float(v), fmt["number"])
            refs[f"{stat.name}.{key}"] = (col, m)
            col += 1
    ws.freeze_panes(1, 1)
    ws.set_column(0, col, 12)
    return refs


def _write_evaluation_tab(book: Any, ws: Any, fmt: dict[str, Any], result: CharacteristicResult,
                          data_tab: str, refs: dict[str, tuple[int, int]]) -> None:
    fit = result.fit
    ch = result.characteristic
    ws.set_column(0, 0, 22)
    ws.set_column(1, 4, 14)
    ws.write_string(0, 0, f"{ch.name}: X-bar and R chart", fmt["title"])
    facts = [
        ("Sheet read", result.sheet),
        ("Chart", f"X-bar and R, subgroups of {fit.subgroup_size}"),
        ("Limits from", f"{int(fit.base.sum())} of {ch.data.subgroups} subgroups (all complete subgroups)"),
        ("Sigma within", f"{fit.sigma_within:.6g} ({fit.sigma_method})"),
        ("Rules", ", ".join(r.text for r in result.rules)),
        ("Signals", str(len(result.signals))),
    ]
    row = 2
    for label, value in facts:
        ws.write_string(row, 0, label, fmt["label"])
        ws.write_string(row, 1, value)
        row += 1
    row += 1
    ws.write_row(row, 0, ["Limits", "Center line", "LCL", "UCL"], fmt["head"])
    for stat in fit.statistics:
        row += 1
        ws.write_string(row, 0, stat.label)
        for c, arr in enumerate((stat.center, stat.lcl, stat.ucl), start=1):
            ws.write_number(row, c, float(arr[0]), fmt["number"])
    row += 2
    ws.write_row(row, 0, ["Shift (sigma)", "ARL (points)"], fmt["head"])
    for s in result.performance.shifts:
        row += 1
        ws.write_number(row, 0, s.shift)
        if np.isfinite(s.arl):
            ws.write_number(row, 1, s.arl, fmt["arl"])
    row += 1
    ws.write_string(row, 0, "ARL: average number of points plotted until the scheme signals, "
                    "mean and range charts together.", fmt["wrap"])
    row += 2
    ws.write_row(row, 0, ["Point", "Label", "Chart", "Rule", "What it means"], fmt["head"])
    for s in result.signals:
        row += 1
        ws.write_number(row, 0, s.subgroup)
        ws.write_string(row, 1, s.label)
        ws.write_string(row, 2, s.statistic)
        ws.write_string(row, 3, s.rule)
        ws.write_string(row, 4, s.words)
    if not result.signals:
        ws.write_string(row + 1, 0, "No signals under the rules in use.")
        row += 1
    ws.write_string(row + 2, 0, CAUTION, fmt["caution"])
    for i, stat in enumerate(fit.statistics):
        chart = _control_chart(book, stat.label, stat.name, data_tab, refs, ch.unit)
        ws.insert_chart(2 + i * 20, 6, chart, {"x_scale": 1.6, "y_scale": 1.25})


def _control_chart(book: Any, title: str, stat: str, data_tab: str,
                   refs: dict[str, tuple[int, int]], unit: str) -> Any:
    chart = book.add_chart({"type": "line"})
    quoted = "'" + data_tab.replace("'", "''") + "'"
    m = refs[f"{stat}.values"][1]
    categories = f"={quoted}!$A$2:$A${m + 1}"
    for key, name, look in (("values", title, "values"), ("center", "center line", "center"),
                            ("ucl", "UCL", "limit"), ("lcl", "LCL", "limit"), ("signal", "signal", "signal")):
        col, _ = refs[f"{stat}.{key}"]
        top, bottom = xl_rowcol_to_cell(1, col, True, True), xl_rowcol_to_cell(m, col, True, True)
        chart.add_series({"name": name, "categories": categories, "values": f"={quoted}!{top}:{bottom}",
                          **style.SERIES_STYLE[look]})
    chart.set_title({"name": title, "name_font": {"size": 11}})
    chart.set_x_axis({"name": "Point", "interval_unit": max(1, m // 20)})
    chart.set_y_axis({"name": f"{title}{f' ({unit})' if unit else ''}", "major_gridlines": {"visible": False}})
    chart.set_legend({"position": "bottom"})
    chart.show_blanks_as("gap")
    return chart


def _write_notes_tab(ws: Any, fmt: dict[str, Any], report: EvaluationReport, stamp: dt.datetime) -> None:
    ws.set_column(0, 0, 28)
    ws.set_column(1, 1, 90)
    ws.write_string(0, 0, "About this file", fmt["title"])
    lines = [
        ("Caution", CAUTION),
        ("Input file", report.input.name),
        ("Input size (bytes)", str(report.input_size)),
        ("Input SHA-256", report.input_sha256),
        ("Input last modified (UTC)", stamp.strftime("%Y-%m-%d %H:%M:%S")),
        ("Written by", f"{TOOL_NAME} {__version__}"),
        ("X-bar and R limits", "X-bar-bar +/- A2 R-bar; R chart D3 R-bar to D4 R-bar; sigma = R-bar / d2"),
        ("Constants", "d2, d3 computed by numerical integration of the normal range distribution "
                      "(Tippett 1925); A2 = 3 / (d2 sqrt n), D3 = max(0, 1 - 3 d3 / d2), D4 = 1 + 3 d3 / d2"),
        ("Run length", "Shewhart limits: points signal independently, ARL = 1 / p (geometric); the mean "
                       "and range charts together signal with p = 1 - (1 - p_mean)(1 - p_range)"),
    ]
    for p in report.problems + [p for c in report.characteristics for p in c.problems]:
        lines.append((f"Problem ({p.severity})", f"{p.where}: {p.message}"))
    for r, (label, text) in enumerate(lines, start=2):
        ws.write_string(r, 0, label, fmt["label"])
        ws.write_string(r, 1, text, fmt["caution"] if label == "Caution" else fmt["wrap"])
