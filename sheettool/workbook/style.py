"""The one place for sheettool's look: palette, line styles, markers, chart sizes and cell formats.

The scheme is built to survive a grey-scale print: each role differs from the others in lightness
*and* in line pattern or marker shape, never in hue alone. Plotted points are small dark squares on
a thin line; the center line is a mid-tone steel-blue solid line; limits are dark aubergine dashes;
zone lines are light dotted hairlines; specification limits are burnt-orange dash-dots (charts of
individual readings and the histogram only); points kept out of the limits are hollow grey circles;
signals, drawn last, are large vermilion triangles with a heavy dark rim. A limit that varies from
point to point is a short level bar at each point (no sloped joins, no spikes).
"""

from __future__ import annotations

import math
from typing import Any

from xlsxwriter.format import Format
from xlsxwriter.workbook import Workbook

Formats = dict[str, Format]  # the workbook's cell formats by role

SLATE = "#263548"  # plotted statistic, titles
STEEL = "#3E7CB1"  # center line and the fitted curve (mid-tone)
AUBERGINE = "#4A2545"  # control limits (dark)
SAND = "#BDAE8C"  # zone lines (light)
EMBER = "#C4622D"  # specification limits and target (mid-tone)
VERMILION = "#E4572E"  # fill of signalling points (the dark rim reads in grey)
ASH = "#6B7689"  # rim of points kept out of the limits
MIST = "#E9ECEF"  # header fills
HAIRLINE = "#9AA5B1"  # table borders
LINK = "#1F5F8B"  # hyperlinks
WARN = "#8A1C1C"  # the caution text and the "not a stable process" label

# Chart geometry in pixels; EVAL_COLUMNS are the evaluation tab's widths (characters) so that the
# charts and the tables share one printed width (about 1,000 pixels: the whole landscape page).
CHART_WIDTH = 1000
CHART_HEIGHT = 370
CHART_ROWS = 20  # rows kept free for one chart (20 px each)
EVAL_COLUMNS = (27, 18, 18, 14, 63)
PERFORMANCE_COLORS = (SLATE, AUBERGINE, STEEL, "#7D5BA6", "#B0761C", "#3F7FA8")
PERFORMANCE_MARKERS = ("square", "diamond", "triangle", "circle", "x", "star")
PERFORMANCE_DASHES = ("solid", "long_dash", "dash_dot", "round_dot", "dash", "long_dash_dot")
PERCENT_STATISTICS = ("proportion",)  # statistics that are rates: shown as percentages
FONT_SIZE = 11  # points: the workbook's body text
LINE_HEIGHT = 15  # points: one line of body text, the default row height
HEAD_HEIGHT = 2 * LINE_HEIGHT  # points: a table head whose words wrap to two lines


def line_height(font_size: float = FONT_SIZE) -> float:
    """The height (points) of one line of text in a cell, in proportion to the font size."""
    return LINE_HEIGHT * font_size / FONT_SIZE


def row_height(text: str, width: float, font_size: float = FONT_SIZE, per_line: float | None = None,
               least: int = 1) -> float:
    """The height (points) of a row whose cell wraps `text` in `width` characters, the one rule for every tab.

    A character is counted as wide as a digit of the body font. A text no longer than the width stays on one
    line; a longer one takes one line per `per_line` characters (default the width; fewer where an indent
    takes room), and never fewer than `least` lines. A larger font fits fewer characters and needs taller lines.
    """
    scale = FONT_SIZE / font_size
    fits = width * scale
    lines = 1 if len(text) <= fits else math.ceil(len(text) / ((per_line or width) * scale))
    return line_height(font_size) * max(least, lines)


def marker_size(points: int) -> int:
    """Marker size that keeps hundreds of points apart (0 means no markers, the line alone)."""
    if points <= 60:
        return 5
    if points <= 250:
        return 4
    if points <= 1000:
        return 2
    return 0


