"""The one object every tab writer works through: the workbook being written and what it holds so far.

It owns the xlsxwriter workbook and its cell formats, the tab names taken, the workbook-level names
defined, the chart-lines columns the charts collect, the tabs everyone links to, whether numbers
are written as live formulas, and the problems met while writing (the format's limits, see format_limits).
"""

from __future__ import annotations

import os
import warnings
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from typing import cast

import xlsxwriter
from xlsxwriter.chart_line import ChartLine
from xlsxwriter.chart_scatter import ChartScatter

from sheettool.base.problems import Problem
from sheettool.workbook import style
from sheettool.workbook.writer import cells
from sheettool.workbook.writer.format_limits import FittedWorksheet, cut_problems, warning_problems
from sheettool.workbook.writer.lines import LineSheet
from sheettool.workbook.writer.tab import Tab

# Text is always text (never a formula, a link or a number); NaN and infinities are never written as numbers.
_WORKBOOK_OPTIONS = {"strings_to_formulas": False, "strings_to_urls": False, "strings_to_numbers": False,
                     "nan_inf_to_errors": False}
# the evaluated workbook's fixed tabs that every evaluation tab links to
PERFORMANCE_TAB = "Scheme performance"
NOTES_TAB = "Method and audit"


@dataclass(frozen=True)
class Links:
    """Tabs the evaluation tabs link to."""

    performance: str = PERFORMANCE_TAB
    notes: str = NOTES_TAB


class BookWriter:
    """One output workbook being written: workbook, formats, tab names, defined names, chart lines and links."""

    def __init__(self, path: str, live: bool = False, reserved: tuple[str, ...] = (), file: str = "") -> None:
        """Open the workbook at `path`; `reserved` are tab names kept for fixed tabs added later; `file` is the
        output's name, where the problems of the output itself say where they are."""
        # the library's temporary parts beside the workbook (the atomic write's work folder), never in /tmp
        self.book = xlsxwriter.Workbook(path, {**_WORKBOOK_OPTIONS, "tmpdir": os.path.dirname(os.path.abspath(path))})
        self.file = file
        self.problems: list[Problem] = []  # met while writing, not yet handed back (see found)
        self._sheets: list[FittedWorksheet] = []
        self._caught: list[warnings.WarningMessage] = []
        self._warned: set[str] = set()
        self.fmt = style.formats(self.book)
        self.live = live
        self.formulas = live  # --formulas was asked (live may be turned off for a while, see values_only)
        self.links = Links()
        self.locked = False  # --protect: every sheet is locked when the tabs are written (see protect)
        self.lines = LineSheet()
        self._tab_names = {name.lower() for name in reserved}
        self._defined: set[str] = set()

    def tab_name(self, base: str, suffix: str, tells: tuple[str, ...] = (), always: bool = False) -> str:
        """A tab name not taken yet, built from a characteristic's name and a suffix (see cells.tab_name)."""
        return cells.tab_name(base, suffix, self._tab_names, tells, always)

    def add_tab(self, name: str) -> Tab:
        """Add a worksheet (tabs appear in the order they are added) with a cursor at its first row."""
        self._tab_names.add(name.lower())
        ws = cast(FittedWorksheet, self.book.add_worksheet(name, worksheet_class=FittedWorksheet))
        self._sheets.append(ws)
        return Tab(ws, self.fmt, name)

    def found(self) -> list[Problem]:
        """The problems met while writing since last asked, text cut to fit a cell among them."""
        for ws in self._sheets:
            self.problems += cut_problems(ws, self.file)
            ws.cut.clear()
        for problem in warning_problems(self._caught, self.file):
            if problem.message not in self._warned:
                self._warned.add(problem.message)
                self.problems.append(problem)
        self._caught.clear()
        new, self.problems = self.problems, []
        return new

    @contextmanager
    def catching(self) -> Iterator[None]:
        """Inside the block, the libraries' warnings are kept for found() instead of reaching the terminal."""
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            self._caught = caught if caught is not None else []
            yield

    @contextmanager
    def values_only(self, when: bool = True) -> Iterator[None]:
        """Write numbers as values, not live formulas, inside the block when `when` (a formula cannot reach
        over several tabs of one characteristic's data)."""
        live = self.live
        self.live = live and not when
        try:
            yield
        finally:
            self.live = live
        self.formulas = live  # --formulas was asked (live may be turned off for a while, see values_only)

    def define(self, name: str, ref: str) -> str:
        """Define a workbook-level name for `ref`, made unique with trailing underscores; return the name."""
        while name.lower() in self._defined:
            name += "_"
        self._defined.add(name.lower())
        self.book.define_name(name, "=" + ref)
        return name

    def scatter_chart(self, subtype: str) -> ChartScatter:
        """A new native scatter chart ("straight" or "straight_with_markers"), inserted into a tab by its writer."""
        return cast(ChartScatter, self.book.add_chart({"type": "scatter", "subtype": subtype}))

    def line_chart(self) -> ChartLine:
        """A new native line chart (points in sequence on a category axis), inserted into a tab by its writer."""
        return cast(ChartLine, self.book.add_chart({"type": "line"}))

    def protect(self, password: str) -> None:
        """Lock every sheet (cells in an unlocked format stay open for typing); an empty password locks without one."""
        for ws in self._sheets:
            ws.protect(password, {"format_columns": False, "select_locked_cells": True,
                                  "select_unlocked_cells": True})

    def close(self) -> None:
        """Write the workbook's file."""
        self.book.close()
