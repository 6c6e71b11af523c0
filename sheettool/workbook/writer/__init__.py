"""The evaluated workbook writer: evaluation, performance, data and audit tabs with native charts.

Every tab writer works through one BookWriter (book_writer: the workbook, its formats, tab and
defined names, chart lines, links) and a Tab cursor (tab: rows, wrapped-row heights). Modules by
concept: book (assembly, properties, atomic write), evaluation_tab and trust_block, data_tab,
performance_tab, notes_tab (method and audit), summary_tab (the pack's first tab), charts (native
chart builders), lines (the hidden chart-lines tab), formulas (--formulas), methods (chart kinds
in words), cells (safe cell writing and references).
"""

from sheettool.workbook.writer.book import WriterOptions, write_atomically, write_evaluated_workbook
from sheettool.workbook.writer.book_writer import NOTES_TAB
from sheettool.workbook.writer.notes_tab import CAUTION

__all__ = ["CAUTION", "NOTES_TAB", "WriterOptions", "write_atomically", "write_evaluated_workbook"]