def series_look(role: str, points: int, varies: bool = False) -> dict[str, Any]:
    """xlsxwriter series options for a role: values, center, limit, zone, spec, excluded, signal.

    A line that `varies` from point to point (center, limit, zone) is drawn as a short level bar at each point.
    """
    if role == "values":
        size = marker_size(points)
        marker = ({"type": "square", "size": size, "border": {"color": SLATE}, "fill": {"color": SLATE}}
                  if size else {"type": "none"})
        return {"line": {"color": SLATE, "width": 1.0 if points <= 250 else 0.5}, "marker": marker}
    lines = {"center": {"color": STEEL, "width": 1.5},
             "limit": {"color": AUBERGINE, "width": 1.75, "dash_type": "dash"},
             "zone": {"color": SAND, "width": 0.75, "dash_type": "round_dot"},
             "spec": {"color": EMBER, "width": 1.5, "dash_type": "dash_dot"}}
    if role in lines:
        line = lines[role]
        if varies:
            return {"line": {"none": True},
                    "marker": {"type": "long_dash", "size": max(3, min(12, 600 // max(points, 1))),
                               "border": {"color": line["color"], "width": line["width"]},
                               "fill": {"color": line["color"]}}}
        return {"line": line, "marker": {"type": "none"}}
    if role == "excluded":
        return {"line": {"none": True},
                "marker": {"type": "circle", "size": max(7, marker_size(points) + 5),
                           "border": {"color": ASH, "width": 1.75}, "fill": {"none": True}}}
    if role == "signal":
        size = 10 if points <= 1000 else 7
        return {"line": {"none": True},
                "marker": {"type": "triangle", "size": size, "border": {"color": SLATE, "width": 1.5},
                           "fill": {"color": VERMILION}}}
    raise ValueError(f"unknown series role '{role}'")


def performance_look(i: int) -> dict[str, Any]:
    """Series look of the i-th scheme on the ARL-against-shift chart."""
    color = PERFORMANCE_COLORS[i % len(PERFORMANCE_COLORS)]
    return {"line": {"color": color, "width": 1.75, "dash_type": PERFORMANCE_DASHES[i % len(PERFORMANCE_DASHES)]},
            "marker": {"type": PERFORMANCE_MARKERS[i % len(PERFORMANCE_MARKERS)], "size": 5,
                       "border": {"color": color}, "fill": {"color": "#FFFFFF"}}}


def limit_role(statistic: str, decimals: int) -> str:
    """The cell format of a statistic's center line and limits: a percentage for rates, else two decimals more
    than the readings have."""
    return "percent2" if statistic in PERCENT_STATISTICS else f"dec{min(10, decimals + 2)}"


def number_format(decimals: int) -> str:
    """A fixed-decimals number format, e.g. 3 -> 0.000."""
    return "0" if decimals <= 0 else "0." + "0" * decimals


def formats(book: Workbook, decimals: int = 4) -> Formats:
    """Create the workbook's cell formats once and hand them out by role."""
    fmt = {
        "title": book.add_format({"bold": True, "font_size": 14, "font_color": SLATE}),
        "section": book.add_format({"bold": True, "font_size": 12, "font_color": SLATE, "bottom": 1,
                                    "border_color": HAIRLINE}),
        "label": book.add_format({"bold": True, "font_color": SLATE, "valign": "top"}),
        "head": book.add_format({"bold": True, "bg_color": MIST, "bottom": 1, "border_color": HAIRLINE,
                                 "text_wrap": True, "valign": "top"}),
        "head_number": book.add_format({"bold": True, "bg_color": MIST, "bottom": 1, "border_color": HAIRLINE,
                                        "text_wrap": True, "valign": "top", "align": "right"}),
        "head_center": book.add_format({"bold": True, "bg_color": MIST, "bottom": 1, "border_color": HAIRLINE,
                                        "text_wrap": True, "valign": "top", "align": "center"}),
        "head_note": book.add_format({"bold": True, "bg_color": MIST, "bottom": 1, "border_color": HAIRLINE,
                                      "text_wrap": True, "valign": "top", "align": "left", "indent": 2}),
        "text": book.add_format({"valign": "top"}),
        "copied_text": book.add_format({"indent": 1}),
        "text_right": book.add_format({"valign": "top", "align": "right"}),
        "note": book.add_format({"valign": "top", "align": "left", "indent": 2, "text_wrap": True}),
        "wrap": book.add_format({"text_wrap": True, "valign": "top"}),
        "count": book.add_format({"num_format": "0", "valign": "top"}),
        "point": book.add_format({"num_format": "0", "align": "center"}),
        "arl": book.add_format({"num_format": "#,##0.0", "valign": "top"}),
        "ratio": book.add_format({"num_format": "0.000", "valign": "top"}),
        "figure": book.add_format({"num_format": "#,##0.0##", "valign": "top"}),
        "count_right": book.add_format({"num_format": "#,##0", "valign": "top", "align": "right"}),
        "hours": book.add_format({"num_format": "#,##0.0"}),
        "date": book.add_format({"num_format": "yyyy-mm-dd hh:mm"}),
        "percent": book.add_format({"num_format": "0.0%", "valign": "top"}),
        "percent2": book.add_format({"num_format": "0.00%", "valign": "top"}),
        "chance": book.add_format({"num_format": '[<0.001]"under 0.1%";0.0%', "valign": "top"}),
        "key": book.add_format({"bold": True, "font_size": 12, "font_color": SLATE, "valign": "top"}),
        "caution": book.add_format({"italic": True, "text_wrap": True, "font_color": WARN, "valign": "top"}),
        "warn": book.add_format({"bold": True, "font_color": WARN}),
        "warn_wrap": book.add_format({"bold": True, "font_color": WARN, "text_wrap": True, "valign": "top"}),
        "flag": book.add_format({"valign": "top", "align": "center"}),
        "flag_warn": book.add_format({"bold": True, "font_color": WARN, "valign": "top", "align": "center"}),
        "lead": book.add_format({"bold": True, "font_color": SLATE, "text_wrap": True, "valign": "top"}),
        "link": book.add_format({"font_color": LINK, "underline": 1}),
        "link_wrap": book.add_format({"font_color": LINK, "underline": 1, "text_wrap": True, "valign": "top"}),
        "entry": book.add_format({"text_wrap": True, "valign": "top", "border": 1, "border_color": HAIRLINE,
                                  "bg_color": "#FFFFFF", "locked": False}),  # a cell the technician fills in,
        # left open when --protect locks the sheets
    }
    for d in range(0, 11):
        fmt[f"dec{d}"] = book.add_format({"num_format": number_format(d), "valign": "top"})
    fmt["number"] = fmt[f"dec{min(10, decimals)}"]
    return fmt
