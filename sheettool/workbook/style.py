"""The one place for sheettool's look: palette, line styles, markers and cell formats.

Colours are chosen to stay apart when printed in grey: the plotted series is dark, the center
line mid-tone and solid, the limits darker and dashed, signals large open triangles.
"""

from __future__ import annotations

from typing import Any

import xlsxwriter.workbook

INK = "#1D2B3A"  # plotted statistic
CENTER = "#4F7F6A"  # center line
LIMIT = "#7A2E3B"  # control limits
SIGNAL = "#D9822B"  # signalling points
BAND = "#E8EEF2"  # header fills
RULE_LINE = "#9AA8B5"  # table borders

SERIES_STYLE: dict[str, dict[str, Any]] = {
    "values": {
        "line": {"color": INK, "width": 1.0},
        "marker": {"type": "circle", "size": 3, "border": {"color": INK}, "fill": {"color": INK}},
    },
    "center": {"line": {"color": CENTER, "width": 1.5}, "marker": {"type": "none"}},
    "limit": {"line": {"color": LIMIT, "width": 1.25, "dash_type": "dash"}, "marker": {"type": "none"}},
    "signal": {
        "line": {"none": True},
        "marker": {"type": "triangle", "size": 8, "border": {"color": SIGNAL, "width": 1.5},
                   "fill": {"none": True}},
    },
}


def formats(book: xlsxwriter.workbook.Workbook) -> dict[str, Any]:
    """Create the workbook's cell formats once and hand them out by role."""
    return {
        "title": book.add_format({"bold": True, "font_size": 14, "font_color": INK}),
        "label": book.add_format({"bold": True, "font_color": INK}),
        "head": book.add_format({"bold": True, "bg_color": BAND, "bottom": 1, "border_color": RULE_LINE,
                                 "text_wrap": True, "valign": "top"}),
        "text": book.add_format({"valign": "top"}),
        "wrap": book.add_format({"text_wrap": True, "valign": "top"}),
        "number": book.add_format({"num_format": "0.0000"}),
        "count": book.add_format({"num_format": "0"}),
        "arl": book.add_format({"num_format": "#,##0.0"}),
        "caution": book.add_format({"italic": True, "text_wrap": True, "font_color": LIMIT, "valign": "top"}),
        "link": book.add_format({"font_color": "#2B5B84", "underline": 1}),
    }
