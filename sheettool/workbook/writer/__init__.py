"""The evaluated workbook writer: evaluation, performance, data and audit tabs with native charts.

Modules by concept: book (assembly, properties, atomic write), evaluation_tab, data_tab,
performance_tab, notes_tab (method and audit), charts (native chart builders), formulas
(--formulas), methods (chart kinds in words), cells (safe cell writing and references).
"""

from sheettool.workbook.writer.book import WriterOptions, write_atomically, write_evaluated_workbook
from sheettool.workbook.writer.notes_tab import CAUTION, NOTES_TAB

__all__ = ["CAUTION", "NOTES_TAB", "WriterOptions", "write_atomically", "write_evaluated_workbook"]
